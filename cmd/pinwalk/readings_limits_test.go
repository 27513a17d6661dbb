package main

import (
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// TestReadingsFileLimits: each readings file holds one thing no bench can
// have read, and the parser says which line and what was expected. The
// rules are physics or common sense, none from a source:
//   - one point has one reading; two for the same point leave the user to
//     say which one to keep (common sense);
//   - a reading is a finite number within what a bench meter shows on a
//     valve amplifier (B+ is a few kilovolts at most, common practice);
//   - a resistance is 0 Ω or more (Ohm's law on a passive part: a negative
//     display means something is driving the ohmmeter);
//   - a meter's input resistance is a positive resistance (a 10 MΩ digital
//     meter is common practice).
func TestReadingsFileLimits(t *testing.T) {
	const f = "r.yaml"
	cases := []struct {
		name, data string
		want       string // the first error, whole
	}{
		{"duplicate point", "V2.3: 245V\nB1: 300V\nV2.1: 1.2V\nV2.3: 250V\n",
			`r.yaml:4: V2.3: read twice, at line 1 and line 4: expected one reading per point (keep the one you trust)`},
		{"duplicate cold point", "cold:B1: open\ncold:B1: 220k\n",
			`r.yaml:2: cold:B1: read twice, at line 1 and line 2: expected one reading per point (keep the one you trust)`},
		{"overflowing volts", "B1: 1e200V\n",
			`r.yaml:1: B1: "1e200V": expected a finite reading in volts within ±10 kV`},
		{"volts beyond a bench", "B1: 200kV\n",
			`r.yaml:1: B1: "200kV": expected a finite reading in volts within ±10 kV`},
		{"past float64", "B1: 1e400\n",
			`r.yaml:1: B1: "1e400": value out of range: the largest magnitude is about 1.8e308`},
		{"inf volts", "B1: inf\n",
			`r.yaml:1: B1: "inf": expected a number with an optional SI prefix or RKM code (4K7, 470R, 100n)`},
		{"YAML inf", "B1: .inf\n",
			`r.yaml:1: B1: ".inf": expected a number with an optional SI prefix or RKM code (4K7, 470R, 100n)`},
		{"NaN volts", "B1: NaN\n",
			`r.yaml:1: B1: "NaN": expected a number with an optional SI prefix or RKM code (4K7, 470R, 100n)`},
		{"NaN amps", "\"V3.8 dc_amps\": NaN\n",
			`r.yaml:1: V3.8 dc_amps: "NaN": expected a number with an optional SI prefix or RKM code (4K7, 470R, 100n)`},
		{"amps beyond a bench", "\"V3.8 dc_amps\": 2kA\n",
			`r.yaml:1: V3.8 dc_amps: "2kA": expected a finite reading in amps within ±100 A`},
		{"negative cold ohms", "cold:B1: -220k\n",
			`r.yaml:1: cold:B1: "-220k": expected a resistance of 0 Ω or more, or open (an ohmmeter shows a negative value when a charged capacitor or a live circuit drives it: power off, discharge, and measure again)`},
		{"meter negative", "conditions:\n  meter: -5M\nB1: 300V\n",
			`r.yaml:2: conditions: meter "-5M": expected a digital meter's input resistance like 10M, or an analogue meter like 20k/V:500V`},
		{"meter zero", "conditions: {meter: 0}\n",
			`r.yaml:1: conditions: meter "0": expected a digital meter's input resistance like 10M, or an analogue meter like 20k/V:500V`},
		{"meter garbage", "conditions: {meter: fluffy}\n",
			`r.yaml:1: conditions: meter "fluffy": expected a digital meter's input resistance like 10M, or an analogue meter like 20k/V:500V`},
		{"meter NaN", "conditions: {meter: NaN}\n",
			`r.yaml:1: conditions: meter "NaN": expected a digital meter's input resistance like 10M, or an analogue meter like 20k/V:500V`},
		{"same point by two names", "B1: 300V\n\"B1 dc_volts\": 301V\n",
			`r.yaml:2: B1 dc_volts: read twice, at line 1 and line 2: expected one reading per point (keep the one you trust)`},
		{"cold ohms beyond a bench", "cold:B1: 20G\n",
			`r.yaml:1: cold:B1: "20G": expected a resistance up to 10 GΩ, or open for a reading beyond the meter's range (OL)`},
		{"negative ripple", "\"B1 ripple\": -2V\n",
			`r.yaml:1: B1 ripple: "-2V": expected an AC reading of 0 or more (a meter's AC range shows the size of the swing, never a sign)`},
		{"negative AC amps", "\"V3.8 ac_amps\": -5mA\n",
			`r.yaml:1: V3.8 ac_amps: "-5mA": expected an AC reading of 0 or more (a meter's AC range shows the size of the swing, never a sign)`},
		{"meter empty", "conditions:\n  meter:\nB1: 300V\n",
			`r.yaml:2: conditions: meter is empty: expected the meter's input resistance, like 10M, or an analogue meter like 20k/V:500V`},
		{"meter set twice", "conditions:\n  meter: 10M\n  mains: 230V\n  meter: 1M\n",
			`r.yaml:4: conditions: meter set twice, at line 2 and line 4: expected it once (keep the one that was true at the bench)`},
		{"conditions twice", "conditions: {meter: 10M}\nB1: 300V\nconditions: {mains: 230V}\n",
			"r.yaml:3: conditions: given twice, at line 1 and line 3: expected one `conditions:` mapping (put mains, variac and meter in it together)"},
		{"meter at the top level", "B1: 300V\nmeter: -5M\n",
			"r.yaml:2: meter: a setting, not a point: expected it under `conditions:`, like `conditions: {meter: 10M}`"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			_, errs := parseReadingsFile(f, []byte(c.data))
			if len(errs) == 0 {
				t.Fatalf("%q: no error, want %q", c.data, c.want)
			}
			if errs[0] != c.want {
				t.Errorf("%q:\n got %q\nwant %q", c.data, errs[0], c.want)
			}
		})
	}
}

