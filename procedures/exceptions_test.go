package procedures

import (
	"math"
	"strconv"
	"strings"
	"testing"

	"pinwalk/expect/point"
)

// TestExceptionsListEverything: a bring-up of the stereo demo with a
// charged capacitor (a stop, cleared by a retake), an earth bond too high
// (a stop let through by an override), a cold grid reading far above its
// band and a skipped step. Every one of them is in Exceptions, by its
// label and its step's title, and in the Summary's "Needs a look" list,
// however many readings in band came after them. The thresholds are the
// stop rules of verdict.go: 10 V after discharge (common practice, below
// the 60 V DC hazardous-live level of IEC 62368-1) and 0.5 Ω earth pin to
// chassis (common practice for a bench continuity check).
func TestExceptionsListEverything(t *testing.T) {
	d := loadDesign(t, "se-6v6-stereo")
	w := newWalk(t, d, BringUp, "")
	c := NewController(w)
	r := w.R
	st, err := c.Do(Action{Kind: ActRefresh})
	if err != nil {
		t.Fatal(err)
	}
	did := map[string]bool{}
	do := func(a Action) {
		t.Helper()
		next, err := c.Do(a)
		if err != nil {
			t.Fatalf("on %s, %+v: %v", st.Step.ID, a, err)
		}
		st = next
	}
	for i := 0; i < 400 && !st.Finished; i++ {
		id := st.Step.ID
		switch {
		case st.Ask != nil:
			do(Action{Kind: ActConfirm})
		case id == "discharge-C3" && !did[id]:
			did[id] = true
			do(Action{Kind: ActRead, Text: "120"})
			if len(st.Stops) == 0 {
				t.Fatalf("120 V on C3 after discharge is not a stop")
			}
			do(Action{Kind: ActRetake, Text: "0"})
		case id == StepEarth && !did[id]:
			did[id] = true
			do(Action{Kind: ActRead, Text: "3"})
			if len(st.Stops) == 0 {
				t.Fatalf("3 Ω earth pin to chassis is not a stop")
			}
			do(Action{Kind: ActOverride, Reason: "bonded through the bench isolating transformer"})
		case id == "cold-cathode" && !did[id]:
			did[id] = true
			do(Action{Kind: ActSkip, Reason: "cathode resistors measured in the last service"})
		case st.Measure != nil:
			v := st.Band.Nominal
			if id == "cold-grid" && !did[id] {
				did[id] = true
				v = 10 * st.Band.High // a grid leak far too high: out of band
			}
			do(Action{Kind: ActRead, Text: strconv.FormatFloat(v, 'g', 6, 64) + "!"})
		default:
			do(Action{Kind: ActConfirm})
		}
	}
	if !st.Finished {
		t.Fatalf("the walk did not finish; on %s", st.Step.ID)
	}
	ex := Exceptions(r)
	find := func(kind, step, text string) bool {
		for _, e := range ex {
			if e.Kind == kind && strings.Contains(e.Step, step) && strings.Contains(e.Text, text) {
				return true
			}
		}
		return false
	}
	for _, want := range []struct{ kind, step, text string }{
		{"stop", "C3", "120 V"},
		{"stop", "earth", "3 Ω"},
		{"override", "earth", "bonded through the bench isolating transformer"},
		{"out of band", "grid", "expected"},
		{"skipped", "cathodes", "cathode resistors measured in the last service"},
	} {
		if !find(want.kind, want.step, want.text) {
			t.Errorf("exceptions lack the %s on %q (%q): %+v", want.kind, want.step, want.text, ex)
		}
	}
	// The retake that cleared the stop is in band: it is no exception.
	for _, e := range ex {
		if strings.Contains(e.Step, "C3") && e.Kind != "stop" {
			t.Errorf("the cleared C3 shows as %q: %+v", e.Kind, e)
		}
	}
	for _, e := range ex {
		t.Logf("%s: %s (%s)", e.Kind, e.Text, e.Step)
	}
	sum := strings.Join(Summary(r), "\n")
	head := "Needs a look (" + strconv.Itoa(len(ex)) + ")"
	if !strings.Contains(sum, head) {
		t.Errorf("summary lacks %q:\n%s", head, sum)
	}
	for _, e := range ex {
		if !strings.Contains(sum, e.Kind+": "+e.Text) {
			t.Errorf("summary lacks %s: %s", e.Kind, e.Text)
		}
	}
	if n := len(r.Sess.Readings); n < 40 {
		t.Errorf("only %d readings: the exceptions were not followed by a full walk", n)
	}
}

