package tui

import (
	"strings"

	"github.com/charmbracelet/lipgloss"
)

// Glyphs are the marks the screens draw. Every status has a glyph (and
// the screens add a word where there is room), so nothing depends on
// colour: lipgloss drops colour and bold under NO_COLOR.
type Glyphs struct {
	InBand, OutOfBand, Retry, NotYet, Skipped, Done string
	Current                                         string // marks the current step or selection
	Reading, Guess, Nominal                         string // gauge marks
	BarFull, BarEmpty                               string // probability and dissipation bars
	Rule, BandRule, EndL, EndR, BandL, BandR        string // gauge body
	Arrow, Ellipsis, Dot                            string
	Key                                             string // the octal key in the socket drawing
	Dash                                            string // no value
	To                                              string // between the ends of a range: 262 V–301 V
	Left, Right, UpDown                             string // arrow keys in headings and hints
	Cursor                                          string // the input's cursor when colour is off
	Sep                                             string // between hints in the help line
	Warning                                         string // heads the folded hazard line and the stop banner
	ASCII                                           bool   // values are spelled in ASCII (4.7 kohm, 2 uA)
}

// UnicodeGlyphs are the default marks.
func UnicodeGlyphs() Glyphs {
	return Glyphs{
		InBand: "✓", OutOfBand: "✗", Retry: "?", NotYet: "·", Skipped: "↷", Done: "✓",
		Current: "▶", Reading: "▲", Guess: "◆", Nominal: "┼",
		BarFull: "█", BarEmpty: "░",
		Rule: "─", BandRule: "═", EndL: "├", EndR: "┤", BandL: "[", BandR: "]",
		Arrow: "→", Ellipsis: "…", Dot: "·", Key: "▲",
		Dash: "—", To: "–", Left: "←", Right: "→", UpDown: "↑/↓", Cursor: "█", Sep: " • ",
		Warning: "▲",
	}
}

// ASCIIGlyphs are the marks for terminals without Unicode.
func ASCIIGlyphs() Glyphs {
	return Glyphs{
		InBand: "+", OutOfBand: "X", Retry: "?", NotYet: ".", Skipped: "~", Done: "+",
		Current: ">", Reading: "^", Guess: "o", Nominal: "|",
		BarFull: "#", BarEmpty: ".",
		Rule: "-", BandRule: "=", EndL: "|", EndR: "|", BandL: "[", BandR: "]",
		Arrow: "->", Ellipsis: "...", Dot: ".", Key: "^",
		Dash: "-", To: "..", Left: "<-", Right: "->", UpDown: "up/down", Cursor: "_", Sep: " | ", ASCII: true,
		Warning: "!!",
	}
}

// Styles are every style the screens use, built from one renderer so
// that the renderer's colour profile (NO_COLOR, not a terminal, tests)
// decides colour for all of them.
type Styles struct {
	R        *lipgloss.Renderer
	Header   lipgloss.Style
	Tab      lipgloss.Style
	TabOn    lipgloss.Style
	Title    lipgloss.Style
	Dim      lipgloss.Style
	Label    lipgloss.Style
	Good     lipgloss.Style
	Bad      lipgloss.Style
	Warn     lipgloss.Style
	Danger   lipgloss.Style // box around cautions on live steps
	Caution  lipgloss.Style // box around cautions on other steps
	Alert    lipgloss.Style // box around a stop in force and SWITCH OFF NOW
	Overlay  lipgloss.Style
	Status   lipgloss.Style
	StatusEr lipgloss.Style
	Input    lipgloss.Style
	Prompt   lipgloss.Style
}

