package tui

import (
	"fmt"
	"strings"

	"github.com/charmbracelet/bubbles/key"
	"github.com/charmbracelet/lipgloss"

	"pinwalk/procedures"
)

// modeName words a session mode for the header.
func modeName(m procedures.Mode) string {
	switch m {
	case procedures.BringUp:
		return "BRING-UP"
	case procedures.FaultFind:
		return "FAULT-FINDING"
	case procedures.Training:
		return "TRAINING"
	case procedures.Practise:
		return "PRACTICE"
	}
	return strings.ToUpper(string(m))
}

// View draws the screen: header, tabs, the body (the view or an overlay),
// the status line and the short help.
func (m Model) View() string {
	body := m.frozen
	if !m.busy {
		body = m.body()
	}
	lines := []string{m.header(), m.tabs()}
	bl := strings.Split(body, "\n")
	bh := m.bodyHeight()
	if len(bl) > bh {
		bl = bl[:bh]
	}
	for len(bl) < bh {
		bl = append(bl, "")
	}
	lines = append(lines, bl...)
	lines = append(lines, m.statusLine(), m.footer())
	// Last, what the engine and the design say (µF in a label, an en
	// dash in a note) is spelled in ASCII too.
	if m.cfg.ASCII {
		for i, l := range lines {
			lines[i] = m.e.g.cut(asciiFold(l), m.w)
		}
	}
	return strings.Join(lines, "\n")
}

// hint is a binding with a shorter description for the foot line.
func hint(b key.Binding, desc string) key.Binding {
	b.SetHelp(b.Help().Key, desc)
	return b
}

// shortHelp is the foot line's keys for what is on screen, with short
// words. Letters and spaces are readings and typed commands, so every
// key here is a function key, Tab, Enter, Esc or an arrow.
func (m Model) shortHelp() []key.Binding {
	k := m.e.keys
	quit, help, next := hint(k.Quit, "quit"), hint(k.Help, "help"), hint(k.NextView, "views")
	switch m.over {
	case overHelp:
		ud := key.NewBinding(key.WithKeys("up", "down"), key.WithHelp(m.e.g.UpDown, "scroll"))
		return []key.Binding{ud, hint(k.Cancel, "close"), quit}
	case overQuit:
		if m.saveErr != nil {
			return []key.Binding{hint(k.Yes, "save again, quit if it works"), hint(k.No, "stay"), k.RetrySave}
		}
		return []key.Binding{hint(k.Yes, "quit"), hint(k.No, "stay")}
	case overSteps:
		ud := key.NewBinding(key.WithKeys("up", "down"), key.WithHelp(m.e.g.UpDown, "choose"))
		return []key.Binding{ud, hint(k.Enter, "go there"), hint(k.Cancel, "close"), quit}
	case overDetail:
		ud := key.NewBinding(key.WithKeys("up", "down"), key.WithHelp(m.e.g.UpDown, "scroll"))
		return []key.Binding{ud, key.NewBinding(key.WithKeys("esc"), key.WithHelp("any other key", "close"))}
	}
	switch m.view {
	case viewSockets:
		lr := key.NewBinding(key.WithKeys("left", "right"), key.WithHelp(m.e.g.Left+"/"+m.e.g.Right, "other valve"))
		return []key.Binding{help, lr, hint(k.Steps, "steps"), next, quit}
	case viewSuspects:
		ud := key.NewBinding(key.WithKeys("up", "down"), key.WithHelp(m.e.g.UpDown, "scroll"))
		return []key.Binding{help, hint(k.GoSuggested, "go to suggested"), hint(k.Detail, "all reasons"), ud, next, quit}
	case viewAmp:
		return []key.Binding{help, hint(k.Steps, "steps"), next, hint(k.PrevView, "back"), quit}
	}
	if m.step.mode != modeReading {
		return []key.Binding{hint(k.Enter, "save"), hint(k.Cancel, "cancel"), quit}
	}
	return []key.Binding{help, hint(k.Skip, "skip"), hint(k.Note, "note"), hint(k.Detail, "full text"), hint(k.Steps, "steps"), next, quit}
}

// footer is the foot line: on the step view, what the field takes on
// the left, the keys on the right; elsewhere the keys alone.
func (m Model) footer() string {
	h := m.help
	h.ShortSeparator = "  "
	keys := h.ShortHelpView(m.shortHelp())
	if m.over == overNone && m.view == viewStep && m.step.mode == modeReading {
		lead := m.e.st.Dim.Render("type a value or a command │ ")
		if lipgloss.Width(lead)+lipgloss.Width(keys) <= m.w {
			keys = lead + keys
		}
	}
	return m.e.g.cut(keys, m.w)
}

