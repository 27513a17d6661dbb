package tui

import (
	"errors"
	"fmt"
	"strings"

	"github.com/charmbracelet/bubbles/key"
	"github.com/charmbracelet/bubbles/textinput"
	tea "github.com/charmbracelet/bubbletea"
	"github.com/charmbracelet/lipgloss"

	"pinwalk/expect/point"
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
	e *env
	// start is the first screen's word on the session (new or resumed,
	// its file), shown until the first action.
	start  []string
	w, h   int
	in     textinput.Model
	mode   inputMode
	msg    string // verdict or error from the last action
	msgBad bool
	last   *procedures.Verdict // verdict of the last reading on this step
	// sent is the line the last Enter sent: the field is cleared at once
	// (what is typed while the walk works is kept), and a refused reading
	// comes back into an empty field for editing.
	sent string
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

// moved resets the per-step state after the runner moved. Text already
// in the reading field stays: it was typed for the step now showing.
func (v *stepView) moved() {
	v.last = nil
	keep := ""
	if v.mode == modeReading {
		keep = v.in.Value()
	}
	v.setMode(modeReading)
	if keep != "" {
		v.in.SetValue(keep)
	}
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
	v.sent = v.in.Value()
	v.in.Reset()
	return v, func() tea.Msg { return actionMsg{a} }
}

// overlayMsg asks the root to open an overlay (help, steps, quit).
type overlayMsg struct{ o overlay }

// acted shows the outcome of an action on the step view. A refused
// reading stays in the field for editing; anything else clears it.
func (v *stepView) acted(a procedures.Action, s procedures.State, err error) {
	typed := a.Kind == procedures.ActRead || a.Kind == procedures.ActPredict || a.Kind == procedures.ActRetake || a.Kind == procedures.ActCorrect
	if err != nil && typed {
		// A refused reading comes back for editing, unless something
		// new has been typed since (the message quotes it either way).
		if v.in.Value() == "" && v.sent != "" {
			v.in.SetValue(v.sent)
			v.in.CursorEnd()
		}
		if a.Kind == procedures.ActRead || a.Kind == procedures.ActPredict {
			err = errors.New(readingError(a.Text, err))
		}
	}
	v.sent = ""
	var parts []string
	bad := err != nil
	if vd := s.Last; vd != nil {
		unit := vd.Reading.Unit
		parts = append(parts, v.e.g.value(vd.Reading.Value, unit)+": "+vd.Message)
		bad = bad || vd.Reading.Status == procedures.OutOfBand || vd.Reading.Status == procedures.Retry || vd.Reading.Consequence != procedures.GoOn
		v.last = vd
	}
	for _, said := range s.Said {
		// A stop's or a switch-off's own words are in the banner above.
		if s.Last != nil && s.Last.Reading.Consequence != procedures.GoOn && said == s.Last.Reading.Said {
			continue
		}
		parts = append(parts, said)
	}
	if err != nil {
		parts = append(parts, err.Error())
	}
	v.start = nil
	v.say(v.e.words(strings.Join(parts, " "+v.e.g.Dot+" ")), bad)
}

// readingError words a rejected reading.
func readingError(text string, err error) string {
	if errors.Is(err, procedures.ErrQuestioned) {
		return err.Error()
	}
	return fmt.Sprintf("cannot read %q: %v", text, err)
}

// View draws the step. At any size the instruction, where to probe and
// any stop in force are drawn whole (wrapped, never cut): the step's
// hazard folds to one line after the briefing, and the recent readings
// get what is left.
func (v stepView) View() string {
	r := v.e.run
	s, g := v.e.st, v.e.g
	st := r.Current()
	if st == nil {
		return "no steps"
	}
	w := max(20, v.w)
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
	if lipgloss.Width(state) > w/2 {
		state = g.cut(state, w/2)
	}
	var top []string
	if lipgloss.Width(title)+lipgloss.Width(state)+2 <= w {
		top = []string{joinEnds(s.Title.Render(title), s.Warn.Render(state), w)}
	} else {
		tl := wrap(title, w-lipgloss.Width(state)-2)
		top = append(top, joinEnds(s.Title.Render(tl[0]), s.Warn.Render(state), w))
		for _, l := range tl[1:] {
			top = append(top, s.Title.Render(l))
		}
	}
	if v.start != nil {
		for _, l := range v.start {
			top = append(top, s.Prompt.Render(l))
		}
	}

	halt := st.Kind == procedures.KindPowerDown && r.PendingHalt() != nil
	alert := v.alertLines(st, w, halt)

	var mid []string
	if b := r.Blockers(st); len(b) > 0 && !r.Done(st.ID) {
		for _, l := range wrap(g.OutOfBand+" NOT YET: first "+strings.Join(b, ", "), w) {
			mid = append(mid, s.Bad.Render(l))
		}
	}
	m := r.NextMeasure()
	shown := m
	if shown == nil && len(st.Measures) > 0 {
		shown = &st.Measures[len(st.Measures)-1]
	}
	var note []string
	ask := r.NextAsk()
	if ask != nil {
		n := 0
		for i := range st.Asks {
			if &st.Asks[i] == ask {
				n = i + 1
			}
		}
		head := fmt.Sprintf("Question %d of %d: ", n, len(st.Asks))
		ql := wrapHanging(head+ask.Prompt, w, 2)
		mid = append(mid, s.Label.Render(head)+strings.TrimPrefix(ql[0], head))
		mid = append(mid, ql[1:]...)
	} else if shown != nil {
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
		head := fmt.Sprintf("Reading %d of %d: ", n, len(st.Measures))
		rl := wrapHanging(head+shown.Label+meter, w, 2)
		mid = append(mid, s.Label.Render(head)+strings.TrimPrefix(rl[0], head))
		mid = append(mid, rl[1:]...)
		if shown.Probes != "" {
			mid = append(mid, wrapHanging("Probes: "+shown.Probes, w, 8)...)
		}
		var gl []string
		gl, note = v.gaugeLines(st, shown, w)
		mid = append(mid, gl...)
	} else if !halt {
		mid = append(mid, wrap("No reading: do what the step says, then press Enter to confirm it.", w)...)
	}
	if v.mode == modeReading && v.in.Value() == "" {
		switch {
		case halt:
			v.in.Placeholder = " y (or Enter) once it is off and unplugged"
		case ask != nil && ask.Required:
			v.in.Placeholder = " your answer, then Enter (needed here)"
		case ask != nil:
			v.in.Placeholder = " your answer, then Enter (an empty Enter passes)"
		case m == nil:
			v.in.Placeholder = " Enter confirms the step"
		case v.predicting(m):
			v.in.Placeholder = " your estimate, then Enter"
		default:
			v.in.Placeholder = " the meter's reading, then Enter"
		}
	}
	input := []string{v.in.View()}
	var msg []string
	if v.msg != "" {
		style := s.Good
		if v.msgBad {
			style = s.Bad
		}
		for _, l := range wrap(v.msg, w) {
			msg = append(msg, style.Render(l))
		}
	}
	if st.Live && !halt && v.last != nil && v.last.Reading.Status == procedures.OutOfBand && len(st.StopIf) > 0 {
		for _, l := range wrap("SWITCH OFF if: "+strings.Join(st.StopIf, "; "), w) {
			msg = append(msg, s.Bad.Render(l))
		}
	}
	if r.Finished() {
		msg = append(msg, v.finishLines(w)...)
	}

	var instr []string
	if !halt {
		instr = wrap(st.Instruction, w)
		if r.Training && st.Why != "" {
			instr = append(instr, wrap("Why: "+v.e.words(st.Why), w)...)
		}
	}
	fixed := len(top) + len(alert) + len(instr) + len(mid) + len(input) + len(msg)
	// The hazard: the whole caution box on the briefing and on a narrow
	// screen's first steps, one line after the briefing (F4 shows all).
	var haz []string
	if !halt {
		if v.folded(st) {
			haz = v.hazardLine(st, w)
		} else if box := v.cautionBox(st, w, max(5, v.h-fixed)); box != "" {
			haz = strings.Split(box, "\n")
		}
	}
	left := v.h - fixed - len(haz)
	if left < len(note) {
		note = nil // the band's note gives way first (F4 has the step in full)
	}
	left -= len(note)
	var hist []string
	histHead := "Recent readings:"
	if st.Kind == procedures.KindSummary {
		histHead, hist = v.exceptionLines(w, left-1)
	} else {
		hist = v.history(w, left-1)
	}

	out := append([]string{}, top...)
	out = append(out, haz...)
	out = append(out, alert...)
	out = append(out, instr...)
	out = append(out, mid...)
	out = append(out, note...)
	out = append(out, input...)
	out = append(out, msg...)
	if len(hist) > 0 || st.Kind == procedures.KindSummary {
		out = append(out, s.Dim.Render(histHead))
		out = append(out, hist...)
	}
	if len(out) > v.h && v.h > 0 {
		out = out[:v.h]
	}
	return strings.Join(out, "\n")
}

// folded: the step's cautions fold to one line once the safety briefing
// is done (the briefing itself shows them whole).
func (v stepView) folded(st *procedures.Step) bool {
	if st.Kind == procedures.KindBriefing {
		return false
	}
	for _, s := range v.e.run.Proc.Steps {
		if s.Kind == procedures.KindBriefing {
			return v.e.run.Done(s.ID)
		}
	}
	return true
}

// shortCaution is each standing caution in a few words, for the folded
// hazard line; the full text is one key away.
var shortCaution = map[string]string{
	procedures.LiveCaution:      "lethal B+ and mains, caps stay charged · one hand, shrouded probes",
	procedures.UnpluggedCaution: "plug out · caps may hold charge: treat every node as live",
	procedures.DischargeCaution: "discharge through a resistor, never a screwdriver",
	procedures.VariacCaution:    "variac and lamp limiter, load on the output",
	procedures.EarthCaution:     "meter continuity is only an indication",
	procedures.DummyLoadCaution: "load on every output",
	procedures.GeneratorCaution: "generator from its minimum",
}

// hazardLine is the folded caution: LIVE or UNPLUGGED, each caution in a
// few words, and the key for the full text; wrapped, never cut.
func (v stepView) hazardLine(st *procedures.Step, w int) []string {
	if len(st.Cautions) == 0 && !st.Live {
		return nil
	}
	s, g := v.e.st, v.e.g
	head := "CAUTION"
	if st.Live {
		head = "DANGER LIVE"
	} else if st.HasCaution("Unplug") {
		head = "UNPLUGGED"
	}
	parts := []string{head}
	for _, c := range st.Cautions {
		sc, ok := shortCaution[c]
		if !ok {
			sc = firstWords(c, 40)
		}
		if c == procedures.UnpluggedCaution && head == "UNPLUGGED" {
			sc = strings.TrimPrefix(sc, "plug out · ")
		}
		parts = append(parts, sc)
	}
	parts = append(parts, v.e.keys.Detail.Help().Key+" all cautions")
	text := g.Warning + " " + strings.Join(parts, " "+g.Dot+" ")
	var out []string
	for _, l := range wrapHanging(text, w, 2) {
		out = append(out, s.Bad.Render(l))
	}
	return out
}

// firstWords is a caution's first clause, ended at a word, at most n
// cells (with an ellipsis when it goes on: the full text is one key away).
func firstWords(c string, n int) string {
	if i := strings.IndexAny(c, ".:;"); i > 0 {
		c = c[:i]
	}
	ws := strings.Fields(c)
	out := ""
	for _, w := range ws {
		if lipgloss.Width(out)+1+lipgloss.Width(w) > n {
			return out + "…"
		}
		if out != "" {
			out += " "
		}
		out += w
	}
	return out
}

// alertLines is the banner of what the walk says must happen now: the
// SWITCH OFF NOW step with its reason, and every stop in force with the
// words the reading's rule said; wrapped in a heavy box, never cut.
func (v stepView) alertLines(st *procedures.Step, w int, halt bool) []string {
	r := v.e.run
	s, g := v.e.st, v.e.g
	inner := w - 4
	var lines []string
	if halt {
		h := r.PendingHalt()
		lines = append(lines, s.Bad.Render(g.Warning+" SWITCH OFF NOW "+g.Warning+" variac to zero, switch off, unplug"))
		for _, l := range wrap(v.e.words(h.Why), inner) {
			lines = append(lines, s.Bad.Render(l))
		}
		lines = append(lines, wrap("Its capacitors are charged: the walk asks you to discharge them again. Then type y (or Enter) to confirm it is off.", inner)...)
	}
	for _, rd := range r.Stops() {
		where := ""
		if rd.Step != st.ID {
			if i := r.Proc.Step(rd.Step); i != nil {
				where = " (step " + i.Title + ")"
			}
		}
		said := rd.Said
		if said == "" {
			said = "this reading stops the walk until it is measured again."
		}
		lines = append(lines, s.Bad.Render(wrap(g.OutOfBand+" STOP: "+v.e.label(rd.Point)+where, inner)[0]))
		for _, l := range wrap(v.e.words(said), inner) {
			lines = append(lines, s.Bad.Render(l))
		}
		how := "Measure again: type again VALUE (or the new reading)."
		if rd.Point.Domain != point.Discharge {
			how += " override REASON lets it through where the rule allows."
		}
		if rd.Step == st.ID {
			lines = append(lines, wrap(how, inner)...)
		}
	}
	if len(lines) == 0 {
		return nil
	}
	return strings.Split(s.Alert.Width(w-2).Render(strings.Join(lines, "\n")), "\n")
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
	// A box too tall for the screen is cut, never dropped: the heading
	// stays, the rest is one key away.
	limit := height - 2
	if len(lines) > limit {
		lines = append(lines[:limit-1:limit-1], s.Bad.Render("more cautions: "+v.e.keys.Detail.Help().Key+" shows them all"))
	}
	return style.Width(w - 2).Render(strings.Join(lines, "\n"))
}

// gaugeLines draws the expected band of a measure (or the prediction
// prompt in training), with the latest reading marked.
func (v stepView) gaugeLines(st *procedures.Step, m *procedures.Measure, w int) (lines, note []string) {
	s := v.e.st
	if v.predicting(m) && v.mode == modeReading {
		for _, l := range wrap("What do you expect "+m.Label+" to read?", w) {
			lines = append(lines, s.Prompt.Render(l))
		}
		return append(lines, s.Dim.Render("Type your estimate; the expected band is shown after it.")), nil
	}
	be := v.e.cachedBand(m.Point, st.Variac)
	if be.Pending {
		return []string{s.Dim.Render("working out the expected band " + v.e.g.Ellipsis)}, nil
	}
	if !be.Has {
		// A reading just taken moves the conditioning; fall back to the
		// band the reading itself was judged against.
		if rd := v.e.run.Last(st.ID, m.Point); rd != nil && rd.High > rd.Low {
			be = bandEntry{Band: procedures.Band{Nominal: rd.Nominal, Low: rd.Low, High: rd.High}, Has: true}
		} else {
			return []string{s.Dim.Render("no expected value for this point: the reading is recorded as typed")}, nil
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
	lines = gauge(s, v.e.g, w, be.Band, m.Unit, mk)
	// What narrowed the band, held it or capped it, and the meter it
	// allows for: the lines a technician needs to trust a tight band.
	for _, y := range be.Band.Why {
		if bandWhyShown(y) {
			for _, l := range wrapHanging(v.e.words(y), w, 2) {
				note = append(note, s.Dim.Render(l))
			}
		}
	}
	if be.Band.Note != "" {
		for _, l := range wrapHanging("note: "+v.e.words(be.Band.Note), w, 6) {
			note = append(note, s.Dim.Render(l))
		}
	}
	return lines, note
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

// exceptionLines is the summary step's list: every stop, reading out of
// band, override and skipped step, at most n lines (the rest counted,
// and whole in the full text); the heading counts them.
func (v stepView) exceptionLines(w, n int) (head string, lines []string) {
	s, g := v.e.st, v.e.g
	ex := procedures.Exceptions(v.e.run)
	head = fmt.Sprintf("Needs a look: %d (stops, readings out of band, overrides, skipped steps)", len(ex))
	if len(ex) == 0 {
		head = "Needs a look: nothing (no stop, no reading out of band, no override, no step skipped)"
	}
	all := exceptionText(ex, w, g)
	if n <= 0 {
		return head, nil
	}
	if len(all) > n {
		more := fmt.Sprintf("  and %d more lines: %s shows them all", len(all)-n+1, v.e.keys.Detail.Help().Key)
		all = append(all[:n-1:n-1], more)
	}
	for _, l := range all {
		lines = append(lines, s.Bad.Render(l))
	}
	return head, lines
}

// exceptionText words the exceptions, wrapped to w cells.
func exceptionText(ex []procedures.Exception, w int, g Glyphs) []string {
	var out []string
	for _, e := range ex {
		out = append(out, wrapHanging(" "+g.OutOfBand+" "+strings.ToUpper(e.Kind)+": "+e.Text+" ("+e.Step+")", w, 4)...)
	}
	return out
}

// finishLines is the end of the procedure: skipped safety steps, in
// training and practice the score of the predictions, and the exact
// commands to resume the session and to write its job sheets.
func (v stepView) finishLines(w int) []string {
	s, g := v.e.st, v.e.g
	r := v.e.run
	out := []string{s.Good.Render(g.Done + " Every step is done and saved. Next:")}
	for _, sk := range r.SkippedSafety() {
		out = append(out, s.Bad.Render(v.e.g.cut(g.OutOfBand+" safety step skipped: "+sk.Step+" ("+sk.Reason+")", w)))
	}
	if r.Training {
		out = append(out, practiceScore(r.Sess, g)...)
	}
	for _, c := range CommandLines(v.e.cfg.Start, v.e.cfg.Path, false) {
		out = append(out, wrapHanging(c, w, 2)...)
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

// bandWhyShown picks the lines of a band's why that the step screen and
// the plain mode show under the expected band.
func bandWhyShown(w string) bool {
	for _, p := range []string{"narrowed by", "held at or", "the readings do not fit", "capped at", "meter "} {
		if strings.HasPrefix(w, p) {
			return true
		}
	}
	return false
}
