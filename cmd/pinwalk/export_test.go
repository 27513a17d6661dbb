package main

import (
	"os"
	"path/filepath"
	"strings"
	"testing"
)

func TestExportSpice(t *testing.T) {
	code, out, errOut := runCLI("export", "demo:pp-el34-fixed", "--spice")
	if code != exitOK {
		t.Fatalf("export --spice: exit %d\n%s", code, errOut)
	}
	for _, want := range []string{
		"* Demo PP-EL34 fixed bias",
		".func koren_pen_ip(",  // the pentode law, written once
		"V_V3_ip PA V3_p dc 0", // V3's plate-current probe
		"B_V3_ip V3_p KA I = koren_pen_ip(V(V3_g,KA), V(V3_s,KA), V(V3_p,KA),",
		"Child-Langmuir", // the 5U4GB
		".ic v(B1)=",     // starts at pinwalk's reservoir volts
		".tran ",
		".meas tran v_b1 avg v(B1)",
		".end",
	} {
		if !strings.Contains(out, want) {
			t.Errorf("export --spice output lacks %q", want)
		}
	}
	file := filepath.Join(t.TempDir(), "amp.cir")
	code, out2, errOut := runCLI("export", "demo", "--spice", "-o", file)
	if code != exitOK || out2 != "" || !strings.Contains(errOut, "ngspice -b "+file) {
		t.Fatalf("export -o: exit %d, stdout %q, stderr %q", code, out2, errOut)
	}
	data, err := os.ReadFile(file)
	if err != nil || !strings.Contains(string(data), ".func koren_tri_ip(") {
		t.Errorf("export -o wrote %d bytes (%v), want the deck", len(data), err)
	}
}

func TestExportUsage(t *testing.T) {
	if code, _, errOut := runCLI("export", "demo"); code != exitUsage || !strings.Contains(errOut, "--spice") {
		t.Errorf("export without a format: exit %d, %q; want %d naming --spice", code, errOut, exitUsage)
	}
	if code, _, _ := runCLI("export", "demo", "demo:bench-12ax7", "--spice"); code != exitUsage {
		t.Errorf("export with two designs: exit %d, want %d", code, exitUsage)
	}
	bad := filepath.Join("..", "..", "testdata", "bad", "missing-between.yaml")
	if code, _, errOut := runCLI("export", bad, "--spice"); code != exitProblems || !strings.Contains(errOut, "missing-between.yaml:") {
		t.Errorf("export of a bad design: exit %d, %q; want %d with file:line", code, errOut, exitProblems)
	}
}
