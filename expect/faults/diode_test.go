package faults

import (
	"math"
	"strings"
	"testing"

	"pinwalk/expect/amp"
	"pinwalk/expect/design"
)

func templateModel(t *testing.T, name string) *amp.Model {
	t.Helper()
	tp, err := design.TemplateByName(name)
	if err != nil {
		t.Fatal(err)
	}
	d, probs := design.Parse(name+".yaml", []byte(strings.ReplaceAll(string(tp.Text), "?", "")))
	if len(probs.Errors()) > 0 {
		t.Fatal(probs.Errors())
	}
	m, err := amp.Build(d)
	if err != nil {
		t.Fatal(err)
	}
	return m
}

// TestDiodeSectionOpen: a detector diode at rest collects its contact-
// potential current and reads a few tenths of a volt negative through its
// load (common practice); open inside the valve, or the valve dead (no
// emission), it collects nothing and its load holds it at the cathode's
// 0 V (Ohm's law, no current). An unused diode section has no fault.
func TestDiodeSectionOpen(t *testing.T) {
	m := templateModel(t, "diode-triode-detector")
	listed := map[string]bool{}
	for _, f := range All(m) {
		listed[f.String()] = true
	}
	det := func(name string) float64 {
		v := m.NominalValues()
		if name != "" {
			if !listed[name] {
				t.Fatalf("%s is not among the design's faults", name)
			}
			f, err := Parse(name)
			if err != nil {
				t.Fatal(err)
			}
			if err := Apply(m, v, f); err != nil {
				t.Fatal(err)
			}
		}
		var op amp.OP
		if err := amp.NewSolver(m).Solve(amp.Conditions{}, v, false, &op); err != nil {
			t.Fatal(err)
		}
		x, _ := m.NetVolts(&op, "DET")
		return x
	}
	healthy := det("")
	if healthy > -0.1 || healthy < -1 {
		t.Errorf("healthy detector %.3f V: want a few tenths negative", healthy)
	}
	for _, name := range []string{"V1.D:open", "V1:dead"} {
		if x := det(name); math.Abs(x) > 1e-3 {
			t.Errorf("%s: detector %.4f V, want 0 V (healthy %.3f V)", name, x, healthy)
		}
	}
	f, _ := Parse("V1.D:open")
	if d := Describe(f, m); !strings.Contains(d, "diode section open") {
		t.Errorf("description %q", d)
	}
	acdc := templateModel(t, "acdc-phono")
	for _, f := range All(acdc) {
		if strings.Contains(f.String(), ".D:") {
			t.Errorf("%s listed for an unused diode section", f)
		}
	}
}
