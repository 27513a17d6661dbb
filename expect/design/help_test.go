package design_test

import (
	"strings"
	"testing"

	"pinwalk/expect/design"
)

// se is a small single-ended amp that loads cleanly; each help test
// changes one thing in it.
const se = `pinwalk: 1
title: help test
mains: {volts: 230, hz: 50}
parts:
  T1:
    power-transformer:
      primary: {volts: 230, dcr: 12R}
      secondaries:
        HT: {volts: 230-0-230, rated: 100mA, dcr: 180R, ends: [HTA, HTB], centre: 0V}
        HEATER: {volts: 6.3, rated: 2A, ends: [H1, H2], centre: 0V}
  D1: {rectifier: silicon, anodes: [HTA, HTB], cathode: B1}
  C1: {capacitor: 47u, volts: 450, kind: electrolytic, between: [B1, 0V]}
  R1: {resistor: 1k, watts: 5, between: [B1, B2]}
  C2: {capacitor: 47u, volts: 450, kind: electrolytic, between: [B2, 0V]}
  V1:
    valve: 12AX7
    A: {plate: P1, grid: G1, cathode: K1}
    B: unused
    heater: [H1, H2]
  R10: {resistor: 1M, between: [G1, 0V]}
  R11: {resistor: 100k, between: [B2, P1]}
  R12: {resistor: 1k5, between: [K1, 0V]}
  C11: {capacitor: 22n, kind: film, between: [P1, G2]}
  V2:
    valve: EL84
    plate: OP
    screen: S2
    grid: G2
    cathode: K2
    heater: [H1, H2]
  R20: {resistor: 470k, between: [G2, 0V]}
  R21: {resistor: 1k, watts: 1, between: [B2, S2]}
  R22: {resistor: 330R, watts: 3, between: [K2, 0V]}
  OT1:
    output-transformer:
      primary: {ends: [B1, OP], dcr: 250R, impedance: 5k}
      secondary: {load: 8R}
`

func TestHelpBaseLoads(t *testing.T) {
	if _, probs := design.Parse("se.yaml", []byte(se)); len(probs) != 0 {
		t.Fatalf("base design should load cleanly: %v", probs)
	}
}

// TestHelpfulErrors checks the did-you-mean suggestions and one-line hints.
func TestHelpfulErrors(t *testing.T) {
	cases := []struct {
		name     string
		old, new string
		field    string // the problem's field
		msg      string // fragment of its message
		hint     string // fragment of its hint ("" = none needed)
	}{
		{"misspelled valve type", "valve: 12AX7", "valve: 12AX8", "V1.valve", `did you mean "12AX7"`, ""},
		{"misspelled net", "between: [B2, P1]}", "between: [B2, PL]}", "R11.b", `net PL has only one connection (R11 b): did you mean "P1"`, ""},
		{"misspelled field", "{resistor: 1k, watts: 5,", "{resistor: 1k, wats: 5,", "R1.wats", `unknown field "wats": did you mean "watts"?`, ""},
		{"misspelled part kind", "R12: {resistor: 1k5,", "R12: {resister: 1k5,", "R12", `"resister": did you mean "resistor"?`, ""},
		{"misspelled electrode in a section", "A: {plate: P1, grid: G1,", "A: {plate: P1, gird: G1,", "V1.A.gird", `did you mean "grid"?`, ""},
		{"misspelled electrode, single section", "    screen: S2", "    scren: S2", "V2.scren", `did you mean "screen"?`, ""},
		{"between for ends", "primary: {ends: [B1, OP]", "primary: {between: [B1, OP]", "OT1.output-transformer.primary.between", `did you mean "ends"?`, ""},
		{"impedance for load", "secondary: {load: 8R}", "secondary: {impedance: 8R}", "OT1.output-transformer.secondary.impedance", `did you mean "load"?`, ""},
		{"winding outside secondaries", "      secondaries:\n        HT:", "      HT2: {volts: 6.3, rated: 1A, ends: [X1, X2]}\n      secondaries:\n        HT:",
			"T1.power-transformer.HT2", `unknown field "HT2"`, "windings go under secondaries:"},
		{"comma in an unquoted note", "R22: {resistor: 330R, watts: 3,", "R22: {resistor: 330R, note: bias, output valve, watts: 3,",
			"R22.output valve", "unknown field", "a comma inside {...} starts a new field"},
		{"missing OT field points at the template", ", impedance: 5k}", "}", "OT1.output-transformer.primary.impedance", "missing impedance",
			"the se-cathode template shows a complete output-transformer"},
		{"missing choke dcr points at the template", "  R1: {resistor: 1k, watts: 5, between: [B1, B2]}", "  L1: {choke: 5H, between: [B1, B2]}",
			"L1.dcr", "missing dcr", "the supply-ct-clc template shows a complete choke"},
		{"centre tap not grounded", "centre: 0V}\n        HEATER: {volts: 6.3, rated: 2A, ends: [H1, H2], centre: 0V}",
			"centre: CT}\n        HEATER: {volts: 6.3, rated: 2A, ends: [H1, H2], centre: 0V}\n  R99: {resistor: 1k, between: [CT, 0V]}",
			"T1.power-transformer.secondaries.HT.centre", "no return path", "centre tap not grounded"},
		{"grid left floating", "  R20: {resistor: 470k, between: [G2, 0V]}", "  R20: {resistor: 470k, between: [G2, X]}\n  C20: {capacitor: 1n, between: [X, 0V]}",
			"V2.grid", "no DC path to ground", "grid left floating"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			if !strings.Contains(se, c.old) {
				t.Fatalf("base design has no %q", c.old)
			}
			_, probs := design.Parse("se.yaml", []byte(strings.Replace(se, c.old, c.new, 1)))
			for _, p := range probs {
				if p.Field == c.field && strings.Contains(p.Msg, c.msg) && strings.Contains(p.Hint, c.hint) {
					return
				}
			}
			t.Errorf("no problem on %s with message %q and hint %q; got:\n%v", c.field, c.msg, c.hint, probs)
		})
	}
}

