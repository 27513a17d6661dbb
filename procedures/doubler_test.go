package procedures

import (
	"strings"
	"testing"

	"pinwalk/expect/point"
)

// A voltage doubler in the bring-up: each of its capacitors has its own
// discharge step, the floating one read across its own two nets; the
// capacitors' junction is a supply net the variac steps measure, with its
// own band; the heaters-first step keeps the HT off by lifting the
// winding's lead to the diodes (there is no centre tap).
func TestDoublerWalk(t *testing.T) {
	b, st := bringUpStep(t, "practice-doubler", "discharge-C1")
	if !strings.Contains(st.Instruction, "B1 to DM") || !strings.Contains(st.Measures[0].Probes, "black on DM") {
		t.Errorf("C1 discharge: %q / %q, want it read from B1 to DM", st.Instruction, st.Measures[0].Probes)
	}
	_, st2 := bringUpStep(t, "practice-doubler", "discharge-C2")
	if !strings.Contains(st2.Measures[0].Probes, "black on chassis") {
		t.Errorf("C2 discharge probes %q, want DM to chassis", st2.Measures[0].Probes)
	}
	band, ok := b.Expect(point.LiveKey("DM", "dc_volts"), 1, nil)
	if !ok || band.Low < 100 || band.High > 250 {
		t.Errorf("DM band %v – %v (%v), want about one winding peak", band.Low, band.High, ok)
	}
	p, err := BringUpProcedure(b)
	if err != nil {
		t.Fatal(err)
	}
	seen := false
	for _, s := range p.Steps {
		if s.Kind != KindVariac {
			continue
		}
		for _, m := range s.Measures {
			seen = seen || m.Point == point.LiveKey("DM", "dc_volts")
		}
	}
	if !seen {
		t.Errorf("no variac step measures DM")
	}
	if h := p.Step(StepHeaters + "-low"); h == nil || !strings.Contains(h.Instruction, "lead to the doubler's diodes (net HW") {
		t.Errorf("heaters-first step: %+v, want the winding's lead to the diodes lifted", h)
	}
}
