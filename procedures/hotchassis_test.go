package procedures

import (
	"errors"
	"math"
	"strconv"
	"strings"
	"testing"

	"pinwalk/expect/design"
	"pinwalk/expect/point"
)

// acdcDesign is the transformerless template: a 35W4 half-wave off the
// mains, the chassis on the neutral, a two-pin inlet.
func acdcDesign(t *testing.T) *design.Design {
	t.Helper()
	return templateDesign(t, "acdc-phono")
}

// answer is what a careful technician types at a step: the band's
// nominal (a discharged capacitor, a sound insulation test), or a
// confirmation. It never confirms the isolation-transformer step.
func answer(st State) Action {
	if st.Measure == nil {
		return Action{Kind: ActConfirm}
	}
	v := st.Band.Nominal
	if st.Measure.Point.Domain == point.Discharge {
		v = 0.3
	}
	if math.IsInf(v, 1) {
		return Action{Kind: ActRead, Text: "OL"}
	}
	return Action{Kind: ActRead, Text: strconv.FormatFloat(v, 'g', 6, 64) + "!"}
}

// walkTo drives the controller with careful answers until the current
// step is the isolation-transformer step, and fails if it never comes.
func walkTo(t *testing.T, c *Controller, id string) State {
	t.Helper()
	st, _ := c.Do(Action{Kind: ActRefresh})
	for i := 0; i < 200 && !st.Finished; i++ {
		if st.Step != nil && st.Step.ID == id {
			return st
		}
		if st.Step != nil && st.Step.Kind == KindSymptoms && len(c.Runner().Sess.Symptoms) == 0 {
			st, _ = c.Do(Action{Kind: ActSymptoms, Text: "no-sound"})
			continue
		}
		var err error
		if st, err = c.Do(answer(st)); err != nil {
			if st.Mode == FaultFind && st.Measure == nil {
				// the measuring loop's confirm: power up when it asks
				st, _ = c.Do(Action{Kind: ActPowerUp})
				continue
			}
			t.Fatalf("at %v: %v", st.Step, err)
		}
	}
	t.Fatalf("never reached step %s (at %v)", id, st.Step)
	return st
}

// TestIsolationTransformerRule: on the hot-chassis template, in every
// mode that powers the amp, a scripted technician reaches the isolation
// step; skipping it, overriding it, jumping to a live step and entering a
// reading on a live step are all refused by the controller, with the
// isolation transformer named; once confirmed, the first live step
// starts. Every live step carries the live-chassis caution (the rule
// asked of the task; common practice: IEC 61010-1 and every service
// manual of transformerless sets ask for an isolation transformer, from
// memory).
func TestIsolationTransformerRule(t *testing.T) {
	d := acdcDesign(t)
	if hot, why := d.HotChassis(); !hot {
		t.Fatal("the acdc-phono template is not recognised as hot-chassis")
	} else if !strings.Contains(why, "no power transformer") || !strings.Contains(why, "neutral") {
		t.Errorf("reason %q: want the missing power transformer and the chassis on the neutral", why)
	}
	b, err := NewBenchModel(d, BenchOptions{Samples: 40, Seed: 1})
	if err != nil {
		t.Fatal(err)
	}
	for _, mode := range []Mode{BringUp, Training, FaultFind, Signal} {
		t.Run(string(mode), func(t *testing.T) {
			s := NewSession(d, mode, 1, fixedNow)
			w, err := openWith(b, s, "", WalkOptions{Samples: 40, Seed: 1, Now: clock()})
			if err != nil {
				t.Fatal(err)
			}
			c := NewController(w)
			r := c.Runner()
			if r.Proc.HotChassis == "" || r.Proc.Step(StepIsolation) == nil {
				t.Fatalf("procedure has no isolation step (hot chassis %q)", r.Proc.HotChassis)
			}
			st := walkTo(t, c, StepIsolation)
			if !strings.Contains(st.Step.Instruction, "autotransformer and does NOT isolate") {
				t.Errorf("the isolation step does not say a variac does not isolate: %q", st.Step.Instruction)
			}
			if _, err := c.Do(Action{Kind: ActSkip, Reason: "no isolation transformer on this bench"}); err == nil {
				t.Errorf("the isolation step was skipped")
			}
			if _, err := c.Do(Action{Kind: ActOverride, Reason: "I know what I am doing here"}); err == nil {
				t.Errorf("the isolation step was overridden")
			}
			if mode == FaultFind {
				// the measuring loop's power-up is the live step
				if _, err := c.Do(Action{Kind: ActPowerUp}); err != nil {
					t.Fatalf("power: %v", err)
				}
			}
			live := -1
			for i, ps := range r.Proc.Steps {
				if ps.Live {
					if !ps.HasCaution(hotChassisMark) {
						t.Errorf("live step %s lacks the live-chassis caution", ps.ID)
					}
					if live < 0 && ps.Kind != KindPowerDown {
						live = i
					}
				}
			}
			if live < 0 {
				t.Fatal("no live step")
			}
			ls := r.Proc.Steps[live]
			if live < r.Proc.Index(StepIsolation) {
				t.Errorf("live step %s comes before the isolation step", ls.ID)
			}
			err = r.Goto(ls.ID)
			var ge *GateError
			if !errors.As(err, &ge) || !strings.Contains(strings.Join(ge.Blockers, "; "), "isolation transformer") {
				t.Errorf("goto %s before the isolation transformer: %v, want a gate naming it", ls.ID, err)
			}
			// Forced onto the live step (as a damaged session file
			// could), the controller still takes no reading and no
			// confirmation there.
			r.cur = live
			if _, err := c.Do(Action{Kind: ActRead, Text: "120!"}); !errors.Is(err, ErrGated) {
				t.Errorf("a reading on %s before the isolation transformer: %v, want refused", ls.ID, err)
			}
			r.cur = live
			if _, err := c.Do(Action{Kind: ActConfirm}); err == nil || r.Done(ls.ID) {
				t.Errorf("%s was confirmed before the isolation transformer (%v)", ls.ID, err)
			}
			if r.Done(StepIsolation) {
				t.Fatalf("the isolation step is done without its confirmation")
			}
			if st := r.Current(); st == nil || st.ID != StepIsolation {
				t.Errorf("after the refusal the walk is on %v, want the isolation step", st)
			}
			for _, rd := range r.Sess.Readings {
				if rd.Step == ls.ID {
					t.Errorf("a reading was recorded on %s: %+v", ls.ID, rd)
				}
			}
			// Confirmed: the live step opens.
			if _, err := c.Do(Action{Kind: ActConfirm}); err != nil {
				t.Fatalf("confirm the isolation transformer: %v", err)
			}
			if b := r.Blockers(ls); len(b) > 0 {
				t.Errorf("after the isolation transformer, %s is still blocked by %v", ls.ID, b)
			}
		})
	}
}

