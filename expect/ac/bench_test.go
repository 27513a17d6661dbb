package ac

import "testing"

// BenchmarkToneDemoA is one tone solve of demo a (the stereo SE amp) with
// a reused Analyzer, as a Monte Carlo loop would call it.
func BenchmarkToneDemoA(b *testing.B) {
	s := solveText(b, demoText(b, "se-6v6-stereo"))
	var pts []Point
	b.ReportAllocs()
	for b.Loop() {
		var err error
		pts, err = s.an.Tone(s.op, s.v, Options{}, pts)
		if err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkHumDemoB is one hum solve of demo b (push-pull EL34).
func BenchmarkHumDemoB(b *testing.B) {
	s := solveText(b, demoText(b, "pp-el34-fixed"))
	var pts []Point
	b.ReportAllocs()
	for b.Loop() {
		var err error
		pts, err = s.an.Hum(s.op, s.v, Options{}, pts)
		if err != nil {
			b.Fatal(err)
		}
	}
}