// TestHelpOutputTransformerHalfMissing: a push-pull primary with one end
// on a net nothing else uses gets the "half missing" hint and a pointer to
// the push-pull template is not needed.
func TestHelpOutputTransformerHalfMissing(t *testing.T) {
	tp, err := design.TemplateByName("pp-cathode")
	if err != nil {
		t.Fatal(err)
	}
	src := strings.Replace(string(tp.Text), "primary: {ends: [PA, PB]", "primary: {ends: [PA, PX]", 1)
	_, probs := design.Parse("pp.yaml", []byte(src))
	found := false
	for _, p := range probs {
		if p.Field == "OT1.primary.2" && strings.Contains(p.Hint, "is an output transformer half missing?") {
			found = true
		}
	}
	if !found {
		t.Errorf("no half-missing hint; got:\n%v", probs)
	}
}

// TestFlowPlaceholders: a trailing ? inside {...} or [...] is a placeholder
// (YAML alone rejects it there), reported at its field (the key of a
// part's own field, the value of a nested one); quoted text and comments
// keep their question marks.
func TestFlowPlaceholders(t *testing.T) {
	src := strings.Replace(se, "  R12: {resistor: 1k5, between: [K1, 0V]}",
		"  R12: {resistor: 1k5?, between: [K1, 0V], note: 'why?, see notes'}  # really?, yes", 1)
	src = strings.Replace(src, "dcr: 12R}", "dcr: 12R? }", 1)
	src = strings.Replace(src, "R21: {resistor: 1k, watts: 1, between: [B2, S2]}", "R21:\n    resistor: 1k?\n    between: [B2, S2]", 1)
	d, probs := design.Parse("se.yaml", []byte(src))
	if len(probs.Errors()) != 0 {
		t.Fatalf("errors: %v", probs)
	}
	r12 := d.ByRef["R12"]
	if r12.Value != 1500 || r12.Note != "why?, see notes" {
		t.Errorf("R12 value %g note %q, want 1500 and the quoted note as written", r12.Value, r12.Note)
	}
	want := map[string]design.Pos{
		"R12.resistor":                     {Line: 22, Col: 9},
		"T1.power-transformer.primary.dcr": {Line: 7, Col: 34},
		"R21.resistor":                     {Line: 33, Col: 5},
	}
	for _, p := range probs {
		if p.Severity != design.Note {
			t.Errorf("unexpected %v", p)
			continue
		}
		w, ok := want[p.Field]
		if !ok {
			t.Errorf("unexpected placeholder note %v", p)
			continue
		}
		if p.Pos != w {
			t.Errorf("%s: note at %d:%d, want %d:%d (the value)", p.Field, p.Pos.Line, p.Pos.Col, w.Line, w.Col)
		}
		delete(want, p.Field)
	}
	if len(want) != 0 {
		t.Errorf("placeholders not reported: %v", want)
	}
}
