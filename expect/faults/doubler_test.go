package faults

import (
	"math"
	"testing"

	"pinwalk/expect/amp"
	"pinwalk/expect/design"
)

func practiceDoubler(t *testing.T) *amp.Model {
	t.Helper()
	tp, err := design.TemplateByName("practice-doubler")
	if err != nil {
		t.Fatal(err)
	}
	d, probs := design.Parse("practice-doubler.yaml", tp.Text)
	if len(probs.Errors()) > 0 {
		t.Fatal(probs.Errors())
	}
	m, err := amp.Build(d)
	if err != nil {
		t.Fatal(err)
	}
	return m
}

func solveWith(t *testing.T, m *amp.Model, fault string) (*amp.OP, Fault) {
	t.Helper()
	v := m.NominalValues()
	var f Fault
	if fault != "" {
		var err error
		if f, err = Parse(fault); err != nil {
			t.Fatal(err)
		}
		if err := Apply(m, v, f); err != nil {
			t.Fatal(err)
		}
	}
	var op amp.OP
	if err := amp.NewSolver(m).Solve(amp.Conditions{}, v, false, &op); err != nil {
		t.Fatalf("%s: %v", fault, err)
	}
	return &op, f
}

// The doubler's diodes and capacitors through the registry. One diode
// open: its capacitor stops charging, and with the amp's load the output
// falls below one winding peak (unloaded it would be one peak; loaded the
// return runs through the other capacitor's 100 kΩ bleeder: see
// supply.TestFullDoublerOneDiodeOpen), so under half the healthy HT. A
// diode or a doubler capacitor shorted blows the fuse (a powered short).
// A capacitor dried out leaves the other to do the work: more ripple and
// less HT.
func TestDoublerFaults(t *testing.T) {
	m := practiceDoubler(t)
	ok, _ := solveWith(t, m, "")
	b1, _ := m.NetVolts(ok, "B1")
	dm, _ := m.NetVolts(ok, "DM")
	vpk := math.Sqrt2 * m.HT.VrmsOC
	for _, d := range []string{"D1", "D2"} {
		modes := Modes(m, d)
		if len(modes) != 2 || modes[0] != Open || modes[1] != Short {
			t.Errorf("%s modes %v, want open and short", d, modes)
		}
		op, f := solveWith(t, m, d+":open")
		got, _ := m.NetVolts(op, "B1")
		if got > 0.5*b1 || got > vpk {
			t.Errorf("%s open: B1 %.1f V, want under half the healthy %.1f V and under one peak %.1f V", d, got, b1, vpk)
		}
		t.Logf("%s:open (%s): B1 %.1f V (healthy %.1f V)", d, Describe(f, m), got, b1)
		if _, f := solveWith(t, m, d+":short"); !PoweredShort(m, f) {
			t.Errorf("%s short: want a powered short", d)
		}
	}
	for _, c := range []string{"C1", "C2"} {
		if _, f := solveWith(t, m, c+":short"); !PoweredShort(m, f) {
			t.Errorf("%s short: want a powered short (the winding across a diode)", c)
		}
		op, _ := solveWith(t, m, c+":open")
		got, _ := m.NetVolts(op, "B1")
		if got >= b1-5 {
			t.Errorf("%s open: B1 %.1f V, want well under the healthy %.1f V", c, got, b1)
		}
		rip := op.Supply.Nets[0].RippleRms
		if rip <= ok.Supply.Nets[0].RippleRms {
			t.Errorf("%s open: ripple %.2f V rms, want more than the healthy %.2f V", c, rip, ok.Supply.Nets[0].RippleRms)
		}
		mid, _ := m.NetVolts(op, "DM")
		t.Logf("%s:open: B1 %.1f V, DM %.1f V (healthy %.1f / %.1f V), ripple %.2f V rms", c, got, mid, b1, dm, rip)
	}
}
