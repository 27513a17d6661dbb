package bands

import (
	"fmt"
	"math"
	"strings"

	"pinwalk/expect/amp"
)

// Reading is one measurement: the point's key (PointDef.Key()), the value
// read (SI units) and the meter it was read with (zero: DefaultMeter).
type Reading struct {
	Key   string
	Value float64
	Meter Meter
}

// MinESS is the effective sample size below which a conditioned set is
// called degenerate.
const MinESS = 20

// Sigma returns the standard deviation of a reading's error against the
// model, for its likelihood: the same two errors the reading band adds to
// the model's spread (readingBand), as standard deviations — the model
// error of the quantity (ModelErrorOf with no electrode: a stated 95 %
// limit, so σ = limit/1.96) and the meter's error on the function and
// range in use (uniform within ± its limit, GUM 4.3.7: σ = limit/√3) — in
// quadrature. Set.SigmaOf gives the σ of a reading at a point, with the
// model error of the electrode on its net.
func Sigma(r Reading, quantity string) float64 {
	return ReadingSigma(quantity, r.Value, ModelErrorOf(amp.PointDef{Quantity: quantity}, ""), r.Meter)
}

// SigmaOf is Sigma for a reading at one of the set's points: the model
// error of the point's kind (ModelErrorOf with the valve electrode on its
// net), the meter's error on the reading's function and range. An
// unknown key gives the σ of its quantity alone.
func (s *Set) SigmaOf(r Reading) float64 {
	i, ok := s.Index(r.Key)
	if !ok {
		_, q, _ := strings.Cut(r.Key, " ")
		return Sigma(r, q)
	}
	pd := s.Points[i]
	return ReadingSigma(pd.Quantity, r.Value, ModelErrorOf(pd, s.netElectrode[pd.Net]), r.Meter)
}

// MisfitAlarmRate is the share of healthy amplifiers on which the "does
// not fit a healthy amplifier" alarm may fire, whatever the number of
// readings (our choice: 1 %, under the 5 % a technician will put up with
// before ignoring the alarm).
const MisfitAlarmRate = 0.01

// MisfitSigmas is how far, in σ of the reading (SigmaOf), a reading must
// lie beyond the samples' 95 % band to count as outside what a healthy
// amplifier reads, when n readings are checked together: the two-sided
// normal quantile of MisfitAlarmRate/n (Bonferroni's bound on the
// family-wise rate: each reading's model and meter error is a chance to
// go wide, so 60 readings need a wider margin than one), and at least 3.
func MisfitSigmas(n int) float64 {
	n = max(n, 1)
	return max(3, math.Sqrt2*math.Erfinv(1-MisfitAlarmRate/float64(n)))
}

