package main

import (
	"regexp"
	"strconv"
	"strings"
	"testing"

	"pinwalk/expect/units"
)

// TestExpectToneClips: 1 V rms into the push-pull EL34 demo would give
// kilovolts at its plates and about 860 V at the speaker if every stage
// stayed linear. The report names the clipping stages and gives a speaker
// level the output stage can deliver: at most 2·B+·√(8 Ω / 3k4)/√2, about
// 30 V rms with its plates near 440 V (see expect/ac's clip test for the
// hand calculation).
func TestExpectToneClips(t *testing.T) {
	code, out, errOut := runCLI("expect", "--samples", "0", "--tone", "1kHz:1V", "../../testdata/designs/pp-el34-fixed.yaml")
	if code != exitOK {
		t.Fatalf("exit %d: %s", code, errOut)
	}
	if !strings.Contains(out, "note: stage V3 clips at about") || !strings.Contains(out, "the signal beyond it is limited") {
		t.Errorf("no clip note for the output stage:\n%s", out)
	}
	m := regexp.MustCompile(`OT1 speaker terminals \(8 Ω load\)\s+(\S+ \S*V)`).FindStringSubmatch(out)
	if m == nil {
		t.Fatalf("no speaker line:\n%s", out)
	}
	v, err := units.Parse(strings.ReplaceAll(m[1], " ", ""), units.Volts)
	if err != nil {
		t.Fatalf("speaker %q: %v", m[1], err)
	}
	if v <= 0 || v > 31 {
		t.Errorf("speaker %s (%s V): want finite and at most about 30 V rms", m[1], strconv.FormatFloat(v, 'g', 4, 64))
	}
	code, out, _ = runCLI("expect", "--samples", "0", "--json", "--tone", "1kHz:1V", "../../testdata/designs/pp-el34-fixed.yaml")
	if code != exitOK || !strings.Contains(out, `"tone_clips"`) {
		t.Errorf("JSON report has no tone_clips (exit %d)", code)
	}
}
