package infer

import (
	"math"
	"strings"
	"testing"

	"pinwalk/expect/ac"
	"pinwalk/expect/amp"
	"pinwalk/expect/design"
)

// TestACMeterForms: an average-responding meter against closed forms.
func TestACMeterForms(t *testing.T) {
	avg, trms := ACMeter{Response: Average}, ACMeter{Response: TrueRMS}
	cases := []struct {
		name string
		w    Waveform
		mt   ACMeter
		want float64
		tol  float64
	}{
		// A sine: both responses read its rms (the average-responding
		// meter's scale π/(2√2) is the sine's form factor; closed form).
		{"sine, average", Sine(1000), avg, 1, 1e-6}, // midpoint sampling of |sin|: error O(1/N²)
		{"sine, true rms", Sine(1000), trms, 1, 1e-12},
		// A sawtooth (the ripple on a capacitor-input reservoir, Schade
		// 1943): rms = Vpp/(2√3), mean |x| = Vpp/4, so the average meter
		// reads (π/(2√2))·(Vpp/4)/(Vpp/(2√3)) = π√6/8 ≈ 0.9619 of the rms
		// (closed form). Truncated to 400 harmonics: within 0.2 %.
		{"sawtooth, average", Sawtooth(100), avg, math.Pi * math.Sqrt(6) / 8, 2e-3},
		{"sawtooth, true rms", Sawtooth(100), trms, 1, 1e-9},
		// After one RC section the sawtooth is integrated: Σ(−1)^{k+1}
		// cos kθ/k² = π²/12 − θ²/4 on [−π, π] (Fourier series of θ²), a
		// parabolic wave with rms (π²/4)·2/√45 and mean |x| (π²/4)·4/(9√3):
		// ratio π√30/18 ≈ 0.9560 (closed form, derived here).
		{"RC-smoothed, average", Sawtooth(100).Smoothed(false), avg, math.Pi * math.Sqrt(30) / 18, 1e-3},
		// After an LC section: Σ(−1)^{k+1} sin kθ/k³ = θ(π² − θ²)/12, mean
		// |u − u³| = 1/4, rms √(8/105): ratio π√105/32 ≈ 1.0060 (closed form).
		{"LC-smoothed, average", Sawtooth(100).Smoothed(true), avg, math.Pi * math.Sqrt(105) / 32, 1e-3},
	}
	for _, c := range cases {
		if got := c.mt.Ratio(c.w); math.Abs(got-c.want) > c.tol {
			t.Errorf("%s: reading/rms = %.5f, want %.5f (±%g)", c.name, got, c.want, c.tol)
		}
	}
	if math.Abs(SawtoothAverageRatio-0.96191) > 1e-5 {
		t.Errorf("SawtoothAverageRatio = %.6f, want 0.96191 (π√6/8)", SawtoothAverageRatio)
	}
	// Bandwidth: the single pole loses exactly the AC accuracy at the
	// rated bandwidth (the model's definition), and falls as fc/f far
	// above it (single-pole asymptote).
	m := ACMeter{Response: Average, BandwidthHz: 400}
	if got, want := m.Gain(400), 1-ACAccuracyPct/100; math.Abs(got-want) > 1e-12 {
		t.Errorf("gain at the bandwidth %.6f, want %.6f", got, want)
	}
	if got, want := m.Gain(1e6)*1e6, m.cornerHz(); math.Abs(got-want)/want > 1e-5 {
		t.Errorf("far above: f·|H| = %.1f, want fc = %.1f", got, want)
	}
	// A sine through the band-limited meter reads its gain, for both
	// responses.
	for _, r := range []Response{Average, TrueRMS} {
		mt := ACMeter{Response: r, BandwidthHz: 400}
		if got, want := mt.Ratio(Sine(1000)), mt.Gain(1000); math.Abs(got-want) > 1e-6 {
			t.Errorf("%s, 400 Hz meter, 1 kHz sine: %.5f, want %.5f", r, got, want)
		}
	}
	t.Logf("a meter specified to 400 Hz reads a 1 kHz tone %.1f %% low; an average-responding meter reads reservoir ripple %.1f %% low", 100*(1-m.Gain(1000)), 100*(1-SawtoothAverageRatio))
}

