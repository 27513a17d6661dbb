package procedures

import (
	"strings"
	"testing"
)

// TestDetectorDiodeStep: the bring-up step of a diode-triode measures its
// wired diode plates (pins 5 and 6 of a 12AV6: RCA base diagram, from
// memory), says in words that a detector reads about 0 V with no signal,
// and the plates' band lies between -1 V and 0 V (common practice: a few
// tenths negative from the contact potential).
func TestDetectorDiodeStep(t *testing.T) {
	b, st := bringUpStep(t, "diode-triode-detector", "valve-V1")
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
