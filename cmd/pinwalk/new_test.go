package main

import (
	"bytes"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"pinwalk/expect/design"
)

func TestNewWritesTemplateAndRefusesOverwrite(t *testing.T) {
	file := filepath.Join(t.TempDir(), "myamp.yaml")
	var out, errb bytes.Buffer
	if rc := runNew([]string{file, "--from", "se-cathode"}, &out, &errb); rc != exitOK {
		t.Fatalf("rc %d, stderr %s", rc, errb.String())
	}
	data, err := os.ReadFile(file)
	if err != nil {
		t.Fatal(err)
	}
	tp, _ := design.TemplateByName("se-cathode")
	if !bytes.Equal(data, tp.Text) {
		t.Error("written file differs from the template")
	}
	if !strings.Contains(out.String(), "pinwalk check "+file) {
		t.Errorf("stdout lacks the next step: %s", out.String())
	}
	// A second run must not overwrite; --force must.
	os.WriteFile(file, []byte("mine"), 0o644)
	errb.Reset()
	if rc := runNew([]string{"--from", "pp-fixed", file}, &out, &errb); rc != exitProblems || !strings.Contains(errb.String(), "--force") {
		t.Errorf("overwrite without --force: rc %d, stderr %q", rc, errb.String())
	}
	if data, _ := os.ReadFile(file); string(data) != "mine" {
		t.Error("file overwritten without --force")
	}
	if rc := runNew([]string{"--force", "--from", "pp-fixed", file}, &out, &errb); rc != exitOK {
		t.Errorf("--force: rc %d", rc)
	}
	if data, _ := os.ReadFile(file); !strings.Contains(string(data), "6L6GC") {
		t.Error("--force did not write the pp-fixed template")
	}
}

func TestNewListAndErrors(t *testing.T) {
	var out, errb bytes.Buffer
	if rc := runNew([]string{"--list"}, &out, &errb); rc != exitOK {
		t.Fatalf("--list rc %d", rc)
	}
	lines := strings.Split(strings.TrimSpace(out.String()), "\n")
	if len(lines) != len(design.Templates()) {
		t.Errorf("--list printed %d lines for %d templates", len(lines), len(design.Templates()))
	}
	errb.Reset()
	if rc := runNew([]string{filepath.Join(t.TempDir(), "x.yaml"), "--from", "pp-fixd"}, &out, &errb); rc != exitUsage || !strings.Contains(errb.String(), `did you mean "pp-fixed"`) {
		t.Errorf("misspelled template: rc %d, stderr %q", rc, errb.String())
	}
	errb.Reset()
	if rc := runNew([]string{"x.yaml"}, &out, &errb); rc != exitUsage || !strings.Contains(errb.String(), "--from") {
		t.Errorf("no template: rc %d, stderr %q", rc, errb.String())
	}
}

func TestShow(t *testing.T) {
	var out, errb bytes.Buffer
	if rc := runShow([]string{"demo:pp-el34-fixed"}, &out, &errb); rc != exitOK {
		t.Fatalf("rc %d, stderr %s", rc, errb.String())
	}
	for _, want := range []string{"HT supply, from the source outwards", "V9 5U4GB valve rectifier", "└─ L1 choke 10 H", "bias supply",
		"pin 4  screen             SA     R32 resistor 1 kΩ 2 W (screen stopper) → B2", "Parts by net", "nothing unusual found"} {
		if !strings.Contains(out.String(), want) {
			t.Errorf("show output lacks %q", want)
		}
	}
	// A design with errors is not shown: its errors are.
	file := filepath.Join(t.TempDir(), "bad.yaml")
	os.WriteFile(file, []byte("pinwalk: 1\ntitle: x\nmains: {volts: 230}\nparts:\n  R1: {resister: 1k, between: [A, B]}\n"), 0o644)
	out.Reset()
	errb.Reset()
	if rc := runShow([]string{file}, &out, &errb); rc != exitProblems || out.Len() != 0 || !strings.Contains(errb.String(), `did you mean "resistor"`) {
		t.Errorf("bad design: rc %d, stdout %q, stderr %q", rc, out.String(), errb.String())
	}
}
