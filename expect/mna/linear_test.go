package mna

import (
	"errors"
	"math"
	"slices"
	"testing"
)

// Closed forms below are Ohm's and Kirchhoff's laws worked by hand
// (voltage divider, Thevenin's theorem, superposition): any circuit-analysis
// text, e.g. Vlach & Singhal, ch. 1–2 (from memory).

func TestDivider(t *testing.T) {
	c := New()
	in, out := c.Node("in"), c.Node("out")
	vs := c.AddVSource(in, 0, 10)
	c.AddResistor(in, out, 1000)
	c.AddResistor(out, 0, 2000)
	var sol Solution
	if err := c.Solve(exactOpts(), nil, &sol); err != nil {
		t.Fatal(err)
	}
	// Vout = 10·2k/(1k+2k); I = 10/3k.
	if want := 10 * 2000.0 / 3000; !near(sol.V[out], want, 1e-9) {
		t.Errorf("V(out) = %.12g, want %.12g", sol.V[out], want)
	}
	if want := 10 / 3000.0; !near(sol.SourceAmps[c.VSourceIndex(vs)], want, 1e-9) {
		t.Errorf("source current = %.12g, want %.12g", sol.SourceAmps[0], want)
	}
	if sol.V[0] != 0 || sol.V[in] != 10 {
		t.Errorf("V = %v, want V[0]=0, V(in)=10", sol.V)
	}
	if sol.Stage != StageNewton {
		t.Errorf("stage %q, want %q", sol.Stage, StageNewton)
	}
	checkKCL(t, c, &sol, 0)
}

// bridge builds a Wheatstone bridge: source Vs from top to ground, R1
// top→a, R2 a→0, R3 top→b, R4 b→0, galvanometer resistor Rg a→b.
func bridge(vs, r1, r2, r3, r4, rg float64) (c *Circuit, hg int) {
	c = New()
	top, a, b := c.Node("top"), c.Node("a"), c.Node("b")
	c.AddVSource(top, 0, vs)
	c.AddResistor(top, a, r1)
	c.AddResistor(a, 0, r2)
	c.AddResistor(top, b, r3)
	c.AddResistor(b, 0, r4)
	hg = c.AddResistor(a, b, rg)
	return c, hg
}

func TestWheatstoneBridge(t *testing.T) {
	tests := []struct {
		name                   string
		vs, r1, r2, r3, r4, rg float64
	}{
		{"balanced", 12, 1000, 2000, 4700, 9400, 500},
		{"unbalanced", 12, 1000, 2200, 3300, 4700, 500},
		{"unbalanced reverse", 9, 10e3, 1e3, 220, 470, 47},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			c, hg := bridge(tc.vs, tc.r1, tc.r2, tc.r3, tc.r4, tc.rg)
			var sol Solution
			if err := c.Solve(exactOpts(), nil, &sol); err != nil {
				t.Fatal(err)
			}
			// Thevenin seen by Rg: Vth = Vs·(R2/(R1+R2) − R4/(R3+R4)),
			// Rth = R1∥R2 + R3∥R4, Ig = Vth/(Rth+Rg) from a to b.
			vth := tc.vs * (tc.r2/(tc.r1+tc.r2) - tc.r4/(tc.r3+tc.r4))
			rth := tc.r1*tc.r2/(tc.r1+tc.r2) + tc.r3*tc.r4/(tc.r3+tc.r4)
			want := vth / (rth + tc.rg)
			got := c.ResistorCurrent(hg, sol.V)
			if tc.name == "balanced" {
				if math.Abs(got) > 1e-15 {
					t.Errorf("balanced bridge: Ig = %g A, want 0", got)
				}
			} else if !near(got, want, 1e-9) {
				t.Errorf("Ig = %.12g A, want %.12g A", got, want)
			}
			checkKCL(t, c, &sol, 0)
		})
	}
}

func TestCurrentSourceIntoParallel(t *testing.T) {
	c := New()
	n := c.Node("n")
	c.AddISource(0, n, 2e-3) // 2 mA from ground through the source into n
	rs := []float64{1000, 4000, 5000}
	var hs []int
	for _, r := range rs {
		hs = append(hs, c.AddResistor(n, 0, r))
	}
	var sol Solution
	if err := c.Solve(exactOpts(), nil, &sol); err != nil {
		t.Fatal(err)
	}
	// R∥ = 1/(1/1k + 1/4k + 1/5k) = 20k/29 Ω; V = I·R∥.
	want := 2e-3 * 20000 / 29
	if !near(sol.V[n], want, 1e-9) {
		t.Errorf("V(n) = %.12g, want %.12g", sol.V[n], want)
	}
	for k, h := range hs {
		if got, w := c.ResistorCurrent(h, sol.V), want/rs[k]; !near(got, w, 1e-9) {
			t.Errorf("I(R%d) = %.12g, want %.12g", k, got, w)
		}
	}
	checkKCL(t, c, &sol, 0)
}

