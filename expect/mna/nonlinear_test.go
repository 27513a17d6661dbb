package mna

import (
	"errors"
	"math"
	"testing"
)

// Thermal voltage kT/q at 300 K: 1.380649e-23·300/1.602176634e-19 (SI 2019
// exact constants).
const vt300 = 1.380649e-23 * 300 / 1.602176634e-19

func TestDiodeAgainstBisection(t *testing.T) {
	const vs, r, is = 5.0, 1000.0, 1e-14
	c := New()
	in, a := c.Node("in"), c.Node("a")
	c.AddVSource(in, 0, vs)
	hr := c.AddResistor(in, a, r)
	d := &expDiode{a: a, k: 0, is: is, nvt: vt300, vLin: 0.9}
	hd := c.AddDevice(d)
	opt := DefaultOptions()
	var sol Solution
	if err := c.Solve(opt, nil, &sol); err != nil {
		t.Fatal(err)
	}
	// KCL at a, Gmin included: (Vs − v)/R = Id(v) + Gmin·v.
	f := func(v float64) float64 {
		id, _ := d.current(v)
		return (vs-v)/r - id - opt.Gmin*v
	}
	want := bisect(f, 0, vs)
	if !near(sol.V[a], want, 1e-9) {
		t.Errorf("V(a) = %.12g, bisection %.12g", sol.V[a], want)
	}
	if sol.Stage != StageNewton {
		t.Errorf("stage %q, want plain Newton", sol.Stage)
	}
	cur := make([]float64, 2)
	c.DeviceCurrents(hd, sol.V, cur)
	ir := c.ResistorCurrent(hr, sol.V)
	if !near(cur[0], ir, 1e-9) || cur[0]+cur[1] != 0 {
		t.Errorf("diode currents %v, resistor current %g", cur, ir)
	}
	checkKCL(t, c, &sol, opt.Gmin)
	t.Logf("V(a) = %.9f V after %d iterations", sol.V[a], sol.Iterations)

	// Warm restart from the answer converges at once without an LU.
	n := d.evalCount
	if err := c.Solve(opt, sol.V, &sol); err != nil {
		t.Fatal(err)
	}
	if sol.Iterations != 0 || d.evalCount != n+1 {
		t.Errorf("warm start from the solution: %d iterations, %d evaluations", sol.Iterations, d.evalCount-n)
	}
}

func TestSquareLawClosedForm(t *testing.T) {
	// Source-degenerated square-law stage: I = K·u², u = Vg − Vt − I·Rs, so
	// Rs·K·u² + u − (Vg − Vt) = 0 and u = (−1 + √(1 + 4·Rs·K·(Vg − Vt)))/(2·Rs·K).
	tests := []struct{ vdd, rd, rs, vg, k, vt float64 }{
		{20, 10e3, 1e3, 3, 1e-3, 1}, // u = 1 V, I = 1 mA exactly
		{300, 47e3, 2.2e3, 5.5, 2.5e-3, 1.2},
		{12, 1e3, 100, 2, 0.05, 0.7},
	}
	for _, tc := range tests {
		c := New()
		vdd, g, d, s := c.Node("vdd"), c.Node("g"), c.Node("d"), c.Node("s")
		c.AddVSource(vdd, 0, tc.vdd)
		c.AddVSource(g, 0, tc.vg)
		c.AddResistor(vdd, d, tc.rd)
		c.AddResistor(s, 0, tc.rs)
		c.AddDevice(&squareLaw{d: d, g: g, s: s, k: tc.k, vt: tc.vt})
		var sol Solution
		if err := c.Solve(exactOpts(), nil, &sol); err != nil {
			t.Fatal(err)
		}
		u := (-1 + math.Sqrt(1+4*tc.rs*tc.k*(tc.vg-tc.vt))) / (2 * tc.rs * tc.k)
		i := tc.k * u * u
		if !near(sol.V[s], i*tc.rs, 1e-9) || !near(sol.V[d], tc.vdd-i*tc.rd, 1e-9) {
			t.Errorf("%+v: V(s) = %.12g want %.12g, V(d) = %.12g want %.12g",
				tc, sol.V[s], i*tc.rs, sol.V[d], tc.vdd-i*tc.rd)
		}
		// The supply delivers the drain current; the gate source nothing.
		if !near(sol.SourceAmps[0], i, 1e-9) || math.Abs(sol.SourceAmps[1]) > 1e-15 {
			t.Errorf("%+v: source currents %v, want [%g 0]", tc, sol.SourceAmps, i)
		}
		checkKCL(t, c, &sol, 0)
	}
}

