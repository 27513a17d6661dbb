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
	// CostPlug: a reading at the mains plug (live to neutral, power switch
	// on): no cover off, nothing to discharge; the first thing a
	// technician checks on a dead amplifier (common practice). CostFuse:
	// the fuse out of its holder, looked at and read (a little more: the
	// holder is opened).
	CostPlug = 0.2
	CostFuse = 0.3
)

// ShortRisk: while suspects that would be damaged, or do damage, when
// powered (a near-short on a B+ net when cold) hold at least this share
// of the posterior, no live reading is proposed (our choice; a technician
// does not power up into a suspected short).
const ShortRisk = 0.05

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
func (e *Engine) nextProbe(c *llCache, post []float64, obs, looks []Observation, allowed func(string) bool) *Probe {
	// One candidate per physical node: a net and a socket pin on it are
	// one measurement, and a node read under any of its names is read.
	read := map[string]bool{}
	for _, o := range obs {
		read[e.node(e.index[o.Key])] = true
	}
	risky := e.shortRisk(post) >= ShortRisk
	var cands []int
	for k, p := range e.points {
		n := e.node(k)
		if read[n] || (allowed != nil && !allowed(p.key)) || (risky && !p.cold) {
			continue
		}
		read[n] = true // later names of the same node are not candidates
		cands = append(cands, k)
	}
	active := e.activeSet(post, 0)
	lp, lscore := e.bestLook(post, active, looks, allowed)
	if len(cands) == 0 {
		return lp
	}
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
	var bestComps []comp
	comps := make([]comp, 0, len(active))
	buf := make([]float64, e.hyps[0].n)
	for _, k := range cands {
		comps = e.predictive(k, active, post, tot, weights, buf, comps[:0])
		gain := mutualInfo(weighted(comps)) / math.Ln2
		cost := e.cost(&e.points[k])
		if score := gain / cost; score > bestScore {
			best, bestScore, bestGain = k, score, gain
			bestComps = append(bestComps[:0], comps...)
		}
	}
	if lp != nil && lscore > bestScore {
		return lp
	}
	p := &e.points[best]
	return &Probe{Key: p.key, Label: p.label, Setup: e.setup(p), GainBits: bestGain, Cost: e.cost(p), Live: !p.cold,
		Reason: e.reason(p, active, post, bestComps)}
}

// predictive appends, per active hypothesis, the normal that predicts
// point k: its cloud's mean and variance weighted by the readings so far
// (so what is already known about this amplifier's tolerances carries
// over), plus the reading's σ²; cold points by the mean and variance of a
// uniform spread between the tolerance corners. Component a belongs to
// active[a]; a hypothesis that does not predict the point gets weight 0.
func (e *Engine) predictive(k int, active []int, post []float64, tot float64, weights [][]float64, buf []float64, comps []comp) []comp {
	p := &e.points[k]
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
			comps = append(comps, comp{0, 0, 1})
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
	return comps
}

// weighted returns a copy of the components with weight above zero.
func weighted(cs []comp) []comp {
	out := make([]comp, 0, len(cs))
	for _, c := range cs {
		if c.w > 0 {
			out = append(out, c)
		}
	}
	return out
}

// node names the physical node a point measures: DC volts on a net (a
// socket pin and its net are one node), a cold resistance between two
// nets; other points are their own node.
func (e *Engine) node(k int) string {
	p := &e.points[k]
	switch {
	case p.cold && !p.pulled && p.ck.From != "":
		return "ohms " + p.ck.From + "|" + p.ck.To
	case !p.cold && p.quantity == amp.DCVolts && p.pd.Net != "":
		return "volts " + p.pd.Net
	}
	return p.key
}

// plug reports whether a point is read at the plug or the fuse holder.
func (e *Engine) plug(p *point) bool {
	return p.cold && (p.fuse || strings.HasSuffix(p.ck.ID, "live–neutral"))
}

// shortRisk is the posterior share of the hypotheses that put a
// near-short on a B+ net (cold).
func (e *Engine) shortRisk(post []float64) float64 {
	s := 0.0
	for i, h := range e.hyps {
		if h.nearShort {
			s += post[i]
		}
	}
	return s
}

// Words for a probe's reason (separation d' between two predictions).
const reasonDPrime = 2.0

