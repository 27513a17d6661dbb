package main

import (
	"os"
	"path/filepath"
	"strings"
	"testing"
)

const reportFixture = "../../testdata/sessions/se-6v6-bringup.yaml"

// The CLI writes the same sheet as the package's golden files.
func TestReportMatchesGolden(t *testing.T) {
	for _, c := range []struct {
		args   []string
		golden string
	}{
		{[]string{"report", reportFixture}, "se-6v6-bringup.md"},
		{[]string{"report", "--format", "html", reportFixture}, "se-6v6-bringup.html"},
		{[]string{"report", "--compare", reportFixture, "../../testdata/sessions/se-6v6-after.yaml"}, "se-6v6-compare.md"},
	} {
		code, out, errs := runCLI(c.args...)
		if code != 0 {
			t.Fatalf("%v: exit %d: %s", c.args, code, errs)
		}
		want, err := os.ReadFile(filepath.Join("../../testdata/golden/report", c.golden))
		if err != nil {
			t.Fatal(err)
		}
		if out != string(want) {
			t.Errorf("%v: output differs from %s", c.args, c.golden)
		}
	}
}

func TestReportFileAndErrors(t *testing.T) {
	dir := t.TempDir()
	out := filepath.Join(dir, "sheet.html")
	if code, _, errs := runCLI("report", reportFixture, "-o", out); code != 0 {
		t.Fatalf("exit %d: %s", code, errs)
	}
	b, err := os.ReadFile(out)
	if err != nil || !strings.HasPrefix(string(b), "<!DOCTYPE html>") {
		t.Fatalf("-o sheet.html did not write HTML: %v", err)
	}
	if code, _, _ := runCLI("report"); code != exitUsage {
		t.Errorf("no session: exit %d, want %d", code, exitUsage)
	}
	if code, _, _ := runCLI("report", "--compare", reportFixture); code != exitUsage {
		t.Errorf("--compare with one session: exit %d, want %d", code, exitUsage)
	}
	if code, _, _ := runCLI("report", "--format", "pdf", reportFixture); code != exitUsage {
		t.Errorf("--format pdf: exit %d, want %d", code, exitUsage)
	}
	if code, _, _ := runCLI("report", filepath.Join(dir, "missing.yaml")); code != exitProblems {
		t.Errorf("missing session: exit %d, want %d", code, exitProblems)
	}
	// Another design than the session's: the sheet and stderr say so.
	code, md, errs := runCLI("report", "--design", "demo:pp-el34-fixed", reportFixture)
	if code != 0 || !strings.Contains(errs, "has changed") || !strings.Contains(md, "has changed since the session") {
		t.Errorf("--design with another design: exit %d, stderr %q", code, errs)
	}
}