// TestRippleRatiosDemoA: the reservoir reads as a sawtooth, the net after
// the choke as the LC-smoothed wave, the RC nets after it near a sine.
func TestRippleRatiosDemoA(t *testing.T) {
	d, probs := design.Load("../../testdata/designs/se-6v6-stereo.yaml")
	if d == nil || len(probs.Errors()) > 0 {
		t.Fatal(probs)
	}
	m, err := amp.Build(d)
	if err != nil {
		t.Fatal(err)
	}
	r := rippleRatios(m, ACMeter{Response: Average})
	if len(r) != 4 {
		t.Fatalf("%d filter nets, want 4 (B1 to B4)", len(r))
	}
	if math.Abs(r[0]-SawtoothAverageRatio) > 2e-3 { // closed form, π√6/8
		t.Errorf("B1 (reservoir): %.4f, want %.4f", r[0], SawtoothAverageRatio)
	}
	if want := math.Pi * math.Sqrt(105) / 32; math.Abs(r[1]-want) > 1e-3 { // after L1: closed form above
		t.Errorf("B2 (after the choke): %.4f, want %.4f", r[1], want)
	}
	for i := 2; i < 4; i++ {
		if math.Abs(r[i]-1) > 0.02 {
			t.Errorf("%s: %.4f, want within 2 %% of 1 (nearly a sine)", m.HT.Nets[i], r[i])
		}
	}
	for _, x := range rippleRatios(m, ACMeter{Response: TrueRMS}) {
		if math.Abs(x-1) > 1e-9 {
			t.Errorf("true rms, flat: ratio %.6f, want 1", x)
		}
	}
}

var toneEngines = map[string]*Engine{}

// toneDemo returns a shared engine with a 1 kHz, 20 mV tone (200
// samples, seed 1, an average-responding meter). 20 mV keeps every stage
// of both demos short of clipping, as a technician keeps a traced signal
// small (common practice); at 100 mV the push-pull demo's phase inverter
// clips and the levels past it stop telling faults apart.
func toneDemo(t testing.TB, name string) *Engine {
	t.Helper()
	engMu.Lock()
	defer engMu.Unlock()
	if e, ok := toneEngines[name]; ok {
		return e
	}
	d, probs := design.Load("../../testdata/designs/" + name)
	if d == nil || len(probs.Errors()) > 0 {
		t.Fatalf("load %s: %v", name, probs)
	}
	e, err := New(d, Options{Samples: 200, Seed: 1, Tone: &ac.Options{Hz: 1000, Volts: 0.02, AllInputs: true}, ACMeter: ACMeter{Response: Average}})
	if err != nil {
		t.Fatal(err)
	}
	toneEngines[name] = e
	return e
}

// liveObs returns every live reading (DC, ripple and, with tone, the tone
// levels) of a simulated amplifier, in key order.
func liveObs(e *Engine, sim map[string]float64, tone bool) []Observation {
	var obs []Observation
	for _, k := range e.Keys() {
		if v, ok := sim[k]; ok && !strings.HasPrefix(k, "cold:") && (tone || !IsTone(k)) {
			obs = append(obs, Observation{k, v})
		}
	}
	return obs
}

