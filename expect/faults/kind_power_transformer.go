package faults

import (
	"fmt"
	"math"

	"pinwalk/expect/amp"
	"pinwalk/expect/design"
	"pinwalk/expect/valves"
)

// Power-transformer faults (windings open less often than capacitors
// fail; common practice for the weights):
//
//	open         the HT winding (no volts at the rectifier: HTVolts 0)
//	heater-open  the heater windings feeding amplifying valves (those
//	             valves' emission gone; a valve rectifier's own filament
//	             winding is not one of them)
//	centre-open  a heater winding's centre-tap lead broken: the heaters
//	             still light (their volts are across the ends), but the
//	             heater circuit floats: hum rises and a heater-to-cathode
//	             leak is no longer held. No DC reading of the powered amp
//	             changes (the heater nets carry AC only); cold, the heater
//	             winding reads open to chassis. A lead breaks at its tag
//	             about as often as a heater winding opens (common
//	             practice).
func init() {
	register(Kind{
		Kind: design.PowerTransformer,
		Healthy: func(p *design.Part) OutReading {
			return OutReading{Ohms: math.NaN(), Words: "every winding continuous (a few ohms to a few hundred ohms) and open from each winding to the others and to the frame"}
		},
		Modes: []ModeSpec{
			{Mode: Open, Prior: 0.2,
				Applies:  func(m *amp.Model, p *design.Part) bool { return m.HT != nil && m.HT.Transformer == p },
				Live:     func(v *amp.Values, t Target) { v.HTVolts = 0 },
				Cold:     func(n ColdNet, t Target) { dropWindings(n, t, htWinding(t)) },
				Describe: said("HT winding open (no B+)"),
				OutOfCircuit: func(t Target) OutReading {
					return OutReading{Ohms: math.Inf(1), OK: true, Words: "open across the HT winding (or from its centre tap to one end)"}
				},
				Confirm: func(t Target) string {
					return fmt.Sprintf(unplugged+"lift the HT winding's leads of %s from the rectifier and measure the winding end to end (and from its centre tap to each end): a good HT winding reads tens to a few hundred ohms, an open one open. Measure the primary too, and from every winding to the frame (it should read open)."+confirmed, t.Part.Ref)
				},
				Replace: replaceTransformer},
			{Mode: HeaterOpen, Prior: 0.1,
				Applies:  func(m *amp.Model, p *design.Part) bool { return len(heaterSections(m, p)) > 0 },
				Live:     func(v *amp.Values, t Target) { heaterOff(v, heaterSections(t.M, t.Part)) },
				Cold:     func(n ColdNet, t Target) { dropWindings(n, t, heaterWindings(t)) },
				Describe: said("heater winding open (no valve lights)"),
				OutOfCircuit: func(t Target) OutReading {
					return OutReading{Ohms: math.Inf(1), OK: true, Words: "open across the heater winding"}
				},
				Confirm: func(t Target) string {
					return fmt.Sprintf(unplugged+"with the valves out, measure each heater winding of %s at its leads: a good one reads well under an ohm, an open one open. Look for a burnt lead or a wire parted at the tag before condemning the transformer."+confirmed, t.Part.Ref)
				},
				Replace: replaceTransformer},
			{Mode: CentreOpen, Prior: 0.1,
				Applies: func(m *amp.Model, p *design.Part) bool { return len(centredHeaters(Target{M: m, Part: p})) > 0 },
				// No DC change powered: the heater nets are AC only.
				Live: func(v *amp.Values, t Target) {},
				Cold: func(n ColdNet, t Target) {
					ws := centredHeaters(t)
					dropWindings(n, t, ws)
					for _, w := range ws {
						n.Add(ColdEdge{A: w.Ends[0], B: w.Ends[1], Ohms: w.DCR, Tol: t.M.D.Defaults.Winding, Ref: t.Part.Ref})
					}
				},
				Describe: said("heater winding's centre tap open (the heaters light but float: hum)"),
				OutOfCircuit: func(t Target) OutReading {
					return OutReading{Ohms: math.Inf(1), OK: true, Words: "open from the heater winding's centre tap to either end"}
				},
				Confirm: func(t Target) string {
					return fmt.Sprintf(unplugged+"with the valves out, measure from a heater pin to chassis: a heater winding of %s whose centre tap (or the two balancing resistors standing in for one) is tied to chassis reads well under an ohm to a few tens of ohms; open means the centre-tap lead or its solder tag has parted. Look at the tag before condemning the transformer."+confirmed, t.Part.Ref)
				},
				Replace: func(t Target) string {
					return fmt.Sprintf("Resolder the heater winding's centre-tap lead of %s to its tag and to chassis; if the lead is broken inside the transformer, fit two 100 Ω resistors from the heater ends to chassis in its place (an artificial centre tap, common practice).", t.Part.Ref)
				}},
		},
	})
}

