package tui

import (
	"strings"
	"testing"

	tea "github.com/charmbracelet/bubbletea"

	"pinwalk/procedures"
)

// The first screen says whether the session is new or resumed, names its
// file and gives the exact command for the other choice, at 80×24 with
// every line whole.
func TestFirstScreenSaysNewOrResumed(t *testing.T) {
	for _, resumed := range []bool{false, true} {
		walk, path := openWalk(t, "se-6v6-stereo", procedures.BringUp)
		st := Start{Resumed: resumed, Readings: 3, Design: "demo", Fresh: "/tmp/job-2.pinwalk.yaml"}
		m := drive(t, New(Config{Walk: walk, Renderer: asciiRenderer(), Start: st}), tea.WindowSizeMsg{Width: 80, Height: 24})
		m = drive(t, m, initMsg{})
		s := screen(m)
		checkFrame(t, "first screen", strings.TrimSuffix(s, "\n"), 80, 24)
		flat := strings.Join(strings.Fields(s), " ")
		want := []string{"New session, saved after every entry to " + path, "pinwalk walk demo --session " + path}
		if resumed {
			want = []string{"Resumed from " + path + " (3 readings so far", "A fresh session instead: quit, then pinwalk walk demo --session /tmp/job-2.pinwalk.yaml"}
		}
		for _, w := range want {
			if !strings.Contains(flat, w) {
				t.Errorf("resumed=%v: first screen lacks %q:\n%s", resumed, w, s)
			}
		}
		if !strings.Contains(s, "Safety briefing") {
			t.Errorf("the first screen lost the briefing:\n%s", s)
		}
	}
}

// The quit dialog and the end of the walk give the exact commands to
// resume and to write both job sheets.
func TestQuitAndEndGiveTheCommands(t *testing.T) {
	walk, path := openWalk(t, "se-6v6-stereo", procedures.BringUp)
	m := drive(t, New(Config{Walk: walk, Renderer: asciiRenderer(), Start: Start{Design: "demo"}}), tea.WindowSizeMsg{Width: 120, Height: 40})
	m = drive(t, m, initMsg{})
	m = drive(t, m, keyMsg(tea.KeyCtrlC))
	base := strings.TrimSuffix(path, ".pinwalk.yaml")
	cmds := []string{
		"pinwalk walk demo --session " + path,
		"pinwalk report " + path + " -o " + base + "-sheet.html",
		"pinwalk report " + path + " --for customer -o " + base + "-customer.html",
	}
	flat := strings.Join(strings.Fields(strings.NewReplacer("│", " ", "|", " ").Replace(screen(m))), " ")
	for _, c := range cmds {
		if !strings.Contains(flat, c) {
			t.Errorf("quit dialog lacks %q:\n%s", c, screen(m))
		}
	}
}

// pasteRunes is a pasted line as bubbletea delivers it in one read:
// one KeyRunes message flagged Paste.
func pasteRunes(text string) []tea.Msg {
	return []tea.Msg{tea.KeyMsg{Type: tea.KeyRunes, Runes: []rune(text), Paste: true}}
}

// burstRunes is the same line typed fast or pasted without bracketed
// paste: one message per character, spaces as KeySpace.
func burstRunes(text string) []tea.Msg {
	var out []tea.Msg
	for _, r := range text {
		if r == ' ' {
			out = append(out, tea.KeyMsg{Type: tea.KeySpace, Runes: []rune{' '}})
			continue
		}
		out = append(out, tea.KeyMsg{Type: tea.KeyRunes, Runes: []rune{r}})
	}
	return out
}

// A line pasted or typed in one burst reaches the field whole, whatever
// its letters, also while the walk is still working on the Enter before
// it (the burst waits in the queue).
func TestPastedLineArrivesIntact(t *testing.T) {
	const line = "no sound on right channel, hum when cold; y/n? q s"
	for name, burst := range map[string]func(string) []tea.Msg{"paste": pasteRunes, "runes": burstRunes} {
		t.Run(name, func(t *testing.T) {
			walk, _ := openWalk(t, "se-6v6-stereo", procedures.BringUp)
			m := newModel(t, walk, 80, 24)
			m = walkTo(t, m, procedures.StepIntake)
			m = drive(t, m, typeText("Job 7 (invented)")...)
			m = drive(t, m, typeText("Demo SE-20")...)
			// The serial's Enter and the complaint's burst in one go: the
			// burst arrives while the controller is busy.
			msgs := []tea.Msg{tea.KeyMsg{Type: tea.KeyRunes, Runes: []rune("0042")}, tea.KeyMsg{Type: tea.KeyEnter}}
			msgs = append(msgs, burst(line)...)
			m = drive(t, m, msgs...)
			if got := m.step.in.Value(); got != line {
				t.Fatalf("field holds %q, want %q", got, line)
			}
			m = drive(t, m, keyMsg(tea.KeyEnter))
			if got := walk.R.Sess.Job.Complaint; got != line {
				t.Errorf("complaint recorded as %q, want %q", got, line)
			}
		})
	}
}
