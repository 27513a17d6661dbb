// Package supply models the high-tension power supply of a valve amplifier:
// a transformer secondary (an AC source behind its winding resistance), a
// silicon or valve rectifier, and a filter made of a tree of RC / LC
// sections. The circuit is integrated with backward Euler over whole mains
// cycles and driven to periodic steady state by Newton's method on the
// one-cycle map (shooting), so that DC levels, ripple and rectifier currents
// come from the waveforms themselves rather than from curve fits.
//
// The results are checked against the limits and charge balance of
// O. H. Schade, "Analysis of rectifier operation", Proc. IRE 31 (1943).
package supply

import (
	"errors"
	"fmt"
	"math"
)

// Topology is the rectifier connection.
type Topology int

const (
	// CentreTap is a full-wave rectifier on a centre-tapped winding: two
	// paths, one rectifier element per path.
	CentreTap Topology = iota
	// Bridge is a full-wave bridge: two paths, two rectifier elements in
	// series per path.
	Bridge
	// HalfWave is a single rectifier element on the whole winding.
	HalfWave
	// FullDoubler is a full-wave (bridge, Delon) voltage doubler: the
	// winding from the midpoint of two series capacitors, one diode from
	// its other end up into the top capacitor and one from chassis up to
	// it, each capacitor charged to the winding's peak on its own half
	// cycle (Params.Doubler; doubler.go).
	FullDoubler
	// HalfDoubler is a half-wave (Greinacher, Villard) voltage doubler: a
	// pump capacitor from the winding's live end, a clamp diode from
	// chassis up to it and a series diode from it into the reservoir, stage
	// 0's capacitor (Params.Doubler; doubler.go).
	HalfDoubler
)

func (t Topology) String() string {
	switch t {
	case CentreTap:
		return "centre-tap"
	case Bridge:
		return "bridge"
	case HalfWave:
		return "half-wave"
	case FullDoubler:
		return "full-wave doubler"
	case HalfDoubler:
		return "half-wave doubler"
	}
	return fmt.Sprintf("Topology(%d)", int(t))
}

// RectifierKind selects the rectifier element's law.
type RectifierKind int

const (
	// Silicon is a junction diode: drop Vf + Rd·I while conducting.
	Silicon RectifierKind = iota
	// Valve is a vacuum diode obeying Child–Langmuir, I = Perveance·V^1.5.
	Valve
)

// Rectifier describes one rectifier element (one anode of a valve
// rectifier, one diode of a bridge).
type Rectifier struct {
	Kind RectifierKind
	// Silicon: forward drop Vf + Rd·I (volts, ohms); Vf ≈ 0.7 V, Rd small.
	// Valve: Child–Langmuir law per anode, I = Perveance·V^1.5 (A/V^1.5).
	Vf, Rd, Perveance float64
	// MaxAmps is a valve rectifier's saturation (emission-limited)
	// current per anode, amps; 0 means none. It matters only when the
	// filament runs cool, as on a variac at a low setting.
	MaxAmps float64
}

// Stage is one node of the filter tree and the series element feeding it.
type Stage struct {
	Parent   int     // index of the upstream stage; -1 = the rectifier output
	SeriesR  float64 // ohms between parent and this node (resistor or choke DCR)
	SeriesL  float64 // henries in series (0 = none); on stage 0 this makes a choke-input filter
	ShuntC   float64 // farads to ground at this node; stage 0 must have one
	ESR      float64 // ohms in series with ShuntC
	LoadA    float64 // constant DC load current drawn from this node, amps
	LoadOhms float64 // optional resistive load to ground (bleeder), ohms; 0 = none
}

// Params describes a complete supply.
type Params struct {
	Topology Topology
	Vrms     float64 // open-circuit rms volts: per half-winding for CentreTap, whole winding for Bridge and HalfWave
	Rs       float64 // source resistance referred to the secondary, per conducting path (winding DCR + reflected primary DCR), ohms
	Hz       float64 // mains frequency
	Rect     Rectifier
	Stages   []Stage // stage 0 must have Parent -1; parents precede children
	// Doubler is the capacitors and diodes of a FullDoubler or
	// HalfDoubler front end (ignored for the other topologies).
	Doubler Doubler
}

// NetResult is the periodic steady state at one filter node.
type NetResult struct {
	Vdc       float64 // mean node voltage, volts
	RippleRms float64 // rms of the AC part, volts
	RipplePP  float64 // peak-to-peak of the AC part, volts
	DCAmps    float64 // mean current through the series element into this node, amps
	// RippleFund is the rms value of the ripple fundamental (2f for
	// full-wave, f for half-wave), volts: the hum component that LC and RC
	// sections are normally designed against.
	RippleFund float64
}

