package main

import (
	"encoding/json"
	"path/filepath"
	"regexp"
	"strings"
	"testing"

	"pinwalk/expect/amp"
	"pinwalk/expect/design"
)

type expectDoc struct {
	Conditions struct {
		Variac float64  `json:"variac"`
		Faults []string `json:"faults"`
	} `json:"conditions"`
	Samples      int    `json:"samples"`
	Failed       int    `json:"failed"`
	Meter        string `json:"meter"`
	MeterLoading []struct {
		ID        string  `json:"id"`
		ChangePct float64 `json:"change_pct"`
	} `json:"meter_loading"`
	Points []struct {
		ID, Quantity       string
		Nominal, Low, High float64
	} `json:"points"`
}

func expectJSON(t *testing.T, args ...string) expectDoc {
	t.Helper()
	code, out, errOut := runCLI(append([]string{"expect", "--json"}, args...)...)
	if code != exitOK {
		t.Fatalf("expect %v: exit %d: %s", args, code, errOut)
	}
	var doc expectDoc
	if err := json.Unmarshal([]byte(out), &doc); err != nil {
		t.Fatal(err)
	}
	return doc
}

func point(doc expectDoc, id, q string) (nom, lo, hi float64, ok bool) {
	for _, p := range doc.Points {
		if p.ID == id && p.Quantity == q {
			return p.Nominal, p.Low, p.High, true
		}
	}
	return 0, 0, 0, false
}

// Bands are real (low < nominal < high for a plate), samples are
// reported, and flags may follow the design.
func TestExpectBandsJSON(t *testing.T) {
	doc := expectJSON(t, "demo", "--samples", "300", "--seed", "4")
	if doc.Samples != 300 || doc.Failed != 0 {
		t.Fatalf("samples %d failed %d", doc.Samples, doc.Failed)
	}
	nom, lo, hi, ok := point(doc, "V2.3", "dc_volts")
	if !ok || !(lo < nom && nom < hi) || hi-lo < 0.03*nom {
		t.Errorf("V2.3 plate band %g – %g around %g", lo, hi, nom)
	}
}

// A fault changes the expectations: an open output-valve grid leak in the
// PP demo (R30) leaves V3's grid without its negative bias, so V3 draws far
// more current (common practice: a lost bias feed makes the valve run
// away), and a 1 MΩ meter range visibly pulls the phase inverter's grids.
func TestExpectFaultAndMeter(t *testing.T) {
	ok := expectJSON(t, "--samples", "100", "demo:pp-el34-fixed")
	bad := expectJSON(t, "--samples", "100", "--fault", "R30:open", "--meter", "20k/V:50V", "demo:pp-el34-fixed")
	if len(bad.Conditions.Faults) != 1 || bad.Conditions.Faults[0] != "R30:open" {
		t.Errorf("faults %v", bad.Conditions.Faults)
	}
	n0, _, _, _ := point(ok, "V3.3", "dc_amps")
	n1, _, _, _ := point(bad, "V3.3", "dc_amps")
	if !(n1 > 2*n0) {
		t.Errorf("V3 plate current %g A with R30 open, %g A healthy", n1, n0)
	}
	if !strings.Contains(bad.Meter, "50 V range") {
		t.Errorf("meter %q", bad.Meter)
	}
	found := false
	for _, l := range bad.MeterLoading {
		if l.ID == "PIG1" && l.ChangePct < -50 {
			found = true
		}
	}
	if !found {
		t.Errorf("PIG1 not listed as pulled down by a 1 MΩ meter: %+v", bad.MeterLoading)
	}
}

func TestExpectBadFlags(t *testing.T) {
	for _, args := range [][]string{
		{"expect", "--fault", "R99:open", "demo"},
		{"expect", "--fault", "R11:opn", "demo"},
		{"expect", "--variac", "0", "demo"},
		{"expect", "--meter", "20k/V", "demo"},
		{"expect", "--samples", "-1", "demo"},
	} {
		code, _, errOut := runCLI(args...)
		if code != exitUsage || errOut == "" {
			t.Errorf("%v: exit %d, stderr %q", args, code, errOut)
		}
	}
}

// The variac steps and a single setting: at 25 % the demo's B1 sits near
// its switch-on peak and the output valves barely conduct.
func TestExpectVariac(t *testing.T) {
	doc := expectJSON(t, "--variac", "25", "--samples", "50", "demo")
	if doc.Conditions.Variac != 0.25 {
		t.Errorf("variac %g", doc.Conditions.Variac)
	}
	if ia, _, _, _ := point(doc, "V2.3", "dc_amps"); ia > 1e-4 {
		t.Errorf("V2 plate current %g A at 25 %% variac", ia)
	}
	code, out, errOut := runCLI("expect", "--variac", "steps", "--samples", "20", "demo")
	if code != exitOK || !strings.Contains(out, "Variac 25%") || !strings.Contains(out, "Variac 100%") || !strings.Contains(out, "DANGER") {
		t.Errorf("steps: exit %d\n%s%s", code, out, errOut)
	}
}

