package supply

import (
	"errors"
	"math"
	"reflect"
	"testing"
)

// silicon is a generic silicon rectifier diode: 0.7 V knee (common
// practice) and a small bulk resistance.
var silicon = Rectifier{Kind: Silicon, Vf: 0.7, Rd: 0.05}

// valve5U4 is a 5U4GB per anode: perveance 0.78 mA/V^1.5 (public fits,
// from memory; REFERENCES.md "Models and methods").
var valve5U4 = Rectifier{Kind: Valve, Perveance: 0.78e-3}

func within(got, want, rel float64) bool {
	return math.Abs(got-want) <= rel*math.Abs(want)
}

func mustSim(t *testing.T, p Params) Result {
	t.Helper()
	r, err := Simulate(p, DefaultOptions())
	if err != nil {
		t.Fatalf("Simulate: %v", err)
	}
	return r
}

// clcSupply is an invented but typical CLC supply for a push-pull output
// stage with two RC decoupling stages for the preamp.
func clcSupply() Params {
	return Params{Topology: CentreTap, Vrms: 350, Rs: 50, Hz: 50, Rect: silicon, Stages: []Stage{
		{Parent: -1, ShuntC: 47e-6},
		{Parent: 0, SeriesR: 100, SeriesL: 5, ShuntC: 47e-6, LoadA: 0.12},
		{Parent: 1, SeriesR: 10e3, ShuntC: 22e-6, LoadA: 0.005},
		{Parent: 2, SeriesR: 22e3, ShuntC: 22e-6, LoadA: 0.002, LoadOhms: 220e3},
	}}
}

// Schade (1943): with no load and a very large reservoir the output tends
// to the secondary peak less the rectifier drop.
func TestNoLoadLimitSchade(t *testing.T) {
	for _, tc := range []struct {
		name string
		top  Topology
		load float64 // a 1 mA trickle makes the reservoir recharge every cycle
	}{{"centre-tap no load", CentreTap, 0}, {"centre-tap 1 mA", CentreTap, 1e-3}, {"bridge 1 mA", Bridge, 1e-3}, {"half-wave 1 mA", HalfWave, 1e-3}} {
		p := Params{Topology: tc.top, Vrms: 300, Rs: 20, Hz: 50, Rect: silicon,
			Stages: []Stage{{Parent: -1, ShuntC: 10e-3, LoadA: tc.load}}}
		r := mustSim(t, p)
		want := math.Sqrt2*300 - p.rectDrop(0) // Schade 1943 limit: Vpeak − rectifier drop
		if got := r.Nets[0].Vdc; !within(got, want, 0.02) {
			t.Errorf("%s: Vdc = %.2f V, want %.2f V ± 2 %%", tc.name, got, want)
		}
		if got := ColdPeak(p); math.Abs(got-want) > 1e-9 {
			t.Errorf("%s: ColdPeak = %.3f, want %.3f", tc.name, got, want)
		}
	}
}

// Charge balance (Schade 1943): with a large reservoir the capacitor
// supplies the load between short charging pulses, so the full-wave ripple
// is a sawtooth of I/(2fC) peak to peak and rms Vpp/(2√3); half-wave gives
// I/(fC).
func TestRippleChargeBalance(t *testing.T) {
	const c, i, hz = 1000e-6, 0.1, 50.0
	for _, tc := range []struct {
		top    Topology
		wantPP float64
	}{
		{CentreTap, i / (2 * hz * c)}, // full-wave: I/(2fC), Schade 1943
		{Bridge, i / (2 * hz * c)},    // full-wave: I/(2fC), Schade 1943
		{HalfWave, i / (hz * c)},      // half-wave: I/(fC), Schade 1943
	} {
		// A stiff transformer (Rs = 1 Ω) keeps the charging pulses short,
		// which is the condition of the closed form.
		p := Params{Topology: tc.top, Vrms: 300, Rs: 1, Hz: hz, Rect: silicon,
			Stages: []Stage{{Parent: -1, ShuntC: c, LoadA: i}}}
		r := mustSim(t, p)
		n := r.Nets[0]
		if !within(n.RipplePP, tc.wantPP, 0.10) {
			t.Errorf("%v: ripple %.3f Vpp, want %.3f ± 10 %%", tc.top, n.RipplePP, tc.wantPP)
		}
		// With a softer transformer the pulses widen; the capacitor alone
		// feeds the load only outside them, so Vpp = I·t_off/C (the same
		// charge balance, with the simulated conduction angle).
		p.Rs = 10
		r = mustSim(t, p)
		pulse := 1 / (hz * float64(p.pulses()))
		tOff := pulse * (1 - r.ConductionDeg*float64(p.pulses())/360)
		if want := i * tOff / c; !within(r.Nets[0].RipplePP, want, 0.03) {
			t.Errorf("%v, Rs 10 Ω: ripple %.3f Vpp, want I·t_off/C = %.3f ± 3 %% (conduction %.1f°)", tc.top, r.Nets[0].RipplePP, want, r.ConductionDeg)
		}
		// Sawtooth rms = Vpp/(2√3) (closed form).
		if want := n.RipplePP / (2 * math.Sqrt(3)); !within(n.RippleRms, want, 0.15) {
			t.Errorf("%v: ripple %.3f V rms, want %.3f ± 15 %%", tc.top, n.RippleRms, want)
		}
	}
}

