package infer

import (
	"fmt"
	"math"
	pkey "pinwalk/expect/point"
	"sort"
	"strings"

	"pinwalk/expect/ac"
	"pinwalk/expect/amp"
	"pinwalk/expect/faults"
	"pinwalk/expect/units"
)

// Observation is one reading: the point key (amp.PointDef.Key(), "V2.3
// dc_volts", or a cold point "cold:B1 ohms") and the value in SI units
// (+Inf for a cold reading that shows open).
type Observation struct {
	Key   string
	Value float64
}

// Suspect is one ranked hypothesis.
type Suspect struct {
	Fault       string // "R7:open", or "healthy"; a pair is "R7:open+C3:short"
	Label       string // "R7 (470 Ω) open circuit"
	Probability float64
	// Why: the readings that support or contradict it, worst first.
	Why []string
	// Group indexes Ranking.Groups: suspects in one group cannot be told
	// apart by any reading the model predicts.
	Group int
}

// Probe is the recommended next measurement.
type Probe struct {
	Key, Label, Setup string
	// GainBits is the expected reduction of the posterior's entropy (the
	// mutual information between hypothesis and reading), in bits; Cost
	// the effort (1 for a DC-volts or cold resistance reading, 2 with a
	// valve pulled, 3 for a current needing the meter in series).
	GainBits, Cost float64
	// Live: the amplifier is powered for this reading.
	Live bool
	// Reason says in words what the reading does for the suspects
	// ("splits the two leading suspects: …", "rules out … in one
	// reading"), for the screens; GainBits is for ranking only.
	Reason string
}

// Ranking is the outcome of Rank.
type Ranking struct {
	Suspects []Suspect // most probable first (those above MinShown, at least MinListed)
	// Groups of hypotheses (names) that no modelled reading separates; one
	// per listed suspect's group, in order of first appearance.
	Groups [][]string
	// GroupNotes say what a group means, or which cold reading splits
	// suspects that the live readings cannot.
	GroupNotes []string
	// Fits is false when no single-fault hypothesis explains the readings
	// (the best one, conditioned on the readings, leaves a reading more
	// than MisfitSigmas σ off); FitNote says which readings and what to
	// suspect.
	Fits    bool
	FitNote string
	// Pairs: the best two-fault explanations among the top single faults,
	// computed only when nothing fits. Probability is relative to those
	// pairs and the top single faults together.
	Pairs []Suspect
	// Next is the measurement with the greatest expected information gain
	// per unit of effort among the points allowed; nil when none is left.
	Next *Probe
	// Unknown lists observation keys the engine has no point for (they are
	// ignored); Unsolved lists hypotheses that could not be solved.
	Unknown  []string
	Unsolved []string
}

// Listing limits.
const (
	MinListed = 8    // suspects always listed
	MinShown  = 1e-3 // and any other with at least this probability…
	MaxListed = 15   // …up to this many
	maxWhy    = 4
	pairTopK  = 4
)

// llCache holds the per-sample log-likelihoods of the last observation
// list, so that one more reading costs one pass over the clouds.
type llCache struct {
	obs    []Observation
	ll     [][]float64 // per hypothesis, per sample: Σ over DC readings
	coldLL []float64   // per hypothesis: Σ over cold readings
}

