package infer

import (
	"fmt"
	"math"
	"sort"
	"strings"

	"pinwalk/expect/ac"
	"pinwalk/expect/amp"
	"pinwalk/expect/bands"
	"pinwalk/expect/faults"
	"pinwalk/expect/valves"
)

var bandsZeroMeter bands.Meter

func bandsRun(e *Engine, fs []faults.Fault) (*bands.Set, error) {
	return bands.Run(e.d, e.bandsOptions(fs, max(e.opt.Samples/2, 20), e.opt.Seed, e.opt.Workers))
}

// Efforts of a reading (our scale, common practice on the bench).
const (
	CostVolts  = 1.0 // DC or AC volts to chassis, ripple, a cold resistance
	CostPulled = 2.0 // a valve pulled from its socket first
	CostSeries = 3.0 // a current with the meter in series (break the circuit)
)

// activeFloor: hypotheses below this posterior are left out of the
// expected-gain sums (they change the gain by less than a millibit).
const activeFloor = 1e-5

// maxActive bounds the hypotheses in the expected-gain sums.
const maxActive = 60

// openSentinel stands for an open cold reading in the gain computation: a
// value far above every finite reading, with a narrow spread.
const openSentinel = 1e13

// quadrature nodes: a standard normal integrated on t = −4…4 in unit
// steps (trapezoid rule on the density, weights normalised; for a smooth,
// rapidly decaying integrand the trapezoid rule converges geometrically,
// L. N. Trefethen and J. A. C. Weideman, "The exponentially convergent
// trapezoidal rule", SIAM Review 56 (2014) 385–458).
var quadT, quadW = func() ([]float64, []float64) {
	var ts, ws []float64
	s := 0.0
	for t := -4.0; t <= 4.0001; t++ {
		w := math.Exp(-t * t / 2)
		ts, ws = append(ts, t), append(ws, w)
		s += w
	}
	for i := range ws {
		ws[i] /= s
	}
	return ts, ws
}()

// comp is one mixture component of a point's predictive distribution.
type comp struct {
	w, mu, sd float64
}

// nextProbe picks the allowed, unread point with the greatest expected
// information gain per unit cost. Each active hypothesis predicts a point
// by a normal: its cloud's mean and variance weighted by the readings so
// far (so what is already known about this amplifier's tolerances
// carries over), plus the reading's σ² (bands.Sigma); cold points by the
// mean and variance of a uniform spread between the tolerance corners.
// The gain is the mutual information I(H; X) = Σ_h p_h ∫ f_h log(f_h/f) dx
// with f the posterior-weighted mixture, integrated per component on a
// fixed normal quadrature; components with (nearly) the same normal are
// merged first, which leaves I unchanged.
func (e *Engine) nextProbe(c *llCache, post []float64, obs []Observation, allowed func(string) bool) *Probe {
	read := map[string]bool{}
	for _, o := range obs {
		read[o.Key] = true
	}
	var cands []int
	for k, p := range e.points {
		if !read[p.key] && (allowed == nil || allowed(p.key)) {
			cands = append(cands, k)
		}
	}
	if len(cands) == 0 {
		return nil
	}
	active := e.activeSet(post, 0)
	tot := 0.0
	for _, i := range active {
		tot += post[i]
	}
	weights := make([][]float64, len(active))
	for a, i := range active {
		if len(obs) > 0 {
			weights[a] = sampleWeights(c.ll[i])
		}
	}
	best, bestScore, bestGain := -1, -1.0, 0.0
	comps := make([]comp, 0, len(active))
	buf := make([]float64, e.hyps[0].n)
	for _, k := range cands {
		p := &e.points[k]
		comps = comps[:0]
		for a, i := range active {
			h := e.hyps[i]
			w := post[i] / tot
			if p.cold {
				cp := h.cold[k-e.nDC]
				if cp.open {
					comps = append(comps, comp{w, openSentinel, openSentinel * 1e-3})
					continue
				}
				mu := (cp.lo + cp.hi) / 2
				sg := e.sigma(amp.Ohms, mu)
				comps = append(comps, comp{w, mu, math.Sqrt((cp.hi-cp.lo)*(cp.hi-cp.lo)/12 + sg*sg)})
				continue
			}
			if !h.valid[k] {
				continue
			}
			var mu, v float64
			if weights[a] == nil {
				mu, v = h.mean[k], h.sd[k]*h.sd[k]
			} else {
				xs := e.cloud(h, k, buf)
				ws := weights[a]
				for s, x := range xs {
					mu += ws[s] * x
				}
				for s, x := range xs {
					v += ws[s] * (x - mu) * (x - mu)
				}
			}
			sg := e.sigma(p.quantity, mu)
			comps = append(comps, comp{w, mu, math.Sqrt(v + sg*sg)})
		}
		gain := mutualInfo(comps) / math.Ln2
		cost := e.cost(p)
		if score := gain / cost; score > bestScore {
			best, bestScore, bestGain = k, score, gain
		}
	}
	p := &e.points[best]
	return &Probe{Key: p.key, Label: p.label, Setup: e.setup(p), GainBits: bestGain, Cost: e.cost(p), Live: !p.cold}
}

