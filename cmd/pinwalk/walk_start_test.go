package main

import (
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// walk says at its start whether the session is new or resumed, with the
// file and the exact commands (to resume, to start afresh); on quitting
// it prints the commands to resume and to write both job sheets, and
// each command it prints does what it says.
func TestWalkStartAndEndCommands(t *testing.T) {
	dir := t.TempDir()
	path := filepath.Join(dir, "job.pinwalk.yaml")
	old := walkInput
	defer func() { walkInput = old }()

	walkInput = strings.NewReader("\nq\n")
	code, out, errOut := runCLI("walk", "demo", "--plain", "--session", path, "--samples", "20")
	if code != exitOK {
		t.Fatalf("walk: exit %d\n%s%s", code, out, errOut)
	}
	for _, want := range []string{
		"New session, saved after every entry to " + path,
		"Resume it later: pinwalk walk demo --session " + path + " --plain",
		"Resume: pinwalk walk demo --session " + path + " --plain",
		"Job sheet: pinwalk report " + path + " -o " + filepath.Join(dir, "job-sheet.html"),
		"Customer sheet: pinwalk report " + path + " --for customer -o " + filepath.Join(dir, "job-customer.html"),
	} {
		if !strings.Contains(out, want) {
			t.Errorf("first run: want %q in\n%s", want, out)
		}
	}
	if strings.Contains(out, "Resuming") {
		t.Errorf("first run: a new session said Resuming:\n%s", out)
	}

	walkInput = strings.NewReader("q\n")
	code, out, errOut = runCLI("walk", "demo", "--plain", "--session", path, "--samples", "20")
	if code != exitOK {
		t.Fatalf("second walk: exit %d\n%s%s", code, out, errOut)
	}
	fresh := filepath.Join(dir, "job-2.pinwalk.yaml")
	for _, want := range []string{
		"Resumed from " + path + " (0 readings so far",
		"A fresh session instead: quit, then pinwalk walk demo --session " + fresh + " --plain",
	} {
		if !strings.Contains(out, want) {
			t.Errorf("second run: want %q in\n%s", want, out)
		}
	}

	// The printed job-sheet commands run.
	sheet := filepath.Join(dir, "job-customer.html")
	if code, o, e := runCLI("report", path, "--for", "customer", "-o", sheet); code != exitOK {
		t.Fatalf("report --for customer: exit %d\n%s%s", code, o, e)
	}
	if _, err := os.Stat(sheet); err != nil {
		t.Errorf("the customer sheet was not written: %v", err)
	}
	if code, o, e := runCLI("report", path, "-o", filepath.Join(dir, "job-sheet.html")); code != exitOK {
		t.Fatalf("report: exit %d\n%s%s", code, o, e)
	}
}

// A fault-finding session's commands carry its mode.
func TestWalkCommandsCarryTheMode(t *testing.T) {
	path := filepath.Join(t.TempDir(), "ff.pinwalk.yaml")
	old := walkInput
	defer func() { walkInput = old }()
	walkInput = strings.NewReader("q\n")
	code, out, errOut := runCLI("walk", "demo:pp-el34-fixed", "--mode", "faultfind", "--plain", "--session", path, "--samples", "20")
	if code != exitOK {
		t.Fatalf("walk: exit %d\n%s%s", code, out, errOut)
	}
	if want := "pinwalk walk demo:pp-el34-fixed --mode faultfind --session " + path; !strings.Contains(out, want) {
		t.Errorf("want %q in\n%s", want, out)
	}
}

// walk --help states the session file a bare pinwalk resumes, as
// run with no arguments does.
func TestWalkHelpStatesTheDefault(t *testing.T) {
	_, _, errOut := runCLI("walk", "--help")
	for _, want := range []string{"DESIGN-MODE-DATE.pinwalk.yaml in the current directory", demoSessionHint()} {
		if !strings.Contains(errOut, want) {
			t.Errorf("walk --help lacks %q:\n%s", want, errOut)
		}
	}
	if demoSessionHint() != demoSessionPath() {
		t.Errorf("help names %s, a bare pinwalk uses %s", demoSessionHint(), demoSessionPath())
	}
}
