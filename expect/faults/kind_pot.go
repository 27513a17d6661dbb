package faults

import (
	"fmt"
	"math"

	"pinwalk/expect/amp"
	"pinwalk/expect/design"
	"pinwalk/expect/units"
)

// Pot faults. open: the wiper lifted off the track, both of its halves
// open: the model has no separate end-to-end track element, so the
// track's own path between its ends is lost too (a worn track reads like
// this at the spot the wiper rests on; common practice for the weight).
func init() {
	register(Kind{
		Kind:  design.Pot,
		Value: func(p *design.Part) string { return units.Format(p.Value, units.Ohms) },
		Healthy: func(p *design.Part) OutReading {
			return OutReading{Ohms: p.Value, OK: true, Words: "its value end to end, the wiper moving smoothly from one end to the other"}
		},
		Modes: []ModeSpec{
			{Mode: Open, Prior: 0.4,
				Live: func(v *amp.Values, t Target) {
					setSlots(v, slotsWithRole(t.M, t.Part.Ref, "a-wiper", "wiper-b"), math.Inf(1))
				},
				Cold:     func(n ColdNet, t Target) { n.Drop(ofPart(t)) },
				Describe: said("wiper open (lifted off the track)"),
				OutOfCircuit: func(t Target) OutReading {
					return OutReading{Ohms: math.Inf(1), OK: true, Words: "open from the wiper to either end (or jumping as the shaft turns)"}
				},
				Confirm: func(t Target) string {
					p := t.Part
					return fmt.Sprintf(unplugged+"lift the wiper lead of %s and measure from the wiper to each end while turning the shaft slowly: the two readings should add up to %s and move smoothly, with no open spot or jump. Confirm when checked.",
						p.Ref, units.Format(p.Value, units.Ohms))
				},
				Replace: func(t Target) string {
					p := t.Part
					return fmt.Sprintf("Fit %s: a %s pot of the same taper (log for a volume control, linear for a bias or balance set), shaft and mounting; re-set it to where it was (a bias or balance pot: set it with the meter before the output valves run).",
						p.Ref, units.Format(p.Value, units.Ohms))
				}},
		},
	})
}