// Condition returns a copy of the set whose sample weights are multiplied
// by the likelihood of the readings (Bayes' rule with a flat prior over
// the samples): a Gaussian in (reading − prediction) with σ from SigmaOf.
// A DC-volts prediction is first moved by the meter's loading of that net
// at nominal (the loaded/unloaded ratio, or the difference where the
// nominal is near zero), so a grid read through a 10 MΩ meter is compared
// with what that meter would show.
//
// Weights are computed in log space, so they never underflow to NaN. If
// fewer than MinESS effective samples remain, the set is flagged
// Degenerate with a reason (a reading outside what the model predicts: a
// fault or a design mismatch), and the log-likelihood is tempered (scaled
// by the largest factor in (0, 1] that keeps MinESS samples) so the bands
// lean towards the readings without collapsing onto one sample.
//
// An unknown key is an error. A set with no samples is returned with its
// weights unchanged (and Degenerate set).
func (s *Set) Condition(rs []Reading) (*Set, error) {
	c := *s
	c.Weights = append([]float64(nil), s.Weights...)
	c.Readings = append(append([]Reading(nil), s.Readings...), rs...)
	c.Degenerate, c.Misfit, c.Reason, c.Tempered = false, false, "", 1
	var list []readingFit
	for _, r := range rs {
		i, ok := s.Index(r.Key)
		if !ok {
			return nil, fmt.Errorf("bands: reading of %q: no such point (expected a key like \"V2.3 dc_volts\")", r.Key)
		}
		if math.IsNaN(r.Value) || math.IsInf(r.Value, 0) {
			return nil, fmt.Errorf("bands: reading of %q is %v", r.Key, r.Value)
		}
		pd := s.Points[i]
		e := readingFit{i: i, value: r.Value, sigma: s.SigmaOf(r), ratio: 1}
		if pd.Quantity == amp.DCVolts {
			ls, err := s.loadingOf(r.Meter, []string{r.Key})
			if err == nil && len(ls) == 1 {
				l := ls[0]
				if math.Abs(l.Unloaded) > 0.5 {
					e.ratio = l.Loaded / l.Unloaded
				} else {
					e.offset = l.Loaded - l.Unloaded
				}
			}
		}
		list = append(list, e)
	}
	if len(c.Values) == 0 {
		c.ESS, c.Degenerate = 0, true
		c.Reason = "no converged samples to condition"
		return &c, nil
	}
	logL := make([]float64, len(c.Values))
	for j, row := range c.Values {
		for _, e := range list {
			pred := row[e.i]*e.ratio + e.offset
			z := (e.value - pred) / e.sigma
			logL[j] -= z * z / 2
		}
	}
	weigh := func(lambda float64) float64 {
		best := math.Inf(-1)
		for j := range logL {
			if s.Weights[j] > 0 {
				best = max(best, lambda*logL[j])
			}
		}
		var sw, sw2 float64
		for j := range logL {
			w := 0.0
			if s.Weights[j] > 0 {
				w = s.Weights[j] * math.Exp(lambda*logL[j]-best)
			}
			c.Weights[j] = w
			sw += w
			sw2 += w * w
		}
		if !(sw2 > 0) {
			return 0
		}
		return sw * sw / sw2
	}
	c.ESS = weigh(1)
	if c.ESS >= MinESS || len(c.Values) < MinESS {
		if c.ESS < MinESS {
			c.Degenerate = true
			c.Reason = fmt.Sprintf("only %d converged samples", len(c.Values))
		}
		return &c, nil
	}
	c.Degenerate = true
	c.Reason, c.Misfit = s.outsideReason(list)
	// Temper: the largest λ with ESS(λ) ≥ MinESS, by bisection (ESS falls
	// as λ grows).
	lo, hi := 0.0, 1.0
	for range 40 {
		mid := (lo + hi) / 2
		if weigh(mid) >= MinESS {
			lo = mid
		} else {
			hi = mid
		}
	}
	c.ESS = weigh(lo)
	c.Tempered = lo
	return &c, nil
}

// readingFit is a reading prepared for weighing.
type readingFit struct {
	i      int     // point index
	value  float64 // the reading
	sigma  float64
	ratio  float64 // meter loading applied to predictions: ratio…
	offset float64 // …or offset
}

// outsideReason names the readings that lie outside what the samples
// predict (beyond the samples' 95 % band by more than MisfitSigmas σ of
// the reading); misfit is true when there is one. Readings that are each within reach of the
// model but together leave few samples are not a misfit: with dozens of
// readings the likelihood always rests on a few of a few hundred samples,
// healthy amp or not, so that alone is no evidence of a fault.
func (s *Set) outsideReason(rs []readingFit) (reason string, misfit bool) {
	var bad []string
	k := MisfitSigmas(len(rs))
	for _, r := range rs {
		i, v, sg := r.i, r.value, r.sigma
		b := s.Band(i)
		b.Low, b.High = b.Low*r.ratio+r.offset, b.High*r.ratio+r.offset
		if v < b.Low-k*sg || v > b.High+k*sg {
			q := s.Points[i].Quantity
			bad = append(bad, fmt.Sprintf("%s read %s against an expected %s – %s", s.Points[i].Key(),
				amp.FormatValue(v, q), amp.FormatValue(b.Low, q), amp.FormatValue(b.High, q)))
		}
	}
	if len(bad) == 0 {
		return fmt.Sprintf("the readings together leave few of the %d samples (each reading lies within reach of a healthy amplifier)", len(s.Values)), false
	}
	return strings.Join(bad, "; ") + ": outside what the model predicts for a healthy amplifier built to this design (a fault or a design mismatch)", true
}