// Schade (1943); REFERENCES.md note: with capacitor input the current
// flows in short peaks, so the DC drop caused by Rs is several times
// Idc·Rs.
func TestSourceResistanceDropSchade(t *testing.T) {
	mk := func(rs float64) Params {
		return Params{Topology: CentreTap, Vrms: 300, Rs: rs, Hz: 50, Rect: silicon,
			Stages: []Stage{{Parent: -1, ShuntC: 47e-6, LoadA: 0.15}}}
	}
	const rs, idc = 40.0, 0.15
	stiff := mustSim(t, mk(0.01))
	soft := mustSim(t, mk(rs))
	drop := stiff.Nets[0].Vdc - soft.Nets[0].Vdc
	if drop <= 2*idc*rs {
		t.Errorf("drop due to Rs = %.1f V, want > 2·Idc·Rs = %.1f V", drop, 2*idc*rs)
	}
	// The peak-to-average current ratio is what makes it so (Schade 1943).
	if ratio := soft.PeakRectAmps / soft.AvgRectAmps; ratio < 3 {
		t.Errorf("peak/average rectifier current = %.2f, want ≥ 3 for capacitor input", ratio)
	}
	t.Logf("Rs drop %.1f V = %.2f·Idc·Rs; peak %.3f A, conduction %.0f°", drop, drop/(idc*rs), soft.PeakRectAmps, soft.ConductionDeg)
}

// Child–Langmuir law with the 5U4GB perveance: about 50 V at 275 mA
// (REFERENCES.md, public fits, from memory).
func TestValveDropLaw(t *testing.T) {
	if got := valveDrop(0.275, valve5U4.Perveance); !within(got, 50, 0.02) {
		t.Errorf("5U4GB drop at 275 mA = %.1f V, want ≈ 50 V", got)
	}
	// 5AR4: 3.96 mA/V^1.5 gives about 16 V at 250 mA (same source).
	if got := valveDrop(0.25, 3.96e-3); !within(got, 16, 0.03) {
		t.Errorf("5AR4 drop at 250 mA = %.1f V, want ≈ 16 V", got)
	}
}

// A valve rectifier's charge-weighted mean drop lies between the
// Child–Langmuir drop at the average current and at the peak current.
func TestValveRectifierDrop(t *testing.T) {
	p := Params{Topology: CentreTap, Vrms: 350, Rs: 60, Hz: 50, Rect: valve5U4,
		Stages: []Stage{{Parent: -1, ShuntC: 40e-6, LoadA: 0.2}}} // 40 µF: 5U4GB largest reservoir (GE data, as quoted)
	r := mustSim(t, p)
	lo := valveDrop(r.AvgRectAmps, valve5U4.Perveance)
	hi := valveDrop(r.PeakRectAmps, valve5U4.Perveance)
	if !(r.RectDropMean > lo && r.RectDropMean < hi) {
		t.Errorf("mean valve drop %.1f V not between %.1f V (at %.0f mA avg) and %.1f V (at %.0f mA peak)",
			r.RectDropMean, lo, 1e3*r.AvgRectAmps, hi, 1e3*r.PeakRectAmps)
	}
	// The valve costs volts against silicon on the same transformer.
	q := p
	q.Rect = silicon
	s := mustSim(t, q)
	if d := s.Nets[0].Vdc - r.Nets[0].Vdc; d < lo || d > hi {
		t.Errorf("valve costs %.1f V against silicon, want between %.1f and %.1f V", d, lo, hi)
	}
	if ColdPeak(p) != math.Sqrt2*350 {
		t.Errorf("valve ColdPeak = %.2f, want the bare peak %.2f (no drop at zero current, Child–Langmuir)", ColdPeak(p), math.Sqrt2*350)
	}
}