// body is the current view, or the overlay over it.
func (m Model) body() string {
	bh := m.bodyHeight()
	switch m.over {
	case overHelp:
		return m.scrolled(m.helpLines(m.w), bh)
	case overQuit:
		return m.place(m.quitBox(), bh)
	case overSteps:
		return m.stepsList(bh)
	case overDetail:
		return m.detail(bh)
	}
	switch m.view {
	case viewSockets:
		return m.sock.View()
	case viewSuspects:
		if m.practice() {
			return m.e.st.Dim.Render("Practice: the suspects are yours to work out. Type next for the best next measurement,\nmeasure KEY to choose one, m to take the reading, name REF:MODE when you know.")
		}
		return m.sus.View()
	case viewAmp:
		return m.ov.View()
	}
	return m.step.View()
}

func (m Model) place(box string, h int) string {
	return lipgloss.Place(m.w, h, lipgloss.Center, lipgloss.Center, box)
}

func (m Model) header() string {
	s, r := m.e.st, m.e.run
	left := s.Header.Render("pinwalk") + " " + m.e.g.Dot + " " + modeName(r.Sess.Mode) + " " + m.e.g.Dot + " " + r.Sess.Design.Title
	done := 0
	for _, st := range r.Proc.Steps {
		if r.Done(st.ID) {
			done++
		}
	}
	right := fmt.Sprintf("%d/%d steps done", done, len(r.Proc.Steps))
	return joinEnds(m.e.g.cut(left, m.w-lipgloss.Width(right)-2), right, m.w)
}

func (m Model) tabs() string {
	s := m.e.st
	var parts []string
	for i, n := range viewNames {
		if i == m.view {
			parts = append(parts, s.TabOn.Render("["+n+"]"))
		} else {
			parts = append(parts, s.Tab.Render(" "+n+" "))
		}
	}
	return m.e.g.cut(strings.Join(parts, " ")+s.Dim.Render("   tab: next view"), m.w)
}

// statusLine: the save state always (an error in words, with the retry
// key), then the latest information.
func (m Model) statusLine() string {
	s, g := m.e.st, m.e.g
	var save string
	switch {
	case m.path == "":
		save = s.Warn.Render("not saved to a file (no session path)")
	case m.saveErr != nil:
		save = s.StatusEr.Render(g.OutOfBand + " NOT SAVED (kept in memory; F9 saves again): " + m.saveErr.Error())
	case m.saving || m.dirty:
		save = s.Status.Render("saving " + g.Ellipsis)
	default:
		save = s.Status.Render(g.Done + " saved")
	}
	line := save
	if m.info != "" {
		line += s.Status.Render("  " + g.Dot + " " + m.info)
	}
	return m.e.g.cut(line, m.w)
}

// helpLines is the help overlay: every key of the key map by group, and
// beside them (or under them on a narrow screen) every typed command of
// this mode from procedures.CommandHelp, the same list plain mode prints.
func (m Model) helpLines(w int) []string {
	s := m.e.st
	h := m.help
	h.Width = 0
	var keyCol []string
	for _, g := range m.e.keys.Groups() {
		keyCol = append(keyCol, s.Title.Render(g.Title))
		keyCol = append(keyCol, strings.Split(h.FullHelpView([][]key.Binding{g.Keys}), "\n")...)
		keyCol = append(keyCol, "")
	}
	kw := 0
	for _, l := range keyCol {
		kw = max(kw, lipgloss.Width(l))
	}
	side := w-kw-3 >= 44
	cw := w
	if side {
		cw = w - kw - 3
	}
	cmdCol := []string{s.Title.Render("Typed commands") + s.Dim.Render(" (then Enter)")}
	for _, c := range procedures.CommandHelp(m.e.run.Sess.Mode) {
		word, desc := splitCommandHelp(c)
		if word == "VALUE" {
			desc += " (" + m.ohm() + " or ohm for ohms: 4k7" + m.ohm() + ")"
		}
		dl := wrap(desc, max(20, cw-17))
		if lipgloss.Width(word) > 16 {
			cmdCol = append(cmdCol, s.Label.Render(word))
		} else {
			cmdCol = append(cmdCol, s.Label.Render(fmt.Sprintf("%-16s", word))+" "+s.Dim.Render(dl[0]))
			dl = dl[1:]
		}
		for _, l := range dl {
			cmdCol = append(cmdCol, strings.Repeat(" ", 17)+s.Dim.Render(l))
		}
	}
	head := []string{s.Title.Render("Help") + s.Dim.Render("  "+m.e.g.UpDown+" scroll, Esc or F1 closes")}
	if !side {
		return append(append(head, keyCol...), cmdCol...)
	}
	out := head
	for i := 0; i < max(len(keyCol), len(cmdCol)); i++ {
		l, r := "", ""
		if i < len(keyCol) {
			l = keyCol[i]
		}
		if i < len(cmdCol) {
			r = cmdCol[i]
		}
		out = append(out, l+strings.Repeat(" ", kw-lipgloss.Width(l)+3)+r)
	}
	return out
}

