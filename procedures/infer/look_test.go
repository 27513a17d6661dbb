package infer

import (
	"math"
	"strings"
	"testing"

	"pinwalk/expect/design"
	"pinwalk/expect/faults"
)

// TestLookBayes: a look's answer moves the odds between two hypotheses by
// the ratio of their chances of showing the sign there (Bayes' rule): a
// blackened mains fuse multiplies the odds of a shorted reservoir (C1)
// against a fuse that failed alone by BlackFuseShare/FalseSignShare; a
// bleeder (R1) that looks sound multiplies the odds of R1 open against
// a healthy amp by (1 − BurntOpenShare)/(1 − FalseSignShare).
func TestLookBayes(t *testing.T) {
	e := demo(t, "pp-el34-fixed.yaml")
	odds := func(looks []Observation, a, b string) float64 {
		lp := e.logPosterior(e.likelihoods(nil))
		e.addLooks(lp, looks)
		return math.Exp(lp[e.byName[a]] - lp[e.byName[b]])
	}
	cases := []struct {
		look       Observation
		a, b       string
		wantFactor float64
	}{
		{Observation{lookKey("F1"), 1}, "C1:short", "F1:open", faults.BlackFuseShare / faults.FalseSignShare},
		{Observation{lookKey("R1"), 0}, "R1:open", Healthy, (1 - faults.BurntOpenShare) / (1 - faults.FalseSignShare)},
		{Observation{lookKey("V3"), 1}, "V3:dead", "V3:weak", faults.WhiteGetterShare / faults.FalseSignShare},
	}
	for _, c := range cases {
		if _, ok := e.lookIndex[c.look.Key]; !ok {
			t.Fatalf("no look %s", c.look.Key)
		}
		before, after := odds(nil, c.a, c.b), odds([]Observation{c.look}, c.a, c.b)
		if got := after / before; math.Abs(got-c.wantFactor) > 1e-9*c.wantFactor {
			t.Errorf("%s=%g: odds %s:%s moved ×%.4g, want ×%.4g", c.look.Key, c.look.Value, c.a, c.b, got, c.wantFactor)
		}
	}
}

// TestLookProposed: with the owner's "hum" on the single-ended stereo
// demo and its reservoir (C1) dried out, no cold reading sees a
// capacitor gone open; a look at the filter electrolytics does (a domed
// top or leaked electrolyte, common practice), at a third of a reading's
// effort: following Next with the amp unpowered, a look comes among the
// first three proposals, with its reason in words; no look is proposed
// twice, and a look is a cold probe (power off).
func TestLookProposed(t *testing.T) {
	d, probs := design.Load("../../testdata/designs/se-6v6-stereo.yaml")
	if d == nil || len(probs.Errors()) > 0 {
		t.Fatal(probs)
	}
	e, err := New(d, Options{Samples: 100, Seed: 1, Symptoms: []string{"hum"}})
	if err != nil {
		t.Fatal(err)
	}
	sim, err := e.Simulate("C1:open", 3)
	if err != nil {
		t.Fatal(err)
	}
	var obs []Observation
	seen := map[string]bool{}
	lookAt := -1
	for step := 0; step < 6; step++ {
		r := e.Rank(obs, ColdOrLook)
		if r.Next == nil {
			break
		}
		p := r.Next
		t.Logf("step %d: %s (%s)", step, p.Label, p.Reason)
		if strings.HasPrefix(p.Key, "look:") {
			if seen[p.Key] {
				t.Errorf("look %s proposed twice", p.Key)
			}
			if p.Live || strings.Contains(p.Reason, "bit") || keyLike.MatchString(p.Reason) || !strings.Contains(p.Setup, "off and unplugged") {
				t.Errorf("look %+v: want a cold probe with its reason in words", p)
			}
			if lookAt < 0 {
				lookAt = step
			}
		}
		seen[p.Key] = true
		v, ok := sim[p.Key]
		if !ok {
			t.Fatalf("the simulated amp has no answer for %s", p.Key)
		}
		obs = append(obs, Observation{p.Key, v})
	}
	if lookAt < 0 || lookAt > 2 {
		t.Errorf("the first look is proposal %d, want one of the first three", lookAt+1)
	}
}

// TestLookGain: a look's expected gain is the mutual information of a
// seen-or-not answer, H(p̄) − Σ w H(p) (Shannon): with the odds even
// between a shorted reservoir (the fuse blackened in BlackFuseShare of
// cases) and a fuse failed alone (FalseSignShare), the look at F1 gains
// exactly that.
func TestLookGain(t *testing.T) {
	e := demo(t, "pp-el34-fixed.yaml")
	post := make([]float64, len(e.hyps))
	a, b := e.byName["C1:short"], e.byName["F1:open"]
	post[a], post[b] = 0.5, 0.5
	h2 := func(p float64) float64 { return -(p*math.Log2(p) + (1-p)*math.Log2(1-p)) }
	pa, pb := faults.BlackFuseShare, faults.FalseSignShare
	want := h2((pa+pb)/2) - (h2(pa)+h2(pb))/2
	p, _ := e.bestLook(post, []int{a, b}, nil, func(k string) bool { return k == lookKey("F1") })
	if p == nil || math.Abs(p.GainBits-want) > 1e-12 || p.Cost != CostLook {
		t.Fatalf("look at F1: %+v, want a gain of %.6f bits at cost %g", p, want, CostLook)
	}
	t.Logf("%s: %.3f bits: %s", p.Label, p.GainBits, p.Reason)
}

// ColdOrLook allows cold points and looks (the amplifier unpowered).
func ColdOrLook(key string) bool { return ColdOnly(key) || strings.HasPrefix(key, "look:") }

// TestLookSimulated: the simulated amp answers a look truthfully for its
// hidden fault: a dead V3 shows its milky getter in about WhiteGetterShare
// of the amps (binomial, 3σ over 200 draws), a healthy amp in about
// FalseSignShare.
func TestLookSimulated(t *testing.T) {
	e := demo(t, "pp-el34-fixed.yaml")
	const n = 200
	for _, c := range []struct {
		fault string
		p     float64
	}{{"V3:dead", faults.WhiteGetterShare}, {Healthy, faults.FalseSignShare}} {
		hits := 0
		for s := uint64(1); s <= n; s++ {
			sim, err := e.Simulate(c.fault, s)
			if err != nil {
				t.Fatal(err)
			}
			if sim[lookKey("V3")] == 1 {
				hits++
			}
		}
		got, sd := float64(hits)/n, math.Sqrt(c.p*(1-c.p)/n)
		if math.Abs(got-c.p) > 3*sd+1.0/n {
			t.Errorf("%s: V3's getter seen in %.3f of %d simulated amps, want %.3f ± %.3f", c.fault, got, n, c.p, 3*sd)
		}
	}
}
