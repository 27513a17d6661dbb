package tui

import (
	"fmt"
	"strings"

	tea "github.com/charmbracelet/bubbletea"
	"github.com/charmbracelet/lipgloss"

	"pinwalk/expect/amp"
	"pinwalk/expect/point"
)

// opMsg carries the nominal operating point, solved in a command.
type opMsg struct {
	OP  *amp.OP
	Err error
}

// nominalOP fetches the design's nominal operating point from the bench
// model (solved once there); it runs in a command.
func nominalOP(b interface{ Nominal() (*amp.OP, error) }) tea.Cmd {
	return func() tea.Msg {
		op, err := b.Nominal()
		return opMsg{OP: op, Err: err}
	}
}

// overviewView is the amp at a glance: the supply chain from the
// rectifier outwards with each filter net expected and measured, the
// stages with their dissipation against rating, and the heater load.
type overviewView struct {
	e    *env
	w, h int
	m    *amp.Model
	op   *amp.OP
	err  error
}

func newOverviewView(e *env, m *amp.Model) overviewView { return overviewView{e: e, m: m} }

// SetSize sets the view's size in cells.
func (v *overviewView) SetSize(w, h int) { v.w, v.h = max(0, w), max(0, h) }

// bandCmds asks for the full-mains bands of the filter nets.
func (v *overviewView) bandCmds() tea.Cmd {
	if v.m == nil || v.m.HT == nil {
		return nil
	}
	var cmds []tea.Cmd
	for _, n := range v.m.HT.Nets {
		if _, c := v.e.band(point.LiveKey(n, point.DCVolts), 1); c != nil {
			cmds = append(cmds, c)
		}
	}
	return tea.Batch(cmds...)
}

func (v overviewView) Update(msg tea.Msg) (overviewView, tea.Cmd) {
	if msg, ok := msg.(opMsg); ok {
		v.op, v.err = msg.OP, msg.Err
	}
	return v, nil
}

