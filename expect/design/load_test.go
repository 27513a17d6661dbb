package design

import (
	"math"
	"path/filepath"
	"strings"
	"testing"
)

// The demo designs load clean. Part and net counts are counted by hand
// from the files (references under parts:, distinct net names).
func TestDemosLoad(t *testing.T) {
	cases := []struct {
		file         string
		parts, nets  int
		valves       int
		someNets     []string
		groundIsUsed bool
	}{
		{"bench-12ax7.yaml", 8, 7, 1, []string{"HT", "P1", "G1", "K1", "H1", "H2"}, true},
		{"se-6v6-stereo.yaml", 35, 26, 3, []string{"B1", "B4", "OPL", "OPR", "KR2", "L1"}, true},
		{"pp-el34-fixed.yaml", 45, 37, 5, []string{"PIK", "TAIL", "NB", "WA", "WB", "RF"}, true},
	}
	for _, c := range cases {
		t.Run(c.file, func(t *testing.T) {
			d, ps := loadNoPanic(t, filepath.Join("..", "..", "testdata", "designs", c.file))
			if errs := ps.Errors(); len(errs) > 0 {
				t.Fatalf("errors:\n%v", errs)
			}
			for _, p := range ps {
				if p.Severity == Warning {
					t.Errorf("warning in a demo: %s", p.Error())
				}
			}
			if len(d.Parts) != c.parts || len(d.ByRef) != c.parts {
				t.Errorf("%d parts (%d by ref), want %d", len(d.Parts), len(d.ByRef), c.parts)
			}
			if len(d.Nets) != c.nets {
				t.Errorf("%d nets, want %d: %v", len(d.Nets), c.nets, d.NetNames())
			}
			if len(d.Valves()) != c.valves {
				t.Errorf("%d valves, want %d", len(d.Valves()), c.valves)
			}
			for _, n := range c.someNets {
				if len(d.Nets[n]) < 2 {
					t.Errorf("net %s has %d connections", n, len(d.Nets[n]))
				}
			}
			if d.Ground != "0V" || len(d.Nets["0V"]) == 0 {
				t.Errorf("ground %q with %d connections", d.Ground, len(d.Nets[d.Ground]))
			}
			if d.Version != SchemaVersion || len(d.Hash) != 64 {
				t.Errorf("version %d, hash %q", d.Version, d.Hash)
			}
			if d.Mains.Volts != 230 || d.Mains.Hz != 50 || d.Mains.Tol != (Tolerance{-0.06, 0.06}) {
				t.Errorf("mains %+v", d.Mains)
			}
		})
	}
}

// nested is a small valid design whose positions are known by column
// counting; tests below change one thing in it.
const nested = `pinwalk: 1
title: positions
mains: {volts: 230, hz: 50, tolerance: 6%}
parts:
  T1:
    power-transformer:
      primary: {volts: 230, dcr: 40R}
      secondaries:
        HEATER: {volts: 6.3, rated: 1A, dcr: 0R2, ends: [H1, H2], centre: 0V}
  U1: {dc-supply: 250V, dcr: 100R, between: [HT, 0V]}
  V1:
    valve: 12AX7
    A: {plate: P1, grid: G1, cathode: K1}
    B: unused
    heater: [H1, H2]
  R1: {resistor: 1M, between: [G1, 0V]}
  R2: {resistor: 100k, watts: 0.5, between: [HT, P1]}
  R3:
    resistor: 1k5
    between:
      - K1
      - 0V
`

func mustParse(t *testing.T, src string) *Design {
	t.Helper()
	d, ps := Parse("nested.yaml", []byte(src))
	if errs := ps.Errors(); len(errs) > 0 {
		t.Fatalf("errors:\n%v", errs)
	}
	return d
}

