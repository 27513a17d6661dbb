package faults

import (
	"testing"

	"pinwalk/expect/amp"
	"pinwalk/expect/design"
)

func diodeBias(t *testing.T) *amp.Model {
	t.Helper()
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
	return m
}

// An open bias diode leaves the grids with no bias: the reservoir and the
// grids fall to about 0 V (the bias network then holds them to chassis)
// and the output valves, at 0 V bias on ~400 V, dissipate far over their
// rating (an EL34 at Vg1 = 0 and its screen near its plate draws several
// hundred mA; its 25 W plate rating, from memory of its data sheet). A
// shorted one is modelled the same live (its mean is gone).
func TestBiasDiodeOpenLosesBias(t *testing.T) {
	m := diodeBias(t)
	modes := Modes(m, "D2")
	if len(modes) != 2 {
		t.Fatalf("D2 modes %v, want open and short", modes)
	}
	for _, mode := range []string{"open", "short"} {
		f, err := Parse("D2:" + mode)
		if err != nil {
			t.Fatal(err)
		}
		v := m.NominalValues()
		if err := Apply(m, v, f); err != nil {
			t.Fatal(err)
		}
		var op amp.OP
		if err := amp.NewSolver(m).Solve(amp.Conditions{}, v, false, &op); err != nil {
			t.Fatal(err)
		}
		nb, _ := m.NetVolts(&op, "NB")
		ga, _ := m.NetVolts(&op, "GA")
		pa := 0.0
		for i, s := range m.Sections {
			if s.Ref == "V3" {
				pa = op.Sections[i].Pa
			}
		}
		t.Logf("D2:%s: NB %.2f V, GA %.2f V, V3 plate %.1f W (%s)", mode, nb, ga, pa, Describe(f, m))
		if nb < -1 || ga < -1 {
			t.Errorf("D2:%s: bias still there: NB %.2f V, GA %.2f V", mode, nb, ga)
		}
		if pa < 2*25 {
			t.Errorf("D2:%s: V3 plate %.1f W, want far over its 25 W with no bias", mode, pa)
		}
	}
	if PoweredShort(m, Fault{Ref: "D2", Mode: Short}) {
		t.Errorf("a shorted bias diode blows no fuse and is no short on B+")
	}
}
