package bands

import (
	"fmt"

	"pinwalk/expect/amp"
	"pinwalk/expect/design"
)

// VariacSettings are the usual steps of a slow bring-up (common practice:
// a quarter, half, three quarters, full mains).
var VariacSettings = []float64{0.25, 0.5, 0.75, 1}

// Step is the bands at one variac setting.
type Step struct {
	Variac float64
	Set    *Set
}

// VariacSteps runs the bands at each variac setting (fractions of the
// mains; opt.Cond.Variac is replaced). At low settings the heaters run
// cool, emission collapses (amp's Richardson–Dushman heater model), the
// valves barely conduct and B+ rises towards the no-load peak.
func VariacSteps(d *design.Design, opt Options, settings []float64) ([]Step, error) {
	var out []Step
	for _, f := range settings {
		if !(f > 0 && f <= 1.3) {
			return nil, fmt.Errorf("bands: variac %v: expected a fraction of the mains above 0 and at most 1.3", f)
		}
		o := opt
		o.Cond.Variac = f
		set, err := Run(d, o)
		if err != nil {
			return nil, fmt.Errorf("variac %.0f%%: %w", 100*f, err)
		}
		out = append(out, Step{Variac: f, Set: set})
	}
	return out, nil
}

// ColdPeak is the switch-on peak of one HT filter net: the volts before any
// valve conducts, when nothing but the bleeder loads the supply.
type ColdPeak struct {
	Net string
	// Nominal at the conditions' mains; HighMains at the top of the
	// design's mains tolerance (the figure capacitor ratings must meet).
	Nominal, HighMains float64
}

// ColdPeaks solves the cold start (amp.Solver.ColdStart) at the mains of
// cond (times its variac) and at the top of the design's mains tolerance,
// and returns the peak per filter net. A design without an HT rectifier
// returns none.
func ColdPeaks(d *design.Design, cond amp.Conditions) ([]ColdPeak, error) {
	m, err := amp.Build(d)
	if err != nil {
		return nil, err
	}
	if m.HT == nil {
		return nil, nil
	}
	s := amp.NewSolver(m)
	mains := cond.MainsVolts
	if mains <= 0 {
		mains = d.Mains.Volts
	}
	if cond.Variac > 0 {
		mains *= cond.Variac
	}
	var nom, high amp.OP
	if err := s.ColdStart(mains, &nom); err != nil {
		return nil, fmt.Errorf("cold start: %w", err)
	}
	if err := s.ColdStart(mains*(1+d.Mains.Tol.Hi), &high); err != nil {
		return nil, fmt.Errorf("cold start at high mains: %w", err)
	}
	var out []ColdPeak
	for i, n := range nom.Supply.Nets {
		out = append(out, ColdPeak{Net: n.Net, Nominal: n.Vdc, HighMains: high.Supply.Nets[i].Vdc})
	}
	return out, nil
}
