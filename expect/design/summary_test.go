package design_test

import (
	"strings"
	"testing"

	"pinwalk"
	"pinwalk/expect/design"
)

// bench is a small design that loads cleanly: a 12AX7 stage on a bench HT
// supply. The finding tests change one line of it each.
const bench = `pinwalk: 1
title: finding test
mains: {volts: 230, hz: 50}
parts:
  T1:
    power-transformer:
      primary: {volts: 230, dcr: 40R}
      secondaries:
        HEATER: {volts: 6.3, rated: 2A, ends: [H1, H2], centre: 0V}
  U1: {dc-supply: 250V, dcr: 100R, between: [HT, 0V]}
  C1: {capacitor: 47u, volts: 450, kind: electrolytic, between: [HT, 0V]}
  V1:
    valve: 12AX7
    A: {plate: P1, grid: G1, cathode: K1}
    B: unused
    heater: [H1, H2]
  R1: {resistor: 1M, between: [G1, 0V]}
  R2: {resistor: 100k, between: [HT, P1]}
  R3: {resistor: 1k5, between: [K1, 0V]}
  C2: {capacitor: 22u, volts: 25, kind: electrolytic, between: [K1, 0V]}
`

// summarize parses src (allowing loader errors: the summary must work on
// whatever the loader returned) and summarizes it.
func summarize(t *testing.T, src string) (*design.Summary, design.Problems) {
	t.Helper()
	d, probs := design.Parse("t.yaml", []byte(src))
	if d == nil {
		t.Fatalf("did not parse: %v", probs)
	}
	return design.Summarize(d), probs
}

func kinds(s *design.Summary) []string {
	var out []string
	for _, f := range s.Findings {
		out = append(out, f.Kind)
	}
	return out
}

func TestSummaryCleanDesignHasNoFindings(t *testing.T) {
	s, probs := summarize(t, bench)
	if len(probs) != 0 {
		t.Fatalf("base design should load cleanly: %v", probs)
	}
	if len(s.Findings) != 0 {
		t.Errorf("findings on a clean design: %+v", s.Findings)
	}
	for _, tp := range design.Templates() {
		d, _ := design.Parse(tp.Name, tp.Text)
		if f := design.Summarize(d).Findings; len(f) != 0 {
			t.Errorf("template %s: findings %+v", tp.Name, f)
		}
	}
	for _, name := range []string{"se-6v6-stereo", "pp-el34-fixed", "bench-12ax7"} {
		data, err := pinwalk.Demos.ReadFile("testdata/designs/" + name + ".yaml")
		if err != nil {
			t.Fatal(err)
		}
		d, _ := design.Parse(name, data)
		if f := design.Summarize(d).Findings; len(f) != 0 {
			t.Errorf("demo %s: findings %+v", name, f)
		}
	}
}