// Rank ranks the hypotheses given the readings so far and picks the next
// measurement among the points not yet read for which allowed(key) is
// true (nil: every point; ColdOnly: cold points only). Readings of the
// same key more than once all count.
func (e *Engine) Rank(obs []Observation, allowed func(key string) bool) *Ranking {
	e.mu.Lock()
	defer e.mu.Unlock()
	r := &Ranking{Fits: true}
	var use []Observation
	obs, looks := e.splitLooks(obs)
	for _, o := range obs {
		if _, ok := e.index[o.Key]; !ok || math.IsNaN(o.Value) {
			r.Unknown = append(r.Unknown, o.Key)
			continue
		}
		use = append(use, o)
	}
	c := e.likelihoods(use)
	logp := e.logPosterior(c)
	e.addLooks(logp, looks)
	post := normalise(logp)
	// Solve the clouds of the coarse hypotheses that carry weight (those
	// the next-probe choice uses and those listed), until none is left.
	for round := 0; round < maxUpgradeRounds; round++ {
		need := e.coarseActive(post)
		if len(need) == 0 {
			break
		}
		e.upgrade(need)
		logp = e.logPosterior(c)
		e.addLooks(logp, looks)
		post = normalise(logp)
	}
	r.Unsolved = e.unsolved()
	order := make([]int, len(e.hyps))
	for i := range order {
		order[i] = i
	}
	sort.SliceStable(order, func(a, b int) bool { return post[order[a]] > post[order[b]] })

	// Suspects and groups.
	groupIx := map[int]int{}
	for n, i := range order {
		h := e.hyps[i]
		if h.err != nil || (n >= MinListed && post[i] < MinShown) || len(r.Suspects) == MaxListed {
			continue
		}
		leader := e.groupAll[i]
		gi, ok := groupIx[leader]
		if !ok {
			gi = len(r.Groups)
			groupIx[leader] = gi
			var members []string
			for _, j := range order {
				if e.groupAll[j] == leader && e.hyps[j].err == nil {
					members = append(members, e.hyps[j].name)
				}
			}
			r.Groups = append(r.Groups, members)
		}
		r.Suspects = append(r.Suspects, Suspect{Fault: h.name, Label: h.label, Probability: post[i],
			Why: e.why(h, use), Group: gi})
	}
	r.GroupNotes = e.groupNotes(r, order, post)
	if len(r.Suspects) > 0 {
		best := e.byName[r.Suspects[0].Fault]
		if bad := e.misfits(e.hyps[best], c.ll[best], use); len(bad) > 0 {
			r.Fits = false
			r.FitNote = fmt.Sprintf("no single fault explains the readings: with the best candidate (%s) %s. Usual causes: the design file does not match the amplifier (a changed or wrong part value, a modification), a misread or wrong pin, or more than one fault.",
				e.hyps[best].label, strings.Join(bad, "; "))
			r.Pairs = e.rankPairs(use, order, post)
			if len(r.Pairs) > 0 && r.Pairs[0].Probability >= 0.5 {
				r.FitNote += fmt.Sprintf(" Best two-fault explanation: %s (%.0f %%).", r.Pairs[0].Label, 100*r.Pairs[0].Probability)
			}
		}
	}
	r.Next = e.nextProbe(c, post, use, looks, allowed)
	return r
}

// maxUpgradeRounds bounds the rounds of cloud solving in one Rank: a
// solved cloud can move its hypothesis, and so bring others into play.
const maxUpgradeRounds = 4

// coarseActive returns the coarse (unsolved, not shared) hypotheses among
// the MaxListed most probable: every hypothesis a listing can show is
// ranked on its solved cloud. The rest of the next-probe sums' active set
// enters them with its coarse cloud (the healthy cloud moved to the
// fault's nominal, erring wide); a hypothesis is solved as soon as it
// rises into the listed ones (Rank's upgrade rounds).
func (e *Engine) coarseActive(post []float64) []int {
	var out []int
	for n, i := range e.activeSet(post, MaxListed) {
		if n >= MaxListed {
			break // activeSet is in falling posterior
		}
		if h := e.hyps[i]; h.coarse && !h.shared && h.err == nil {
			out = append(out, i)
		}
	}
	return out
}

// ColdOnly allows only cold points (the amplifier stays unpowered).
func ColdOnly(key string) bool {
	k, err := pkey.Parse(key)
	return err == nil && k.Domain == pkey.Cold
}

// likelihoods returns the cache updated for obs: reused when the cached
// observations are a prefix of obs, rebuilt otherwise.
func (e *Engine) likelihoods(obs []Observation) *llCache {
	c := e.cache
	prefix := c != nil && len(c.obs) <= len(obs)
	if prefix {
		for i, o := range c.obs {
			if o != obs[i] {
				prefix = false
				break
			}
		}
	}
	if !prefix {
		c = &llCache{ll: make([][]float64, len(e.hyps)), coldLL: make([]float64, len(e.hyps))}
		for i, h := range e.hyps {
			c.ll[i] = make([]float64, max(h.n, 1))
		}
	}
	for _, o := range obs[len(c.obs):] {
		e.addReading(c, o)
	}
	c.obs = append(c.obs[:len(c.obs):len(c.obs)], obs[len(c.obs):]...)
	e.cache = c
	return c
}