// TestInsulationStopOnTwoPin: a two-pin set has no earth pin, so its
// earth step is an insulation test from the mains pins to exposed metal
// (2 MΩ, the class II in-service limit of the IET Code of Practice, 5th
// ed., from memory). A reading of 500 kΩ stops the walk: no skip, no
// override, no live step; a retake at 500 MΩ clears it.
func TestInsulationStopOnTwoPin(t *testing.T) {
	d := acdcDesign(t)
	if !d.TwoPin() {
		t.Fatal("the acdc-phono template is not two-pin")
	}
	w := newWalk(t, d, BringUp, "")
	c := NewController(w)
	r := c.Runner()
	st := walkTo(t, c, StepEarth)
	if st.Measure == nil || st.Measure.Point != InsulationKey {
		t.Fatalf("earth step of a two-pin set measures %v, want %v", st.Measure, InsulationKey)
	}
	st, err := c.Do(Action{Kind: ActRead, Text: "500k"})
	if err != nil {
		t.Fatal(err)
	}
	if st.Last == nil || st.Last.Reading.Consequence != Stop || len(st.Stops) != 1 {
		t.Fatalf("500 kΩ insulation: %+v, want a stop in force", st.Last)
	}
	if !strings.Contains(st.Last.Reading.Said, "cannot be overridden") {
		t.Errorf("stop text %q", st.Last.Reading.Said)
	}
	if _, err := c.Do(Action{Kind: ActOverride, Reason: "customer wants it back today"}); err == nil {
		t.Errorf("a low insulation reading was overridden")
	}
	if _, err := c.Do(Action{Kind: ActSkip, Reason: "no insulation tester here"}); err == nil {
		t.Errorf("the insulation test was skipped")
	}
	for _, ps := range r.Proc.Steps {
		if ps.Live && ps.Kind != KindPowerDown && len(r.Blockers(ps)) == 0 {
			t.Errorf("live step %s can start with the insulation stop in force", ps.ID)
		}
	}
	st, err = c.Do(Action{Kind: ActRetake, Text: "500M"})
	if err != nil {
		t.Fatal(err)
	}
	if len(st.Stops) != 0 {
		t.Errorf("a 500 MΩ retake left stops %v", st.Stops)
	}
}

// TestEarthedSetsKeepEarthStep: the demos (three-pin, with a power
// transformer) are not hot-chassis and keep the earth-bond check.
func TestEarthedSetsKeepEarthStep(t *testing.T) {
	for _, n := range designFiles {
		d := loadDesign(t, n)
		if hot, why := d.HotChassis(); hot {
			t.Errorf("%s: taken as hot-chassis: %s", n, why)
		}
		w := newWalk(t, d, BringUp, "")
		if w.R.Proc.Step(StepIsolation) != nil {
			t.Errorf("%s: has an isolation step", n)
		}
		if es := w.R.Proc.Step(StepEarth); es == nil || es.Measures[0].Point != EarthKey {
			t.Errorf("%s: earth step %+v", n, es)
		}
	}
}
