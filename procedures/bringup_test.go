package procedures

import (
	"errors"
	"math"
	"os"
	"path/filepath"
	"pinwalk/expect/point"
	"strconv"
	"strings"
	"testing"
	"time"

	"pinwalk/expect/design"
)

var designFiles = []string{"se-6v6-stereo", "pp-el34-fixed", "bench-12ax7"}

func loadDesign(t testing.TB, name string) *design.Design {
	t.Helper()
	d, probs := design.Load(filepath.Join("..", "testdata", "designs", name+".yaml"))
	if len(probs.Errors()) > 0 {
		t.Fatalf("%s: %v", name, probs)
	}
	return d
}

// templateDesign parses one embedded template (its placeholder values are
// valid values).
func templateDesign(t testing.TB, name string) *design.Design {
	t.Helper()
	tp, err := design.TemplateByName(name)
	if err != nil {
		t.Fatal(err)
	}
	d, probs := design.Parse(tp.Name+".yaml", tp.Text)
	if d == nil || len(probs.Errors()) > 0 {
		t.Fatalf("template %s: %v", name, probs)
	}
	return d
}

// bringUpStep builds the bring-up of a template and returns the bench
// model and the step with the given id (failing when there is none).
func bringUpStep(t testing.TB, template, id string) (*BenchModel, *Step) {
	t.Helper()
	b, err := NewBenchModel(templateDesign(t, template), BenchOptions{Samples: 100, Seed: 1})
	if err != nil {
		t.Fatal(err)
	}
	p, err := BringUpProcedure(b)
	if err != nil {
		t.Fatal(err)
	}
	if st := p.Step(id); st != nil {
		return b, st
	}
	t.Fatalf("%s: the bring-up has no step %s", template, id)
	return nil, nil
}

// allDesigns returns every demo design and every template (templates'
// placeholder values are valid values).
func allDesigns(t *testing.T) map[string]*design.Design {
	out := map[string]*design.Design{}
	for _, n := range designFiles {
		out[n] = loadDesign(t, n)
	}
	for _, tp := range design.Templates() {
		d, probs := design.Parse(tp.Name+".yaml", tp.Text)
		if d == nil || len(probs.Errors()) > 0 {
			t.Fatalf("template %s: %v", tp.Name, probs)
		}
		out["template:"+tp.Name] = d
	}
	return out
}

var fixedNow = time.Date(2025, 3, 1, 10, 0, 0, 0, time.UTC)

func clock() func() time.Time {
	t := fixedNow
	return func() time.Time { t = t.Add(time.Second); return t }
}

func newWalk(t *testing.T, d *design.Design, mode Mode, path string) *Walk {
	t.Helper()
	s := NewSession(d, mode, 1, fixedNow)
	w, err := Open(d, s, path, WalkOptions{Samples: 100, Seed: 1, Now: clock()})
	if err != nil {
		t.Fatal(err)
	}
	return w
}