// snakeKey is a JSON key in snake_case: lower-case words joined by "_".
var snakeKey = regexp.MustCompile(`^[a-z0-9]+(_[a-z0-9]+)*$`)

// badKeys returns every object key in a decoded JSON value that is not
// snake_case, with its path.
func badKeys(v any, at string) []string {
	var bad []string
	switch x := v.(type) {
	case map[string]any:
		for k, e := range x {
			if !snakeKey.MatchString(k) {
				bad = append(bad, at+"."+k)
			}
			bad = append(bad, badKeys(e, at+"."+k)...)
		}
	case []any:
		for _, e := range x {
			bad = append(bad, badKeys(e, at+"[]")...)
		}
	}
	return bad
}

// Every key of every expect --json shape is snake_case, heater windings
// included.
func TestExpectJSONSnakeCase(t *testing.T) {
	for _, args := range [][]string{
		{"demo", "--samples", "20"},
		{"demo", "--samples", "0"},
		{"demo:pp-el34-fixed", "--samples", "20", "--tone", "1kHz:100mV"},
		{"demo", "--samples", "20", "--variac", "steps"},
		{"demo", "--cold"},
	} {
		code, out, errOut := runCLI(append([]string{"expect", "--json"}, args...)...)
		if code != exitOK {
			t.Fatalf("expect --json %v: exit %d: %s", args, code, errOut)
		}
		var doc any
		if err := json.Unmarshal([]byte(out), &doc); err != nil {
			t.Fatalf("expect --json %v: %v", args, err)
		}
		if bad := badKeys(doc, ""); len(bad) > 0 {
			t.Errorf("expect --json %v: keys not snake_case: %v", args, bad)
		}
		if args[len(args)-1] == "20" && !strings.Contains(out, `"heater_windings"`) {
			t.Errorf("expect --json %v: no heater_windings", args)
		} else if strings.Contains(out, `"heater_windings"`) && !strings.Contains(out, `"rated_amps"`) {
			t.Errorf("expect --json %v: heater windings without rated_amps", args)
		}
	}
}

// With --samples 0 there are no bands, and no empty band brackets or
// trailing blanks where a band would be.
func TestExpectNominalOnlyText(t *testing.T) {
	code, out, errOut := runCLI("expect", "demo", "--samples", "0")
	if code != exitOK {
		t.Fatalf("exit %d: %s", code, errOut)
	}
	for i, l := range strings.Split(out, "\n") {
		if strings.Contains(l, "()") || strings.HasSuffix(l, " ") {
			t.Errorf("line %d: %q: an empty band", i+1, l)
		}
	}
	if !strings.Contains(out, "B1 ") || !strings.Contains(out, "DC volts") {
		t.Errorf("supply lines missing:\n%s", out)
	}
}

// Every band says why it is as wide as it is; the meter's accuracy and
// counts are settable; ripple is read on the AC function with its
// peak-to-peak band beside it; a current's band never goes below zero.
func TestExpectReadingBands(t *testing.T) {
	code, out, errOut := runCLI("expect", "--json", "--samples", "100", "--meter-accuracy", "1%+5", "--meter-counts", "2000", "demo:pp-el34-fixed")
	if code != exitOK {
		t.Fatalf("exit %d: %s", code, errOut)
	}
	var doc struct {
		MeterAccuracy string `json:"meter_accuracy"`
		Points        []struct {
			ID, Quantity, Function string
			Low, High              float64
			Why                    []string
			PP                     *struct{ Low, High float64 } `json:"peak_to_peak"`
		} `json:"points"`
	}
	if err := json.Unmarshal([]byte(out), &doc); err != nil {
		t.Fatal(err)
	}
	if doc.MeterAccuracy != "DC volts 1 % + 5 digits, 2000 counts" {
		t.Errorf("meter accuracy %q", doc.MeterAccuracy)
	}
	seen := 0
	for _, p := range doc.Points {
		if len(p.Why) == 0 || p.Function == "" {
			t.Errorf("%s %s: no why or function", p.ID, p.Quantity)
		}
		if p.Quantity == "dc_amps" && p.Low < 0 {
			t.Errorf("%s current band starts at %g", p.ID, p.Low)
		}
		if p.ID == "V3.3" && p.Quantity == "dc_volts" {
			seen++
			if !strings.Contains(strings.Join(p.Why, ";"), "meter 1 % + 5 digits on the 1 kV range (2000 counts") {
				t.Errorf("V3.3 why %q", p.Why)
			}
		}
		if p.ID == "B1" && p.Quantity == "ripple_volts" {
			seen++
			if p.Function != "AC volts (true rms)" || p.PP == nil || !(p.PP.High > p.High) {
				t.Errorf("B1 ripple %+v", p)
			}
		}
	}
	if seen != 2 {
		t.Errorf("V3.3 or B1 ripple missing")
	}
	for _, bad := range []string{"--meter-accuracy=0.5", "--meter-counts=10"} {
		if code, _, _ := runCLI("expect", bad, "demo"); code != exitUsage {
			t.Errorf("%s: exit %d", bad, code)
		}
	}
}