// addReading adds one reading's log-likelihood to every hypothesis:
// per sample, log((1−ε)·N(r; x_s, σ²) + ε/W) with ε = OutlierFloor and W
// the point's background width. σ² is the reading's (bands.Sigma) plus
// the kernel smoothing (KernelBandwidth × the cloud's spread at the point)².
func (e *Engine) addReading(c *llCache, o Observation) {
	k := e.index[o.Key]
	p := &e.points[k]
	lb := math.Log(OutlierFloor / p.width)
	if p.cold {
		for i, h := range e.hyps {
			if h.err == nil {
				c.coldLL[i] += coldLogLik(h.cold[k-e.nDC], o.Value, lb)
			}
		}
		return
	}
	buf := make([]float64, e.hyps[0].n)
	for i, h := range e.hyps {
		if h.err != nil {
			continue
		}
		e.addReadingTo(h, c.ll[i], o, buf)
	}
}

// addReadingTo adds one DC reading's log-likelihood to a hypothesis's
// per-sample row ll (buf: scratch for a coarse cloud, or nil).
func (e *Engine) addReadingTo(h *hyp, ll []float64, o Observation, buf []float64) {
	k := e.index[o.Key]
	p := &e.points[k]
	lb := math.Log(OutlierFloor / p.width)
	if !h.valid[k] {
		w := math.Log(1 / p.width)
		for s := range ll {
			ll[s] += w
		}
		return
	}
	if buf == nil {
		buf = make([]float64, e.hyps[0].n)
	}
	sr := e.sigma(p.quantity, o.Value)
	bw := KernelBandwidth * h.sd[k]
	sg := math.Sqrt(sr*sr + bw*bw)
	lnorm := math.Log(1-OutlierFloor) - math.Log(sg*math.Sqrt(2*math.Pi))
	inv := 1 / sg
	cut := 2 * (lnorm - lb + 40) // z² beyond which the kernel is negligible
	xs := e.cloud(h, k, buf)
	for s, x := range xs {
		z := (o.Value - x) * inv
		z2 := z * z
		if z2 > cut {
			ll[s] += lb
			continue
		}
		ll[s] += logAddExp(lnorm-z2/2, lb)
	}
}

// coldLogLik is a cold reading's log-likelihood: a uniform spread between
// the tolerance corners blurred by the reading's σ, with the outlier
// floor; an open reading against an open prediction is certain, against a
// finite one an outlier.
func coldLogLik(c coldPred, r, lb float64) float64 {
	readOpen := r >= OpenOhms
	switch {
	case readOpen && c.open:
		return math.Log(1 - OutlierFloor)
	case readOpen:
		return math.Log(OutlierFloor) // an open reading where a value is predicted
	case c.open:
		return lb // a value read where open is predicted: an outlier density
	}
	sg := sigmaOf(amp.Ohms, r, bandsZeroMeter)
	var dens float64
	if c.lo > 0 && c.hi > logSpreadRatio*c.lo {
		dens = logUniformDensity(r, c.lo, c.hi)
	} else if c.hi-c.lo < sg*1e-3 {
		z := (r - c.nom) / sg
		dens = math.Exp(-z*z/2) / (sg * math.Sqrt(2*math.Pi))
	} else {
		dens = (phi((r-c.lo)/sg) - phi((r-c.hi)/sg)) / (c.hi - c.lo)
	}
	if dens <= 0 {
		return lb
	}
	return logAddExp(math.Log(1-OutlierFloor)+math.Log(dens), lb)
}

// logSpreadRatio: a cold prediction whose ends are more than this ratio
// apart (a broken-down part: a shorted capacitor reads anything from
// milliohms to hundreds of ohms) is spread evenly in the logarithm of the
// ohms, not in ohms: a breakdown is as likely to leave 0.1–1 Ω as
// 10–100 Ω (our choice: no survey gives the breakdown's distribution).
// Tolerance corners never span a decade.
const logSpreadRatio = 10

// logUniformDensity is the density of a reading r of a value spread evenly
// in log between lo and hi (1/(x·ln(hi/lo))), read with the ohmmeter's σ:
// inside the spread the meter's σ is small beside x, so the density at r
// is the spread's own, its ends softened by the σ at r (and below σ the
// 1/x is held at 1/σ: a meter cannot tell milliohms apart).
func logUniformDensity(r, lo, hi float64) float64 {
	sg := sigmaOf(amp.Ohms, r, bandsZeroMeter)
	inside := phi((r-lo)/sg) - phi((r-hi)/sg)
	return inside / (max(r, sg) * math.Log(hi/lo))
}

