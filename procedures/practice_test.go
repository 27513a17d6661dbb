package procedures

import (
	"errors"
	"strings"
	"testing"
)

// drive answers the current step the way a trainee would in practice:
// confirm steps without a reading, take the simulated reading otherwise.
func drive(t *testing.T, w *Walk) {
	t.Helper()
	r := w.R
	st := r.Current()
	if r.NextMeasure() == nil {
		if err := r.Confirm(); err != nil {
			t.Fatalf("confirm %s: %v", st.ID, err)
		}
	} else if _, _, err := w.Loop.Command("m"); err != nil {
		t.Fatalf("measure on %s: %v", st.ID, err)
	}
	if r.Done(st.ID) {
		r.Next()
	}
}

// TestPracticeFollowingNext: a practice session on a fault picked by the
// seed, driven by a trainee who asks for the best next measurement each
// time, ends with the fault named, revealed and scored.
func TestPracticeFollowingNext(t *testing.T) {
	d := loadDesign(t, "se-6v6-stereo")
	w := newWalk(t, d, Practise, "")
	r := w.R
	// Safety steps first.
	for !r.Done(StepEarth) {
		drive(t, w)
	}
	if err := w.Loop.Advance(); err != nil {
		t.Fatal(err)
	}
	l := w.Loop.(*faultLoop)
	fault := r.Sess.Practice.Fault
	if fault == "" {
		t.Fatal("no hidden fault picked")
	}
	for i := 0; i < MaxProbes; i++ {
		if _, ok := clearSuspect(l.rank); ok {
			break
		}
		before := len(r.Proc.Steps)
		if _, _, err := w.Loop.Command("next"); err != nil {
			t.Fatal(err)
		}
		if len(r.Proc.Steps) == before {
			break // nothing more to measure
		}
		for r.Current() != nil && !r.Done(r.Current().ID) && r.Current().ID != StepSummary {
			drive(t, w)
		}
		if _, err := l.Rank(); err != nil {
			t.Fatal(err)
		}
	}
	top := l.rank.Suspects[0].Fault
	_, out, err := w.Loop.Command("name " + top)
	if err != nil {
		t.Fatal(err)
	}
	p := r.Sess.Practice
	if !p.Revealed || p.Named != top {
		t.Fatalf("practice %+v: want revealed and named %s", p, top)
	}
	if p.Score <= 0 || p.Score > 100 {
		t.Errorf("score %d, want 1..100", p.Score)
	}
	if len(r.Sess.Attempts) != 0 {
		t.Errorf("a trainee following next made %d out-of-order attempts", len(r.Sess.Attempts))
	}
	t.Logf("fault %s, named %s:\n%s", fault, top, strings.Join(out, "\n"))
	if !strings.Contains(strings.Join(Summary(r), "\n"), "Practice: the fault was "+fault) {
		t.Errorf("summary does not reveal the fault")
	}
}

// TestFaultFindGated: a fault-finding session cannot reach a live step
// before the discharge and earth steps: choosing a live measurement at
// the start is refused (and logged in practice), and every step the loop
// adds is gated on the discharge and earth steps.
func TestFaultFindGated(t *testing.T) {
	d := loadDesign(t, "pp-el34-fixed")
	w := newWalk(t, d, Practise, "")
	r := w.R
	if _, _, err := w.Loop.Command("measure B1 dc_volts"); err != nil {
		t.Fatal(err)
	}
	if r.Current().Live {
		t.Fatalf("reached live step %s before the safety steps", r.Current().ID)
	}
	if len(r.Sess.Attempts) == 0 {
		t.Errorf("the out-of-order attempt was not logged")
	}
	if err := r.Goto(StepPowerUp); !errors.Is(err, ErrGated) {
		t.Errorf("Goto power-up: %v, want a gate error", err)
	}
	for _, st := range r.Sess.Added {
		if !st.Live {
			continue
		}
		gate := map[string]bool{}
		for _, g := range st.Gate {
			gate[g] = true
		}
		for _, s := range r.Proc.Steps {
			if (s.Kind == KindDischarge || s.ID == StepEarth) && !gate[s.ID] {
				t.Errorf("live step %s not gated on %s", st.ID, s.ID)
			}
		}
		if !st.HasCaution(LiveCaution) {
			t.Errorf("live step %s lacks LiveCaution", st.ID)
		}
	}
}
