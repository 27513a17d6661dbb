package faults

import (
	"fmt"
	"math"

	"pinwalk/expect/amp"
	"pinwalk/expect/design"
	"pinwalk/expect/units"
)

// Capacitor faults (common practice for the weights: HT filter
// electrolytics dry out and fail most; electrolytic bypasses dry out;
// coupling capacitors go leaky).
//
//	short  broken down: 0 Ω powered (it carries amps and burns to a hard
//	       short), ShortedCapOhms cold with the spread
//	       ShortedCapLoOhms–ShortedCapHiOhms
//	leaky  LeakyElectrolyticOhms or LeakyFilmOhms across it
//	open   dried out or a broken lead: an HT filter capacitor keeps
//	       OpenCapFraction of its capacitance in its filter stage; every
//	       open capacitor is recorded in v.CapOpen (see OpenCapacitors)
//	       for AC analysis; no cold effect
const (
	// LeakyElectrolyticOhms and LeakyFilmOhms are the parallel resistance
	// of a leaky capacitor (common practice: a leaky electrolytic passes
	// milliamps at working volts, a leaky paper or film coupling capacitor
	// shows a few megohms).
	LeakyElectrolyticOhms = 20e3
	LeakyFilmOhms         = 5e6
	// OpenCapFraction is the capacitance left by an HT filter capacitor
	// gone open (dried out): a few percent (common practice).
	OpenCapFraction = 0.02
	// ShortedCapOhms is what a shorted capacitor leaves across its ends,
	// and ShortedCapLoOhms–ShortedCapHiOhms the spread an ohmmeter finds on
	// one: an electrolytic that has broken down reads anywhere from a
	// fraction of an ohm to a few hundred ohms, a punctured film capacitor
	// much the same (common practice). Powered it is 0 Ω: the supply
	// collapses and would blow the mains fuse.
	ShortedCapOhms   = 10.0
	ShortedCapLoOhms = 0.01
	ShortedCapHiOhms = 500.0
)

// leakOhms is the leakage of a leaky capacitor of p's material.
func leakOhms(p *design.Part) float64 {
	if p.Material == "electrolytic" {
		return LeakyElectrolyticOhms
	}
	return LeakyFilmOhms
}

func init() {
	both := func(t Target) (string, string) { return t.Part.Terminals[0].Net, t.Part.Terminals[1].Net }
	register(Kind{
		Kind: design.Capacitor,
		Value: func(p *design.Part) string {
			v := units.Format(p.Value, units.Farads)
			if p.Material != "" {
				v += " " + p.Material
			}
			return v
		},
		Healthy: func(p *design.Part) OutReading {
			return OutReading{Ohms: math.Inf(1), OK: true, Words: "its marked capacitance, open on an ohmmeter once charged"}
		},
		Modes: withDoublerCaps([]ModeSpec{
			{Mode: Short, Prior: 0.5, ByRole: []RolePrior{{RoleFilterCap, 1.5}, {RoleBypass, 0.8}, {RoleCoupling, 0.3}},
				Live: func(v *amp.Values, t Target) { setSlots(v, slotsWithRole(t.M, t.Part.Ref, "leak"), 0) },
				Cold: func(n ColdNet, t Target) {
					a, b := both(t)
					r := ShortedCapOhms
					n.Add(ColdEdge{A: a, B: b, Ohms: r, Ref: t.Part.Ref,
						Tol: design.Tolerance{Lo: ShortedCapLoOhms/r - 1, Hi: ShortedCapHiOhms/r - 1}})
				},
				Describe: said("shorted"),
				OutOfCircuit: func(t Target) OutReading {
					return OutReading{Ohms: ShortedCapOhms, OK: true, Words: "a few ohms to a few hundred ohms both ways"}
				},
				Confirm: confirmCapacitor, Replace: replaceCapacitor},
			{Mode: Leaky, Prior: 0.8, ByRole: []RolePrior{{RoleFilterCap, 2}, {RoleBypass, 0.8}, {RoleCoupling, 2.5}},
				Live: func(v *amp.Values, t Target) {
					r := leakOhms(t.Part)
					for _, i := range slotsWithRole(t.M, t.Part.Ref, "leak") {
						v.Slot[i] = parallel(v.Slot[i], r)
					}
				},
				Cold: func(n ColdNet, t Target) {
					a, b := both(t)
					n.Add(ColdEdge{A: a, B: b, Ohms: leakOhms(t.Part), Ref: t.Part.Ref})
				},
				Describe: func(t Target) string {
					return fmt.Sprintf("%s leaky (about %s across it)", partName(t), units.Format(leakOhms(t.Part), units.Ohms))
				},
				OutOfCircuit: func(t Target) OutReading {
					return OutReading{Ohms: leakOhms(t.Part), OK: true, Words: "current through it at its working volts"}
				},
				Confirm: confirmCapacitor, Replace: replaceCapacitor},
			{Mode: Open, Prior: 0.5, ByRole: []RolePrior{{RoleFilterCap, 4}, {RoleBypass, 2}, {RoleCoupling, 0.3}},
				Live: func(v *amp.Values, t Target) {
					m, p := t.M, t.Part
					if v.CapOpen == nil {
						v.CapOpen = map[string]bool{}
					}
					v.CapOpen[p.Ref] = true
					if m.HT == nil {
						return
					}
					for st, caps := range m.HT.CapRefs {
						total, mine := 0.0, 0.0
						for _, r := range caps {
							c := m.D.ByRef[r].Value
							total += c
							if r == p.Ref {
								mine = c
							}
						}
						if mine > 0 && st < len(v.StageC) {
							v.StageC[st] *= (total - (1-OpenCapFraction)*mine) / total
						}
					}
				},
				Describe: said("open (dried out or a broken lead)"),
				OutOfCircuit: func(t Target) OutReading {
					return OutReading{Ohms: math.Inf(1), OK: true, Words: "a small part of its marked capacitance, or none"}
				},
				Confirm: confirmCapacitor, Replace: replaceCapacitor},
		}),
	})
}

func confirmCapacitor(t Target) string {
	p := t.Part
	if p.Material == "electrolytic" {
		return fmt.Sprintf(unplugged+"lift one end of %s; check it on a capacitance meter (and its ESR) and for leakage at its working volts, and look for a bulging top, a vented seal or leaking electrolyte."+confirmed, p.Ref)
	}
	return fmt.Sprintf(unplugged+"lift one end of %s (%s); check its capacitance and its leakage at its working volts (an insulation tester or a leakage tester: a good film or mica part shows hundreds of MΩ)."+confirmed, p.Ref, p.Material)
}

// replaceCapacitor: the nearest preferred value (E6 for electrolytics),
// rated at least the switch-on peak across it at high mains (common
// practice).
func replaceCapacitor(t Target) string {
	p := t.Part
	n := seriesFor(p.Tol)
	if p.Material == "electrolytic" {
		n = 6
	}
	v := preferred(p, n)
	vpk := stressOf(t.M, p).PeakVolts
	need := nextRating(math.Max(vpk, p.Volts), voltRatings)
	return fmt.Sprintf("Fit %s: %s %s (E%d), rated at least %s (switch-on peak across it %s at high mains).",
		p.Ref, units.Format(v, units.Farads), p.Material, n, units.Format(need, units.Volts), units.Format(vpk, units.Volts))
}
