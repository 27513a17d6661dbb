package design

import (
	"math"
	"strings"
	"testing"
)

func ultralinearText(t *testing.T) string {
	t.Helper()
	tp, err := TemplateByName("pp-ultralinear")
	if err != nil {
		t.Fatal(err)
	}
	return string(tp.Text)
}

// otLine is the template's output transformer, the lines the cases edit.
const otLine = `      primary: {ends: [PB, PA], centre: B1, dcr: {halves: [125R?, 135R?]}, impedance: 8k?}
      taps: {ul: [UB, UA], percent: 40?}
      secondary: {load: 8R?, dcr: 0R4?, hot: SPK}`

// TestOutputTransformerWindings: the template's screen taps and speaker
// net load as written (each tap on its own half, the cold end on chassis
// by default), the windings split at the taps by the turns share (at DC
// a tap is that point of its half's DCR: 40 % of 125 Ω is 50 Ω), and bad
// taps and secondaries are refused at their field.
func TestOutputTransformerWindings(t *testing.T) {
	base := ultralinearText(t)
	if !strings.Contains(base, otLine) {
		t.Fatal("template's output transformer lines changed: update otLine")
	}
	d, ps := Parse("ul.yaml", []byte(base))
	if len(ps.Errors()) > 0 {
		t.Fatalf("template: %v", ps.Errors())
	}
	ot := d.ByRef["OT1"].OT
	if ot.Taps != [2]string{"UB", "UA"} || math.Abs(ot.TapFrac-0.4) > 1e-12 || ot.SecHot != "SPK" || ot.SecCold != "0V" {
		t.Fatalf("taps %v at %g, secondary %q–%q", ot.Taps, ot.TapFrac, ot.SecHot, ot.SecCold)
	}
	want := []WindingSegment{
		{"B1", "UB", 50, "half-a"}, {"UB", "PB", 75, "half-a.outer"},
		{"B1", "UA", 54, "half-b"}, {"UA", "PA", 81, "half-b.outer"},
		{"SPK", "0V", 0.4, "secondary"},
	}
	got := ot.Segments()
	if len(got) != len(want) {
		t.Fatalf("segments %v, want %v", got, want)
	}
	for i := range want {
		g, w := got[i], want[i]
		if g.A != w.A || g.B != w.B || g.Role != w.Role || math.Abs(g.Ohms-w.Ohms) > 1e-9 {
			t.Errorf("segment %d: %+v, want %+v", i, g, w)
		}
	}
	// The secondary is its own DC group, apart from the primary.
	if j := otJoins(ot); len(j) != 2 || len(j[0]) != 5 || len(j[1]) != 2 {
		t.Errorf("DC groups %v: want the primary with its taps, and the secondary", j)
	}
	// The speaker net needs nothing else wired to it.
	noFB := strings.Replace(base, "  R14: {resistor: 4k7?, between: [SPK, KF], note: global feedback from the speaker}\n", "", 1)
	if _, ps := Parse("nofb.yaml", []byte(noFB)); noFB == base || len(ps.Errors()) > 0 || strings.Contains(ps.Error(), "SPK") {
		t.Errorf("speaker net without feedback: %v", ps)
	}

	edit := func(to string) string { return strings.Replace(base, otLine, to, 1) }
	cases := []struct {
		name, src, field, msg string
	}{
		{"single-ended taps", edit(`      primary: {ends: [B1, PA], dcr: 250R, impedance: 8k}
      taps: {ul: [UB, UA], percent: 40}
      secondary: {load: 8R, hot: SPK}`),
			"OT1.output-transformer.taps", "single-ended"},
		{"tap on a plate", edit(strings.Replace(otLine, "ul: [UB, UA]", "ul: [PB, UA]", 1)), "OT1.output-transformer.taps.ul", "also a primary end"},
		{"one tap", edit(strings.Replace(otLine, "ul: [UB, UA]", "ul: [UB]", 1)), "OT1.output-transformer.taps.ul", ""},
		{"percent 100", edit(strings.Replace(otLine, "percent: 40?", "percent: 100", 1)), "OT1.output-transformer.taps.percent", "between 0 % and 100 %"},
		{"no percent", edit(strings.Replace(otLine, ", percent: 40?", "", 1)), "OT1.output-transformer.taps.percent", "missing percent"},
		{"cold without hot", edit(strings.Replace(otLine, "hot: SPK", "cold: SPK", 1)), "OT1.output-transformer.secondary.hot", "missing hot"},
		{"shorted secondary", edit(strings.Replace(otLine, "hot: SPK", "hot: SPK, cold: SPK", 1)), "OT1.output-transformer.secondary", "shorted"},
		{"unknown tap field", edit(strings.Replace(otLine, "percent: 40?", "percent: 40, ratio: 2", 1)), "OT1.output-transformer.taps.ratio", ""},
	}
	for _, c := range cases {
		_, ps := Parse(c.name+".yaml", []byte(c.src))
		found := false
		for _, p := range ps.Errors() {
			if p.Field == c.field && strings.Contains(p.Msg, c.msg) {
				found = true
				if p.Pos.Line == 0 {
					t.Errorf("%s: error without a line: %v", c.name, p)
				}
			}
		}
		if !found {
			t.Errorf("%s: no error at %s containing %q; got %v", c.name, c.field, c.msg, ps.Errors())
		}
	}
}

// TestShowOutputTransformer: `show` lists each output transformer with
// its primary DCR and which way the file gave it, and its windings' nets.
func TestShowOutputTransformer(t *testing.T) {
	base := ultralinearText(t)
	for _, c := range []struct{ dcr, want string }{
		{"{halves: [125R?, 135R?]}", "primary DCR 125 Ω + 135 Ω per half (given per half; 260 Ω plate to plate)"},
		{"[125R, 135R]", "primary DCR 125 Ω + 135 Ω per half (a list, taken per half; 260 Ω plate to plate)"},
		{"260R", "primary DCR 260 Ω plate to plate (one figure, taken as the whole primary; 130 Ω per half)"},
		{"{whole: 260R}", "primary DCR 260 Ω plate to plate (given as the whole primary; 130 Ω per half)"},
	} {
		src := strings.Replace(base, "dcr: {halves: [125R?, 135R?]}", "dcr: "+c.dcr, 1)
		d, ps := Parse("ul.yaml", []byte(src))
		if len(ps.Errors()) > 0 {
			t.Fatalf("%s: %v", c.dcr, ps.Errors())
		}
		var b strings.Builder
		if err := Summarize(d).WriteText(&b); err != nil {
			t.Fatal(err)
		}
		out := b.String()
		for _, w := range []string{"Output transformers\n  OT1 output-transformer 8 kΩ " + c.want,
			"primary PB–PA, centre B1; screen taps UB (half to PB), UA (half to PA) at 40 % of each half from the centre; secondary SPK–0V, 8 Ω load, DCR 400 mΩ"} {
			if !strings.Contains(out, w) {
				t.Errorf("dcr %s: show lacks %q:\n%s", c.dcr, w, out)
			}
		}
	}
}
