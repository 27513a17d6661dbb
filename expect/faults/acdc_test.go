package faults

import (
	"testing"

	"pinwalk/expect/amp"
	"pinwalk/expect/design"
)

// TestSeriesStringFaults: in the transformerless template's series
// string one heater open leaves every heater cold (one current through
// them all, Ohm's law): the 35W4's (a rectifier, which has no emission
// slot of its own) as much as the 12AV6's; the dropper open too; and the
// dead rectifier of a string set gives no B+.
func TestSeriesStringFaults(t *testing.T) {
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
	listed := map[string]bool{}
	for _, f := range All(m) {
		listed[f.String()] = true
	}
	for _, name := range []string{"V3:heater-open", "V1:heater-open", "V2:heater-open", "R9:open", "R1:open"} {
		if !listed[name] {
			t.Errorf("%s is not among the design's faults", name)
		}
		f, err := Parse(name)
		if err != nil {
			t.Fatal(err)
		}
		v := m.NominalValues()
		if err := Apply(m, v, f); err != nil {
			t.Fatal(err)
		}
		var op amp.OP
		if err := amp.NewSolver(m).Solve(amp.Conditions{}, v, false, &op); err != nil {
			t.Fatalf("%s: %v", name, err)
		}
		b1, _ := m.NetVolts(&op, "B1")
		for _, h := range op.Heaters {
			lit := h.Volts > 1
			if name != "R1:open" && lit {
				t.Errorf("%s: %s heater at %.2f V, want cold", name, h.Ref, h.Volts)
			}
			if name == "R1:open" && !lit {
				t.Errorf("%s: %s heater cold, want lit (the surge resistor is not in the string)", name, h.Ref)
			}
		}
		if name == "R1:open" || name == "V3:heater-open" {
			if b1 > 5 {
				t.Errorf("%s: B1 %.1f V, want no B+", name, b1)
			}
		}
	}
}
