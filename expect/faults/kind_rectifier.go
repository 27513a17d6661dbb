package faults

import (
	"fmt"
	"math"

	"pinwalk/expect/amp"
	"pinwalk/expect/design"
	"pinwalk/expect/supply"
)

// Silicon rectifier faults of the HT rectifier:
//
//	open       every diode: nothing reaches the filter (RectDead)
//	half-open  one diode of a full-wave centre-tap rectifier: half-wave
//	           operation
//	short      one diode shorted. It puts AC across the reservoir and, in
//	           a full-wave or bridge rectifier, shorts the HT winding
//	           through the diode opposite it every other half-cycle: the
//	           mains fuse blows at switch-on (common practice: the usual
//	           cause of a fuse that blows with silicon rectifiers). The
//	           supply model has no reverse conduction, so the fault is
//	           modelled as what the bench then shows: the fuse gone,
//	           nothing powered (blowFuse), whether or not the design draws
//	           a fuse. Cold, the diode's ends are joined (the first
//	           diode: a centre-tap or half-wave rectifier's first anode to
//	           its cathode, a bridge's first AC end to plus). An ohmmeter
//	           on a healthy diode is not in the cold network (its reading
//	           depends on the meter's polarity and volts), so only the
//	           short shows.
//
// A rectifier that is not the HT one (a bias or DC supply off its own
// winding, amp.AuxRect) has its own rows:
//
//	open       its diode(s) open: the supply gives nothing; for a grid-bias
//	           supply the output valves then have no bias and red-plate
//	           (the walk's bias rules stop on it)
//	short      one diode shorted: the winding's AC goes straight onto the
//	           reservoir (an electrolytic driven both ways, which heats and
//	           vents) and its mean is gone: no DC out, AC on the bias line.
//	           The winding is loaded by the reservoir's reactance (about
//	           32 Ω for 100 µF at 50 Hz), amps on a small winding but
//	           a fraction of an amp reflected to the primary, so the mains
//	           fuse need not blow (Ohm's law on the reactance). Modelled
//	           live as the supply giving nothing (the walk's bias rules
//	           stop on it); cold, the diode's ends joined.
//
// Silicon diodes fail short more often than open (common practice for
// the weights).
func init() {
	isHT := func(m *amp.Model, p *design.Part) bool {
		return m.HT != nil && m.HT.Rectifier == p && m.HT.Doubler == nil
	}
	isAux := func(m *amp.Model, p *design.Part) bool { return m.AuxRectOf(p.Ref) != nil }
	auxOpen := func(v *amp.Values, t Target) {
		if v.AuxOpen == nil {
			v.AuxOpen = map[string]bool{}
		}
		v.AuxOpen[t.Part.Ref] = true
	}
	auxWords := func(t Target, what string) string {
		a := t.M.AuxRectOf(t.Part.Ref)
		if a != nil && a.Sign < 0 {
			return partName(t) + " " + what + " (no grid bias: the output valves red-plate)"
		}
		return partName(t) + " " + what + " (its DC supply gives nothing)"
	}
	register(Kind{
		Kind: design.Rectifier,
		Healthy: func(p *design.Part) OutReading {
			return OutReading{Ohms: math.NaN(), Words: "each diode about 0.5–0.7 V one way on the diode range and open the other"}
		},
		Modes: append(doublerDiodeModes(), []ModeSpec{
			{Mode: Open, Prior: 0.3, Applies: isHT,
				Live:     func(v *amp.Values, t Target) { v.RectDead = true },
				Describe: said("open (no B+)"),
				OutOfCircuit: func(t Target) OutReading {
					return OutReading{Ohms: math.Inf(1), OK: true, Words: "every diode open both ways"}
				},
				Confirm: confirmDiodes, Replace: replaceDiodes},
			{Mode: HalfOpen, Prior: 0.5,
				Applies: func(m *amp.Model, p *design.Part) bool {
					return isHT(m, p) && m.HT.Topology == supply.CentreTap
				},
				Live:     func(v *amp.Values, t Target) { v.HalfOpen = true },
				Describe: said("one diode open (half-wave operation, more ripple)"),
				OutOfCircuit: func(t Target) OutReading {
					return OutReading{Ohms: math.NaN(), Words: "one diode open both ways"}
				},
				Confirm: confirmDiodes, Replace: replaceDiodes},
			{Mode: Short, Prior: 1, Applies: isHT, PoweredShort: true,
				Live:     func(v *amp.Values, t Target) { blowFuse(t.M, v) },
				Cold:     shortFirstDiode,
				Describe: said("one diode shorted (shorts the HT winding: the mains fuse blows)"),
				OutOfCircuit: func(t Target) OutReading {
					return OutReading{Ohms: OutShortOhms, OK: true, Words: "one diode near 0 both ways"}
				},
				Confirm: confirmDiodes, Replace: replaceDiodes},
			{Mode: Open, Prior: 0.3, Applies: isAux,
				Live:     auxOpen,
				Describe: func(t Target) string { return auxWords(t, "open") },
				OutOfCircuit: func(t Target) OutReading {
					return OutReading{Ohms: math.Inf(1), OK: true, Words: "open both ways"}
				},
				Confirm: confirmDiodes, Replace: replaceDiodes},
			{Mode: Short, Prior: 1, Applies: isAux,
				Live:     auxOpen,
				Cold:     shortFirstDiode,
				Describe: func(t Target) string { return auxWords(t, "shorted, AC on its output") },
				OutOfCircuit: func(t Target) OutReading {
					return OutReading{Ohms: OutShortOhms, OK: true, Words: "near 0 both ways"}
				},
				Confirm: confirmDiodes, Replace: replaceDiodes},
		}...),
	})
}

// shortFirstDiode joins the ends of a rectifier's first diode in the cold
// network.
func shortFirstDiode(n ColdNet, t Target) {
	r := t.Part.Rect
	if r == nil {
		return
	}
	a := r.AC[0]
	if !r.Bridge && len(r.Anodes) > 0 {
		a = r.Anodes[0]
	}
	if a != "" && r.Plus != "" {
		n.Add(ColdEdge{A: a, B: r.Plus, Ohms: ColdShortOhms, Ref: t.Part.Ref})
	}
}

func confirmDiodes(t Target) string {
	return fmt.Sprintf(unplugged+"lift one end of each diode of %s and check it on the meter's diode range: a good silicon diode reads about 0.5–0.7 V one way and open the other; a shorted one reads near 0 both ways, an open one open both ways."+confirmed, t.Part.Ref)
}

func replaceDiodes(t Target) string {
	return fmt.Sprintf("Fit new silicon rectifier diodes in %s (all of them, not only the failed one), rated at least 1 kV reverse and 1 A (common practice: well over the twice-peak winding volts a full-wave diode blocks), then a fuse of the rated value; power up on the lamp limiter first.", t.Part.Ref)
}
