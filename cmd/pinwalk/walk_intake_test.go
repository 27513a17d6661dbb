package main

import (
	"path/filepath"
	"strings"
	"testing"

	"pinwalk/procedures"
)

// The intake flags of walk fill the session's job and bench fields, and a
// bad --bench-mains is a usage error naming the flag.
func TestWalkIntakeFlags(t *testing.T) {
	path := filepath.Join(t.TempDir(), "job.pinwalk.yaml")
	old := walkInput
	walkInput = strings.NewReader("y\n")
	defer func() { walkInput = old }()
	code, out, errOut := runCLI("walk", "demo", "--plain", "--session", path, "--samples", "20",
		"--customer", "A. Customer (invented)", "--amp", "Demo Amps SE-20", "--serial", "0042",
		"--complaint", "hums, then goes quiet", "--technician", "Tech B",
		"--bench-meter", "bench DMM ±(0.5 % + 2)", "--bench-mains", "232V")
	if code != exitOK {
		t.Fatalf("walk: exit %d\n%s%s", code, out, errOut)
	}
	s, err := procedures.LoadSession(path)
	if err != nil {
		t.Fatal(err)
	}
	got := []string{s.Job.Customer, s.Bench.AmpID, s.Bench.Serial, s.Job.Complaint, s.Bench.Who, s.Bench.Meter}
	want := []string{"A. Customer (invented)", "Demo Amps SE-20", "0042", "hums, then goes quiet", "Tech B", "bench DMM ±(0.5 % + 2)"}
	for i := range want {
		if got[i] != want[i] {
			t.Errorf("field %d: got %q, want %q", i, got[i], want[i])
		}
	}
	if s.Bench.Mains != 232 {
		t.Errorf("bench mains %g, want 232", s.Bench.Mains)
	}
	code, _, errOut = runCLI("walk", "demo", "--plain", "--session", path, "--bench-mains", "2.3kV")
	if code != exitUsage || !strings.Contains(errOut, "--bench-mains") {
		t.Errorf("--bench-mains 2.3kV: exit %d, %q", code, errOut)
	}
}