// Result is the periodic steady state of the supply.
type Result struct {
	Nets []NetResult // per stage, same order as Params.Stages
	// PeakRectAmps is the peak current in one rectifier path.
	PeakRectAmps float64
	// AvgRectAmps is the mean rectifier output current, all paths together
	// (it equals the total DC load at steady state; each path of a
	// full-wave rectifier carries half of it).
	AvgRectAmps float64
	// RmsRectAmps is the rms secondary current: per half-winding for
	// CentreTap, whole winding for Bridge and HalfWave.
	RmsRectAmps float64
	// RectDropMean is the charge-weighted mean voltage across the
	// rectifier elements of a conducting path (volts): the rectifier
	// dissipation divided by AvgRectAmps.
	RectDropMean  float64
	Cycles        int     // mains cycles simulated, including those used for the Newton Jacobian
	ConductionDeg float64 // conduction angle per pulse, degrees of the mains cycle
	// CriticalL is, for a full-wave choke-input filter, the critical
	// inductance R/(3ω) at the simulated load (henries; Radiotron
	// Designer's Handbook 4th ed. ch. 30, from memory); below it the choke
	// current becomes discontinuous. Zero for capacitor input.
	CriticalL float64
	// Caps are a doubler's two capacitors, each its own volts (Vdc the
	// mean across it, its ripple, DCAmps the mean current its diode
	// puts in), as Params.Doubler names them; nil for other topologies.
	Caps []NetResult
	// Mid is a doubler's middle node (the capacitors' junction of a
	// full-wave doubler, the pump capacitor's diode end of a half-wave
	// one), volts to chassis; Live is the winding's end the diodes take
	// (a half-wave doubler's winding carries its pump bleeder's DC).
	Mid, Live NetResult
}

// Options controls the simulation; zero fields take their DefaultOptions
// values.
type Options struct {
	StepsPerCycle int     // backward-Euler steps per mains cycle (≥ 20)
	MaxCycles     int     // budget of simulated cycles, Jacobian cycles included
	Tol           float64 // steady state when the cycle-to-cycle change of every state is below Tol relative to its scale
}

// DefaultOptions returns 1000 steps per cycle, a 400-cycle budget and a
// relative tolerance of 1e-5.
func DefaultOptions() Options {
	return Options{StepsPerCycle: 1000, MaxCycles: 400, Tol: 1e-5}
}

// ErrNoSteadyState is returned (wrapped) by Simulate when the cycle budget
// runs out before the periodic steady state is reached. The Result that
// comes with it is the last simulated cycle and is finite but not exact.
var ErrNoSteadyState = errors.New("supply: no periodic steady state within the cycle budget")

// ParamError reports an invalid parameter.
type ParamError struct {
	Field  string
	Reason string
}

func (e *ParamError) Error() string { return "supply: " + e.Field + ": " + e.Reason }

func finite(x float64) bool { return !math.IsNaN(x) && !math.IsInf(x, 0) }

// Validate checks p and returns a *ParamError describing the first problem.
func (p Params) Validate() error {
	bad := func(field, reason string) error { return &ParamError{Field: field, Reason: reason} }
	if p.Topology < CentreTap || p.Topology > HalfDoubler {
		return bad("Topology", "unknown topology")
	}
	if !finite(p.Vrms) || p.Vrms <= 0 {
		return bad("Vrms", "must be a positive number of volts")
	}
	if !finite(p.Hz) || p.Hz <= 0 {
		return bad("Hz", "must be a positive frequency")
	}
	if !finite(p.Rs) || p.Rs < 0 {
		return bad("Rs", "must be ≥ 0 ohms")
	}
	// Bounds far outside any mains supply keep the arithmetic finite.
	if p.Vrms > 1e6 {
		return bad("Vrms", "above 1 MV is out of range")
	}
	if p.Hz < 0.1 || p.Hz > 1e5 {
		return bad("Hz", "must lie between 0.1 Hz and 100 kHz")
	}
	if p.Rs > 1e12 || p.Rect.Vf > 1e4 || p.Rect.Rd > 1e12 || p.Rect.Perveance > 1e3 {
		return bad("Rs/Rect", "value out of range")
	}
	switch p.Rect.Kind {
	case Silicon:
		if !finite(p.Rect.Vf) || p.Rect.Vf < 0 {
			return bad("Rect.Vf", "must be ≥ 0 volts")
		}
		if !finite(p.Rect.Rd) || p.Rect.Rd < 0 {
			return bad("Rect.Rd", "must be ≥ 0 ohms")
		}
	case Valve:
		if !finite(p.Rect.Perveance) || p.Rect.Perveance <= 0 {
			return bad("Rect.Perveance", "must be > 0 A/V^1.5 for a valve rectifier")
		}
	default:
		return bad("Rect.Kind", "unknown rectifier kind")
	}
	if len(p.Stages) == 0 {
		return bad("Stages", "at least one filter stage is needed")
	}
	for k, s := range p.Stages {
		f := func(name string) string { return fmt.Sprintf("Stages[%d].%s", k, name) }
		if k == 0 {
			if s.Parent != -1 {
				return bad(f("Parent"), "stage 0 must be fed by the rectifier (Parent -1)")
			}
		} else if s.Parent < 0 || s.Parent >= k {
			return bad(f("Parent"), fmt.Sprintf("%d does not precede stage %d", s.Parent, k))
		}
		for _, v := range []struct {
			name string
			x    float64
		}{{"SeriesR", s.SeriesR}, {"SeriesL", s.SeriesL}, {"ShuntC", s.ShuntC}, {"ESR", s.ESR}, {"LoadA", s.LoadA}, {"LoadOhms", s.LoadOhms}} {
			if !finite(v.x) || v.x < 0 || v.x > 1e12 {
				return bad(f(v.name), "must be a number between 0 and 1e12")
			}
		}
		if k == 0 && s.ShuntC <= 0 && p.Topology != FullDoubler {
			if s.SeriesL > 0 {
				return bad(f("ShuntC"), "a choke-input first stage needs a capacitor after the choke (> 0 F)")
			}
			return bad(f("ShuntC"), "the reservoir capacitor of a capacitor-input filter must be > 0 F")
		}
		if k > 0 && s.SeriesR == 0 && s.SeriesL == 0 {
			return bad(f("SeriesR"), "a stage needs a series resistor or choke (both are zero)")
		}
	}
	if p.isDoubler() {
		if err := p.validateDoubler(); err != nil {
			return err
		}
	}
	s0 := p.Stages[0]
	if p.Rect.Kind == Silicon && s0.SeriesL == 0 && p.Rs+s0.SeriesR+p.Rect.Rd == 0 {
		return bad("Rs", "a capacitor-input filter fed by an ideal diode needs some source, series or diode resistance")
	}
	return nil
}

