package bands

import (
	"math"
	"strings"
	"testing"

	"pinwalk/expect/amp"
	"pinwalk/expect/design"
)

func parseDesign(t *testing.T, src string) *design.Design {
	t.Helper()
	d, probs := design.Parse("test.yaml", []byte(src))
	if errs := probs.Errors(); len(errs) > 0 || d == nil {
		t.Fatalf("parse: %v", errs)
	}
	return d
}

// The ranges of a 6000-count and a 2000-count handheld (common practice:
// 600 mV … 600 V and 1000 V; 200 mV … 200 V and 1000 V).
func TestRangeFor(t *testing.T) {
	six, two := DigitalMeter, DigitalMeter
	two.Counts = 2000
	cases := []struct {
		mt        Meter
		q         string
		x         float64
		full, res float64
	}{
		{six, amp.DCVolts, 441, 600, 0.1},
		{six, amp.DCVolts, 700, 1000, 1},
		{six, amp.DCVolts, 50, 60, 0.01},
		{six, amp.DCVolts, 0, 0.6, 1e-4},
		{six, amp.DCVolts, 81.4e-15, 0.6, 1e-4},
		{two, amp.DCVolts, 441, 1000, 1},
		{two, amp.DCVolts, 150, 200, 0.1},
		{six, amp.Ohms, 0.05, 600, 0.1},
		{six, amp.DCAmps, 41e-3, 60e-3, 1e-5},
		{six, amp.ACVolts, 6.35, 60, 0.01},
	}
	for _, c := range cases {
		r := c.mt.RangeFor(c.q, c.x)
		if math.Abs(r.Full-c.full) > 1e-9*c.full || math.Abs(r.Res-c.res) > 1e-9*c.res {
			t.Errorf("%d counts, %s %g: range %g res %g, want %g res %g", c.mt.Counts, c.q, c.x, r.Full, r.Res, c.full, c.res)
		}
	}
}

// A resistor divider, 100 V across 10 kΩ + 10 kΩ: the tap is at 50 V
// (closed form, V·R2/(R1 + R2)); a 10 MΩ meter pulls it by 5 kΩ/10 MΩ
// = 0.05 %, under the 1 % that counts as loading (a 12AX7 stage on the
// rail, so there is something to solve, does not touch it). Nominal only, so the
// band is the meter and the model error alone: meter 0.5 % + 2 digits
// on the 60 V range (10 mV) = 0.27 V at 50 V, model error 3 % + 0.2 V =
// 1.7 V (ModelPlate), in quadrature with 0.95 of the meter's limit
// (uniform within its limit, GUM 4.3.7): ±√(1.7² + 0.2565²) = ±1.7192 V,
// rounded outwards to 10 mV: 48.28 V – 51.72 V.
func TestExpectDividerClosedForm(t *testing.T) {
	d := parseDesign(t, `pinwalk: 1
title: divider
mains: {volts: 230, hz: 50, tolerance: 6%}
parts:
  T1:
    power-transformer:
      primary: {volts: 230, dcr: 40R}
      secondaries:
        HEATER: {volts: 6.3, rated: 1A, dcr: 0R2, ends: [H1, H2], centre: 0V}
  U1: {dc-supply: 100V, between: [HT, 0V]}
  R1: {resistor: 10k, between: [HT, TAP]}
  R2: {resistor: 10k, between: [TAP, 0V]}
  V1:
    valve: 12AX7
    A: {plate: P1, grid: G1, cathode: K1}
    B: unused
    heater: [H1, H2]
  R3: {resistor: 100k, between: [HT, P1]}
  R4: {resistor: 1M, between: [G1, 0V]}
  R5: {resistor: 1k5, between: [K1, 0V]}
`)
	s := run(t, d, Options{})
	b, err := s.Expect("TAP dc_volts", Meter{})
	if err != nil {
		t.Fatal(err)
	}
	if math.Abs(b.Nominal-50) > 1e-5 { // the solver's Gmin and 1 mΩ source floor move it by µV
		t.Errorf("nominal %g V, want 50 V", b.Nominal)
	}
	if math.Abs(b.Low-48.28) > 1e-9 || math.Abs(b.High-51.72) > 1e-9 {
		t.Errorf("band %.6g – %.6g V, want 48.28 – 51.72 V; why %q", b.Low, b.High, b.Why)
	}
	if b.Function != "DC volts" || b.Range.Full != 60 {
		t.Errorf("function %q range %g", b.Function, b.Range.Full)
	}
	all := strings.Join(b.Why, "; ")
	for _, w := range []string{"meter 0.5 % + 2 digits on the 60 V range", "model error 3 %", "nominal solve only"} {
		if !strings.Contains(all, w) {
			t.Errorf("why %q lacks %q", all, w)
		}
	}
	// A 1 % + 5 digits meter on a 2000-count display: 20 V… no, the 200 V
	// range (0.1 V): limit 0.5 + 0.5 = 1 V, ±√(1.7² + 0.95²) = ±1.9474 V,
	// rounded outwards to 0.1 V: 48.0 – 52.0 V.
	mt, err := ParseAccuracy(DigitalMeter, "1%+5")
	if err != nil {
		t.Fatal(err)
	}
	mt.Counts = 2000
	b, _ = s.Expect("TAP dc_volts", mt)
	if math.Abs(b.Low-48.0) > 1e-9 || math.Abs(b.High-52.0) > 1e-9 {
		t.Errorf("1 %%+5 on 2000 counts: band %.6g – %.6g V, want 48.0 – 52.0 V", b.Low, b.High)
	}
}

