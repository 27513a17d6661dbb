package bands

import (
	"math"
	"math/rand/v2"
	"testing"

	"pinwalk/expect/amp"
)

// The fast solve (cached supply line, first-order ripple scaling) against
// full supply simulations of the same samples: DC within 1 % (the line
// is a linearisation about the nominal load; a valve rectifier bends it
// most), ripple within 10 %
// (first-order charge-balance scaling, Schade 1943), on demos a and b.
func TestFastAgainstFull(t *testing.T) {
	for _, path := range []string{demoA, demoB} {
		fastAgainstFull(t, path)
	}
}

func fastAgainstFull(t *testing.T, path string) {
	d := load(t, path)
	nr, err := solveNominal(d, Options{})
	if err != nil {
		t.Fatal(err)
	}
	w, err := newBlockSolver(d, Options{}, nr.op)
	if err != nil {
		t.Fatal(err)
	}
	pl := newPlan(w.m)
	full := amp.NewSolver(w.m)
	var worstDC, worstRip float64
	for k := range 12 {
		v := w.pris.Clone()
		mf := pl.sample(rand.New(rand.NewPCG(9, uint64(k))), w.m, v, false)
		c := amp.Conditions{MainsVolts: d.Mains.Volts * mf}
		var fast, slow amp.OP
		w.s.SetWarm(nr.op.V)
		if err := w.s.Solve(c, v, true, &fast); err != nil {
			t.Fatal(err)
		}
		w.rip.apply(&fast, v)
		if err := full.Solve(c, v, false, &slow); err != nil {
			t.Fatal(err)
		}
		for i := range slow.Supply.Nets {
			f, s := fast.Supply.Nets[i], slow.Supply.Nets[i]
			worstDC = max(worstDC, math.Abs(f.Vdc-s.Vdc)/s.Vdc)
			if s.RippleRms > 1e-4 {
				worstRip = max(worstRip, math.Abs(f.RippleRms-s.RippleRms)/s.RippleRms)
			}
		}
	}
	t.Logf("%s: worst fast/full difference: DC %.3f %%, ripple %.1f %%", path, 100*worstDC, 100*worstRip)
	if worstDC > 0.01 || worstRip > 0.10 {
		t.Errorf("fast solve off by DC %.3g, ripple %.3g (relative)", worstDC, worstRip)
	}
}
