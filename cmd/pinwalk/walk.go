package main

import (
	"context"
	"errors"
	"flag"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strings"
	"time"

	"github.com/charmbracelet/x/term"

	"pinwalk/expect/bands"
	"pinwalk/expect/units"
	"pinwalk/procedures"
	"pinwalk/tui"
)

// walkInput is where walk reads its answers (tests replace it).
var walkInput io.Reader = os.Stdin

// runWalk runs a procedure on a design: bring-up, fault-finding,
// training or practice, saving a session file after every entry.
// --plain gives line-by-line prompts on stdin/stdout.
func runWalk(args []string, stdout, stderr io.Writer) int {
	fs := flag.NewFlagSet("walk", flag.ContinueOnError)
	fs.SetOutput(stderr)
	plain := fs.Bool("plain", false, "line-by-line prompts on stdin/stdout (no screen control, no colour): for scripts, logs and screen readers")
	mode := fs.String("mode", "bringup", "procedure: bringup, faultfind, training, practice or signal (signal tracing with a test tone)")
	tone := fs.String("tone", "", "signal mode: the test tone FREQ:LEVEL at the input grid (default 1kHz:100mV)")
	sessPath := fs.String("session", "", "session file: resumed when it exists, created otherwise (default: DESIGN-MODE-DATE.pinwalk.yaml in the current directory, e.g. se-6v6-stereo-bringup-2025-03-01.pinwalk.yaml; pinwalk with no arguments resumes "+demoSessionHint()+")")
	seed := fs.Uint64("seed", 1, "seed of the bands and of a practice session's hidden fault")
	samples := fs.Int("samples", bands.DefaultSamples, "Monte Carlo samples per variac setting")
	accept := fs.Bool("accept-changed-design", false, "continue a session whose design file changed since it started")
	// Job intake, for scripts (the walk asks for the same on screen).
	customer := fs.String("customer", "", "job intake: the customer's name")
	ampName := fs.String("amp", "", "job intake: the amp's make and model")
	serial := fs.String("serial", "", "job intake: the amp's serial number")
	complaint := fs.String("complaint", "", "job intake: the fault in the customer's words")
	technician := fs.String("technician", "", "who works on the amp (signs the job sheet)")
	meterName := fs.String("bench-meter", "", "the meter used: make, model and accuracy as on its data sheet")
	benchMains := fs.String("bench-mains", "", "bench mains as measured at the wall, volts rms (e.g. 232)")
	fs.Usage = func() {
		fmt.Fprintf(stderr, "Usage: pinwalk walk [DESIGN] [--plain] [--mode bringup|faultfind|training|practice|signal] [--session FILE] [--seed N]\n\n")
		fs.PrintDefaults()
	}
	pos, code, done := parseInterspersed(fs, args)
	if done {
		return code
	}
	if len(pos) > 1 {
		fmt.Fprintf(stderr, "pinwalk walk: one design expected, got %d\n", len(pos))
		return exitUsage
	}
	arg := ""
	if len(pos) == 1 {
		arg = pos[0]
	}
	m, err := procedures.ParseMode(*mode)
	if err != nil {
		fmt.Fprintf(stderr, "pinwalk walk: %v\n", err)
		return exitUsage
	}
	d, probs, err := loadDesign(arg, stderr)
	if err != nil {
		for _, p := range probs.Errors() {
			fmt.Fprintln(stderr, p.Error())
		}
		fmt.Fprintf(stderr, "pinwalk walk: %v\n", err)
		return exitProblems
	}
	now := time.Now()
	path := *sessPath
	if path == "" {
		path = procedures.DefaultSessionPath(d, m, now)
	}
	var sess *procedures.Session
	start := tui.Start{Design: arg, Fresh: freshPath(path)}
	if arg == "" {
		start.Design = "demo"
	}
	if _, err := os.Stat(path); err == nil {
		sess, err = procedures.LoadSession(path)
		if err != nil {
			fmt.Fprintf(stderr, "pinwalk walk: %v\n", err)
			return exitProblems
		}
		start.Resumed, start.Readings = true, len(sess.Readings)
	} else {
		sess = procedures.NewSession(d, m, *seed, now)
	}
	start.Mode = sess.Mode
	if err := fillIntake(sess, *customer, *ampName, *serial, *complaint, *technician, *meterName, *benchMains); err != nil {
		fmt.Fprintf(stderr, "pinwalk walk: %v\n", err)
		return exitUsage
	}
	wo := procedures.WalkOptions{Samples: *samples, Seed: *seed, AcceptChanged: *accept}
	if *tone != "" {
		if wo.Tone, err = parseTone(*tone); err != nil {
			fmt.Fprintf(stderr, "pinwalk walk: --tone: %v\n", err)
			return exitUsage
		}
	}
	w, err := procedures.Open(d, sess, path, wo)
	if err != nil {
		var dc *procedures.DesignChangedError
		if errors.As(err, &dc) {
			fmt.Fprintf(stderr, "pinwalk walk: %v\n", err)
			return exitProblems
		}
		fmt.Fprintf(stderr, "pinwalk walk: %v\n", err)
		return exitFailure
	}
	if !*plain && isTerminal(stdout) && walkInput == os.Stdin && isTerminal(os.Stdin) {
		if err := tui.Run(context.Background(), tui.Config{Walk: w, Start: start}); err != nil {
			fmt.Fprintf(stderr, "pinwalk walk: %v (the session file keeps every reading saved before this)\n", err)
			return exitFailure
		}
		return exitOK
	}
	if !*plain {
		fmt.Fprintln(stderr, "pinwalk walk: not a terminal; running in --plain mode")
	}
	if err := tui.RunPlainFrom(w, start, walkInput, stdout); err != nil {
		fmt.Fprintf(stderr, "pinwalk walk: %v\n", err)
		return exitFailure
	}
	return exitOK
}

