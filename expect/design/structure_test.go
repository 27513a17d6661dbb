package design

import (
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// TestNonScalarKey: a key that is a list or a mapping gets an error that
// says so, at the key, never `unknown field ""` (the fuzz input `{[]}`).
func TestNonScalarKey(t *testing.T) {
	cases := []struct {
		src       string
		line, col int
		field     string
		found     string
	}{
		{"{[]}", 1, 2, "file", "a list"},
		{"pinwalk: 1\n{a: b}: 2\n", 2, 1, "file", "a mapping"},
		{"pinwalk: 1\nparts:\n  R1: {resistor: 1k, [A, B]}\n", 3, 22, "R1", "a list"},
		{"pinwalk: 1\nmains: {volts: 230, ? [x]: 50}\n", 2, 23, "mains", "a list"},
	}
	for _, c := range cases {
		_, ps := Parse("k.yaml", []byte(c.src))
		errs := ps.Errors()
		if len(errs) != 1 {
			t.Errorf("%q: %d errors, want 1: %v", c.src, len(errs), errs)
			continue
		}
		e := errs[0]
		if e.Pos.Line != c.line || e.Pos.Col != c.col || e.Field != c.field ||
			!strings.Contains(e.Msg, "a key here is "+c.found) || strings.Contains(e.Msg, `unknown field ""`) {
			t.Errorf("%q: got %s\n  want %d:%d field %s saying the key is %s", c.src, e.Error(), c.line, c.col, c.field, c.found)
		}
	}
}

// TestSecondDocument: anything after a --- that starts a second YAML
// document is an error at that line; an opening --- and a closing ... are
// fine.
func TestSecondDocument(t *testing.T) {
	data, err := os.ReadFile(filepath.Join("..", "..", "testdata", "designs", "bench-12ax7.yaml"))
	if err != nil {
		t.Fatal(err)
	}
	base := string(data)
	lines := strings.Count(base, "\n")
	for _, c := range []struct {
		name, src string
		line      int // 0: no error
	}{
		{"opening marker", "---\n" + base, 0},
		{"closing marker", base + "...\n", 0},
		{"second design", base + "---\npinwalk: 1\ntitle: x\n", lines + 1},
		{"empty second document", base + "---\n", lines + 1},
		{"second document with a comment only", base + "---\n# more\n", lines + 1},
		{"second document not valid YAML", base + "---\n[: x\n", lines + 1},
		{"opening marker and a second document", "--- # design\n" + base + "--- \nR9: {}\n", lines + 2},
	} {
		_, ps := Parse("doc.yaml", []byte(c.src))
		errs := ps.Errors()
		if c.line == 0 {
			if len(errs) > 0 {
				t.Errorf("%s: unexpected errors %v", c.name, errs)
			}
			continue
		}
		if len(errs) != 1 || errs[0].Pos.Line != c.line || errs[0].Pos.Col != 1 || errs[0].Field != "file" ||
			!strings.Contains(errs[0].Msg, "a second YAML document") {
			t.Errorf("%s: got %v, want one error at %d:1 naming the second document", c.name, errs, c.line)
		}
	}
}

// TestPushPullDCR: one DCR figure for a push-pull primary is the whole
// primary (split equally, and a note says so); a list gives each half;
// dcr: {whole: …} and dcr: {halves: […]} say which explicitly (no note),
// and the part's description says which the figure was.
func TestPushPullDCR(t *testing.T) {
	data, err := os.ReadFile(filepath.Join("..", "..", "testdata", "bad", "ot-dcr-three-values.yaml"))
	if err != nil {
		t.Fatal(err)
	}
	for _, c := range []struct {
		dcr         string
		halves      [2]float64
		whole, said bool
		desc        string
	}{
		{"260R", [2]float64{130, 130}, true, false, "260 Ω plate to plate (one figure, taken as the whole primary; 130 Ω per half)"},
		{"[130R, 130R]", [2]float64{130, 130}, false, false, "130 Ω + 130 Ω per half"},
		{"[95R, 105R]", [2]float64{95, 105}, false, false, "95 Ω + 105 Ω per half"},
		{"{whole: 260R}", [2]float64{130, 130}, true, true, "260 Ω plate to plate (given as the whole primary; 130 Ω per half)"},
		{"{halves: [125R, 135R]}", [2]float64{125, 135}, false, true, "125 Ω + 135 Ω per half"},
	} {
		src := strings.Replace(string(data), "dcr: [95R, 105R, 100R]", "dcr: "+c.dcr, 1)
		d, ps := Parse("pp.yaml", []byte(src))
		if errs := ps.Errors(); len(errs) > 0 {
			t.Fatalf("dcr %s: %v", c.dcr, errs)
		}
		ot := d.ByRef["OT1"].OT
		if ot.DCR != c.halves || ot.DCRWhole != c.whole || ot.DCRSaid != c.said {
			t.Errorf("dcr %s: halves %v whole %v said %v, want %v whole %v said %v", c.dcr, ot.DCR, ot.DCRWhole, ot.DCRSaid, c.halves, c.whole, c.said)
		}
		noted := false
		for _, p := range ps {
			noted = noted || (p.Severity == Note && strings.Contains(p.Msg, "taken as the whole primary") && strings.Contains(p.Msg, "dcr: {whole: 260R}"))
		}
		if noted != (c.whole && !c.said) {
			t.Errorf("dcr %s: note that the figure is taken as the whole primary: %v, want %v", c.dcr, noted, c.whole && !c.said)
		}
		if desc := DescribePart(d.ByRef["OT1"]); !strings.Contains(desc, "primary DCR "+c.desc) {
			t.Errorf("dcr %s: part described as %q, want %q", c.dcr, desc, c.desc)
		}
	}
	// Bad explicit spellings, each an error at its field.
	for _, c := range []struct{ dcr, field, msg string }{
		{"{whole: 260R, halves: [125R, 135R]}", "OT1.output-transformer.primary.dcr", "both whole and halves"},
		{"{}", "OT1.output-transformer.primary.dcr", "expected whole or halves"},
		{"{halves: 260R}", "OT1.output-transformer.primary.dcr.halves", "one per half"},
		{"{halves: [125R, 0R]}", "OT1.output-transformer.primary.dcr.halves", "out of range"},
		{"{total: 260R}", "OT1.output-transformer.primary.dcr.total", ""},
	} {
		src := strings.Replace(string(data), "dcr: [95R, 105R, 100R]", "dcr: "+c.dcr, 1)
		_, ps := Parse("pp.yaml", []byte(src))
		found := false
		for _, p := range ps.Errors() {
			found = found || (p.Field == c.field && strings.Contains(p.Msg, c.msg) && p.Pos.Line == 20)
		}
		if !found {
			t.Errorf("dcr %s: want an error at line 20, %s, saying %q; got %v", c.dcr, c.field, c.msg, ps.Errors())
		}
	}
	// A single-ended primary takes {whole: …} and refuses halves.
	se := strings.Replace(string(data), "{ends: [PA, PB], centre: B1, dcr: [95R, 105R, 100R]", "{ends: [B1, PA], dcr: {whole: 250R}", 1)
	if d, ps := Parse("se.yaml", []byte(se)); d == nil || d.ByRef["OT1"].OT.DCR != [2]float64{250, 0} {
		t.Errorf("single-ended {whole: 250R}: %v", ps.Errors())
	}
	se = strings.Replace(se, "{whole: 250R}", "{halves: [125R, 125R]}", 1)
	if _, ps := Parse("se.yaml", []byte(se)); !strings.Contains(ps.Error(), "no centre") {
		t.Errorf("single-ended halves accepted: %v", ps.Errors())
	}
}
