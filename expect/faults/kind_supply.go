package faults

import (
	"fmt"
	"math"

	"pinwalk/expect/amp"
	"pinwalk/expect/design"
	"pinwalk/expect/units"
)

// Bias-supply and DC-supply faults. dead: the output falls to 0 V (a
// rectifier diode, a filter capacitor or a dropping resistor of a
// mains-fed supply failed; a bench supply (not mains-fed) tripped, its
// fuse gone or its leads off). A bias supply fails more often than a DC heater
// or relay supply, and its failure is the one that red-plates the output
// valves (common practice for the weights).
func init() {
	for _, k := range []struct {
		kind  design.Kind
		prior float64
		what  string
	}{
		{design.BiasSupply, 1.2, "bias"},
		{design.DCSupply, 0.5, "DC"},
	} {
		what := k.what
		register(Kind{
			Kind:  k.kind,
			Value: func(p *design.Part) string { return units.Format(p.Value, units.Volts) },
			Healthy: func(p *design.Part) OutReading {
				return OutReading{Ohms: math.NaN(), Words: fmt.Sprintf("%s from its output to its reference, unloaded", units.Format(p.Value, units.Volts))}
			},
			Modes: []ModeSpec{
				{Mode: Dead, Prior: k.prior,
					Live:     func(v *amp.Values, t Target) { setSlots(v, slotsWithRole(t.M, t.Part.Ref, "volts"), 0) },
					Describe: said("dead (output at 0 V)"),
					OutOfCircuit: func(t Target) OutReading {
						return OutReading{Ohms: math.NaN(), Words: "0 V at its output"}
					},
					Confirm: func(t Target) string {
						p := t.Part
						if !p.MainsFed {
							return fmt.Sprintf(unplugged+"disconnect %s from the circuit and measure its output unloaded: it should give %s. Check its fuse, its current limit and its leads; a supply that is good on its own but falls to 0 V when connected is feeding a short: measure from its output net to its reference with it disconnected."+confirmed,
								p.Ref, units.Format(p.Value, units.Volts))
						}
						return fmt.Sprintf(unplugged+"check the parts of the %s supply %s one by one: its rectifier diode on the meter's diode range (about 0.5–0.7 V one way, open the other), its filter capacitors for capacitance and shorts, its dropping resistors against their marked values, and the winding or tap that feeds it for continuity."+confirmed, what, p.Ref)
					},
					Replace: func(t Target) string {
						p := t.Part
						if !p.MainsFed {
							return fmt.Sprintf("Repair or replace the supply %s: %s, able to give the current the circuit draws, with its current limit set a little above that; if it was feeding a short, find the short before connecting it again.",
								p.Ref, units.Format(p.Value, units.Volts))
						}
						s := fmt.Sprintf("Replace the failed part of the %s supply %s (a diode rated at least 1 kV and 1 A, capacitors of at least the old volts, resistors of the old value and watts); power up with the output valves out and check it gives %s before they go back in.",
							what, p.Ref, units.Format(p.Value, units.Volts))
						if p.Kind == design.BiasSupply {
							s += " Then set the bias again."
						}
						return s
					}},
			},
		})
	}
}