// centredHeaters are the heater windings (feeding amplifying valves) whose
// centre tap is wired.
func centredHeaters(t Target) []*design.Winding {
	var out []*design.Winding
	for _, w := range heaterWindings(t) {
		if w.Centre != "" {
			out = append(out, w)
		}
	}
	return out
}

func replaceTransformer(t Target) string {
	p := t.Part
	return fmt.Sprintf("Fit a power transformer in %s with the same primary (%g V), the same secondary volts and current ratings, and a current rating for the heaters at least the valves' total; or have the failed winding rewound. A winding that opened may have been overloaded: check the rectifier, the filter capacitors and the heater wiring for shorts first."+lampFirst,
		p.Ref, p.PT.PrimaryVolts)
}

// htWinding is the HT winding of the model (none when the design has no
// HT supply).
func htWinding(t Target) []*design.Winding {
	if t.M.HT != nil && t.M.HT.Winding != nil {
		return []*design.Winding{t.M.HT.Winding}
	}
	return nil
}

// heaterWindings are the power transformer's windings that feed
// amplifying valves' heaters.
func heaterWindings(t Target) []*design.Winding {
	var ws []*design.Winding
	seen := map[*design.Winding]bool{}
	for _, h := range t.M.Heaters {
		if h.Transformer == t.Part.PT && h.Winding != nil && !seen[h.Winding] && amplifying(t.M.D, h.Ref) {
			seen[h.Winding] = true
			ws = append(ws, h.Winding)
		}
	}
	return ws
}

// dropWindings removes windings from the cold network: each half of a
// centre-tapped one, or the winding end to end.
func dropWindings(n ColdNet, t Target, ws []*design.Winding) {
	between := func(a, b string) func(e ColdEdge) bool {
		return func(e ColdEdge) bool {
			return e.Ref == t.Part.Ref && ((e.A == a && e.B == b) || (e.A == b && e.B == a))
		}
	}
	for _, w := range ws {
		if w.Centre != "" {
			n.Drop(between(w.Centre, w.Ends[0]))
			n.Drop(between(w.Centre, w.Ends[1]))
		} else {
			n.Drop(between(w.Ends[0], w.Ends[1]))
		}
	}
}

// amplifying reports whether a valve reference is an amplifying valve
// (not a rectifier).
func amplifying(d *design.Design, ref string) bool {
	p := d.ByRef[ref]
	return p != nil && p.Valve != nil && p.Valve.Type.Kind != valves.Rectifier
}

// heaterSections returns the amplifying sections whose heaters a power
// transformer feeds.
func heaterSections(m *amp.Model, pt *design.Part) []int {
	fed := map[string]bool{}
	for _, h := range m.Heaters {
		if h.Transformer == pt.PT {
			fed[h.Ref] = true
		}
	}
	var out []int
	for i, s := range m.Sections {
		if fed[s.Ref] {
			out = append(out, i)
		}
	}
	return out
}

// heaterOff puts out the cathodes of sections: no emission, the heater
// open.
func heaterOff(v *amp.Values, sections []int) {
	for _, i := range sections {
		v.Emission[i] = -1
	}
}
