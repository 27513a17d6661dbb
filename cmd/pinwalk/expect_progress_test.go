package main

import (
	"os"
	"path/filepath"
	"strings"
	"testing"

	"pinwalk/internal/gen"
)

// A design with a network of ProgressNodes or more reports its progress
// on stderr, each stage up to 100 %; a demo design does not, and the
// report on stdout is the same either way.
func TestExpectProgressOnLargeDesign(t *testing.T) {
	f := filepath.Join(t.TempDir(), "chain600.yaml")
	if err := os.WriteFile(f, gen.Chain(600), 0o644); err != nil {
		t.Fatal(err)
	}
	code, out, errOut := runCLI("expect", "--samples", "20", f)
	if code != exitOK {
		t.Fatalf("exit %d: %s", code, errOut)
	}
	for _, w := range []string{"solving 621 nodes: samples… 100 %", "solving 621 nodes: meter loading… 100 %"} {
		if !strings.Contains(errOut, w) {
			t.Errorf("stderr does not say %q:\n%s", w, errOut)
		}
	}
	if strings.Contains(out, "solving") {
		t.Errorf("progress went to stdout")
	}
	_, _, errOut = runCLI("expect", "--samples", "20", "../../testdata/designs/se-6v6-stereo.yaml")
	if strings.Contains(errOut, "solving") {
		t.Errorf("progress on a small design: %s", errOut)
	}
}
