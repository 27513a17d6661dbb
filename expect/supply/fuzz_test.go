package supply

import (
	"errors"
	"math"
	"math/rand/v2"
	"testing"
)

// logUniform draws from [lo, hi] evenly on a log scale.
func logUniform(r *rand.Rand, lo, hi float64) float64 {
	return lo * math.Exp(r.Float64()*math.Log(hi/lo))
}

// randomParams builds a valid supply from a seed: any topology and
// rectifier, one to five stages in a random tree, values spread over
// several decades around practice (and beyond it).
func randomParams(seed uint64, vrms, loadScale float64) Params {
	r := rand.New(rand.NewPCG(seed, 0x5eed))
	p := Params{
		Topology: Topology(r.IntN(3)),
		Vrms:     vrms,
		Rs:       logUniform(r, 0.01, 2000),
		Hz:       []float64{50, 60, 400, 16.7}[r.IntN(4)],
	}
	if r.IntN(2) == 0 {
		p.Rect = Rectifier{Kind: Silicon, Vf: r.Float64(), Rd: logUniform(r, 1e-4, 10)}
	} else {
		p.Rect = Rectifier{Kind: Valve, Perveance: logUniform(r, 1e-4, 1e-2)}
	}
	n := 1 + r.IntN(5)
	for k := 0; k < n; k++ {
		s := Stage{Parent: -1}
		if k > 0 {
			s.Parent = r.IntN(k)
			s.SeriesR = logUniform(r, 1, 1e5)
		}
		if r.IntN(3) == 0 {
			s.SeriesL = logUniform(r, 0.01, 50)
			if r.IntN(2) == 0 {
				s.SeriesR = 0
			}
			if k > 0 && s.SeriesR == 0 && s.SeriesL == 0 {
				s.SeriesR = 1
			}
		}
		if k == 0 || r.IntN(4) != 0 {
			s.ShuntC = logUniform(r, 1e-7, 1e-2)
			if r.IntN(2) == 0 {
				s.ESR = logUniform(r, 1e-3, 20)
			}
		}
		if r.IntN(2) == 0 {
			s.LoadA = loadScale * r.Float64()
		}
		if r.IntN(3) == 0 {
			s.LoadOhms = logUniform(r, 10, 1e7)
		}
		p.Stages = append(p.Stages, s)
	}
	if p.Rect.Kind == Silicon && p.Stages[0].SeriesL == 0 && p.Rs+p.Stages[0].SeriesR+p.Rect.Rd == 0 {
		p.Rs = 1
	}
	return p
}

// FuzzSimulate: no panic and no NaN or Inf for any valid supply, and at a
// converged steady state the mean rectifier current equals the total load
// (charge conservation).
func FuzzSimulate(f *testing.F) {
	f.Add(uint64(1), 350.0, 0.1)    // typical amplifier supply
	f.Add(uint64(2), 6.3, 3.0)      // low voltage, heavy load
	f.Add(uint64(3), 1e4, 0.0)      // high voltage, no load
	f.Add(uint64(4), 0.3, 1.0)      // source below the diode knee
	f.Add(uint64(5), 500.0, 1000.0) // absurd overload: node voltages go negative
	f.Fuzz(func(t *testing.T, seed uint64, vrms, loadScale float64) {
		if !finite(vrms) || !finite(loadScale) {
			return
		}
		vrms = math.Min(math.Abs(vrms), 1e5)
		loadScale = math.Min(math.Abs(loadScale), 1e4)
		if vrms == 0 {
			vrms = 1
		}
		p := randomParams(seed, vrms, loadScale)
		if err := p.Validate(); err != nil {
			t.Fatalf("generator made invalid params: %v", err)
		}
		res, err := Simulate(p, Options{StepsPerCycle: 80, MaxCycles: 60, Tol: 1e-4})
		if err != nil && !errors.Is(err, ErrNoSteadyState) {
			t.Fatalf("Simulate(%+v): %v", p, err)
		}
		if !resultFinite(res) || len(res.Nets) != len(p.Stages) {
			t.Fatalf("non-finite or short result for %+v: %+v", p, res)
		}
		if math.IsNaN(ColdPeak(p)) {
			t.Fatal("ColdPeak NaN")
		}
		if err != nil {
			return
		}
		var total float64
		for k, s := range p.Stages {
			total += s.LoadA
			if s.LoadOhms > 0 {
				total += res.Nets[k].Vdc / s.LoadOhms
			}
		}
		// With a negative node voltage a constant-current load would have
		// to be fed backwards through the rectifier, which cannot happen.
		if res.AvgRectAmps > 0 && math.Abs(res.AvgRectAmps-total) > 0.02*math.Abs(total)+1e-6 {
			t.Fatalf("mean rectifier current %.6g A, total load %.6g A for %+v", res.AvgRectAmps, total, p)
		}
	})
}

// TestRandomSupplies runs the fuzz body's checks over many seeds in the
// normal test run.
func TestRandomSupplies(t *testing.T) {
	notConverged := 0
	for seed := uint64(0); seed < 300; seed++ {
		p := randomParams(seed, logUniform(rand.New(rand.NewPCG(seed, 1)), 5, 2000), 0.3)
		if err := p.Validate(); err != nil {
			t.Fatalf("seed %d: generator made invalid params: %v", seed, err)
		}
		res, err := Simulate(p, DefaultOptions())
		if err != nil {
			if !errors.Is(err, ErrNoSteadyState) {
				t.Fatalf("seed %d: %v", seed, err)
			}
			notConverged++
		}
		if !resultFinite(res) {
			t.Fatalf("seed %d: non-finite result %+v", seed, res)
		}
		if err != nil {
			continue
		}
		// Charge conservation at steady state: mean rectifier current =
		// total DC load.
		var total float64
		for k, s := range p.Stages {
			total += s.LoadA
			if s.LoadOhms > 0 {
				total += res.Nets[k].Vdc / s.LoadOhms
			}
		}
		if math.Abs(res.AvgRectAmps-total) > 0.01*math.Abs(total)+1e-6 {
			t.Errorf("seed %d: mean rectifier current %.6g A, total load %.6g A", seed, res.AvgRectAmps, total)
		}
	}
	t.Logf("%d of 300 random supplies did not reach steady state within the default budget", notConverged)
}