// LC filter theory (Radiotron Designer's Handbook 4th ed. ch. 31, from
// memory): an L-section attenuates the ripple fundamental by
// |1/(1 − ω²LC)| and an RC section by 1/√(1 + (ωRC)²), ω = 2·2π·f for
// full-wave.
func TestFilterAttenuation(t *testing.T) {
	p := clcSupply()
	r := mustSim(t, p)
	w := 2 * 2 * math.Pi * p.Hz
	s1, s2, s3 := p.Stages[1], p.Stages[2], p.Stages[3]
	lc := 1 / math.Abs(1-w*w*s1.SeriesL*s1.ShuntC)
	rc2 := 1 / math.Hypot(1, w*s2.SeriesR*s2.ShuntC)
	rc3 := 1 / math.Hypot(1, w*s3.SeriesR*s3.ShuntC)
	for _, tc := range []struct {
		name      string
		got, want float64
	}{
		{"LC section", r.Nets[1].RippleFund / r.Nets[0].RippleFund, lc},
		{"RC section", r.Nets[2].RippleFund / r.Nets[1].RippleFund, rc2},
		{"RC section with bleeder", r.Nets[3].RippleFund / r.Nets[2].RippleFund, rc3},
	} {
		if !within(tc.got, tc.want, 0.15) {
			t.Errorf("%s: attenuation %.4g, want %.4g ± 15 %%", tc.name, tc.got, tc.want)
		}
	}
}

// Full-wave choke input above critical inductance: the choke passes the
// average of the rectified sine, 2√2/π·Vrms ≈ 0.9·Vrms, less the resistive
// and rectifier drops (Radiotron Designer's Handbook 4th ed. ch. 30, from
// memory).
func TestChokeInput(t *testing.T) {
	const vrms, rs, rl, load = 350.0, 50.0, 100.0, 0.15
	p := Params{Topology: CentreTap, Vrms: vrms, Rs: rs, Hz: 50, Rect: silicon,
		Stages: []Stage{{Parent: -1, SeriesL: 10, SeriesR: rl, ShuntC: 47e-6, LoadA: load}}}
	r := mustSim(t, p)
	want := 2*math.Sqrt2/math.Pi*vrms - 0.7 - load*(rs+rl+0.05)
	if got := r.Nets[0].Vdc; !within(got, want, 0.05) {
		t.Errorf("choke input Vdc = %.1f V, want %.1f ± 5 %%", got, want)
	}
	if r.CriticalL <= 0 || r.CriticalL >= 10 {
		t.Errorf("critical L = %.2f H, want 0 < Lc < 10 H here", r.CriticalL)
	}
	if r.ConductionDeg < 179 {
		t.Errorf("continuous conduction expected, each path conducts %.0f°", r.ConductionDeg)
	}
	// Well below critical (light load, small choke) the choke current
	// stops between pulses and the output rises towards the peak.
	q := p
	q.Stages = []Stage{{Parent: -1, SeriesL: 0.2, SeriesR: rl, ShuntC: 47e-6, LoadA: 0.01}}
	d := mustSim(t, q)
	if d.ConductionDeg >= 175 {
		t.Errorf("discontinuous conduction expected, got %.0f°", d.ConductionDeg)
	}
	if v := d.Nets[0].Vdc; v <= 2*math.Sqrt2/math.Pi*vrms || v >= math.Sqrt2*vrms {
		t.Errorf("below critical L: Vdc = %.1f V, want between 0.9·Vrms and the peak", v)
	}
}

// Charge conservation: at periodic steady state the capacitors' mean
// current is zero, so the mean rectifier current equals the total DC load,
// and each node's series current equals its loads plus its children's.
func TestChargeConservation(t *testing.T) {
	for _, p := range []Params{clcSupply(), withRect(clcSupply(), valve5U4), withTopology(clcSupply(), HalfWave), withTopology(clcSupply(), Bridge)} {
		r := mustSim(t, p)
		var total float64
		for k, s := range p.Stages {
			own := s.LoadA
			if s.LoadOhms > 0 {
				own += r.Nets[k].Vdc / s.LoadOhms
			}
			total += own
			want := own
			for c, sc := range p.Stages {
				if sc.Parent == k {
					want += r.Nets[c].DCAmps
				}
			}
			if !within(r.Nets[k].DCAmps, want, 0.01) {
				t.Errorf("%v/%v stage %d: series current %.5f A, loads + children %.5f A", p.Topology, p.Rect.Kind, k, r.Nets[k].DCAmps, want)
			}
		}
		if !within(r.AvgRectAmps, total, 0.01) {
			t.Errorf("%v/%v: mean rectifier current %.5f A, total load %.5f A", p.Topology, p.Rect.Kind, r.AvgRectAmps, total)
		}
	}
}

