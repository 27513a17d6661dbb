package cold

import (
	"testing"

	"pinwalk/expect/amp"
	"pinwalk/expect/design"
	"pinwalk/expect/faults"
)

// TestUltralinearWindingsCold: the pp-ultralinear template's screen taps
// and secondary read, cold, as their share of the winding (40 % of each
// half's DCR from the centre, the rest to the plate) and the secondary's
// DCR at the speaker jack (hand: the screen stoppers end on cold screens,
// the feedback resistor's 4k8 path lies across 0.4 Ω). With the secondary
// open, the speaker net reads through the feedback resistor R14 to R13
// and the cathode circuit; with half a open, its tap reads open from the
// centre (Ohm's law, series and parallel).
func TestUltralinearWindingsCold(t *testing.T) {
	tp, err := design.TemplateByName("pp-ultralinear")
	if err != nil {
		t.Fatal(err)
	}
	d, probs := design.Parse(tp.Name, tp.Text)
	if len(probs.Errors()) > 0 {
		t.Fatal(probs.Errors())
	}
	cs, err := Checks(d)
	if err != nil {
		t.Fatal(err)
	}
	spk := 1 / (1/0.4 + 1/(4700.0+100)) // secondary ∥ (R14 + R13); R12 ends on a cold cathode
	cases := []struct {
		id         string
		ohms, tolW float64 // nominal and the winding share of its band
	}{
		{"OT1 tap a", 0.4 * 125, 0.1},
		{"OT1 tap a to plate", 0.6 * 125, 0.1},
		{"OT1 tap b", 0.4 * 135, 0.1},
		{"OT1 tap b to plate", 0.6 * 135, 0.1},
		{"OT1 half a", 125, 0.1},
		{"OT1 secondary", spk, 0.1},
	}
	for _, c := range cases {
		got := findCheck(t, cs, c.id)
		if got.Open || !near(got.Ohms, c.ohms, 1e-6) || got.Tol[0] > c.ohms || got.Tol[1] < c.ohms {
			t.Errorf("%s: %.9g Ω [%.9g %.9g], hand %.9g Ω", c.id, got.Ohms, got.Tol[0], got.Tol[1], c.ohms)
		}
	}
	if w := findCheck(t, cs, "OT1 tap a"); !near(w.Tol[0], 0.9*50, 1e-6) || !near(w.Tol[1], 1.1*50, 1e-6) {
		t.Errorf("OT1 tap a band [%g %g]: want the ±10 %% winding tolerance of 50 Ω", w.Tol[0], w.Tol[1])
	}
	if w := findCheck(t, cs, "OT1 secondary"); w.From != "SPK" || w.To != "0V" {
		t.Errorf("secondary measured %s to %s, want SPK to 0V", w.From, w.To)
	}

	m, err := amp.Build(d)
	if err != nil {
		t.Fatal(err)
	}
	// K1's side: R12 1k5 to KF (the cathode is cold), so KF is R13 alone.
	secOpen := 4700.0 + 100
	for _, c := range []struct {
		fault    string
		id       string
		open     bool
		ohms     float64
		unchange string
	}{
		{"OT1.sec:open", "OT1 secondary", false, secOpen, "OT1 tap a"},
		{"OT1.sec:open", "SPK", false, secOpen, "OT1 half b"},
		{"OT1.a:open", "OT1 tap a", true, 0, "OT1 tap b"},
		{"OT1.a:open", "OT1 tap a to plate", true, 0, "OT1 secondary"},
	} {
		f, err := faults.Parse(c.fault)
		if err != nil {
			t.Fatal(err)
		}
		out, changed, err := FaultChecks(d, m, cs, f, true)
		if err != nil || !changed {
			t.Fatalf("%s: changed %v, %v", c.fault, changed, err)
		}
		got := findCheck(t, out, c.id)
		if got.Open != c.open || (!c.open && !near(got.Ohms, c.ohms, 1e-6)) {
			t.Errorf("%s: %s reads %g Ω (open %v), hand %g Ω (open %v)", c.fault, c.id, got.Ohms, got.Open, c.ohms, c.open)
		}
		if a, b := findCheck(t, out, c.unchange), findCheck(t, cs, c.unchange); !near(a.Ohms, b.Ohms, 1e-9) || a.Open != b.Open {
			t.Errorf("%s: %s moved from %g to %g Ω", c.fault, c.unchange, b.Ohms, a.Ohms)
		}
	}
}
