package infer

import (
	"fmt"
	"testing"

	"pinwalk/internal/gen"
)

// Scaling benchmarks on generated designs of 2, 4, 8 and 16 channels
// (internal/gen: one 6V6GT and half a 12AU7 per channel, one supply).
// Figures and the fitted exponent are in BENCHMARKS.md.
var scaleChannels = []int{2, 4, 8, 16}

// BenchmarkPrecomputeChannels: every hypothesis's cloud (and cold
// predictions) of an n-channel design, 200 samples.
func BenchmarkPrecomputeChannels(b *testing.B) {
	for _, n := range scaleChannels {
		d := gen.Design(n)
		b.Run(fmt.Sprintf("ch=%d", n), func(b *testing.B) {
			b.ReportAllocs()
			c0 := cpuSeconds()
			var e *Engine
			for b.Loop() {
				var err error
				if e, err = New(d, Options{Samples: 200, Seed: 1}); err != nil {
					b.Fatal(err)
				}
			}
			b.ReportMetric((cpuSeconds()-c0)/float64(b.N), "cpu-s/op")
			b.ReportMetric(float64(len(e.hyps)-1), "faults")
		})
	}
}

// BenchmarkRerankChannels: one new reading on top of eleven taken before
// → new ranking and next probe, n-channel design.
func BenchmarkRerankChannels(b *testing.B) {
	for _, n := range scaleChannels {
		d := gen.Design(n)
		e, err := New(d, Options{Samples: 200, Seed: 1})
		if err != nil {
			b.Fatal(err)
		}
		b.Run(fmt.Sprintf("ch=%d", n), func(b *testing.B) {
			sim, err := e.Simulate("R101:open", 3)
			if err != nil {
				b.Fatal(err)
			}
			all := dcObs(e, sim)[:12]
			base := all[:11]
			for b.Loop() {
				b.StopTimer()
				e.mu.Lock()
				e.cache = nil
				e.mu.Unlock()
				e.Rank(base, nil)
				b.StartTimer()
				e.Rank(all, nil)
			}
		})
	}
}