func TestTheveninTwoSources(t *testing.T) {
	const v1, v2, r1, r2, r3 = 10.0, 5.0, 1000.0, 2000.0, 3000.0
	c := New()
	a, b, x := c.Node("a"), c.Node("b"), c.Node("x")
	c.AddVSource(a, 0, v1)
	c.AddVSource(b, 0, v2)
	c.AddResistor(a, x, r1)
	c.AddResistor(b, x, r2)
	c.AddResistor(x, 0, r3)
	load := c.AddResistor(x, 0, math.Inf(1))
	// Millman: Vth = (V1/R1 + V2/R2)/(1/R1 + 1/R2 + 1/R3); Rth = R1∥R2∥R3.
	gsum := 1/r1 + 1/r2 + 1/r3
	vth := (v1/r1 + v2/r2) / gsum
	rth := 1 / gsum
	var sol Solution
	if err := c.Solve(exactOpts(), nil, &sol); err != nil {
		t.Fatal(err)
	}
	if !near(sol.V[x], vth, 1e-9) {
		t.Errorf("open-circuit V(x) = %.12g, want Vth %.12g", sol.V[x], vth)
	}
	for _, rl := range []float64{100, 1500, 1e6} {
		c.SetResistance(load, rl)
		if err := c.Solve(exactOpts(), sol.V, &sol); err != nil {
			t.Fatal(err)
		}
		want := vth * rl / (rth + rl)
		if !near(sol.V[x], want, 1e-9) {
			t.Errorf("RL %g: V(x) = %.12g, want %.12g", rl, sol.V[x], want)
		}
		if got, w := c.ResistorCurrent(load, sol.V), want/rl; !near(got, w, 1e-9) {
			t.Errorf("RL %g: I(RL) = %.12g, want %.12g", rl, got, w)
		}
		checkKCL(t, c, &sol, 0)
	}
}

func TestSuperposition(t *testing.T) {
	c := New()
	a, b, x, y := c.Node("a"), c.Node("b"), c.Node("x"), c.Node("y")
	srcs := []struct {
		h   int
		val float64
	}{
		{c.AddVSource(a, 0, 24), 24},
		{c.AddVSource(b, y, -7), -7},
		{c.AddISource(x, 0, 3e-3), 3e-3},
	}
	c.AddResistor(a, x, 1200)
	c.AddResistor(x, y, 3300)
	c.AddResistor(y, 0, 820)
	c.AddResistor(b, x, 4700)
	c.AddResistor(x, 0, 10e3)
	var all Solution
	if err := c.Solve(exactOpts(), nil, &all); err != nil {
		t.Fatal(err)
	}
	sum := make([]float64, c.NumNodes())
	for k := range srcs {
		for j, s := range srcs {
			v := 0.0
			if j == k {
				v = s.val
			}
			c.SetSource(s.h, v)
		}
		var one Solution
		if err := c.Solve(exactOpts(), nil, &one); err != nil {
			t.Fatal(err)
		}
		checkKCL(t, c, &one, 0)
		for i, v := range one.V {
			sum[i] += v
		}
	}
	for i := range sum {
		if !near(sum[i], all.V[i], 1e-9) {
			t.Errorf("%s: sum of single-source voltages %.12g, all sources %.12g", c.NodeName(i), sum[i], all.V[i])
		}
	}
}

func TestOpenAndShort(t *testing.T) {
	c := New()
	in, out := c.Node("in"), c.Node("out")
	c.AddVSource(in, 0, 10)
	r1 := c.AddResistor(in, out, 1000)
	r2 := c.AddResistor(out, 0, 2000)
	var sol Solution
	check := func(name string, want float64) {
		t.Helper()
		if err := c.Solve(DefaultOptions(), nil, &sol); err != nil {
			t.Fatalf("%s: %v", name, err)
		}
		if !near(sol.V[out], want, 1e-9) {
			t.Errorf("%s: V(out) = %.12g, want %.12g", name, sol.V[out], want)
		}
		checkKCL(t, c, &sol, DefaultOptions().Gmin)
	}
	c.SetResistance(r1, 0) // short: 1e-6 Ω inside
	check("R1 shorted", 10*2000/(2000+shortOhms))
	c.SetResistance(r1, 1000)
	c.SetResistance(r2, math.Inf(1))
	check("R2 open", 10/(1+1000*1e-12)) // only Gmin 1e-12 S loads the node
	if got := c.ResistorCurrent(r2, sol.V); got != 0 {
		t.Errorf("open resistor carries %g A", got)
	}
	c.SetResistance(r2, 0)
	check("R2 shorted", 10*shortOhms/(1000+shortOhms))
	c.SetResistance(r1, math.Inf(1))
	c.SetResistance(r2, 2000)
	check("R1 open", 0)
	c.SetResistance(r1, 1000)
	check("restored", 10*2000.0/3000)
}