// splitCommandHelp splits a line of procedures.CommandHelp into the
// command as typed ("again / retake VALUE") and what it does: the words
// are the first word, its aliases after " / " and the upper-case
// arguments.
func splitCommandHelp(line string) (word, desc string) {
	f := strings.Fields(line)
	n := 1
	for n < len(f) {
		switch {
		case f[n] == "/" && n+1 < len(f):
			n += 2
		case f[n] == strings.ToUpper(f[n]) && strings.ToUpper(f[n]) != strings.ToLower(f[n]):
			n++
		default:
			return strings.Join(f[:n], " "), strings.Join(f[n:], " ")
		}
	}
	return strings.Join(f[:n], " "), ""
}

// startLines is the first screen's word on the session: new or resumed,
// its file, and how to start a fresh one instead.
func (m Model) startLines(w int) []string {
	if m.path == "" {
		return wrap("This session has no file: its readings go when you quit.", w)
	}
	var out []string
	for _, l := range StartText(m.cfg.Start, m.path, false) {
		out = append(out, wrapHanging(l, w, 2)...)
	}
	return out
}

// resumeLines are the exact commands to carry on with this session and
// to write its job sheets, each wrapped to w cells (never cut).
func (m Model) resumeLines(w int) []string {
	var out []string
	for _, c := range CommandLines(m.cfg.Start, m.path, false) {
		out = append(out, wrapHanging(c, w, 2)...)
	}
	return out
}

// wrapHanging wraps text to w cells with every line after the first
// indented by ind spaces.
func wrapHanging(text string, w, ind int) []string {
	ls := wrap(text, w)
	if len(ls) <= 1 {
		return ls
	}
	rest := wrap(strings.Join(strings.Fields(strings.Join(ls[1:], " ")), " "), max(8, w-ind))
	out := []string{ls[0]}
	for _, l := range rest {
		out = append(out, strings.Repeat(" ", ind)+l)
	}
	return out
}

// ohm is the ohm sign, or "ohm" (which the field takes too) where only
// ASCII is drawn.
func (m Model) ohm() string {
	if m.cfg.ASCII {
		return "ohm"
	}
	return "Ω"
}

func (m Model) quitBox() string {
	s := m.e.st
	var lines []string
	lines = append(lines, s.Title.Render("Quit pinwalk?"), "")
	switch {
	case m.path == "":
		lines = append(lines, s.Warn.Render("This session has no file: its readings go when you quit."))
	case m.saveErr != nil:
		lines = append(lines, s.Bad.Render(m.e.g.OutOfBand+" The last save FAILED:"), s.Bad.Render(m.e.g.cut(m.saveErr.Error(), m.w-8)),
			"Your readings are still in memory. F9 tries again;", "y tries once more and quits only if it works.")
	case m.saving || m.dirty:
		lines = append(lines, "The last change is being saved; y quits as soon as it is on disk.")
	default:
		lines = append(lines, "Your session is already saved (every change is saved as you go).")
	}
	if m.path != "" {
		lines = append(lines, "", "To carry on later:")
		lines = append(lines, m.resumeLines(m.w-8)...)
	}
	lines = append(lines, "", s.Prompt.Render("y quit   n stay"))
	for i, l := range lines {
		if lipgloss.Width(l) > m.w-6 {
			lines[i] = m.e.g.cut(l, m.w-6)
		}
	}
	return s.Overlay.Render(strings.Join(lines, "\n"))
}

