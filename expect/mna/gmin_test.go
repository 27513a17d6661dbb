package mna

import (
	"math"
	"testing"
)

// TestGminSteppingRescues: 50 V through 1 MΩ into a pure exponential diode.
// Plain Newton's first step puts the whole 50 V across the diode and exp
// overflows; with 1e-3 S on the node the diode starts near 0.05 V and the
// shunt is then stepped away.
func TestGminSteppingRescues(t *testing.T) {
	const vs, r, is = 50.0, 1e6, 1e-14
	c := New()
	in, a := c.Node("in"), c.Node("a")
	c.AddVSource(in, 0, vs)
	c.AddResistor(in, a, r)
	d := &expDiode{a: a, k: 0, is: is, nvt: vt300, vLin: math.Inf(1)}
	c.AddDevice(d)
	opt := DefaultOptions()
	var sol Solution
	if err := c.Solve(opt, nil, &sol); err != nil {
		t.Fatal(err)
	}
	t.Logf("converged by %s after %d iterations", sol.Stage, sol.Iterations)
	if sol.Stage != StageGmin {
		t.Errorf("stage %q, want %q", sol.Stage, StageGmin)
	}
	f := func(v float64) float64 {
		id, _ := d.current(v)
		return (vs-v)/r - id - opt.Gmin*v
	}
	if want := bisect(f, 0, 1); !near(sol.V[a], want, 1e-9) {
		t.Errorf("V(a) = %.12g, bisection %.12g", sol.V[a], want)
	}
	checkKCL(t, c, &sol, opt.Gmin)
}
