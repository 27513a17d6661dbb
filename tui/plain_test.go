package tui

import (
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"pinwalk/expect/point"
	"strconv"
	"strings"
	"testing"
	"time"

	"pinwalk/expect/design"
	"pinwalk/procedures"
	"pinwalk/procedures/infer"
)

const demoA = "../testdata/designs/se-6v6-stereo.yaml"

func loadA(t testing.TB) *design.Design {
	d, probs := design.Load(demoA)
	if len(probs.Errors()) > 0 {
		t.Fatal(probs)
	}
	return d
}

func open(t testing.TB, path string) *procedures.Walk {
	d := loadA(t)
	var s *procedures.Session
	if _, err := os.Stat(path); err == nil {
		if s, err = procedures.LoadSession(path); err != nil {
			t.Fatal(err)
		}
	} else {
		s = procedures.NewSession(d, procedures.BringUp, 1, time.Date(2025, 3, 1, 10, 0, 0, 0, time.UTC))
	}
	w, err := procedures.Open(d, s, path, procedures.WalkOptions{Samples: 100, Seed: 1})
	if err != nil {
		t.Fatal(err)
	}
	return w
}

func num(v float64) string {
	if math.IsInf(v, 1) {
		return "OL"
	}
	return strconv.FormatFloat(v, 'g', 7, 64)
}

// script generates the answers of a whole bring-up from the expected
// nominal values, by running the procedure on a scratch session.
func script(t testing.TB) []string {
	w := open(t, "")
	r := w.R
	var lines []string
	for !r.Finished() {
		st := r.Current()
		m := r.NextMeasure()
		if q := r.NextAsk(); q != nil {
			lines = append(lines, "") // an empty Enter passes a question
			if err := r.AnswerAsk(""); err != nil {
				t.Fatal(err)
			}
		} else if m == nil {
			lines = append(lines, "y")
			if err := r.Confirm(); err != nil {
				t.Fatal(err)
			}
		} else {
			b, _ := r.Expected(st, m)
			lines = append(lines, num(b.Nominal))
			if _, err := r.Enter(point.Key{}, num(b.Nominal)); err != nil {
				t.Fatalf("%s: %v", m.Point, err)
			}
		}
		if r.Done(st.ID) {
			r.Next()
		}
	}
	return append(lines, "y") // the summary
}

// TestPlainBringUp runs the whole bring-up of demo a in plain mode with
// readings piped in, and checks the transcript: every live step shows a
// DANGER block with the live caution, and the summary lists the readings.
func TestPlainBringUp(t *testing.T) {
	lines := script(t)
	path := filepath.Join(t.TempDir(), "a.yaml")
	w := open(t, path)
	var out strings.Builder
	if err := RunPlain(w, strings.NewReader(strings.Join(lines, "\n")+"\n"), &out); err != nil {
		t.Fatal(err)
	}
	tr := out.String()
	for _, st := range w.R.Proc.Steps {
		i := strings.Index(tr, ": "+st.Title+" ==")
		if i < 0 {
			t.Errorf("step %q not in the transcript", st.Title)
			continue
		}
		block := tr[i:]
		if j := strings.Index(block[1:], "\n== "); j > 0 {
			block = block[:j]
		}
		if st.Live && (!strings.Contains(block, "DANGER: LIVE STEP") || !strings.Contains(block, "DANGER: "+procedures.LiveCaution)) {
			t.Errorf("live step %q without its DANGER block", st.Title)
		}
	}
	if !strings.Contains(tr, "Procedure finished") {
		t.Fatalf("did not finish:\n%s", tr[max(0, len(tr)-2000):])
	}
	sum := tr[strings.LastIndex(tr, "== Summary =="):]
	for _, k := range []string{"C1 volts after discharge", "Needs a look (0)", "Out of band: 0"} {
		if !strings.Contains(sum, k) {
			t.Errorf("summary lacks %q", k)
		}
	}
	// Every reading is listed, by its label, never by its point key.
	if n := strings.Count(sum, " [in-band]"); n != len(w.R.Sess.Readings) {
		t.Errorf("summary lists %d readings in band, the session has %d", n, len(w.R.Sess.Readings))
	}
	if k := point.InText.FindString(sum); k != "" {
		t.Errorf("summary shows a point key (%q):\n%s", k, sum)
	}
	if w.R.Sess.Outcome == nil && len(w.R.Sess.Readings) == 0 {
		t.Error("no readings saved")
	}
}

// TestMain lets the test binary act as a plain-mode child for the kill test.
func TestMain(m *testing.M) {
	if p := os.Getenv("PINWALK_PLAIN_CHILD"); p != "" {
		d, _ := design.Load(demoA)
		var s *procedures.Session
		if _, err := os.Stat(p); err == nil {
			s, _ = procedures.LoadSession(p)
		} else {
			s = procedures.NewSession(d, procedures.BringUp, 1, time.Now())
		}
		w, err := procedures.Open(d, s, p, procedures.WalkOptions{Samples: 100, Seed: 1})
		if err != nil {
			fmt.Fprintln(os.Stderr, err)
			os.Exit(3)
		}
		RunPlain(w, os.Stdin, io.Discard)
		os.Exit(0)
	}
	if p := os.Getenv("PINWALK_TUI_CHILD"); p != "" {
		os.Exit(tuiChild(p))
	}
	os.Exit(m.Run())
}

// TestKillResume kills the plain-mode process (SIGKILL) after each of
// several readings, once the session file holds the reading; every resume
// keeps every reading.
func TestKillResume(t *testing.T) {
	lines := script(t)
	path := filepath.Join(t.TempDir(), "kill.yaml")
	killAndResume(t, "PINWALK_PLAIN_CHILD", path, lines, 4, func(w io.Writer, line string) error {
		_, err := fmt.Fprintln(w, line)
		return err
	})
	// Resume in process and check nothing was lost and the cursor moved on.
	w := open(t, path)
	if n := len(w.R.Sess.Readings); n != 4 {
		t.Errorf("resumed with %d readings, want 4", n)
	}
}

