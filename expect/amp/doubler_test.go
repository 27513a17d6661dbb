package amp

import (
	"math"
	"strings"
	"testing"

	"pinwalk/expect/design"
)

func practiceDoubler(t *testing.T) (*design.Design, *Model) {
	t.Helper()
	tp, err := design.TemplateByName("practice-doubler")
	if err != nil {
		t.Fatal(err)
	}
	d, probs := design.Parse("practice-doubler.yaml", tp.Text)
	if len(probs.Errors()) > 0 {
		t.Fatal(probs.Errors())
	}
	m, err := Build(d)
	if err != nil {
		t.Fatal(err)
	}
	return d, m
}

// The doubler template as the model sees it: one HT from two diodes,
// each capacitor its own volts. With equal capacitors and equal bleeders
// the junction sits at half the output (symmetry); each capacitor is
// checked against its own volts, about one winding peak at switch-on,
// not the whole stack's two.
func TestDoublerModel(t *testing.T) {
	d, m := practiceDoubler(t)
	if m.HT == nil || m.HT.Doubler == nil || !m.HT.Doubler.Full || m.HT.Nets[0] != "B1" || len(m.AuxRects()) != 0 {
		t.Fatalf("not one full-wave doubler HT on B1: %+v, aux %d", m.HT, len(m.AuxRects()))
	}
	s := NewSolver(m)
	var op, cold OP
	if err := s.Solve(Conditions{}, m.NominalValues(), false, &op); err != nil {
		t.Fatal(err)
	}
	b1, _ := m.NetVolts(&op, "B1")
	dm, _ := m.NetVolts(&op, "DM")
	if math.Abs(dm-b1/2) > 0.01*b1/2 {
		t.Errorf("DM %.2f V, want half of B1 %.2f V within 1 %%", dm, b1)
	}
	vpk := math.Sqrt2 * m.HT.VrmsOC
	if b1 > 2*vpk || b1 < 1.5*vpk {
		t.Errorf("B1 %.1f V, want between 1.5 and 2 winding peaks (%.1f V)", b1, vpk)
	}
	if err := s.ColdStart(0, &cold); err != nil {
		t.Fatal(err)
	}
	if fs := m.RatingChecks(&op, &cold); len(fs) != 0 {
		t.Errorf("healthy template: findings %v", fs)
	}
	c1 := d.ByRef["C1"]
	c1.Volts = 160
	fs := m.RatingChecks(&op, &cold)
	found := false
	for _, f := range fs {
		if f.Ref != "C1" {
			continue
		}
		found = true
		// Its own volts: one peak less a diode, about 170 V.
		if !strings.Contains(f.Msg, "sees 17") {
			t.Errorf("C1 finding %q, want it to see about one peak (17x V)", f.Msg)
		}
	}
	if !found {
		t.Errorf("C1 rated 160 V: no finding in %v", fs)
	}
}
