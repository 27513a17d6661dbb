package design

import (
	"strings"
	"testing"
)

// acdcSrc is a transformerless set; each case below changes one line.
const acdcSrc = `pinwalk: 1
title: AC/DC
mains: {volts: 120, hz: 60}
ground: 0V
parts:
  J1: {mains-inlet: two-pin, live: L, neutral: N}
  S1: {resistor: 0R1, between: [N, 0V], note: switch in the neutral}
  F1: {fuse: 0.5A, between: [L, L1]}
  R1: {resistor: 33R, between: [L1, HTA]}
  R9: {resistor: 560R, watts: 15, between: [L1, X1]}
  V3: {valve: 35W4, plates: [HTA], cathode: B1, heater: [X1, N]}
  C1: {capacitor: 50u, volts: 200, between: [B1, 0V]}
  R4: {resistor: 220k, between: [B1, 0V]}
`

// TestHotChassis: the predicate and its reason, on the forms the
// transformerless sets take (the chassis on the neutral directly, through
// a switch drawn as a resistor, through a capacitor), and on earthed
// transformer sets, which are not hot unless the chassis is the neutral
// itself.
func TestHotChassis(t *testing.T) {
	for _, tc := range []struct {
		name, from, to string
		hot            bool
		why            []string
	}{
		{"resistor to the neutral", "", "", true, []string{"no power transformer", "through a resistor", "no earth"}},
		{"chassis is the neutral", "neutral: N}\n  S1: {resistor: 0R1, between: [N, 0V], note: switch in the neutral}", "neutral: 0V}", true, []string{"is the mains neutral"}},
		{"capacitor to the neutral", "S1: {resistor: 0R1, between: [N, 0V], note: switch in the neutral}",
			"S1: {capacitor: 100n, volts: 400, kind: film, between: [N, 0V]}", true, []string{"through a capacitor", "no power transformer", "no earth"}},
	} {
		src := strings.Replace(acdcSrc, tc.from, tc.to, 1)
		if !strings.Contains(src, "S1:") {
			src = strings.Replace(src, "heater: [X1, N]", "heater: [X1, 0V]", 1)
		}
		d, probs := Parse("acdc.yaml", []byte(src))
		if d == nil || len(probs.Errors()) > 0 {
			t.Fatalf("%s: %v", tc.name, probs)
		}
		hot, why := d.HotChassis()
		if hot != tc.hot {
			t.Errorf("%s: hot %v, want %v (%s)", tc.name, hot, tc.hot, why)
		}
		for _, w := range tc.why {
			if !strings.Contains(why, w) {
				t.Errorf("%s: reason %q lacks %q", tc.name, why, w)
			}
		}
		if !d.TwoPin() {
			t.Errorf("%s: not two-pin", tc.name)
		}
	}
	// A transformer set with an earth and a capacitor from the neutral to
	// chassis (a hum filter) is not hot: the earth holds the chassis.
	tr := `pinwalk: 1
title: transformer set
mains: {volts: 230, hz: 50}
ground: 0V
parts:
  J1: {mains-inlet: iec, live: L, neutral: N, earth: 0V}
  C9: {capacitor: 10n, volts: 630, kind: film, between: [N, 0V]}
  T1:
    power-transformer:
      primary: {volts: 230, dcr: 12R, ends: [L, N]}
      secondaries:
        HT: {volts: 250-0-250, rated: 100mA, dcr: 180R, ends: [HTA, HTB], centre: 0V}
  D1: {rectifier: silicon, anodes: [HTA, HTB], cathode: B1}
  C1: {capacitor: 47u, volts: 450, between: [B1, 0V]}
  R1: {resistor: 100k, watts: 2, between: [B1, 0V]}
`
	d, probs := Parse("tr.yaml", []byte(tr))
	if d == nil || len(probs.Errors()) > 0 {
		t.Fatal(probs)
	}
	if hot, why := d.HotChassis(); hot || d.TwoPin() {
		t.Errorf("earthed transformer set: hot %v (%s), two-pin %v", hot, why, d.TwoPin())
	}
	d, _ = Parse("tr.yaml", []byte(strings.Replace(tr, "neutral: N, earth: 0V}", "neutral: N}", 1)))
	if hot, why := d.HotChassis(); !hot || !strings.Contains(why, "through a capacitor") {
		t.Errorf("two-pin transformer set with the chassis on the neutral through a capacitor: hot %v (%s)", hot, why)
	}
}

// TestSeriesStringProblems: a series string the mains cannot run at its
// rated current, a heater of another current in it, and a heater chain
// that reaches no neutral are reported at the heater's line and column.
func TestSeriesStringProblems(t *testing.T) {
	for _, tc := range []struct {
		name, from, to, want string
		sev                  Severity
	}{
		{"dropper too small", "R9: {resistor: 560R", "R9: {resistor: 56R", "the series string draws", Warning},
		{"another current", "valve: 35W4, plates: [HTA], cathode: B1, heater: [X1, N]}",
			"valve: 35W4, plates: [HTA], cathode: B1, heater: [X1, X2]}\n  V4: {valve: 12AU7, A: {plate: B1, grid: 0V, cathode: K4}, B: unused, heater: [X2, N]}\n  R44: {resistor: 1k, between: [K4, 0V]}",
			"must have the same rated current", Warning},
		{"no return", "heater: [X1, N]}", "heater: [X1, X2]}\n  R5: {resistor: 1k, between: [X2, B1]}", "no heater ends on the mains neutral", Error},
	} {
		src := strings.Replace(acdcSrc, tc.from, tc.to, 1)
		if src == acdcSrc {
			t.Fatalf("%s: no change", tc.name)
		}
		_, probs := Parse("acdc.yaml", []byte(src))
		found := false
		for _, p := range probs {
			if strings.Contains(p.Msg, tc.want) || strings.Contains(p.Hint, tc.want) {
				found = true
				if p.Severity != tc.sev || p.Pos.Line == 0 || !strings.HasSuffix(p.Field, ".heater") {
					t.Errorf("%s: %v, want a %s on a heater field with its line", tc.name, p, tc.sev)
				}
			}
		}
		if !found {
			t.Errorf("%s: no problem %q in %v", tc.name, tc.want, probs)
		}
	}
}
