package tui

import (
	"errors"
	"fmt"
	"strings"

	"github.com/charmbracelet/bubbles/key"
	"github.com/charmbracelet/bubbles/textinput"
	tea "github.com/charmbracelet/bubbletea"
	"github.com/charmbracelet/lipgloss"

	"pinwalk/procedures"
)

// inputMode says what the step view's input line is for.
type inputMode int

const (
	modeReading inputMode = iota
	modeSkip
	modeNote
)

// stepView is the main view: the current step's instruction and cautions,
// where to probe, the expected band as a gauge, the value input and the
// last readings.
type stepView struct {
	e      *env
	w, h   int
	in     textinput.Model
	mode   inputMode
	msg    string // verdict or error from the last action
	msgBad bool
	last   *procedures.Verdict // verdict of the last reading on this step
}

func newStepView(e *env) stepView {
	v := stepView{e: e, in: newInput(e.st, e.g, e.keys)}
	v.setMode(modeReading)
	return v
}

// SetSize sets the view's size in cells.
func (v *stepView) SetSize(w, h int) {
	v.w, v.h = max(0, w), max(0, h)
	v.fitInput()
}

// fitInput gives the field the width the prompt leaves (the text scrolls
// sideways beyond it).
func (v *stepView) fitInput() {
	v.in.Width = max(1, v.w-lipgloss.Width(v.in.Prompt)-2)
}

func (v *stepView) setMode(m inputMode) {
	v.mode = m
	v.in.Reset()
	switch m {
	case modeSkip:
		v.in.Prompt = "Why skip this step? > "
		v.in.Placeholder = " (a few words; Enter records, Esc cancels)"
	case modeNote:
		v.in.Prompt = "Note > "
		v.in.Placeholder = " (Enter saves, Esc cancels)"
	default:
		v.in.Prompt = "> "
		v.in.Placeholder = ""
	}
	v.fitInput()
}

// predicting reports whether the input asks for a trainee's prediction
// for measure m (training and practice, before the band is shown).
func (v *stepView) predicting(m *procedures.Measure) bool {
	return m != nil && v.e.run.Training && v.e.guessFor(v.e.run.Current().ID, m.Point) == nil
}

// bandCmds asks for the bands of the current step's measures.
func (v *stepView) bandCmds() tea.Cmd {
	st := v.e.run.Current()
	if st == nil {
		return nil
	}
	var cmds []tea.Cmd
	for i := range st.Measures {
		if _, c := v.e.band(st.Measures[i].Point, st.Variac); c != nil {
			cmds = append(cmds, c)
		}
	}
	return tea.Batch(cmds...)
}

// moved resets the per-step state after the runner moved.
func (v *stepView) moved() {
	v.last = nil
	v.setMode(modeReading)
}

func (v stepView) Update(msg tea.Msg) (stepView, tea.Cmd) {
	k, ok := msg.(tea.KeyMsg)
	if !ok {
		return v, nil
	}
	r := v.e.run
	keys := v.e.keys
	switch {
	case key.Matches(k, keys.Cancel) && v.mode != modeReading:
		v.setMode(modeReading)
		v.say("cancelled", false)
		return v, nil
	case key.Matches(k, keys.Skip) && v.mode == modeReading:
		v.setMode(modeSkip)
		return v, nil
	case key.Matches(k, keys.Note) && v.mode == modeReading:
		v.setMode(modeNote)
		return v, nil
	case key.Matches(k, keys.NextStep):
		return v, func() tea.Msg { return actionMsg{procedures.Action{Kind: procedures.ActNext}} }
	case key.Matches(k, keys.PrevStep):
		i := r.CurrentIndex() - 1
		if i < 0 {
			v.say("this is the first step", true)
			return v, nil
		}
		id := r.Proc.Steps[i].ID
		return v, func() tea.Msg { return actionMsg{procedures.Action{Kind: procedures.ActGoto, Step: id}} }
	case key.Matches(k, keys.Enter):
		return v.enter()
	}
	var cmd tea.Cmd
	v.in, cmd = v.in.Update(msg)
	return v, cmd
}

func (v *stepView) say(s string, bad bool) { v.msg, v.msgBad = s, bad }

// actionMsg asks the root to send an action to the session controller.
type actionMsg struct{ A procedures.Action }

