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
	lines = append(lines, m.statusLine(), m.e.g.cut(m.help.ShortHelpView(m.shortHelp()), m.w))
	// Last, what the engine and the design say (µF in a label, an en
	// dash in a note) is spelled in ASCII too.
	if m.cfg.ASCII {
		for i, l := range lines {
			lines[i] = m.e.g.cut(asciiFold(l), m.w)
		}
	}
	return strings.Join(lines, "\n")
}

// hint is a binding with a shorter description for the help line.
func hint(b key.Binding, desc string) key.Binding {
	b.SetHelp(b.Help().Key, desc)
	return b
}

// shortHelp is the help line for what is on screen: the keys that act
// there, with short words. Letters are readings, so every command on the
// step view is a Ctrl key (^K is Ctrl+K).
func (m Model) shortHelp() []key.Binding {
	k := m.e.keys
	quit, help, next := hint(k.Quit, "quit"), hint(k.Help, "help"), hint(k.NextView, "next view")
	switch m.over {
	case overHelp:
		return []key.Binding{hint(k.Cancel, "close"), quit}
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
		return []key.Binding{lr, next, hint(k.Steps, "steps"), help, quit}
	case viewSuspects:
		ud := key.NewBinding(key.WithKeys("up", "down"), key.WithHelp(m.e.g.UpDown, "scroll"))
		return []key.Binding{hint(k.GoSuggested, "go to suggested"), hint(k.Detail, "all reasons"), ud, next, help, quit}
	case viewAmp:
		return []key.Binding{next, hint(k.PrevView, "back"), hint(k.Steps, "steps"), help, quit}
	}
	if m.step.mode != modeReading {
		return []key.Binding{hint(k.Enter, "save"), hint(k.Cancel, "cancel"), quit}
	}
	return []key.Binding{hint(k.Enter, "record"), hint(k.Skip, "skip"), hint(k.Detail, "full text"), hint(k.Steps, "steps"),
		hint(k.NextView, "views"), help, quit}
}

// body is the current view, or the overlay over it.
func (m Model) body() string {
	bh := m.bodyHeight()
	switch m.over {
	case overHelp:
		return m.place(m.helpBox(), bh)
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
		save = s.StatusEr.Render(g.OutOfBand + " NOT SAVED (kept in memory; ^R retries): " + m.saveErr.Error())
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

func (m Model) helpBox() string {
	s := m.e.st
	h := m.help
	h.Width = 0 // each column whole; the columns are laid out here
	var cols []string
	for _, g := range m.e.keys.Groups() {
		cols = append(cols, s.Title.Render(g.Title)+"\n"+h.FullHelpView([][]key.Binding{g.Keys}))
	}
	// Side by side when they fit, else two by two, else one under another.
	gap := "   "
	var keys string
	switch all := lipgloss.JoinHorizontal(lipgloss.Top, interleave(cols, gap)...); {
	case lipgloss.Width(all) <= m.w-6:
		keys = all
	case len(cols) == 4 && max(lipgloss.Width(lipgloss.JoinHorizontal(lipgloss.Top, cols[0], gap, cols[1])),
		lipgloss.Width(lipgloss.JoinHorizontal(lipgloss.Top, cols[2], gap, cols[3]))) <= m.w-6:
		w0 := max(lipgloss.Width(cols[0]), lipgloss.Width(cols[2]))
		left := lipgloss.JoinVertical(lipgloss.Left, cols[0], "", cols[2])
		right := lipgloss.JoinVertical(lipgloss.Left, cols[1], "", cols[3])
		keys = lipgloss.JoinHorizontal(lipgloss.Top, lipgloss.NewStyle().Width(w0).Render(left), gap, right)
	default:
		keys = lipgloss.JoinVertical(lipgloss.Left, cols...)
	}
	// The notes wrap to the keys' width; on a short screen the examples
	// of readings go first.
	tw := max(40, min(lipgloss.Width(keys), m.w-6))
	lines := []string{s.Title.Render("Keys") + s.Dim.Render(m.e.g.cut("  ^K is Ctrl+K; letters and digits are readings", tw-4)), keys}
	examples := wrap("Readings: 312, 4.7mA, 4m7A, 2k2, 4k7"+m.ohm()+", 1M, OL (open).\nEnd with ! to keep a value the program questions.", tw)
	if used := len(lines) - 1 + lipgloss.Height(keys) + 2; used+1+len(examples) <= m.bodyHeight() {
		lines = append(lines, "")
		for _, l := range examples {
			lines = append(lines, s.Dim.Render(l))
		}
	}
	return s.Overlay.Render(strings.Join(lines, "\n"))
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
			"Your readings are still in memory. ^R tries again;", "y tries once more and quits only if it works.")
	case m.saving || m.dirty:
		lines = append(lines, "The last change is being saved; y quits as soon as it is on disk.")
	default:
		lines = append(lines, "Your session is already saved (every change is saved as you go):", m.e.g.cut(m.path, m.w-8),
			"Start pinwalk walk with the same session file to carry on.")
	}
	lines = append(lines, "", s.Prompt.Render("y quit   n stay"))
	return s.Overlay.Render(strings.Join(lines, "\n"))
}

// stepsList is the list of steps with their state; Enter goes to one
// (gates permitting).
func (m Model) stepsList(h int) string {
	s, g, r := m.e.st, m.e.g, m.e.run
	var lines []string
	lines = append(lines, s.Title.Render("Steps")+s.Dim.Render(fmt.Sprintf("  %s choose, Enter go, Esc close  (%s done, %s skipped, %s open, - waits on earlier steps)", g.UpDown, g.Done, g.Skipped, g.NotYet)))
	room := max(1, h-1)
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
