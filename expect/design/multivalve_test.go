package design

import (
	"fmt"
	"strings"
	"testing"
)

// rig is a small design around one valve part (V1) with a 6.3 V heater
// winding (H1, H2, centre tap HC to ground through R0), a stiff B+ on B1 and
// the given resistors.
func rig(resistors, valve string) string {
	return `pinwalk: 1
title: valve rig
mains: {volts: 230, hz: 50}
parts:
  T1:
    power-transformer:
      primary: {volts: 230, dcr: 10R}
      secondaries:
        H: {volts: 6.3, rated: 3A, dcr: 0R01, ends: [H1, H2], centre: HC}
  U1: {dc-supply: 250V, dcr: 1R, between: [B1, 0V]}
  R0: {resistor: 100R, between: [HC, 0V]}
` + resistors + "  V1:\n" + valve
}

const (
	pentodeRs = `  R1: {resistor: 10k, between: [B1, P]}
  R2: {resistor: 1k, between: [B1, S]}
  R3: {resistor: 1M, between: [G, 0V]}
  R4: {resistor: 1k, between: [K, 0V]}
`
	triodeRs = `  R5: {resistor: 100k, between: [B1, PT]}
  R6: {resistor: 1M, between: [GT, 0V]}
  R7: {resistor: 1k5, between: [KT, 0V]}
`
	dhtRs = `  R1: {resistor: 10k, between: [B1, P]}
  R3: {resistor: 1M, between: [G, 0V]}
`
)

// lineOf returns the 1-based line of the first line of src containing s.
func lineOf(src, s string) int {
	for i, ln := range strings.Split(src, "\n") {
		if strings.Contains(ln, s) {
			return i + 1
		}
	}
	return 0
}

func errorsOf(src string) []string {
	_, probs := Parse("rig.yaml", []byte(src))
	var out []string
	for _, e := range probs.Errors() {
		out = append(out, e.Error())
	}
	return out
}

// A triode-pentode is wired by its T and P sections.
func TestMultiFunctionValveSections(t *testing.T) {
	src := rig(pentodeRs+triodeRs, `    valve: 6BM8
    T: {plate: PT, grid: GT, cathode: KT}
    P: {plate: P, screen: S, grid: G, cathode: K}
    heater: [H1, H2]
`)
	d, probs := Parse("rig.yaml", []byte(src))
	if errs := probs.Errors(); len(errs) > 0 {
		t.Fatalf("ECL82 rig: %v", errs)
	}
	v := d.ByRef["V1"].Valve
	if v.PinNets[9] != "PT" || v.PinNets[6] != "P" || v.PinNets[7] != "S" || v.PinNets[2] != "K" {
		t.Errorf("ECL82 pin nets %v (Mullard ECL82 base: 9 triode plate, 6 pentode plate, 7 screen, 2 pentode cathode, from memory)", v.PinNets)
	}
	// Section A does not exist on an ECL82.
	errs := errorsOf(strings.Replace(src, "    T: {", "    A: {", 1))
	if len(errs) == 0 || !strings.Contains(strings.Join(errs, "\n"), "section T is not wired") {
		t.Errorf("A on an ECL82: %v", errs)
	}
}

// A diode-triode's signal diodes are wired by their plates (they share the
// triode's cathode pin, RCA 6AV6 base diagram, from memory): the plate nets
// land on pins 5 and 6; the wrong count of plate nets is refused at its line;
// D: unused is accepted.
func TestDiodeSectionWired(t *testing.T) {
	ok := rig(triodeRs, `    valve: 6AV6
    T: {plate: PT, grid: GT, cathode: KT}
    D: unused
    heater: [H1, H2]
`)
	if errs := errorsOf(ok); len(errs) > 0 {
		t.Errorf("6AV6 with D unused: %v", errs)
	}
	wired := strings.Replace(ok, "    D: unused", "    D: {plates: [GT, GT]}", 1)
	d, probs := Parse("rig.yaml", []byte(wired))
	if errs := probs.Errors(); len(errs) > 0 {
		t.Fatalf("wired diode section: %v", errs)
	}
	v := d.ByRef["V1"].Valve
	if v.PinNets[5] != "GT" || v.PinNets[6] != "GT" || v.PinNets[2] != "KT" || v.Unused["D"] {
		t.Errorf("6AV6 pins: %v, unused %v", v.PinNets, v.Unused)
	}
	bad := strings.Replace(ok, "    D: unused", "    D: {plates: [GT]}", 1)
	errs := strings.Join(errorsOf(bad), "\n")
	if !strings.Contains(errs, fmt.Sprintf("rig.yaml:%d:", lineOf(bad, "    D: {"))) || !strings.Contains(errs, "expected 2 plate nets") {
		t.Errorf("one plate net for two diodes: %q", errs)
	}
}

// A gas regulator is wired by its anode and cathode and has no heater: a
// heater given is refused at its line, and so is a plate.
func TestRegulatorWiring(t *testing.T) {
	src := rig("", "    valve: OA2\n    anode: B2\n    cathode: 0V\n    heater: [H1, H2]\n")
	errs := strings.Join(errorsOf(src), "\n")
	if !strings.Contains(errs, fmt.Sprintf("rig.yaml:%d:", lineOf(src, "heater: [H1, H2]"))) || !strings.Contains(errs, "no heater") {
		t.Errorf("OA2 with a heater: %q", errs)
	}
	src = rig("", "    valve: OA2\n    plate: B2\n    cathode: 0V\n")
	if errs := strings.Join(errorsOf(src), "\n"); !strings.Contains(errs, "the OA2 has no plate") || !strings.Contains(errs, "anode") {
		t.Errorf("OA2 with a plate: %q", errs)
	}
	src = rig("  R1: {resistor: 6k8, between: [B1, B2]}\n  V2: {valve: 12AX7, A: {plate: B2, grid: 0V, cathode: K}, B: unused, heater: [H1, H2]}\n  R2: {resistor: 1k, between: [K, 0V]}\n",
		"    valve: OA2\n    anode: B2\n    cathode: 0V\n")
	if errs := errorsOf(src); len(errs) > 0 {
		t.Errorf("OA2 wired: %q", errs)
	}
}

// A directly heated triode's cathode is its filament: a filament end, the
// filament winding's centre tap, or a hum-balance pot's wiper (common
// practice); any other net is refused.
func TestDirectlyHeatedTriodeCathode(t *testing.T) {
	for _, c := range []struct {
		name, cathode, extra string
		ok                   bool
	}{
		{"centre tap", "HC", "", true},
		{"filament end", "H1", "", true},
		{"hum-balance wiper", "HB", "  RV1: {pot: 100R, ends: [H1, H2], wiper: HB}\n  R8: {resistor: 750R, between: [HB, 0V]}\n", true},
		{"other net", "K", "  R4: {resistor: 1k, between: [K, 0V]}\n", false},
	} {
		src := rig(dhtRs+c.extra, "    valve: 2A3\n    plate: P\n    grid: G\n    cathode: "+c.cathode+"\n    heater: [H1, H2]\n")
		src = strings.Replace(src, "volts: 6.3, rated: 3A", "volts: 2.5, rated: 3A", 1)
		errs := errorsOf(src)
		joined := strings.Join(errs, "\n")
		if c.ok && len(errs) > 0 {
			t.Errorf("%s: %v", c.name, errs)
		}
		if !c.ok && !strings.Contains(joined, "directly heated") {
			t.Errorf("%s: want a directly-heated error, got %q", c.name, joined)
		}
	}
}
