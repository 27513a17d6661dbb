package main

import (
	"bytes"
	"encoding/json"
	"strings"
	"testing"

	"pinwalk/expect/bands"
	"pinwalk/expect/design"
)

func TestRunColdExpect(t *testing.T) {
	for _, name := range []string{"se-6v6-stereo", "pp-el34-fixed", "bench-12ax7"} {
		d, probs := design.Load("../../testdata/designs/" + name + ".yaml")
		if len(probs.Errors()) > 0 {
			t.Fatal(probs)
		}
		var out, errb bytes.Buffer
		if code := runColdExpect(d, bands.DefaultMeter(), nil, false, &out, &errb); code != exitOK {
			t.Fatalf("%s: exit %d: %s", name, code, errb.String())
		}
		s := out.String()
		for _, w := range []string{"Unplug", "IEC 60065", "below 10 V", "one hand", "licensed practice", "Discharge after power-off"} {
			if !strings.Contains(strings.ToLower(s), strings.ToLower(w)) {
				t.Errorf("%s: text lacks %q", name, w)
			}
		}
		if name == "bench-12ax7" && !strings.Contains(s, "NO BLEED PATH") {
			t.Errorf("bench demo: no-bleeder warning missing")
		}
		out.Reset()
		if code := runColdExpect(d, bands.DefaultMeter(), nil, true, &out, &errb); code != exitOK {
			t.Fatalf("%s json: exit %d", name, code)
		}
		var rep struct {
			Cold      []map[string]any `json:"cold"`
			Discharge []map[string]any `json:"discharge"`
		}
		if err := json.Unmarshal(out.Bytes(), &rep); err != nil {
			t.Fatalf("%s: %v", name, err)
		}
		if len(rep.Cold) == 0 || len(rep.Discharge) == 0 {
			t.Errorf("%s: empty json arrays", name)
		}
	}
}