// TestBringUpSafetyInvariants: for every demo and template, the bring-up
// starts with the briefing, then the meter proof and a discharge-verify
// step for each filter capacitor; every live step carries LiveCaution and
// VariacCaution and is gated on every discharge step and the earth step.
func TestBringUpSafetyInvariants(t *testing.T) {
	for name, d := range allDesigns(t) {
		t.Run(name, func(t *testing.T) {
			b, err := NewBenchModel(d, BenchOptions{Samples: 50, Seed: 1})
			if err != nil {
				t.Fatal(err)
			}
			p, err := BringUpProcedure(b)
			if err != nil {
				t.Fatal(err)
			}
			if p.Steps[0].ID != StepBriefing || p.Steps[1].ID != StepMeter {
				t.Fatalf("first steps %s, %s: want briefing, meter proof", p.Steps[0].ID, p.Steps[1].ID)
			}
			var discharge []string
			for _, st := range p.Steps {
				if st.Kind == KindDischarge && strings.HasPrefix(st.ID, "discharge-") {
					discharge = append(discharge, st.ID)
				}
			}
			for _, dr := range b.Drain {
				if p.Step("discharge-"+dr.Ref) == nil {
					t.Errorf("no discharge step for filter capacitor %s", dr.Ref)
				}
			}
			if len(discharge) == 0 {
				t.Fatalf("no discharge steps")
			}
			for i, id := range discharge {
				if p.Steps[2+i].ID != id {
					t.Errorf("step %d is %s, want %s", 2+i, p.Steps[2+i].ID, id)
				}
			}
			seenLive := false
			for i, st := range p.Steps {
				if st.Why == "" {
					t.Errorf("%s has no Why", st.ID)
				}
				if !st.Live {
					// Between power-ups only a step that proves B+
					// discharged first (the discharge rule) may put
					// hands in.
					if seenLive && st.Kind != KindSummary && (st.Kind != KindDischarge || len(st.Measures) == 0) {
						t.Errorf("unplugged step %s after a live step without a discharge reading", st.ID)
					}
					continue
				}
				seenLive = true
				if !st.HasCaution(LiveCaution) || !st.HasCaution(VariacCaution) {
					t.Errorf("live step %s lacks LiveCaution or VariacCaution", st.ID)
				}
				gate := map[string]bool{}
				for _, g := range st.Gate {
					gate[g] = true
					if j := p.Index(g); j < 0 || j >= i {
						t.Errorf("%s is gated on %s, which is not an earlier step", st.ID, g)
					}
				}
				for _, id := range append(discharge, StepEarth) {
					if !gate[id] {
						t.Errorf("live step %s is not gated on %s", st.ID, id)
					}
				}
				for _, c := range p.Steps {
					if c.Kind == KindCold && !gate[c.ID] {
						t.Errorf("live step %s is not gated on cold step %s", st.ID, c.ID)
					}
				}
			}
			if !seenLive {
				t.Errorf("no live step")
			}
			if p.Steps[len(p.Steps)-1].ID != StepSummary {
				t.Errorf("last step %s, want summary", p.Steps[len(p.Steps)-1].ID)
			}
		})
	}
}

// TestGates: no live step can be started, or take a reading, before the
// discharge steps and the earth step are done (passed, or skipped with a
// reason); a skipped safety step shows in the summary.
func TestGates(t *testing.T) {
	d := loadDesign(t, "se-6v6-stereo")
	path := filepath.Join(t.TempDir(), "s.yaml")
	w := newWalk(t, d, BringUp, path)
	r := w.R
	var live []*Step
	for _, st := range r.Proc.Steps {
		if st.Live {
			live = append(live, st)
		}
	}
	tryAll := func(wantBlocked bool) {
		t.Helper()
		for _, st := range live {
			err := r.Goto(st.ID)
			if wantBlocked && !errors.Is(err, ErrGated) {
				t.Fatalf("Goto(%s) = %v, want a gate error", st.ID, err)
			}
		}
	}
	tryAll(true)
	// Training mode records the attempts; a bring-up does not.
	if len(r.Sess.Attempts) != 0 {
		t.Errorf("bring-up recorded %d attempts", len(r.Sess.Attempts))
	}
	// A reading cannot be entered on a live step either.
	r.cur = r.Proc.Index(live[0].ID)
	if _, err := r.Enter(point.Key{}, "300"); !errors.Is(err, ErrGated) {
		t.Fatalf("Enter on a gated live step: %v, want a gate error", err)
	}
	r.cur = 0
	// A skip needs a reason.
	if err := r.Skip(""); err == nil {
		t.Fatalf("Skip without a reason accepted")
	}
	// Walk the unplugged steps: confirm, discharge readings, skip earth.
	for !r.Current().Live {
		st := r.Current()
		switch {
		case st.ID == StepEarth:
			if err := r.Skip("no earth pin on this bench lead"); err != nil {
				t.Fatal(err)
			}
		case len(st.Measures) == 0:
			if err := r.Confirm(); err != nil {
				t.Fatal(err)
			}
		default:
			for r.NextMeasure() != nil {
				m := r.NextMeasure()
				b, _ := r.Expected(st, m)
				if _, err := r.Enter(point.Key{}, fmtNum(b.Nominal)); err != nil {
					t.Fatalf("%s: %v", m.Point, err)
				}
			}
		}
		// Before the last discharge/earth step is done the first live step stays gated.
		if len(r.Blockers(live[0])) == 0 && !(r.Done(StepEarth) && r.Done("discharge-C4")) {
			t.Fatalf("live step open before the safety steps are done")
		}
		r.Next()
	}
	if b := r.Blockers(live[0]); len(b) != 0 {
		t.Fatalf("live step still gated after safety and cold steps: %v", b)
	}
	sum := strings.Join(Summary(r), "\n")
	if !strings.Contains(sum, "SKIPPED SAFETY STEPS") || !strings.Contains(sum, "no earth pin on this bench lead") {
		t.Errorf("summary does not list the skipped earth step:\n%s", sum)
	}
	// The session on disk has it too.
	s, err := LoadSession(path)
	if err != nil {
		t.Fatal(err)
	}
	if len(s.Skips) != 1 || !s.Skips[0].Safety {
		t.Errorf("saved skips %+v, want the earth step as a safety skip", s.Skips)
	}
}

