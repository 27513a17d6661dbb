package tui

import (
	"math"
	"strings"

	"github.com/charmbracelet/lipgloss"
	"github.com/charmbracelet/x/ansi"

	"pinwalk/expect/units"
	"pinwalk/procedures"
)

// fmtValue formats an SI value in a unit ("285 V", "4.7 kΩ", "OL" for an
// open circuit).
func fmtValue(v float64, unit string) string {
	if math.IsInf(v, 1) {
		return "OL (open)"
	}
	if math.IsNaN(v) {
		return "-"
	}
	return units.Format(v, units.BySymbol(unit))
}

// value is fmtValue spelled in ASCII when the glyphs are ASCII.
func (g Glyphs) value(v float64, unit string) string {
	if g.ASCII {
		return asciiFold(fmtValue(v, unit))
	}
	return fmtValue(v, unit)
}

// gaugeMarks are the optional marks on a gauge.
type gaugeMarks struct {
	Reading    *float64
	Status     procedures.Status
	Guess      *float64
	GuessLabel string
}

// gauge draws a band as a horizontal scale, three lines:
//
//	expected 285 V   band 262 V to 301 V
//	200 V ├──────[════┼════]───────┤ 370 V
//	                    ▲ 290 V ✓ in band
//
// The band is the run of double rule between the brackets, the nominal
// the cross in it, the reading a mark underneath with its value and
// verdict in words, so it reads without colour.
func gauge(s *Styles, g Glyphs, width int, b procedures.Band, unit string, mk gaugeMarks) []string {
	head := "expected " + g.value(b.Nominal, unit) + "   band " + g.value(b.Low, unit) + " to " + g.value(b.High, unit)
	lines := []string{g.cut(head, width)}

	pad := 0.6 * (b.High - b.Low)
	if pad <= 0 {
		pad = 0.05*math.Abs(b.Nominal) + 1e-9
	}
	a, z := b.Low-pad, b.High+pad
	fin := func(p *float64) (float64, bool) {
		if p == nil || math.IsNaN(*p) {
			return 0, false
		}
		return *p, !math.IsInf(*p, 0)
	}
	for _, p := range []*float64{mk.Reading, mk.Guess} {
		if v, ok := fin(p); ok {
			if v < a {
				a = v - 0.08*(z-v)
			}
			if v > z {
				z = v + 0.08*(v-a)
			}
		}
	}
	if b.Low >= 0 && a < 0 {
		a = 0
	}
	lo, hi := g.value(a, unit), g.value(z, unit)
	n := width - lipgloss.Width(lo) - lipgloss.Width(hi) - 4
	if n < 10 {
		// Too narrow for a scale: words only.
		return append(lines, markLine(s, g, 0, width, unit, mk, 0))
	}
	col := func(v float64) int {
		if math.IsInf(v, 1) || v > z {
			return n - 1
		}
		if math.IsInf(v, -1) || v < a {
			return 0
		}
		c := int(math.Round((v - a) / (z - a) * float64(n-1)))
		return min(n-1, max(0, c))
	}
	cl, ch, cn := col(b.Low), col(b.High), col(b.Nominal)
	var bar strings.Builder
	for i := 0; i < n; i++ {
		switch {
		case i == cn:
			bar.WriteString(g.Nominal)
		case i == cl && cl != ch:
			bar.WriteString(g.BandL)
		case i == ch && cl != ch:
			bar.WriteString(g.BandR)
		case i > cl && i < ch:
			bar.WriteString(g.BandRule)
		default:
			bar.WriteString(g.Rule)
		}
	}
	band := s.Label.Render(bar.String())
	lines = append(lines, lo+" "+g.EndL+band+g.EndR+" "+hi)
	off := lipgloss.Width(lo) + 2
	if v, ok := fin(mk.Reading); ok || (mk.Reading != nil && math.IsInf(*mk.Reading, 0)) {
		_ = v
		lines = append(lines, markLine(s, g, off+col(*mk.Reading), width, unit, mk, 1))
	}
	if mk.Guess != nil {
		lines = append(lines, markLine(s, g, off+col(*mk.Guess), width, unit, mk, 2))
	}
	return lines
}

