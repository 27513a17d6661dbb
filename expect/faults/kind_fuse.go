package faults

import (
	"fmt"
	"math"

	"pinwalk/expect/amp"
	"pinwalk/expect/design"
	"pinwalk/expect/units"
)

// Fuse faults. open: a mains fuse blown, nothing is powered (blowFuse).
// Only a fuse on the mains side (mainsFuse) is modelled: the model has
// no other place for one.
func init() {
	register(Kind{
		Kind:  design.Fuse,
		Value: func(p *design.Part) string { return units.Format(p.Value, units.Amps) },
		Healthy: func(p *design.Part) OutReading {
			return OutReading{Ohms: FuseOhms, OK: true, Words: "a few tens of milliohms"}
		},
		Modes: []ModeSpec{
			{Mode: Open, Prior: 0.8,
				Applies:  func(m *amp.Model, p *design.Part) bool { return mainsFuse(m.D, p) },
				Live:     func(v *amp.Values, t Target) { blowFuse(t.M, v) },
				Cold:     func(n ColdNet, t Target) { n.Drop(ofPart(t)) },
				Describe: said("open (nothing powered)"),
				OutOfCircuit: func(t Target) OutReading {
					return OutReading{Ohms: math.Inf(1), OK: true, Words: "open; the wire broken or the glass blackened"}
				},
				Confirm: func(t Target) string {
					p := t.Part
					return fmt.Sprintf(unplugged+"take %s out of its holder and measure it: a good fuse reads under an ohm, a blown one open. A blackened or silvered glass means a hard short downstream; a wire merely parted, an overload or age."+confirmed, p.Ref)
				},
				Replace: func(t Target) string {
					p := t.Part
					return fmt.Sprintf("Fit a %s fuse in %s of the same size and type, never larger. A fuse blows for a reason: find the fault first (a shorted rectifier, filter capacitor or output valve, a dead bias supply)."+lampFirst,
						fuseRating(p), p.Ref)
				}},
		},
	})
}

// FuseOhms is what a good fuse out of its holder reads (common practice:
// a glass fuse of an amp or two reads a few tens of milliohms; the
// meter's leads add more).
const FuseOhms = 0.05

// mainsFuse reports whether a fuse is on the mains side (one of its nets
// is a mains-inlet live or neutral, or a power transformer primary end):
// the model has no other place for a fuse.
func mainsFuse(d *design.Design, f *design.Part) bool {
	mains := map[string]bool{}
	for _, p := range d.PartsOfKind(design.MainsInlet) {
		for _, t := range p.Terminals {
			if t.Name != "earth" {
				mains[t.Net] = true
			}
		}
	}
	for _, p := range d.PartsOfKind(design.PowerTransformer) {
		for _, e := range p.PT.PrimaryEnds {
			if e != "" {
				mains[e] = true
			}
		}
	}
	for _, t := range f.Terminals {
		if mains[t.Net] {
			return true
		}
	}
	return false
}

// blowFuse puts an open mains fuse into v: no HT, no heaters (their
// winding gets no volts), no bias.
func blowFuse(m *amp.Model, v *amp.Values) {
	v.HTVolts = 0
	v.HeaterVolts = 0
	for i := range v.Emission {
		v.Emission[i] = -1
	}
	for _, b := range m.D.PartsOfKind(design.BiasSupply) {
		setSlots(v, slotsWithRole(m, b.Ref, "volts"), 0)
	}
}
