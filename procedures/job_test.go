package procedures

import (
	"math"
	"testing"
	"time"
)

// The answers of the job questions land in the session's paperwork;
// figures are parsed and checked, and what cannot be read is refused
// with what was expected.
func TestJobAnswers(t *testing.T) {
	at := fixedNow
	var s Session
	for _, c := range []struct{ field, text string }{
		{FieldCustomer, "job 1042"}, {FieldAmp, "bench build, 2 × 6V6"}, {FieldComplaint, "hums and one side is quiet"},
		{FieldVisual, "C2 top bulging"}, {FieldVisual + "-2", "ok"},
		{FieldPart, "C2 100µF 450V, bulging"},
		{FieldPowerOut + "OT1", "4.5W"}, {FieldSoak, "90"},
		{FieldEarthBond, "0.08 tester"}, {FieldInsulation, "OL tester"}, {FieldSignOff, "bench technician"},
	} {
		if err := s.answer(c.field, c.text, at); err != nil {
			t.Fatalf("%s %q: %v", c.field, c.text, err)
		}
	}
	j := s.Job
	if j.Customer != "job 1042" || s.Bench.AmpID == "" || len(j.Visual) != 1 {
		t.Errorf("intake: %+v, bench %+v", j, s.Bench)
	}
	if len(j.Parts) != 1 || j.Parts[0].Ref != "C2" || j.Parts[0].Value != "100µF" || j.Parts[0].Rating != "450V" || j.Parts[0].Reason != "bulging" {
		t.Errorf("part: %+v", j.Parts)
	}
	if len(j.After.PowerOut) != 1 || j.After.PowerOut[0].Watts != 4.5 || j.After.PowerOut[0].Channel != "OT1" {
		t.Errorf("power out: %+v", j.After.PowerOut)
	}
	if j.After.Soak == nil || j.After.Soak.Duration != 90*time.Minute {
		t.Errorf("soak: %+v", j.After.Soak)
	}
	if e := j.After.EarthBond; e == nil || e.Ohms != 0.08 || e.Instrument != EarthBondTester {
		t.Errorf("earth bond: %+v", e)
	}
	if i := j.After.Insulation; i == nil || !math.IsInf(i.Ohms, 1) || i.Instrument != InsulationTester || i.TestVolts != 500 {
		t.Errorf("insulation: %+v", i)
	}
	if j.SignOff == nil || j.SignOff.Name != "bench technician" {
		t.Errorf("sign-off: %+v", j.SignOff)
	}
	for _, bad := range []struct{ field, text string }{
		{FieldPowerOut + "OT1", "loud"}, {FieldSoak, "a while"}, {FieldEarthBond, "0.08"}, {FieldEarthBond, "0.08 guess"},
		{FieldInsulation, "-5M tester"}, {FieldPart, "C2"},
	} {
		if err := s.answer(bad.field, bad.text, at); err == nil {
			t.Errorf("%s %q accepted", bad.field, bad.text)
		}
	}
	// The swap test's answer in a technician's words.
	for text, want := range map[string]string{"follows": SwapFollows, "Moved with the valve": SwapFollows, "stays, hum still right": SwapStays, "no": SwapStays, "not tried": SwapNotTried} {
		if err := s.answer(FieldSwap+":V2/V3", text, at); err != nil || s.Job.Swap.Result != want || s.Job.Swap.Valves != "V2/V3" {
			t.Errorf("swap %q: %v %+v, want %s", text, err, s.Job.Swap, want)
		}
	}
	if err := s.answer(FieldSwap+":V2/V3", "perhaps", at); err == nil {
		t.Error("swap answer perhaps accepted")
	}
	// A multimeter reading is recorded as one: the sheet calls it an
	// indication only.
	if err := s.answer(FieldEarthBond, "0.3 meter", at); err != nil || s.Job.After.EarthBond.Instrument != Multimeter {
		t.Errorf("multimeter earth bond: %v %+v", err, s.Job.After.EarthBond)
	}
}

// A tester past its range: ">200M" on the insulation tester is at least
// 200 MΩ, "<0.01" on the earth-bond tester at most 10 mΩ; the bound is
// kept. The reverse bounds say nothing a verdict can use and are refused.
func TestSafetyTestOverRange(t *testing.T) {
	at := time.Date(2026, 1, 2, 3, 4, 5, 0, time.UTC)
	for _, c := range []struct {
		field, text string
		ohms        float64
		ok          bool
	}{
		{FieldInsulation, ">200M tester", 200e6, true},
		{FieldInsulation, "> 200M tester", 200e6, true},
		{FieldInsulation, "50M tester", 50e6, true},
		{FieldInsulation, "<1M tester", 0, false},
		{FieldEarthBond, "<0.01 tester", 0.01, true},
		{FieldEarthBond, ">0.5 tester", 0, false},
	} {
		st, err := parseSafetyTest(c.field, c.text, at)
		if (err == nil) != c.ok {
			t.Errorf("%s %q: error %v, want ok %v", c.field, c.text, err, c.ok)
			continue
		}
		if c.ok && math.Abs(st.Ohms-c.ohms) > 1e-9*c.ohms {
			t.Errorf("%s %q: %g Ω, want %g Ω", c.field, c.text, st.Ohms, c.ohms)
		}
	}
}
