package main

import (
	"os"
	"path/filepath"
	"strings"
	"testing"
)

const reportFixture = "../../testdata/sessions/se-6v6-bringup.yaml"

// The CLI writes the package's sheet, with step titles from the rebuilt
// procedure (the golden files, made without a procedure, show step ids).
func TestReportSheet(t *testing.T) {
	for _, c := range []struct {
		args []string
		want []string
	}{
		{[]string{"report", reportFixture}, []string{"# Job sheet: Demo SE-6V6", "| 2025-03-14 09:02 | Safety briefing | ✓ done |",
			"SKIPPED SAFETY STEP: Mains earth to chassis continuity", "**✗ OUT OF BAND**",
			// V3's measured plate current is its cathode current (17.4 V over
			// Rk) less the model's screen current: 52.5 mA − 4.15 mA at 277 V
			// on the screen gives 48.3 mA and 12.5 W, 104 % of 12 W.
			"⚠ 104 % OVER"}},
		{[]string{"report", "--format", "html", reportFixture}, []string{"<!DOCTYPE html>", "<svg ", "Safety briefing"}},
		{[]string{"report", "--compare", reportFixture, "../../testdata/sessions/se-6v6-after.yaml"},
			[]string{"# Before and after", "1 back in band after being out of band"}},
	} {
		code, out, errs := runCLI(c.args...)
		if code != 0 {
			t.Fatalf("%v: exit %d: %s", c.args, code, errs)
		}
		for _, w := range c.want {
			if !strings.Contains(out, w) {
				t.Errorf("%v: output lacks %q", c.args, w)
			}
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

// --for customer writes the repair report (Markdown, or HTML by -o's
// extension) with no point keys; --for takes bench or customer only.
func TestReportForCustomer(t *testing.T) {
	const repair = "../../testdata/sessions/pp-el34-repair.yaml"
	code, md, errs := runCLI("report", repair, "--for", "customer")
	if code != 0 {
		t.Fatalf("exit %d: %s", code, errs)
	}
	for _, w := range []string{"# Repair report: Example Audio PP-40 (invented)", "## Before and after the repair", "## Appendix: bench log",
		"Discharge and verify C2 (47 µF on B2): ✓ within range"} {
		if !strings.Contains(md, w) {
			t.Errorf("customer sheet lacks %q", w)
		}
	}
	for _, key := range []string{"cold:", "discharge:", "bias:", "dc\\_volts", "V3.8", "variac-"} {
		if strings.Contains(md, key) {
			t.Errorf("customer sheet shows the internal key %q", key)
		}
	}
	out := filepath.Join(t.TempDir(), "job.html")
	if code, _, errs := runCLI("report", repair, "--for", "customer", "-o", out); code != 0 {
		t.Fatalf("-o job.html: exit %d: %s", code, errs)
	}
	if b, err := os.ReadFile(out); err != nil || !strings.Contains(string(b), "@page") {
		t.Errorf("-o job.html: no print stylesheet (%v)", err)
	}
	if code, _, _ := runCLI("report", repair, "--for", "owner"); code != exitUsage {
		t.Errorf("--for owner: exit %d, want %d", code, exitUsage)
	}
	if code, _, _ := runCLI("report", "--compare", "--for", "customer", reportFixture, repair); code != exitUsage {
		t.Errorf("--compare --for customer: exit %d, want %d", code, exitUsage)
	}
}
