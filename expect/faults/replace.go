package faults

import (
	"math"

	"pinwalk/expect/amp"
	"pinwalk/expect/design"
	"pinwalk/expect/units"
)

// seriesFor picks the E-series for a tolerance (IEC 60063): E96 for 1 %,
// E48 for 2 %, E24 for 5 %, E12 for 10 %, E6 for 20 % or wider.
func seriesFor(tol design.Tolerance) int {
	t := math.Max(math.Abs(tol.Lo), math.Abs(tol.Hi))
	switch {
	case t == 0:
		return 12
	case t <= 0.01:
		return 96
	case t <= 0.02:
		return 48
	case t <= 0.05:
		return 24
	case t <= 0.1:
		return 12
	}
	return 6
}

// Preferred ratings a replacement is bought in (common practice: the
// usual resistor wattages and capacitor working volts).
var (
	wattRatings = []float64{0.25, 0.5, 1, 2, 3, 5, 7, 10, 15, 25, 50}
	voltRatings = []float64{16, 25, 35, 50, 63, 100, 160, 250, 350, 400, 450, 500, 550, 600, 630, 700, 800, 1000, 1200, 1600}
)

// nextRating is the first rating in list at or above v (v itself past
// the end).
func nextRating(v float64, list []float64) float64 {
	for _, r := range list {
		if r >= v {
			return r
		}
	}
	return v
}

// stress is what the circuit puts on a part: the watts it dissipates at
// full mains (resistors) and the largest volts across it, at full mains
// or at the switch-on peak at the top of the mains tolerance.
type stress struct {
	Watts, PeakVolts float64
}

// stressOf solves the healthy amp at full mains and its cold start at
// high mains and reads what the part sees.
func stressOf(m *amp.Model, p *design.Part) stress {
	s := amp.NewSolver(m)
	var hot, peak amp.OP
	hotOK := s.Solve(amp.Conditions{}, m.NominalValues(), false, &hot) == nil
	peakOK := s.ColdStart(m.D.Mains.Volts*(1+m.D.Mains.Tol.Hi), &peak) == nil
	across := func(op *amp.OP) float64 {
		if len(p.Terminals) < 2 {
			return 0
		}
		a, _ := m.NetVolts(op, p.Terminals[0].Net)
		c, _ := m.NetVolts(op, p.Terminals[1].Net)
		return math.Abs(a - c)
	}
	var out stress
	if hotOK && p.Kind == design.Resistor {
		for _, r := range m.Resistors(&hot) {
			if r.Ref == p.Ref {
				out.Watts = r.Watts
			}
		}
	}
	if peakOK {
		out.PeakVolts = across(&peak)
	}
	if hotOK {
		out.PeakVolts = math.Max(out.PeakVolts, across(&hot))
	}
	return out
}

// preferred is the nearest preferred value of p in the series of its
// tolerance (units.Nearest), with the series.
func preferred(p *design.Part, series int) float64 {
	v, _ := units.Nearest(p.Value, series)
	return v
}

// fuseRating is a fuse's rating in words: "2 A slow".
func fuseRating(p *design.Part) string {
	s := units.Format(p.Value, units.Amps)
	if p.Material == "slow" {
		s += " slow-blow"
	}
	return s
}
