package tui

import (
	"fmt"
	"strings"

	"github.com/charmbracelet/bubbles/key"
	tea "github.com/charmbracelet/bubbletea"
	"github.com/charmbracelet/lipgloss"

	"pinwalk/expect/point"

	"pinwalk/procedures/infer"
)

// rankMsg carries a ranking computed in a command.
type rankMsg struct {
	Seq  int
	Rank *infer.Ranking
	Err  error
}

// gotoPointMsg asks the root to move to the step that measures a point.
type gotoPointMsg struct {
	Key   point.Key
	Label string
}

// suspectsView lists the ranked faults with probability bars and their
// reasons, the groups no reading can split, and the suggested next
// measurement.
type suspectsView struct {
	e       *env
	w, h    int
	rank    *infer.Ranking
	err     error
	pending bool
	stale   bool // readings changed since this ranking
	top     int  // first line shown (scrolling)
	note    string
}

func newSuspectsView(e *env) suspectsView { return suspectsView{e: e} }

// SetSize sets the view's size in cells.
func (v *suspectsView) SetSize(w, h int) { v.w, v.h = max(0, w), max(0, h) }

func (v suspectsView) Update(msg tea.Msg) (suspectsView, tea.Cmd) {
	switch msg := msg.(type) {
	case rankMsg:
		v.rank, v.err, v.pending, v.stale = msg.Rank, msg.Err, false, false
		return v, nil
	case tea.KeyMsg:
		switch {
		case key.Matches(msg, v.e.keys.Down):
			v.top++
		case key.Matches(msg, v.e.keys.Up):
			v.top = max(0, v.top-1)
		case key.Matches(msg, v.e.keys.GoSuggested), key.Matches(msg, v.e.keys.Enter):
			if v.rank != nil && v.rank.Next != nil {
				p := v.rank.Next
				return v, func() tea.Msg {
					k, _ := point.Parse(p.Key)
					return gotoPointMsg{Key: k, Label: p.Label}
				}
			}
		}
	}
	return v, nil
}

func (v suspectsView) View() string {
	s, g := v.e.st, v.e.g
	w := max(20, v.w)
	var lines []string
	switch {
	case v.err != nil:
		return s.Bad.Render(v.e.g.cut("Cannot rank the suspects: "+v.err.Error(), w))
	case v.rank == nil && v.pending:
		return s.Dim.Render("Ranking the suspects on the readings so far " + g.Ellipsis + " (this takes a few seconds the first time)")
	case v.rank == nil:
		return s.Dim.Render("No ranking yet: it is worked out from the readings when this view is opened.")
	}
	rk := v.rank
	head := fmt.Sprintf("Suspects on %d reading(s)", len(v.e.run.Sess.Readings))
	if v.pending || v.stale {
		head += " " + g.Dot + " updating " + g.Ellipsis
	}
	lines = append(lines, s.Title.Render(head))
	if !rk.Fits && rk.FitNote != "" {
		note := wrap(g.OutOfBand+" NO SINGLE FAULT FITS: "+v.e.words(rk.FitNote), w)
		if len(note) > 3 {
			more := " (" + v.e.keys.Detail.Help().Key + ": all)"
			note = append(note[:2:2], cutWords(note[2], w-lipgloss.Width(more), g.Ellipsis)+more)
		}
		for _, l := range note {
			lines = append(lines, s.Bad.Render(l))
		}
	}
	if p := rk.Next; p != nil {
		live := "unplugged"
		if p.Live {
			live = "LIVE"
		}
		gain := p.Reason
		if gain == "" {
			gain = gainWords(p.GainBits)
		}
		for _, l := range wrapHanging(fmt.Sprintf("Next: %s (%s) %s %s %s %s goes there", v.e.words(p.Label), live, g.Dot, gain, g.Dot, v.e.keys.GoSuggested.Help().Key), w, 6) {
			lines = append(lines, s.Label.Render(l))
		}
		if p.Setup != "" {
			for _, l := range wrapHanging("  "+v.e.words(p.Setup), w, 2) {
				lines = append(lines, s.Dim.Render(l))
			}
		}
	} else {
		lines = append(lines, s.Dim.Render("No measurement left that would tell the suspects apart."))
	}
	lines = append(lines, "")
	barW := 10
	if w >= 110 {
		barW = 20
	}
	labelW := max(12, w-barW-28)
	var body []string
	for i, su := range rk.Suspects {
		grp := ""
		if su.Group >= 0 && su.Group < len(rk.Groups) && len(rk.Groups[su.Group]) > 1 {
			grp = fmt.Sprintf(" [group %d]", su.Group+1)
		}
		line := fmt.Sprintf("%2d %s %5.1f%% %s%s", i+1, bar(g, su.Probability, barW), 100*su.Probability, v.e.g.cut(su.Label, labelW), grp)
		st := s.Dim
		switch {
		case i == 0:
			st = s.Title
		case su.Probability >= 0.1:
			st = s.Warn
		}
		body = append(body, st.Render(v.e.g.cut(line, w)))
		nwhy := 1
		if w >= 110 {
			nwhy = 2
		}
		for j, why := range su.Why {
			if j == nwhy {
				break
			}
			body = append(body, s.Dim.Render(cutWords("      "+v.e.words(why), w, g.Ellipsis)))
		}
	}
	var groups []string
	for i, gr := range rk.Groups {
		if len(gr) < 2 {
			continue
		}
		line := fmt.Sprintf("group %d, no reading tells these apart: %s", i+1, strings.Join(gr, " = "))
		groups = append(groups, wrapHanging(line, w, 2)...)
		if i < len(rk.GroupNotes) && rk.GroupNotes[i] != "" {
			for _, l := range wrapHanging("  "+v.e.words(rk.GroupNotes[i]), w, 2) {
				groups = append(groups, s.Dim.Render(l))
			}
		}
	}
	if len(groups) > 0 {
		body = append(body, "")
		body = append(body, groups...)
	}
	room := max(0, v.h-len(lines))
	top := min(v.top, max(0, len(body)-room))
	end := min(len(body), top+room)
	if top > 0 || end < len(body) {
		if room > 0 {
			end = min(len(body), top+room-1)
			lines = append(lines, body[top:end]...)
			lines = append(lines, s.Dim.Render(fmt.Sprintf("  lines %d%s%d of %d: %s scroll", top+1, v.e.g.To, end, len(body), v.e.g.UpDown)))
			return strings.Join(lines, "\n")
		}
	}
	lines = append(lines, body[top:end]...)
	return strings.Join(lines, "\n")
}