// enter turns the input line into an action for the controller (the
// root runs it in a command); the view changes nothing itself.
func (v stepView) enter() (stepView, tea.Cmd) {
	r := v.e.run
	text := strings.TrimSpace(v.in.Value())
	var a procedures.Action
	switch v.mode {
	case modeSkip:
		a = procedures.Action{Kind: procedures.ActSkip, Reason: text}
	case modeNote:
		if text == "" {
			v.setMode(modeReading)
			return v, nil
		}
		a = procedures.Action{Kind: procedures.ActNote, Text: text}
	default:
		st := r.Current()
		if st == nil {
			return v, nil
		}
		m := r.NextMeasure()
		a = procedures.ParseCommand(text)
		if a.Kind == procedures.ActRead && m == nil && r.NextAsk() == nil {
			v.say("this step takes no reading: Enter with an empty line confirms it", true)
			return v, nil
		}
		if a.Kind == procedures.ActRead && v.predicting(m) {
			a.Kind = procedures.ActPredict
		}
		switch a.Kind {
		case procedures.ActHelp:
			v.in.Reset()
			return v, func() tea.Msg { return overlayMsg{overHelp} }
		case procedures.ActList:
			v.in.Reset()
			return v, func() tea.Msg { return overlayMsg{overSteps} }
		case procedures.ActQuit:
			v.in.Reset()
			return v, func() tea.Msg { return overlayMsg{overQuit} }
		}
	}
	if v.mode != modeReading {
		v.setMode(modeReading)
	}
	return v, func() tea.Msg { return actionMsg{a} }
}

// overlayMsg asks the root to open an overlay (help, steps, quit).
type overlayMsg struct{ o overlay }

// acted shows the outcome of an action on the step view. A refused
// reading stays in the field for editing; anything else clears it.
func (v *stepView) acted(a procedures.Action, s procedures.State, err error) {
	typed := a.Kind == procedures.ActRead || a.Kind == procedures.ActPredict || a.Kind == procedures.ActRetake || a.Kind == procedures.ActCorrect
	if err == nil || !typed {
		v.in.Reset()
	} else if a.Kind == procedures.ActRead || a.Kind == procedures.ActPredict {
		err = errors.New(readingError(a.Text, err))
	}
	var parts []string
	bad := err != nil
	if vd := s.Last; vd != nil {
		unit := vd.Reading.Unit
		parts = append(parts, v.e.g.value(vd.Reading.Value, unit)+": "+vd.Message)
		bad = bad || vd.Reading.Status == procedures.OutOfBand || vd.Reading.Status == procedures.Retry || vd.Reading.Consequence != procedures.GoOn
		v.last = vd
	}
	parts = append(parts, s.Said...)
	if err != nil {
		parts = append(parts, err.Error())
	}
	v.say(strings.Join(parts, " "+v.e.g.Dot+" "), bad)
}

// readingError words a rejected reading.
func readingError(text string, err error) string {
	if errors.Is(err, procedures.ErrQuestioned) {
		return err.Error()
	}
	return fmt.Sprintf("cannot read %q: %v", text, err)
}