// TestDiagnoseRejectsBadReadings: a readings file with an impossible value
// stops diagnose before any ranking, so no band or suspect is ever shown
// for it.
func TestDiagnoseRejectsBadReadings(t *testing.T) {
	dir := t.TempDir()
	for _, data := range []string{"V2.6: 1e200V\n", "V2.6: NaN\n", "cold:PIB: -3k\n", "conditions: {meter: -5M}\nV2.6: 0.2V\n"} {
		p := filepath.Join(dir, "r.yaml")
		if err := os.WriteFile(p, []byte(data), 0o644); err != nil {
			t.Fatal(err)
		}
		code, out, errOut := runCLI("diagnose", "--samples", "10", "../../testdata/designs/pp-el34-fixed.yaml", "--readings", p)
		if code != exitProblems || out != "" || !strings.HasPrefix(errOut, p+":") || strings.Contains(errOut, "healthy") {
			t.Errorf("%q: exit %d, stdout %q, stderr %q: want exit %d, nothing on stdout, an error naming %s:LINE", data, code, out, errOut, exitProblems, p)
		}
	}
}

// TestReadingsFileWithinLimits: the limits leave every real reading alone:
// a short (0 Ω), an open, a negative grid bias, no ripple at all, a
// 10 kΩ/V analogue meter on its 1 kV range, a 1 GΩ insulation reading.
func TestReadingsFileWithinLimits(t *testing.T) {
	data := "conditions:\n  meter: 10k/V:1000V\n  mains: 230V\n" +
		"cold:B1: 0\ncold:PIB: open\n\"cold:V3.8\": 1G\nV3.5: -38V\n\"B1 ripple\": 0V\n\"V3.8 dc_amps\": 45mA\nB2: 9.9kV\n"
	rf, errs := parseReadingsFile("r.yaml", []byte(data))
	if len(errs) > 0 {
		t.Fatalf("errors on good readings: %q", errs)
	}
	if len(rf.readings) != 7 || rf.meter != "10k/V:1000V" || rf.cond.MainsVolts != 230 {
		t.Errorf("got %d readings, meter %q, mains %g: want 7, 10k/V:1000V, 230", len(rf.readings), rf.meter, rf.cond.MainsVolts)
	}
}
