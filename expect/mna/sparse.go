package mna

import (
	"errors"
	"fmt"
	"math"
)

// Sparse LU in a fill-reducing order, with the dense in-place LU (lu.go)
// as the fallback.
//
// A nodal matrix of an n-channel amplifier has a few dozen entries per
// channel and a handful of shared supply nets touching every channel;
// dense elimination costs O(size³) however sparse the matrix is, and the
// span trimming of luFactor cannot help once a shared net's row reaches
// across every channel. Here the unknowns are ordered once per topology by
// minimum degree on the symmetric pattern (the elimination-graph form of
// the Markowitz criterion: W. F. Tinney and J. W. Walker, "Direct
// solutions of sparse network equations by optimally ordered triangular
// factorization", Proc. IEEE 55 (1967) 1801–1809, scheme 2), which puts
// each channel's nets first and the shared supply nets last, and the
// factor's pattern (original pattern plus fill) is worked out in the same
// pass. The numeric factorisation then eliminates on the diagonal in that
// order with no search and no index lookups: every update's target
// position is precomputed.
//
// A voltage source's branch row has no diagonal entry until one of its
// nodes is eliminated; the ordering only takes an unknown whose diagonal
// is structurally nonzero. Pivots are not searched, so a pivot that is
// zero, not finite or tiny against its column (below sparsePivotRel of the
// largest entry) makes the factorisation give up, and the caller falls
// back to the dense LU with partial pivoting for that matrix. Newton
// corrects the small rounding a large multiplier can leave (the residual
// is computed from the assembled matrix, not from the factors).
//
// Measured on the generated n-channel designs (internal/gen) and the
// 30-node bench ladder: see BENCHMARKS.md.

// sparsePivotRel: a diagonal pivot smaller than this fraction of the
// largest entry in its column sends the factorisation to the dense LU.
const sparsePivotRel = 1e-13

// symbolic is the elimination order and the factor's pattern.
type symbolic struct {
	perm   []int // perm[k]: the unknown eliminated at step k
	nnz    int   // entries of the filled pattern (the length of the value arrays)
	diag   []int // value index of (k, k), by step
	nbrPtr []int // step k's later neighbours are nbr[nbrPtr[k]:nbrPtr[k+1]] (steps)
	nbr    []int
	lIdx   []int // per neighbour i of k: value index of (i, k)
	uIdx   []int // per neighbour j of k: value index of (k, j)
	updPtr []int // step k's updates: upd[updPtr[k]:] holds d×d value indexes of (i, j)
	upd    []int
	// idx maps an original (row, col) of the assembled pattern to its
	// value index; −1 outside the filled pattern. Kept for stamping.
	idx []int32
}

// analyse orders the unknowns and builds the filled pattern from the
// symmetric structure of mark (s×s, row-major) and which unknowns have a
// structurally nonzero diagonal.
func analyse(mark []bool, s int, hasDiag []bool) *symbolic {
	adj := make([]bool, s*s)
	deg := make([]int, s)
	for i := 0; i < s; i++ {
		for j := 0; j < s; j++ {
			if i != j && (mark[i*s+j] || mark[j*s+i]) && !adj[i*s+j] {
				adj[i*s+j], adj[j*s+i] = true, true
			}
		}
	}
	for i := 0; i < s; i++ {
		for j := 0; j < s; j++ {
			if adj[i*s+j] {
				deg[i]++
			}
		}
	}
	diagOK := append([]bool(nil), hasDiag...)
	done := make([]bool, s)
	step := make([]int, s) // original → step
	sym := &symbolic{perm: make([]int, 0, s)}
	var nbrsOrig [][]int
	for k := 0; k < s; k++ {
		best := -1
		for i := 0; i < s; i++ {
			if done[i] || !diagOK[i] {
				continue
			}
			if best < 0 || deg[i] < deg[best] {
				best = i
			}
		}
		if best < 0 { // no diagonal anywhere: take the lowest degree (the numeric pass will fall back)
			for i := 0; i < s; i++ {
				if !done[i] && (best < 0 || deg[i] < deg[best]) {
					best = i
				}
			}
		}
		p := best
		done[p] = true
		step[p] = k
		sym.perm = append(sym.perm, p)
		var nb []int
		for j := 0; j < s; j++ {
			if adj[p*s+j] && !done[j] {
				nb = append(nb, j)
			}
		}
		for _, i := range nb {
			adj[i*s+p], adj[p*s+i] = false, false
			deg[i]--
			diagOK[i] = true // fill on the diagonal: a_ii −= a_ip·a_pi/a_pp
			for _, j := range nb {
				if i != j && !adj[i*s+j] {
					adj[i*s+j] = true
					deg[i]++
				}
			}
		}
		nbrsOrig = append(nbrsOrig, nb)
	}
	// Value indexes of the filled pattern, in original coordinates.
	sym.idx = make([]int32, s*s)
	for i := range sym.idx {
		sym.idx[i] = -1
	}
	next := int32(0)
	at := func(i, j int) int {
		if sym.idx[i*s+j] < 0 {
			sym.idx[i*s+j] = next
			next++
		}
		return int(sym.idx[i*s+j])
	}
	for i := 0; i < s; i++ {
		for j := 0; j < s; j++ {
			if mark[i*s+j] {
				at(i, j)
			}
		}
	}
	sym.diag = make([]int, s)
	sym.nbrPtr = make([]int, s+1)
	sym.updPtr = make([]int, s+1)
	for k, p := range sym.perm {
		sym.diag[k] = at(p, p)
		nb := nbrsOrig[k]
		// Later neighbours in step order.
		ns := make([]int, len(nb))
		for t, j := range nb {
			ns[t] = step[j]
		}
		sortInts(ns)
		for _, sj := range ns {
			j := sym.perm[sj]
			sym.nbr = append(sym.nbr, sj)
			sym.lIdx = append(sym.lIdx, at(j, p))
			sym.uIdx = append(sym.uIdx, at(p, j))
		}
		for _, si := range ns {
			for _, sj := range ns {
				sym.upd = append(sym.upd, at(sym.perm[si], sym.perm[sj]))
			}
		}
		sym.nbrPtr[k+1] = len(sym.nbr)
		sym.updPtr[k+1] = len(sym.upd)
	}
	sym.nnz = int(next)
	return sym
}

