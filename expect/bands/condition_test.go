package bands

import (
	"math"
	"strings"
	"testing"

	"pinwalk/expect/design"
	"pinwalk/expect/mna"
)

// Bayes' rule on the samples (de Kleer & Williams 1987, as in
// REFERENCES.md): after B2 is read at its band's upper edge, the plates fed
// from B2 through the output transformers (V2.3, V3.3) must move up and
// their bands shrink, since they follow B2 closely.
func TestConditionMovesAndShrinks(t *testing.T) {
	d := load(t, demoA)
	s := run(t, d, Options{Samples: 1000, Seed: 21})
	b2 := band(t, s, "B2 dc_volts")
	c, err := s.Condition([]Reading{{Key: "B2 dc_volts", Value: b2.High}})
	if err != nil {
		t.Fatal(err)
	}
	if c.Degenerate || c.ESS < MinESS || c.ESS >= s.ESS {
		t.Fatalf("ESS %g (of %g), degenerate %v: %s", c.ESS, s.ESS, c.Degenerate, c.Reason)
	}
	for _, key := range []string{"V2.3 dc_volts", "V3.3 dc_volts", "B3 dc_volts"} {
		p, q := band(t, s, key), band(t, c, key)
		mid := func(b Band) float64 { return (b.Low + b.High) / 2 }
		t.Logf("%s: %.1f–%.1f V → %.1f–%.1f V (ESS %.0f)", key, p.Low, p.High, q.Low, q.High, c.ESS)
		if mid(q) <= mid(p) {
			t.Errorf("%s: band centre did not move up: %g → %g", key, mid(p), mid(q))
		}
		if q.Width() >= 0.6*p.Width() {
			t.Errorf("%s: band width %g → %g, want it to shrink well", key, p.Width(), q.Width())
		}
	}
	// The original set is untouched.
	if s.Weights[0] != 1 || s.ESS != 1000 {
		t.Errorf("Condition changed its receiver")
	}
}

// A reading far outside anything the model predicts collapses the
// weights: the set says so, names the reading, and falls back to tempered
// weights (never NaN).
func TestConditionDegenerate(t *testing.T) {
	d := load(t, demoA)
	s := run(t, d, Options{Samples: 500, Seed: 2})
	b2 := band(t, s, "B2 dc_volts")
	c, err := s.Condition([]Reading{{Key: "B2 dc_volts", Value: 0.6 * b2.Nominal}})
	if err != nil {
		t.Fatal(err)
	}
	if !c.Degenerate || !c.Misfit || !strings.Contains(c.Reason, "B2 dc_volts") || !strings.Contains(c.Reason, "fault") {
		t.Errorf("degenerate %v, reason %q", c.Degenerate, c.Reason)
	}
	if c.ESS < MinESS-1e-6 || !(c.Tempered > 0 && c.Tempered < 1) {
		t.Errorf("ESS %g, tempered %g", c.ESS, c.Tempered)
	}
	for i := range c.Points {
		b := c.Band(i)
		if math.IsNaN(b.Low) || math.IsNaN(b.High) {
			t.Fatalf("%s: NaN band", c.Points[i].Key())
		}
	}
	if _, err := s.Condition([]Reading{{Key: "B9 dc_volts", Value: 1}}); err == nil {
		t.Errorf("unknown key accepted")
	}
}

// σ² = (model/1.96)² + (meter/√3)²: the model error of a plate or supply
// net is a 95 % limit of 3 % + 0.2 V = 7.7 V at 250 V (ModelPlate); a
// typical handheld (6000 counts) reads 250 V on its 600 V range, ±(0.5 % +
// 2 digits) = 1.25 V + 2 × 0.1 V = 1.45 V, uniform within that limit (GUM
// 4.3.7). A 40 mA current is read on DC current, 1 % + 3 digits on the
// 60 mA range (10 µA): 0.43 mA, with the current model error 5 % + 0.1 µA.
// A cathode net at 10 V takes the cathode model error (5 % + 2 mV), read on
// the 60 V range (10 mV a count).
func TestSigma(t *testing.T) {
	got := Sigma(Reading{Value: 250}, "dc_volts")
	want := math.Hypot(7.7/1.96, 1.45/math.Sqrt(3))
	if math.Abs(got-want) > 1e-9 {
		t.Errorf("Sigma(250 V) = %g, want %g", got, want)
	}
	got = Sigma(Reading{Value: 0.040}, "dc_amps")
	want = math.Hypot((0.05*0.040+1e-7)/1.96, (0.01*0.040+3*10e-6)/math.Sqrt(3))
	if math.Abs(got-want) > 1e-12 {
		t.Errorf("Sigma(40 mA) = %g, want %g", got, want)
	}
	s := run(t, load(t, demoA), Options{Samples: 0})
	for _, pd := range s.Points {
		if pd.Electrode == "cathode" && pd.Quantity == "dc_volts" {
			got := s.SigmaOf(Reading{Key: pd.Key(), Value: 10})
			want := math.Hypot((0.05*10+2e-3)/1.96, (0.005*10+2*10e-3)/math.Sqrt(3)) // 60 V range, 10 mV
			if math.Abs(got-want) > 1e-12 {
				t.Errorf("SigmaOf(%s at 10 V) = %g, want %g", pd.Key(), got, want)
			}
			break
		}
	}
	// Analogue: ±3 % of the 500 V range = 15 V, whatever the reading.
	mt, err := ParseMeter("20k/V:500V")
	if err != nil {
		t.Fatal(err)
	}
	if a := mt.Accuracy(100); math.Abs(a-15) > 1e-12 {
		t.Errorf("analogue accuracy %g, want 15 V", a)
	}
}

