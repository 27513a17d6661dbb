package design

import (
	"strings"
	"testing"
)

// srppText is the preamp-srpp template, the stacked stage the checks below
// edit.
func srppText(t *testing.T) string {
	t.Helper()
	tp, err := TemplateByName("preamp-srpp")
	if err != nil {
		t.Fatal(err)
	}
	return string(tp.Text)
}

// TestDCPathsThroughValves: nets whose DC level only a valve sets (an
// SRPP's lower plate and upper cathode, a cascode's middle node) are
// accepted, while an electrode whose only path is through its own section
// (a missing cathode resistor, a missing plate load) or through nothing (a
// grid on a capacitor) is still refused, naming the electrode.
func TestDCPathsThroughValves(t *testing.T) {
	base := srppText(t)
	cascode := strings.Replace(base, `    A: {plate: PL, grid: G1, cathode: K1}
    B: {plate: B2, grid: PL, cathode: K2}`, `    A: {plate: PL, grid: G1, cathode: K1}
    B: {plate: PC, grid: GC, cathode: PL}`, 1)
	cascode = strings.Replace(cascode, `  R12: {resistor: 680R?, between: [K2, PL], note: upper cathode resistor}
  C12: {capacitor: 1u?, volts: 400?, kind: film, between: [K2, OUT], note: output coupling}`,
		`  R12: {resistor: 47k, between: [B2, PC], note: plate load}
  R14: {resistor: 470k, between: [B2, GC]}
  R15: {resistor: 470k, between: [GC, 0V]}
  C14: {capacitor: 1u, volts: 400, kind: film, between: [GC, 0V]}
  C12: {capacitor: 1u?, volts: 400?, kind: film, between: [PC, OUT], note: output coupling}`, 1)
	if cascode == base {
		t.Fatal("cascode edit did not apply")
	}
	cases := []struct {
		name, src string
		want      []string // fields of the errors expected, none for a clean design
	}{
		{"SRPP and DC-coupled cathode follower", base, nil},
		{"cascode", cascode, nil},
		{"SRPP lower cathode resistor missing",
			strings.Replace(base, "  R11: {resistor: 680R?, between: [K1, 0V], note: lower cathode resistor (unbypassed)}\n", "  C19: {capacitor: 1u, volts: 25, kind: film, between: [K1, 0V]}\n", 1),
			[]string{"V1.A.cathode", "V1.B.grid", "V1.B.cathode"}}, // the whole stack hangs on it
		{"SRPP upper cathode resistor missing",
			strings.Replace(base, "between: [K2, PL], note: upper cathode resistor}", "between: [K9, PL], note: upper cathode resistor}\n  R19: {resistor: 1M, between: [K9, 0V]}", 1),
			[]string{"V1.B.cathode"}},
		{"cascode upper grid on a capacitor only",
			strings.Replace(strings.Replace(cascode, "  R14: {resistor: 470k, between: [B2, GC]}\n", "", 1), "  R15: {resistor: 470k, between: [GC, 0V]}\n", "", 1),
			[]string{"V1.B.grid"}},
	}
	for _, c := range cases {
		_, ps := Parse(c.name+".yaml", []byte(c.src))
		var got []string
		for _, p := range ps.Errors() {
			got = append(got, p.Field)
		}
		if strings.Join(got, " ") != strings.Join(c.want, " ") {
			t.Errorf("%s: errors %v, want fields %v", c.name, ps.Errors(), c.want)
		}
	}
}
