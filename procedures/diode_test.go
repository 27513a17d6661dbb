package procedures

import (
	"strings"
	"testing"

	"pinwalk/expect/design"
)

// TestDetectorDiodeStep: the bring-up step of a diode-triode measures its
// wired diode plates (pins 5 and 6 of a 12AV6: RCA base diagram, from
// memory), says in words that a detector reads about 0 V with no signal,
// and the plates' band lies between -1 V and 0 V (common practice: a few
// tenths negative from the contact potential).
func TestDetectorDiodeStep(t *testing.T) {
	tp, err := design.TemplateByName("diode-triode-detector")
	if err != nil {
		t.Fatal(err)
	}
	d, probs := design.Parse(tp.Name+".yaml", tp.Text)
	if d == nil || len(probs.Errors()) > 0 {
		t.Fatalf("%v", probs)
	}
	b, err := NewBenchModel(d, BenchOptions{Samples: 100, Seed: 1})
	if err != nil {
		t.Fatal(err)
	}
	p, err := BringUpProcedure(b)
	if err != nil {
		t.Fatal(err)
	}
	var st *Step
	for _, s := range p.Steps {
		if s.ID == "valve-V1" {
			st = s
		}
	}
	if st == nil {
		t.Fatal("no step for V1")
	}
	if !strings.Contains(st.Why, "pins 5 and 6") || !strings.Contains(st.Why, "about 0 V") {
		t.Errorf("V1 step words: %q", st.Why)
	}
	seen := map[string]bool{}
	for _, m := range st.Measures {
		seen[m.Point.ID] = true
		if m.Point.ID == "V1.5" || m.Point.ID == "V1.6" {
			bd, ok := b.Expect(m.Point, 1, nil)
			if !ok || bd.Low < -1 || bd.High > 0.05 {
				t.Errorf("%s band %v, want within -1 V to 0 V", m.Point.ID, bd)
			}
		}
	}
	if !seen["V1.5"] || !seen["V1.6"] {
		t.Errorf("V1 step measures %v, want the diode plates V1.5 and V1.6", st.Measures)
	}
}
