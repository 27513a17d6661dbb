package amp

import (
	"math"
	"testing"

	"pinwalk/expect/design"
)

// TestUltralinearTapsAndSpeakerNet solves the pp-ultralinear template and
// checks the windings' DC by Ohm's law and Kirchhoff's current law: the
// centre-to-tap part of each half (40 % of its DCR) carries the plate and
// screen currents, the tap-to-plate part the plate current only, so the
// screen's tap sits between B+ and the plate; the screen is its stopper's
// drop below the tap. The speaker net is the secondary's DCR to chassis,
// and the feedback resistor from it shunts the input stage's feedback
// resistor at DC: K1's cathode current flows in R13 ∥ (R14 + DCR).
func TestUltralinearTapsAndSpeakerNet(t *testing.T) {
	tp, err := design.TemplateByName("pp-ultralinear")
	if err != nil {
		t.Fatal(err)
	}
	d := parse(t, string(tp.Text))
	m, op := solve(t, d, Conditions{})
	sec := func(ref string) SectionOP {
		for i, s := range m.Sections {
			if s.Ref == ref {
				return op.Sections[i]
			}
		}
		t.Fatalf("no section %s", ref)
		return SectionOP{}
	}
	b1 := netV(t, m, op, "B1")
	// Template values: OT1 half to PA 135 Ω (its second end), half to PB
	// 125 Ω, taps at 40 %; screen stoppers 1 kΩ.
	for _, c := range []struct {
		valve, tap, plate, screen string
		dcr                       float64
	}{{"V3", "UA", "PA", "SA", 135}, {"V4", "UB", "PB", "SB", 125}} {
		s := sec(c.valve)
		tap := netV(t, m, op, c.tap)
		wantTap := b1 - 0.4*c.dcr*(s.Ia+s.Ig2)
		wantPlate := tap - 0.6*c.dcr*s.Ia
		wantScreen := tap - 1e3*s.Ig2
		for _, g := range []struct {
			what      string
			got, want float64
		}{{c.tap, tap, wantTap}, {c.plate, netV(t, m, op, c.plate), wantPlate}, {c.screen, netV(t, m, op, c.screen), wantScreen}} {
			if math.Abs(g.got-g.want) > 1e-6 {
				t.Errorf("%s: %.6f V, Ohm's law %.6f V", g.what, g.got, g.want)
			}
		}
		if !(b1 > tap && tap > wantPlate) || s.Ia < 10e-3 {
			t.Errorf("%s: B+ %.2f V, tap %.2f V, plate %.2f V (%.1f mA): the tap must lie between B+ and the plate", c.valve, b1, tap, wantPlate, 1e3*s.Ia)
		}
		t.Logf("%s: B+ %.2f V, tap %.2f V, plate %.2f V, screen %.2f V", c.valve, b1, tap, wantPlate, wantScreen)
	}
	// Input stage: R13 100 Ω, R14 4k7, secondary DCR 0.4 Ω.
	ik := sec("V1").Ik
	rpar := 1 / (1/100.0 + 1/(4700+0.4))
	kf, spk := netV(t, m, op, "KF"), netV(t, m, op, "SPK")
	if want := ik * rpar; math.Abs(kf-want) > 1e-9 {
		t.Errorf("KF %.6g V, Ik·(R13 ∥ (R14 + DCR)) = %.6g V", kf, want)
	}
	if want := kf * 0.4 / (4700 + 0.4); math.Abs(spk-want) > 1e-9 {
		t.Errorf("SPK %.3g V, the feedback current through the secondary's DCR gives %.3g V", spk, want)
	}
}
