package cold

import (
	"math"
	"testing"

	"pinwalk/expect/amp"
	"pinwalk/expect/design"
)

// A bias supply off its own diode: its reservoir C4 (100 µF on NBR) and
// filter C5 (47 µF on NB) are in the discharge table, from the cold-start
// peak at high mains: cold valves draw no grid current, so the bias
// network loads it as when warm, and the peak-rectified winding scales
// as f·(|V| + Vd) − Vd with f = 1 + 6 % (common practice). C4 bleeds through R3 into C5 and the bias network
// (32.4 kΩ to chassis from NBR), so its time to 10 V lies between C4
// alone through that resistance and C4 and C5 lumped behind it:
// ln(|V0|/10 V)·R·C (an RC discharge, Ohm's law and C·dV/dt = −V/R).
func TestDiodeBiasDischarge(t *testing.T) {
	tp, err := design.TemplateByName("pp-diode-bias")
	if err != nil {
		t.Fatal(err)
	}
	d, probs := design.Parse("pp-diode-bias.yaml", tp.Text)
	if len(probs.Errors()) > 0 {
		t.Fatal(probs.Errors())
	}
	m, err := amp.Build(d)
	if err != nil {
		t.Fatal(err)
	}
	rows, err := DischargeTimes(d, m, 0)
	if err != nil {
		t.Fatal(err)
	}
	by := map[string]Discharge{}
	for _, r := range rows {
		by[r.Ref] = r
	}
	c4, ok4 := by["C4"]
	_, ok5 := by["C5"]
	if !ok4 || !ok5 {
		t.Fatalf("bias capacitors missing from the discharge table: %+v", rows)
	}
	a := m.AuxRectOf("D2")
	var op amp.OP
	if err := amp.NewSolver(m).Solve(amp.Conditions{}, m.NominalValues(), false, &op); err != nil {
		t.Fatal(err)
	}
	nom, _ := m.NetVolts(&op, "NBR")
	peak := -((1+d.Mains.Tol.Hi)*(-nom+a.Rect.Vf) - a.Rect.Vf)
	if math.Abs(c4.PeakVolts-peak) > 0.01*math.Abs(peak) {
		t.Errorf("C4 peak %.2f V, want about %.2f V", c4.PeakVolts, peak)
	}
	k := math.Log(math.Abs(c4.PeakVolts) / TouchVolts)
	lo, hi := k*c4.BleedOhms*100e-6, k*c4.BleedOhms*147e-6
	t.Logf("C4: peak %.2f V, bleed %.0f Ω, to 10 V in %.2f s (bounds %.2f–%.2f s)", c4.PeakVolts, c4.BleedOhms, c4.To10, lo, hi)
	if c4.To10 < lo || c4.To10 > hi {
		t.Errorf("C4 to 10 V in %.2f s, outside %.2f–%.2f s", c4.To10, lo, hi)
	}
}
