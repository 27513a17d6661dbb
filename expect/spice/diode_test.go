package spice

import (
	"strings"
	"testing"

	"pinwalk/expect/amp"
	"pinwalk/expect/design"
)

// TestAgreesWithNgspiceForwardDiode: the detector template with its second
// diode plate fed from B2 through 1 MΩ, so that it conducts some 140 µA
// into the cathode pin it shares with the triode: every net, pin and
// electrode current (the cathode pin's with the diodes' share) against
// ngspice within 1 %, as TestAgreesWithNgspice.
func TestAgreesWithNgspiceForwardDiode(t *testing.T) {
	needSimulator(t)
	tp, err := design.TemplateByName("diode-triode-detector")
	if err != nil {
		t.Fatal(err)
	}
	src := strings.ReplaceAll(string(tp.Text), "?", "")
	src = strings.Replace(src, "D: {plates: [DET, DET]}", "D: {plates: [DET, DF]}", 1)
	src = strings.Replace(src, "  C2:", "  R9: {resistor: 1M, between: [B2, DF]}\n  C2:", 1)
	d, probs := design.Parse("forward-diode.yaml", []byte(src))
	if len(probs.Errors()) > 0 {
		t.Fatal(probs.Errors())
	}
	runComparisons(t, []*design.Design{d}, amp.Conditions{}, simCycles)
}
