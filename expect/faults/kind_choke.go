package faults

import (
	"fmt"
	"math"

	"pinwalk/expect/amp"
	"pinwalk/expect/design"
	"pinwalk/expect/units"
)

// Choke faults. open: the winding parted (between HT filter stages,
// SeriesOpenOhms; a choke-input filter's choke lives in the supply model:
// open, nothing leaves the rectifier, RectDead). Windings open less often
// than capacitors fail (common practice for the weight).
func init() {
	register(Kind{
		Kind:  design.Choke,
		Value: func(p *design.Part) string { return units.Format(p.Value, units.Henries) },
		Healthy: func(p *design.Part) OutReading {
			if p.DCR > 0 {
				return OutReading{Ohms: p.DCR, OK: true, Words: "its DC resistance"}
			}
			return OutReading{Ohms: math.NaN(), Words: "tens to a few hundred ohms (its DC resistance)"}
		},
		Modes: []ModeSpec{
			{Mode: Open, Prior: 0.3,
				Live: func(v *amp.Values, t Target) {
					ix := slotsWithRole(t.M, t.Part.Ref, "dcr")
					if len(ix) == 0 {
						v.RectDead = true
					}
					open, _ := seriesOhms(t)
					setSlots(v, ix, open)
				},
				Cold:     func(n ColdNet, t Target) { n.Drop(ofPart(t)) },
				Describe: said("winding open"),
				OutOfCircuit: func(t Target) OutReading {
					return OutReading{Ohms: math.Inf(1), OK: true, Words: "open end to end"}
				},
				Confirm: func(t Target) string {
					p := t.Part
					want := "its DC resistance (tens to a few hundred ohms)"
					if p.DCR > 0 {
						want = units.Format(p.DCR, units.Ohms) + " (its DC resistance)"
					}
					return fmt.Sprintf(unplugged+"lift one lead of %s and measure it end to end: a good choke reads %s, an open one reads open; also measure each lead to the frame (it should read open: a winding to frame short puts B+ on the chassis)."+confirmed, p.Ref, want)
				},
				Replace: func(t Target) string {
					p := t.Part
					amps := "the current it carries"
					if p.RatedAmps > 0 {
						amps = units.Format(p.RatedAmps, units.Amps)
					}
					return fmt.Sprintf("Fit a %s choke in %s rated for at least %s DC, with a DC resistance close to the old one's (B+ moves with it) and insulation for the HT volts; bolt its frame to the chassis."+findWhy,
						units.Format(p.Value, units.Henries), p.Ref, amps)
				}},
		},
	})
}
