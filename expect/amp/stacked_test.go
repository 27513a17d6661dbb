package amp

import (
	"math"
	"testing"

	"pinwalk/expect/design"
)

// TestSRPPSplitsTheSupply: in the SRPP of the preamp-srpp template the two
// triodes of one 12AU7 carry the same current, and with equal cathode
// resistors they sit at the same grid-cathode volts, so (equal sections,
// the same Koren law) they share the supply equally: Va−Vk of the lower
// section equals Va−Vk of the upper one. From the circuit's symmetry (a
// closed form, not a figure from a source). The DC-coupled follower's
// cathode sits above its grid, which is the gain stage's plate.
func TestSRPPSplitsTheSupply(t *testing.T) {
	tp, err := design.TemplateByName("preamp-srpp")
	if err != nil {
		t.Fatal(err)
	}
	m, op := solve(t, parse(t, string(tp.Text)), Conditions{})
	var lower, upper, follower *SectionOP
	for i, s := range m.Sections {
		switch s.Name() {
		case "V1A":
			lower = &op.Sections[i]
		case "V1B":
			upper = &op.Sections[i]
		case "V2A":
			follower = &op.Sections[i]
		}
	}
	if lower == nil || upper == nil || follower == nil {
		t.Fatal("sections V1A, V1B or V2A missing")
	}
	if math.Abs(lower.Ia-upper.Ia) > 1e-6*lower.Ia+1e-9 {
		t.Errorf("stacked currents differ: lower %g A, upper %g A", lower.Ia, upper.Ia)
	}
	dl, du := lower.Va-lower.Vk, upper.Va-upper.Vk
	if math.Abs(dl-du) > 0.01*dl {
		t.Errorf("Va−Vk lower %.2f V, upper %.2f V: expected equal within 1 %%", dl, du)
	}
	if lower.Ia < 1e-3 {
		t.Errorf("SRPP current %g A: expected a few mA", lower.Ia)
	}
	if !(follower.Vk > follower.Vg && follower.Vk-follower.Vg < 5) {
		t.Errorf("follower grid %.1f V, cathode %.1f V: expected the cathode a volt or two above the grid", follower.Vg, follower.Vk)
	}
}
