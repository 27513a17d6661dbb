package bands

import (
	"fmt"
	"math"

	"pinwalk/expect/amp"
)

// Expect returns the band a reading of the point key ("V3.3 dc_volts")
// should fall in on a healthy amplifier, read with meter mt (zero: the
// set's Options.Meter, else DefaultMeter):
//
//  1. the model's spread: the 2.5th and 97.5th percentiles of the
//     samples (weighted, when the set is conditioned on readings, about
//     the weighted median), or the nominal value alone without samples;
//  2. for DC volts, the meter's loading of the net (its input resistance
//     re-solved at nominal) when it moves the reading by over 1 %;
//  3. the model error of the kind of point (ModelErrorOf) and the meter's
//     error limit on the range in use, combined in quadrature
//     (readingBand);
//  4. the low end of a current, an AC reading or a resistance held at 0,
//     the ends rounded outwards to the display's resolution, a nominal
//     below one count flagged BelowResolution;
//  5. for ripple, the peak-to-peak band (PP) beside the rms one.
//
// Band.Why says each of these in words. It is safe for concurrent use.
func (s *Set) Expect(key string, mt Meter) (Band, error) {
	i, ok := s.Index(key)
	if !ok {
		return Band{}, fmt.Errorf("bands: no point %q", key)
	}
	if mt.isZero() {
		mt = s.opt.Meter
	}
	if mt.isZero() {
		mt = DefaultMeter()
	}
	pd := s.Points[i]
	var why []string
	nom := s.Nominal[i]
	lo, hi := nom, nom
	conditioned := len(s.Readings) > 0
	switch {
	case len(s.Values) == 0:
		why = append(why, "nominal solve only (no Monte Carlo samples): tolerances not included")
	default:
		lo, hi = s.Percentiles(i, 0.025, 0.975)
		if conditioned {
			nom, _ = s.Percentiles(i, 0.5, 0.5)
		}
		why = append(why, fmt.Sprintf("tolerances: 95 %% of %d Monte Carlo samples (parts, transformer, mains, valve spread)", len(s.Values)))
	}
	lo, hi = math.Min(lo, nom), math.Max(hi, nom)
	why = append(why, s.conditionWords()...)
	if conditioned {
		for _, r := range s.Readings {
			j, ok := s.Index(r.Key)
			if !ok {
				continue
			}
			q := s.Points[j].Quantity
			rr := mt.RangeFor(q, r.Value)
			why = append(why, fmt.Sprintf("narrowed by your %s reading, %s", s.Points[j].ID, FormatReading(r.Value, q, rr.Res)))
		}
		if s.Degenerate {
			why = append(why, "the readings do not fit a healthy amplifier: "+s.Reason)
		}
	}
	if pd.Quantity == amp.DCVolts {
		if ls, err := s.loadingOf(mt, []string{key}); err == nil && len(ls) == 1 && ls[0].Significant {
			l := ls[0]
			shift := func(x float64) float64 { return x + (l.Loaded - l.Unloaded) }
			if math.Abs(l.Unloaded) > 0.5 {
				f := l.Loaded / l.Unloaded
				shift = func(x float64) float64 { return x * f }
			}
			nom, lo, hi = shift(nom), shift(lo), shift(hi)
			lo, hi = math.Min(lo, hi), math.Max(lo, hi)
			why = append(why, fmt.Sprintf("the meter's %s input pulls net %s from %s to %s", amp.FormatValue(mt.Ohms(), amp.Ohms),
				l.Net, amp.FormatValue(l.Unloaded, amp.DCVolts), amp.FormatValue(l.Loaded, amp.DCVolts)))
		}
	}
	me := ModelErrorOf(pd, s.netElectrode[pd.Net])
	b := readingBand(pd.Quantity, nom, lo, hi, me, mt)
	b.Why = append(why, b.Why...)
	if pd.Quantity == amp.RippleVolts {
		s.addPP(&b, pd)
	}
	return b, nil
}

// conditionWords describe the bench conditions of the set.
func (s *Set) conditionWords() []string {
	var out []string
	c := s.Cond
	if v := c.Variac; v > 0 && v != 1 {
		out = append(out, fmt.Sprintf("variac at %.0f %% of the mains", 100*v))
		if v < 0.9 {
			out = append(out, "heaters cool: valve currents are emission-limited estimates")
		}
	}
	if s.opt.FixedMains && c.MainsVolts > 0 {
		out = append(out, "mains as measured, "+amp.FormatValue(c.MainsVolts, amp.ACVolts))
	} else if s.d != nil {
		out = append(out, fmt.Sprintf("mains %s sampled within %+.0f/%+.0f %%", amp.FormatValue(s.d.Mains.Volts, amp.ACVolts),
			100*s.d.Mains.Tol.Lo, 100*s.d.Mains.Tol.Hi))
	}
	return out
}

// addPP sets the peak-to-peak band of a ripple reading: the rms band
// scaled by the nominal waveform's ratio of peak-to-peak to rms (the full
// simulation's; a sawtooth has 2√3 ≈ 3.46).
func (s *Set) addPP(b *Band, pd amp.PointDef) {
	op := s.NominalOP
	if op == nil || op.Supply == nil {
		return
	}
	for _, n := range op.Supply.Nets {
		if n.Net != pd.Net || !(n.RippleRms > 0) || !(n.RipplePP > 0) {
			continue
		}
		k := n.RipplePP / n.RippleRms
		pp := &Band{Nominal: b.Nominal * k, Low: b.Low * k, High: b.High * k, Quantity: amp.RippleVolts, Function: "peak to peak (oscilloscope)"}
		b.PP = pp
		b.Why = append(b.Why, fmt.Sprintf("peak to peak on a scope %s – %s: the rms band times the simulated waveform's pp/rms ratio, %.2f",
			amp.FormatValue(pp.Low, amp.RippleVolts), amp.FormatValue(pp.High, amp.RippleVolts), k))
	}
}

// FromSpread returns the band of a reading of quantity whose model value
// is nominal, lying within lo…hi by the parts' tolerances (a cold
// resistance's tolerance corners, say), read with meter mt (zero:
// DefaultMeter), with the model error of the quantity (ModelErrorOf with
// no electrode) — the same widening, clamping and rounding as Set.Expect.
// why is put first in Band.Why.
func FromSpread(quantity string, nominal, lo, hi float64, mt Meter, why ...string) Band {
	lo, hi = math.Min(lo, nominal), math.Max(hi, nominal)
	b := readingBand(quantity, nominal, lo, hi, ModelErrorOf(amp.PointDef{Quantity: quantity}, ""), mt)
	b.Why = append(append([]string(nil), why...), b.Why...)
	return b
}

// Format prints the band as the meter shows it: "415 V – 467 V", "under
// 0.4 Ω" when the nominal is below the meter's resolution and the band
// starts at 0.
func (b Band) Format() string {
	res := b.Range.Res
	if b.BelowResolution && b.Low == 0 {
		return "under " + FormatReading(b.High, b.Quantity, res)
	}
	return FormatReading(b.Low, b.Quantity, res) + " – " + FormatReading(b.High, b.Quantity, res)
}

// FormatNominal prints the nominal value as the meter shows it: 0 when it
// is below one count of the range.
func (b Band) FormatNominal() string {
	if b.BelowResolution {
		return FormatReading(0, b.Quantity, b.Range.Res)
	}
	return FormatReading(b.Nominal, b.Quantity, b.Range.Res)
}