// openMode opens a scratch or saved session of demo a in a mode.
func openMode(t testing.TB, mode procedures.Mode, seed uint64, path string) *procedures.Walk {
	d := loadA(t)
	s := procedures.NewSession(d, mode, seed, time.Date(2025, 3, 1, 10, 0, 0, 0, time.UTC))
	w, err := procedures.Open(d, s, path, procedures.WalkOptions{Samples: 100, Seed: seed})
	if err != nil {
		t.Fatal(err)
	}
	return w
}

// faultScript generates what a technician would type in a fault-finding
// session on demo a with a fault: the readings come from the inference's
// simulated amplifier with that fault; steps without a reading are
// confirmed. It drives a scratch session the way RunPlain does.
func faultScript(t testing.TB, fault string, seed uint64) []string {
	w := openMode(t, procedures.FaultFind, seed, "")
	e, err := infer.New(w.B.D, infer.Options{Seed: seed})
	if err != nil {
		t.Fatal(err)
	}
	sim, err := e.Simulate(fault, seed)
	if err != nil {
		t.Fatal(err)
	}
	r := w.R
	var lines []string
	for i := 0; i < 300; i++ {
		if err := w.Loop.Advance(); err != nil {
			t.Fatal(err)
		}
		st := r.Current()
		if st.ID == procedures.StepSummary || r.Finished() {
			break
		}
		m := r.NextMeasure()
		if q := r.NextAsk(); q != nil {
			ans := map[string]string{procedures.FieldEarthBond: "0.05 tester", procedures.FieldInsulation: "200M tester", procedures.FieldSignOff: "bench technician"}[q.Field]
			lines = append(lines, ans)
			if err := r.AnswerAsk(ans); err != nil {
				t.Fatalf("%s: %v", st.ID, err)
			}
		} else if m == nil {
			lines = append(lines, "y")
			if err := r.Confirm(); err != nil {
				t.Fatalf("%s: %v", st.ID, err)
			}
		} else {
			v, ok := sim[m.Point.String()]
			switch {
			case ok:
			case m.Point.Domain == point.Discharge:
				v = 0.4
			case m.Point == procedures.EarthKey:
				v = 0.15
			default:
				b, _ := r.Expected(st, m)
				v = b.Nominal
			}
			raw := num(v) + "!"
			if math.IsInf(v, 1) {
				raw = "OL"
			}
			lines = append(lines, raw)
			vd, err := r.Enter(point.Key{}, raw)
			if err != nil {
				t.Fatalf("%s: %v", m.Point, err)
			}
			if vd.Reading.Status == procedures.Retry {
				lines = append(lines, raw)
				if _, err := r.Enter(point.Key{}, raw); err != nil {
					t.Fatal(err)
				}
			}
		}
		if r.Done(st.ID) {
			r.Next()
		}
	}
	return append(lines, "y") // the summary
}

// TestPlainFaultFind runs a fault-finding session on demo a with a
// shorted cathode bypass capacitor (C10) through stdin: after the
// safety steps every measurement is suggested by the tool (with what it
// does for the suspects, in words) without typing next, and the walk ends at the
// confirm step naming the fault, then the summary.
func TestPlainFaultFind(t *testing.T) {
	const fault = "C10:short"
	lines := faultScript(t, fault, 2)
	path := filepath.Join(t.TempDir(), "ff.yaml")
	w := openMode(t, procedures.FaultFind, 2, path)
	var out strings.Builder
	if err := RunPlain(w, strings.NewReader(strings.Join(lines, "\n")+"\n"), &out); err != nil {
		t.Fatal(err)
	}
	tr := out.String()
	o := w.R.Sess.Outcome
	if o == nil {
		t.Fatalf("no outcome:\n%s", tr[max(0, len(tr)-3000):])
	}
	e, _ := infer.New(w.B.D, infer.Options{Seed: 2})
	found := strings.Split(o.Found, " or ")[0]
	if found != fault && !e.SameGroup(found, fault, true) {
		t.Errorf("found %s, want %s (or one no reading tells from it)", o.Found, fault)
	}
	// The summary names the fault in words, not as REF:MODE.
	for _, want := range []string{"Confirm the fault:", "Best next for the effort", "== Summary ==", "Found by measurement: " + w.B.DescribeFault(found)} {
		if !strings.Contains(tr, want) {
			t.Errorf("transcript lacks %q", want)
		}
	}
	if strings.Contains(tr, "asked for the next measurement") {
		t.Error("noise note in the transcript")
	}
	if !strings.Contains(tr, "Procedure finished") {
		t.Errorf("did not finish:\n%s", tr[max(0, len(tr)-6000):])
	}
}

// TestPlainMessages: on a step that takes no reading, a value or m says
// what to do; practice prompts say m takes the simulated reading.
func TestPlainMessages(t *testing.T) {
	w := openMode(t, procedures.Practise, 3, "")
	var out strings.Builder
	// Symptoms (no reading): a value, then m; then confirm; the briefing.
	if err := RunPlain(w, strings.NewReader("312\nm\ny\ny\ny\n\n"), &out); err != nil {
		t.Fatal(err)
	}
	tr := out.String()
	if n := strings.Count(tr, procedures.NoReading); n < 2 {
		t.Errorf("the no-reading message shows %d times, want 2 (value and m):\n%s", n, tr)
	}
	if !strings.Contains(tr, "m to take the (simulated) reading") {
		t.Errorf("practice prompt lacks the m hint:\n%s", tr)
	}
}