// freshPath is a session file beside path that does not exist yet, for
// the command that starts a fresh session instead of resuming path:
// NAME-2.pinwalk.yaml, NAME-3.pinwalk.yaml and so on.
func freshPath(path string) string {
	dir, file := filepath.Split(path)
	ext := ".pinwalk.yaml"
	if !strings.HasSuffix(file, ext) {
		ext = filepath.Ext(file)
	}
	base := strings.TrimSuffix(file, ext)
	for n := 2; n < 1000; n++ {
		p := filepath.Join(dir, fmt.Sprintf("%s-%d%s", base, n, ext))
		if _, err := os.Stat(p); errors.Is(err, os.ErrNotExist) {
			return p
		}
	}
	return ""
}

// isTerminal reports whether w is a terminal (the full-screen view needs
// one; anything else gets the plain line-by-line mode).
func isTerminal(w any) bool {
	f, ok := w.(*os.File)
	return ok && term.IsTerminal(f.Fd())
}

// fillIntake sets the session's job-intake and bench fields from the
// walk's flags; an empty flag leaves its field as it is (a resumed
// session keeps what it has).
func fillIntake(s *procedures.Session, customer, ampName, serial, complaint, technician, meter, mains string) error {
	set := func(dst *string, v string) {
		if v = strings.TrimSpace(v); v != "" {
			*dst = v
		}
	}
	set(&s.Job.Customer, customer)
	set(&s.Bench.AmpID, ampName)
	set(&s.Bench.Serial, serial)
	set(&s.Job.Complaint, complaint)
	set(&s.Bench.Who, technician)
	set(&s.Bench.Meter, meter)
	if mains = strings.TrimSpace(mains); mains != "" {
		v, err := units.Parse(mains, units.Volts)
		if err != nil || v < 50 || v > 300 {
			return fmt.Errorf("--bench-mains %q: expected the mains volts as measured, 50 to 300 (e.g. 232 or 232V)", mains)
		}
		s.Bench.Mains = v
	}
	return nil
}
