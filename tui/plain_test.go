package tui

import (
	"bufio"
	"fmt"
	"io"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"strings"
	"syscall"
	"testing"
	"time"

	"pinwalk/expect/design"
	"pinwalk/procedures"
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
		if m == nil {
			lines = append(lines, "y")
			if err := r.Confirm(); err != nil {
				t.Fatal(err)
			}
		} else {
			b, _ := r.Expected(st, m)
			lines = append(lines, num(b.Nominal))
			if _, err := r.Enter("", num(b.Nominal)); err != nil {
				t.Fatalf("%s: %v", m.Point, err)
			}
		}
		if r.Done(st.ID) {
			r.Next()
		}
	}
	return lines
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
	for _, k := range []string{"discharge:C1 dc_volts", "cold:B1 ohms", "V2.3 dc_volts", "B1 dc_volts", "Out of band: 0"} {
		if !strings.Contains(sum, k) {
			t.Errorf("summary lacks %q", k)
		}
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
	os.Exit(m.Run())
}

// TestKillResume kills the plain-mode process (SIGKILL) after each of
// several readings, once the session file holds the reading; every resume
// keeps every reading.
func TestKillResume(t *testing.T) {
	lines := script(t)
	path := filepath.Join(t.TempDir(), "kill.yaml")
	readings := func() int {
		s, err := procedures.LoadSession(path)
		if err != nil {
			return -1
		}
		return len(s.Readings)
	}
	next := 0
	for kill := 0; kill < 4; kill++ {
		cmd := exec.Command(os.Args[0], "-test.run=^$")
		cmd.Env = append(os.Environ(), "PINWALK_PLAIN_CHILD="+path)
		stdin, err := cmd.StdinPipe()
		if err != nil {
			t.Fatal(err)
		}
		if err := cmd.Start(); err != nil {
			t.Fatal(err)
		}
		bw := bufio.NewWriter(stdin)
		// Feed up to and including the next numeric reading.
		want := max(readings(), 0)
		for next < len(lines) {
			l := lines[next]
			next++
			fmt.Fprintln(bw, l)
			if l != "y" {
				want++
				break
			}
		}
		bw.Flush()
		deadline := time.Now().Add(60 * time.Second)
		for readings() < want && time.Now().Before(deadline) {
			time.Sleep(20 * time.Millisecond)
		}
		got := readings()
		cmd.Process.Signal(syscall.SIGKILL)
		cmd.Wait()
		if got < want {
			t.Fatalf("kill %d: session holds %d readings, want %d", kill, got, want)
		}
		if after := readings(); after != got {
			t.Fatalf("kill %d: %d readings after SIGKILL, %d before", kill, after, got)
		}
	}
	// Resume in process and check nothing was lost and the cursor moved on.
	w := open(t, path)
	if n := len(w.R.Sess.Readings); n != 4 {
		t.Errorf("resumed with %d readings, want 4", n)
	}
}