func TestPositionsOfNestedFields(t *testing.T) {
	d := mustParse(t, nested)
	r2 := d.ByRef["R2"]
	if r2.Pos != (Pos{17, 3}) {
		t.Errorf("R2 at %v, want 17:3", r2.Pos)
	}
	if got := r2.FieldPos("watts"); got != (Pos{17, 24}) {
		t.Errorf("R2.watts at %v, want 17:24", got)
	}
	if got := r2.FieldPos("absent"); got != r2.Pos {
		t.Errorf("absent field at %v, want the part's %v", got, r2.Pos)
	}
	// Terminals of a flow list sit at each net name.
	wantTerm := map[string]Pos{"a": {17, 46}, "b": {17, 50}}
	for _, tm := range r2.Terminals {
		if tm.Pos != wantTerm[tm.Name] {
			t.Errorf("R2 %s at %v, want %v", tm.Name, tm.Pos, wantTerm[tm.Name])
		}
	}
	// ...and of a block list at each item.
	r3 := d.ByRef["R3"]
	wantTerm = map[string]Pos{"a": {21, 9}, "b": {22, 9}}
	for _, tm := range r3.Terminals {
		if tm.Pos != wantTerm[tm.Name] {
			t.Errorf("R3 %s at %v, want %v", tm.Name, tm.Pos, wantTerm[tm.Name])
		}
	}
	// A winding's end three levels down.
	t1 := d.ByRef["T1"]
	w := t1.PT.Winding("HEATER")
	if w == nil || w.Pos != (Pos{9, 9}) {
		t.Fatalf("HEATER winding at %+v, want 9:9", w)
	}
	for _, tm := range t1.Terminals {
		if tm.Name == "HEATER.2" && tm.Pos != (Pos{9, 62}) {
			t.Errorf("HEATER.2 at %v, want 9:62", tm.Pos)
		}
	}
	// A valve pin is placed at its electrode inside the section mapping
	// (12AX7 section A grid is pin 7, from memory of the noval pinout).
	for _, tm := range d.ByRef["V1"].Terminals {
		if tm.Net == "G1" && tm.Pos != (Pos{13, 26}) {
			t.Errorf("V1 %s on G1 at %v, want 13:26", tm.Name, tm.Pos)
		}
	}
	// Net uses carry the same positions.
	for _, u := range d.Nets["P1"] {
		if u.Ref == "R2" && u.Pos != (Pos{17, 50}) {
			t.Errorf("net P1 use by R2 at %v", u.Pos)
		}
	}
}

// A problem deep in a part names the dotted field path and the value's place.
func TestNestedProblemPosition(t *testing.T) {
	src := strings.Replace(nested, "primary: {volts: 230, dcr: 40R}", "primary: {volts: 230, dcr: 40uF}", 1)
	_, ps := Parse("nested.yaml", []byte(src))
	errs := ps.Errors()
	if len(errs) != 1 {
		t.Fatalf("got %d errors: %v", len(errs), ps)
	}
	e := errs[0]
	if e.Pos != (Pos{7, 34}) || e.Field != "T1.power-transformer.primary.dcr" || !strings.Contains(e.Msg, "expected a resistance") {
		t.Errorf("got %s", e.Error())
	}
}

// Independent mistakes in different places are all reported, sorted by
// line, not only the first.
func TestAllErrorsCollected(t *testing.T) {
	src := nested
	for _, r := range [][2]string{
		{"hz: 50,", "hz: 400,"},
		{"valve: 12AX7", "valve: 12AX77"},
		{"watts: 0.5,", "wattage: 0.5,"},
		{"resistor: 1k5", "resistor: 1k5F"},
		{"dcr: 100R,", "dcr: -100R,"},
	} {
		if !strings.Contains(src, r[0]) {
			t.Fatalf("%q not in the design", r[0])
		}
		src = strings.Replace(src, r[0], r[1], 1)
	}
	_, ps := Parse("nested.yaml", []byte(src))
	errs := ps.Errors()
	want := []struct {
		line  int
		field string
	}{
		{3, "mains.hz"},
		{10, "U1.dcr"},
		{12, "V1.valve"},
		{17, "R2.wattage"},
		{19, "R3.resistor"},
	}
	if len(errs) != len(want) {
		t.Fatalf("got %d errors, want %d:\n%v", len(errs), len(want), errs)
	}
	for i, w := range want {
		if errs[i].Pos.Line != w.line || errs[i].Field != w.field {
			t.Errorf("error %d: %s; want line %d field %s", i, errs[i].Error(), w.line, w.field)
		}
	}
}

