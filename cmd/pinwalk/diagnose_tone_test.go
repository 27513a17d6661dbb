package main

import (
	"encoding/json"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// TestDiagnoseTone: demo (a) with C11 (the coupling capacitor from V1A's
// plate to V2's grid) open: the DC volts are those of a healthy amp, but
// the tone stops at V1A's plate. Readings taken with a cheap
// average-responding meter specified to 400 Hz, which reads the 1 kHz
// tone about 6 % low (the model's single pole, see infer.ACMeter): the
// generator's 100 mV reads 92 mV, V1A's plate (gain about 13 with the
// 33 kΩ load alone) 1.19 V, V2's grid and plate and the speaker next to
// nothing.
func TestDiagnoseTone(t *testing.T) {
	dir := t.TempDir()
	f := filepath.Join(dir, "r.yaml")
	os.WriteFile(f, []byte("V1.7 tone: 92mV\n\"V1.6 tone_volts\": 1.19V\nV2.5 tone: 2mV\nV2.3 tone: 3mV\nOT1.speaker tone: 1mV\n"), 0o644)
	code, out, errOut := runCLI("diagnose", "--json", "--samples", "60", "--tone", "1kHz:100mV", "--ac-meter", "average", "--ac-bandwidth", "400Hz",
		"../../testdata/designs/se-6v6-stereo.yaml", "--readings", f)
	if code != exitOK {
		t.Fatalf("exit %d: %s", code, errOut)
	}
	var doc struct {
		Suspects []struct {
			Part, Mode  string
			Probability float64
		}
		ACMeter string `json:"ac_meter"`
	}
	if err := json.Unmarshal([]byte(out), &doc); err != nil {
		t.Fatal(err)
	}
	if len(doc.Suspects) == 0 || doc.Suspects[0].Part != "C11" || doc.Suspects[0].Mode != "open" {
		t.Fatalf("suspects %+v: want C11 open first", doc.Suspects)
	}
	if !strings.Contains(doc.ACMeter, "average-responding") || !strings.Contains(doc.ACMeter, "6 % low") {
		t.Errorf("ac_meter note %q: want the response and the bandwidth correction", doc.ACMeter)
	}
	// A tone reading without --tone is an error naming the line.
	code, _, errOut = runCLI("diagnose", "--samples", "20", "../../testdata/designs/se-6v6-stereo.yaml", "--readings", f)
	if code != exitProblems || !strings.Contains(errOut, "r.yaml:1:") || !strings.Contains(errOut, "--tone") {
		t.Errorf("tone reading without --tone: exit %d, stderr %q", code, errOut)
	}
	code, _, errOut = runCLI("diagnose", "--ac-meter", "peak", "--readings", f, "../../testdata/designs/se-6v6-stereo.yaml")
	if code != exitUsage || !strings.Contains(errOut, "true-rms or average") {
		t.Errorf("bad --ac-meter: exit %d, stderr %q", code, errOut)
	}
}