func sortInts(xs []int) {
	for i := 1; i < len(xs); i++ {
		for j := i; j > 0 && xs[j] < xs[j-1]; j-- {
			xs[j], xs[j-1] = xs[j-1], xs[j]
		}
	}
}

// refineGrowth: when a multiplier of the sparse factorisation exceeds
// this, the solve takes one step of iterative refinement against the
// assembled matrix (J. H. Wilkinson, "Rounding Errors in Algebraic
// Processes", 1963): without pivoting, a grid node's small conductance
// against a valve's transconductance gives multipliers of 10³–10⁴, and the
// rounding they leave can hold a Newton residual above its tolerance.
const refineGrowth = 0

// factor eliminates vals (the assembled matrix in the filled pattern) in
// place in the symbolic order and returns the largest multiplier's
// magnitude. ok is false when a pivot is zero, not finite or tiny against
// its column: vals is then partly eliminated and must be assembled again.
func (sym *symbolic) factor(vals []float64) (growth float64, ok bool) {
	s := len(sym.perm)
	for k := 0; k < s; k++ {
		piv := vals[sym.diag[k]]
		lo, hi := sym.nbrPtr[k], sym.nbrPtr[k+1]
		li, ui := sym.lIdx[lo:hi], sym.uIdx[lo:hi]
		m := 0.0
		for _, q := range li {
			m = max(m, math.Abs(vals[q]))
		}
		a := math.Abs(piv)
		if !(a > sparsePivotRel*m) || a == 0 || a > math.MaxFloat64 {
			return growth, false
		}
		growth = max(growth, m/a)
		d := hi - lo
		if d == 0 {
			continue
		}
		inv := 1 / piv
		up := sym.upd[sym.updPtr[k]:sym.updPtr[k+1]]
		for r, q := range li {
			l := vals[q]
			if l == 0 {
				continue
			}
			l *= inv
			vals[q] = l
			row := up[r*d : (r+1)*d]
			for c, t := range row {
				vals[t] -= l * vals[ui[c]]
			}
		}
	}
	return growth, true
}

// solve solves A x = b in place in b (original order) from the factors in
// vals; y is scratch of length s.
func (sym *symbolic) solve(vals, b, y []float64) {
	s := len(sym.perm)
	for k, p := range sym.perm {
		y[k] = b[p]
	}
	for k := 0; k < s; k++ {
		yk := y[k]
		if yk == 0 {
			continue
		}
		lo, hi := sym.nbrPtr[k], sym.nbrPtr[k+1]
		for t, q := range sym.lIdx[lo:hi] {
			y[sym.nbr[lo+t]] -= vals[q] * yk
		}
	}
	for k := s - 1; k >= 0; k-- {
		sum := y[k]
		lo, hi := sym.nbrPtr[k], sym.nbrPtr[k+1]
		for t, q := range sym.uIdx[lo:hi] {
			sum -= vals[q] * y[sym.nbr[lo+t]]
		}
		y[k] = sum / vals[sym.diag[k]]
	}
	for k, p := range sym.perm {
		b[p] = y[k]
	}
}

// DrivingPoint returns, for each node, the voltage at that node when 1 A
// is injected into it from ground and every other node is left alone:
// the resistance an ideal ohmmeter reads from the node to ground. The
// circuit must be linear (no devices); sources are ignored and no Gmin is
// added. The matrix is factored once for all the nodes. A node with no
// resistive path to ground makes the matrix singular (ErrSingular).
func (c *Circuit) DrivingPoint(nodes []int) ([]float64, error) {
	if len(c.devs) > 0 {
		return nil, errors.New("mna: DrivingPoint needs a linear circuit (no devices)")
	}
	for _, n := range nodes {
		if n <= 0 || n >= len(c.names) {
			return nil, fmt.Errorf("mna: DrivingPoint: node %d is ground or out of range", n)
		}
	}
	c.prepare()
	if err := c.stampLinear(); err != nil {
		return nil, err
	}
	w := &c.ws
	copy(w.vals, w.vbase)
	sparse := true
	if _, ok := w.sym.factor(w.vals); !ok {
		sparse = false
		copy(w.vals, w.vbase)
		c.densify()
		if !luFactor(w.a, w.size, w.piv, w.span) {
			return nil, ErrSingular
		}
	}
	out := make([]float64, len(nodes))
	for i, n := range nodes {
		clear(w.b)
		w.b[n-1] = 1
		if sparse {
			w.sym.solve(w.vals, w.b, w.y)
		} else {
			luSolve(w.a, w.size, w.piv, w.span, w.b)
		}
		if !finite(w.b[n-1]) {
			return nil, ErrSingular
		}
		out[i] = w.b[n-1]
	}
	return out, nil
}