func TestParseMeter(t *testing.T) {
	cases := []struct {
		in   string
		ohms float64
		ok   bool
	}{
		{"10M", 10e6, true},
		{"", 10e6, true},
		{"11MΩ", 11e6, true},
		{"20k/V:500V", 10e6, true}, // 20 kΩ/V × 500 V
		{"20k/V:50V", 1e6, true},
		{"1000/V:250", 250e3, true},
		{"20k/V", 0, false}, // no range
		{"fast", 0, false},
		{"10", 0, false}, // 10 Ω is no voltmeter
	}
	for _, c := range cases {
		m, err := ParseMeter(c.in)
		if (err == nil) != c.ok {
			t.Errorf("ParseMeter(%q): err %v, want ok %v", c.in, err, c.ok)
			continue
		}
		if c.ok && math.Abs(m.Ohms()-c.ohms) > 1e-6*c.ohms {
			t.Errorf("ParseMeter(%q).Ohms() = %g, want %g", c.in, m.Ohms(), c.ohms)
		}
	}
}

// A divider read through a meter, against the closed form (nodal
// equation at the tap): V = V_HT·G1/(G1 + G2 + Gm), Gm = 1/Rm the meter,
// plus the solver's documented Gmin shunt on every node (1e-12 S, which
// moves 80 V by 26 µV here). The 12AX7 stage on the same rail does not
// touch the divider.
func TestMeterDividerClosedForm(t *testing.T) {
	src := `pinwalk: 1
title: divider test (invented)
mains: {volts: 230, hz: 50, tolerance: 6%}
ground: 0V
parts:
  T1:
    power-transformer:
      primary: {volts: 230, dcr: 40R}
      secondaries:
        HEATER: {volts: 6.3, rated: 1A, dcr: 0R2, ends: [H1, H2], centre: 0V}
  U1: {dc-supply: 250V, between: [HT, 0V]}
  R1: {resistor: 1M, between: [HT, D]}
  R2: {resistor: 470k, between: [D, 0V]}
  V1:
    valve: 12AX7
    A: {plate: P1, grid: G1, cathode: K1}
    B: unused
    heater: [H1, H2]
  R3: {resistor: 100k, between: [HT, P1]}
  R4: {resistor: 1M, between: [G1, 0V]}
  R5: {resistor: 1k5, between: [K1, 0V]}
`
	d, probs := design.Parse("divider.yaml", []byte(src))
	if len(probs.Errors()) > 0 {
		t.Fatal(probs.Errors())
	}
	s := run(t, d, Options{})
	ht := band(t, s, "HT dc_volts").Nominal // 250 V less µV in the supply's 1 mΩ floor
	gmin := mna.DefaultOptions().Gmin       // the solver's shunt on every node
	for _, spec := range []string{"10M", "20k/V:50V"} {
		mt, _ := ParseMeter(spec)
		ls, err := s.Loading(mt)
		if err != nil {
			t.Fatal(err)
		}
		var got *Loading
		for i := range ls {
			if ls[i].Key == "D dc_volts" {
				got = &ls[i]
			}
		}
		if got == nil {
			t.Fatal("no loading for net D")
		}
		g1, g2, gm := 1/1e6, 1/470e3, 1/mt.Ohms()
		vth := ht * g1 / (g1 + g2 + gmin) // unloaded divider
		want := ht * g1 / (g1 + g2 + gmin + gm)
		if math.Abs(got.Unloaded-vth) > 1e-9*vth || math.Abs(got.Loaded-want) > 1e-9*want {
			t.Errorf("%s: D reads %.10g (unloaded %.10g), want %.10g (%.10g)", spec, got.Loaded, got.Unloaded, want, vth)
		}
		if !got.Significant {
			t.Errorf("%s: a %.1f %% drop not flagged", spec, 100*got.Change)
		}
		for _, l := range ls {
			if l.Net == "HT" && l.Significant {
				t.Errorf("%s: the stiff HT rail flagged as loaded (%.3g %%)", spec, 100*l.Change)
			}
		}
	}
}

