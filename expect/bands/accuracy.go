package bands

import (
	"fmt"
	"math"
	"strconv"
	"strings"

	"pinwalk/expect/amp"
	"pinwalk/expect/units"
)

// Spec is a digital meter's accuracy on one function: ±(Pct % of the
// reading + Digits counts of the last digit of the range in use).
type Spec struct {
	Pct, Digits float64
}

func (sp Spec) isZero() bool { return sp.Pct == 0 && sp.Digits == 0 }

// String prints "0.5 % + 2 digits".
func (sp Spec) String() string {
	return strconv.FormatFloat(sp.Pct, 'f', -1, 64) + " % + " + strconv.FormatFloat(sp.Digits, 'f', -1, 64) + " digits"
}

// TypicalSpecs are the accuracies a typical handheld multimeter states
// (common practice; the figures of no one model): DC volts 0.5 % + 2
// digits, AC volts (true rms, 50–400 Hz) 1.0 % + 3, DC current 1.0 % + 3,
// AC current 1.5 % + 3, resistance 0.8 % + 3.
var TypicalSpecs = map[string]Spec{
	amp.DCVolts: {0.5, 2}, amp.ACVolts: {1.0, 3}, amp.RippleVolts: {1.0, 3},
	amp.DCAmps: {1.0, 3}, amp.ACAmps: {1.5, 3}, amp.Ohms: {0.8, 3},
}

// Function names the meter function a quantity is read on.
func Function(quantity string) string {
	switch quantity {
	case amp.DCVolts:
		return "DC volts"
	case amp.ACVolts, amp.RippleVolts:
		return "AC volts (true rms)"
	case amp.DCAmps:
		return "DC current"
	case amp.ACAmps:
		return "AC current (true rms)"
	case amp.Ohms:
		return "ohms"
	}
	return quantity
}

// Range is one range of a meter function: its full scale and the value of
// one count (the resolution).
type Range struct {
	Full, Res float64
}

// Name prints "the 600 V range".
func (r Range) Name(quantity string) string {
	return "the " + amp.FormatValue(r.Full, quantity) + " range"
}

// functionLimits: per function, the finest resolution (the lowest range's
// last digit at 6000 counts) and the top of the highest range, of a
// typical handheld meter (common practice): DC volts 0.1 mV to 1000 V, AC
// volts 0.1 mV to 750 V, currents 0.1 µA to 10 A, resistance 0.1 Ω to
// 60 MΩ.
func functionLimits(quantity string) (minRes, top float64) {
	switch quantity {
	case amp.ACVolts, amp.RippleVolts:
		return 1e-4, 750
	case amp.DCAmps, amp.ACAmps:
		return 1e-7, 10
	case amp.Ohms:
		return 0.1, 60e6
	}
	return 1e-4, 1000
}

// counts is the meter's display counts (0: 6000).
func (mt Meter) counts() float64 {
	if mt.Counts > 0 {
		return float64(mt.Counts)
	}
	return 6000
}

// RangeFor returns the range an autoranging meter uses for a reading of
// |x| on the function of quantity: the lowest range whose full scale
// (counts × a power-of-ten resolution) holds |x|, the top range beyond
// (its resolution the power of ten that shows it in the counts). An
// analogue meter's DC-volts range is the one it was set to, with one
// fiftieth of full scale as what can be read off its scale (common
// practice: a 50-division scale).
func (mt Meter) RangeFor(quantity string, x float64) Range {
	if mt.OhmsPerVolt > 0 && quantity == amp.DCVolts {
		return Range{Full: mt.RangeVolts, Res: mt.RangeVolts / 50}
	}
	minRes, top := functionLimits(quantity)
	n := mt.counts()
	ax := math.Abs(x)
	res := minRes
	if ax > n*minRes {
		res = math.Pow(10, math.Ceil(math.Log10(ax/n)-1e-12))
	}
	full := n * res
	if full > top {
		full = top
		res = math.Pow(10, math.Ceil(math.Log10(top/n)-1e-12))
	}
	return Range{Full: full, Res: res}
}

// SpecFor returns the meter's accuracy on the function of quantity.
func (mt Meter) SpecFor(quantity string) Spec {
	var sp Spec
	switch quantity {
	case amp.DCVolts:
		sp = Spec{mt.AccuracyPct, mt.Digits}
	case amp.ACVolts, amp.RippleVolts:
		sp = mt.ACVolts
	case amp.DCAmps:
		sp = mt.DCAmps
	case amp.ACAmps:
		sp = mt.ACAmps
	case amp.Ohms:
		sp = mt.Resistance
	}
	if sp.isZero() {
		sp = TypicalSpecs[quantity]
	}
	return sp
}

