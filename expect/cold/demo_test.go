package cold

import (
	"testing"

	"pinwalk/expect/amp"
	"pinwalk/expect/design"
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
