package tui

import (
	"flag"
	"io"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	tea "github.com/charmbracelet/bubbletea"
	"github.com/charmbracelet/lipgloss"
	"github.com/charmbracelet/x/ansi"
	"github.com/muesli/termenv"

	"pinwalk/expect/design"
	"pinwalk/procedures"
)

var update = flag.Bool("update", false, "rewrite the golden screens")

// t0 is the fixed clock of the test sessions.
var t0 = time.Date(2025, 3, 1, 9, 0, 0, 0, time.UTC)

// asciiRenderer renders without colour, as under NO_COLOR.
func asciiRenderer() *lipgloss.Renderer {
	r := lipgloss.NewRenderer(io.Discard)
	r.SetColorProfile(termenv.Ascii)
	return r
}

// openWalk opens a demo design in a mode with a session in a temp dir.
func openWalk(t testing.TB, demo string, mode procedures.Mode) (*procedures.Walk, string) {
	t.Helper()
	d, probs := design.Load(filepath.Join("..", "testdata", "designs", demo+".yaml"))
	if d == nil || len(probs.Errors()) > 0 {
		t.Fatalf("load %s: %v", demo, probs)
	}
	s := procedures.NewSession(d, mode, 1, t0)
	path := filepath.Join(t.TempDir(), "s.pinwalk.yaml")
	tick := t0
	w, err := procedures.Open(d, s, path, procedures.WalkOptions{Samples: 60, Seed: 1, Now: func() time.Time { tick = tick.Add(time.Second); return tick }})
	if err != nil {
		t.Fatalf("open: %v", err)
	}
	return w, path
}

// newModel builds a colourless model of a walk at a size and runs Init.
func newModel(t testing.TB, w *procedures.Walk, width, height int) Model {
	m := New(Config{Walk: w, Renderer: asciiRenderer()})
	mm := drive(t, m, tea.WindowSizeMsg{Width: width, Height: height})
	return drive(t, mm, initMsg{})
}

// initMsg makes drive run Init's command.
type initMsg struct{}

// drive sends msg to the model and runs every command it returns, and
// their commands in turn, synchronously, as the program loop would.
func drive(t testing.TB, m Model, msgs ...tea.Msg) Model {
	t.Helper()
	queue := append([]tea.Msg(nil), msgs...)
	for n := 0; len(queue) > 0; n++ {
		if n > 10000 {
			t.Fatal("drive: runaway command loop")
		}
		msg := queue[0]
		queue = queue[1:]
		var cmd tea.Cmd
		if _, ok := msg.(initMsg); ok {
			cmd = m.Init()
		} else {
			var mod tea.Model
			mod, cmd = m.Update(msg)
			m = mod.(Model)
		}
		queue = append(queue, run(cmd)...)
	}
	return m
}

// run executes a command and flattens batches.
func run(cmd tea.Cmd) []tea.Msg {
	if cmd == nil {
		return nil
	}
	msg := cmd()
	switch msg := msg.(type) {
	case nil:
		return nil
	case tea.BatchMsg:
		var out []tea.Msg
		for _, c := range msg {
			out = append(out, run(c)...)
		}
		return out
	case tea.QuitMsg:
		return nil
	}
	return []tea.Msg{msg}
}

// typeText sends text as one KeyRunes message then Enter.
func typeText(text string) []tea.Msg {
	return []tea.Msg{tea.KeyMsg{Type: tea.KeyRunes, Runes: []rune(text)}, tea.KeyMsg{Type: tea.KeyEnter}}
}

func keyMsg(k tea.KeyType) tea.Msg { return tea.KeyMsg{Type: k} }

// screen is the view without escape codes and trailing spaces.
func screen(m Model) string {
	lines := strings.Split(ansi.Strip(m.View()), "\n")
	for i, l := range lines {
		lines[i] = strings.TrimRight(l, " ")
	}
	return strings.Join(lines, "\n") + "\n"
}

// goldenDir is where the golden screens live, resolved at start (a test
// may change its working directory).
var goldenDir = func() string {
	d, err := filepath.Abs(filepath.Join("..", "testdata", "golden", "tui"))
	if err != nil {
		panic(err)
	}
	return d
}()

// golden compares a screen with testdata/golden/tui/NAME.txt (rewritten
// with -update).
func golden(t *testing.T, name, got string) {
	t.Helper()
	path := filepath.Join(goldenDir, name+".txt")
	if *update {
		if err := os.MkdirAll(filepath.Dir(path), 0o755); err != nil {
			t.Fatal(err)
		}
		if err := os.WriteFile(path, []byte(got), 0o644); err != nil {
			t.Fatal(err)
		}
		return
	}
	want, err := os.ReadFile(path)
	if err != nil {
		t.Fatalf("%v (run with -update to create it)", err)
	}
	if string(want) != got {
		t.Errorf("screen %s differs from %s (run with -update to accept):\n--- got\n%s--- want\n%s", name, path, got, want)
	}
}