func withRect(p Params, r Rectifier) Params    { p.Rect = r; return p }
func withTopology(p Params, t Topology) Params { p.Topology = t; return p }

// The step count converges: 500 and 4000 steps per cycle agree closely.
func TestStepConvergence(t *testing.T) {
	p := clcSupply()
	coarse, err1 := Simulate(p, Options{StepsPerCycle: 500, MaxCycles: 400, Tol: 1e-6})
	fine, err2 := Simulate(p, Options{StepsPerCycle: 4000, MaxCycles: 400, Tol: 1e-6})
	if err1 != nil || err2 != nil {
		t.Fatal(err1, err2)
	}
	for k := range p.Stages {
		if !within(coarse.Nets[k].Vdc, fine.Nets[k].Vdc, 1e-3) {
			t.Errorf("stage %d: Vdc %.3f (500 steps) vs %.3f (4000 steps)", k, coarse.Nets[k].Vdc, fine.Nets[k].Vdc)
		}
		if !within(coarse.Nets[k].RippleFund, fine.Nets[k].RippleFund, 0.02) {
			t.Errorf("stage %d: ripple %.4g (500 steps) vs %.4g (4000 steps)", k, coarse.Nets[k].RippleFund, fine.Nets[k].RippleFund)
		}
	}
}

// The result is a true periodic steady state: one more cycle of plain
// integration from it changes nothing (the same check the method uses,
// repeated independently at a tighter tolerance).
func TestSteadyStateIsPeriodic(t *testing.T) {
	p := clcSupply()
	a, err := Simulate(p, Options{StepsPerCycle: 1000, MaxCycles: 400, Tol: 1e-7})
	if err != nil {
		t.Fatal(err)
	}
	// Brute force: many plain cycles from a cold-ish start must land on
	// the same DC levels. Tol is huge so no Newton steps are taken.
	e, _ := newEngine(p, DefaultOptions())
	x := make([]float64, e.m)
	e.initialState(x)
	px := make([]float64, e.m)
	for c := 0; c < 3000; c++ {
		e.cycle(x, px)
		copy(x, px)
	}
	b := e.record(x)
	for k := range p.Stages {
		if !within(b.Nets[k].Vdc, a.Nets[k].Vdc, 1e-4) {
			t.Errorf("stage %d: Newton %.4f V, 3000 plain cycles %.4f V", k, a.Nets[k].Vdc, b.Nets[k].Vdc)
		}
	}
}

func TestThevenin(t *testing.T) {
	p := clcSupply()
	vOC, rOut, err := Thevenin(p, DefaultOptions())
	if err != nil {
		t.Fatal(err)
	}
	base := mustSim(t, p)
	if got := vOC - rOut*base.Nets[0].DCAmps; !within(got, base.Nets[0].Vdc, 1e-6) {
		t.Errorf("vOC − rOut·I = %.3f, want Vdc %.3f", got, base.Nets[0].Vdc)
	}
	// The line predicts a 20 mA heavier load to within 1 % (linearisation).
	q := p
	q.Stages = append([]Stage(nil), p.Stages...)
	q.Stages[0].LoadA += 0.02
	heavy := mustSim(t, q)
	if pred := vOC - rOut*heavy.Nets[0].DCAmps; !within(pred, heavy.Nets[0].Vdc, 0.01) {
		t.Errorf("Thevenin predicts %.2f V at +20 mA, simulation %.2f V", pred, heavy.Nets[0].Vdc)
	}
	// Choke input above critical: the output resistance is just the
	// series resistances, since the average of the rectified sine does not
	// depend on load (Radiotron Designer's Handbook 4th ed. ch. 30, from memory).
	ch := Params{Topology: CentreTap, Vrms: 350, Rs: 50, Hz: 50, Rect: silicon,
		Stages: []Stage{{Parent: -1, SeriesL: 10, SeriesR: 100, ShuntC: 47e-6, LoadA: 0.15}}}
	_, rc, err := Thevenin(ch, DefaultOptions())
	if err != nil {
		t.Fatal(err)
	}
	if want := 50 + 100 + 0.05; !within(rc, want, 0.10) {
		t.Errorf("choke-input rOut = %.1f Ω, want ≈ %.1f Ω", rc, want)
	}
	if rOut <= 2*p.Rs {
		t.Errorf("capacitor-input rOut = %.1f Ω, want well above Rs (Schade 1943)", rOut)
	}
}

