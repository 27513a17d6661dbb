package faults

import (
	"math"

	"pinwalk/expect/amp"
	"pinwalk/expect/design"
)

// An HT voltage doubler's parts (amp.Doubler) have rows of their own, put
// before their kind's generic rows (the first matching row is the mode's):
//
//	diode open    that diode conducts nothing (Values.DoublerOpen): only
//	              the other capacitor charges. Unloaded the output is one
//	              peak, half the HT; under load a full-wave doubler's
//	              output collapses, the load's return running through the
//	              uncharged capacitor's bleeder alone, and a half-wave
//	              doubler's pump has a one-way path only (the supply
//	              simulation says how far)
//	diode short   the winding shorted through the other diode every other
//	              half cycle: the mains fuse blows (blowFuse), as a
//	              shorted HT rectifier diode does
//	cap open      that capacitor keeps OpenCapFraction of its capacitance
//	              in the doubler (Values.DoublerC)
//	cap short     a full-wave doubler's capacitor, or a half-wave one's
//	              pump, shorted puts the winding across a diode every
//	              other half cycle (Ohm's law on the winding's
//	              resistance): the fuse blows; cold, its ends joined as
//	              any shorted capacitor's
func doublerDiodeModes() []ModeSpec {
	isDiode := func(m *amp.Model, p *design.Part) bool { return m.HT != nil && m.HT.Doubler.DiodeIndex(p) >= 0 }
	return []ModeSpec{
		{Mode: Open, Prior: 0.3, Applies: isDiode,
			Live: func(v *amp.Values, t Target) {
				if i := t.M.HT.Doubler.DiodeIndex(t.Part); i >= 0 {
					v.DoublerOpen[i] = true
				}
			},
			Describe: said("open (one side of the voltage doubler: its capacitor does not charge; the HT falls to one peak or less)"),
			OutOfCircuit: func(t Target) OutReading {
				return OutReading{Ohms: math.Inf(1), OK: true, Words: "open both ways"}
			},
			Confirm: confirmDiodes, Replace: replaceDiodes},
		{Mode: Short, Prior: 1, Applies: isDiode, PoweredShort: true,
			Live:     func(v *amp.Values, t Target) { blowFuse(t.M, v) },
			Cold:     shortFirstDiode,
			Describe: said("shorted (shorts the HT winding through the doubler's other diode: the mains fuse blows)"),
			OutOfCircuit: func(t Target) OutReading {
				return OutReading{Ohms: OutShortOhms, OK: true, Words: "near 0 both ways"}
			},
			Confirm: confirmDiodes, Replace: replaceDiodes},
	}
}

// doublerCapModes are the rows of a doubler's capacitors; generic holds
// the capacitor kind's own short row, whose cold effect they share.
func doublerCapModes(generic []ModeSpec) []ModeSpec {
	idx := func(m *amp.Model, p *design.Part) int {
		if m.HT == nil {
			return -1
		}
		return m.HT.Doubler.CapIndex(p.Ref)
	}
	isCap := func(m *amp.Model, p *design.Part) bool { return idx(m, p) >= 0 }
	// A half-wave doubler's second capacitor is its reservoir to
	// chassis: shorted it is a B+ short like any reservoir's.
	shortsWinding := func(m *amp.Model, p *design.Part) bool {
		i := idx(m, p)
		return i == 0 || (i == 1 && m.HT.Doubler.Full)
	}
	var short, open ModeSpec
	for _, g := range generic {
		switch g.Mode {
		case Short:
			short = g
		case Open:
			open = g
		}
	}
	s := short
	s.Applies, s.PoweredShort = shortsWinding, true
	s.Live = func(v *amp.Values, t Target) { blowFuse(t.M, v) }
	s.Describe = said("shorted (the winding across a doubler diode every other half cycle: the mains fuse blows)")
	o := open
	o.Applies = isCap
	o.Live = func(v *amp.Values, t Target) {
		if v.CapOpen == nil {
			v.CapOpen = map[string]bool{}
		}
		v.CapOpen[t.Part.Ref] = true
		if i := idx(t.M, t.Part); i >= 0 {
			v.DoublerC[i] *= OpenCapFraction
		}
		if open.Live != nil && !t.M.HT.Doubler.Full && idx(t.M, t.Part) == 1 {
			open.Live(v, t) // the reservoir of a half-wave doubler: its stage too
		}
	}
	return []ModeSpec{s, o}
}

// withDoublerCaps puts the doubler capacitor rows before the capacitor
// kind's own.
func withDoublerCaps(generic []ModeSpec) []ModeSpec {
	return append(doublerCapModes(generic), generic...)
}