// DefaultStyles builds the styles on a renderer, with adaptive colours for
// light and dark terminals.
func DefaultStyles(r *lipgloss.Renderer) *Styles {
	fg := func(light, dark string) lipgloss.TerminalColor {
		return lipgloss.AdaptiveColor{Light: light, Dark: dark}
	}
	s := &Styles{R: r}
	s.Header = r.NewStyle().Bold(true)
	s.Tab = r.NewStyle().Foreground(fg("#555555", "#a8a8a8"))
	s.TabOn = r.NewStyle().Bold(true).Foreground(fg("#0b4f8a", "#7cc4ff"))
	s.Title = r.NewStyle().Bold(true)
	s.Dim = r.NewStyle().Foreground(fg("#666666", "#8a8a8a"))
	s.Label = r.NewStyle().Foreground(fg("#24527a", "#9ccfff"))
	s.Good = r.NewStyle().Foreground(fg("#1d6b1d", "#6fd36f"))
	s.Bad = r.NewStyle().Bold(true).Foreground(fg("#a00000", "#ff6b6b"))
	s.Warn = r.NewStyle().Foreground(fg("#8a5a00", "#ffc34d"))
	s.Danger = r.NewStyle().Border(lipgloss.DoubleBorder()).BorderForeground(fg("#a00000", "#ff5f5f")).Padding(0, 1)
	s.Caution = r.NewStyle().Border(lipgloss.NormalBorder()).BorderForeground(fg("#8a5a00", "#ffc34d")).Padding(0, 1)
	s.Alert = r.NewStyle().Border(lipgloss.ThickBorder()).BorderForeground(fg("#a00000", "#ff5f5f")).Padding(0, 1)
	s.Overlay = r.NewStyle().Border(lipgloss.RoundedBorder()).Padding(0, 1)
	s.Status = r.NewStyle().Foreground(fg("#444444", "#bcbcbc"))
	s.StatusEr = r.NewStyle().Bold(true).Foreground(fg("#a00000", "#ff6b6b"))
	s.Input = r.NewStyle()
	s.Prompt = r.NewStyle().Bold(true)
	return s
}

// asciiBorders switches the box borders to plain ASCII for terminals
// without line-drawing characters.
func (s *Styles) asciiBorders() {
	b := lipgloss.Border{Top: "=", Bottom: "=", Left: "#", Right: "#", TopLeft: "#", TopRight: "#", BottomLeft: "#", BottomRight: "#"}
	n := lipgloss.Border{Top: "-", Bottom: "-", Left: "|", Right: "|", TopLeft: "+", TopRight: "+", BottomLeft: "+", BottomRight: "+"}
	s.Danger = s.Danger.Border(b)
	s.Caution = s.Caution.Border(n)
	s.Alert = s.Alert.Border(lipgloss.Border{Top: "!", Bottom: "!", Left: "!", Right: "!", TopLeft: "!", TopRight: "!", BottomLeft: "!", BottomRight: "!"})
	s.Overlay = s.Overlay.Border(n)
}

// asciiFolds spells the non-ASCII characters the screens can carry (from
// units, design files and procedure text) in ASCII; ohms and micro as a
// technician would type them (4k7ohm, 2uA).
var asciiFolds = strings.NewReplacer(
	"Ω", "ohm", "\u2126", "ohm", "µ", "u", "μ", "u",
	"–", "-", "—", "-", "−", "-", "‐", "-", "…", "...",
	"·", ".", "•", "*", "←", "<-", "→", "->", "↑", "^", "↓", "v",
	"°", " deg", "±", "+/-", "×", "x", "≥", ">=", "≤", "<=", "≈", "~",
	"²", "^2", "³", "^3", "½", "1/2", "√", "sqrt",
	"‘", "'", "’", "'", "“", `"`, "”", `"`, "\u00a0", " ",
	"✓", "+", "✗", "X", "▶", ">", "▲", "^", "◆", "o", "█", "#", "░", ".",
)

// asciiFold returns s with every character outside ASCII spelled in
// ASCII, or as "?" when it has no spelling. Escape sequences are ASCII and
// pass unchanged.
func asciiFold(s string) string {
	ascii := true
	for i := 0; i < len(s); i++ {
		if s[i] >= 0x80 {
			ascii = false
			break
		}
	}
	if ascii {
		return s
	}
	s = asciiFolds.Replace(s)
	var b strings.Builder
	for _, r := range s {
		if r >= 0x80 {
			b.WriteByte('?')
			continue
		}
		b.WriteRune(r)
	}
	return b.String()
}
