package infer

import (
	"fmt"
	"strings"

	"pinwalk/expect/design"
	"pinwalk/expect/faults"
)

// healthyShare is the prior probability that the amplifier has no
// modelled fault (it is on the bench because someone suspects one;
// common practice). Each fault's own weight is its kind's declaration
// (faults.Prior, by the part's roles).
const healthyShare = 0.10

// symptomRule multiplies the prior of faults of a part kind (any kind when
// empty), role ("" any) and mode ("" any) when a symptom is reported.
type symptomRule struct {
	symptom string
	kind    design.Kind
	role    faults.Role
	mode    faults.Mode
	factor  float64
}

// Symptoms are the symptom names New accepts.
var Symptoms = []string{"no-lights", "no-sound", "no-sound-one-channel", "hum", "fuse-blows", "red-plate", "low-volume", "crackle"}

// healthyKind marks a symptom rule that applies to the healthy hypothesis.
const healthyKind design.Kind = "(healthy)"

// symptomTable: what each reported symptom makes more or less likely
// (common practice). Every matching row multiplies. The faults with no
// hypothesis are listed in faults.NotModelled.
var symptomTable = []symptomRule{
	// No lights, no sound: nothing gets mains. The fuse first, then the
	// heater supply; everything else would leave the valves glowing.
	{"no-lights", "", "", "", 0.02},
	{"no-lights", design.Fuse, "", faults.Open, 1000},
	{"no-lights", design.PowerTransformer, "", faults.HeaterOpen, 250},
	{"no-lights", design.Rectifier, "", faults.Short, 100},               // it blew the fuse
	{"no-lights", design.Valve, faults.RoleRectValve, faults.Short, 100}, // it arced and blew the fuse
	{"no-lights", design.Valve, faults.RoleOutput, faults.Short, 100},    // shorted inside: it blew the fuse
	// A series heater string: one open heater, or the dropper, and no
	// valve lights (Ohm's law: one current through them all).
	{"no-lights", design.Valve, faults.RoleString, faults.HeaterOpen, 250},
	{"no-lights", design.Resistor, faults.RoleString, faults.Open, 250},
	{"no-lights", healthyKind, "", "", 0.01},
	// The valves glow but there is no sound at all: the HT supply or a
	// stage every signal passes through.
	{"no-sound", "", faults.RoleSupply, "", 5},
	{"no-sound", design.Valve, "", faults.Dead, 2},
	{"no-sound", design.Valve, "", faults.HeaterOpen, 2},
	{"no-sound", design.Resistor, "", faults.Open, 2},
	{"no-sound", design.Capacitor, faults.RoleCoupling, faults.Open, 2},
	{"no-sound", design.OutputTransformer, "", faults.Open, 3},
	{"no-sound", "", "", faults.Weak, 0.3},
	{"no-sound", "", "", faults.High, 0.3},
	{"no-sound", healthyKind, "", "", 0.02},
	// One channel silent: a fault local to that channel; shared supply
	// faults would silence both.
	{"no-sound-one-channel", "", faults.RoleSupply, "", 0.1},
	{"no-sound-one-channel", design.Valve, "", faults.Dead, 3},
	{"no-sound-one-channel", design.Valve, "", faults.HeaterOpen, 3},
	{"no-sound-one-channel", design.Capacitor, faults.RoleCoupling, faults.Open, 4},
	{"no-sound-one-channel", design.OutputTransformer, "", faults.Open, 4},
	{"no-sound-one-channel", design.Resistor, "", faults.Open, 2},
	{"no-sound-one-channel", design.Pot, "", faults.Open, 3},
	{"no-sound-one-channel", healthyKind, "", "", 0.1},
	// Hum: filter capacitors dried out, a rectifier half gone, an
	// unbalanced push-pull stage.
	{"hum", design.Capacitor, faults.RoleFilterCap, faults.Open, 10},
	{"hum", design.Capacitor, faults.RoleFilterCap, faults.Leaky, 2},
	{"hum", design.Rectifier, "", faults.HalfOpen, 5},
	{"hum", design.Valve, faults.RoleRectValve, faults.HalfOpen, 5},
	{"hum", design.Capacitor, faults.RoleBypass, faults.Open, 2},
	{"hum", design.Valve, "", faults.HKShort, 5}, // the classic hum fault
	{"hum", design.Valve, faults.RoleOutput, faults.Weak, 2},
	{"hum", design.OutputTransformer, "", faults.Open, 2},
	{"hum", healthyKind, "", "", 0.3},
	// Fuse blows: something shorted or a valve running away.
	{"fuse-blows", design.Capacitor, faults.RoleFilterCap, faults.Short, 8},
	{"fuse-blows", design.Rectifier, "", faults.Short, 10},               // the usual cause with silicon rectifiers
	{"fuse-blows", design.Valve, faults.RoleRectValve, faults.Short, 10}, // a valve rectifier flashing over
	{"fuse-blows", design.Valve, faults.RoleOutput, faults.Short, 10},    // an output valve shorted inside
	{"fuse-blows", design.Capacitor, "", faults.Short, 3},
	{"fuse-blows", design.Valve, faults.RoleRectValve, faults.Dead, 3},
	{"fuse-blows", design.BiasSupply, "", faults.Dead, 8},
	{"fuse-blows", design.Capacitor, faults.RoleOutCoupling, faults.Leaky, 4},
	{"fuse-blows", design.Capacitor, faults.RoleOutBypass, faults.Short, 3},
	{"fuse-blows", design.Resistor, faults.RoleOutCathodeR, faults.Short, 3},
	{"fuse-blows", design.Fuse, "", faults.Open, 5},
	{"fuse-blows", design.OutputTransformer, "", faults.ToChassis, 10},
	{"fuse-blows", "", "", faults.Weak, 0.3},
	{"fuse-blows", healthyKind, "", "", 0.1},
	// Red plate: an output valve conducting far too much.
	{"red-plate", design.BiasSupply, "", faults.Dead, 20},
	{"red-plate", "", faults.RoleBias, "", 5},
	{"red-plate", design.Capacitor, faults.RoleOutCoupling, faults.Leaky, 10},
	{"red-plate", design.Capacitor, faults.RoleOutCoupling, faults.Short, 10},
	{"red-plate", design.Resistor, faults.RoleOutCathodeR, faults.Short, 10},
	{"red-plate", design.Capacitor, faults.RoleOutBypass, faults.Short, 10},
	{"red-plate", design.Resistor, faults.RoleOutGridR, faults.Open, 5},
	{"red-plate", design.Resistor, faults.RoleScreenR, faults.Short, 3},
	{"red-plate", design.Valve, faults.RoleOutput, faults.Short, 3}, // red-plating often ends in an internal arc
	{"red-plate", "", "", faults.Weak, 0.3},
	{"red-plate", healthyKind, "", "", 0.05},
	// Low volume: tired valves, drifted resistors, dried-out bypasses.
	{"low-volume", design.Valve, "", faults.Weak, 3},
	{"low-volume", design.Resistor, "", faults.High, 2},
	{"low-volume", design.Capacitor, faults.RoleBypass, faults.Open, 3},
	{"low-volume", design.Capacitor, faults.RoleCoupling, faults.Leaky, 1.5},
	{"low-volume", design.Capacitor, faults.RoleFilterCap, faults.Open, 1.5},
	{"low-volume", healthyKind, "", "", 0.5},
	// Crackle: noisy carbon resistors, leaky coupling caps, worn pots.
	{"crackle", design.Resistor, "", faults.High, 2},
	{"crackle", design.Resistor, "", faults.Open, 1.5},
	{"crackle", design.Capacitor, faults.RoleCoupling, faults.Leaky, 3},
	{"crackle", design.Pot, "", faults.Open, 3},
	{"crackle", design.Valve, "", faults.Weak, 1.5},
	{"crackle", healthyKind, "", "", 0.5},
}