// A grid fed through a high resistance reads low on a 10 MΩ meter: the
// PP demo's output grids sit at the bias through 220 kΩ (about 2 % low,
// 220k/(220k + 10M) less the pot's share) and the phase inverter's grids at
// the tail through 1 MΩ (more than 1/11 low: the tail follows the grid).
func TestGridReadsLowThroughMeter(t *testing.T) {
	d := load(t, demoB)
	s := run(t, d, Options{})
	ls, err := s.Loading(DefaultMeter())
	if err != nil {
		t.Fatal(err)
	}
	byKey := map[string]Loading{}
	for _, l := range ls {
		byKey[l.Key] = l
	}
	ga := byKey["GA dc_volts"]
	if !ga.Significant || ga.Change < 0.015 || ga.Change > 0.03 || math.Abs(ga.Loaded) >= math.Abs(ga.Unloaded) {
		t.Errorf("GA: %g V reads %g V (%+.2f %%), want 1.5–3 %% nearer zero", ga.Unloaded, ga.Loaded, 100*ga.Change)
	}
	pg := byKey["PIG1 dc_volts"]
	if !pg.Significant || pg.Change > -1.0/11 {
		t.Errorf("PIG1: %g V reads %g V (%+.2f %%), want at least 1/11 low", pg.Unloaded, pg.Loaded, 100*pg.Change)
	}
	// The stiff B1 reservoir is not visibly loaded by 10 MΩ.
	if b1 := byKey["B1 dc_volts"]; b1.Significant {
		t.Errorf("B1 flagged: %+.3f %%", 100*b1.Change)
	}
}

// Conditioning compares a reading with what the meter would show: a grid
// read through a 1 MΩ analogue range at its loaded nominal is consistent
// (not degenerate), while the same value taken as an ideal reading would
// not be.
func TestConditionAppliesMeterLoading(t *testing.T) {
	d := load(t, demoB)
	s := run(t, d, Options{Samples: 300, Seed: 4})
	mt, _ := ParseMeter("20k/V:50V")
	ls, err := s.loadingOf(mt, []string{"PIG1 dc_volts"})
	if err != nil {
		t.Fatal(err)
	}
	loaded := ls[0].Loaded
	c, err := s.Condition([]Reading{{Key: "PIG1 dc_volts", Value: loaded, Meter: mt}})
	if err != nil {
		t.Fatal(err)
	}
	if c.Degenerate {
		t.Errorf("a loaded nominal reading was called degenerate: %s", c.Reason)
	}
	c2, err := s.Condition([]Reading{{Key: "PIG1 dc_volts", Value: loaded, Meter: DefaultMeter()}})
	if err != nil {
		t.Fatal(err)
	}
	if !c2.Degenerate {
		t.Errorf("%g V on PIG1 through 10 MΩ (nominal %g V) not flagged", loaded, ls[0].Unloaded)
	}
}

// A screen fed from its supply net through a stopper (V3's screen, pin 4,
// from B3 through R24, 470 Ω, in the stereo demo) carries the screen
// current's drop below B3 in every healthy amp (Ohm's law: a few volts at
// a few mA): once B3 is read, the screen is never expected above that
// reading, and B2 (feeding B3 through R2) never below it. Readings at the
// nominal B3 and 1.5 % either side of it.
func TestConditionRespectsTheCircuit(t *testing.T) {
	d := load(t, demoA)
	s := run(t, d, Options{Samples: 300, Seed: 3})
	ib, _ := s.Index("B3 dc_volts")
	nom := s.Nominal[ib]
	for _, f := range []float64{0.985, 1, 1.015} {
		v := math.Round(nom*f*10) / 10
		c, err := s.Condition([]Reading{{Key: "B3 dc_volts", Value: v}})
		if err != nil {
			t.Fatal(err)
		}
		scr, err := c.Expect("V3.4 dc_volts", Meter{})
		if err != nil {
			t.Fatal(err)
		}
		up, err := c.Expect("B2 dc_volts", Meter{})
		if err != nil {
			t.Fatal(err)
		}
		t.Logf("B3 read %.1f V: V3 screen %s (%.1f – %.1f V), B2 %s (%.1f – %.1f V); %s", v, scr.Format(), scr.Low, scr.High, up.Format(), up.Low, up.High, scr.Why[len(scr.Why)-1])
		if scr.High > v {
			t.Errorf("B3 read %.1f V: screen expected up to %g V, above its own feed", v, scr.High)
		}
		if up.Low < v {
			t.Errorf("B3 read %.1f V: B2 expected down to %g V, below the net it feeds", v, up.Low)
		}
		if !(scr.Low < scr.High) {
			t.Errorf("B3 read %.1f V: screen band %s is empty", v, scr.Format())
		}
		why := strings.Join(scr.Why, "; ")
		if !strings.Contains(why, "narrowed by your B3 reading") {
			t.Errorf("screen why %q lacks the reading it was narrowed by", why)
		}
	}
}
