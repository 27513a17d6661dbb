package main

import (
	"encoding/json"
	"math"
	"testing"
)

// `expect --variac steps` lists a diode bias supply's reservoir with the
// HT nets, and it falls with the variac as a peak-rectified winding does:
// each step's magnitude about f·(V + Vd) − Vd of the full-mains one (the
// closed form of a peak rectifier, common practice; within 3 %, the
// conduction-angle loss scaling with it).
func TestExpectVariacStepsBias(t *testing.T) {
	code, out, errOut := runCLI("expect", "--variac", "steps", "--samples", "20", "--json", "../../expect/design/templates/pp-diode-bias.yaml")
	if code != exitOK {
		t.Fatalf("exit %d: %s", code, errOut)
	}
	var doc struct {
		Steps []struct {
			Variac float64 `json:"variac"`
			Points []struct {
				ID      string  `json:"id"`
				Nominal float64 `json:"nominal"`
			} `json:"points"`
		} `json:"variac_steps"`
	}
	if err := json.Unmarshal([]byte(out), &doc); err != nil {
		t.Fatalf("%v\n%s", err, out)
	}
	nbr := map[float64]float64{}
	for _, st := range doc.Steps {
		for _, p := range st.Points {
			if p.ID == "NBR" {
				nbr[st.Variac] = p.Nominal
			}
		}
	}
	full, ok := nbr[1]
	if len(nbr) != 4 || !ok || full > -10 {
		t.Fatalf("NBR per step %v, want four negative readings", nbr)
	}
	const vd = 0.6 // a silicon diode's drop at a few mA (common practice)
	for f, v := range nbr {
		want := -(f*(-full+vd) - vd)
		t.Logf("variac %.0f %%: NBR %.2f V, closed form %.2f V", 100*f, v, want)
		if math.Abs(v-want) > 0.03*math.Abs(want) {
			t.Errorf("variac %.0f %%: NBR %.2f V, want about %.2f V", 100*f, v, want)
		}
	}
}
