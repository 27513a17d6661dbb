package infer

import (
	"math/rand/v2"
	"sort"
	"testing"
)

// TestTailQuantiles: the partial selection gives exactly the quantiles of
// the fully sorted values (Hazen positions), for sizes around the tails.
func TestTailQuantiles(t *testing.T) {
	r := rand.New(rand.NewPCG(1, 2))
	for _, n := range []int{1, 2, 5, 10, 39, 40, 41, 100, 200, 1000} {
		for trial := 0; trial < 20; trial++ {
			xs := make([]float64, n)
			for i := range xs {
				xs[i] = r.NormFloat64()
				if trial%3 == 0 {
					xs[i] = float64(r.IntN(5)) // ties
				}
			}
			sorted := append([]float64(nil), xs...)
			sort.Float64s(sorted)
			wantLo, wantHi := quantile(sorted, 0.025), quantile(sorted, 0.975)
			lo, hi := tailQuantiles(xs, 0.025, 0.975)
			if lo != wantLo || hi != wantHi {
				t.Fatalf("n=%d: got %v, %v; sorted gives %v, %v", n, lo, hi, wantLo, wantHi)
			}
		}
	}
}
