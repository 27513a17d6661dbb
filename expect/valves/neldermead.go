package valves

import (
	"errors"
	"math"

	"gonum.org/v1/gonum/optimize"
)

// nmResult is the outcome of a minimisation.
type nmResult struct {
	X           []float64
	F           float64
	Evaluations int
	Converged   bool // false: stopped at the evaluation limit
}

// minimise minimises f from x0 with gonum's Nelder–Mead downhill simplex
// (J. A. Nelder and R. Mead, "A simplex method for function minimization",
// Computer Journal 7, 1965), initial simplex step 0.2 in the (log-scaled)
// parameters, stopping when the best value changes by less than 1e-13
// (absolute and relative) over 100 major iterations, or after maxEval
// evaluations. NaN costs count as +Inf. It returns an error when gonum
// reports one other than the evaluation limit.
func minimise(f func([]float64) float64, x0 []float64, maxEval int) (nmResult, error) {
	if len(x0) == 0 {
		return nmResult{}, errors.New("minimise: no parameters")
	}
	evals := 0
	p := optimize.Problem{Func: func(x []float64) float64 {
		evals++
		v := f(x)
		if math.IsNaN(v) {
			return math.Inf(1)
		}
		return v
	}}
	settings := &optimize.Settings{
		FuncEvaluations: maxEval,
		Converger:       &optimize.FunctionConverge{Absolute: 1e-13, Relative: 1e-13, Iterations: 100},
	}
	res, err := optimize.Minimize(p, x0, settings, &optimize.NelderMead{SimplexSize: 0.2})
	if res == nil {
		return nmResult{}, err
	}
	out := nmResult{X: res.X, F: res.F, Evaluations: evals}
	switch res.Status {
	case optimize.FunctionConvergence, optimize.MethodConverge, optimize.GradientThreshold:
		out.Converged = true
	case optimize.FunctionEvaluationLimit:
		return out, nil
	default:
		if err != nil {
			return out, err
		}
		out.Converged = true
	}
	return out, nil
}
