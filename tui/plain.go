// Package tui is pinwalk's interactive front end: a plain line-by-line
// mode (this file) for scripts, logs and screen readers, and full-screen
// views.
package tui

import (
	"bufio"
	"fmt"
	"io"
	"strings"

	"pinwalk/procedures"
)

// PlainHelp lists the plain-mode commands.
const PlainHelp = `Commands:
  VALUE          record a reading (312, 4.7mA, 2k2, OL); end with ! to keep a reading the tool questions
  y or Enter     confirm a step that takes no reading
  s REASON       skip the step, with a reason (safety skips are listed in every summary)
  n TEXT         add a note
  goto STEP      go to another step (gates apply)
  list           list the steps and whether each is done
  symptoms LIST  (fault-finding) the symptoms, comma-separated
                 after each reading the next best measurement follows by itself
  measure KEY    (fault-finding) choose your own measurement instead ("V2.3 dc_volts", "cold:B1 ohms")
  power          (fault-finding) power up on the variac now, then measure live
  stop           (fault-finding) stop measuring and go on to confirm the leading suspect
  m              (practice) take the (simulated) reading
  name REF:MODE  (practice) name the fault
  ?              this help
  q              quit (the session is already saved)`

// RunPlain runs a procedure as line-by-line prompts: for each step the
// title, instruction, cautions (a block starting DANGER on live steps),
// where to probe and the expected band (in training, after the trainee's
// prediction), then a prompt. It returns nil on quit, end of input or a
// finished procedure; the session is saved after every change.
func RunPlain(w *procedures.Walk, in io.Reader, out io.Writer) error {
	r := w.R
	sc := bufio.NewScanner(in)
	sc.Buffer(make([]byte, 64<<10), 1<<20)
	p := func(format string, a ...any) { fmt.Fprintf(out, format+"\n", a...) }
	read := func(prompt string) (string, bool) {
		fmt.Fprint(out, prompt)
		if !sc.Scan() {
			fmt.Fprintln(out)
			return "", false
		}
		return strings.TrimSpace(sc.Text()), true
	}
	p("pinwalk: %s", r.Proc.Title)
	if r.Path != "" {
		p("Session file: %s (saved after every entry)", r.Path)
	}
	shown := ""
	noGuess := map[string]bool{} // predictions the trainee passed on
	for {
		if w.Loop != nil {
			if err := w.Loop.Advance(); err != nil {
				p("error: %v", err)
			}
		}
		st := r.Current()
		if st == nil {
			return nil
		}
		if r.Finished() {
			printSummary(p, r)
			p("Procedure finished. Session saved to %s.", r.Path)
			return nil
		}
		if st.ID != shown {
			shown = st.ID
			printStep(p, r, st)
			if w.Loop != nil {
				for _, h := range w.Loop.Hint() {
					p("  %s", h)
				}
			}
		}
		m := r.NextMeasure()
		if m != nil && r.Training && !guessed(r, m.Point) && !noGuess[m.Point] && len(r.Blockers(st)) == 0 {
			p("Predict first: what do you expect %s to read? (Enter to pass)", m.Label)
			line, ok := read("prediction> ")
			if !ok {
				return quit(p, r)
			}
			if line == "q" {
				return quit(p, r)
			}
			if line != "" && line != "s" {
				g, err := r.Predict(st, m, line)
				if err != nil {
					p("error: %v", err)
					continue
				}
				verdict := "outside"
				if g.Good {
					verdict = "within"
				}
				p("Your prediction %s is %s the expected band.", line, verdict)
				if st.Why != "" {
					p("Why: %s", st.Why)
				}
			} else {
				noGuess[m.Point] = true
				if st.Why != "" && r.Sess.Mode == procedures.Practise {
					p("Why: %s", st.Why)
				}
			}
		}
		if m != nil {
			printMeasure(p, r, st, m)
		}
		if st.Kind == procedures.KindSummary {
			printSummary(p, r)
		}
		line, ok := read("> ")
		if !ok {
			return quit(p, r)
		}
		word, rest, _ := strings.Cut(line, " ")
		rest = strings.TrimSpace(rest)
		if w.Loop != nil {
			handled, lines, err := w.Loop.Command(line)
			for _, l := range lines {
				p("%s", l)
			}
			if err != nil {
				p("error: %v", err)
			}
			if handled {
				if r.Done(st.ID) {
					r.Next()
				}
				continue
			}
		}
		switch {
		case line == "q" || line == "quit":
			return quit(p, r)
		case line == "?" || line == "help":
			p("%s", PlainHelp)
		case line == "" || line == "y" || line == "yes":
			if m != nil {
				if r.Sess.Mode == procedures.Practise {
					p("This step needs a reading (%s): m to take the (simulated) reading, or s REASON to skip it.", m.Label)
				} else {
					p("This step needs a reading (%s): type the meter's value, or s REASON to skip it.", m.Label)
				}
				continue
			}
			if err := r.Confirm(); err != nil {
				p("error: %v", err)
				continue
			}
			r.Next()
		case word == "s" || word == "skip":
			if err := r.Skip(rest); err != nil {
				p("error: %v", err)
				continue
			}
			if st.Safety {
				p("SKIPPED SAFETY STEP %q: recorded with your reason and shown in every summary.", st.Title)
			}
			r.Next()
		case word == "n" || word == "note":
			if err := r.Note(rest); err != nil {
				p("error: %v", err)
			} else {
				p("noted.")
			}
		case word == "goto":
			if err := r.Goto(rest); err != nil {
				p("error: %v", err)
			}
		case line == "list":
			for i, s := range r.Proc.Steps {
				mark := " "
				if r.Done(s.ID) {
					mark = "x"
				}
				if i == r.CurrentIndex() {
					mark = ">"
				}
				p("  [%s] %-16s %s", mark, s.ID, s)
			}
		default:
			if m == nil {
				p("%q: %s (? for help).", line, procedures.NoReading)
				continue
			}
			vd, err := r.Enter("", line)
			if err != nil {
				p("error: %v", err)
				continue
			}
			p("Recorded %s: %s", formatVal(vd.Reading.Value, m.Unit), vd.Message)
			if vd.HasBand && vd.Reading.Status == procedures.OutOfBand {
				p("  expected %s", procedures.FormatBand(vd.Band, m.Unit))
				for _, c := range st.StopIf {
					p("  STOP IF: %s", c)
				}
			}
			if r.Done(st.ID) {
				r.Next()
			}
		}
	}
}

