package procedures

import (
	"bufio"
	"fmt"
	"math/rand/v2"
	"os"
	"os/exec"
	"path/filepath"
	"pinwalk/expect/point"
	"strconv"
	"strings"
	"syscall"
	"testing"
	"time"
)

// saveChildEnv, when set to a session path, makes the test binary run
// saveChild instead of the tests: the child process of TestKillSave.
const saveChildEnv = "PINWALK_SAVE_CHILD"

func TestMain(m *testing.M) {
	if path := os.Getenv(saveChildEnv); path != "" {
		os.Exit(saveChild(path))
	}
	os.Exit(m.Run())
}

// saveChild resumes the session at path (or starts it), then takes
// readings as fast as it can: each is appended, saved with Save, and only
// then acknowledged on stdout as "ack N" (N readings saved), as the walk
// acknowledges a reading on screen once it is saved. It runs until killed.
func saveChild(path string) int {
	s, err := LoadSession(path)
	if err != nil {
		if !os.IsNotExist(err) {
			fmt.Fprintln(os.Stderr, err)
			return 3
		}
		t := time.Now()
		s = &Session{Pinwalk: SessionVersion, Design: DesignRef{File: "demo", Title: "kill test", Hash: "ab12"},
			Mode: BringUp, Started: t, Updated: t}
		// Bench notes make the file the size of a long session (about
		// 100 kB), so a save takes long enough for kills to land in it.
		for i := 0; i < 800; i++ {
			s.Notes = append(s.Notes, Note{Text: fmt.Sprintf("note %d: heater wiring dressed away from the grid leads", i), At: t})
		}
	}
	out := bufio.NewWriter(os.Stdout)
	for n := len(s.Readings) + 1; n < 1_000_000; n++ {
		now := time.Now()
		s.Readings = append(s.Readings, Reading{Step: "live.B1", Point: point.MustParse("B1 dc_volts"),
			Raw: strconv.Itoa(n), Value: float64(n), Unit: "V", At: now, Status: InBand, Low: 290, High: 330, Nominal: 310})
		s.Updated = now
		s.Cursor = "live.B1"
		if err := s.Save(path); err != nil {
			fmt.Fprintln(os.Stderr, err)
			return 1
		}
		fmt.Fprintf(out, "ack %d\n", n)
		out.Flush()
	}
	return 0
}

// checkSavedSession loads a session file written by saveChild and checks
// it holds readings 1..N in order with N >= atLeast. It returns N.
func checkSavedSession(t *testing.T, path string, atLeast int) int {
	t.Helper()
	s, err := LoadSession(path)
	if err != nil {
		t.Fatalf("%s does not load: %v", filepath.Base(path), err)
	}
	for i, r := range s.Readings {
		if r.Raw != strconv.Itoa(i+1) || r.Value != float64(i+1) {
			t.Fatalf("%s: reading %d is %q (%g), want %d", filepath.Base(path), i, r.Raw, r.Value, i+1)
		}
	}
	if len(s.Readings) < atLeast {
		t.Fatalf("%s holds %d readings, but %d were acknowledged before the kill", filepath.Base(path), len(s.Readings), atLeast)
	}
	return len(s.Readings)
}

// TestKillSave is the crash-safety test of session saving: a child
// process saves a reading after another and acknowledges each once Save
// has returned; it is killed with SIGKILL at a random moment, 60 times,
// each new child resuming the same file. After every kill the session
// file and its .bak must both load cleanly, hold the readings in order,
// and the session must hold every acknowledged reading (the .bak at most
// one save behind). Temporary files left by the kills are removed when
// the next child opens the session.
func TestKillSave(t *testing.T) {
	if testing.Short() {
		t.Skip("kills child processes; not in -short")
	}
	const kills = 60
	dir := t.TempDir()
	path := filepath.Join(dir, "kill.pinwalk.yaml")
	rng := rand.New(rand.NewPCG(20260112, 7))
	acked, checked, tempsLeft := 0, 0, 0
	var lastKillAck int
	for kill := 0; kill < kills; kill++ {
		cmd := exec.Command(os.Args[0], "-test.run=^$")
		cmd.Env = append(os.Environ(), saveChildEnv+"="+path)
		stdout, err := cmd.StdoutPipe()
		if err != nil {
			t.Fatal(err)
		}
		var stderr strings.Builder
		cmd.Stderr = &stderr
		if err := cmd.Start(); err != nil {
			t.Fatal(err)
		}
		acks := make(chan int, 1024)
		go func() {
			sc := bufio.NewScanner(stdout)
			for sc.Scan() {
				if n, err := strconv.Atoi(strings.TrimPrefix(sc.Text(), "ack ")); err == nil {
					acks <- n
				}
			}
			close(acks)
		}()
		// Wait for the first acknowledgement of this child (it has opened
		// the session and saved once), then kill at a random moment in
		// the next 0-25 ms: before, during or after any step of a save.
		first, ok := <-acks
		if !ok {
			cmd.Wait()
			t.Fatalf("kill %d: child ended without saving: %s", kill, stderr.String())
		}
		if first != lastKillAck+1 && first <= lastKillAck {
			t.Fatalf("kill %d: child resumed at reading %d, but %d were acknowledged", kill, first, lastKillAck)
		}
		time.Sleep(time.Duration(rng.IntN(25_000)) * time.Microsecond)
		cmd.Process.Signal(syscall.SIGKILL)
		last := first
		for n := range acks {
			last = n
		}
		cmd.Wait()
		lastKillAck = last
		acked = last

		temps, _ := filepath.Glob(filepath.Join(dir, ".kill.pinwalk.yaml*.tmp-*"))
		tempsLeft += len(temps)
		n := checkSavedSession(t, path, last) // opens it: cleans the temps
		if after, _ := filepath.Glob(filepath.Join(dir, ".*.tmp-*")); len(after) != 0 {
			t.Fatalf("kill %d: temporary files left after opening the session: %v", kill, after)
		}
		checked++
		if _, err := os.Stat(path + ".bak"); err == nil {
			b := checkSavedSession(t, path+".bak", 0)
			checked++
			if b < last-1 {
				t.Fatalf("kill %d: .bak holds %d readings, session %d, acknowledged %d: more than one save behind", kill, b, n, last)
			}
		} else if n > 1 {
			t.Fatalf("kill %d: no .bak after %d saves", kill, n)
		}
	}
	t.Logf("%d kills, %d readings acknowledged, %d files checked (session and .bak), %d temp files seen after kills (each cleaned when the session was next opened), failures: 0",
		kills, acked, checked, tempsLeft)
}
