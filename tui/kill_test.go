package tui

import (
	"context"
	"fmt"
	"io"
	"os"
	"os/exec"
	"path/filepath"
	"syscall"
	"testing"
	"time"

	tea "github.com/charmbracelet/bubbletea"
	"github.com/charmbracelet/lipgloss"
	"github.com/muesli/termenv"

	"pinwalk/expect/design"
	"pinwalk/procedures"
)

// tuiChild runs the full-screen walk of demo a on the session at path,
// with keys from stdin and the screen thrown away: the child of
// TestKillResumeTUI.
func tuiChild(path string) int {
	d, _ := design.Load(demoA)
	var s *procedures.Session
	if _, err := os.Stat(path); err == nil {
		s, _ = procedures.LoadSession(path)
	} else {
		s = procedures.NewSession(d, procedures.BringUp, 1, time.Now())
	}
	w, err := procedures.Open(d, s, path, procedures.WalkOptions{Samples: 100, Seed: 1})
	if err != nil {
		fmt.Fprintln(os.Stderr, err)
		return 3
	}
	r := lipgloss.NewRenderer(io.Discard)
	r.SetColorProfile(termenv.Ascii)
	err = Run(context.Background(), Config{Walk: w, Renderer: r, ASCII: true},
		tea.WithInput(os.Stdin), tea.WithOutput(io.Discard), tea.WithoutSignalHandler())
	if err != nil {
		fmt.Fprintln(os.Stderr, err)
		return 1
	}
	return 0
}

// TestKillResumeTUI is the crash-safety test of the full-screen path: the
// walk runs in a child process driven by keys on a pipe; after each
// reading reaches the session file the child is killed with SIGKILL, and
// the next child resumes the same file. No reading is ever lost.
func TestKillResumeTUI(t *testing.T) {
	lines := script(t)
	path := filepath.Join(t.TempDir(), "kill-tui.yaml")
	const kills = 4
	next := killAndResume(t, "PINWALK_TUI_CHILD", path, lines, kills, func(w io.Writer, line string) error {
		// Enter confirms a step without a reading; a reading is its digits
		// and Enter. Keys go one at a time with a pause, as a person types.
		keys := "\r"
		if line != "y" {
			keys = line + "\r"
		}
		for _, b := range []byte(keys) {
			if _, err := w.Write([]byte{b}); err != nil {
				return err
			}
			time.Sleep(5 * time.Millisecond)
		}
		time.Sleep(100 * time.Millisecond) // let a confirmed step settle before the next key
		return nil
	})
	s, err := procedures.LoadSession(path)
	if err != nil {
		t.Fatal(err)
	}
	if len(s.Readings) != kills {
		t.Errorf("after %d kills the session holds %d readings, want %d", kills, len(s.Readings), kills)
	}
	// The readings are the ones typed, in order.
	k := 0
	for _, l := range lines[:next] {
		if l == "y" {
			continue
		}
		if k < len(s.Readings) && s.Readings[k].Raw != l {
			t.Errorf("reading %d: session has %q, typed %q", k, s.Readings[k].Raw, l)
		}
		k++
	}
}

// killAndResume runs the walk as a child process (the test binary with env
// set to the session path), sends the script's lines with send up to and
// including the next reading, waits until the session file holds that
// reading, kills the child with SIGKILL and starts the next one on the
// same file, kills times. It fails if a reading is missing or lost, and
// returns how many script lines were sent.
func killAndResume(t *testing.T, env, path string, lines []string, kills int, send func(io.Writer, string) error) int {
	t.Helper()
	readings := func() int {
		s, err := procedures.LoadSession(path)
		if err != nil {
			return -1
		}
		return len(s.Readings)
	}
	next := 0
	for kill := 0; kill < kills; kill++ {
		cmd := exec.Command(os.Args[0], "-test.run=^$")
		cmd.Env = append(os.Environ(), env+"="+path)
		stdin, err := cmd.StdinPipe()
		if err != nil {
			t.Fatal(err)
		}
		if err := cmd.Start(); err != nil {
			t.Fatal(err)
		}
		want := max(readings(), 0)
		for next < len(lines) {
			l := lines[next]
			next++
			if err := send(stdin, l); err != nil {
				t.Fatalf("kill %d: sending %q: %v", kill, l, err)
			}
			if l != "y" {
				want++
				break
			}
		}
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
	return next
}