// activeSet returns the active hypotheses, most probable first: those
// holding all but 1e-4 of the posterior (each at least activeFloor, at
// most maxActive), and at least the `listed` most probable.
func (e *Engine) activeSet(post []float64, listed int) []int {
	byPost := make([]int, 0, len(post))
	for i := range post {
		if e.hyps[i].err == nil && (post[i] >= activeFloor || listed > 0) {
			byPost = append(byPost, i)
		}
	}
	sort.SliceStable(byPost, func(a, b int) bool { return post[byPost[a]] > post[byPost[b]] })
	var active []int
	tot := 0.0
	for n, i := range byPost {
		if n >= listed && (tot >= 1-1e-4 || len(active) >= maxActive || post[i] < activeFloor) {
			break
		}
		active = append(active, i)
		tot += post[i]
	}
	return active
}

// mutualInfo returns I(H; X) in nats for a mixture of normals.
func mutualInfo(cs []comp) float64 {
	if len(cs) < 2 {
		return 0
	}
	sort.Slice(cs, func(a, b int) bool { return cs[a].mu < cs[b].mu })
	// Merge near-identical components (exact for identical ones; for
	// means within a fifth of a spread and spreads within 20 % the gain
	// changes by well under a hundredth of a bit).
	m := cs[:1]
	for _, c := range cs[1:] {
		l := &m[len(m)-1]
		if math.Abs(c.mu-l.mu) < 0.2*min(c.sd, l.sd) && math.Abs(c.sd-l.sd) < 0.2*l.sd {
			l.mu = (l.w*l.mu + c.w*c.mu) / (l.w + c.w)
			l.w += c.w
			continue
		}
		m = append(m, c)
	}
	if len(m) < 2 {
		return 0
	}
	logw := make([]float64, len(m))
	for i, c := range m {
		logw[i] = math.Log(c.w) - math.Log(c.sd)
	}
	lv := make([]float64, len(m))
	mi := 0.0
	for _, c := range m {
		part := 0.0
		for q, t := range quadT {
			x := c.mu + c.sd*t
			own := -t*t/2 - math.Log(c.sd)
			// log f(x) = log Σ_j w_j N_j(x), by log-sum-exp.
			mx := math.Inf(-1)
			for j, d := range m {
				z := (x - d.mu) / d.sd
				lv[j] = logw[j] - z*z/2
				mx = max(mx, lv[j])
			}
			s := 0.0
			for j := range m {
				if d := lv[j] - mx; d > -40 {
					s += math.Exp(d)
				}
			}
			part += quadW[q] * (own - (mx + math.Log(s)))
		}
		mi += c.w * part
	}
	return max(mi, 0)
}

// cost returns the effort of a reading.
func (e *Engine) cost(p *point) float64 {
	switch {
	case p.pulled:
		return CostPulled
	case p.quantity == amp.DCAmps, p.quantity == amp.ACAmps:
		return CostSeries
	case p.quantity == ac.ToneVolts:
		return CostTone
	}
	return CostVolts
}

// setup says how to take a reading.
func (e *Engine) setup(p *point) string {
	if p.cold {
		if p.pulled {
			ref := strings.TrimSuffix(p.ck.ID, " heater")
			return fmt.Sprintf("amplifier off and unplugged; pull %s (let it cool) and read ohms across its heater pins %s", ref, heaterPins(e.d.ByRef[ref]))
		}
		return fmt.Sprintf("amplifier off, unplugged, filter capacitors discharged (check under 10 V); meter on ohms from %s to %s", p.ck.From, p.ck.To)
	}
	if p.quantity == ac.ToneVolts {
		return e.toneSetup(p)
	}
	pd := p.pd
	where := "net " + pd.Net
	if pd.Valve != "" {
		where = fmt.Sprintf("%s pin %d (net %s)", pd.Valve, pd.Pin, pd.Net)
	}
	switch pd.Quantity {
	case amp.DCVolts:
		return fmt.Sprintf("powered: meter on DC volts, black lead on chassis, red lead on %s", where)
	case amp.DCAmps:
		s := fmt.Sprintf("power off and discharge; break the circuit at %s and put the meter (DC amps) in series, then power up", where)
		if pd.Electrode == valves.Cathode {
			s += "; or read the volts across the cathode resistor and divide by its value"
		}
		return s
	case amp.ACVolts:
		if pd.Electrode == valves.Heater {
			return fmt.Sprintf("powered: meter on AC volts across %s's heater pins", pd.Valve)
		}
		return fmt.Sprintf("powered: meter on AC volts from %s to chassis (rated for the full HT secondary)", where)
	case amp.ACAmps:
		return fmt.Sprintf("powered: clamp meter on a heater lead of %s, or the meter (AC amps) in series with it", pd.Valve)
	case amp.RippleVolts:
		return fmt.Sprintf("powered: meter on AC volts (a range that blocks DC, or through a 0.1 µF capacitor rated for the HT) on %s to chassis", where)
	}
	return "measure " + p.label
}
