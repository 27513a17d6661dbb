package faults

import (
	"math"
	"strings"
	"testing"

	"pinwalk/expect/amp"
)

// TestVisible: what a look with the power off shows, on the fixed-bias
// demo (values from the design file, invented):
//   - the bleeder R1 (220 kΩ, 2 W) across B1 dissipates V²/R (Ohm's law,
//     from the solved B1), well over a quarter of its rating: an open or
//     drifted R1 may show scorched (common practice 60 % and 40 %); the
//     grid leak R10 (1 MΩ to chassis, no DC through it) never does;
//   - a shorted or dried electrolytic (C1) may bulge; a film coupling
//     capacitor (C11) shows nothing;
//   - a dead valve (V3) may show a milky getter; a weak one nothing;
//   - a near-short blackens the mains fuse F1; a fuse that failed alone
//     (F1:open) breaks cleanly and shows nothing.
func TestVisible(t *testing.T) {
	m := load(t, "pp-el34-fixed")
	var op amp.OP
	if err := amp.NewSolver(m).Solve(amp.Conditions{}, m.NominalValues(), false, &op); err != nil {
		t.Fatal(err)
	}
	b1, _ := m.NetVolts(&op, "B1")
	want := b1 * b1 / 220e3
	got := healthyPower(m)["R1"].Watts
	if math.Abs(got-want) > 0.01*want {
		t.Errorf("R1 dissipates %.3f W, want V²/R = %.3f W (B1 %.1f V)", got, want, b1)
	}
	if want < BurnRisk*2 {
		t.Fatalf("R1 at %.2f W is not at burn risk: the check below would test nothing", want)
	}
	cases := []struct {
		fault string
		ok    bool
		words string
		share float64
	}{
		{"R1:open", true, "R1 scorched", BurntOpenShare},
		{"R1:high", true, "R1 scorched", BurntHighShare},
		{"R1:short", false, "", 0},
		{"R10:open", false, "", 0},
		{"C1:short", true, "C1 bulging", BulgeShortShare},
		{"C1:open", true, "C1 dried out", DriedShare},
		{"C1:leaky", false, "", 0},
		{"C11:short", false, "", 0},
		{"V3:dead", true, "getter turned milky white", WhiteGetterShare},
		{"V3:weak", false, "", 0},
		{"F1:open", false, "", 0},
	}
	for _, c := range cases {
		f, err := Parse(c.fault)
		if err != nil {
			t.Fatal(err)
		}
		sign, ok := Visible(m, f)
		if ok != c.ok || !strings.Contains(sign, c.words) {
			t.Errorf("%s: Visible %q %v, want %v with %q", c.fault, sign, ok, c.ok, c.words)
		}
		if ss := Signs(m, f, false); c.ok && (len(ss) != 1 || ss[0].Share != c.share || ss[0].At != f.Ref) {
			t.Errorf("%s: signs %+v, want one at %s with share %g", c.fault, ss, f.Ref, c.share)
		}
	}
	ss := Signs(m, Fault{"C1", Short}, true)
	if len(ss) != 2 || ss[1].At != "F1" || ss[1].Share != BlackFuseShare || !strings.Contains(ss[1].Words, "blackened") {
		t.Errorf("a shorted reservoir: signs %+v, want its bulge and F1 blackened", ss)
	}
	var at []string
	for _, p := range LookAt(m) {
		at = append(at, p.Ref)
	}
	joined := " " + strings.Join(at, " ") + " "
	for _, ref := range []string{"R1", "C1", "V3", "F1"} {
		if !strings.Contains(joined, " "+ref+" ") {
			t.Errorf("LookAt %v lacks %s", at, ref)
		}
	}
	if strings.Contains(joined, " R10 ") || strings.Contains(joined, " C11 ") {
		t.Errorf("LookAt %v lists a part that shows nothing", at)
	}
}