// View draws the step.
func (v stepView) View() string {
	r := v.e.run
	s, g := v.e.st, v.e.g
	st := r.Current()
	if st == nil {
		return "no steps"
	}
	w := max(20, v.w)
	// Fixed parts first, then the instruction and history share what is left.
	title := fmt.Sprintf("Step %d of %d %s %s", r.CurrentIndex()+1, len(r.Proc.Steps), g.Dot, st.Title)
	state := ""
	switch {
	case r.Done(st.ID):
		if why, ok := r.Skipped(st.ID); ok {
			state = g.Skipped + " skipped: " + why
		} else {
			state = g.Done + " done"
		}
	case st.Live:
		state = "LIVE"
	default:
		state = "unplugged"
	}
	if st.Live && st.Variac > 0 && st.Variac < 1 {
		state += fmt.Sprintf(" %s variac %.0f %%", g.Dot, 100*st.Variac)
	}
	top := []string{joinEnds(s.Title.Render(v.e.g.cut(title, w-lipgloss.Width(state)-2)), s.Warn.Render(state), w)}

	var mid []string
	if b := r.Blockers(st); len(b) > 0 && !r.Done(st.ID) {
		mid = append(mid, s.Bad.Render(g.OutOfBand+" NOT YET: first "+strings.Join(b, ", ")))
	}
	m := r.NextMeasure()
	shown := m
	if shown == nil && len(st.Measures) > 0 {
		shown = &st.Measures[len(st.Measures)-1]
	}
	if shown != nil {
		n := 0
		for i := range st.Measures {
			if &st.Measures[i] == shown || st.Measures[i].Point == shown.Point {
				n = i + 1
			}
		}
		meter := " " + g.Dot + " " + string(shown.Function)
		if shown.Range != "" {
			meter += ", " + shown.Range
		}
		mid = append(mid, v.e.g.cut(s.Label.Render(fmt.Sprintf("Reading %d of %d: ", n, len(st.Measures)))+shown.Label+meter, w))
		if shown.Probes != "" {
			for _, l := range wrap("Probes: "+shown.Probes, w) {
				mid = append(mid, l)
			}
		}
		mid = append(mid, v.gaugeLines(st, shown, w)...)
	} else {
		mid = append(mid, s.Dim.Render("No reading: do what the step says, then press Enter to confirm it."))
	}
	if v.mode == modeReading && v.in.Value() == "" {
		switch {
		case m == nil:
			v.in.Placeholder = " Enter confirms the step"
		case v.predicting(m):
			v.in.Placeholder = " your estimate, then Enter"
		default:
			v.in.Placeholder = " the meter's reading, then Enter"
		}
	}
	mid = append(mid, v.in.View())
	if v.msg != "" {
		style := s.Good
		if v.msgBad {
			style = s.Bad
		}
		for _, l := range wrap(v.msg, w) {
			mid = append(mid, style.Render(l))
		}
	}
	if st.Live && v.last != nil && v.last.Reading.Status == procedures.OutOfBand && len(st.StopIf) > 0 {
		mid = append(mid, s.Bad.Render(v.e.g.cut("SWITCH OFF if: "+strings.Join(st.StopIf, "; "), w)))
	}
	if r.Finished() {
		mid = append(mid, v.finishLines(w)...)
	}

	// The caution box gets what the fixed parts leave, less one line for
	// the instruction, but never less than its heading and two lines.
	box := v.cautionBox(st, w, max(5, v.h-len(top)-len(mid)-1))
	boxLines := strings.Split(box, "\n")
	if box == "" {
		boxLines = nil
	}
	left := v.h - len(top) - len(boxLines) - len(mid)
	instr := wrap(st.Instruction, w)
	if r.Training && st.Why != "" {
		instr = append(instr, wrap("Why: "+st.Why, w)...)
	}
	if left < len(instr) {
		keep := max(1, left)
		if keep < len(instr) {
			instr = append(instr[:keep-1:keep-1], v.e.g.cut(instr[keep-1], w-16)+" (^E: all)")
		}
	}
	left -= len(instr)
	hist := v.history(w, left-1)

	out := append([]string{}, top...)
	out = append(out, boxLines...)
	out = append(out, instr...)
	out = append(out, mid...)
	if len(hist) > 0 {
		out = append(out, s.Dim.Render("Recent readings:"))
		out = append(out, hist...)
	}
	if len(out) > v.h && v.h > 0 {
		out = out[:v.h]
	}
	return strings.Join(out, "\n")
}

// cautionBox draws the step's cautions in a bordered box headed DANGER on
// live steps and CAUTION otherwise; the heading word is there without
// colour too.
func (v stepView) cautionBox(st *procedures.Step, w, height int) string {
	if len(st.Cautions) == 0 && !st.Live {
		return ""
	}
	s, g := v.e.st, v.e.g
	inner := w - 4
	var lines []string
	head := "CAUTION"
	style := s.Caution
	if st.Live {
		head = "DANGER " + g.Dot + " LIVE: mains and B+ are present"
		style = s.Danger
	}
	lines = append(lines, s.Bad.Render(head))
	for _, c := range st.Cautions {
		lines = append(lines, wrap(c, inner)...)
	}
	// A box taller than a third of the screen is cut, never dropped: the
	// heading stays, the rest is one key away.
	limit := height - 2
	if len(lines) > limit {
		lines = append(lines[:limit-1:limit-1], s.Bad.Render("more cautions below: Ctrl+E (^E) shows them all"))
	}
	return style.Width(w - 2).Render(strings.Join(lines, "\n"))
}

