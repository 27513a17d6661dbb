package procedures

import (
	"fmt"
	"math/rand/v2"
	"sort"
	"strconv"
	"testing"

	"pinwalk/expect/point"
)

// scriptedAction draws what a careless or hurried technician might type
// at a step: the expected value, a dangerous reading (a charged
// capacitor, an open earth, a short, an over-dissipating cathode), a
// skip, an override, a retake, a jump to another step, or a bare Enter.
func scriptedAction(rng *rand.Rand, s State) (Action, string) {
	n := rng.IntN(100)
	switch {
	case n < 8:
		return Action{Kind: ActSkip, Reason: "in a hurry today"}, "skip"
	case n < 13:
		return Action{Kind: ActOverride, Reason: "customer says it was always like this"}, "override"
	case n < 18 && s.Total > 0:
		return Action{Kind: ActGoto, Step: strconv.Itoa(1 + rng.IntN(s.Total))}, "goto"
	case n < 24:
		return Action{Kind: ActConfirm}, "confirm"
	}
	if s.Measure == nil {
		return Action{Kind: ActConfirm}, "confirm"
	}
	v := s.Band.Nominal
	kind := "nominal"
	if n >= 60 {
		kind = "dangerous"
		switch s.Measure.Point.Domain {
		case point.Discharge:
			v = []float64{120, 70, 45, 15}[rng.IntN(4)]
		case point.Earth:
			if rng.IntN(2) == 0 {
				return Action{Kind: ActRead, Text: "OL"}, kind
			}
			v = 2.5
		case point.Cold:
			v = 5
		case point.Insulation:
			v = 0.5e6 // under the 2 MΩ class II limit
		default:
			v = s.Band.High * (1.5 + rng.Float64())
			if rng.IntN(3) == 0 {
				v = 0
			}
		}
	}
	a := ActRead
	if n >= 55 && n < 60 {
		a = ActRetake
	}
	return Action{Kind: a, Text: strconv.FormatFloat(v, 'g', 6, 64) + "!"}, kind
}

// TestScriptedTechnician: random walks through the bring-up of every demo
// and template, entering random readings (dangerous ones among them),
// skips, overrides, retakes and jumps, through the one controller. Never:
// a live step that can start while a discharge, earth or cold-short stop
// is in force (an override is allowed only for earth and cold); a
// skipped discharge check; a fired switch-off not followed by the
// switch-off step.
func TestScriptedTechnician(t *testing.T) {
	walks, actions := 6, 60
	if testing.Short() {
		walks, actions = 2, 30
	}
	counts := map[string]int{}
	rules := map[string]int{}
	violations := 0
	names := make([]string, 0)
	designs := allDesigns(t)
	for n := range designs {
		names = append(names, n)
	}
	sort.Strings(names)
	for _, name := range names {
		d := designs[name]
		b, err := NewBenchModel(d, BenchOptions{Samples: 40, Seed: 1})
		if err != nil {
			t.Fatal(err)
		}
		for wk := 0; wk < walks; wk++ {
			s := NewSession(d, BringUp, 1, fixedNow)
			w, err := openWith(b, s, "", WalkOptions{Samples: 40, Seed: 1, Now: clock()})
			if err != nil {
				t.Fatal(err)
			}
			c := NewController(w)
			rng := rand.New(rand.NewPCG(uint64(wk), 0x7465636e))
			st, _ := c.Do(Action{Kind: ActRefresh})
			for i := 0; i < actions && !st.Finished; i++ {
				a, kind := scriptedAction(rng, st)
				counts[kind]++
				counts["actions"]++
				next, _ := c.Do(a)
				if v := next.Last; v != nil {
					counts["readings"]++
					if v.Reading.Consequence != GoOn {
						rules[fmt.Sprintf("%s on %s", v.Reading.Consequence, v.Reading.Point.Domain)]++
					}
					if v.Reading.Consequence == SwitchOff && (next.Step == nil || next.Step.Kind != KindPowerDown) {
						violations++
						t.Errorf("%s: a switch-off on %s is not followed by the switch-off step (on %v)", name, v.Reading.Point, next.Step)
					}
				}
				r := c.Runner()
				if cur := next.Step; cur != nil && cur.Live && cur.Kind != KindPowerDown && len(next.Blockers) == 0 {
					if r.Proc.HotChassis != "" && !r.Done(StepIsolation) {
						violations++
						t.Errorf("%s: live step %s can start on a hot chassis with no isolation transformer", name, cur.ID)
					}
					for _, rd := range r.Stops() {
						violations++
						t.Errorf("%s: live step %s can start with the stop on %s in force", name, cur.ID, rd.Point)
					}
					for _, dst := range r.Proc.Steps {
						if dst.Kind == KindDischarge && !r.Done(dst.ID) && contains(cur.Gate, dst.ID) {
							violations++
							t.Errorf("%s: live step %s can start with %s not done", name, cur.ID, dst.ID)
						}
					}
				}
				for _, k := range r.Sess.Skips {
					if st := r.Proc.Step(k.Step); st != nil && st.Kind == KindDischarge {
						violations++
						t.Errorf("%s: discharge step %s was skipped", name, k.Step)
					}
				}
				for _, o := range r.Sess.Overrides {
					if o.Point.Domain == point.Discharge {
						violations++
						t.Errorf("%s: a discharge stop was overridden", name)
					}
				}
				st = next
			}
		}
	}
	t.Logf("designs %d, walks %d, actions %d, readings %d (nominal %d, dangerous %d), skips %d, overrides %d, gotos %d; rules fired: %v; violations %d",
		len(names), len(names)*walks, counts["actions"], counts["readings"], counts["nominal"], counts["dangerous"], counts["skip"], counts["override"], counts["goto"], rules, violations)
	if rules["stop on discharge"] == 0 || rules["stop on earth"] == 0 {
		t.Errorf("the walks never fired a discharge or earth stop: the test does not exercise the rules (%v)", rules)
	}
}