func phi(z float64) float64 { return 0.5 * math.Erfc(-z/math.Sqrt2) }

func logAddExp(a, b float64) float64 {
	if a < b {
		a, b = b, a
	}
	if a-b > 40 {
		return a
	}
	return a + math.Log1p(math.Exp(b-a))
}

// logPosterior returns log prior + log likelihood per hypothesis (−Inf for
// unsolved ones): the likelihood is the mean over the cloud of the
// per-sample products (log-sum-exp), times the cold readings' likelihood.
func (e *Engine) logPosterior(c *llCache) []float64 {
	out := make([]float64, len(e.hyps))
	for i, h := range e.hyps {
		if h.err != nil {
			out[i] = math.Inf(-1)
			continue
		}
		out[i] = math.Log(h.prior) + logMeanExp(c.ll[i]) + c.coldLL[i]
	}
	return out
}

func logMeanExp(xs []float64) float64 {
	m := math.Inf(-1)
	for _, x := range xs {
		m = max(m, x)
	}
	if math.IsInf(m, -1) {
		return m
	}
	s := 0.0
	for _, x := range xs {
		s += math.Exp(x - m)
	}
	return m + math.Log(s/float64(len(xs)))
}

func normalise(logp []float64) []float64 {
	m := math.Inf(-1)
	for _, x := range logp {
		m = max(m, x)
	}
	out := make([]float64, len(logp))
	s := 0.0
	for i, x := range logp {
		if !math.IsInf(x, -1) {
			out[i] = math.Exp(x - m)
			s += out[i]
		}
	}
	for i := range out {
		out[i] /= s
	}
	return out
}

// sampleWeights returns normalised within-hypothesis sample weights from
// per-sample log-likelihoods.
func sampleWeights(ll []float64) []float64 {
	m := math.Inf(-1)
	for _, x := range ll {
		m = max(m, x)
	}
	w := make([]float64, len(ll))
	s := 0.0
	for i, x := range ll {
		w[i] = math.Exp(x - m)
		s += w[i]
	}
	for i := range w {
		w[i] /= s
	}
	return w
}

// misfits returns the readings that lie more than MisfitSigmas σ from a
// hypothesis's prediction after conditioning its cloud on all readings.
func (e *Engine) misfits(h *hyp, ll []float64, obs []Observation) []string {
	w := sampleWeights(ll)
	var bad []string
	for _, o := range obs {
		k := e.index[o.Key]
		p := &e.points[k]
		var z float64
		var pred string
		if p.cold {
			c := h.cold[k-e.nDC]
			sg := e.sigma(amp.Ohms, o.Value)
			switch {
			case (o.Value >= OpenOhms) != c.open:
				z = math.Inf(1)
			case c.open:
				z = 0
			default:
				z = max(c.lo-o.Value, o.Value-c.hi, 0) / sg
			}
			pred = e.fmtCold(c)
		} else {
			if !h.valid[k] {
				continue
			}
			var mu, m2 float64
			xs := e.cloud(h, k, make([]float64, e.hyps[0].n))
			for s, x := range xs {
				mu += w[s] * x
			}
			for s, x := range xs {
				m2 += w[s] * (x - mu) * (x - mu)
			}
			sg := e.sigma(p.quantity, o.Value)
			bw := KernelBandwidth * h.sd[k]
			z = math.Abs(o.Value-mu) / math.Sqrt(sg*sg+bw*bw+m2)
			pred = fmtQ(mu, p.quantity)
		}
		if z > MisfitSigmas {
			bad = append(bad, fmt.Sprintf("%s reads %s where about %s is expected", p.label, fmtQ(o.Value, p.quantity), pred))
		}
	}
	return bad
}

