package procedures

import (
	"strings"
	"testing"
)

// TestRegulatorStep: the bring-up of a design with a gas regulator has a
// step for it that reads its anode against the struck regulator's band
// (near its maintaining volts, 150 V for an OA2: RCA data, from memory),
// and says what a dark one with its anode high means.
func TestRegulatorStep(t *testing.T) {
	b, st := bringUpStep(t, "preamp-regulated", "valve-V3")
	if !strings.Contains(st.Title, "regulator") || !strings.Contains(st.Why, "has not struck") {
		t.Errorf("regulator step in amplifier words: %q / %q", st.Title, st.Why)
	}
	if len(st.Measures) != 1 || st.Measures[0].Point.ID != "V3.5" {
		t.Fatalf("regulator step measures %v, want the anode V3.5 only", st.Measures)
	}
	bd, ok := b.Expect(st.Measures[0].Point, 1, nil)
	if !ok || bd.Low < 140 || bd.High > 160 || bd.Low > 150 || bd.High < 150 {
		t.Errorf("anode band %v, want about 150 V (within 140–160 V)", bd)
	}
}