// stepsList is the list of steps with their state; Enter goes to one
// (gates permitting).
func (m Model) stepsList(h int) string {
	s, g, r := m.e.st, m.e.g, m.e.run
	var lines []string
	lines = append(lines, s.Title.Render("Steps")+s.Dim.Render(fmt.Sprintf("  %s choose, Enter go, Esc close", g.UpDown)))
	for _, l := range wrap(fmt.Sprintf("%s done  %s skipped  %s open  - waits on earlier steps", g.Done, g.Skipped, g.NotYet), m.w) {
		lines = append(lines, s.Dim.Render(l))
	}
	room := max(1, h-len(lines))
	top := max(0, min(m.listCursor-room/2, len(r.Proc.Steps)-room))
	for i := top; i < len(r.Proc.Steps) && i < top+room; i++ {
		st := r.Proc.Steps[i]
		mark := g.NotYet
		style := s.Dim
		if r.Done(st.ID) {
			mark, style = g.Done, s.Good
			if _, sk := r.Skipped(st.ID); sk {
				mark, style = g.Skipped, s.Warn
			}
		} else if len(r.Blockers(st)) > 0 {
			mark = "-"
		}
		cur := "  "
		if i == m.listCursor {
			cur = g.Current + " "
			style = s.Title
		}
		live := ""
		if st.Live {
			live = " LIVE"
		}
		here := ""
		if i == r.CurrentIndex() {
			here = "  (you are here)"
		}
		lines = append(lines, style.Render(m.e.g.cut(fmt.Sprintf("%s%s %2d %s%s%s", cur, mark, i+1, st.Title, live, here), m.w)))
	}
	return strings.Join(lines, "\n")
}

// detail is the full text of the current step.
func (m Model) detail(h int) string {
	s, r := m.e.st, m.e.run
	st := r.Current()
	if st == nil {
		return ""
	}
	w := m.w
	var lines []string
	if m.view == viewSuspects && m.sus.rank != nil && !m.practice() {
		return m.scrolled(m.rankDetail(w), h)
	}
	lines = append(lines, s.Title.Render(st.Title)+s.Dim.Render("  ("+m.e.g.UpDown+" scroll, any other key closes)"))
	for _, c := range st.Cautions {
		head := "CAUTION: "
		if st.Live {
			head = "DANGER: "
		}
		lines = append(lines, wrap(head+c, w)...)
	}
	lines = append(lines, "")
	lines = append(lines, wrap(st.Instruction, w)...)
	if st.Why != "" {
		lines = append(lines, wrap("Why: "+st.Why, w)...)
	}
	for _, c := range st.StopIf {
		lines = append(lines, wrap("Switch off if: "+c, w)...)
	}
	if b := r.Blockers(st); len(b) > 0 {
		lines = append(lines, wrap("Needs first: "+strings.Join(b, ", "), w)...)
	}
	for _, ms := range st.Measures {
		lines = append(lines, wrap(fmt.Sprintf("Reading: %s %s %s %s %s probes: %s", ms.Label, m.e.g.Dot, ms.Function, ms.Range, m.e.g.Dot, ms.Probes), w)...)
	}
	if st.Kind == procedures.KindSummary {
		lines = append(lines, "", s.Title.Render("Needs a look"))
		lines = append(lines, exceptionText(procedures.Exceptions(r), w, m.e.g)...)
		lines = append(lines, "", s.Title.Render("Commands"))
		lines = append(lines, m.resumeLines(w)...)
	}
	return m.scrolled(lines, h)
}

// scrolled shows h lines from the overlay's scroll position.
func (m Model) scrolled(lines []string, h int) string {
	top := min(m.scroll, max(0, len(lines)-h))
	lines = lines[top:]
	if len(lines) > h {
		lines = lines[:h]
	}
	return strings.Join(lines, "\n")
}

// rankDetail is the whole ranking in words: the fit note, every suspect
// with all its reasons, the groups and their notes.
func (m Model) rankDetail(w int) []string {
	s, rk := m.e.st, m.sus.rank
	lines := []string{s.Title.Render("Suspects in full") + s.Dim.Render("  ("+m.e.g.UpDown+" scroll, any other key closes)")}
	if !rk.Fits && rk.FitNote != "" {
		lines = append(lines, wrap("No single fault fits: "+rk.FitNote, w)...)
	}
	for i, su := range rk.Suspects {
		lines = append(lines, wrap(fmt.Sprintf("%d. %s (%s) %.1f %%", i+1, su.Label, su.Fault, 100*su.Probability), w)...)
		for _, why := range su.Why {
			lines = append(lines, wrap("   "+why, w)...)
		}
	}
	for i, g := range rk.Groups {
		if len(g) > 1 {
			lines = append(lines, wrap(fmt.Sprintf("Group %d: %s", i+1, strings.Join(g, " = ")), w)...)
			if i < len(rk.GroupNotes) && rk.GroupNotes[i] != "" {
				lines = append(lines, wrap("   "+rk.GroupNotes[i], w)...)
			}
		}
	}
	return lines
}

// interleave puts sep between the strings.
func interleave(ss []string, sep string) []string {
	var out []string
	for i, s := range ss {
		if i > 0 {
			out = append(out, sep)
		}
		out = append(out, s)
	}
	return out
}