// ErrorLimit returns the meter's error limit for a reading x of quantity
// and the range it is read on: Pct % of |x| plus Digits counts of the
// range's resolution (an analogue meter on DC volts: AccuracyPct % of
// full scale).
func (mt Meter) ErrorLimit(quantity string, x float64) (float64, Range) {
	if mt.isZero() {
		mt = DefaultMeter()
	}
	r := mt.RangeFor(quantity, x)
	if mt.OhmsPerVolt > 0 && quantity == amp.DCVolts {
		return mt.AccuracyPct / 100 * mt.RangeVolts, r
	}
	sp := mt.SpecFor(quantity)
	return sp.Pct/100*math.Abs(x) + sp.Digits*r.Res, r
}

// Describe says what the meter's error is on a reading of quantity on
// range r: "meter 0.5 % + 2 digits on the 600 V range (6000 counts)".
func (mt Meter) Describe(quantity string, r Range) string {
	if mt.isZero() {
		mt = DefaultMeter()
	}
	if mt.OhmsPerVolt > 0 && quantity == amp.DCVolts {
		return fmt.Sprintf("meter %g %% of full scale on %s (analogue)", mt.AccuracyPct, r.Name(quantity))
	}
	return fmt.Sprintf("meter %s on %s (%.0f counts, %s)", mt.SpecFor(quantity), r.Name(quantity), mt.counts(), Function(quantity))
}

// ParseAccuracy reads a digital meter's accuracy: "0.5%+2" (% of reading
// + digits) for every function, or per function, comma separated:
// "dcv=0.5%+2,acv=1%+3,dca=1%+3,aca=1.5%+3,ohm=0.8%+3" (functions not
// named keep their figures in mt). It returns mt with the figures set.
func ParseAccuracy(mt Meter, s string) (Meter, error) {
	s = strings.TrimSpace(s)
	if s == "" {
		return mt, nil
	}
	one := func(t string) (Spec, error) {
		t = strings.ReplaceAll(strings.TrimSpace(t), " ", "")
		pct, dig, ok := strings.Cut(t, "%")
		dig = strings.TrimPrefix(dig, "+")
		dig = strings.TrimSuffix(strings.TrimSuffix(strings.TrimSuffix(dig, "digits"), "digit"), "d")
		p, err1 := strconv.ParseFloat(pct, 64)
		d := 0.0
		var err2 error
		if dig != "" {
			d, err2 = strconv.ParseFloat(dig, 64)
		}
		if !ok || err1 != nil || err2 != nil || p < 0 || p > 20 || d < 0 || d > 100 {
			return Spec{}, fmt.Errorf("accuracy %q: expected %% of reading + digits, like 0.5%%+2", t)
		}
		return Spec{p, d}, nil
	}
	if !strings.Contains(s, "=") {
		sp, err := one(s)
		if err != nil {
			return mt, err
		}
		mt.AccuracyPct, mt.Digits = sp.Pct, sp.Digits
		mt.ACVolts, mt.DCAmps, mt.ACAmps, mt.Resistance = sp, sp, sp, sp
		return mt, nil
	}
	for _, part := range strings.Split(s, ",") {
		fn, val, ok := strings.Cut(part, "=")
		if !ok {
			return mt, fmt.Errorf("accuracy %q: expected FUNCTION=%%+digits, like dcv=0.5%%+2", part)
		}
		sp, err := one(val)
		if err != nil {
			return mt, err
		}
		switch strings.ToLower(strings.TrimSpace(fn)) {
		case "dcv":
			mt.AccuracyPct, mt.Digits = sp.Pct, sp.Digits
		case "acv":
			mt.ACVolts = sp
		case "dca":
			mt.DCAmps = sp
		case "aca":
			mt.ACAmps = sp
		case "ohm", "ohms":
			mt.Resistance = sp
		default:
			return mt, fmt.Errorf("accuracy %q: unknown function %q: expected dcv, acv, dca, aca or ohm", part, fn)
		}
	}
	return mt, nil
}

// ModelError is the solver's own error against a real amplifier built
// to the design, as a 95 % limit: Frac of the value plus Abs. Class names
// what it is for.
type ModelError struct {
	Class     string
	Frac, Abs float64
	Source    string
}