// TestStiffDiodeChainNeedsAids: 500 V through 10 kΩ into four pure
// exponential diodes in series. From a cold start the first Newton step
// throws the diode nodes tens of volts forward, exp overflows, and plain
// Newton fails; a continuation stage must rescue it.
func TestStiffDiodeChainNeedsAids(t *testing.T) {
	const vs, r, is, nd = 500.0, 10e3, 1e-14, 4
	c := New()
	in := c.Node("in")
	c.AddVSource(in, 0, vs)
	prev := c.Node("d0")
	c.AddResistor(in, prev, r)
	var ds []*expDiode
	for k := 1; k <= nd; k++ {
		next := 0
		if k < nd {
			next = c.Node("d" + string(rune('0'+k)))
		}
		d := &expDiode{a: prev, k: next, is: is, nvt: vt300, vLin: math.Inf(1)}
		ds = append(ds, d)
		c.AddDevice(d)
		prev = next
	}
	opt := DefaultOptions()
	var sol Solution
	if err := c.Solve(opt, nil, &sol); err != nil {
		t.Fatal(err)
	}
	if sol.Stage == StageNewton {
		t.Errorf("plain Newton was expected to fail on this circuit, stage %q", sol.Stage)
	}
	t.Logf("converged by %s after %d iterations", sol.Stage, sol.Iterations)
	// Same current I through every diode (Gmin currents, ~1e-12 A against
	// 50 mA, are below the tolerance): (Vs − nd·nVt·ln(1 + I/Is))/R = I.
	f := func(i float64) float64 { return (vs-nd*vt300*math.Log1p(i/is))/r - i }
	want := bisect(f, 0, vs/r)
	got := c.ResistorCurrent(0+1, sol.V) // handle 1: the 10 kΩ resistor
	if !near(got, want, 1e-9) {
		t.Errorf("chain current %.12g A, bisection %.12g A", got, want)
	}
	vd := vt300 * math.Log1p(want/is)
	for k := 0; k < nd; k++ {
		node := c.Node("d" + string(rune('0'+k)))
		if w := float64(nd-k) * vd; !near(sol.V[node], w, 1e-9) {
			t.Errorf("V(d%d) = %.12g, want %.12g", k, sol.V[node], w)
		}
	}
	checkKCL(t, c, &sol, opt.Gmin)
}

func TestConvergenceErrorNamesNets(t *testing.T) {
	c := New()
	in, a, b := c.Node("in"), c.Node("a"), c.Node("b")
	c.AddVSource(in, 0, 10)
	c.AddResistor(in, a, 1000)
	c.AddDevice(&liar{a: a, b: 0, r: 1000})
	c.AddResistor(in, b, 1000) // a healthy branch that should not be named
	c.AddResistor(b, 0, 1000)
	var sol Solution
	sol.Iterations = -1
	err := c.Solve(DefaultOptions(), nil, &sol)
	var ce *ConvergenceError
	if !errors.As(err, &ce) {
		t.Fatalf("err = %v, want *ConvergenceError", err)
	}
	if len(ce.Nets) != 1 || ce.Nets[0] != "a" {
		t.Errorf("Nets = %q, want [a]", ce.Nets)
	}
	// (Vin − Va)/1k + Va/1k reported by the device leaves 10 mA unbalanced
	// at a, whatever Va is (Gmin aside).
	if !near(ce.Residual, 0.01, 1e-3) || ce.Stage != StageSource || ce.Iterations <= 0 {
		t.Errorf("Residual %g A (want ≈0.01), Stage %q, Iterations %d", ce.Residual, ce.Stage, ce.Iterations)
	}
	if sol.Iterations != -1 || sol.V != nil {
		t.Error("failed Solve modified the solution")
	}
	t.Log(err)
}

func TestNaNDeviceIsAnError(t *testing.T) {
	c := New()
	in, a := c.Node("in"), c.Node("a")
	c.AddVSource(in, 0, 10)
	c.AddResistor(in, a, 1000)
	c.AddDevice(&nanDevice{a: a, b: 0})
	var sol Solution
	err := c.Solve(DefaultOptions(), nil, &sol)
	var ce *ConvergenceError
	if !errors.As(err, &ce) || !errors.Is(err, ErrNonFinite) {
		t.Fatalf("err = %v, want ConvergenceError wrapping ErrNonFinite", err)
	}
	if len(ce.Nets) == 0 || ce.Nets[0] != "a" || math.IsNaN(ce.Residual) {
		t.Errorf("Nets %q Residual %g", ce.Nets, ce.Residual)
	}
}

func TestSolveDoesNotAllocate(t *testing.T) {
	c, res, _ := benchCircuit()
	opt := DefaultOptions()
	var sol Solution
	if err := c.Solve(opt, nil, &sol); err != nil {
		t.Fatal(err)
	}
	k := 0
	allocs := testing.AllocsPerRun(50, func() {
		c.SetResistance(res[k%len(res)], 1000*(1+0.01*float64(k%3)))
		k++
		if err := c.Solve(opt, sol.V, &sol); err != nil {
			t.Fatal(err)
		}
	})
	if allocs != 0 {
		t.Errorf("Solve allocates %v times per call, want 0", allocs)
	}
}
