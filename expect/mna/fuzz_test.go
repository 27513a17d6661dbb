package mna

import (
	"errors"
	"math"
	"math/rand/v2"
	"testing"
)

// FuzzSolveRandomResistive builds a random small network of resistors
// (some open, some shorted), voltage sources and current sources from a
// seed and checks the oracle: Solve either converges, with every value
// finite and Kirchhoff's current law holding at every node, or returns an
// error with a message; it never panics.
func FuzzSolveRandomResistive(f *testing.F) {
	f.Add(uint64(1), uint8(3), uint8(4))    // tiny: a divider or so
	f.Add(uint64(2), uint8(9), uint8(24))   // ten nodes, many elements
	f.Add(uint64(3), uint8(0), uint8(1))    // two nodes, one element
	f.Add(uint64(42), uint8(6), uint8(12))  // mid-size
	f.Add(uint64(777), uint8(11), uint8(3)) // mostly floating nodes
	f.Fuzz(func(t *testing.T, seed uint64, nNodes, nElems uint8) {
		rng := rand.New(rand.NewPCG(seed, 0x6d6e61))
		c := New()
		nodes := 2 + int(nNodes%11)
		for i := 1; i < nodes; i++ {
			c.Node(string(rune('a' + i - 1)))
		}
		pick := func() int { return rng.IntN(nodes) }
		for range 1 + int(nElems%30) {
			a, b := pick(), pick()
			switch p := rng.Float64(); {
			case p < 0.7:
				var ohms float64
				switch q := rng.Float64(); {
				case q < 0.04:
					ohms = math.Inf(1)
				case q < 0.08:
					ohms = 0
				default:
					ohms = math.Pow(10, rng.Float64()*6) // 1 Ω … 1 MΩ
				}
				c.AddResistor(a, b, ohms)
			case p < 0.8:
				c.AddVSource(a, b, (rng.Float64()-0.5)*1000)
			default:
				c.AddISource(a, b, (rng.Float64()-0.5)*0.2)
			}
		}
		opt := DefaultOptions()
		sol := Solution{Iterations: -7}
		err := c.Solve(opt, nil, &sol)
		if err != nil {
			if err.Error() == "" {
				t.Fatal("empty error message")
			}
			var ce *ConvergenceError
			if errors.As(err, &ce) && math.IsNaN(ce.Residual) {
				t.Errorf("ConvergenceError with NaN residual: %v", err)
			}
			if sol.Iterations != -7 {
				t.Error("failed Solve modified the solution")
			}
			return
		}
		for i, v := range sol.V {
			if !finite(v) {
				t.Fatalf("V[%d] = %v", i, v)
			}
		}
		for k, a := range sol.SourceAmps {
			if !finite(a) {
				t.Fatalf("SourceAmps[%d] = %v", k, a)
			}
		}
		checkKCL(t, c, &sol, opt.Gmin)
	})
}