// A point no step of the procedure measures any more (read on a
// fault-finding step added for one suggestion) is still named in the
// model's words, never by its key: the after-repair step and the summary
// print it.
func TestLabelOfPointWithoutStep(t *testing.T) {
	d := loadDesign(t, "se-6v6-stereo")
	w := newWalk(t, d, BringUp, "")
	k := point.LiveKey("V3.8", "dc_volts")
	for _, st := range w.R.Proc.Steps {
		kept := st.Measures[:0]
		for _, m := range st.Measures {
			if m.Point != k {
				kept = append(kept, m)
			}
		}
		st.Measures = kept
	}
	if got := w.R.LabelOf(k); got != "V3 pin 8 cathode" {
		t.Errorf("label of %v with no step measuring it: %q, want the model's \"V3 pin 8 cathode\"", k, got)
	}
}

// An output cathode reading three times its band switches off (the safe
// call), and says both causes it can mean: a red-plating valve if the
// cathode resistor is whole, or an open cathode resistor with no current
// (the cathode floats up: Ohm's law no longer gives the current).
func TestHighCathodeSaysBothCauses(t *testing.T) {
	d := loadDesign(t, "se-6v6-stereo")
	b, err := NewBenchModel(d, BenchOptions{Samples: 40, Seed: 1})
	if err != nil {
		t.Fatal(err)
	}
	k := point.LiveKey("V3.8", "dc_volts")
	band, has := b.Expect(k, 1, nil)
	st := &Step{ID: "v3", Kind: KindLive, Live: true, Variac: 1}
	m := &Measure{Point: k, Label: "V3 pin 8 cathode"}
	j := b.judge(st, m, 53.1, band, has, nil)
	if j.Consequence != SwitchOff {
		t.Fatalf("V3 cathode 53.1 V (band %v – %v): %v, want switch off", band.Low, band.High, j.Consequence)
	}
	for _, want := range []string{"if its cathode resistor is whole", "open cathode resistor"} {
		if !strings.Contains(j.Said, want) {
			t.Errorf("the switch-off text does not say %q: %s", want, j.Said)
		}
	}
}

// The confirm step: a suspect resistor that reads within its own
// tolerance with one end lifted is not confirmed, and the walk stops
// before the replacement; a reading of open goes on.
func TestConfirmInToleranceStops(t *testing.T) {
	d := loadDesign(t, "se-6v6-stereo")
	b, err := NewBenchModel(d, BenchOptions{Samples: 40, Seed: 1})
	if err != nil {
		t.Fatal(err)
	}
	k := point.PartKey("R25")
	band, has := b.Expect(k, 0, nil)
	if !has {
		t.Fatal("no band for R25 out of circuit")
	}
	st := &Step{ID: StepConfirm, Kind: KindConfirm}
	m := &Measure{Point: k, Label: "R25 out of circuit"}
	if j := b.judge(st, m, 330, band, has, nil); j.Consequence != Stop || !strings.Contains(j.Said, "not confirmed") {
		t.Errorf("R25 reads 330 Ω (band %g – %g): %v %q, want a stop: not confirmed", band.Low, band.High, j.Consequence, j.Said)
	}
	if j := b.judge(st, m, math.Inf(1), band, has, nil); j.Consequence == Stop {
		t.Errorf("R25 reads open on the confirm step: %q, want it to go on", j.Said)
	}
}