// Limit is the model error at a value x.
func (e ModelError) Limit(x float64) float64 { return e.Frac*math.Abs(x) + e.Abs }

// Model-error limits per kind of point (95 %), from what the tests
// measure:
//
//   - Plate, screen and supply volts: the supply simulation's DC agrees
//     with Schade's closed forms within 2 % (expect/supply TestSchade*),
//     the fast solve with the full within 1 % (TestFastAgainstFull), and
//     the valve fits' worst datasheet row is 4.4 % off in Ia (rms 1.9 %,
//     TestStageAgainstDatasheetRows) which moves a plate by its share of
//     the drop in its load (about half of B+ in a resistance-coupled
//     stage, so about 2 %): 3 % in all, plus 0.2 V.
//   - Cathode volts and every current: proportional to the valve current,
//     so the fit error itself: 5 % (covers the worst row, 4.4 %), plus
//     2 mV or 0.1 µA.
//   - Grid volts: the bias arithmetic is resistive (3 % as plate volts);
//     a grid returned to chassis sits at 0 V only to within its grid
//     current and leakage through the grid leak, tens of nA through 1 MΩ
//     (common practice): plus 20 mV.
//   - Heater volts and the rectifier plates' AC volts: the heater winding
//     model is its rated volts with a DCR drop, and the HT winding's rms
//     under load an in-phase approximation; small mains transformers hold
//     about 3 % of their stated volts beyond their ratio (common practice):
//     3 %, plus 20 mV. Heater current: 5 % (a constant-resistance heater;
//     common practice).
//   - Ripple: the simulated rms is within 15 % of the sawtooth closed form
//     (supply TestRipple*), the fast solve's ripple scaling within 10 % of
//     the full (TestFastAgainstFull): 15 %, plus 0.5 mV (hum pick-up on the
//     leads; common practice).
//   - Cold resistance: tolerance corners are exact (Rayleigh), but probe
//     contact and nulled leads add about 0.1 Ω (common practice): 1 %
//     plus 0.1 Ω.
var (
	ModelPlate   = ModelError{"plate", 0.03, 0.2, "supply against Schade 2 %, valve fits ≤ 4.4 % in Ia"}
	ModelCathode = ModelError{"cathode", 0.05, 2e-3, "valve fits ≤ 4.4 % in Ia"}
	ModelGrid    = ModelError{"grid", 0.03, 20e-3, "bias divider; grid current and leakage (common practice)"}
	ModelCurrent = ModelError{"current", 0.05, 1e-7, "valve fits ≤ 4.4 % in Ia"}
	ModelHeaterV = ModelError{"heater volts", 0.03, 20e-3, "winding regulation (common practice)"}
	ModelHeaterA = ModelError{"heater current", 0.05, 1e-3, "constant-resistance heater (common practice)"}
	ModelRipple  = ModelError{"ripple", 0.15, 0.5e-3, "simulated ripple against the sawtooth closed form 15 %"}
	// ModelTone: the small-signal model leaves out interelectrode and
	// Miller capacitances, output-transformer leakage and the valves'
	// spread of mu beyond their Koren fit (our choice: 5 % of the level
	// as one σ, so 10 % at 95 %, plus 2 mV of hum and noise on any tone
	// reading).
	ModelTone = ModelError{"tone level", 0.10, 2e-3, "small-signal model, no stray capacitances (our choice)"}
	ModelOhms = ModelError{"ohms cold", 0.01, 0.1, "probe contact after nulling the leads (common practice)"}
)

// ModelErrorOf returns the model-error limit of a point. electrode is the
// valve electrode on the point's net ("" when none).
func ModelErrorOf(pd amp.PointDef, electrode string) ModelError {
	switch pd.Quantity {
	case amp.DCAmps:
		return ModelCurrent
	case amp.ACVolts:
		return ModelHeaterV
	case amp.ACAmps:
		return ModelHeaterA
	case amp.RippleVolts:
		return ModelRipple
	case amp.Ohms:
		return ModelOhms
	}
	if electrode == "" {
		electrode = pd.Electrode
	}
	switch electrode {
	case "cathode", "grid 3":
		return ModelCathode
	case "grid":
		return ModelGrid
	}
	return ModelPlate
}