func TestDeterministic(t *testing.T) {
	a := mustSim(t, clcSupply())
	b := mustSim(t, clcSupply())
	if !reflect.DeepEqual(a, b) {
		t.Errorf("two runs differ:\n%+v\n%+v", a, b)
	}
}

func TestValidation(t *testing.T) {
	good := clcSupply()
	for _, tc := range []struct {
		name  string
		edit  func(p *Params)
		field string
	}{
		{"zero Vrms", func(p *Params) { p.Vrms = 0 }, "Vrms"},
		{"negative Hz", func(p *Params) { p.Hz = -50 }, "Hz"},
		{"NaN Rs", func(p *Params) { p.Rs = math.NaN() }, "Rs"},
		{"no reservoir", func(p *Params) { p.Stages[0].ShuntC = 0 }, "Stages[0].ShuntC"},
		{"choke input without C", func(p *Params) { p.Stages[0].ShuntC = 0; p.Stages[0].SeriesL = 10 }, "Stages[0].ShuntC"},
		{"stage 0 parent", func(p *Params) { p.Stages[0].Parent = 0 }, "Stages[0].Parent"},
		{"child before parent", func(p *Params) { p.Stages[1].Parent = 2 }, "Stages[1].Parent"},
		{"self parent", func(p *Params) { p.Stages[2].Parent = 2 }, "Stages[2].Parent"},
		{"no series element", func(p *Params) { p.Stages[2].SeriesR = 0 }, "Stages[2].SeriesR"},
		{"negative C", func(p *Params) { p.Stages[2].ShuntC = -1e-6 }, "Stages[2].ShuntC"},
		{"valve without perveance", func(p *Params) { p.Rect = Rectifier{Kind: Valve} }, "Rect.Perveance"},
		{"ideal diode into C", func(p *Params) { p.Rs = 0; p.Rect.Rd = 0 }, "Rs"},
		{"no stages", func(p *Params) { p.Stages = nil }, "Stages"},
	} {
		p := good
		p.Stages = append([]Stage(nil), good.Stages...)
		tc.edit(&p)
		_, err := Simulate(p, DefaultOptions())
		var pe *ParamError
		if !errors.As(err, &pe) || pe.Field != tc.field {
			t.Errorf("%s: got %v, want a ParamError on %s", tc.name, err, tc.field)
		}
	}
	if _, err := Simulate(good, Options{StepsPerCycle: 5, MaxCycles: 10, Tol: 1e-4}); err == nil {
		t.Error("5 steps per cycle accepted")
	}
}

// A budget too small to converge reports ErrNoSteadyState with a finite result.
func TestBudgetExhausted(t *testing.T) {
	r, err := Simulate(clcSupply(), Options{StepsPerCycle: 200, MaxCycles: 1, Tol: 1e-12})
	if !errors.Is(err, ErrNoSteadyState) {
		t.Fatalf("err = %v, want ErrNoSteadyState", err)
	}
	if !resultFinite(r) {
		t.Errorf("non-finite result %+v", r)
	}
}

func resultFinite(r Result) bool {
	for _, n := range r.Nets {
		if !finiteAll([]float64{n.Vdc, n.RippleRms, n.RipplePP, n.DCAmps, n.RippleFund}) {
			return false
		}
	}
	return finiteAll([]float64{r.PeakRectAmps, r.AvgRectAmps, r.RmsRectAmps, r.RectDropMean, r.ConductionDeg, r.CriticalL})
}

func BenchmarkSimulateCLC(b *testing.B) {
	p := clcSupply()
	opt := DefaultOptions()
	var cycles int
	for b.Loop() {
		r, err := Simulate(p, opt)
		if err != nil {
			b.Fatal(err)
		}
		cycles = r.Cycles
	}
	b.ReportMetric(float64(cycles), "cycles/op")
}

func BenchmarkSimulateValveCLC(b *testing.B) {
	p := withRect(clcSupply(), valve5U4)
	opt := DefaultOptions()
	for b.Loop() {
		if _, err := Simulate(p, opt); err != nil {
			b.Fatal(err)
		}
	}
}
