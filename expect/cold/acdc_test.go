package cold

import (
	"testing"

	"pinwalk/expect/amp"
	"pinwalk/expect/design"
	"pinwalk/expect/faults"
)

func acdcTemplate(t *testing.T) (*design.Design, *amp.Model) {
	t.Helper()
	tp, err := design.TemplateByName("acdc-phono")
	if err != nil {
		t.Fatal(err)
	}
	d, probs := design.Parse("acdc-phono.yaml", tp.Text)
	if len(probs.Errors()) > 0 {
		t.Fatal(probs)
	}
	m, err := amp.Build(d)
	if err != nil {
		t.Fatal(err)
	}
	return d, m
}

// TestHeaterStringCold: live to neutral at the plug of the transformerless
// template, valves in, reads the 150 Ω dropper plus every heater cold:
// hot resistance (rated volts over amps: 333.3 + 233.3 + 84 Ω) times the
// cold share, a fifth to an eighth, 1/6.5 nominal (tungsten's resistivity
// ratio between room temperature and 1200–1400 K, CRC Handbook, from
// memory). One heater open anywhere in the string, or the dropper, reads
// open; the surge resistor open leaves it as it was (it is not in the
// string). The mains-side nets are not read to chassis.
func TestHeaterStringCold(t *testing.T) {
	d, m := acdcTemplate(t)
	cs, err := Checks(d)
	if err != nil {
		t.Fatal(err)
	}
	hot := 50/0.15 + 35/0.15 + 12.6/0.15
	c := findCheck(t, cs, "heater string")
	if want := 150 + hot/6.5; !near(c.Ohms, want, 1e-6) {
		t.Errorf("heater string %.2f Ω, want %.2f Ω", c.Ohms, want)
	}
	// Rayleigh corners: dropper ±10 %, heaters at 1/8 and 1/5 of hot.
	if lo, hi := 135+hot/8, 165+hot/5; !near(c.Tol[0], lo, 1e-6) || !near(c.Tol[1], hi, 1e-6) {
		t.Errorf("heater string band %.2f–%.2f Ω, want %.2f–%.2f Ω", c.Tol[0], c.Tol[1], lo, hi)
	}
	for _, x := range cs {
		if x.ID == "L1" || x.ID == "HTA" || x.ID == "X1" {
			t.Errorf("mains-side net %s read to chassis", x.ID)
		}
	}
	for _, tc := range []struct {
		fault string
		open  bool
	}{{"V3:heater-open", true}, {"V1:heater-open", true}, {"R9:open", true}, {"R1:open", false}} {
		f, err := faults.Parse(tc.fault)
		if err != nil {
			t.Fatal(err)
		}
		out, _, err := FaultChecks(d, m, cs, f, true)
		if err != nil {
			t.Fatal(err)
		}
		got := findCheck(t, out, "heater string")
		if got.Open != tc.open || (!tc.open && !near(got.Ohms, c.Ohms, 1e-6)) {
			t.Errorf("%s: heater string %v (open %v), want open %v", tc.fault, got.Ohms, got.Open, tc.open)
		}
	}
}