// elements returns the number of rectifier elements in series in one
// conducting path.
func (p Params) elements() float64 {
	if p.Topology == Bridge {
		return 2
	}
	return 1
}

// pulses returns the rectified pulses per mains cycle.
func (p Params) pulses() int {
	if p.Topology == HalfWave || p.Topology == HalfDoubler {
		return 1
	}
	return 2
}

// valveDrop returns the voltage across one valve anode carrying amps,
// from the Child–Langmuir law V = (I/G)^(2/3).
func valveDrop(amps, perveance float64) float64 {
	if amps <= 0 {
		return 0
	}
	return math.Cbrt(amps/perveance) * math.Cbrt(amps/perveance)
}

// rectDrop returns the drop across the rectifier elements of one
// conducting path at the given current.
func (p Params) rectDrop(amps float64) float64 {
	nd := p.elements()
	if p.Rect.Kind == Valve {
		return nd * valveDrop(amps, p.Rect.Perveance)
	}
	if amps <= 0 {
		return nd * p.Rect.Vf
	}
	return nd * (p.Rect.Vf + p.Rect.Rd*amps)
}

// ColdPeak returns the voltage the first filter node reaches with no load
// and no rectifier current: the peak of the open-circuit secondary,
// √2·Vrms, less the rectifier drop at vanishing current (nd·Vf for
// silicon, zero for a valve by Child–Langmuir). Bleeders (LoadOhms) are
// ignored: this is the highest voltage the reservoir can reach, the figure
// to check capacitor and meter ratings against, e.g. before a valve
// rectifier warms up. Returns 0 for invalid parameters.
func ColdPeak(p Params) float64 {
	if p.Validate() != nil {
		return 0
	}
	if p.isDoubler() {
		return p.doublerColdPeak()
	}
	return math.Sqrt2*p.Vrms - p.rectDrop(0)
}

// Thevenin linearises the supply at stage 0 about the given loads. It runs
// Simulate twice, the second time with stage 0's LoadA increased by a small
// step, and returns rOut = −ΔVdc/ΔI (ohms, the incremental output
// resistance of transformer, rectifier and reservoir as seen at stage 0)
// and vOC = Vdc + rOut·I, where Vdc and I are the stage-0 DC volts and the
// total DC current into stage 0 (Nets[0].DCAmps) at the given loads. So the
// supply behaves near the operating point as Vdc(I') ≈ vOC − rOut·I', with
// I' the total current drawn from stage 0 (its own loads plus everything
// downstream); vOC is the intercept of that line, not the true unloaded
// voltage (use ColdPeak for that). Errors are those of Simulate.
func Thevenin(p Params, opt Options) (vOC, rOut float64, err error) {
	r0, err := Simulate(p, opt)
	if err != nil {
		return 0, 0, err
	}
	i0 := r0.Nets[0].DCAmps
	dI := math.Max(0.02*i0, 1e-3)
	q := p
	q.Stages = append([]Stage(nil), p.Stages...)
	q.Stages[0].LoadA += dI
	r1, err := Simulate(q, opt)
	if err != nil {
		return 0, 0, err
	}
	if di := r1.Nets[0].DCAmps - i0; di > 0.5*dI {
		dI = di // bleeders downstream shift the total a little
	}
	rOut = (r0.Nets[0].Vdc - r1.Nets[0].Vdc) / dI
	vOC = r0.Nets[0].Vdc + rOut*i0
	return vOC, rOut, nil
}