// why explains a suspect by the readings that support it (inside its
// predicted band and outside the healthy band) and contradict it (outside
// its band), the most telling first.
func (e *Engine) why(h *hyp, obs []Observation) []string {
	healthy := e.hyps[0]
	type line struct {
		s     string
		score float64
		pro   bool
	}
	var lines []line
	for _, o := range obs {
		k := e.index[o.Key]
		p := &e.points[k]
		sg := e.sigma(p.quantity, o.Value)
		dh, bh, okh := e.distance(h, k, o.Value, sg)
		d0, b0, ok0 := e.distance(healthy, k, o.Value, sg)
		if !okh {
			continue
		}
		reads := fmt.Sprintf("%s reads %s", shortLabel(p), fmtQ(o.Value, p.quantity))
		switch {
		case h == healthy && dh > 2:
			lines = append(lines, line{fmt.Sprintf("%s; healthy predicts %s", reads, bh), dh, false})
		case h != healthy && dh <= 2 && ok0 && d0 > 2:
			lines = append(lines, line{fmt.Sprintf("%s; with %s the model predicts %s; healthy predicts %s", reads, h.label, bh, b0), d0, true})
		case h != healthy && dh > 2:
			lines = append(lines, line{fmt.Sprintf("against: %s; with %s the model predicts %s", reads, h.label, bh), dh, false})
		}
	}
	sort.SliceStable(lines, func(a, b int) bool {
		if lines[a].pro != lines[b].pro {
			return lines[a].pro
		}
		return lines[a].score > lines[b].score
	})
	var out []string
	for i, l := range lines {
		if i >= maxWhy {
			break
		}
		out = append(out, l.s)
	}
	if len(out) == 0 {
		if h == healthy {
			if len(obs) > 0 {
				out = append(out, "every reading so far lies within its healthy band")
			}
		} else if len(obs) > 0 {
			out = append(out, "no reading so far tells it apart from healthy")
		}
	}
	return out
}

// distance returns how far (in σ) a reading lies outside a hypothesis's
// band at point k, and the band as text; ok is false when the hypothesis
// does not predict the point.
func (e *Engine) distance(h *hyp, k int, r, sg float64) (float64, string, bool) {
	p := &e.points[k]
	if p.cold {
		c := h.cold[k-e.nDC]
		if c.open || r >= OpenOhms {
			if c.open == (r >= OpenOhms) {
				return 0, e.fmtCold(c), true
			}
			return math.Inf(1), e.fmtCold(c), true
		}
		return max(c.lo-r, r-c.hi, 0) / sg, e.fmtCold(c), true
	}
	if !h.valid[k] {
		return 0, "", false
	}
	if h == e.hyps[0] {
		// The healthy band as every command shows it (HealthyBand).
		if b, ok := e.healthyBand(k); ok {
			return max(b.Low-r, r-b.High, 0) / sg, b.Format(), true
		}
	}
	lo, hi := h.bandLo[k], h.bandHi[k]
	return max(lo-r, r-hi, 0) / sg, fmtRange(lo, hi, p.quantity), true
}

func (e *Engine) fmtCold(c coldPred) string {
	if c.open {
		return "open"
	}
	return fmtRange(c.lo, c.hi, amp.Ohms)
}

func shortLabel(p *point) string {
	if p.cold {
		return p.label
	}
	switch p.quantity {
	case amp.DCAmps:
		return p.pd.ID + " current"
	case amp.ACVolts:
		return p.pd.ID + " AC"
	case amp.ACAmps:
		return p.pd.ID + " AC current"
	case amp.RippleVolts:
		return p.pd.ID + " ripple"
	case ac.ToneVolts:
		return p.pd.ID + " tone"
	}
	return p.pd.ID
}

func unitOf(q string) units.Quantity {
	switch q {
	case amp.DCAmps, amp.ACAmps:
		return units.Amps
	case amp.Ohms:
		return units.Ohms
	}
	return units.Volts
}

func fmtQ(v float64, q string) string {
	if math.IsInf(v, 1) {
		return "open"
	}
	return units.Format(v, unitOf(q))
}

func fmtRange(lo, hi float64, q string) string {
	if math.IsInf(lo, 1) {
		return "open"
	}
	return fmtQ(lo, q) + " – " + fmtQ(hi, q)
}

// group partitions the hypotheses: each unassigned hypothesis (in order of
// prior, highest first) leads a group and takes in every later unassigned
// one that no point separates from it. It returns the leader per
// hypothesis.
func (e *Engine) group(coldToo bool) []int {
	order := make([]int, len(e.hyps))
	for i := range order {
		order[i] = i
	}
	sort.SliceStable(order, func(a, b int) bool { return e.hyps[order[a]].prior > e.hyps[order[b]].prior })
	leader := make([]int, len(e.hyps))
	for i := range leader {
		leader[i] = -1
	}
	for n, i := range order {
		if leader[i] >= 0 {
			continue
		}
		leader[i] = i
		if e.hyps[i].err != nil {
			continue
		}
		for _, j := range order[n+1:] {
			if leader[j] < 0 && e.hyps[j].err == nil && e.separator(e.hyps[i], e.hyps[j], coldToo, false) < 0 {
				leader[j] = i
			}
		}
	}
	return leader
}