// TestToneFindsOpenCapacitors: open coupling capacitors and open cathode
// bypasses leave the DC readings unchanged, so with DC readings only they
// sit in one group with healthy; with the tone levels they rank first.
// Also reports, for every capacitor-open fault of both demos, how often
// it ranks first with and without the AC evidence.
func TestToneFindsOpenCapacitors(t *testing.T) {
	cases := []struct{ design, fault, what string }{
		{"se-6v6-stereo.yaml", "C11:open", "coupling V1A plate to V2 grid"},
		{"se-6v6-stereo.yaml", "C10:open", "V1A cathode bypass"},
		{"pp-el34-fixed.yaml", "C10:open", "input stage cathode bypass"},
		{"pp-el34-fixed.yaml", "C11:open", "coupling into the phase inverter"},
	}
	for _, c := range cases {
		dc := demo(t, c.design)
		et := toneDemo(t, c.design)
		// DC only (the DC engine): the fault is in healthy's group.
		if !same(dc, Healthy, c.fault, false) {
			t.Errorf("%s %s (%s): a DC point separates it from healthy; expected it invisible to DC", c.design, c.fault, c.what)
		}
		sim, err := et.Simulate(c.fault, 77)
		if err != nil {
			t.Fatal(err)
		}
		dcObs := liveObs(dc, sim, false)
		rdc := dc.Rank(dcObs, func(string) bool { return false })
		// The DC readings do not tell it from healthy: their likelihoods
		// agree within a factor of 3 (so the posterior ratio stays the
		// prior ratio), and where it is listed it shares healthy's group.
		llF := dc.logLikOf(dc.hyps[dc.byName[c.fault]], dcObs)
		llH := dc.logLikOf(dc.hyps[0], dcObs)
		if math.Abs(llF-llH) > math.Log(3) {
			t.Errorf("%s %s, DC readings: log-likelihood %.2f against healthy %.2f: the DC readings separate them", c.design, c.fault, llF, llH)
		}
		for _, s := range rdc.Suspects {
			if s.Fault == c.fault && !contains(rdc.Groups[s.Group], Healthy) {
				t.Errorf("%s %s, DC readings: listed in group %v, without healthy", c.design, c.fault, rdc.Groups[s.Group])
			}
		}
		// With the tone levels.
		obs := liveObs(et, sim, true)
		r := et.Rank(obs, func(string) bool { return false })
		top := r.Suspects[0]
		topGroup := r.Groups[top.Group]
		if top.Fault != c.fault && (!contains(topGroup, c.fault) || contains(topGroup, Healthy)) {
			t.Errorf("%s %s (%s) with tone: top %s %.2f (group %v)", c.design, c.fault, c.what, top.Fault, top.Probability, topGroup)
		}
		t.Logf("%s %s (%s): DC only p=%.3f (healthy %.3f, likelihood ratio %.2f); with %d tone readings top %s p=%.3f",
			c.design, c.fault, c.what, prob(rdc, c.fault), prob(rdc, Healthy), math.Exp(llF-llH), len(obs)-len(dcObs), top.Fault, top.Probability)
	}
	// Accuracy over every capacitor-open fault, with and without tone.
	for _, name := range []string{"se-6v6-stereo.yaml", "pp-el34-fixed.yaml"} {
		et := toneDemo(t, name)
		var n, withTone, without int
		var missed []string
		for i, h := range et.Hypotheses() {
			if !strings.HasPrefix(h, "C") || !strings.HasSuffix(h, ":open") {
				continue
			}
			sim, err := et.Simulate(h, uint64(300+i))
			if err != nil {
				t.Fatal(err)
			}
			n++
			if r := et.Rank(liveObs(et, sim, false), func(string) bool { return false }); r.Suspects[0].Fault == h {
				without++
			}
			if r := et.Rank(liveObs(et, sim, true), func(string) bool { return false }); r.Suspects[0].Fault == h {
				withTone++
			} else {
				missed = append(missed, h+" (top "+r.Suspects[0].Fault+")")
			}
		}
		t.Logf("%s: %d capacitor-open faults ranked exactly first: DC and ripple only %d, with the tone %d; missed with tone: %s",
			name, n, without, withTone, strings.Join(missed, ", "))
		if withTone <= without {
			t.Errorf("%s: the tone did not help (%d against %d)", name, withTone, without)
		}
	}
}

func prob(r *Ranking, name string) float64 {
	for _, s := range r.Suspects {
		if s.Fault == name {
			return s.Probability
		}
	}
	return 0
}

// TestToneProbe: after the DC readings of an amplifier with an open
// coupling capacitor, the best next reading is a tone level (cost
// CostTone) when tone points are allowed, and never one when they are not.
func TestToneProbe(t *testing.T) {
	e := toneDemo(t, "se-6v6-stereo.yaml")
	sim, err := e.Simulate("C11:open", 5)
	if err != nil {
		t.Fatal(err)
	}
	obs := liveObs(e, sim, false)
	live := func(k string) bool { return !strings.HasPrefix(k, "cold:") }
	r := e.Rank(obs, live)
	if r.Next == nil || !IsTone(r.Next.Key) || r.Next.Cost != CostTone || !r.Next.Live {
		t.Fatalf("next %+v: want a live tone reading of cost %g", r.Next, CostTone)
	}
	if !strings.Contains(r.Next.Setup, "dummy load") {
		t.Errorf("setup %q: want the dummy-load instruction", r.Next.Setup)
	}
	t.Logf("next after DC readings: %s (%.2f bits, cost %g): %s", r.Next.Key, r.Next.GainBits, r.Next.Cost, r.Next.Setup)
	r2 := e.Rank(obs, NoTone(live))
	if r2.Next != nil && IsTone(r2.Next.Key) {
		t.Errorf("NoTone: next is %s", r2.Next.Key)
	}
	if r3 := e.Rank(obs, ColdOnly); r3.Next != nil && IsTone(r3.Next.Key) {
		t.Errorf("ColdOnly: next is %s", r3.Next.Key)
	}
}

// BenchmarkPrecomputeDemoBTone: as BenchmarkPrecomputeDemoB with the tone
// points in every cloud.
func BenchmarkPrecomputeDemoBTone(b *testing.B) {
	d, probs := design.Load("../../testdata/designs/pp-el34-fixed.yaml")
	if d == nil {
		b.Fatal(probs)
	}
	c0 := cpuSeconds()
	for b.Loop() {
		if _, err := New(d, Options{Samples: 200, Seed: 1, Tone: &ac.Options{Hz: 1000, Volts: 0.1}}); err != nil {
			b.Fatal(err)
		}
	}
	b.ReportMetric((cpuSeconds()-c0)/float64(b.N), "cpu-s/op")
}