// Band of a reading from its model spread. spread gives the nominal and
// the 95 % low and high of the model's values (Monte Carlo percentiles or
// tolerance corners). The half-widths below and above the nominal are
// combined in quadrature (independent errors, each at 95 %) with the
// model error and the meter's: a meter's stated limit taken as uniform
// within ± the limit (GUM 4.3.7), whose 95 % half-width is 0.95 of the
// limit. Then the low end of a quantity that cannot go negative (a
// current, an AC reading, ohms) is held at 0, and the ends are rounded
// outwards to the display's resolution: a meter cannot show less.
func readingBand(quantity string, nominal, lo, hi float64, me ModelError, mt Meter) Band {
	if mt.isZero() {
		mt = DefaultMeter()
	}
	top := math.Max(math.Abs(hi), math.Max(math.Abs(lo), math.Abs(nominal)))
	top += me.Limit(top)
	lim, r := mt.ErrorLimit(quantity, top)
	mLo, mHi := me.Limit(lo), me.Limit(hi)
	// The digits are those of the range in use (the band's top), not of
	// the range each end would pick on its own.
	eLo, eHi := lim, lim
	if !(mt.OhmsPerVolt > 0 && quantity == amp.DCVolts) {
		sp := mt.SpecFor(quantity)
		eLo = sp.Pct/100*math.Abs(lo) + sp.Digits*r.Res
		eHi = sp.Pct/100*math.Abs(hi) + sp.Digits*r.Res
	}
	dLo := math.Sqrt(sq(nominal-lo) + sq(mLo) + sq(0.95*eLo))
	dHi := math.Sqrt(sq(hi-nominal) + sq(mHi) + sq(0.95*eHi))
	b := Band{Nominal: nominal, Low: nominal - dLo, High: nominal + dHi, Quantity: quantity,
		Function: Function(quantity), Range: r}
	b.Why = append(b.Why, mt.Describe(quantity, r))
	b.Why = append(b.Why, fmt.Sprintf("model error %g %% + %s (%s: %s)", 100*me.Frac, amp.FormatValue(me.Abs, quantity), me.Class, me.Source))
	if nonNegative(quantity) && nominal >= 0 && b.Low < 0 {
		b.Low = 0
		b.Why = append(b.Why, "low end held at 0: this reading cannot go below zero")
	}
	b.Low = math.Floor(b.Low/r.Res+1e-9) * r.Res
	b.High = math.Ceil(b.High/r.Res-1e-9) * r.Res
	if math.Abs(nominal) < r.Res {
		b.BelowResolution = true
		b.Why = append(b.Why, fmt.Sprintf("below the meter's resolution (%s on %s): it shows %s",
			amp.FormatValue(r.Res, quantity), r.Name(quantity), FormatReading(0, quantity, r.Res)))
	}
	return b
}

func sq(x float64) float64 { return x * x }

// ReadingSigma is the standard deviation of a reading x's error against
// the model: the model error me (a 95 % limit, σ = limit/1.96) and the
// meter's error limit on the quantity's function and the range x is read
// on (uniform, σ = limit/√3, GUM 4.3.7), in quadrature. readingBand adds
// the same two errors, at 95 %, to the model's spread; Sigma and
// Set.SigmaOf weigh readings with it, and diagnosis every reading, DC or
// AC (a tone level with ModelTone).
func ReadingSigma(quantity string, x float64, me ModelError, mt Meter) float64 {
	if mt.isZero() {
		mt = DefaultMeter()
	}
	lim, _ := mt.ErrorLimit(quantity, x)
	return math.Sqrt(sq(me.Limit(x)/1.96) + sq(lim/math.Sqrt(3)))
}

// nonNegative: quantities whose healthy reading has one sign.
func nonNegative(q string) bool {
	switch q {
	case amp.DCAmps, amp.ACAmps, amp.ACVolts, amp.RippleVolts, amp.Ohms:
		return true
	}
	return false
}

// FormatReading prints a value as a meter with resolution res shows it:
// rounded to the resolution, 0 when below half of it ("0 V", never
// "81.4e-15 V"), then in engineering notation with the quantity's unit.
func FormatReading(v float64, quantity string, res float64) string {
	if res > 0 {
		v = math.Round(v/res) * res
		if math.Abs(v) < res/2 {
			v = 0
		}
	}
	return units.FormatMeasured(v, unitOf(quantity), res)
}

func unitOf(quantity string) units.Quantity {
	switch quantity {
	case amp.DCVolts, amp.ACVolts, amp.RippleVolts:
		return units.Volts
	case amp.DCAmps, amp.ACAmps:
		return units.Amps
	case amp.Ohms:
		return units.Ohms
	}
	return units.None
}