func TestSummaryFindings(t *testing.T) {
	cases := []struct {
		name      string
		old, new  string
		kind      string
		sev       design.Severity
		msg       string // a fragment of the message
		loadsFine bool   // the loader reports no error (the finding is show's own)
	}{
		{"one connection", "  R2: {resistor: 100k, between: [HT, P1]}",
			"  R2: {resistor: 100k, between: [HT, P1]}\n  R9: {resistor: 1k, between: [P1, XX]}",
			design.FindOneConnection, design.Warning, "net XX has only one connection (R9 b)", false},
		{"grid through a capacitor only", "  R1: {resistor: 1M, between: [G1, 0V]}",
			"  R1: {resistor: 1M, between: [IN, 0V]}\n  C9: {capacitor: 10n, between: [IN, G1]}",
			design.FindGridNoDC, design.Error, "V1A grid net G1 has no DC path to ground", false},
		{"cathode bypass without resistor", "  R3: {resistor: 1k5, between: [K1, 0V]}",
			"  R3: {resistor: 1k5, between: [K1, KX]}\n  C9: {capacitor: 1u, kind: film, between: [KX, 0V]}",
			design.FindCathodeNoDC, design.Error, "V1A cathode net K1 has no DC path to ground", false},
		// 12AX7 on 6.3 V draws 300 mA (RCA 12AX7 data sheet, heater 6.3 V 0.3 A parallel (from memory)).
		{"heater winding overloaded", "rated: 2A", "rated: 200mA",
			design.FindHeaterOverload, design.Warning, "heater winding HEATER is rated 200 mA but V1 draw 300 mA", true},
		{"electrolytic without volts", "  C1: {capacitor: 47u, volts: 450, kind: electrolytic, between: [HT, 0V]}",
			"  C1: {capacitor: 47u, kind: electrolytic, between: [HT, 0V]}",
			design.FindElectrolyticNoVolts, design.Warning, "C1 is an electrolytic with no voltage rating", true},
		{"screen straight on B+", "  R1: {resistor: 1M, between: [G1, 0V]}",
			"  R1: {resistor: 1M, between: [G1, 0V]}\n  V2: {valve: EL84, plate: OP, screen: HT, grid: G2, cathode: K2, heater: [H1, H2]}\n" +
				"  R4: {resistor: 470k, between: [G2, 0V]}\n  R5: {resistor: 150R, watts: 3, between: [K2, 0V]}\n" +
				"  OT1: {output-transformer: {primary: {ends: [HT, OP], dcr: 200R, impedance: 5k}}}",
			design.FindScreenNoStopper, design.Note, "V2 screen is fed straight from B+ net HT (the plate supply) with no stopper", true},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			if !strings.Contains(bench, c.old) {
				t.Fatalf("base design has no %q", c.old)
			}
			s, probs := summarize(t, strings.Replace(bench, c.old, c.new, 1))
			if c.loadsFine && len(probs.Errors()) != 0 {
				t.Fatalf("expected the design to load: %v", probs)
			}
			if len(s.Findings) != 1 {
				t.Fatalf("findings %v, want exactly one %s", kinds(s), c.kind)
			}
			f := s.Findings[0]
			if f.Kind != c.kind || f.Severity != c.sev || !strings.Contains(f.Msg, c.msg) {
				t.Errorf("got %s %s %q, want %s %s containing %q", f.Kind, f.Severity, f.Msg, c.kind, c.sev, c.msg)
			}
			if f.Pos.Line < 5 {
				t.Errorf("finding at line %d: want the line of the part", f.Pos.Line)
			}
			var b strings.Builder
			if err := s.WriteText(&b); err != nil {
				t.Fatal(err)
			}
			if !strings.Contains(b.String(), c.msg) {
				t.Errorf("text summary lacks the finding %q", c.msg)
			}
		})
	}
}

