package jobsheet

import (
	"strings"
	"testing"
	"time"

	"pinwalk/expect/design"
	"pinwalk/procedures"
)

// TestTwoPinSafetyVerdicts: a set with no mains earth (the transformerless
// template) has no earth bond to test, and its insulation is held to the
// Class II limit, 2 MΩ at 500 V DC, where an earthed amplifier's is 1 MΩ
// (IET Code of Practice for In-service Inspection and Testing, 5th ed.,
// from memory): 1.5 MΩ passes on the earthed demo and fails on the
// two-pin set.
func TestTwoPinSafetyVerdicts(t *testing.T) {
	base, err := procedures.LoadSession(repairFixture)
	if err != nil {
		t.Fatal(err)
	}
	tp, err := design.TemplateByName("acdc-phono")
	if err != nil {
		t.Fatal(err)
	}
	acdc, probs := design.Parse("acdc-phono.yaml", tp.Text)
	if len(probs.Errors()) > 0 {
		t.Fatal(probs)
	}
	at := time.Date(2026, 2, 10, 12, 0, 0, 0, time.UTC)
	s := *base
	s.Job.After.EarthBond = nil
	s.Job.After.Insulation = &procedures.SafetyTest{Ohms: 1.5e6, Instrument: procedures.InsulationTester, TestVolts: 500, At: at}
	md, _ := renderCustomer(t, &s, acdc)
	for _, w := range []string{"no mains earth (two-pin inlet)", "not applicable", "Class II", "✗ FAILED"} {
		if !strings.Contains(md, w) {
			t.Errorf("two-pin set: the sheet lacks %q", w)
		}
	}
	if strings.Contains(md, "NOT TESTED") {
		t.Errorf("two-pin set: an earth bond is asked for")
	}
	md, _ = renderCustomer(t, &s, loadDesign(t, designPP))
	if !strings.Contains(md, "NOT TESTED") || strings.Contains(md, "✗ FAILED") {
		t.Errorf("earthed demo: want the earth bond not tested and 1.5 MΩ insulation passed")
	}
}
