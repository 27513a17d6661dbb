package tui

import (
	"fmt"
	"math"
	"sort"
	"strings"

	"github.com/charmbracelet/bubbles/key"
	tea "github.com/charmbracelet/bubbletea"
	"github.com/charmbracelet/lipgloss"

	"pinwalk/expect/amp"
	"pinwalk/expect/point"
	"pinwalk/expect/valves"
)

// socketPin is one pin as the socket view shows it.
type socketPin struct {
	Number    int
	Electrode string
	Section   string
	Point     point.Key // zero for a pin with no point (unused)
	Unit      string
}

// socketValve is one valve's socket.
type socketValve struct {
	Ref  string
	Type string
	Base valves.Base
	Pins []socketPin
}

// socketsOf lists the valve sockets of a model with each pin's point.
func socketsOf(m *amp.Model) []socketValve {
	if m == nil {
		return nil
	}
	pts := m.Points()
	byPin := map[string]amp.PointDef{}
	heater := map[string]amp.PointDef{}
	for _, p := range pts {
		if p.Valve == "" {
			continue
		}
		if p.Electrode == valves.Heater && p.Quantity == amp.ACVolts {
			heater[p.Valve] = p
		}
		k := fmt.Sprintf("%s.%d", p.Valve, p.Pin)
		if _, ok := byPin[k]; !ok {
			byPin[k] = p // first quantity: dc volts, or ac volts for heaters and rectifier plates
		}
	}
	var out []socketValve
	for _, part := range m.D.Valves() {
		vt := part.Valve.Type
		sv := socketValve{Ref: part.Ref, Type: vt.Name, Base: vt.Base}
		pins := append([]valves.Pin(nil), vt.Pins...)
		sort.Slice(pins, func(i, j int) bool { return pins[i].Number < pins[j].Number })
		for _, pin := range pins {
			sp := socketPin{Number: pin.Number, Electrode: pin.Electrode, Section: pin.Section}
			if p, ok := byPin[fmt.Sprintf("%s.%d", part.Ref, pin.Number)]; ok {
				sp.Point, sp.Unit = p.PointKey(), amp.UnitOf(p.Quantity)
			}
			if (pin.Electrode == valves.Heater || pin.Electrode == valves.HeaterCT) && heater[part.Ref].ID != "" {
				if pin.Electrode == valves.Heater {
					sp.Point, sp.Unit = heater[part.Ref].PointKey(), "V"
				}
			}
			sv.Pins = append(sv.Pins, sp)
		}
		out = append(out, sv)
	}
	return out
}

// abbrev is a short electrode name for the socket drawing.
func abbrev(p socketPin) string {
	a := map[string]string{valves.Plate: "P", valves.Grid: "G", valves.Screen: "G2", valves.Cathode: "K",
		valves.Heater: "H", valves.HeaterCT: "Hct", valves.Grid3: "G3", valves.Plates: "A"}[p.Electrode]
	if a == "" {
		a = "nc"
	}
	if p.Section != "" {
		a += p.Section
	}
	return a
}

// socketView draws each valve base as seen from below (the side a
// technician probes), one valve at a time.
type socketView struct {
	e    *env
	w, h int
	vs   []socketValve
	sel  int
}

func newSocketView(e *env, m *amp.Model) socketView {
	return socketView{e: e, vs: socketsOf(m)}
}

// SetSize sets the view's size in cells.
func (v *socketView) SetSize(w, h int) { v.w, v.h = max(0, w), max(0, h) }

// bandCmds asks for the full-mains bands of the selected valve's pins.
func (v *socketView) bandCmds() tea.Cmd {
	if len(v.vs) == 0 {
		return nil
	}
	var cmds []tea.Cmd
	for _, p := range v.vs[v.sel].Pins {
		if p.Point.IsZero() {
			continue
		}
		if _, c := v.e.band(p.Point, 1); c != nil {
			cmds = append(cmds, c)
		}
	}
	return tea.Batch(cmds...)
}

