package procedures

import (
	"strings"
	"testing"

	"pinwalk/expect/design"
	"pinwalk/expect/point"
)

func diodeBiasDesign(t *testing.T) *design.Design {
	t.Helper()
	return templateDesign(t, "pp-diode-bias")
}

// A grid bias from its own diode is a bias supply to the walk: the output
// valves are fixed-bias stages, the bring-up proves the bias with them
// out, and its reservoir reading at a small share of its negative band
// (an open bias diode: the output valves red-plate without bias, common
// practice) switches off with the valves in and stops with them out.
func TestDiodeBiasWalk(t *testing.T) {
	d := diodeBiasDesign(t)
	b, err := NewBenchModel(d, BenchOptions{Samples: 40, Seed: 1})
	if err != nil {
		t.Fatal(err)
	}
	if n := len(b.BiasStages()); n != 2 {
		t.Fatalf("%d fixed-bias stages, want V3 and V4", n)
	}
	w := newWalk(t, d, BringUp, "")
	ramp := false
	for _, st := range w.R.Proc.Steps {
		ramp = ramp || strings.HasPrefix(st.ID, "bias-ramp-")
	}
	if !ramp {
		t.Errorf("no bias ramp with the output valves out")
	}
	k := point.LiveKey("NBR", "dc_volts")
	band, has := b.Expect(k, 1, nil)
	if !has || band.High >= 0 {
		t.Fatalf("NBR band %v – %v, want negative", band.Low, band.High)
	}
	m := &Measure{Point: k, Label: "NBR"}
	live := &Step{ID: "variac-100", Kind: KindVariac, Live: true, Variac: 1}
	if j := b.judge(live, m, band.Nominal, band, has, nil); j.Consequence == SwitchOff || j.Consequence == Stop {
		t.Errorf("a healthy NBR reading %.1f V: %v (%s)", band.Nominal, j.Consequence, j.Said)
	}
	j := b.judge(live, m, -1.5, band, has, nil)
	if j.Consequence != SwitchOff || !strings.Contains(j.Said, "no bias") {
		t.Errorf("NBR at -1.5 V with the output valves in: %v (%s), want switch off", j.Consequence, j.Said)
	}
	pulled := &Step{ID: "bias-ramp-100", Kind: KindVariac, Live: true, Variac: 1, Pulled: []string{"V3", "V4"}}
	if j := b.judge(pulled, m, -1.5, band, has, nil); j.Consequence != Stop {
		t.Errorf("NBR at -1.5 V with the output valves out: %v (%s), want stop", j.Consequence, j.Said)
	}
}