// gaugeLines draws the expected band of a measure (or the prediction
// prompt in training), with the latest reading marked.
func (v stepView) gaugeLines(st *procedures.Step, m *procedures.Measure, w int) []string {
	s := v.e.st
	if v.predicting(m) && v.mode == modeReading {
		return []string{
			s.Prompt.Render("What do you expect " + m.Label + " to read?"),
			s.Dim.Render("Type your estimate; the expected band is shown after it."),
		}
	}
	be := v.e.cachedBand(m.Point, st.Variac)
	if be.Pending {
		return []string{s.Dim.Render("working out the expected band " + v.e.g.Ellipsis)}
	}
	if !be.Has {
		// A reading just taken moves the conditioning; fall back to the
		// band the reading itself was judged against.
		if rd := v.e.run.Last(st.ID, m.Point); rd != nil && rd.High > rd.Low {
			be = bandEntry{Band: procedures.Band{Nominal: rd.Nominal, Low: rd.Low, High: rd.High}, Has: true}
		} else {
			return []string{s.Dim.Render("no expected value for this point: the reading is recorded as typed")}
		}
	}
	mk := gaugeMarks{}
	if rd := v.e.run.Last(st.ID, m.Point); rd != nil {
		val := rd.Value
		mk.Reading, mk.Status = &val, rd.Status
	} else if v.last != nil && v.last.Reading.Point == m.Point {
		val := v.last.Reading.Value
		mk.Reading, mk.Status = &val, v.last.Reading.Status
	}
	if gu := v.e.guessFor(st.ID, m.Point); gu != nil && v.e.run.Training {
		val := gu.Value
		mk.Guess = &val
	}
	lines := gauge(s, v.e.g, w, be.Band, m.Unit, mk)
	if be.Band.Note != "" {
		lines = append(lines, s.Dim.Render(v.e.g.cut("note: "+be.Band.Note, w)))
	}
	return lines
}

// history lists the latest readings of the session, newest first.
func (v stepView) history(w, n int) []string {
	if n <= 0 {
		return nil
	}
	s, g := v.e.st, v.e.g
	rs := v.e.run.Sess.Readings
	labelW := min(60, max(28, w-36)) // the rest: glyph, value, variac, verdict
	var out []string
	for i := len(rs) - 1; i >= 0 && len(out) < n; i-- {
		rd := rs[i]
		glyph, word, style := statusMark(s, g, rd.Status)
		at := ""
		if rd.Variac > 0 && rd.Variac < 1 {
			at = fmt.Sprintf(" @%.0f%%", 100*rd.Variac)
		}
		line := fmt.Sprintf(" %s %-*s %12s%s  %s", glyph, labelW, v.e.g.cut(v.e.label(rd.Point), labelW), v.e.g.value(rd.Value, rd.Unit), at, word)
		out = append(out, style.Render(v.e.g.cut(line, w)))
	}
	return out
}

// finishLines is the end-of-procedure summary: skipped safety steps and,
// in training and practice, the score of the predictions.
func (v stepView) finishLines(w int) []string {
	s, g := v.e.st, v.e.g
	r := v.e.run
	out := []string{s.Good.Render(g.Done + " Every step is done. The session is saved; the job sheet comes from it.")}
	for _, sk := range r.SkippedSafety() {
		out = append(out, s.Bad.Render(v.e.g.cut(g.OutOfBand+" safety step skipped: "+sk.Step+" ("+sk.Reason+")", w)))
	}
	if r.Training {
		out = append(out, practiceScore(r.Sess, g)...)
	}
	return out
}

// practiceScore words the trainee's score: predictions within the band,
// and the practice fault once it is revealed.
func practiceScore(sess *procedures.Session, g Glyphs) []string {
	good := 0
	for _, gu := range sess.Guesses {
		if gu.Good {
			good++
		}
	}
	out := []string{fmt.Sprintf("Predictions: %d of %d within the expected band", good, len(sess.Guesses))}
	if len(sess.Attempts) > 0 {
		out = append(out, fmt.Sprintf("Out-of-order attempts: %d", len(sess.Attempts)))
	}
	if p := sess.Practice; p != nil {
		if p.Revealed {
			verdict := g.OutOfBand + " not found"
			if p.Named != "" && p.Named == p.Fault {
				verdict = g.InBand + " found"
			}
			out = append(out, fmt.Sprintf("Practice fault: %s (you named %q) %s %s score %d", p.Fault, p.Named, verdict, g.Dot, p.Score))
		} else {
			out = append(out, fmt.Sprintf("Practice score so far: %d", p.Score))
		}
	}
	return out
}

// joinEnds puts a on the left and b on the right of a line w cells wide.
func joinEnds(a, b string, w int) string {
	gap := w - lipgloss.Width(a) - lipgloss.Width(b)
	if gap < 1 {
		return a + " " + b
	}
	return a + strings.Repeat(" ", gap) + b
}