func fmtNum(v float64) string {
	if math.IsInf(v, 1) {
		return "OL"
	}
	return strings.TrimRight(strings.TrimRight(strconvF(v), "0"), ".")
}

func strconvF(v float64) string { return fmtFloat(v) }

// TestTrainingLogsAttempts: in training mode an attempt to jump to a live
// step is refused and logged.
func TestTrainingLogsAttempts(t *testing.T) {
	d := loadDesign(t, "se-6v6-stereo")
	w := newWalk(t, d, Training, "")
	if !w.R.Training {
		t.Fatal("training runner not in training mode")
	}
	if err := w.R.Goto("variac-25"); !errors.Is(err, ErrGated) {
		t.Fatalf("Goto variac-25: %v", err)
	}
	if len(w.R.Sess.Attempts) != 1 || w.R.Sess.Attempts[0].Step != "variac-25" {
		t.Fatalf("attempts %+v, want one for variac-25", w.R.Sess.Attempts)
	}
}

// TestDesignChanged: a session taken against another version of the
// design is refused, and accepted with AcceptChanged (noted).
func TestDesignChanged(t *testing.T) {
	d := loadDesign(t, "bench-12ax7")
	s := NewSession(d, BringUp, 1, fixedNow)
	s.Design.Hash = strings.Repeat("0", 64)
	_, err := Open(d, s, "", WalkOptions{Samples: 50})
	var dc *DesignChangedError
	if !errors.As(err, &dc) {
		t.Fatalf("Open on a changed design: %v, want *DesignChangedError", err)
	}
	w, err := Open(d, s, "", WalkOptions{Samples: 50, AcceptChanged: true})
	if err != nil {
		t.Fatal(err)
	}
	if len(w.R.Sess.Notes) != 1 || !strings.Contains(w.R.Sess.Notes[0].Text, "design changed") {
		t.Errorf("notes %+v, want the change recorded", w.R.Sess.Notes)
	}
}

func TestDefaultSessionPath(t *testing.T) {
	d := loadDesign(t, "se-6v6-stereo")
	got := DefaultSessionPath(d, BringUp, fixedNow)
	if got != "se-6v6-stereo-bringup-2025-03-01.pinwalk.yaml" {
		t.Errorf("DefaultSessionPath = %q", got)
	}
	_ = os.Remove
}

func fmtFloat(v float64) string { return strconv.FormatFloat(v, 'f', 6, 64) }