func (v overviewView) View() string {
	s, g := v.e.st, v.e.g
	w := max(20, v.w)
	switch {
	case v.m == nil:
		return s.Dim.Render("No amplifier model for this session.")
	case v.err != nil:
		return s.Bad.Render(v.e.g.cut("Cannot solve the operating point: "+v.err.Error(), w))
	case v.op == nil:
		return s.Dim.Render("Solving the operating point " + g.Ellipsis)
	}
	m, op := v.m, v.op
	var lines []string
	lines = append(lines, s.Title.Render(v.e.g.cut("Supply "+g.Dot+" "+m.D.Title, w)))
	if m.HT != nil && op.Supply != nil {
		chain := ""
		if m.HT.Rectifier != nil {
			chain = m.HT.Rectifier.Ref + " "
		}
		for i, n := range m.HT.Nets {
			if i > 0 || m.HT.ChokeInput {
				ser := ""
				if i < len(m.HT.SeriesRefs) {
					ser = m.HT.SeriesRefs[i]
				}
				chain += g.Arrow + ser + g.Arrow + " "
			} else {
				chain += g.Arrow + " "
			}
			chain += n + " "
		}
		lines = append(lines, v.e.g.cut(chain, w))
		lines = append(lines, s.Label.Render(fmt.Sprintf("  %-10s %-9s %-20s %-15s %s", "net", "caps", "expected (band)", "measured", "")))
		for i, n := range m.HT.Nets {
			var fo *amp.FilterNetOP
			for j := range op.Supply.Nets {
				if op.Supply.Nets[j].Net == n {
					fo = &op.Supply.Nets[j]
				}
			}
			key := point.LiveKey(n, point.DCVolts)
			exp := g.Dash
			if fo != nil {
				exp = v.e.g.value(fo.Vdc, "V")
			}
			if be := v.e.cachedBand(key, 1); be.Has {
				exp = v.e.g.value(be.Band.Nominal, "V") + " (" + v.e.g.compact(be.Band.Low, "V") + g.To + v.e.g.compact(be.Band.High, "V") + ")"
			}
			caps := ""
			if i < len(m.HT.CapRefs) {
				caps = strings.Join(m.HT.CapRefs[i], ",")
			}
			meas, glyph, word, style := g.Dash, g.NotYet, "not yet", s.Dim
			if rd := v.e.lastReading(key); rd != nil {
				glyph, word, style = statusMark(s, g, rd.Status)
				meas = v.e.g.value(rd.Value, "V")
				if rd.Variac > 0 && rd.Variac < 1 {
					meas += fmt.Sprintf(" @%.0f%%", 100*rd.Variac)
				}
			}
			lines = append(lines, style.Render(v.e.g.cut(fmt.Sprintf("  %-10s %-9s %-20s %-15s %s %s", n, v.e.g.cut(caps, 9), exp, meas, glyph, word), w)))
		}
		lines = append(lines, s.Dim.Render(v.e.g.cut(fmt.Sprintf("  rectifier: %s peak, %s rms; total load %s", v.e.g.value(op.Supply.PeakRectAmps, "A"), v.e.g.value(op.Supply.RmsAmps, "A"), v.e.g.value(op.Supply.TotalAmps, "A")), w)))
	} else {
		lines = append(lines, s.Dim.Render("  no HT rectifier in this design"))
	}

	lines = append(lines, "", s.Title.Render("Stages (nominal)"))
	barW := 8
	if w >= 110 {
		barW = 16
	}
	lines = append(lines, s.Label.Render(fmt.Sprintf("  %-8s %-7s %8s %9s %8s %8s  %s", "valve", "type", "plate", "current", "cathode", "plate W", "of rating")))
	for i, sec := range m.Sections {
		if i >= len(op.Sections) {
			break
		}
		so := op.Sections[i]
		name := sec.Ref
		if sec.Section != "" {
			name += sec.Section
		}
		rated := sec.Type.Limits.PlateWatts
		pct := 0.0
		if rated > 0 {
			pct = so.Pa / rated
		}
		style := s.Good
		mark := g.InBand
		switch {
		case pct > 1:
			style, mark = s.Bad, g.OutOfBand+" OVER"
		case pct > 0.9:
			style, mark = s.Warn, g.Retry+" hot"
		}
		line := fmt.Sprintf("  %-8s %-7s %8s %9s %8s %8s  %s %3.0f%% %s", name, v.e.g.cut(sec.Type.Name, 7), v.e.g.compact(so.Va, "V"), v.e.g.compact(so.Ia, "A"), v.e.g.compact(so.Vk, "V"),
			v.e.g.compact(so.Pa, "W"), bar(g, pct, barW), 100*pct, mark)
		scr := ""
		if sec.Pentode && sec.Type.Limits.ScreenWatts > 0 {
			scr = fmt.Sprintf("screen %s (%.0f%%)", v.e.g.compact(so.Pg2, "W"), 100*so.Pg2/sec.Type.Limits.ScreenWatts)
		}
		switch {
		case scr != "" && lipgloss.Width(line)+2+lipgloss.Width(scr) <= w:
			lines = append(lines, style.Render(line+"  "+scr))
		case scr != "":
			// The screen's share on a line of its own, under the plate's.
			lines = append(lines, style.Render(v.e.g.cut(line, w)), style.Render(v.e.g.cut(strings.Repeat(" ", 11)+scr, w)))
		default:
			lines = append(lines, style.Render(v.e.g.cut(line, w)))
		}
	}

	if len(op.Windings) > 0 {
		lines = append(lines, "", s.Title.Render("Heaters"))
		for _, wd := range op.Windings {
			pct := 0.0
			if wd.RatedAmps > 0 {
				pct = wd.Amps / wd.RatedAmps
			}
			style, mark := s.Good, g.InBand
			if pct > 1 {
				style, mark = s.Bad, g.OutOfBand+" OVER"
			}
			line := fmt.Sprintf("  %-10s %s at %s of %s  %s %3.0f%% %s  (%s)", wd.Name, v.e.g.compact(wd.Amps, "A"), v.e.g.compact(wd.Volts, "V"), v.e.g.compact(wd.RatedAmps, "A"),
				bar(g, pct, barW), 100*pct, mark, strings.Join(wd.Refs, " "))
			lines = append(lines, style.Render(v.e.g.cut(line, w)))
		}
	}
	if len(lines) > v.h && v.h > 0 {
		lines = append(lines[:v.h-1], s.Dim.Render(g.Ellipsis+" (taller screen shows more)"))
	}
	return strings.Join(lines, "\n")
}
