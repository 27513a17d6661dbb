package amp

import (
	"math"
	"testing"

	"pinwalk/expect/design"
	"pinwalk/expect/valves"
)

// TestScreenShareAtDemoIdle: at every demo's (and template's) operating
// point each pentode's screen-to-plate current ratio lies within ±20 % of
// the published class A row nearest in Va/Vg2 (the rows in library.yaml:
// Philips EL34 data 250/250 V, 14.9/100 mA; RCA 6V6GT and 6L6GC data
// sheets; all from memory). In the screen-division model the ratio depends
// on Va/Vg2, not on the grid bias, so an idling output valve keeps about the
// share of a class A row (Koren's own screen formula gave 1.55 mA against
// 39.6 mA for the EL34 demo, a ratio of 0.04). The screen dissipation is
// (Vg2 − Vk)·Ig2.
func TestScreenShareAtDemoIdle(t *testing.T) {
	var ds []*design.Design
	for _, n := range []string{"se-6v6-stereo", "pp-el34-fixed", "bench-12ax7"} {
		ds = append(ds, loadDemo(t, n))
	}
	for _, tp := range design.Templates() {
		d, probs := design.Parse(tp.Name, tp.Text)
		if len(probs.Errors()) > 0 {
			t.Fatalf("template %s: %v", tp.Name, probs.Errors())
		}
		ds = append(ds, d)
	}
	seen := 0
	for _, d := range ds {
		m, op := solve(t, d, Conditions{})
		for i, sec := range m.Sections {
			if !sec.Pentode {
				continue
			}
			so := op.Sections[i]
			va, vg2 := so.Va-so.Vk, so.Vg2-so.Vk
			var best valves.Row
			bestD := math.Inf(1)
			for _, r := range sec.Type.Rows {
				if r.Ig2 <= 0 {
					continue
				}
				if dd := math.Abs(math.Log((va / vg2) / (r.Va / r.Vg2))); dd < bestD {
					best, bestD = r, dd
				}
			}
			if best.Ia == 0 {
				continue
			}
			seen++
			got, want := so.Ig2/so.Ia, best.Ig2/best.Ia
			t.Logf("%s %s %s: Va %.0f V, Vg2 %.0f V, Ia %.1f mA, Ig2 %.2f mA (ratio %.3f), screen %.2f W; row %g/%g/%g V: ratio %.3f [%s]",
				d.Title, sec.Name(), sec.Type.Name, va, vg2, 1e3*so.Ia, 1e3*so.Ig2, got, so.Pg2,
				best.Va, best.Vg2, best.Vg1, want, best.Source)
			if math.Abs(got/want-1) > 0.20 {
				t.Errorf("%s %s: Ig2/Ia %.3f, nearest row %.3f: want within ±20 %%", d.Title, sec.Name(), got, want)
			}
			if hand := vg2 * so.Ig2; math.Abs(so.Pg2-hand) > 1e-9*math.Max(1, hand) {
				t.Errorf("%s %s: screen dissipation %g W, (Vg2−Vk)·Ig2 = %g W", d.Title, sec.Name(), so.Pg2, hand)
			}
		}
	}
	if seen < 3 {
		t.Errorf("only %d pentode sections checked", seen)
	}
}
