package mna

import (
	"fmt"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// benchCircuit is a 30-node resistive ladder from a 300 V source (series
// 1 kΩ, shunts 22 kΩ) with three limited exponential diodes across series
// resistors and three square-law devices between ladder nodes: 31 unknowns.
// It returns the series-resistor handles for perturbation.
func benchCircuit() (c *Circuit, series []int, ladder []int) {
	c = New()
	const n = 30
	ladder = make([]int, n)
	for i := range ladder {
		ladder[i] = c.Node(fmt.Sprintf("n%d", i))
	}
	c.AddVSource(ladder[0], 0, 300)
	for i := 1; i < n; i++ {
		series = append(series, c.AddResistor(ladder[i-1], ladder[i], 1000))
		c.AddResistor(ladder[i], 0, 22e3)
	}
	for _, i := range []int{4, 12, 20} {
		c.AddDevice(&expDiode{a: ladder[i], k: ladder[i+1], is: 1e-12, nvt: 2 * vt300, vLin: 1.2})
	}
	for _, i := range []int{2, 9, 16} {
		c.AddDevice(&squareLaw{d: ladder[i+5], g: ladder[i], s: ladder[i+8], k: 2e-4, vt: 1})
	}
	return c, series, ladder
}

func TestBenchCircuitKCL(t *testing.T) {
	c, _, _ := benchCircuit()
	var sol Solution
	if err := c.Solve(DefaultOptions(), nil, &sol); err != nil {
		t.Fatal(err)
	}
	checkKCL(t, c, &sol, DefaultOptions().Gmin)
	t.Logf("cold start: %s, %d iterations", sol.Stage, sol.Iterations)
}

// BenchmarkSolve30Nodes: Monte Carlo style re-solve, one series resistor
// changed by up to ±1 % per call, warm start from the previous solution.
func BenchmarkSolve30Nodes(b *testing.B) {
	c, series, _ := benchCircuit()
	opt := DefaultOptions()
	var sol Solution
	if err := c.Solve(opt, nil, &sol); err != nil {
		b.Fatal(err)
	}
	rng := rand.New(rand.NewPCG(1, 2))
	vals := make([]float64, 1024)
	for i := range vals {
		vals[i] = 1000 * (1 + 0.02*(rng.Float64()-0.5))
	}
	iters := 0
	b.ReportAllocs()
	b.ResetTimer()
	for i := 0; b.Loop(); i++ {
		c.SetResistance(series[i%len(series)], vals[i%len(vals)])
		if err := c.Solve(opt, sol.V, &sol); err != nil {
			b.Fatal(err)
		}
		iters += sol.Iterations
	}
	b.ReportMetric(float64(iters)/float64(b.N), "newton/op")
}

// luMatrices returns the bench circuit's assembled MNA matrix (31×31) and a
// random diagonally dominant 80×80 matrix with about 8 entries per row.
func luMatrices() map[string]struct {
	a []float64
	n int
} {
	c, _, _ := benchCircuit()
	var sol Solution
	if err := c.Solve(DefaultOptions(), nil, &sol); err != nil {
		panic(err)
	}
	c.assemble(1, 1e-12)
	c.densify()
	ladder := append([]float64(nil), c.ws.a...)
	const n = 80
	rng := rand.New(rand.NewPCG(3, 4))
	dense := make([]float64, n*n)
	for i := 0; i < n; i++ {
		for range 8 {
			j := rng.IntN(n)
			g := rng.Float64() * 1e-3
			dense[i*n+j] -= g
			dense[i*n+i] += 2 * g
		}
	}
	return map[string]struct {
		a []float64
		n int
	}{"ladder31": {ladder, c.ws.size}, "sparse80": {dense, n}}
}

func BenchmarkLUInPlace(b *testing.B) {
	for name, m := range luMatrices() {
		b.Run(name, func(b *testing.B) {
			a := make([]float64, len(m.a))
			rhs := make([]float64, m.n)
			piv := make([]int, m.n)
			span := make([]int, 2*m.n)
			b.ReportAllocs()
			for b.Loop() {
				copy(a, m.a)
				for i := range rhs {
					rhs[i] = 1
				}
				if !luFactor(a, m.n, piv, span) {
					b.Fatal("singular")
				}
				luSolve(a, m.n, piv, span, rhs)
			}
		})
	}
}

func BenchmarkLUGonum(b *testing.B) {
	for name, m := range luMatrices() {
		b.Run(name, func(b *testing.B) {
			a := mat.NewDense(m.n, m.n, nil)
			raw := a.RawMatrix().Data
			rhs := mat.NewVecDense(m.n, nil)
			x := mat.NewVecDense(m.n, nil)
			var lu mat.LU
			b.ReportAllocs()
			for b.Loop() {
				copy(raw, m.a)
				for i := 0; i < m.n; i++ {
					rhs.SetVec(i, 1)
				}
				lu.Factorize(a)
				if err := lu.SolveVecTo(x, false, rhs); err != nil {
					b.Fatal(err)
				}
			}
		})
	}
}

// TestLUMatchesGonum checks the in-place factorisation against gonum's on
// the benchmark matrices: the solutions agree and A·x = b.
func TestLUMatchesGonum(t *testing.T) {
	for name, m := range luMatrices() {
		a := append([]float64(nil), m.a...)
		x := make([]float64, m.n)
		for i := range x {
			x[i] = float64(i%7) - 3
		}
		piv := make([]int, m.n)
		span := make([]int, 2*m.n)
		if !luFactor(a, m.n, piv, span) {
			t.Fatalf("%s: singular", name)
		}
		luSolve(a, m.n, piv, span, x)
		var lu mat.LU
		lu.Factorize(mat.NewDense(m.n, m.n, append([]float64(nil), m.a...)))
		rhs := mat.NewVecDense(m.n, nil)
		for i := 0; i < m.n; i++ {
			rhs.SetVec(i, float64(i%7)-3)
		}
		var y mat.VecDense
		if err := lu.SolveVecTo(&y, false, rhs); err != nil {
			t.Fatalf("%s: gonum: %v", name, err)
		}
		for i := 0; i < m.n; i++ {
			if !near(x[i], y.AtVec(i), 1e-9) && abs(x[i]-y.AtVec(i)) > 1e-12 {
				t.Errorf("%s: x[%d] = %.15g, gonum %.15g", name, i, x[i], y.AtVec(i))
			}
			s := 0.0
			for j := 0; j < m.n; j++ {
				s += m.a[i*m.n+j] * x[j]
			}
			if abs(s-(float64(i%7)-3)) > 1e-9*(1+abs(s)) {
				t.Errorf("%s: row %d residual %g", name, i, s-(float64(i%7)-3))
			}
		}
	}
}

func abs(v float64) float64 {
	if v < 0 {
		return -v
	}
	return v
}
