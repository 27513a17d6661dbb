package tui

import (
	"fmt"
	"os"
	"regexp"
	"strings"
	"testing"

	tea "github.com/charmbracelet/bubbletea"

	"pinwalk/expect/point"
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

// The summary step lists every stop, reading out of band, override and
// skipped step of the walk, however many readings came after them; the
// full text (F4) has them all and the commands.
func TestSummaryListsEveryException(t *testing.T) {
	walk, _ := openWalk(t, "se-6v6-stereo", procedures.BringUp)
	m := newModel(t, walk, 120, 40)
	m = walkTo(t, m, "discharge-C3")
	m = drive(t, m, typeText("120")...) // a charged capacitor: stop
	m = drive(t, m, typeText("again 0")...)
	m = walkTo(t, m, procedures.StepEarth)
	m = drive(t, m, typeText("3")...) // earth bond too high: stop
	m = drive(t, m, typeText("override earth bonded through the bench isolating transformer")...)
	m = walkTo(t, m, "cold-plate")
	m = drive(t, m, typeText("4k7")...) // far out of band
	if walk.R.Current().ID == "cold-plate" {
		m = drive(t, m, keyMsg(tea.KeyF2))
		m = drive(t, m, typeText("probe tip broke")...)
	}
	m = walkTo(t, m, procedures.StepSummary)
	ex := procedures.Exceptions(walk.R)
	kinds := map[string]bool{}
	for _, e := range ex {
		kinds[e.Kind] = true
	}
	for _, k := range []string{"stop", "override", "out of band"} {
		if !kinds[k] {
			t.Errorf("exceptions lack a %q: %+v", k, ex)
		}
	}
	s := screen(m)
	flat := strings.Join(strings.Fields(s), " ")
	if !strings.Contains(flat, fmt.Sprintf("Needs a look: %d", len(ex))) {
		t.Errorf("summary screen does not count %d exceptions:\n%s", len(ex), s)
	}
	for _, want := range []string{"STOP: C3 volts after discharge read 120 V", "OVERRIDE: earth pin to chassis let through: earth bonded", "OUT OF BAND:"} {
		if !strings.Contains(flat, want) {
			t.Errorf("summary screen lacks %q:\n%s", want, s)
		}
	}
	// At 80×24 the full text has every one of them.
	m = drive(t, m, tea.WindowSizeMsg{Width: 80, Height: 24}, keyMsg(tea.KeyF4))
	var all []string
	for i := 0; i < 10; i++ {
		all = append(all, screen(m))
		m = drive(t, m, keyMsg(tea.KeyDown), keyMsg(tea.KeyDown), keyMsg(tea.KeyDown), keyMsg(tea.KeyDown), keyMsg(tea.KeyDown))
	}
	text := strings.Join(strings.Fields(strings.Join(all, "\n")), " ")
	for _, e := range ex {
		if want := strings.Join(strings.Fields(e.Text), " "); !strings.Contains(text, firstN(want, 30)) {
			t.Errorf("the summary's full text lacks %q", want)
		}
	}
	if !strings.Contains(text, "--for customer") {
		t.Errorf("the summary's full text lacks the job sheet commands")
	}
	// Confirming the summary ends the walk: the end screen gives the
	// commands, whole, at 80×24.
	m = drive(t, m, keyMsg(tea.KeyEsc), keyMsg(tea.KeyEnter))
	if !walk.R.Finished() {
		t.Fatalf("not finished after confirming the summary:\n%s", screen(m))
	}
	end := strings.Join(strings.Fields(screen(m)), " ")
	for _, want := range []string{"Resume: pinwalk walk", "Job sheet: pinwalk report", "--for customer -o"} {
		if !strings.Contains(end, want) {
			t.Errorf("end screen lacks %q:\n%s", want, screen(m))
		}
	}
}

func firstN(s string, n int) string {
	if len(s) > n {
		return s[:n]
	}
	return s
}

// The complaint's words, a note and the reading field each take a line
// pasted or typed in one burst whole, key-name letters and all (y, n, q,
// s, m are keys elsewhere in the program; none may take a letter here).
func TestBurstsReachEveryField(t *testing.T) {
	const line = "no sound on right channel, hum at idle"
	for name, burst := range map[string]func(string) []tea.Msg{"paste": pasteRunes, "runes": burstRunes} {
		t.Run(name, func(t *testing.T) {
			walk, _ := openWalk(t, "se-6v6-stereo", procedures.BringUp)
			m := newModel(t, walk, 80, 24)
			m = walkTo(t, m, procedures.StepIntake)
			for walk.R.NextAsk() != nil && walk.R.NextAsk().Field != procedures.FieldComplaint {
				m = drive(t, m, keyMsg(tea.KeyEnter))
			}
			if walk.R.NextAsk() == nil {
				t.Fatal("the intake asks no complaint")
			}
			// A customer's complaint is often a paragraph: all of it.
			long := strings.Repeat(line+"; ", 9) + "worse when warm"
			m = drive(t, m, burst(long)...)
			if got := m.step.in.Value(); got != long {
				t.Fatalf("complaint field holds %q, want %q", got, long)
			}
			checkFrame(t, "complaint", strings.TrimSuffix(screen(m), "\n"), 80, 24)
			m = drive(t, m, keyMsg(tea.KeyEnter))
			if got := walk.R.Sess.Job.Complaint; got != long {
				t.Errorf("complaint recorded as %q, want %q", got, long)
			}

			// A note (F3) on a reading step.
			m = walkTo(t, m, "cold-plate")
			m = drive(t, m, keyMsg(tea.KeyF3))
			m = drive(t, m, burst(line)...)
			if got := m.step.in.Value(); got != line {
				t.Fatalf("note field holds %q, want %q", got, line)
			}
			m = drive(t, m, keyMsg(tea.KeyEnter))
			notes := walk.R.Sess.Notes
			if len(notes) == 0 || !strings.Contains(fmt.Sprint(notes[len(notes)-1]), line) {
				t.Errorf("note recorded as %v, want %q", notes, line)
			}

			// The reading field: the same line as a note typed there
			// ("n TEXT"), then a reading, both whole.
			m = drive(t, m, burst("n "+line)...)
			if got := m.step.in.Value(); got != "n "+line {
				t.Fatalf("reading field holds %q, want %q", got, "n "+line)
			}
			m = drive(t, m, keyMsg(tea.KeyEnter))
			notes = walk.R.Sess.Notes
			if len(notes) < 2 || !strings.Contains(fmt.Sprint(notes[len(notes)-1]), line) {
				t.Errorf("typed note recorded as %v, want %q", notes, line)
			}
			n := len(walk.R.Sess.Readings)
			m = drive(t, m, burst("4k7 !")...)
			if got := m.step.in.Value(); got != "4k7 !" {
				t.Fatalf("reading field holds %q, want %q", got, "4k7 !")
			}
			m = drive(t, m, keyMsg(tea.KeyEnter))
			if len(walk.R.Sess.Readings) != n+1 || walk.R.Sess.Readings[n].Value != 4700 {
				t.Errorf("the reading 4k7 was not recorded as 4.7 kΩ: %+v", walk.R.Sess.Readings[n:])
			}
		})
	}
}

// keyInText is what no screen a technician reads may show: a point key
// in its text form (point.InText) or as the sheet's regex spells it, an
// internal prefix.
var keyInText = regexp.MustCompile(`\b[A-Z]+[0-9]+(\.[0-9]+)? (dc_volts|ohms|ac_volts)\b|\b(cold|discharge|bias):`)

// instructionFaults lists the lines of a screen that carry an ellipsis
// (a cut instruction, a cut caution) or an internal key.
func instructionFaults(s string) []string {
	var out []string
	for i, l := range strings.Split(s, "\n") {
		if strings.Contains(l, "…") || strings.Contains(l, "...") || keyInText.MatchString(l) || point.InText.MatchString(l) {
			out = append(out, fmt.Sprintf("line %d: %s", i+1, l))
		}
	}
	return out
}

// The views a technician meets on every job, at 80×24, each golden: the
// briefing, a live reading, a stop, the summary and the end. No line of
// them is cut with an ellipsis or shows an internal key.
func TestGoldenViews80x24(t *testing.T) {
	walk, _ := openWalk(t, "se-6v6-stereo", procedures.BringUp)
	// A path that reads the same on every run: the session saved in the
	// test's own directory, by a relative name, as a bench would.
	t.Chdir(t.TempDir())
	cfg := Config{Walk: walk, Renderer: asciiRenderer(), Path: "job-1042.pinwalk.yaml", Start: Start{Design: "se-6v6-stereo.yaml"}}
	m := drive(t, New(cfg), tea.WindowSizeMsg{Width: 80, Height: 24})
	m = drive(t, m, initMsg{})
	shot := func(name string) {
		t.Helper()
		s := screen(m)
		checkFrame(t, name, strings.TrimSuffix(s, "\n"), 80, 24)
		for _, f := range instructionFaults(s) {
			t.Errorf("%s: %s", name, f)
		}
		golden(t, "view-"+name+"-80x24", s)
	}
	shot("briefing")
	m = walkTo(t, m, "discharge-C3")
	m = drive(t, m, typeText("120")...) // a charged capacitor: stop
	shot("stop")
	m = drive(t, m, typeText("again 0")...)
	m = walkTo(t, m, "valve-V2")
	st := walk.R.Current()
	b, _ := walk.R.Expected(st, walk.R.NextMeasure())
	m = drive(t, m, typeText(typed(b.Nominal, "V"))...) // the plate, in band
	shot("live")
	m = walkTo(t, m, procedures.StepSummary)
	shot("summary")
	m = drive(t, m, keyMsg(tea.KeyEnter))
	if !walk.R.Finished() {
		t.Fatalf("not finished:\n%s", screen(m))
	}
	shot("end")
	if _, err := os.Stat("job-1042.pinwalk.yaml"); err != nil {
		t.Errorf("the session was not saved where the screens say: %v", err)
	}
}

// The check catches what it is for.
func TestInstructionFaultsCatches(t *testing.T) {
	for _, s := range []string{"wait a minute for the heat… (F4: all)", "B1 dc_volts read 290 V", "V3.8 reads 19 V", "cold:GR1 ohms", "discharge:C2 dc_volts", "bias:V3 dc_volts", "GR1 ohms"} {
		if len(instructionFaults(s)) == 0 {
			t.Errorf("%q passes the check", s)
		}
	}
	for _, s := range []string{"V3 pin 8 cathode reads 19 V", "band 262 V to 282 V", "C1 volts after discharge"} {
		if f := instructionFaults(s); len(f) > 0 {
			t.Errorf("%q fails the check: %v", s, f)
		}
	}
}