// The tap of a divider whose resistors spread: with samples, the band
// is the samples' 95 % spread widened by the same terms, never narrower
// than the spread itself and never narrower than the nominal-only band.
func TestExpectWidensSpread(t *testing.T) {
	d := load(t, demoB)
	s := run(t, d, Options{Samples: 300, Seed: 3})
	for _, key := range []string{"V3.3 dc_volts", "V1.8 dc_volts", "V3.3 dc_amps", "B1 ripple_volts", "V3.2 ac_volts"} {
		raw := band(t, s, key)
		b, err := s.Expect(key, Meter{})
		if err != nil {
			t.Fatal(err)
		}
		if !(b.Low <= raw.Low && b.High >= raw.High) || !(b.Width() > raw.Width()) {
			t.Errorf("%s: reading band %g – %g not wider than the spread %g – %g", key, b.Low, b.High, raw.Low, raw.High)
		}
	}
}

// A 50 mΩ heater winding on a meter whose lowest ohms range shows 0.1 Ω:
// the reading band starts at 0 and says the value is below resolution;
// meter 0.8 % + 3 digits = 0.30 Ω, contact 0.1 Ω: under 0.4 Ω.
func TestBelowResolution(t *testing.T) {
	b := FromSpread(amp.Ohms, 0.05, 0.045, 0.055, Meter{}, "tolerance corners")
	if !b.BelowResolution || b.Low != 0 || math.Abs(b.High-0.4) > 1e-9 {
		t.Errorf("50 mΩ: band %g – %g, below resolution %v", b.Low, b.High, b.BelowResolution)
	}
	if got := b.Format(); got != "under 400 mΩ" {
		t.Errorf("Format = %q", got)
	}
	if b.Why[0] != "tolerance corners" || !strings.Contains(strings.Join(b.Why, ";"), "below the meter's resolution (100 mΩ on the 600 Ω range)") {
		t.Errorf("why %q", b.Why)
	}
	if got := b.FormatNominal(); got != "0 Ω" {
		t.Errorf("nominal shows %q, want 0 Ω", got)
	}
}

// A current's band never goes below zero; neither does an AC one.
func TestNonNegative(t *testing.T) {
	for _, q := range []string{amp.DCAmps, amp.ACAmps, amp.RippleVolts, amp.ACVolts, amp.Ohms} {
		b := FromSpread(q, 1.55e-3, 0, 5.76e-3, Meter{})
		if b.Low < 0 {
			t.Errorf("%s: low %g", q, b.Low)
		}
	}
	// A negative DC volts band keeps its sign.
	b := FromSpread(amp.DCVolts, -71, -78, -64, Meter{})
	if !(b.Low < -78 && b.High > -64) {
		t.Errorf("bias band %g – %g", b.Low, b.High)
	}
}

// Ripple is read on the AC function (true rms) and carried with its
// peak-to-peak band; the first filter net of demo (b) has a reservoir
// ripple whose waveform is near a sawtooth (pp/rms near 2√3 ≈ 3.46,
// Schade 1943; between 2√2 for a sine and 2√3).
func TestRippleBand(t *testing.T) {
	d := load(t, demoB)
	s := run(t, d, Options{Samples: 100, Seed: 1})
	b, err := s.Expect("B1 ripple_volts", Meter{})
	if err != nil {
		t.Fatal(err)
	}
	if b.Function != "AC volts (true rms)" || b.PP == nil || b.Low < 0 {
		t.Fatalf("ripple band %+v", b)
	}
	k := b.PP.Nominal / b.Nominal
	if !(k > 2.7 && k < 3.7) {
		t.Errorf("pp/rms %.3f, want between 2√2 and 2√3 (+7 %%)", k)
	}
	// B4 is filtered to below a millivolt: below the AC range's resolution.
	b4, _ := s.Expect("B4 ripple_volts", Meter{})
	if !b4.BelowResolution || b4.Low != 0 || b4.FormatNominal() != "0 V" {
		t.Errorf("B4 ripple %+v", b4)
	}
}

