package design_test

import (
	"strings"
	"testing"

	"pinwalk/expect/amp"
	"pinwalk/expect/design"
)

// TestTemplatesCheckAndSolve runs every template through what `pinwalk
// check` and `pinwalk expect` do: load (only placeholder notes allowed),
// build, solve hot at nominal mains, solve cold at high mains, and check
// every rating (no errors or warnings allowed).
func TestTemplatesCheckAndSolve(t *testing.T) {
	tpls := design.Templates()
	if len(tpls) < 9 {
		t.Fatalf("found %d templates, want at least 9", len(tpls))
	}
	for _, tp := range tpls {
		t.Run(tp.Name, func(t *testing.T) {
			if tp.Summary == "" || strings.Contains(tp.Summary, "\n") {
				t.Errorf("summary %q: want one non-empty line", tp.Summary)
			}
			d, probs := design.Parse(tp.Name+".yaml", tp.Text)
			if d == nil {
				t.Fatalf("did not parse: %v", probs)
			}
			notes := 0
			for _, p := range probs {
				if p.Severity != design.Note || !strings.HasPrefix(p.Msg, "placeholder value") {
					t.Errorf("unexpected problem: %v", p)
					continue
				}
				notes++
			}
			if notes < 5 {
				t.Errorf("%d placeholder notes, want the values marked with ? (at least 5)", notes)
			}
			if len(probs.Errors()) > 0 {
				return
			}
			m, err := amp.Build(d)
			if err != nil {
				t.Fatalf("build: %v", err)
			}
			s := amp.NewSolver(m)
			var hot, cold amp.OP
			if err := s.Solve(amp.Conditions{}, m.NominalValues(), false, &hot); err != nil {
				t.Fatalf("solve: %v", err)
			}
			if err := s.ColdStart(d.Mains.Volts*(1+d.Mains.Tol.Hi), &cold); err != nil {
				t.Fatalf("cold start: %v", err)
			}
			for _, f := range m.RatingChecks(&hot, &cold) {
				t.Errorf("rating check: %s: %s: %s", f.Severity, f.Ref, f.Msg)
			}
			if lim, ok := firstNetRatio[tp.Name]; ok {
				// B+ at the first filter net as a multiple of the HT winding's rms volts.
				r := hot.Supply.Nets[0].Vdc / d.ByRef["T1"].PT.Winding("HT").Volts
				if r < lim[0] || r > lim[1] {
					t.Errorf("first filter net at %.3f × the winding's rms volts, want %.2f to %.2f", r, lim[0], lim[1])
				}
			}
			if m.HT != nil {
				for _, n := range hot.Supply.Nets {
					t.Logf("%s %.0f V %.1f mA", n.Net, n.Vdc, n.LoadAmps*1e3)
				}
			}
			for i, sec := range m.Sections {
				so := hot.Sections[i]
				t.Logf("%s%s Va %.0f Vk %.1f Vg %.1f Ia %.1f mA Pa %.1f W", sec.Ref, sec.Section, so.Va, so.Vk, so.Vg, so.Ia*1e3, so.Pa)
			}
		})
	}
}

// firstNetRatio bounds the first filter net's DC volts over the HT
// winding's rms volts (per half for a centre tap) for the supply templates.
// Choke input: at most 2√2/π = 0.900 less the winding, diode and choke
// drops (Radiotron Designer's Handbook, 4th ed., ch. 30, choke-input
// filters (from memory)). Capacitor input at a moderate load: between
// about 1.2 and the peak √2 = 1.414 less the diode drop (common practice).
var firstNetRatio = map[string][2]float64{
	"supply-choke-input": {0.80, 0.900},
	"supply-ct-crc":      {1.20, 1.41},
	"supply-ct-clc":      {1.20, 1.41},
	"supply-bridge-crc":  {1.20, 1.41},
	"supply-valve-rect":  {1.00, 1.41}, // a valve rectifier drops tens of volts more
}

func TestTemplateByName(t *testing.T) {
	if _, err := design.TemplateByName("se-cathode"); err != nil {
		t.Fatal(err)
	}
	_, err := design.TemplateByName("se-cathod")
	if err == nil || !strings.Contains(err.Error(), `did you mean "se-cathode"`) {
		t.Errorf("misspelled template: got %v, want a did-you-mean for se-cathode", err)
	}
	_, err = design.TemplateByName("wobbulator")
	if err == nil || !strings.Contains(err.Error(), "expected one of") {
		t.Errorf("unknown template: got %v, want the list of templates", err)
	}
}