func TestProblemErrorFormat(t *testing.T) {
	p := Problem{File: "amp.yaml", Pos: Pos{12, 5}, Field: "parts.C3.capacitor", Severity: Error, Msg: "4K7 is a resistance"}
	if got, want := p.Error(), "amp.yaml:12:5: error: parts.C3.capacitor: 4K7 is a resistance"; got != want {
		t.Errorf("got  %q\nwant %q", got, want)
	}
	p.Severity, p.Hint = Warning, "check the schematic"
	if got, want := p.Error(), "amp.yaml:12:5: warning: parts.C3.capacitor: 4K7 is a resistance (hint: check the schematic)"; got != want {
		t.Errorf("got  %q\nwant %q", got, want)
	}
	p.Severity = Note
	if !strings.Contains(p.Error(), ": note: ") {
		t.Errorf("note: %q", p.Error())
	}
	ps := Problems{p, {File: "b.yaml", Pos: Pos{1, 1}, Field: "file", Msg: "x"}}
	if got := ps.Error(); got != p.Error()+"\nb.yaml:1:1: error: file: x" {
		t.Errorf("Problems.Error() = %q", got)
	}
	if n := len(ps.Errors()); n != 1 {
		t.Errorf("Errors() kept %d, want 1", n)
	}
}

func TestProblemsSort(t *testing.T) {
	ps := Problems{{Pos: Pos{3, 9}, Msg: "c"}, {Pos: Pos{1, 4}, Msg: "a"}, {Pos: Pos{3, 2}, Msg: "b"}, {Pos: Pos{1, 4}, Msg: "a2"}}
	ps.Sort()
	var got []string
	for _, p := range ps {
		got = append(got, p.Msg)
	}
	if strings.Join(got, ",") != "a,a2,b,c" {
		t.Errorf("sorted %v", got)
	}
}

// Values come out in SI units with the design's default tolerances.
func TestValuesAndDefaults(t *testing.T) {
	d := mustParse(t, nested)
	near := func(a, b float64) bool { return math.Abs(a-b) <= 1e-9*math.Abs(b) }
	if r := d.ByRef["R2"]; !near(r.Value, 100e3) || !near(r.Watts, 0.5) || r.Tol != (Tolerance{-0.05, 0.05}) {
		t.Errorf("R2 %v Ω %v W tol %+v", r.Value, r.Watts, r.Tol)
	}
	if u := d.ByRef["U1"]; !near(u.Value, 250) || !near(u.DCR, 100) {
		t.Errorf("U1 %v V, %v Ω", u.Value, u.DCR)
	}
	v := d.ByRef["V1"].Valve
	if !v.Unused["B"] || v.Sections["B"]["grid"] != d.Ground || v.HeaterNets != [2]string{"H1", "H2"} {
		t.Errorf("V1 %+v", v)
	}
	// On a 6.3 V winding a 12AX7's heater halves are taken in parallel:
	// 6.3 V at 0.3 A (12AX7 data, from memory).
	if !near(v.HeaterVolts, 6.3) || !near(v.HeaterAmps, 0.3) {
		t.Errorf("V1 heater %v V %v A", v.HeaterVolts, v.HeaterAmps)
	}
}

func TestSuggest(t *testing.T) {
	if s := Suggest("wats", []string{"watts", "between", "note"}); len(s) == 0 || s[0] != "watts" {
		t.Errorf("wats → %v", s)
	}
	if s := Suggest("zzzzzz", []string{"watts", "between"}); s != nil && len(s) != 0 {
		t.Errorf("zzzzzz → %v", s)
	}
	if s := Suggest("Power_Transformer", []string{"power-transformer"}); len(s) != 1 {
		t.Errorf("case and punctuation → %v", s)
	}
}