// SeparateDPrime is the separation above which two hypotheses' predictions
// at a point count as telling them apart: the difference of their means
// over the root mean square of their spreads (with the reading's σ), the
// detectability index d' of signal detection theory (D. M. Green and J. A.
// Swets, "Signal Detection Theory and Psychophysics", 1966). At d' = 2 a
// single reading halfway between the means is misclassified about 16 % of
// the time; bands that do not overlap at all also separate.
const SeparateDPrime = 2.0

// separator returns a point that separates two hypotheses (d' above
// SeparateDPrime, or bands apart by more than 3σ of a reading), or −1.
// DC points are tried unless coldOnly; cold points when coldToo or
// coldOnly.
func (e *Engine) separator(a, b *hyp, coldToo, coldOnly bool) int {
	apart := func(q string, ma, va, mb, vb, loa, hia, lob, hib float64) bool {
		gap := max(lob-hia, loa-hib)
		if gap <= 0 && math.Abs(ma-mb) <= SeparateDPrime*math.Sqrt((va+vb)/2) {
			return false // the reading's σ only widens the spread: no need for it
		}
		sg := e.sigma(q, max(math.Abs(ma), math.Abs(mb)))
		if gap > 3*sg {
			return true
		}
		return math.Abs(ma-mb) > SeparateDPrime*math.Sqrt((va+vb)/2+sg*sg)
	}
	if !coldOnly {
		for k := 0; k < e.nDC; k++ {
			if !a.valid[k] || !b.valid[k] {
				if a.valid[k] != b.valid[k] {
					return k
				}
				continue
			}
			if apart(e.points[k].quantity, a.mean[k], a.sd[k]*a.sd[k], b.mean[k], b.sd[k]*b.sd[k],
				a.bandLo[k], a.bandHi[k], b.bandLo[k], b.bandHi[k]) {
				return k
			}
		}
	}
	if !coldToo && !coldOnly {
		return -1
	}
	for j := range a.cold {
		ca, cb := a.cold[j], b.cold[j]
		if ca.open != cb.open {
			return e.nDC + j
		}
		if ca.open {
			continue
		}
		va, vb := (ca.hi-ca.lo)*(ca.hi-ca.lo)/12, (cb.hi-cb.lo)*(cb.hi-cb.lo)/12
		if apart(amp.Ohms, (ca.lo+ca.hi)/2, va, (cb.lo+cb.hi)/2, vb, ca.lo, ca.hi, cb.lo, cb.hi) {
			return e.nDC + j
		}
	}
	return -1
}

// SameGroup reports whether two hypotheses fall in one group: no point
// separates them (DC points only, or cold points too).
func (e *Engine) SameGroup(a, b string, coldToo bool) bool {
	i, ok1 := e.byName[a]
	j, ok2 := e.byName[b]
	if !ok1 || !ok2 {
		return false
	}
	g := e.groupDC
	if coldToo {
		g = e.groupAll
	}
	return g[i] == g[j]
}

// groupNotes explains the listed groups: hypotheses no reading separates,
// faults invisible to every reading (grouped with healthy), and suspects
// that only a cold reading splits.
func (e *Engine) groupNotes(r *Ranking, order []int, post []float64) []string {
	var notes []string
	for _, g := range r.Groups {
		if len(g) < 2 {
			continue
		}
		labels := e.labels(g, 4)
		if g[0] == Healthy || contains(g, Healthy) {
			notes = append(notes, fmt.Sprintf("%s: no modelled reading tells these from a healthy amplifier (a signal check with a tone and a scope, or substitution, finds them)", labels))
		} else {
			notes = append(notes, fmt.Sprintf("%s: no modelled reading tells these apart; check by substitution or inspection", labels))
		}
	}
	// Suspects that look alike live but differ cold.
	var top []int
	for _, i := range order {
		if post[i] >= 0.02 && e.hyps[i].err == nil && len(top) < 6 {
			top = append(top, i)
		}
	}
	for a := 0; a < len(top); a++ {
		for b := a + 1; b < len(top); b++ {
			i, j := top[a], top[b]
			if e.groupDC[i] != e.groupDC[j] || e.groupAll[i] == e.groupAll[j] {
				continue
			}
			k := e.separator(e.hyps[i], e.hyps[j], true, true)
			if k < 0 {
				continue
			}
			p := &e.points[k]
			notes = append(notes, fmt.Sprintf("%s or %s: the live readings cannot split them; measure %s to split them (%s against %s)",
				e.hyps[i].label, e.hyps[j].label, p.label, e.fmtCold(e.hyps[i].cold[k-e.nDC]), e.fmtCold(e.hyps[j].cold[k-e.nDC])))
		}
	}
	return notes
}

