package faults

import (
	"math"
	"strings"
	"testing"

	"pinwalk/expect/amp"
	"pinwalk/expect/design"
)

var demos = []string{"se-6v6-stereo", "pp-el34-fixed", "bench-12ax7"}

func load(t testing.TB, name string) *amp.Model {
	t.Helper()
	d, probs := design.Load("../../testdata/designs/" + name + ".yaml")
	if errs := probs.Errors(); len(errs) > 0 {
		t.Fatalf("%s: %v", name, errs)
	}
	m, err := amp.Build(d)
	if err != nil {
		t.Fatal(err)
	}
	return m
}

type solved struct {
	op  amp.OP
	err error
}

// solveAll applies every fault of a demo and solves fully; it fails the
// test on a panic or a non-finite node voltage, and returns the results.
func solveAll(t *testing.T, m *amp.Model) (amp.OP, map[Fault]*solved) {
	t.Helper()
	s := amp.NewSolver(m)
	var nom amp.OP
	if err := s.Solve(amp.Conditions{}, m.NominalValues(), false, &nom); err != nil {
		t.Fatalf("nominal: %v", err)
	}
	out := map[Fault]*solved{}
	for _, f := range All(m) {
		v := m.NominalValues()
		if err := Apply(m, v, f); err != nil {
			t.Fatalf("%s: %v", f, err)
		}
		r := &solved{}
		func() {
			defer func() {
				if p := recover(); p != nil {
					t.Errorf("%s: panic: %v", f, p)
				}
			}()
			r.err = s.Solve(amp.Conditions{}, v, false, &r.op)
		}()
		if r.err == nil {
			for i, x := range r.op.V {
				if math.IsNaN(x) || math.IsInf(x, 0) {
					t.Errorf("%s: node %d volts %v", f, i, x)
				}
			}
		} else if strings.TrimSpace(r.err.Error()) == "" {
			t.Errorf("%s: empty error", f)
		}
		out[f] = r
	}
	return nom, out
}