func TestSummarySupplyChain(t *testing.T) {
	tp, err := design.TemplateByName("se-cathode")
	if err != nil {
		t.Fatal(err)
	}
	s, _ := summarize(t, string(tp.Text))
	if len(s.Supplies) != 1 || s.Supplies[0].Name != "HT" {
		t.Fatalf("supplies %+v, want one HT supply", s.Supplies)
	}
	st := s.Supplies[0].Stages
	type want struct {
		net, from, series, caps string
		depth                   int
	}
	wants := []want{{"B1", "", "", "C1", 0}, {"B2", "B1", "L1", "C2", 1}, {"B3", "B2", "R2", "C3", 2}}
	if len(st) != len(wants) {
		t.Fatalf("%d stages, want %d: %+v", len(st), len(wants), st)
	}
	for i, w := range wants {
		series := ""
		if st[i].Series != nil {
			series = st[i].Series.Ref
		}
		var caps []string
		for _, c := range st[i].Caps {
			caps = append(caps, c.Ref)
		}
		if st[i].Net != w.net || st[i].From != w.from || series != w.series || strings.Join(caps, ",") != w.caps || st[i].Depth != w.depth {
			t.Errorf("stage %d: got %s from %s via %s caps %v depth %d, want %+v", i, st[i].Net, st[i].From, series, caps, st[i].Depth, w)
		}
	}
	on := func(i int) string {
		var out []string
		for _, c := range st[i].On {
			out = append(out, c.Ref+" "+c.Terminal)
		}
		return strings.Join(out, ", ")
	}
	// B1 carries the bleeder; the choke is drawn as the next stage, not on B1.
	if got := on(0); got != "R1 a" {
		t.Errorf("on B1: %s, want R1 a", got)
	}
	// B2 feeds the output transformer and the screen stopper.
	if got := on(1); !strings.Contains(got, "R21 a") || !strings.Contains(got, "OT1 primary.1") || strings.Contains(got, "R2 a") {
		t.Errorf("on B2: %s, want R21 and OT1 primary.1 and not R2 (the next stage)", got)
	}
	if !strings.Contains(s.Supplies[0].Source, "230-0-230 V") || !strings.Contains(s.Supplies[0].Source, "full-wave centre tap") {
		t.Errorf("source line %q", s.Supplies[0].Source)
	}

	// Choke input: the rectifier net has no capacitor, the choke leads to B1.
	tp, _ = design.TemplateByName("supply-choke-input")
	s, _ = summarize(t, string(tp.Text))
	st = s.Supplies[0].Stages
	if len(st) != 2 || st[0].Net != "RECT" || len(st[0].Caps) != 0 || st[1].Net != "B1" || st[1].Series.Ref != "L1" {
		t.Errorf("choke-input stages %+v, want RECT (no caps) then L1 to B1", st)
	}
	var b strings.Builder
	s.WriteText(&b)
	if !strings.Contains(b.String(), "RECT   (no filter capacitor)") {
		t.Errorf("text lacks the choke-input note:\n%s", b.String())
	}
}

func TestSummaryValvePins(t *testing.T) {
	tp, _ := design.TemplateByName("se-cathode")
	s, _ := summarize(t, string(tp.Text))
	var v2 *design.ValveSummary
	for i := range s.Valves {
		if s.Valves[i].Ref == "V2" {
			v2 = &s.Valves[i]
		}
	}
	if v2 == nil {
		t.Fatal("no V2 in the summary")
	}
	// EL84 base: pin 2 grid, 3 cathode, 4 and 5 heater, 7 plate, 9 screen
	// (Mullard EL84 data sheet, base diagram (from memory)).
	want := map[int]string{2: "grid G2 C11,R20", 3: "cathode K2 R22,C20", 7: "plate OP OT1", 9: "screen S2 R21"}
	for _, p := range v2.Pins {
		w, ok := want[p.Pin]
		if !ok {
			continue
		}
		var refs []string
		for _, c := range p.Others {
			refs = append(refs, c.Ref)
		}
		if got := p.Electrode + " " + p.Net + " " + strings.Join(refs, ","); got != w {
			t.Errorf("pin %d: got %q, want %q", p.Pin, got, w)
		}
		delete(want, p.Pin)
	}
	if len(want) != 0 {
		t.Errorf("pins missing from the summary: %v", want)
	}
}

// A negative bias from its own diode is a bias supply in the summary: it
// starts at the diode's anode (the reservoir), not at the winding.
func TestSummaryDiodeBiasChain(t *testing.T) {
	tp, err := design.TemplateByName("pp-diode-bias")
	if err != nil {
		t.Fatal(err)
	}
	s, _ := summarize(t, string(tp.Text))
	if len(s.Supplies) != 2 || s.Supplies[0].Name != "HT" || s.Supplies[1].Name != "bias" {
		t.Fatalf("supplies %+v, want HT then bias", s.Supplies)
	}
	b := s.Supplies[1]
	if !strings.Contains(b.Source, "winding BIAS") || len(b.Stages) != 2 || b.Stages[0].Net != "NBR" || b.Stages[1].Net != "NB" {
		t.Errorf("bias supply %q, stages %+v: want the BIAS winding into NBR then NB", b.Source, b.Stages)
	}
}