// partOf returns the design part of a fault reference ("OT1.a" → OT1).
func partOf(d *design.Design, ref string) *design.Part {
	if p := d.ByRef[ref]; p != nil {
		return p
	}
	if i := strings.LastIndex(ref, "."); i > 0 {
		return d.ByRef[ref[:i]]
	}
	return nil
}

// symptomFactor returns the product of the symptom rows matching a
// fault (nil: the healthy hypothesis).
func symptomFactor(d *design.Design, roles map[string]faults.RoleSet, f *faults.Fault, symptoms []string) float64 {
	x := 1.0
	for _, s := range symptoms {
		for _, row := range symptomTable {
			if row.symptom != s {
				continue
			}
			if f == nil {
				if row.kind == healthyKind {
					x *= row.factor
				}
				continue
			}
			p := partOf(d, f.Ref)
			if p == nil || row.kind == healthyKind || (row.kind != "" && row.kind != p.Kind) ||
				(row.mode != "" && row.mode != f.Mode) || (row.role != "" && !roles[p.Ref][row.role]) {
				continue
			}
			x *= row.factor
		}
	}
	return x
}

// checkSymptoms reports unknown symptom names, with a suggestion.
func checkSymptoms(ss []string) error {
	for _, s := range ss {
		ok := false
		for _, k := range Symptoms {
			if s == k {
				ok = true
			}
		}
		if !ok {
			hint := ""
			if sug := design.Suggest(s, Symptoms); len(sug) > 0 {
				hint = fmt.Sprintf(" (did you mean %q?)", sug[0])
			}
			return fmt.Errorf("infer: unknown symptom %q%s: expected one of %s", s, hint, strings.Join(Symptoms, ", "))
		}
	}
	return nil
}
