package infer

import (
	"math"
	"strings"
	"testing"

	"pinwalk/expect/design"
)

// TestSeriesStringNoLights: a transformerless set that shows no lights
// (the owner's complaint) and reads open live to neutral at the plug,
// valves in: one current runs through the fuse, the dropper and every
// heater of the series string (Ohm's law), so the suspects are the fuse,
// the dropper and each heater, and nothing else.
func TestSeriesStringNoLights(t *testing.T) {
	tp, err := design.TemplateByName("acdc-phono")
	if err != nil {
		t.Fatal(err)
	}
	d, probs := design.Parse("acdc-phono.yaml", tp.Text)
	if len(probs.Errors()) > 0 {
		t.Fatal(probs)
	}
	e, err := New(d, Options{Samples: 100, Seed: 1, Symptoms: []string{"no-lights"}})
	if err != nil {
		t.Fatal(err)
	}
	want := map[string]bool{"F1:open": true, "R9:open": true, "V1:heater-open": true, "V2:heater-open": true, "V3:heater-open": true}
	r := e.Rank([]Observation{{ColdKey("heater string"), math.Inf(1)}}, nil)
	total := 0.0
	var top []string
	for _, s := range r.Suspects {
		if want[s.Fault] {
			total += s.Probability
		}
		top = append(top, s.Fault)
	}
	if len(r.Suspects) == 0 || !want[r.Suspects[0].Fault] || total < 0.95 {
		t.Errorf("suspects %s: want the fuse, the dropper and the heaters (%.3f of the posterior)", strings.Join(top, ", "), total)
	}
	t.Logf("suspects: %s (%.3f on the string and fuse)", strings.Join(top, ", "), total)
	// Before any reading the complaint alone puts the string's faults
	// and the fuse first: every one of them darkens every valve.
	// A rectifier that arcs blows the fuse too (the valve rectifier's
	// short), so it may stand among them.
	r = e.Rank(nil, nil)
	blowsFuse := map[string]bool{"V3:short": true}
	for i, s := range r.Suspects[:min(len(want), len(r.Suspects))] {
		if !want[s.Fault] && !blowsFuse[s.Fault] {
			t.Errorf("no reading yet: suspect %d is %s (%.3f), want the fuse, the dropper or a heater", i+1, s.Fault, s.Probability)
		}
	}
}