func TestFloatingNets(t *testing.T) {
	c := New()
	in, mid := c.Node("in"), c.Node("mid")
	isl1, isl2, lone := c.Node("island1"), c.Node("island2"), c.Node("lone")
	c.AddVSource(in, 0, 100)
	c.AddResistor(in, mid, 1e3)
	c.AddResistor(mid, 0, 1e3)
	c.AddResistor(isl1, isl2, 1e3)        // an island: no path to ground
	c.AddISource(mid, lone, 1e-6)         // a current source is no DC path
	c.AddResistor(mid, isl1, math.Inf(1)) // nor is an open resistor
	c.AddDevice(&squareLaw{d: isl2, g: isl1, s: isl1, k: 1e-3, vt: 1})
	want := []string{"island1", "island2", "lone"}
	if got := c.FloatingNets(); !slices.Equal(got, want) {
		t.Errorf("FloatingNets = %q, want %q", got, want)
	}
	var sol Solution
	if err := c.Solve(DefaultOptions(), nil, &sol); err != nil {
		t.Fatalf("floating nodes must not make the matrix singular: %v", err)
	}
	// 1 µA into "lone" held by Gmin 1e-12 S alone: 1e6 V.
	if !near(sol.V[lone], 1e-6/1e-12, 1e-9) {
		t.Errorf("V(lone) = %g, want 1e6", sol.V[lone])
	}
	checkKCL(t, c, &sol, DefaultOptions().Gmin)

	// With Gmin 0 the same circuit is singular, and says so.
	o := DefaultOptions()
	o.Gmin = 0
	err := c.Solve(o, nil, &sol)
	if !errors.Is(err, ErrSingular) {
		t.Errorf("Gmin 0 with floating nodes: err = %v, want ErrSingular", err)
	}
}

func TestGminShiftIsSmall(t *testing.T) {
	// With the default Gmin the divider moves by about Gmin·(R1∥R2) relative.
	c := New()
	in, out := c.Node("in"), c.Node("out")
	c.AddVSource(in, 0, 10)
	c.AddResistor(in, out, 1000)
	c.AddResistor(out, 0, 2000)
	var sol Solution
	if err := c.Solve(DefaultOptions(), nil, &sol); err != nil {
		t.Fatal(err)
	}
	// Exact with the shunt: Vout = 10·(1/1k)/(1/1k + 1/2k + 1e-12).
	want := 10 * 1e-3 / (1e-3 + 0.5e-3 + 1e-12)
	if !near(sol.V[out], want, 1e-12) {
		t.Errorf("V(out) = %.15g, want %.15g", sol.V[out], want)
	}
}

func TestBadInputs(t *testing.T) {
	c := New()
	in := c.Node("in")
	vs := c.AddVSource(in, 0, 10)
	r := c.AddResistor(in, 0, 1000)
	var sol Solution
	if err := c.Solve(DefaultOptions(), []float64{0}, &sol); err == nil {
		t.Error("warm start of wrong length accepted")
	}
	c.SetSource(vs, math.NaN())
	if err := c.Solve(DefaultOptions(), nil, &sol); err == nil {
		t.Error("NaN source accepted")
	}
	c.SetSource(vs, 10)
	c.SetResistance(r, math.NaN())
	if err := c.Solve(DefaultOptions(), nil, &sol); err == nil {
		t.Error("NaN resistor accepted")
	}
	c.SetResistance(r, 1000)
	// Two different ideal sources in parallel: no solution, singular.
	c.AddVSource(in, 0, 12)
	err := c.Solve(DefaultOptions(), nil, &sol)
	var ce *ConvergenceError
	if !errors.As(err, &ce) || !errors.Is(err, ErrSingular) {
		t.Errorf("parallel voltage sources: err = %v, want ConvergenceError wrapping ErrSingular", err)
	}
}

func TestGroundName(t *testing.T) {
	c := New()
	c.SetGround("GND")
	if c.Node("GND") != 0 || c.Node("") != 0 || c.NodeName(0) != "GND" {
		t.Error("ground name not honoured")
	}
	a := c.Node("0") // "0" is an ordinary node once ground is renamed
	if a == 0 || c.Node("0") != a || c.NumNodes() != 2 {
		t.Errorf("Node(\"0\") = %d, NumNodes %d", a, c.NumNodes())
	}
	defer func() {
		if recover() == nil {
			t.Error("SetGround after nodes exist did not panic")
		}
	}()
	c.SetGround("earth")
}