// markLine puts a mark at column c with its text to the right, or to the
// left when there is no room. which: 1 reading, 2 guess, 0 words only.
func markLine(s *Styles, g Glyphs, c, width int, unit string, mk gaugeMarks, which int) string {
	var mark, text string
	switch which {
	case 2:
		mark = g.Guess
		text = "your guess " + g.value(*mk.Guess, unit) + " " + mk.GuessLabel
	default:
		if mk.Reading == nil {
			return ""
		}
		mark = g.Reading
		glyph, word, st := statusMark(s, g, mk.Status)
		text = "reading " + g.value(*mk.Reading, unit) + " " + st.Render(glyph+" "+word)
	}
	if which == 0 {
		return g.cut(text, width)
	}
	tw := lipgloss.Width(text)
	if c+2+tw <= width {
		return strings.Repeat(" ", c) + mark + " " + text
	}
	left := c - tw - 1
	if left >= 0 {
		return strings.Repeat(" ", left) + text + " " + mark
	}
	return strings.Repeat(" ", c) + mark + "\n" + g.cut(text, width)
}

// statusMark gives a status's glyph, word and style.
func statusMark(s *Styles, g Glyphs, st procedures.Status) (string, string, lipgloss.Style) {
	switch st {
	case procedures.InBand:
		return g.InBand, "in band", s.Good
	case procedures.OutOfBand:
		return g.OutOfBand, "OUT OF BAND", s.Bad
	case procedures.Retry:
		return g.Retry, "re-measure", s.Warn
	case procedures.Done:
		return g.Done, "recorded", s.Good
	case procedures.Skipped:
		return g.Skipped, "skipped", s.Warn
	}
	return g.NotYet, "not yet", s.Dim
}

// cut cuts s to width cells (escape sequences kept whole), marking the
// cut with the glyphs' ellipsis.
func (g Glyphs) cut(s string, width int) string {
	if width <= 0 {
		return ""
	}
	if lipgloss.Width(s) <= width {
		return s
	}
	return ansi.Truncate(s, width, g.Ellipsis)
}

// cutWords shortens s to at most width cells at a word boundary, with
// the ellipsis when anything was left off (never in the middle of a word,
// unless the first word alone is wider than the line).
func cutWords(s string, width int, ellipsis string) string {
	if lipgloss.Width(s) <= width {
		return s
	}
	room := width - lipgloss.Width(ellipsis)
	lead := len(s) - len(strings.TrimLeft(s, " "))
	out := s[:lead]
	for _, w := range strings.Fields(s) {
		next := out + w
		if out != s[:lead] {
			next = out + " " + w
		}
		if lipgloss.Width(next) > room {
			break
		}
		out = next
	}
	if strings.TrimSpace(out) == "" {
		return ansi.Truncate(s, width, ellipsis)
	}
	return out + ellipsis
}

// wrap breaks text into lines of at most width cells, at spaces.
func wrap(text string, width int) []string {
	if width < 8 {
		width = 8
	}
	var out []string
	for _, para := range strings.Split(text, "\n") {
		words := strings.Fields(para)
		line := ""
		for _, w := range words {
			switch {
			case line == "":
				line = w
			case lipgloss.Width(line)+1+lipgloss.Width(w) <= width:
				line += " " + w
			default:
				out = append(out, line)
				line = w
			}
			for lipgloss.Width(line) > width {
				rs := []rune(line)
				out = append(out, string(rs[:width]))
				line = string(rs[width:])
			}
		}
		out = append(out, line)
	}
	return out
}

// bar draws a proportion 0..1 as a bar of n cells.
func bar(g Glyphs, frac float64, n int) string {
	if n <= 0 {
		return ""
	}
	if math.IsNaN(frac) || frac < 0 {
		frac = 0
	}
	if frac > 1 {
		frac = 1
	}
	k := int(math.Round(frac * float64(n)))
	return strings.Repeat(g.BarFull, k) + strings.Repeat(g.BarEmpty, n-k)
}