func formatVal(v float64, unit string) string { return procedures.FormatValue(v, unit) }

func guessed(r *procedures.Runner, point string) bool {
	for _, g := range r.Sess.Guesses {
		if g.Point == point {
			return true
		}
	}
	return false
}

func quit(p func(string, ...any), r *procedures.Runner) error {
	if err := r.SaveNow(); err != nil {
		p("error: could not save the session: %v", err)
		return err
	}
	if r.Path != "" {
		p("Saved. Resume with --session %s", r.Path)
	}
	return nil
}

func printStep(p func(string, ...any), r *procedures.Runner, st *procedures.Step) {
	p("")
	p("== Step %d of %d: %s ==", r.CurrentIndex()+1, len(r.Proc.Steps), st.Title)
	if b := r.Blockers(st); len(b) > 0 {
		p("(gated: first %s)", strings.Join(b, ", "))
	}
	if st.Live {
		p("DANGER: LIVE STEP")
		for _, c := range st.Cautions {
			p("DANGER: %s", c)
		}
	} else {
		for _, c := range st.Cautions {
			p("CAUTION: %s", c)
		}
	}
	if st.Instruction != "" {
		p("%s", st.Instruction)
	}
	if st.Variac > 0 {
		p("Variac: %.0f %% of mains.", 100*st.Variac)
	}
	for _, s := range st.StopIf {
		p("Stop if: %s", s)
	}
	if r.Training && st.Why != "" && len(st.Measures) == 0 {
		p("Why: %s", st.Why)
	}
}

func printMeasure(p func(string, ...any), r *procedures.Runner, st *procedures.Step, m *procedures.Measure) {
	p("Measure: %s", m.Label)
	if m.Probes != "" {
		p("  probes: %s", m.Probes)
	}
	if m.Function != "" {
		p("  meter: %s, range %s", m.Function, m.Range)
	}
	if b, ok := r.Expected(st, m); ok {
		p("  expected: %s", procedures.FormatBand(b, m.Unit))
		if b.Note != "" {
			p("  note: %s", b.Note)
		}
	}
	if r.Sess.Mode == procedures.Practise {
		p("  m to take the (simulated) reading")
	}
}

func printSummary(p func(string, ...any), r *procedures.Runner) {
	p("== Summary ==")
	for _, l := range procedures.Summary(r) {
		p("%s", l)
	}
}
