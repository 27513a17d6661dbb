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

// PlainHelp is the plain-mode help: the one list of typed commands.
func PlainHelp(mode procedures.Mode) string {
	return "Commands:\n  " + strings.Join(procedures.CommandHelp(mode), "\n  ")
}

// RunPlain runs a procedure as line-by-line prompts through the session
// controller: for each step the title, instruction, cautions (a block
// starting DANGER on live steps), where to probe and the expected band
// (in training, after the trainee's prediction), then a prompt; every
// line typed goes to the controller as one action. It returns nil on
// quit, end of input or a finished procedure; the session is saved after
// every change.
func RunPlain(w *procedures.Walk, in io.Reader, out io.Writer) error {
	return RunPlainFrom(w, Start{}, in, out)
}

// RunPlainFrom is RunPlain with the word on how the session began (new
// or resumed, the design as the command line named it) for its first
// lines and the commands it prints at the end.
func RunPlainFrom(w *procedures.Walk, start Start, in io.Reader, out io.Writer) error {
	start = start.fill(w.R.Sess)
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
	c := procedures.NewController(w)
	state, err := c.Do(procedures.Action{Kind: procedures.ActRefresh})
	if err != nil {
		p("error: %v", err)
	}
	r := c.Runner()
	p("pinwalk: %s", r.Proc.Title)
	for _, l := range StartText(start, r.Path, true) {
		p("%s", l)
	}
	shown := ""
	for {
		r = c.Runner()
		st := state.Step
		if st == nil {
			return nil
		}
		if state.Finished {
			printSummary(p, r)
			p("Procedure finished. Session saved to %s.", r.Path)
			for _, l := range CommandLines(start, r.Path, true) {
				p("%s", l)
			}
			return nil
		}
		if st.ID != shown {
			shown = st.ID
			printStep(p, r, st, state)
			for _, h := range state.Hints {
				p("  %s", h)
			}
		}
		if state.WantPrediction {
			p("Predict first: what do you expect %s to read? (Enter to pass)", state.Measure.Label)
			line, ok := read("prediction> ")
			if !ok || line == "q" {
				return quit(p, r, start)
			}
			if line == "s" {
				line = ""
			}
			state, err = c.Do(procedures.Action{Kind: procedures.ActPredict, Text: line})
			say(p, state, err)
			continue
		}
		if state.Ask != nil {
			if state.Ask.Required {
				p("Question: %s (an answer is needed here)", state.Ask.Prompt)
			} else {
				p("Question: %s (Enter passes)", state.Ask.Prompt)
			}
		} else if state.Measure != nil {
			printMeasure(p, r, st, state)
		}
		if st.Kind == procedures.KindSummary {
			printSummary(p, r)
		}
		line, ok := read("> ")
		if !ok {
			return quit(p, r, start)
		}
		a := procedures.ParseCommand(line)
		switch a.Kind {
		case procedures.ActQuit:
			return quit(p, r, start)
		case procedures.ActHelp:
			p("%s", PlainHelp(r.Sess.Mode))
			continue
		case procedures.ActList:
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
			continue
		case procedures.ActRead:
			if state.Measure == nil && state.Ask == nil {
				p("%q: %s (? for help).", line, procedures.NoReading)
				continue
			}
		}
		prev := st.ID
		state, err = c.Do(a)
		if vd := state.Last; vd != nil {
			p("Recorded %s: %s", formatVal(vd.Reading.Value, vd.Reading.Unit), vd.Message)
			if vd.HasBand && vd.Reading.Status == procedures.OutOfBand && vd.Reading.Consequence == procedures.GoOn {
				p("  expected %s", procedures.FormatBand(vd.Band, vd.Reading.Unit))
			}
		}
		say(p, state, err)
		if state.Step != nil && state.Step.ID == prev && a.Kind != procedures.ActRead && a.Kind != procedures.ActRetake {
			// Same step: show it again only when asked (list, goto).
			if a.Kind == procedures.ActGoto {
				shown = ""
			}
		}
	}
}

// say prints what an action produced, and its error.
func say(p func(string, ...any), s procedures.State, err error) {
	for _, l := range s.Said {
		p("%s", l)
	}
	if err != nil {
		p("error: %v", err)
	}
}

func formatVal(v float64, unit string) string { return procedures.FormatValue(v, unit) }

func quit(p func(string, ...any), r *procedures.Runner, start Start) error {
	if err := r.SaveNow(); err != nil {
		p("error: could not save the session: %v", err)
		return err
	}
	if r.Path != "" {
		p("Saved.")
		for _, l := range CommandLines(start, r.Path, true) {
			p("%s", l)
		}
	}
	return nil
}

func printStep(p func(string, ...any), r *procedures.Runner, st *procedures.Step, s procedures.State) {
	p("")
	p("== Step %d of %d: %s ==", s.Index+1, s.Total, st.Title)
	if len(s.Blockers) > 0 {
		p("(gated: first %s)", strings.Join(s.Blockers, ", "))
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
	for _, v := range st.Pulled {
		p("Out of its socket: %s", v)
	}
	for _, c := range st.StopIf {
		p("Switch off if: %s", c)
	}
	for _, rd := range s.Stops {
		p("In force: %s", rd.Said)
	}
	if r.Training && st.Why != "" && len(st.Measures) == 0 {
		p("Why: %s", st.Why)
	}
}

func printMeasure(p func(string, ...any), r *procedures.Runner, st *procedures.Step, s procedures.State) {
	m := s.Measure
	p("Measure: %s", m.Label)
	if m.Probes != "" {
		p("  probes: %s", m.Probes)
	}
	if m.Function != "" {
		p("  meter: %s, range %s", m.Function, m.Range)
	}
	if s.HasBand {
		p("  expected: %s", procedures.FormatBand(s.Band, m.Unit))
		if s.Band.Note != "" {
			p("  note: %s", s.Band.Note)
		}
		for _, w := range s.Band.Why {
			if bandWhyShown(w) {
				p("  %s", w)
			}
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
