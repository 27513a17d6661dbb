package mna

import (
	"math"
	"testing"
)

// kclResiduals recomputes, from the element currents alone (not from the MNA
// matrix), the sum of the currents leaving every node into its elements,
// gmin included. scale is the sum of the magnitudes of the terms at each
// node, for a relative tolerance. Kirchhoff's current law says each sum is 0.
func kclResiduals(c *Circuit, sol *Solution, gmin float64) (sum, scale []float64) {
	n := c.NumNodes()
	sum = make([]float64, n)
	scale = make([]float64, n)
	add := func(node int, i, mag float64) {
		sum[node] += i
		scale[node] += math.Abs(mag)
	}
	v := sol.V
	for _, r := range c.res {
		i := (v[r.a] - v[r.b]) * r.g
		mag := math.Abs(v[r.a]*r.g) + math.Abs(v[r.b]*r.g)
		add(r.a, i, mag)
		add(r.b, -i, mag)
	}
	for k, s := range c.vs {
		add(s.plus, -sol.SourceAmps[k], sol.SourceAmps[k])
		add(s.minus, sol.SourceAmps[k], sol.SourceAmps[k])
	}
	for _, s := range c.is {
		add(s.from, s.amps, s.amps)
		add(s.to, -s.amps, s.amps)
	}
	for h, e := range c.elems {
		if e.kind != kindDevice {
			continue
		}
		d := c.devs[e.idx]
		cur := make([]float64, len(d.term))
		c.DeviceCurrents(h, v, cur)
		for k, node := range d.term {
			add(node, cur[k], cur[k])
		}
	}
	for i := 1; i < n; i++ {
		add(i, gmin*v[i], gmin*v[i])
	}
	return sum, scale
}

// checkKCL fails the test if any non-ground node's currents do not sum to
// zero within 1e-8 of the node's current scale plus 1e-10 A.
func checkKCL(t testing.TB, c *Circuit, sol *Solution, gmin float64) {
	t.Helper()
	sum, scale := kclResiduals(c, sol, gmin)
	for i := 1; i < len(sum); i++ {
		if !(math.Abs(sum[i]) <= 1e-8*scale[i]+1e-10) {
			t.Errorf("KCL at %s: currents sum to %g A (scale %g A)", c.NodeName(i), sum[i], scale[i])
		}
	}
}

// near reports whether got is within rel (relative) of want, or within 1e-15
// absolute when want is 0.
func near(got, want, rel float64) bool {
	if want == 0 {
		return math.Abs(got) <= 1e-15
	}
	return math.Abs(got-want) <= rel*math.Abs(want)
}

// exactOpts is DefaultOptions with Gmin 0, for closed-form checks on
// circuits where every node has a DC path to ground: the default 1e-12 S
// shunt would shift a node behind R ohms by about Gmin·R relative, which is
// 1e-9 already at 1 kΩ.
func exactOpts() Options {
	o := DefaultOptions()
	o.Gmin = 0
	return o
}

// ---- Test devices (defined here only; real valve models live elsewhere) ----

// expDiode is an exponential (Shockley) diode from anode a to cathode k:
// i = Is·(exp(v/nVt) − 1), continued linearly (C¹) above vLin so that a
// Newton step far to the right cannot overflow; vLin = +Inf gives the pure
// exponential. Shockley equation, e.g. Sedra & Smith, "Microelectronic
// Circuits", diode chapter (from memory).
type expDiode struct {
	a, k      int
	is, nvt   float64
	vLin      float64
	evalCount int
}

func (d *expDiode) Terminals() []int { return []int{d.a, d.k} }

func (d *expDiode) current(v float64) (i, g float64) {
	if v > d.vLin {
		e := math.Exp(d.vLin / d.nvt)
		g = d.is * e / d.nvt
		return d.is*(e-1) + g*(v-d.vLin), g
	}
	e := math.Exp(v / d.nvt)
	return d.is * (e - 1), d.is * e / d.nvt
}

func (d *expDiode) Eval(v, cur, jac []float64) {
	d.evalCount++
	i, g := d.current(v[0] - v[1])
	cur[0], cur[1] = i, -i
	jac[0], jac[1] = g, -g
	jac[2], jac[3] = -g, g
}

// squareLaw is a three-terminal transconductor (terminals drain, gate,
// source): the gate draws nothing and i(drain→source) = K·(vgs − Vt)² for
// vgs > Vt, else 0 — the textbook square law of a saturated MOSFET (Sedra &
// Smith, from memory), used here only as a smooth nonlinear test element.
type squareLaw struct {
	d, g, s int
	k, vt   float64
}

func (q *squareLaw) Terminals() []int { return []int{q.d, q.g, q.s} }

func (q *squareLaw) Eval(v, cur, jac []float64) {
	u := v[1] - v[2] - q.vt
	clear(jac)
	if u <= 0 {
		cur[0], cur[1], cur[2] = 0, 0, 0
		return
	}
	i := q.k * u * u
	gm := 2 * q.k * u
	cur[0], cur[1], cur[2] = i, 0, -i
	// ∂i/∂vd = 0, ∂i/∂vg = gm, ∂i/∂vs = −gm; source current is −i.
	jac[0*3+1], jac[0*3+2] = gm, -gm
	jac[2*3+1], jac[2*3+2] = -gm, gm
}

// liar is a two-terminal element that reports a negative resistance,
// i = −(va − vb)/R, but a positive conductance +1/R in its Jacobian: its
// currents and derivatives disagree, as a broken model's might.
type liar struct {
	a, b int
	r    float64
}

func (l *liar) Terminals() []int { return []int{l.a, l.b} }

func (l *liar) Eval(v, cur, jac []float64) {
	i := -(v[0] - v[1]) / l.r
	g := 1 / l.r
	cur[0], cur[1] = i, -i
	jac[0], jac[1], jac[2], jac[3] = g, -g, -g, g
}

// nanDevice returns NaN currents: the solver must report it, not return NaN.
type nanDevice struct{ a, b int }

func (n *nanDevice) Terminals() []int { return []int{n.a, n.b} }

func (n *nanDevice) Eval(v, cur, jac []float64) {
	cur[0], cur[1] = math.NaN(), math.NaN()
	clear(jac)
}

// bisect finds a root of f on [lo, hi] (f(lo), f(hi) of opposite signs) to
// the last bit.
func bisect(f func(float64) float64, lo, hi float64) float64 {
	flo := f(lo)
	for range 200 {
		mid := 0.5 * (lo + hi)
		if mid == lo || mid == hi {
			break
		}
		fm := f(mid)
		if (fm < 0) == (flo < 0) {
			lo, flo = mid, fm
		} else {
			hi = mid
		}
	}
	return 0.5 * (lo + hi)
}
