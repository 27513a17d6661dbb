package bands

import (
	"math"
	"math/rand/v2"
	"testing"

	"pinwalk/expect/amp"
)

// Calibration: healthy amplifiers drawn from the tolerance model (parts,
// valves, mains within tolerance; the same distributions as Run, another
// seed), each solved in full (supply simulated, no fast path), then read
// with a meter — model error drawn as a normal at its stated 95 % limit,
// the meter's error uniform within its limit (GUM 4.3.7), the display
// rounded to the range's resolution, a one-way current or an AC reading
// held at 0 (the bands' own rule, common practice: meters are zeroed
// before a current reading). Each 95 % reading band of Expect
// must hold about 95 % of those readings: the mean over a design's
// points within 93–97 %, and no single point below 85 % (200 amps give a
// binomial standard error of 1.5 % per point). The meter's input is made
// huge so that its loading, which the readings here leave out, does not
// enter the bands either.
func TestBandsCalibrated(t *testing.T) {
	amps := 200
	if testing.Short() {
		amps = 40
	}
	mt := DigitalMeter
	mt.InputOhms = 1e13
	for _, path := range []string{demoA, demoB, "../../testdata/designs/bench-12ax7.yaml"} {
		d := load(t, path)
		s := run(t, d, Options{Samples: 1000, Seed: 7, Meter: mt})
		m, err := amp.Build(d)
		if err != nil {
			t.Fatal(err)
		}
		sv := amp.NewSolver(m)
		pl := newPlan(m)
		var bs []Band
		for i := range s.Points {
			b, err := s.Expect(s.Points[i].Key(), mt)
			if err != nil {
				t.Fatal(err)
			}
			bs = append(bs, b)
		}
		hits := make([]int, len(s.Points))
		n := 0
		noise := rand.New(rand.NewPCG(99, 1))
		for k := 0; k < amps; k++ {
			v := m.NominalValues()
			r := rand.New(rand.NewPCG(12345, uint64(k)))
			mf := pl.sample(r, m, v, false)
			c := amp.Conditions{MainsVolts: d.Mains.Volts * mf}
			var op amp.OP
			if err := sv.Solve(c, v, false, &op); err != nil {
				t.Fatalf("%s amp %d: %v", path, k, err)
			}
			n++
			for i, pd := range s.Points {
				x := m.Value(&op, pd)
				me := ModelErrorOf(pd, s.netElectrode[pd.Net])
				x += me.Limit(x) / 1.96 * noise.NormFloat64()
				lim, rg := mt.ErrorLimit(pd.Quantity, x)
				x += lim * (2*noise.Float64() - 1)
				x = math.Round(x/rg.Res) * rg.Res
				if nonNegative(pd.Quantity) && x < 0 {
					x = 0 // a one-way current, an AC or ohms reading: the display shows no sign
				}
				if bs[i].Contains(x) {
					hits[i]++
				}
			}
		}
		var sum float64
		worst, worstKey := 1.0, ""
		inside, best := 0, 0.0
		for i := range s.Points {
			c := float64(hits[i]) / float64(n)
			sum += c
			best = math.Max(best, c)
			if c >= 0.93 && c <= 0.97 {
				inside++
			}
			if c < worst {
				worst, worstKey = c, s.Points[i].Key()
			}
		}
		mean := sum / float64(len(s.Points))
		t.Logf("%s: %d amps, %d points: mean coverage %.1f %%, lowest %.1f %% (%s), highest %.1f %%, %d points within 93–97 %%",
			path, n, len(s.Points), 100*mean, 100*worst, worstKey, 100*best, inside)
		if !testing.Short() && (mean < 0.93 || mean > 0.97 || worst < 0.85) {
			t.Errorf("%s: mean coverage %.1f %% (want 93–97 %%), lowest %.1f %% at %s", path, 100*mean, 100*worst, worstKey)
		}
	}
}
