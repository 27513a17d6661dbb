package cold

import (
	"testing"

	"pinwalk/expect/amp"
	"pinwalk/expect/design"
	"pinwalk/expect/faults"
)

var demos = []string{"se-6v6-stereo", "pp-el34-fixed", "bench-12ax7"}

func loadDemo(t testing.TB, name string) (*design.Design, *amp.Model) {
	t.Helper()
	d, probs := design.Load("../../testdata/designs/" + name + ".yaml")
	if errs := probs.Errors(); len(errs) > 0 {
		t.Fatalf("%s: %v", name, errs)
	}
	m, err := amp.Build(d)
	if err != nil {
		t.Fatal(err)
	}
	return d, m
}

func TestDemoTables(t *testing.T) {
	for _, name := range demos {
		d, m := loadDemo(t, name)
		cs, err := Checks(d)
		if err != nil {
			t.Fatal(err)
		}
		for _, c := range cs {
			t.Logf("%s %-16s %-5s→%-4s %10.4g [%10.4g %10.4g] %s %s", name, c.ID, c.From, c.To, c.Ohms, c.Tol[0], c.Tol[1], c.Kind, c.Note)
		}
		ds, err := DischargeTimes(d, m, 0)
		if err != nil {
			t.Fatal(err)
		}
		for _, x := range ds {
			t.Logf("%s %s %s %g F peak %.1f bleed %.4g t60 %.3g t10 %.3g %v %s", name, x.Ref, x.Net, x.Farads, x.PeakVolts, x.BleedOhms, x.To60, x.To10, x.NoPath, x.Warning)
		}
	}
}

// TestShortFaultsCold: on the stereo demo a shorted diode of D1 joins its
// anode (HTA) to B1, so B1 reads the half winding HTA–centre to chassis:
// 95 Ω ±10 % (half the design's 190 Ω HT DCR at the winding tolerance);
// a shorted C2 reads within 10 mΩ–500 Ω at B2 (the spread of a
// broken-down capacitor, common practice), with or without corners.
func TestShortFaultsCold(t *testing.T) {
	d, m := loadDemo(t, "se-6v6-stereo")
	base, err := Checks(d)
	if err != nil {
		t.Fatal(err)
	}
	find := func(cs []Check, from string) Check {
		for _, c := range cs {
			if c.From == from && c.Kind == "b+" {
				return c
			}
		}
		t.Fatalf("no b+ check from %s", from)
		return Check{}
	}
	for _, corners := range []bool{false, true} {
		out, changed, err := FaultChecks(d, m, base, faults.Fault{Ref: "D1", Mode: faults.Short}, corners)
		if err != nil || !changed {
			t.Fatalf("D1 short: changed %v, %v", changed, err)
		}
		if c := find(out, "B1"); c.Ohms < 85 || c.Ohms > 105 {
			t.Errorf("D1 short (corners %v): B1 reads %.1f Ω, want about 95 Ω", corners, c.Ohms)
		}
		out, _, err = FaultChecks(d, m, base, faults.Fault{Ref: "C2", Mode: faults.Short}, corners)
		if err != nil {
			t.Fatal(err)
		}
		c := find(out, "B2")
		if c.Tol[0] > 0.02 || c.Tol[1] < 400 || c.Tol[1] > 600 || c.Ohms < c.Tol[0] || c.Ohms > c.Tol[1] {
			t.Errorf("C2 short (corners %v): B2 %.3g Ω in [%.3g, %.3g], want within about 10 mΩ–500 Ω", corners, c.Ohms, c.Tol[0], c.Tol[1])
		}
	}
}

// TestHeaterCentreTapOpen: a heater winding's centre-tap lead broken
// leaves the winding whole end to end (its DCR, 50 mΩ on the stereo demo)
// but each half open from the centre tap (chassis): the one cold reading
// that finds it, since the heaters still light (Ohm's law on the winding
// as drawn).
func TestHeaterCentreTapOpen(t *testing.T) {
	d, m := loadDemo(t, "se-6v6-stereo")
	base, err := Checks(d)
	if err != nil {
		t.Fatal(err)
	}
	f, err := faults.Parse("T1:centre-open")
	if err != nil {
		t.Fatal(err)
	}
	got, changed, err := FaultChecks(d, m, base, f, true)
	if err != nil || !changed {
		t.Fatalf("T1:centre-open: changed %v, err %v", changed, err)
	}
	for _, c := range got {
		switch c.ID {
		case "T1 HEATER":
			if c.Open || c.Ohms > 0.06 {
				t.Errorf("whole heater winding %+v, want about 50 mΩ", c)
			}
		case "T1 HEATER half a", "T1 HEATER half b":
			if !c.Open {
				t.Errorf("%s reads %+v with the centre tap open, want open", c.ID, c)
			}
		}
	}
}