// TestRankOncePerReading: in fault-finding the ranking is computed once
// per accepted reading, however many times the state is asked for.
func TestRankOncePerReading(t *testing.T) {
	d := loadDesign(t, "se-6v6-stereo")
	w := newWalk(t, d, FaultFind, "")
	c := NewController(w)
	st, err := c.Do(Action{Kind: ActRefresh})
	if err != nil {
		t.Fatal(err)
	}
	accepted := 0
	for i := 0; i < 40 && accepted < 6; i++ {
		if st.Step == nil || st.Finished {
			break
		}
		before := c.RankCalls()
		var a Action
		if st.Measure == nil {
			a = Action{Kind: ActConfirm}
		} else {
			a = Action{Kind: ActRead, Text: strconv.FormatFloat(st.Band.Nominal, 'g', 6, 64) + "!"}
		}
		st, err = c.Do(a)
		if err != nil {
			t.Fatalf("%v: %v", a, err)
		}
		for j := 0; j < 3; j++ {
			c.Do(Action{Kind: ActRefresh})
			c.State()
		}
		got := c.RankCalls() - before
		if st.Last != nil && st.Last.Reading.Point.Domain == point.Cold {
			accepted++
			if got != 1 {
				t.Errorf("reading %d (%s): %d rankings, want 1", accepted, st.Last.Reading.Point, got)
			}
		} else if got > 1 {
			t.Errorf("%v: %d rankings without a new reading of evidence", a.Kind, got)
		}
	}
	if accepted == 0 {
		t.Fatal("no cold reading was taken")
	}
}

// TestPowerUpPullsOutputsOnRiskySuspects: fault-finding on the fixed-bias
// demo with a red-plating complaint: the leading suspects include a lost
// bias, under which a power-up with the output valves fitted would drive
// them over their plate rating (the model solved under each suspect), so
// the power-up goes first with the output valves out, their grids read,
// and a hands-in step refits them.
func TestPowerUpPullsOutputsOnRiskySuspects(t *testing.T) {
	d := loadDesign(t, "pp-el34-fixed")
	w := newWalk(t, d, FaultFind, "")
	c := NewController(w)
	st, err := c.Do(Action{Kind: ActSymptoms, Text: "red-plate"})
	if err != nil {
		t.Fatal(err)
	}
	for i := 0; i < 80 && st.Step != nil && st.Step.Kind != KindPowerUp && !st.Finished; i++ {
		a := Action{Kind: ActConfirm}
		if st.Measure != nil {
			a = Action{Kind: ActRead, Text: strconv.FormatFloat(st.Band.Nominal, 'g', 6, 64) + "!"}
			if st.Measure.Point.Domain == point.Discharge {
				a.Text = "0.3"
			}
		}
		if st, err = c.Do(a); err != nil {
			t.Fatalf("%s: %v", st.Step.ID, err)
		}
	}
	if st.Step == nil || st.Step.ID != StepPowerUpPulled {
		t.Fatalf("the power-up is %v (suspects %v), want the one with the output valves out", st.Step, st.Rank.Suspects[:3])
	}
	if len(st.Step.Pulled) == 0 || len(st.Step.Measures) == 0 || st.Step.Measures[0].Point.Domain != point.Live {
		t.Errorf("pulled power-up %+v: want the output valves out and their grids read", st.Step)
	}
	t.Logf("why: %s", st.Step.Why)
	// A grid at 0 V with the valve out: the bias is missing, a stop.
	st, _ = c.Do(Action{Kind: ActRead, Text: "0"})
	if len(st.Stops) == 0 {
		t.Fatalf("no bias at an output grid: want a stop, got %+v", st.Last)
	}
	if pw := c.Runner().Proc.Step(StepPowerUp); pw == nil || len(c.Runner().Blockers(pw)) == 0 {
		t.Errorf("the power-up with every valve fitted is not blocked by the missing bias")
	}
}