func (e *Engine) labels(names []string, n int) string {
	var ls []string
	for i, s := range names {
		if i == n {
			ls = append(ls, fmt.Sprintf("and %d more", len(names)-n))
			break
		}
		ls = append(ls, e.Describe(s))
	}
	return strings.Join(ls, ", ")
}

func contains(xs []string, x string) bool {
	for _, y := range xs {
		if y == x {
			return true
		}
	}
	return false
}

// rankPairs returns the best two-fault explanations among the top single
// faults (solved on demand and cached). Cold predictions of a pair take,
// per point, whichever fault changes the healthy reading (the first when
// both do: an approximation).
func (e *Engine) rankPairs(obs []Observation, order []int, post []float64) []Suspect {
	var top []int
	for _, i := range order {
		if e.hyps[i].fault != nil && e.hyps[i].err == nil {
			top = append(top, i)
			if len(top) == pairTopK {
				break
			}
		}
	}
	type cand struct {
		h    *hyp
		logp float64
	}
	var cs []cand
	for _, i := range top {
		h := e.hyps[i]
		cs = append(cs, cand{h, math.Log(h.prior) + e.logLikOf(h, obs)})
	}
	nSingles := len(cs)
	for a := 0; a < len(top); a++ {
		for b := a + 1; b < len(top); b++ {
			ha, hb := e.hyps[top[a]], e.hyps[top[b]]
			h := e.pair(ha, hb)
			if h == nil || h.err != nil {
				continue
			}
			cs = append(cs, cand{h, math.Log(h.prior) + e.logLikOf(h, obs)})
		}
	}
	if len(cs) == nSingles {
		return nil
	}
	lp := make([]float64, len(cs))
	for i, c := range cs {
		lp[i] = c.logp
	}
	p := normalise(lp)
	var out []Suspect
	for i, c := range cs[nSingles:] {
		out = append(out, Suspect{Fault: c.h.name, Label: c.h.label, Probability: p[nSingles+i], Why: e.why(c.h, obs), Group: -1})
	}
	sort.SliceStable(out, func(a, b int) bool { return out[a].Probability > out[b].Probability })
	return out
}

// pairPriorFactor: two independent faults at once are rarer than the
// product of their single priors suggests relative to one fault (our
// choice: the product, scaled down).
const pairPriorFactor = 0.2

// pair returns the two-fault hypothesis a+b, solving it on first use.
func (e *Engine) pair(a, b *hyp) *hyp {
	name := a.name + "+" + b.name
	if h, ok := e.pairs[name]; ok {
		return h
	}
	h := &hyp{name: name, label: a.label + " and " + b.label, prior: pairPriorFactor * a.prior * b.prior}
	set, err := bandsRun(e, []faults.Fault{*a.fault, *b.fault})
	if err != nil {
		h.err = err
	} else {
		e.setLoad(h, set)
		e.fill(h, set)
		base := e.hyps[0].cold
		h.cold = make([]coldPred, len(base))
		for j := range base {
			switch {
			case a.cold[j] != base[j]:
				h.cold[j] = a.cold[j]
			default:
				h.cold[j] = b.cold[j]
			}
		}
	}
	e.pairs[name] = h
	return h
}

// logLikOf computes a hypothesis's log-likelihood from scratch.
func (e *Engine) logLikOf(h *hyp, obs []Observation) float64 {
	ll := make([]float64, max(h.n, 1))
	cl := 0.0
	for _, o := range obs {
		k := e.index[o.Key]
		p := &e.points[k]
		if p.cold {
			cl += coldLogLik(h.cold[k-e.nDC], o.Value, math.Log(OutlierFloor/p.width))
			continue
		}
		e.addReadingTo(h, ll, o, nil)
	}
	return logMeanExp(ll) + cl
}
