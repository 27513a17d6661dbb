package valves

import (
	"errors"
	"math"
	"sort"
)

// nmResult is the outcome of a Nelder–Mead minimisation.
type nmResult struct {
	X           []float64
	F           float64
	Evaluations int
	Converged   bool // false: stopped at the evaluation limit
}

// nelderMead minimises f from x0 with the Nelder–Mead downhill simplex
// (J. A. Nelder and R. Mead, "A simplex method for function minimization",
// Computer Journal 7, 1965; standard coefficients reflection 1, expansion 2,
// contraction ½, shrink ½ as in Lagarias et al., SIAM J. Optim. 9, 1998).
// The initial simplex is x0 plus step along each axis. It stops when the
// spread of the vertex values is below fTol (absolute plus relative to the
// best value) and the simplex is smaller than xTol in every coordinate, or
// after maxEval evaluations. It returns an error if f is NaN at x0.
func nelderMead(f func([]float64) float64, x0 []float64, step, fTol, xTol float64, maxEval int) (nmResult, error) {
	n := len(x0)
	if n == 0 {
		return nmResult{}, errors.New("nelder-mead: no parameters")
	}
	type vertex struct {
		x []float64
		f float64
	}
	evals := 0
	eval := func(x []float64) float64 {
		evals++
		v := f(x)
		if math.IsNaN(v) {
			return math.Inf(1)
		}
		return v
	}
	simplex := make([]vertex, n+1)
	for i := range simplex {
		x := append([]float64(nil), x0...)
		if i > 0 {
			x[i-1] += step
		}
		simplex[i] = vertex{x, eval(x)}
	}
	if math.IsInf(simplex[0].f, 1) {
		return nmResult{}, errors.New("nelder-mead: objective is not finite at the start")
	}
	centroid := make([]float64, n)
	point := func(t float64) []float64 { // centroid + t·(centroid − worst)
		x := make([]float64, n)
		for j := range x {
			x[j] = centroid[j] + t*(centroid[j]-simplex[n].x[j])
		}
		return x
	}
	for {
		sort.SliceStable(simplex, func(a, b int) bool { return simplex[a].f < simplex[b].f })
		best, worst := simplex[0].f, simplex[n].f
		small := true
		for i := 1; i <= n && small; i++ {
			for j := 0; j < n; j++ {
				if math.Abs(simplex[i].x[j]-simplex[0].x[j]) > xTol {
					small = false
					break
				}
			}
		}
		if worst-best <= fTol*(1+math.Abs(best)) && small {
			return nmResult{X: simplex[0].x, F: best, Evaluations: evals, Converged: true}, nil
		}
		if evals >= maxEval {
			return nmResult{X: simplex[0].x, F: best, Evaluations: evals}, nil
		}
		for j := range centroid {
			centroid[j] = 0
			for i := 0; i < n; i++ {
				centroid[j] += simplex[i].x[j] / float64(n)
			}
		}
		xr := point(1)
		fr := eval(xr)
		switch {
		case fr < best:
			xe := point(2)
			if fe := eval(xe); fe < fr {
				simplex[n] = vertex{xe, fe}
			} else {
				simplex[n] = vertex{xr, fr}
			}
		case fr < simplex[n-1].f:
			simplex[n] = vertex{xr, fr}
		default:
			var xc []float64
			var fc float64
			if fr < worst {
				xc = point(0.5) // outside contraction
				fc = eval(xc)
				if fc > fr {
					xc = nil
				}
			} else {
				xc = point(-0.5) // inside contraction
				fc = eval(xc)
				if fc >= worst {
					xc = nil
				}
			}
			if xc != nil {
				simplex[n] = vertex{xc, fc}
				continue
			}
			for i := 1; i <= n; i++ { // shrink towards the best vertex
				for j := 0; j < n; j++ {
					simplex[i].x[j] = simplex[0].x[j] + 0.5*(simplex[i].x[j]-simplex[0].x[j])
				}
				simplex[i].f = eval(simplex[i].x)
			}
		}
	}
}
