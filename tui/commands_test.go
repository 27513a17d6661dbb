package tui

import (
	"strings"
	"testing"

	"pinwalk/procedures"
)

// The full-screen view sends typed commands to the session controller
// like plain mode: power, stop, m and name reach the measuring loop, and
// its answer (or refusal) shows on the step view.
func TestFullScreenCommands(t *testing.T) {
	walk, _ := openWalk(t, "se-6v6-stereo", procedures.FaultFind)
	m := newModel(t, walk, 120, 40)
	m = drive(t, m, initMsg{})
	m = drive(t, m, typeText("power")...)
	if s := screen(m); !strings.Contains(s, "finish the safety steps first") {
		t.Errorf("power before the safety steps: want the loop's refusal on screen:\n%s", s)
	}
	m = drive(t, m, typeText("stop")...)
	if s := screen(m); !strings.Contains(s, "finish the safety steps first") {
		t.Errorf("stop before the safety steps: want the loop's refusal:\n%s", s)
	}
	m = drive(t, m, typeText("m")...)
	if s := screen(m); !strings.Contains(s, "only in practice") {
		t.Errorf("m outside practice: want it refused as practice-only:\n%s", s)
	}

	pw, _ := openWalk(t, "se-6v6-stereo", procedures.Practise)
	p := newModel(t, pw, 120, 40)
	p = drive(t, p, initMsg{})
	n := len(pw.R.Sess.Readings)
	for i := 0; i < 12 && len(pw.R.Sess.Readings) == n; i++ {
		line := "" // Enter confirms a step that takes no reading
		if p.e.run.NextMeasure() != nil {
			line = "m" // the simulated amp's reading
		}
		p = drive(t, p, typeText(line)...)
	}
	if len(pw.R.Sess.Readings) == n {
		t.Errorf("m in practice took no simulated reading:\n%s", screen(p))
	}
	p = drive(t, p, typeText("name R7:open")...)
	if s := screen(p); strings.Contains(s, "not a command") {
		t.Errorf("name was not taken as a command:\n%s", s)
	}
}
