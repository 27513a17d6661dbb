package cold

import (
	"errors"
	"math"

	"gonum.org/v1/gonum/mat"
)

// rcNet is a linear RC network with every capacitor from a node to the
// reference (chassis): C·dv/dt = −G·v (+ injected current), solved by
// diagonalisation.
//
// Nodes without capacitance are eliminated (Kron reduction: the
// conductance seen between capacitor nodes is Gcc − Gcr·Grr⁻¹·Grc), and
// the reduced system is made symmetric with D = C^(−1/2):
// A = D·Gred·D, whose eigenpairs (λk, uk) give the solution
// v_c(t) = D·U·exp(−Λt)·Uᵀ·D⁻¹·v_c(0) (any linear-systems text, e.g.
// the normal-mode solution of coupled first-order systems). The time
// constants are 1/λk.
type rcNet struct {
	n      int
	capIx  []int // node indices with capacitance, in order
	resIx  []int // the others
	cpos   map[int]int
	rpos   map[int]int
	c      []float64
	x      *mat.Dense // Grr⁻¹·Grc (nr × nc), nil when nr = 0
	lambda []float64  // ascending
	u      *mat.Dense // eigenvectors of A, columns
	g      *mat.Dense // full conductance matrix (n × n)
}

// newRC builds the modal form of an RC network: g is the n × n nodal
// conductance matrix (reference eliminated), c the capacitance per node
// (0 for none). Every node must have a resistive path to the reference
// or to a capacitor node, or the reduction is singular (an error).
func newRC(g *mat.Dense, c []float64) (*rcNet, error) {
	n := len(c)
	r := &rcNet{n: n, c: c, g: g, cpos: map[int]int{}, rpos: map[int]int{}}
	for i, ci := range c {
		if ci > 0 {
			r.cpos[i] = len(r.capIx)
			r.capIx = append(r.capIx, i)
		} else {
			r.rpos[i] = len(r.resIx)
			r.resIx = append(r.resIx, i)
		}
	}
	nc, nr := len(r.capIx), len(r.resIx)
	if nc == 0 {
		return nil, errors.New("rc: no capacitor nodes")
	}
	sub := func(rows, cols []int) *mat.Dense {
		m := mat.NewDense(len(rows), len(cols), nil)
		for i, a := range rows {
			for j, b := range cols {
				m.Set(i, j, g.At(a, b))
			}
		}
		return m
	}
	gred := sub(r.capIx, r.capIx)
	if nr > 0 {
		grr := sub(r.resIx, r.resIx)
		grc := sub(r.resIx, r.capIx)
		var lu mat.LU
		lu.Factorize(grr)
		r.x = mat.NewDense(nr, nc, nil)
		if err := lu.SolveTo(r.x, false, grc); err != nil {
			var ce mat.Condition
			if !errors.As(err, &ce) || math.IsInf(float64(ce), 1) {
				return nil, errors.New("rc: a node without capacitance has no resistive path (singular reduction)")
			}
		}
		var corr mat.Dense
		corr.Mul(grc.T(), r.x)
		gred.Sub(gred, &corr)
	}
	a := mat.NewSymDense(nc, nil)
	for i := 0; i < nc; i++ {
		for j := i; j < nc; j++ {
			// symmetrise against rounding
			v := 0.5 * (gred.At(i, j) + gred.At(j, i)) / math.Sqrt(c[r.capIx[i]]*c[r.capIx[j]])
			a.SetSym(i, j, v)
		}
	}
	var es mat.EigenSym
	if !es.Factorize(a, true) {
		return nil, errors.New("rc: eigen decomposition failed")
	}
	r.lambda = es.Values(nil)
	r.u = &mat.Dense{}
	es.VectorsTo(r.u)
	return r, nil
}

// coeffs returns the modal coefficients ak of y(t) = Σ ak·exp(−λk·t),
// where y = o·v_c and v_c(0) = v0 (both over capacitor nodes).
func (r *rcNet) coeffs(o, v0 []float64) []float64 {
	nc := len(r.capIx)
	out := make([]float64, nc)
	for k := 0; k < nc; k++ {
		left, right := 0.0, 0.0
		for i := 0; i < nc; i++ {
			ci := r.c[r.capIx[i]]
			uik := r.u.At(i, k)
			left += o[i] * uik / math.Sqrt(ci)
			right += uik * math.Sqrt(ci) * v0[i]
		}
		out[k] = left * right
	}
	return out
}

// observe returns the observation vector (over capacitor nodes) of node i:
// a unit vector for a capacitor node; for an eliminated node, whose
// voltage with no injection is −(Grr⁻¹·Grc)·v_c, that row negated.
func (r *rcNet) observe(i int) []float64 {
	o := make([]float64, len(r.capIx))
	if p, ok := r.cpos[i]; ok {
		o[p] = 1
		return o
	}
	p := r.rpos[i]
	for j := range o {
		o[j] = -r.x.At(p, j)
	}
	return o
}

// lastAbove returns the last time at which |Σ ak·exp(−λk·t)| ≥ level:
// 0 if it is below from the start, +Inf if a mode with λ ≈ 0 carries a
// coefficient at or above level. The bound Σ|ak|·exp(−λmin·t) gives the
// time after which the sum stays below; the interval before it is
// scanned and the crossing refined by bisection to 1e-6 relative.
func lastAbove(a, lambda []float64, level float64) float64 {
	y := func(t float64) float64 {
		s := 0.0
		for k := range a {
			s += a[k] * math.Exp(-lambda[k]*t)
		}
		return math.Abs(s)
	}
	sumAbs, lmin := 0.0, math.Inf(1)
	for k := range a {
		if math.Abs(a[k]) < 1e-12*level {
			continue
		}
		if lambda[k] <= 1e-12 {
			if math.Abs(a[k]) >= level {
				return math.Inf(1)
			}
			continue
		}
		sumAbs += math.Abs(a[k])
		lmin = min(lmin, lambda[k])
	}
	if sumAbs < level || math.IsInf(lmin, 1) {
		return 0 // |y(t)| ≤ Σ|ak| < level for all t ≥ 0
	}
	tEnd := math.Log(sumAbs/level) / lmin
	const steps = 4000
	last := -1.0
	for i := steps; i >= 0; i-- {
		t := tEnd * float64(i) / steps
		if y(t) >= level {
			last = t
			break
		}
	}
	if last < 0 {
		return 0
	}
	lo, hi := last, min(last+tEnd/steps, tEnd)
	for hi-lo > 1e-9*max(hi, 1e-12) {
		mid := 0.5 * (lo + hi)
		if y(mid) >= level {
			lo = mid
		} else {
			hi = mid
		}
	}
	return 0.5 * (lo + hi)
}