// --variac steps lists every socket pin's DC volts at every step, in a
// table within 100 columns, and in --json.
func TestExpectVariacStepsEveryPin(t *testing.T) {
	code, out, errOut := runCLI("expect", "--variac", "steps", "--samples", "30", "demo:pp-el34-fixed")
	if code != exitOK {
		t.Fatalf("exit %d: %s", code, errOut)
	}
	for _, l := range strings.Split(out, "\n") {
		if n := len([]rune(l)); n > 100 {
			t.Errorf("line of %d columns: %q", n, l)
		}
	}
	for _, want := range []string{"V3 pin 3 plate", "V1 pin 8 cathode A", "V2 pin 7 grid A", "variac 25%", "variac 100%"} {
		if !strings.Contains(out, want) {
			t.Errorf("steps table lacks %q", want)
		}
	}
	code, js, errOut := runCLI("expect", "--json", "--variac", "steps", "--samples", "30", "demo:pp-el34-fixed")
	if code != exitOK {
		t.Fatalf("json: exit %d: %s", code, errOut)
	}
	var doc struct {
		Steps []struct {
			Variac float64
			Points []struct{ ID, Quantity string }
		} `json:"variac_steps"`
	}
	if err := json.Unmarshal([]byte(js), &doc); err != nil {
		t.Fatal(err)
	}
	if len(doc.Steps) != 4 {
		t.Fatalf("%d steps", len(doc.Steps))
	}
	for _, st := range doc.Steps {
		pins := map[string]bool{}
		for _, p := range st.Points {
			if p.Quantity == "dc_volts" {
				pins[p.ID] = true
			}
		}
		for _, id := range []string{"V3.3", "V3.4", "V3.5", "V3.8", "V1.6", "V2.2", "V9.2"} {
			if !pins[id] {
				t.Errorf("variac %g: no DC volts for %s", st.Variac, id)
			}
		}
	}
}

// Every demo: every socket pin the model gives DC volts for (amp.Model
// Points with a valve) is in the steps table by its label, and in the
// JSON at every one of the four steps — not only the supply nets.
func TestExpectVariacStepsListEveryPinOfEveryDemo(t *testing.T) {
	files, err := filepath.Glob("../../testdata/designs/*.yaml")
	if err != nil || len(files) == 0 {
		t.Fatalf("no demo designs: %v", err)
	}
	for _, path := range files {
		d, probs := design.Load(path)
		if d == nil || len(probs.Errors()) > 0 {
			t.Fatalf("%s: %v", path, probs.Errors())
		}
		m, err := amp.Build(d)
		if err != nil {
			t.Fatal(err)
		}
		var pins []amp.PointDef
		for _, pd := range m.Points() {
			if pd.Valve != "" && pd.Quantity == amp.DCVolts {
				pins = append(pins, pd)
			}
		}
		code, out, errOut := runCLI("expect", "--variac", "steps", "--samples", "20", path)
		if code != exitOK {
			t.Fatalf("%s: exit %d: %s", path, code, errOut)
		}
		for _, pd := range pins {
			if !strings.Contains(out, pd.Label) {
				t.Errorf("%s: the steps table lacks %s (%s)", path, pd.Label, pd.Key())
			}
		}
		code, js, errOut := runCLI("expect", "--json", "--variac", "steps", "--samples", "20", path)
		if code != exitOK {
			t.Fatalf("%s json: exit %d: %s", path, code, errOut)
		}
		var doc struct {
			Steps []struct {
				Variac float64
				Points []struct{ ID, Quantity string }
			} `json:"variac_steps"`
		}
		if err := json.Unmarshal([]byte(js), &doc); err != nil {
			t.Fatal(err)
		}
		if len(doc.Steps) != 4 {
			t.Fatalf("%s: %d steps, want 25/50/75/100 %%", path, len(doc.Steps))
		}
		for _, st := range doc.Steps {
			have := map[string]bool{}
			for _, p := range st.Points {
				have[p.ID+" "+p.Quantity] = true
			}
			missing := 0
			for _, pd := range pins {
				if !have[pd.Key()] {
					missing++
					if missing <= 3 {
						t.Errorf("%s at %g: no %s", path, st.Variac, pd.Key())
					}
				}
			}
			if missing > 0 {
				t.Errorf("%s at %g: %d of %d pins missing", path, st.Variac, missing, len(pins))
			}
		}
	}
}