// reason says in words what a measurement does for the suspects: which
// suspects its reading splits, or what it rules out in one reading.
func (e *Engine) reason(p *point, active []int, post []float64, comps []comp) string {
	apart := func(a, b comp) bool {
		if a.w == 0 || b.w == 0 {
			return false
		}
		return math.Abs(a.mu-b.mu) > reasonDPrime*math.Sqrt((a.sd*a.sd+b.sd*b.sd)/2)
	}
	where := ""
	if e.plug(p) {
		where = "at the plug, no cover off: "
	}
	if len(active) == 0 || len(comps) != len(active) {
		return where + "the most telling reading for the effort"
	}
	lead := comps[0]
	// The first suspect that reads differently from the leading one.
	other := -1
	var apartMass, aloneMass float64
	var alone []int
	for a := 1; a < len(active); a++ {
		if apart(lead, comps[a]) {
			if other < 0 {
				other = a
			}
			apartMass += post[active[a]]
		} else {
			aloneMass += post[active[a]]
			alone = append(alone, a)
		}
	}
	name := func(a int) string { return e.hyps[active[a]].label }
	pct := func(x float64) string { return fmt.Sprintf("%.0f %%", 100*x) }
	n := len(active) - 1 - len(alone)
	switch {
	case other == 1 && post[active[0]] >= 0.5:
		return where + fmt.Sprintf("confirms or rules out the leading suspect, %s (%s), in one reading", name(0), pct(post[active[0]]))
	case other == 1:
		return where + fmt.Sprintf("splits the two leading suspects: %s (%s) and %s (%s) read differently here",
			name(0), pct(post[active[0]]), name(1), pct(post[active[1]]))
	case other > 1 && n == 1:
		return where + fmt.Sprintf("rules out %s (%s) in one reading, or points straight at it", name(other), pct(apartMass))
	case other > 1 && e.hyps[active[0]].fault == nil:
		return where + fmt.Sprintf("checks %d suspects at once (%s together; the likeliest, %s): each reads differently from a healthy amplifier here",
			n, pct(apartMass), name(other))
	case other > 1:
		return where + fmt.Sprintf("tells the leading suspect, %s (%s), from %d others that read differently here (%s together; the likeliest, %s)",
			name(0), pct(post[active[0]]), n, pct(apartMass), name(other))
	}
	// Nothing reads differently from the leader: the reading splits the
	// others among themselves, or only narrows the tolerances.
	for a := 1; a < len(active); a++ {
		for b := a + 1; b < len(active); b++ {
			if apart(comps[a], comps[b]) {
				return where + fmt.Sprintf("splits %s from %s", name(a), name(b))
			}
		}
	}
	return where + "narrows the suspects a little; no reading left splits them clearly"
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
	case p.fuse:
		return CostFuse
	case e.plug(p):
		return CostPlug
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
		if p.fuse {
			return fmt.Sprintf("amplifier unplugged: take %s out of its holder, look at it (a blackened or broken element) and read ohms across it", p.ck.ID)
		}
		if e.plug(p) {
			return fmt.Sprintf("amplifier unplugged, power switch on: meter on ohms across the plug's live and neutral pins (%s to %s)", p.ck.From, p.ck.To)
		}
		if p.pulled {
			ref := strings.TrimSuffix(p.ck.ID, " heater")
			return fmt.Sprintf("amplifier off and unplugged; pull %s (let it cool) and read ohms across its heater pins %s", ref, heaterPins(e.d.ByRef[ref]))
		}
		return fmt.Sprintf("amplifier off, unplugged, filter capacitors discharged (check under 10 V); meter on ohms from %s to %s", e.m.ProbeAt(p.ck.From), e.m.ProbeAt(p.ck.To))
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

// A look with the power off is a cheap probe: what a fault shows on the
// part (expect/faults.Signs: a scorched resistor, a bulging or dried
// electrolytic, a milky getter, a blackened fuse) is seen or not. Its key
// is "look:REF seen" (1 seen, 0 not); each hypothesis sees the sign at a
// part with its share (faults.Sign.Share) when the sign is its own, else
// with faults.FalseSignShare.

// CostLook is the effort of a look: the amplifier off and unplugged,
// the cover off, no meter (our scale, as CostFuse).
const CostLook = 0.3

// look is one place a look may find a sign.
type look struct {
	key, ref, label string
	// sign per hypothesis index: the sign that hypothesis shows here.
	sign map[int]faults.Sign
}

// initLooks finds the parts where some hypothesis shows a sign (after
// the near-shorts are marked).
func (e *Engine) initLooks() {
	e.lookIndex = map[string]int{}
	at := map[string]map[int]faults.Sign{}
	for i, h := range e.hyps {
		if h.fault == nil || h.err != nil {
			continue
		}
		for _, s := range faults.Signs(e.m, *h.fault, h.nearShort) {
			if at[s.At] == nil {
				at[s.At] = map[int]faults.Sign{}
			}
			at[s.At][i] = s
		}
	}
	for _, p := range faults.LookAt(e.m) {
		if len(at[p.Ref]) == 0 {
			continue
		}
		k := lookKey(p.Ref)
		e.lookIndex[k] = len(e.looks)
		e.looks = append(e.looks, look{key: k, ref: p.Ref, label: "look at " + p.Ref + " (power off)", sign: at[p.Ref]})
	}
}

func lookKey(ref string) string { return "look:" + ref + " seen" }

// seenShare is the chance hypothesis i shows a sign at look j.
func (e *Engine) seenShare(i, j int) float64 {
	if s, ok := e.looks[j].sign[i]; ok {
		return max(s.Share, faults.FalseSignShare)
	}
	return faults.FalseSignShare
}

// splitLooks takes the looks out of the observations.
func (e *Engine) splitLooks(obs []Observation) (rest, looks []Observation) {
	for _, o := range obs {
		if _, ok := e.lookIndex[o.Key]; ok {
			looks = append(looks, o)
			continue
		}
		rest = append(rest, o)
	}
	return rest, looks
}

// addLooks adds the looks' log-likelihoods to a log posterior.
func (e *Engine) addLooks(logp []float64, looks []Observation) {
	for _, o := range looks {
		j := e.lookIndex[o.Key]
		for i := range logp {
			p := e.seenShare(i, j)
			if o.Value < 0.5 {
				p = 1 - p
			}
			logp[i] += math.Log(p)
		}
	}
}

// bestLook is the look not yet taken with the greatest information gain
// per effort among the allowed, or nil: for a seen-or-not outcome,
// I = H(p̄) − Σ w_h H(p_h) with p̄ = Σ w_h p_h.
func (e *Engine) bestLook(post []float64, active []int, looks []Observation, allowed func(string) bool) (*Probe, float64) {
	done := map[string]bool{}
	for _, o := range looks {
		done[o.Key] = true
	}
	tot := 0.0
	for _, i := range active {
		tot += post[i]
	}
	if tot <= 0 {
		return nil, 0
	}
	h2 := func(p float64) float64 {
		if p <= 0 || p >= 1 {
			return 0
		}
		return -(p*math.Log2(p) + (1-p)*math.Log2(1-p))
	}
	var best *Probe
	bestScore := 0.0
	for j := range e.looks {
		lk := &e.looks[j]
		if done[lk.key] || (allowed != nil && !allowed(lk.key)) {
			continue
		}
		pbar, cond := 0.0, 0.0
		lead, leadMass := -1, 0.0
		for _, i := range active {
			w := post[i] / tot
			p := e.seenShare(i, j)
			pbar += w * p
			cond += w * h2(p)
			if _, own := lk.sign[i]; own && w*p > leadMass {
				lead, leadMass = i, w*p
			}
		}
		gain := max(0, h2(pbar)-cond)
		if score := gain / CostLook; lead >= 0 && score > bestScore {
			bestScore = score
			s := lk.sign[lead]
			best = &Probe{Key: lk.key, Label: lk.label, GainBits: gain, Cost: CostLook,
				Setup: fmt.Sprintf("amplifier off and unplugged, filter capacitors discharged (check under 10 V), cover off: look at %s without touching anything; enter seen if it shows the sign, not seen if it looks sound", lk.ref),
				Reason: fmt.Sprintf("a look with the power off, no meter: %s would point at %s (%.0f %% now); a part that looks sound counts against it, as the sign shows in about %.0f %% of such faults",
					s.Words, e.hyps[lead].label, 100*post[lead]/tot, 100*s.Share)}
		}
	}
	return best, bestScore
}