func (v socketView) Update(msg tea.Msg) (socketView, tea.Cmd) {
	k, ok := msg.(tea.KeyMsg)
	if !ok || len(v.vs) == 0 {
		return v, nil
	}
	switch {
	case key.Matches(k, v.e.keys.Right), key.Matches(k, v.e.keys.Down):
		v.sel = (v.sel + 1) % len(v.vs)
		return v, v.bandCmds()
	case key.Matches(k, v.e.keys.Left), key.Matches(k, v.e.keys.Up):
		v.sel = (v.sel + len(v.vs) - 1) % len(v.vs)
		return v, v.bandCmds()
	}
	return v, nil
}

// pinState is what one pin shows.
type pinState struct {
	glyph, word string
	style       lipgloss.Style
	short       string // value for the drawing: measured, or ~expected
	expected    string // band for the table
	measured    string
}

func (v socketView) state(p socketPin) pinState {
	s, g := v.e.st, v.e.g
	ps := pinState{glyph: g.NotYet, word: "not yet", style: s.Dim, short: "", expected: g.Dash, measured: g.Dash}
	if p.Point.IsZero() {
		ps.word = ""
		return ps
	}
	be := v.e.cachedBand(p.Point, 1)
	switch {
	case be.Pending:
		ps.expected = g.Ellipsis
	case be.Has:
		ps.expected = v.e.g.value(be.Band.Nominal, p.Unit) + " (" + v.e.g.compact(be.Band.Low, p.Unit) + g.To + v.e.g.compact(be.Band.High, p.Unit) + ")"
		ps.short = "~" + v.e.g.compact(be.Band.Nominal, p.Unit)
	}
	if rd := v.e.lastReading(p.Point); rd != nil {
		ps.glyph, ps.word, ps.style = statusMark(s, g, rd.Status)
		ps.short = v.e.g.compact(rd.Value, p.Unit)
		ps.measured = v.e.g.value(rd.Value, p.Unit)
		if rd.Variac > 0 && rd.Variac < 1 {
			ps.measured += fmt.Sprintf(" @%.0f%%", 100*rd.Variac)
			ps.short += "@"
		}
	}
	return ps
}

// compact formats a value without the space before the unit.
func (g Glyphs) compact(v float64, unit string) string {
	if math.IsInf(v, 1) {
		return "OL"
	}
	return strings.ReplaceAll(g.value(v, unit), " ", "")
}

// pinAngle is a pin's angle in degrees clockwise from the top, seen from
// below: noval pins sit on ten 36° places with the gap at the top (pin 1
// just clockwise of it); octal pins on eight 45° places either side of
// the key at the top.
func pinAngle(base valves.Base, n int) float64 {
	if base == valves.Octal {
		return 22.5 + 45*float64(n-1)
	}
	return 36 * float64(n)
}

func (v socketView) View() string {
	s, g := v.e.st, v.e.g
	if len(v.vs) == 0 {
		return s.Dim.Render("This design has no valves.")
	}
	sv := v.vs[v.sel]
	w := max(20, v.w)
	head := fmt.Sprintf("%s %s  %s %s (%s)  %d of %d  %s", g.Left, s.Title.Render(sv.Ref), g.Dot, sv.Type, sv.Base, v.sel+1, len(v.vs), g.Right)
	sub := "Seen from below (wiring side), pins clockwise from the " + map[bool]string{true: "key", false: "gap"}[sv.Base == valves.Octal] + ". ~ expected, plain = measured."
	lines := []string{v.e.g.cut(head, w)}
	for _, l := range wrap(sub, w) {
		lines = append(lines, s.Dim.Render(l))
	}

	drawing := v.drawing(sv)
	table := v.table(sv, w)
	dw := 0
	for _, l := range drawing {
		dw = max(dw, lipgloss.Width(l))
	}
	tw := 0
	for _, l := range table {
		tw = max(tw, lipgloss.Width(l))
	}
	room := v.h - len(lines)
	switch {
	case dw+2+tw <= w:
		// Side by side.
		n := max(len(drawing), len(table))
		for i := 0; i < n; i++ {
			a, b := "", ""
			if i < len(drawing) {
				a = drawing[i]
			}
			if i < len(table) {
				b = table[i]
			}
			lines = append(lines, a+strings.Repeat(" ", dw+2-lipgloss.Width(a))+b)
		}
	case len(drawing)+len(table) <= room:
		lines = append(lines, drawing...)
		lines = append(lines, table...)
	default:
		lines = append(lines, drawing...)
		for _, l := range wrap(fmt.Sprintf("%s in band  %s out of band  %s re-measure  %s not yet %s a taller or wider screen shows the table", g.InBand, g.OutOfBand, g.Retry, g.NotYet, g.Dot), w) {
			lines = append(lines, s.Dim.Render(l))
		}
	}
	if len(lines) > v.h && v.h > 0 {
		lines = lines[:v.h]
	}
	return strings.Join(lines, "\n")
}

