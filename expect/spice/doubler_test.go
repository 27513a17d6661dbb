package spice

import (
	"testing"

	"pinwalk/expect/amp"
	"pinwalk/expect/design"
)

// The voltage-doubler template against ngspice (real diodes, the two
// capacitors and their bleeders as parts): every net, the capacitors'
// junction among them, within 1 %, at nominal mains and on a variac.
func TestDoublerAgreesWithNgspice(t *testing.T) {
	needSimulator(t)
	var ds []*design.Design
	for _, d := range allDesigns(t) {
		if d.File == "template:practice-doubler" {
			ds = append(ds, d)
		}
	}
	if len(ds) != 1 {
		t.Fatalf("found %d templates practice-doubler", len(ds))
	}
	runComparisons(t, ds, amp.Conditions{}, simCycles)
	runComparisons(t, ds, amp.Conditions{Variac: 0.6}, variacCycles)
}