func TestFormatReadingTiny(t *testing.T) {
	if got := FormatReading(81.4e-15, amp.DCVolts, 1e-4); got != "0 V" {
		t.Errorf("81.4e-15 V shows %q", got)
	}
	if got := FormatReading(-0.00004, amp.DCVolts, 1e-4); got != "0 V" {
		t.Errorf("-40 µV shows %q", got)
	}
	// A 6000-count meter on its 600 V range shows tenths of a volt.
	if got := FormatReading(441.23, amp.DCVolts, 0.1); got != "441.2 V" {
		t.Errorf("441.23 V shows %q", got)
	}
	// Small values keep SI prefixes at the meter's resolution: 1.2 mA on
	// the 6 mA range (1 µA a count), 37.3 mV on the 60 mV AC range.
	if got := FormatReading(1.2345e-3, amp.DCAmps, 1e-6); got != "1.235 mA" {
		t.Errorf("1.2345 mA shows %q", got)
	}
	if got := FormatReading(0.03731, amp.RippleVolts, 1e-5); got != "37.31 mV" {
		t.Errorf("37.31 mV shows %q", got)
	}
}

// Honest widths on the demos' own points, at full mains and at 25 %
// variac (where valves barely conduct and currents are near zero): no
// current, AC or ripple band goes below 0; every ripple band is read on
// the AC function (true rms) and carries its peak-to-peak band, also not
// below 0; no band end prints with an exponent ("81.4e-15 V") and every
// end is a whole number of counts of the range it is read on.
func TestHonestWidthsOnDemos(t *testing.T) {
	for _, path := range []string{demoA, demoB} {
		d := load(t, path)
		for _, v := range []float64{1, 0.25} {
			s := run(t, d, Options{Samples: 100, Seed: 5, Cond: amp.Conditions{Variac: v}})
			for _, pd := range s.Points {
				b, err := s.Expect(pd.Key(), Meter{})
				if err != nil {
					t.Fatal(err)
				}
				if nonNegative(pd.Quantity) && b.Low < 0 {
					t.Errorf("%s at %g: %s band starts at %g", path, v, pd.Key(), b.Low)
				}
				if pd.Quantity == amp.RippleVolts {
					if b.Function != "AC volts (true rms)" || b.PP == nil || b.PP.Low < 0 || !(b.PP.High >= b.High) {
						t.Errorf("%s at %g: %s ripple band %+v", path, v, pd.Key(), b)
					}
				}
				f := b.Format()
				if strings.Contains(f, "e-") || strings.Contains(f, "e+") {
					t.Errorf("%s at %g: %s prints %q", path, v, pd.Key(), f)
				}
				for _, x := range []float64{b.Low, b.High} {
					if c := x / b.Range.Res; math.Abs(c-math.Round(c)) > 1e-6 {
						t.Errorf("%s at %g: %s end %g is not a whole count of %g", path, v, pd.Key(), x, b.Range.Res)
					}
				}
			}
		}
	}
}

func TestParseAccuracy(t *testing.T) {
	mt, err := ParseAccuracy(DigitalMeter, "dcv=0.1%+1, ohm=1%+5")
	if err != nil {
		t.Fatal(err)
	}
	if mt.SpecFor(amp.DCVolts) != (Spec{0.1, 1}) || mt.SpecFor(amp.Ohms) != (Spec{1, 5}) || mt.SpecFor(amp.ACVolts) != TypicalSpecs[amp.ACVolts] {
		t.Errorf("specs %+v", mt)
	}
	for _, bad := range []string{"0.5", "x%+2", "dcv=0.5%+2,foo=1%", "50%+2", "0.5%+two"} {
		if _, err := ParseAccuracy(DigitalMeter, bad); err == nil {
			t.Errorf("%q accepted", bad)
		}
	}
}

// A conditioned band says what narrowed it.
func TestExpectConditionedWhy(t *testing.T) {
	d := load(t, demoB)
	s := run(t, d, Options{Samples: 300, Seed: 2})
	c, err := s.Condition([]Reading{{Key: "B2 dc_volts", Value: 430}})
	if err != nil {
		t.Fatal(err)
	}
	b, _ := c.Expect("V3.3 dc_volts", Meter{})
	u, _ := s.Expect("V3.3 dc_volts", Meter{})
	if !strings.Contains(strings.Join(b.Why, ";"), "narrowed by your B2 reading, 430 V") {
		t.Errorf("why %q", b.Why)
	}
	if !(b.Width() < u.Width()) {
		t.Errorf("conditioned %g wide, unconditioned %g", b.Width(), u.Width())
	}
}