// drawing places the pins on a circle (x stretched two to one for the
// cell aspect), each with its number, electrode, value and status glyph.
func (v socketView) drawing(sv socketValve) []string {
	const R = 4
	const labelW = 17
	cx := labelW + 2*R + 1
	width := 2*cx + 1
	rows := 2*R + 1
	canvas := make([][]string, rows)
	for i := range canvas {
		canvas[i] = make([]string, width)
		for j := range canvas[i] {
			canvas[i][j] = " "
		}
	}
	put := func(y, x int, text string) {
		for _, r := range text {
			if y >= 0 && y < rows && x >= 0 && x < width {
				canvas[y][x] = string(r)
			}
			x++
		}
	}
	// The key or the gap at the top, the centre spigot.
	if sv.Base == valves.Octal {
		put(R-1, cx, v.e.g.Key)
		put(R, cx-1, "(o)")
	} else {
		put(0, cx-1, "gap")
		put(R, cx, "+")
	}
	styled := map[[2]int]lipgloss.Style{}
	for _, p := range sv.Pins {
		a := pinAngle(sv.Base, p.Number) * math.Pi / 180
		y := R + int(math.Round(-float64(R)*math.Cos(a)))
		x := cx + int(math.Round(2*float64(R)*math.Sin(a)))
		ps := v.state(p)
		num := fmt.Sprintf("%d", p.Number)
		lab := abbrev(p) + " " + ps.short + ps.glyph
		if p.Point.IsZero() {
			lab = abbrev(p)
		}
		lab = v.e.g.cut(lab, labelW-1)
		if x >= cx {
			put(y, x, num)
			put(y, x+len(num)+1, lab)
			styled[[2]int{y, x + len(num) + 1}] = ps.style
		} else {
			put(y, x-len(num)+1, num)
			start := x - len(num) - lipgloss.Width(lab)
			put(y, start, lab)
			styled[[2]int{y, start}] = ps.style
		}
	}
	out := make([]string, rows)
	for i, row := range canvas {
		out[i] = strings.TrimRight(strings.Join(row, ""), " ")
	}
	return out
}

// table lists each pin with its expected band at full mains and the
// latest reading, with the verdict as a glyph and a word.
func (v socketView) table(sv socketValve, w int) []string {
	s := v.e.st
	out := []string{s.Label.Render(fmt.Sprintf("%-3s %-9s %-22s %-12s %s", "pin", "electrode", "expected (band)", "measured", "status"))}
	for _, p := range sv.Pins {
		ps := v.state(p)
		el := p.Electrode
		if p.Section != "" {
			el += " " + p.Section
		}
		line := fmt.Sprintf("%-3d %-9s %-22s %-12s %s %s", p.Number, v.e.g.cut(el, 9), v.e.g.cut(ps.expected, 22), v.e.g.cut(ps.measured, 12), ps.glyph, ps.word)
		out = append(out, ps.style.Render(strings.TrimRight(line, " ")))
	}
	return out
}
