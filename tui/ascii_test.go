package tui

import (
	"fmt"
	"io"
	"strings"
	"testing"

	tea "github.com/charmbracelet/bubbletea"
	"github.com/charmbracelet/lipgloss"
	"github.com/muesli/termenv"

	"pinwalk/procedures"
)

// assertASCII fails when a frame holds a byte outside ASCII, naming the
// line and the character.
func assertASCII(t *testing.T, name, frame string) {
	t.Helper()
	for i, line := range strings.Split(frame, "\n") {
		for j := 0; j < len(line); j++ {
			if line[j] >= 0x80 {
				r := []rune(line[j:])[0]
				t.Errorf("%s: line %d has %q (U+%04X) at byte %d: %q", name, i+1, r, r, j, line)
				break
			}
		}
	}
}

// TestASCIIEverywhere renders every view and overlay with ASCII on (as
// under PINWALK_ASCII=1 or a non-UTF-8 locale), with colour off and on, at
// 80x24 and 120x40, and checks that no byte of any frame is outside ASCII:
// glyphs, borders, arrows, ellipses, the help line's separators, units
// (ohm, micro) and the procedure's own text. What the user types is shown
// folded too (220kΩ as 220kohm, which the field also accepts).
func TestASCIIEverywhere(t *testing.T) {
	colour := lipgloss.NewRenderer(io.Discard)
	colour.SetColorProfile(termenv.ANSI256)
	for _, rc := range []struct {
		name string
		r    *lipgloss.Renderer
	}{{"no-colour", asciiRenderer()}, {"colour", colour}} {
		for _, size := range [][2]int{{80, 24}, {120, 40}} {
			w, h := size[0], size[1]
			t.Run(fmt.Sprintf("%s-%dx%d", rc.name, w, h), func(t *testing.T) {
				walk, _ := openWalk(t, "se-6v6-stereo", procedures.Training)
				m := New(Config{Walk: walk, Renderer: rc.r, ASCII: true})
				m = drive(t, m, tea.WindowSizeMsg{Width: w, Height: h}, initMsg{})
				n := 0
				shot := func(what string) {
					t.Helper()
					n++
					f := m.View()
					assertASCII(t, fmt.Sprintf("%02d %s", n, what), f)
					checkFrame(t, what, f, w, h)
				}
				shot("briefing (caution box)")
				m = walkTo(t, m, "cold-b+")
				shot("prediction prompt")
				m = drive(t, m, typeText("220k")...) // the prediction
				m = drive(t, m, tea.KeyMsg{Type: tea.KeyRunes, Runes: []rune("220kΩ")})
				if s := screen(m); !strings.Contains(s, "> 220kohm") {
					t.Errorf("typed 220kΩ: want it shown as 220kohm:\n%s", s)
				}
				shot("typed ohms")
				m = drive(t, m, keyMsg(tea.KeyEnter))
				shot("gauge with reading and guess")
				m = drive(t, m, tea.KeyMsg{Type: tea.KeyCtrlK})
				shot("skip prompt")
				m = drive(t, m, keyMsg(tea.KeyEsc), tea.KeyMsg{Type: tea.KeyCtrlO})
				shot("note prompt")
				m = drive(t, m, keyMsg(tea.KeyEsc))
				m = walkTo(t, m, "valve-V2")
				m = drive(t, m, typeText("250")...) // the prediction
				m = drive(t, m, typeText("250")...) // the plate, under its band
				shot("live step, DANGER box, out of band")
				m = drive(t, m, tea.KeyMsg{Type: tea.KeyCtrlE})
				shot("full step text")
				m = drive(t, m, keyMsg(tea.KeyEsc), tea.KeyMsg{Type: tea.KeyCtrlL})
				shot("list of steps")
				m = drive(t, m, keyMsg(tea.KeyEsc), keyMsg(tea.KeyTab))
				for range m.sock.vs {
					shot("sockets " + m.sock.vs[m.sock.sel].Ref)
					m = drive(t, m, keyMsg(tea.KeyRight))
				}
				m = drive(t, m, keyMsg(tea.KeyTab))
				shot("suspects (practice note in training)")
				m = drive(t, m, keyMsg(tea.KeyTab))
				shot("amp")
				m = drive(t, m, keyMsg(tea.KeyF1))
				shot("help")
				m = drive(t, m, keyMsg(tea.KeyEsc), tea.KeyMsg{Type: tea.KeyCtrlC})
				shot("quit box")
				m = drive(t, m, keyMsg(tea.KeyEsc), keyMsg(tea.KeyTab))
				m = walkTo(t, m, "")
				shot("every step done, score")
			})
		}
	}
}

// TestASCIISuspects: the ranking screen and its full text in ASCII (a
// bring-up session, where the suspects are ranked).
func TestASCIISuspects(t *testing.T) {
	walk, _ := openWalk(t, "se-6v6-stereo", procedures.BringUp)
	m := New(Config{Walk: walk, Renderer: asciiRenderer(), ASCII: true})
	m = drive(t, m, tea.WindowSizeMsg{Width: 80, Height: 24}, initMsg{})
	m = walkTo(t, m, "valve-V2")
	m = drive(t, m, typeText("250")...)
	m = drive(t, m, keyMsg(tea.KeyTab), keyMsg(tea.KeyTab))
	if m.sus.rank == nil {
		t.Fatalf("no ranking:\n%s", screen(m))
	}
	assertASCII(t, "suspects", m.View())
	m = drive(t, m, tea.KeyMsg{Type: tea.KeyCtrlE})
	assertASCII(t, "suspects in full", m.View())
}

// TestASCIIFold: the fold spells units as the field reads them back and
// leaves escape sequences alone.
func TestASCIIFold(t *testing.T) {
	for _, c := range []struct{ in, want string }{
		{"4.7 kΩ", "4.7 kohm"},
		{"2 µA", "2 uA"},
		{"262 V – 301 V…", "262 V - 301 V..."},
		{"\x1b[1m✓ saved\x1b[0m", "\x1b[1m+ saved\x1b[0m"},
		{"plain", "plain"},
		{"☃", "?"},
	} {
		if got := asciiFold(c.in); got != c.want {
			t.Errorf("asciiFold(%q) = %q, want %q", c.in, got, c.want)
		}
	}
}
