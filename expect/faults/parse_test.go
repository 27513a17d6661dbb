package faults

import (
	"errors"
	"math"
	"strings"
	"testing"

	"pinwalk/expect/amp"
)

func TestParseRoundTrip(t *testing.T) {
	for _, s := range []string{"R7:open", "C3:leaky", "V2:heater-open", "OT1.a:open", "D1:half-open"} {
		f, err := Parse(s)
		if err != nil {
			t.Fatalf("Parse(%q): %v", s, err)
		}
		if f.String() != s {
			t.Errorf("Parse(%q).String() = %q", s, f.String())
		}
	}
	if f, err := Parse(" R7 : OPEN "); err != nil || f != (Fault{"R7", Open}) {
		t.Errorf("Parse with spaces and case: %v %v", f, err)
	}
}

func TestParseErrors(t *testing.T) {
	cases := []struct{ in, want string }{
		{"R7", "expected REF:MODE"},
		{":open", "missing the part reference"},
		{"R7:opn", `did you mean "open"`},
		{"R7:melted", "heater-open"},
	}
	for _, c := range cases {
		_, err := Parse(c.in)
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("Parse(%q) error = %v, want it to contain %q", c.in, err, c.want)
		}
	}
}

func TestCheck(t *testing.T) {
	m := load(t, "se-6v6-stereo")
	err := Check(m, Fault{"R144", Open})
	if !errors.Is(err, ErrUnknownRef) || !strings.Contains(err.Error(), "did you mean") {
		t.Errorf("unknown ref: %v", err)
	}
	err = Check(m, Fault{"C1", High})
	if !errors.Is(err, ErrMode) || !strings.Contains(err.Error(), "short, leaky, open") {
		t.Errorf("inapplicable mode: %v", err)
	}
	if err := Check(m, Fault{"D1", HalfOpen}); err != nil {
		t.Errorf("centre-tap silicon rectifier half-open: %v", err)
	}
	// A single-ended output transformer has no halves.
	if err := Check(m, Fault{"OT1.a", Open}); !errors.Is(err, ErrUnknownRef) {
		t.Errorf("OT1.a on a single-ended OT: %v", err)
	}
	v := m.NominalValues()
	before := append([]float64(nil), v.Slot...)
	if err := Apply(m, v, Fault{"C1", High}); err == nil {
		t.Error("Apply of an inapplicable fault: no error")
	}
	for i := range before {
		if v.Slot[i] != before[i] {
			t.Fatalf("Apply changed slot %d on error", i)
		}
	}
	mb := load(t, "pp-el34-fixed")
	if err := Check(mb, Fault{"OT1.b", Open}); err != nil {
		t.Errorf("push-pull half: %v", err)
	}
}

func TestDescribe(t *testing.T) {
	m := load(t, "se-6v6-stereo")
	cases := map[Fault]string{
		{"R14", Open}:  "R14 (470 Ω) open circuit",
		{"C11", Leaky}: "C11 (100 nF film) leaky (about 5 MΩ across it)",
		{"V2", Weak}:   "V2 (6V6GT) weak",
		{"T1", Open}:   "T1 HT winding open",
	}
	for f, want := range cases {
		if got := Describe(f, m); !strings.HasPrefix(got, want) {
			t.Errorf("Describe(%s) = %q, want prefix %q", f, got, want)
		}
	}
}

// TestApplyValues checks the values each mode writes.
func TestApplyValues(t *testing.T) {
	m := load(t, "pp-el34-fixed")
	slot := func(ref, role string) int {
		for _, i := range m.SlotsOf(ref) {
			if m.Slots[i].Role == role {
				return i
			}
		}
		t.Fatalf("no slot %s %q", ref, role)
		return -1
	}
	v := m.NominalValues()
	must := func(f Fault) {
		if err := Apply(m, v, f); err != nil {
			t.Fatal(err)
		}
	}
	must(Fault{"R11", High})
	if got := v.Slot[slot("R11", "")]; got != 200e3 {
		t.Errorf("R11 high = %g, want 200k", got)
	}
	must(Fault{"C1", Leaky})
	if got := v.Slot[slot("C1", "leak")]; got != LeakyElectrolyticOhms {
		t.Errorf("C1 leaky = %g", got)
	}
	must(Fault{"C11", Leaky})
	if got := v.Slot[slot("C11", "leak")]; got != LeakyFilmOhms {
		t.Errorf("C11 leaky = %g", got)
	}
	must(Fault{"C2", Open})
	if math.Abs(v.StageC[1]-OpenCapFraction) > 1e-12 || !v.CapOpen["C2"] {
		t.Errorf("C2 open: StageC %v CapOpen %v", v.StageC, v.CapOpen)
	}
	must(Fault{"C21", Open})
	if got := OpenCapacitors(v); strings.Join(got, ",") != "C2,C21" {
		t.Errorf("OpenCapacitors = %v", got)
	}
	if c := v.Clone(); !c.CapOpen["C21"] {
		t.Error("Clone lost CapOpen")
	}
	must(Fault{"VR1", Open})
	if !math.IsInf(v.Slot[slot("VR1", "a-wiper")], 1) || !math.IsInf(v.Slot[slot("VR1", "wiper-b")], 1) {
		t.Error("VR1 open: wiper halves not open")
	}
	must(Fault{"V3", Weak})
	for i, s := range m.Sections {
		if s.Ref == "V3" && (v.Koren[i].KG1 != s.Type.Model.KG1*WeakFactor || v.Koren[i].KG2 != s.Type.Model.KG2*WeakFactor) {
			t.Errorf("V3 weak: %+v", v.Koren[i])
		}
	}
	must(Fault{"V9", Weak})
	must(Fault{"V9", HalfOpen})
	if v.RectScale != WeakRectScale || !v.HalfOpen {
		t.Errorf("V9: RectScale %g HalfOpen %v", v.RectScale, v.HalfOpen)
	}
	must(Fault{"U1", Dead})
	if v.Slot[slot("U1", "volts")] != 0 {
		t.Error("U1 dead: volts not 0")
	}
	must(Fault{"OT1.a", Open})
	if !math.IsInf(v.Slot[slot("OT1", "half-a")], 1) || math.IsInf(v.Slot[slot("OT1", "half-b")], 1) {
		t.Error("OT1.a open: wrong halves")
	}
	_ = amp.Conditions{}
}
