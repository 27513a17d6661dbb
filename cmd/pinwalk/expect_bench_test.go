package main

import (
	"fmt"
	"os"
	"path/filepath"
	"testing"

	"pinwalk/internal/gen"
)

// BenchmarkExpectChain: `pinwalk expect` (default samples, text report) on
// the two-channel generated design with a bleeder chain of 500, 1000 and
// 2000 resistors (internal/gen.Chain): how the whole command scales with
// the size of the network. Figures in BENCHMARKS.md.
func BenchmarkExpectChain(b *testing.B) {
	for _, n := range []int{500, 1000, 2000} {
		b.Run(fmt.Sprint(n), func(b *testing.B) {
			f := filepath.Join(b.TempDir(), fmt.Sprintf("chain%d.yaml", n))
			if err := os.WriteFile(f, gen.Chain(n), 0o644); err != nil {
				b.Fatal(err)
			}
			b.ResetTimer()
			for i := 0; i < b.N; i++ {
				if code, _, errOut := runCLI("expect", f); code != exitOK {
					b.Fatalf("exit %d: %s", code, errOut)
				}
			}
		})
	}
}
