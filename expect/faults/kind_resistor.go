package faults

import (
	"fmt"
	"math"

	"pinwalk/expect/amp"
	"pinwalk/expect/design"
	"pinwalk/expect/units"
)

// Resistor faults (common practice for the weights: resistors seldom
// fail; carbon parts drift high with age and heat; a screen resistor or
// one running hot burns open more often).
//
//	open   the element gone (infinite; between HT filter stages,
//	       SeriesOpenOhms so the supply simulation stays finite)
//	short  bridged (0 Ω; SeriesShortOhms in the HT filter; cold
//	       ColdShortOhms)
//	high   drifted up: the value × HighFactor

// HighFactor is the drift of a resistor gone high (common practice:
// carbon-composition and carbon-film resistors drift upwards; double is a
// typical "clearly out" value).
const HighFactor = 2.0

// burnOpenFactor multiplies a resistor's "open" weight when it feeds a
// screen or runs hot (common practice).
const burnOpenFactor = 4

// OutShortOhms is what a shorted part reads out of circuit on an
// ohmmeter (the leads and the bridge: common practice).
const OutShortOhms = 0.05

func init() {
	register(Kind{
		Kind:  design.Resistor,
		Value: func(p *design.Part) string { return units.Format(p.Value, units.Ohms) },
		Healthy: func(p *design.Part) OutReading {
			return OutReading{Ohms: p.Value, OK: true, Words: "its marked value within tolerance"}
		},
		Modes: []ModeSpec{
			{Mode: Open, Prior: 0.4, Multiply: []RolePrior{{RoleScreenR, burnOpenFactor}, {RoleHot, burnOpenFactor}},
				Live: func(v *amp.Values, t Target) {
					open, _ := seriesOhms(t)
					setSlots(v, mainSlots(t), open)
				},
				Cold:     func(n ColdNet, t Target) { n.Drop(ofPart(t)) },
				Describe: said("open circuit"),
				OutOfCircuit: func(t Target) OutReading {
					return OutReading{Ohms: math.Inf(1), OK: true, Words: "open (OL on every range)"}
				},
				Confirm: confirmResistor, Replace: replaceResistor},
			{Mode: Short, Prior: 0.05,
				Live: func(v *amp.Values, t Target) {
					_, short := seriesOhms(t)
					setSlots(v, mainSlots(t), short)
				},
				Cold: func(n ColdNet, t Target) {
					n.Edit(func(e *ColdEdge) bool {
						if e.Ref != t.Part.Ref {
							return false
						}
						e.Ohms, e.Tol = ColdShortOhms, design.Tolerance{}
						return true
					})
				},
				Describe: said("short circuit"),
				OutOfCircuit: func(t Target) OutReading {
					return OutReading{Ohms: OutShortOhms, OK: true, Words: "near 0 Ω (bridged or burnt through)"}
				},
				Confirm: confirmResistor, Replace: replaceResistor},
			{Mode: High, Prior: 0.2, ByRole: []RolePrior{{RoleCarbon, 1.2}},
				Live: func(v *amp.Values, t Target) {
					for _, i := range mainSlots(t) {
						v.Slot[i] *= HighFactor
					}
				},
				Cold: func(n ColdNet, t Target) {
					n.Edit(func(e *ColdEdge) bool {
						if e.Ref != t.Part.Ref {
							return false
						}
						e.Ohms *= HighFactor
						return true
					})
				},
				Describe: func(t Target) string { return fmt.Sprintf("%s drifted high (about ×%g)", partName(t), HighFactor) },
				OutOfCircuit: func(t Target) OutReading {
					return OutReading{Ohms: t.Part.Value * HighFactor, OK: true, Words: "well above its marked value"}
				},
				Confirm: confirmResistor, Replace: replaceResistor},
		},
	})
}

func confirmResistor(t Target) string {
	p := t.Part
	return fmt.Sprintf(unplugged+"lift one end of %s and measure it (%s ±%.0f %% expected when healthy). Enter the reading.", p.Ref, units.Format(p.Value, units.Ohms), 100*p.Tol.Hi)
}

// replaceResistor: the nearest preferred value in the series of its
// tolerance, rated at least twice its dissipation at full mains (common
// practice).
func replaceResistor(t Target) string {
	p := t.Part
	n := seriesFor(p.Tol)
	v := preferred(p, n)
	watts := stressOf(t.M, p).Watts
	need := nextRating(math.Max(2*watts, p.Watts), wattRatings)
	return fmt.Sprintf("Fit %s: %s (E%d, ±%.0f %%), rated at least %s (it dissipates %s at full mains: 2× margin, common practice).",
		p.Ref, units.Format(v, units.Ohms), n, 100*math.Max(math.Abs(p.Tol.Lo), p.Tol.Hi), units.Format(need, units.Watts), units.Format(watts, units.Watts))
}
