// Package infer ranks the likely faults of an amplifier from the readings
// a technician has taken, and says which reading to take next.
//
// It is model-based diagnosis in the manner of J. de Kleer and B. C.
// Williams, "Diagnosing multiple faults", Artificial Intelligence 32
// (1987) 97–130: every hypothesis (healthy, or one part failed in one
// mode, see expect/faults) predicts what each point reads; Bayes' rule,
// p(h | readings) ∝ p(readings | h)·p(h), turns readings into a
// posterior; the next measurement is the one whose reading is expected to
// reduce the entropy of the posterior most (the mutual information
// between hypothesis and reading), per unit of effort.
//
// Predictions are not single numbers: each hypothesis has a cloud of
// Monte Carlo samples of every part within its tolerance, the mains and
// valve-to-valve spread (expect/bands) with the fault applied on top, at
// every DC point of amp.Model.Points and at the cold resistance points of
// expect/cold under the fault. A reading's likelihood under a hypothesis
// is the mean over its samples of a Gaussian kernel whose σ combines the
// meter's accuracy and the model's own error (bands.Sigma), with a small
// outlier floor so that one slightly-off reading never rules a hypothesis
// out entirely.
package infer

import (
	"fmt"
	"math"
	"math/rand/v2"
	pkey "pinwalk/expect/point"
	"reflect"
	"runtime"
	"sort"
	"strings"
	"sync"

	"pinwalk/expect/ac"
	"pinwalk/expect/amp"
	"pinwalk/expect/bands"
	"pinwalk/expect/cold"
	"pinwalk/expect/design"
	"pinwalk/expect/faults"
	"pinwalk/expect/valves"
)

// Options configure an Engine.
type Options struct {
	// Samples per hypothesis (tolerance cloud); 0 means DefaultSamples.
	Samples int
	// Seed of the tolerance samples: the same seed gives the same ranking.
	Seed uint64
	// Workers solving hypotheses in parallel; 0 means GOMAXPROCS.
	Workers int
	// Meter the DC readings are taken with (zero: bands.DefaultMeter);
	// its accuracy sets the reading σ and its input resistance the
	// loading applied to DC-volts predictions.
	Meter bands.Meter
	// Symptoms reported by the owner (see Symptoms); they shift the priors.
	Symptoms []string
	// Cond are the bench conditions of the live readings. A MainsVolts
	// given here is taken as measured and not sampled.
	Cond amp.Conditions
	// Tone, when set, adds the test-tone level at every grid, plate and
	// cathode and at the speaker terminals (keys "V2.5 tone_volts") to
	// every hypothesis's cloud (see ac.go); nil means DC evidence only.
	Tone *ac.Options
	// ACMeter is the meter tone and ripple readings are taken with (zero:
	// true rms, flat).
	ACMeter ACMeter
	// Eager solves every hypothesis's cloud in New. Without it (the
	// default) New solves each fault's nominal only and maps the healthy
	// cloud onto it (see coarseFill); Rank then solves the cloud of every
	// hypothesis that carries weight in the ranking or the next-probe
	// choice, on first need.
	Eager bool
}

// DefaultSamples is the tolerance cloud size per hypothesis.
const DefaultSamples = 200

// Healthy is the name of the no-fault hypothesis.
const Healthy = "healthy"

// Likelihood constants (our choices).
const (
	// OutlierFloor is the probability that any one reading is an outlier
	// (misread, wrong pin, a fault outside the model), spread uniformly
	// over the point's plausible range: it keeps every hypothesis's
	// likelihood above zero.
	OutlierFloor = 0.02
	// MisfitSigmas: the best hypothesis fits when, after conditioning on
	// the readings, no reading lies further than this many σ from its
	// prediction.
	MisfitSigmas = 4.0
	// KernelBandwidth smooths each hypothesis's cloud: every sample's
	// kernel is widened by this fraction of the cloud's own spread at the
	// point (kernel density estimation; Silverman's rule of thumb,
	// (4/(d+2))^(1/(d+4))·n^(−1/(d+4)), gives 0.6–0.75 for n = 200 samples
	// and d = 10–20 independently varying parts: B. W. Silverman, "Density
	// Estimation for Statistics and Data Analysis", 1986, §4.3.2). Without
	// it, a few hundred samples cannot cover a tolerance space of dozens of
	// parts at the 2 % resolution of a reading, and the likelihood would
	// rest on the one nearest sample.
	KernelBandwidth = 0.6
	// OpenOhms: a cold reading at or above this is "open" (over range on
	// a typical meter's top resistance range, common practice: 40–60 MΩ).
	OpenOhms = 60e6
)

// point is one measurable point of the engine: a DC point of the model
// (index into the sample clouds) or a cold point.
type point struct {
	key      string
	label    string
	quantity string // amp quantity, or amp.Ohms for cold points
	cold     bool
	pulled   bool // needs a valve pulled (a valve's heater cold)
	fuse     bool // a fuse out of its holder (ck.ID is the fuse's reference)
	pd       amp.PointDef
	ck       cold.Check
	ratio    float64 // meter loading on DC volts: prediction·ratio + offset
	offset   float64
	width    float64 // background width (outlier floor density 1/width)
}

// coldPred is a hypothesis's cold reading: the tolerance corners, or open.
type coldPred struct {
	lo, nom, hi float64
	open        bool
}

// hyp is one hypothesis with its precomputed predictions.
type hyp struct {
	name                     string // Healthy or "REF:mode"
	label                    string
	fault                    *faults.Fault
	prior                    float64    // normalised, after symptoms
	err                      error      // the nominal did not solve
	n                        int        // samples in the cloud
	failed                   int        // samples that did not converge
	x                        []float64  // DC predictions, point-major: x[k*n+s]; NaN where the point is missing
	valid                    []bool     // per DC point
	bandLo, bandHi, mean, sd []float64  // per DC point: 2.5/97.5 percentiles, mean, sd
	cold                     []coldPred // per cold point
	// nearShort: cold, some B+ net reads under nearShortOhms (powering
	// up would feed the short).
	nearShort bool
	// coarse: the cloud is not solved; sample s at DC point k is
	// ca[k]·(healthy sample s) + cb[k] (see coarseFill). shared: that map
	// is exact (the fault changes no DC value), so it is never solved.
	coarse, shared bool
	ca, cb         []float64
	// load: the meter's loading at the DC-volts points on the fault's own
	// nets, as this hypothesis sees it (point index → prediction·ratio +
	// offset); elsewhere the healthy amplifier's loading stands (see
	// meterMap).
	load map[int]meterLoad
}

// meterLoad is the meter's effect on one DC-volts point: the reading is
// the unloaded volts times ratio plus offset.
type meterLoad struct{ ratio, offset float64 }

// loadOf turns a point's unloaded and loaded nominal into a meterLoad: a
// ratio where the point is well away from 0 V, an offset near it.
func loadOf(unloaded, loaded float64) meterLoad {
	if math.Abs(unloaded) > 0.5 {
		return meterLoad{ratio: loaded / unloaded}
	}
	return meterLoad{ratio: 1, offset: loaded - unloaded}
}

// meterMap returns how the meter reads DC point k under a hypothesis:
// reading = unloaded·ratio + offset. A fault changes the source resistance
// of the nets its part touches (a grid return drifted high is exactly what
// a 10 MΩ meter shows up), so there the hypothesis's own loaded solve
// counts; elsewhere the healthy amplifier's.
func (e *Engine) meterMap(h *hyp, k int) (ratio, offset float64) {
	if l, ok := h.load[k]; ok {
		return l.ratio, l.offset
	}
	return e.points[k].ratio, e.points[k].offset
}

// setLoad records a hypothesis's own meter loading from a set run with
// LoadNets (the nets of its fault's part).
func (e *Engine) setLoad(h *hyp, set *bands.Set) {
	if len(set.Loaded) == 0 {
		return
	}
	h.load = map[int]meterLoad{}
	for k := 0; k < e.nDC; k++ {
		p := &e.points[k]
		if p.quantity != amp.DCVolts {
			continue
		}
		x, ok := set.Loaded[p.pd.Net]
		if !ok {
			continue
		}
		i, ok := set.Index(p.key)
		if !ok {
			continue
		}
		h.load[k] = loadOf(set.Nominal[i], x)
	}
}

// faultNets returns the nets the parts of some faults connect to.
func (e *Engine) faultNets(fs []faults.Fault) []string {
	seen := map[string]bool{}
	var out []string
	for _, f := range fs {
		p := e.d.ByRef[f.Ref]
		if p == nil {
			if i := strings.LastIndex(f.Ref, "."); i > 0 {
				p = e.d.ByRef[f.Ref[:i]]
			}
		}
		if p == nil {
			continue
		}
		for _, t := range p.Terminals {
			if !seen[t.Net] {
				seen[t.Net] = true
				out = append(out, t.Net)
			}
		}
	}
	return out
}

// Engine holds the hypotheses and their predictions for one design, meter
// and bench conditions. Rank may be called from several goroutines.
type Engine struct {
	d                 *design.Design
	m                 *amp.Model
	opt               Options
	roles             map[string]faults.RoleSet
	points            []point // DC points first (nDC of them), then cold points
	nDC               int
	index             map[string]int
	hyps              []*hyp
	byName            map[string]int
	groupAll, groupDC []int // group leader per hypothesis

	tone    *bands.Extra // tone points, nil without Options.Tone
	toneUnc float64      // the AC meter's uncertainty at the tone (fraction)

	hNom []float64 // the healthy nominal per DC point, as read through the meter

	looks     []look // looks with the power off (probe.go)
	lookIndex map[string]int

	healthy *bands.Set         // the healthy cloud as solved (opt.Samples), for the likelihoods
	shown   *bands.Set         // the healthy amplifier at bands.DefaultSamples: the band every command shows
	hBand   map[int]bands.Band // HealthyBand by point, filled on first need (under mu)

	mu    sync.Mutex // guards cache, pairs and the upgrade of coarse clouds
	cache *llCache
	pairs map[string]*hyp
}

// New builds the hypotheses of a design and precomputes their sample
// clouds: one full solve per hypothesis with its fault applied, then
// opt.Samples fast solves on tolerance samples with the fault on top, on
// opt.Workers goroutines. A hypothesis whose nominal does not solve stays
// in the list with its error (Unsolved) and is never ranked; samples that
// fail are counted (Failed). It fails only when the healthy amplifier
// itself does not solve, or on an unknown symptom.
func New(d *design.Design, opt Options) (*Engine, error) {
	if err := checkSymptoms(opt.Symptoms); err != nil {
		return nil, err
	}
	if opt.Samples <= 0 {
		opt.Samples = DefaultSamples
	}
	if opt.Workers <= 0 {
		opt.Workers = runtime.GOMAXPROCS(0)
	}
	if opt.Meter.InputOhms == 0 && opt.Meter.OhmsPerVolt == 0 {
		opt.Meter = bands.DefaultMeter()
	}
	m, err := amp.Build(d)
	if err != nil {
		return nil, err
	}
	e := &Engine{d: d, m: m, opt: opt, index: map[string]int{}, byName: map[string]int{}, pairs: map[string]*hyp{}}
	if err := e.initTone(); err != nil {
		return nil, err
	}

	healthy, err := bands.Run(d, e.bandsOptions(nil, opt.Samples, opt.Seed, opt.Workers))
	if err != nil {
		return nil, fmt.Errorf("infer: the healthy amplifier does not solve: %w", err)
	}
	e.healthy, e.hBand = healthy, map[int]bands.Band{}
	e.roles = faults.Roles(m, healthy.NominalOP)
	loading, _ := healthy.Loading(opt.Meter)
	load := map[string]bands.Loading{}
	for _, l := range loading {
		load[l.Key] = l
	}
	for _, pd := range m.Points() {
		p := point{key: pd.Key(), label: pd.Label, quantity: pd.Quantity, pd: pd, ratio: 1}
		if l, ok := load[p.key]; ok {
			ml := loadOf(l.Unloaded, l.Loaded)
			p.ratio, p.offset = ml.ratio, ml.offset
		}
		e.addPoint(p)
	}
	e.addACPoints()
	e.nDC = len(e.points)
	checks, err := cold.Checks(d)
	if err != nil {
		return nil, fmt.Errorf("infer: cold checks: %w", err)
	}
	for _, c := range checks {
		e.addPoint(point{key: ColdKey(c.ID), label: coldLabel(c), quantity: amp.Ohms, cold: true, ck: c})
	}
	for _, v := range d.Valves() {
		if v.Valve.Type.Heater.Amps > 0 {
			e.addPoint(point{key: ColdKey(v.Ref + " heater"), label: v.Ref + " heater, valve pulled (cold)",
				quantity: amp.Ohms, cold: true, pulled: true, ck: cold.Check{ID: v.Ref + " heater"}})
		}
	}

	for _, f := range d.PartsOfKind(design.Fuse) {
		if len(f.Terminals) == 2 {
			e.addPoint(point{key: ColdKey(f.Ref + " fuse"), label: f.Ref + " fuse, out of its holder (cold)", quantity: amp.Ohms, cold: true, fuse: true,
				ck: cold.Check{ID: f.Ref, From: f.Terminals[0].Net, To: f.Terminals[1].Net, Kind: "fuse"}})
		}
	}

	// Hypotheses and priors.
	all := faults.All(m)
	e.hyps = append(e.hyps, &hyp{name: Healthy, label: "no modelled fault (healthy)"})
	for i := range all {
		f := all[i]
		e.hyps = append(e.hyps, &hyp{name: f.String(), label: faults.Describe(f, m), fault: &f})
	}
	total := 0.0
	for _, h := range e.hyps[1:] {
		h.prior = faults.Prior(m, e.roles, *h.fault) * symptomFactor(d, e.roles, h.fault, opt.Symptoms)
		total += faults.Prior(m, e.roles, *h.fault)
	}
	e.hyps[0].prior = healthyShare / (1 - healthyShare) * total * symptomFactor(d, e.roles, nil, opt.Symptoms)
	sum := 0.0
	for i, h := range e.hyps {
		e.byName[h.name] = i
		sum += h.prior
	}
	for _, h := range e.hyps {
		h.prior /= sum
	}

	// Clouds, in parallel; the healthy one is already solved.
	e.fill(e.hyps[0], healthy)
	e.hNom = make([]float64, e.nDC)
	for k := 0; k < e.nDC; k++ {
		if i, ok := healthy.Index(e.points[k].key); ok {
			e.hNom[k] = healthy.Nominal[i]*e.points[k].ratio + e.points[k].offset
		}
	}
	jobs := make(chan *hyp)
	var wg sync.WaitGroup
	for range opt.Workers {
		wg.Add(1)
		go func() {
			defer wg.Done()
			wm := e.workerModel()
			for h := range jobs {
				samples := opt.Samples
				if !opt.Eager {
					samples = 0 // the nominal only: the cloud waits for Rank
				}
				bo := e.bandsOptions([]faults.Fault{*h.fault}, samples, opt.Seed, 1)
				bo.Model = wm
				set, err := bands.Run(d, bo)
				if err != nil {
					h.err = err
					continue
				}
				e.setLoad(h, set)
				if opt.Eager {
					e.fill(h, set)
				} else {
					e.coarseFill(h, set)
				}
			}
		}()
	}
	for _, h := range e.hyps[1:] {
		if e.tone == nil && dcNeutral(m, *h.fault) {
			// The fault changes no DC value (an open coupling or bypass
			// capacitor): its DC cloud is the healthy one, sample for
			// sample (same seeds), so it is not solved again.
			e.shareHealthy(h)
			continue
		}
		jobs <- h
	}
	close(jobs)
	wg.Wait()
	if err := e.coldAll(checks); err != nil {
		return nil, err
	}
	e.widths()
	e.initLooks()
	e.groupAll = e.group(true)
	e.groupDC = e.group(false)
	return e, nil
}

// workerModel builds the design once for one goroutine's runs of faults
// one after another (bands.Options.Model); nil (each run builds its own)
// if the design will not build, which New has already reported.
func (e *Engine) workerModel() *amp.Model {
	m, err := amp.Build(e.d)
	if err != nil {
		return nil
	}
	return m
}

// bandsOptions are the tolerance-sampling options for a set of faults.
func (e *Engine) bandsOptions(fs []faults.Fault, samples int, seed uint64, workers int) bands.Options {
	o := bands.Options{Samples: samples, Seed: seed, Workers: workers, Cond: e.opt.Cond, FixedMains: e.opt.Cond.MainsVolts > 0, Extra: e.tone,
		Meter: e.opt.Meter, LoadNets: e.faultNets(fs)}
	if len(fs) > 0 {
		o.Values = func(m *amp.Model, v *amp.Values) error {
			for _, f := range fs {
				if err := faults.Apply(m, v, f); err != nil {
					return err
				}
			}
			return nil
		}
	}
	return o
}

func (e *Engine) addPoint(p point) {
	if _, dup := e.index[p.key]; dup {
		return
	}
	e.index[p.key] = len(e.points)
	e.points = append(e.points, p)
}

// ColdKey returns the observation key of a cold point: "cold:B1 ohms",
// "cold:OT1 primary ohms", "cold:V3 heater ohms".
func ColdKey(id string) string { return pkey.ColdKey(id).String() }

func coldLabel(c cold.Check) string {
	if c.Kind == "winding" && strings.HasSuffix(c.ID, " live–neutral") {
		return strings.TrimSuffix(c.ID, " live–neutral") + " plug, live to neutral, power switch on (cold)"
	}
	if c.Kind == "winding" {
		return c.ID + " winding resistance (cold)"
	}
	return c.ID + " to chassis, resistance (cold)"
}

// fill stores a hypothesis's cloud from a bands set (meter loading applied
// to DC-volts predictions).
func (e *Engine) fill(h *hyp, set *bands.Set) {
	n := len(set.Values)
	rows := set.Values
	if n == 0 { // no converged sample: the nominal stands alone
		rows = [][]float64{set.Nominal}
		n = 1
	}
	h.n, h.failed = n, set.Failed
	h.x = make([]float64, e.nDC*n)
	h.valid = make([]bool, e.nDC)
	h.bandLo, h.bandHi = make([]float64, e.nDC), make([]float64, e.nDC)
	h.mean, h.sd = make([]float64, e.nDC), make([]float64, e.nDC)
	col := make([]float64, n)
	for k := 0; k < e.nDC; k++ {
		p := &e.points[k]
		i, ok := set.Index(p.key)
		if !ok {
			for s := range n {
				h.x[k*n+s] = math.NaN()
			}
			continue
		}
		h.valid[k] = true
		ratio, offset := e.meterMap(h, k)
		var sx, sxx float64
		for s := range n {
			v := rows[s][i]*ratio + offset
			h.x[k*n+s] = v
			col[s] = v
			sx += v
			sxx += v * v
		}
		mu := sx / float64(n)
		h.mean[k], h.sd[k] = mu, math.Sqrt(max(sxx/float64(n)-mu*mu, 0))
		h.bandLo[k], h.bandHi[k] = tailQuantiles(col, 0.025, 0.975)
	}
}

// Coarse clouds. A fault's own nominal is solved exactly; its tolerance
// spread is borrowed from the healthy cloud, point by point: where the
// fault leaves a point on the same side of zero and at most coarseRatio
// times its healthy value, each healthy sample is scaled by
// nominal_fault/nominal_healthy (a point pulled to 0 V gets no spread, a
// halved one half the spread); elsewhere the healthy spread is shifted
// onto the fault's nominal. The spread is then widened to at least
// coarseWiden of the fault's shift from healthy, so that a coarse cloud
// errs on the wide side: it only has to keep a hypothesis in play until
// Rank solves it (upgrade), never to rule one out.
const (
	coarseRatio = 2.0
	coarseWiden = 0.05
)

// coarseFill sets a hypothesis's coarse cloud from its nominal solve.
func (e *Engine) coarseFill(h *hyp, set *bands.Set) {
	hh := e.hyps[0]
	h.coarse, h.n, h.failed = true, hh.n, 0
	h.valid = make([]bool, e.nDC)
	h.ca, h.cb = make([]float64, e.nDC), make([]float64, e.nDC)
	h.bandLo, h.bandHi = make([]float64, e.nDC), make([]float64, e.nDC)
	h.mean, h.sd = make([]float64, e.nDC), make([]float64, e.nDC)
	for k := 0; k < e.nDC; k++ {
		p := &e.points[k]
		i, ok := set.Index(p.key)
		if !ok {
			continue
		}
		ratio, offset := e.meterMap(h, k)
		xf := set.Nominal[i]*ratio + offset
		h.valid[k] = true
		var a, b float64
		switch x0 := e.hNom[k]; {
		case !hh.valid[k]:
			a, b = 0, xf
		case x0 != 0 && xf/x0 >= 0 && xf/x0 <= coarseRatio:
			a, b = xf/x0, 0
		default:
			a, b = 1, xf-x0
		}
		h.ca[k], h.cb[k] = a, b
		lo, hi := a*hh.bandLo[k]+b, a*hh.bandHi[k]+b
		if lo > hi {
			lo, hi = hi, lo
		}
		h.bandLo[k], h.bandHi[k] = lo, hi
		h.mean[k] = a*hh.mean[k] + b
		h.sd[k] = max(math.Abs(a)*hh.sd[k], coarseWiden*math.Abs(xf-e.hNom[k]))
	}
}

// shareHealthy gives a hypothesis the healthy DC cloud, exactly.
func (e *Engine) shareHealthy(h *hyp) {
	hh := e.hyps[0]
	h.coarse, h.shared, h.n, h.failed = true, true, hh.n, hh.failed
	h.valid = hh.valid
	h.ca, h.cb = make([]float64, e.nDC), make([]float64, e.nDC)
	for k := range h.ca {
		h.ca[k] = 1
	}
	h.bandLo, h.bandHi, h.mean, h.sd = hh.bandLo, hh.bandHi, hh.mean, hh.sd
}

// cloud returns a hypothesis's samples at DC point k: its own, or the
// healthy ones mapped (written into buf, which must hold the healthy
// cloud's size).
func (e *Engine) cloud(h *hyp, k int, buf []float64) []float64 {
	if !h.coarse {
		return h.x[k*h.n : (k+1)*h.n]
	}
	hh := e.hyps[0]
	xs := hh.x[k*hh.n : (k+1)*hh.n]
	buf = buf[:len(xs)]
	a, b := h.ca[k], h.cb[k]
	for s, x := range xs {
		buf[s] = a*x + b
	}
	return buf
}

// upgrade solves the clouds of the given hypotheses (coarse, not shared)
// on the engine's workers and brings the likelihood cache up to date for
// them. The caller holds e.mu.
func (e *Engine) upgrade(idx []int) {
	jobs := make(chan *hyp)
	var wg sync.WaitGroup
	for range e.opt.Workers {
		wg.Add(1)
		go func() {
			defer wg.Done()
			wm := e.workerModel()
			for h := range jobs {
				bo := e.bandsOptions([]faults.Fault{*h.fault}, e.opt.Samples, e.opt.Seed, 1)
				bo.Model = wm
				set, err := bands.Run(e.d, bo)
				if err != nil {
					h.err = err
					continue
				}
				e.setLoad(h, set)
				e.fill(h, set)
			}
		}()
	}
	for _, i := range idx {
		jobs <- e.hyps[i]
	}
	close(jobs)
	wg.Wait()
	for _, i := range idx {
		h := e.hyps[i]
		h.coarse, h.ca, h.cb = false, nil, nil
		if c := e.cache; c != nil {
			c.ll[i] = make([]float64, max(h.n, 1))
			for _, o := range c.obs {
				if k := e.index[o.Key]; !e.points[k].cold {
					e.addReadingTo(h, c.ll[i], o, nil)
				}
			}
		}
	}
}

// ensureSolved upgrades one hypothesis if its cloud is coarse. The caller
// holds e.mu.
func (e *Engine) ensureSolved(i int) {
	if h := e.hyps[i]; h.coarse && !h.shared && h.err == nil {
		e.upgrade([]int{i})
	}
}

// tailQuantiles returns the lo and hi quantiles (lo < 0.5 < hi) of xs by
// Hazen's plotting position, as quantile does on the sorted values, but
// sorting only the few values in each tail: one pass keeps the m smallest
// and m largest (m = what the positions need), which is all the 2.5 and
// 97.5 % points use. xs is reordered.
func tailQuantiles(xs []float64, lo, hi float64) (float64, float64) {
	n := len(xs)
	m := min(n, int(math.Max(lo, 1-hi)*float64(n))+2)
	if 2*m >= n {
		sort.Float64s(xs)
		return quantile(xs, lo), quantile(xs, hi)
	}
	// Partial selection sort of both tails: m passes each, O(n·m).
	for i := 0; i < m; i++ {
		j := i
		for k := i + 1; k < n; k++ {
			if xs[k] < xs[j] {
				j = k
			}
		}
		xs[i], xs[j] = xs[j], xs[i]
	}
	for i := n - 1; i >= n-m; i-- {
		j := i
		for k := m; k < i; k++ {
			if xs[k] > xs[j] {
				j = k
			}
		}
		xs[i], xs[j] = xs[j], xs[i]
	}
	return quantile(xs, lo), quantile(xs, hi)
}

// quantile of sorted xs by Hazen's plotting position.
func quantile(xs []float64, q float64) float64 {
	n := len(xs)
	pos := q*float64(n) - 0.5
	if pos <= 0 {
		return xs[0]
	}
	if pos >= float64(n-1) {
		return xs[n-1]
	}
	i := int(pos)
	t := pos - float64(i)
	return xs[i] + t*(xs[i+1]-xs[i])
}

// coldAll computes every hypothesis's cold predictions.
func (e *Engine) coldAll(base []cold.Check) error {
	nc := len(e.points) - e.nDC
	type res struct {
		h   *hyp
		cs  []cold.Check
		err error
	}
	set := cold.NewFaultSet(e.d, e.m, base)
	jobs := make(chan *hyp)
	out := make(chan res)
	var wg sync.WaitGroup
	for range e.opt.Workers {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for h := range jobs {
				if h.fault == nil {
					out <- res{h, base, nil}
					continue
				}
				cs, _, err := set.Checks(*h.fault, false)
				out <- res{h, cs, err}
			}
		}()
	}
	go func() {
		for _, h := range e.hyps {
			jobs <- h
		}
		close(jobs)
		wg.Wait()
		close(out)
	}()
	var firstErr error
	for r := range out {
		if r.err != nil {
			if firstErr == nil {
				firstErr = fmt.Errorf("infer: cold checks under %s: %w", r.h.name, r.err)
			}
			continue
		}
		r.h.cold = make([]coldPred, nc)
		for j, c := range r.cs {
			r.h.cold[j] = coldPred{lo: c.Tol[0], nom: c.Ohms, hi: c.Tol[1], open: c.Open}
		}
		for j := len(r.cs); j < nc; j++ {
			if p := e.points[e.nDC+j]; p.fuse {
				r.h.cold[j] = e.fuseCold(p, r.h)
			} else {
				r.h.cold[j] = e.heaterCold(p, r.h)
			}
		}
	}
	if firstErr == nil {
		e.markNearShorts()
	}
	return firstErr
}

// nearShortOhms: a hypothesis whose cold B+ reading is under this puts a
// near-short on the supply: at the 250–450 V of a valve amplifier's HT it
// would draw a quarter of an amp or more, beyond an HT winding's rating
// (common practice; a leaky electrolytic of tens of kΩ is a load, not a
// short).
const nearShortOhms = 1e3

// markNearShorts sets each hypothesis's nearShort. A fault whose kind
// declares it a powered short (faults.PoweredShort: a shorted silicon
// diode, a valve rectifier arcing) is one whatever the cold readings show
// (a bridge's shorted diode leaves B+ to chassis high): powered, it
// shorts the HT winding.
func (e *Engine) markNearShorts() {
	for _, h := range e.hyps[1:] {
		if f := h.fault; f != nil && faults.PoweredShort(e.m, *f) {
			h.nearShort = true
			continue
		}
		for j, c := range h.cold {
			if p := &e.points[e.nDC+j]; p.ck.Kind == "b+" && !c.open && c.hi < nearShortOhms {
				h.nearShort = true
				break
			}
		}
	}
}

// fuseOhmsHi: the most a good fuse out of its holder reads with the
// meter's leads (common practice: a glass fuse of an amp or two reads a
// few tens of milliohms, faults.FuseOhms; the leads add more).
const fuseOhmsHi = 0.3

// fuseCold is a fuse's reading out of its holder: what its kind says the
// fuse reads (faults.OutOfCircuit: open when it is the hypothesis's
// blown fuse), between 0 and fuseOhmsHi when good.
func (e *Engine) fuseCold(p point, h *hyp) coldPred {
	if r, ok := faults.OutOfCircuit(e.m, p.ck.ID, h.fault); ok && r.OK && math.IsInf(r.Ohms, 1) {
		return coldPred{lo: math.Inf(1), nom: math.Inf(1), hi: math.Inf(1), open: true}
	}
	return coldPred{lo: 0, nom: faults.FuseOhms, hi: fuseOhmsHi}
}

// Cold heater resistance of a valve out of its socket: a tungsten heater's
// cold resistance is roughly a tenth to a quarter of its hot resistance
// V/I (common practice: the resistance of tungsten rises several times
// from room temperature to working temperature).
const (
	heaterColdLo = 0.08
	heaterColdHi = 0.25
)

func (e *Engine) heaterCold(p point, h *hyp) coldPred {
	ref := strings.TrimSuffix(p.ck.ID, " heater")
	v := e.d.ByRef[ref]
	if h.fault != nil && h.fault.Ref == ref && h.fault.Mode == faults.HeaterOpen {
		return coldPred{lo: math.Inf(1), nom: math.Inf(1), hi: math.Inf(1), open: true}
	}
	hot := v.Valve.Type.Heater.Volts / v.Valve.Type.Heater.Amps
	return coldPred{lo: heaterColdLo * hot, nom: math.Sqrt(heaterColdLo*heaterColdHi) * hot, hi: heaterColdHi * hot}
}

// widths sets each point's background width: the span of every
// hypothesis's predictions, widened.
func (e *Engine) widths() {
	for k := range e.points {
		lo, hi := math.Inf(1), math.Inf(-1)
		for _, h := range e.hyps {
			if h.err != nil {
				continue
			}
			if k < e.nDC {
				if h.valid[k] {
					lo, hi = min(lo, h.bandLo[k], h.mean[k]-3*h.sd[k]), max(hi, h.bandHi[k], h.mean[k]+3*h.sd[k])
				}
			} else if c := h.cold[k-e.nDC]; !c.open {
				lo, hi = min(lo, c.lo), max(hi, c.hi)
			}
		}
		if !(hi > lo) {
			lo, hi = 0, 1
		}
		span := hi - lo
		e.points[k].width = 1.5*span + 10*e.sigma(e.points[k].quantity, max(math.Abs(lo), math.Abs(hi)))
	}
}

// sigmaOf is the σ of a reading of x (bands.Sigma: the model error of the
// quantity and the meter's error on its function and range, the same two
// errors every reading band carries). Resistance is read on a digital
// meter's ohms ranges (the probe contact after nulling the leads is in
// the ohms model error).
func sigmaOf(q string, x float64, mt bands.Meter) float64 {
	if q == amp.Ohms {
		mt = bands.DigitalMeter
	}
	return bands.Sigma(bands.Reading{Value: x, Meter: mt}, q)
}

// Keys returns every point key the engine predicts, DC points in
// amp.Model.Points order, then cold points ("cold:B1 ohms").
func (e *Engine) Keys() []string {
	out := make([]string, len(e.points))
	for i, p := range e.points {
		out[i] = p.key
	}
	return out
}

// Hypotheses returns the hypothesis names: "healthy", then every single
// fault ("R7:open") in design order.
func (e *Engine) Hypotheses() []string {
	out := make([]string, len(e.hyps))
	for i, h := range e.hyps {
		out[i] = h.name
	}
	return out
}

// Label returns a point's description ("V2 pin 3 plate"), or "".
func (e *Engine) Label(key string) string {
	if i, ok := e.index[key]; ok {
		return e.points[i].label
	}
	if j, ok := e.lookIndex[key]; ok {
		return e.looks[j].label
	}
	return ""
}

// Describe returns a hypothesis's description ("R7 (470 Ω) open circuit").
func (e *Engine) Describe(name string) string {
	if i, ok := e.byName[name]; ok {
		return e.hyps[i].label
	}
	return name
}

// Prior returns a hypothesis's prior probability (after symptoms).
func (e *Engine) Prior(name string) float64 {
	if i, ok := e.byName[name]; ok {
		return e.hyps[i].prior
	}
	return 0
}

// Unsolved lists the hypotheses whose nominal did not solve, with the
// error: they are never ranked.
func (e *Engine) Unsolved() []string {
	e.mu.Lock()
	defer e.mu.Unlock()
	return e.unsolved()
}

func (e *Engine) unsolved() []string {
	var out []string
	for _, h := range e.hyps {
		if h.err != nil {
			out = append(out, h.name+": "+h.err.Error())
		}
	}
	return out
}

// Failed returns the number of tolerance samples, over all hypotheses,
// that did not converge, and the number asked for.
func (e *Engine) Failed() (failed, asked int) {
	e.mu.Lock()
	defer e.mu.Unlock()
	for _, h := range e.hyps {
		if h.err == nil && (!h.coarse || h.shared) {
			failed += h.failed
			asked += e.opt.Samples
		}
	}
	return failed, asked
}

// Band returns the predicted band of a point under a hypothesis: the
// 2.5th and 97.5th percentiles of its tolerance cloud (as read through the
// meter) and the cloud's mean; for a cold point the tolerance corners and
// the nominal (+Inf for open). ok is false for an unknown hypothesis or
// key, an unsolved hypothesis, or a point the hypothesis does not predict.
func (e *Engine) Band(fault, key string) (lo, nominal, hi float64, ok bool) {
	hi0, okh := e.byName[fault]
	k, okk := e.index[key]
	if !okh || !okk {
		return 0, 0, 0, false
	}
	e.mu.Lock()
	defer e.mu.Unlock()
	if k < e.nDC {
		e.ensureSolved(hi0)
	}
	h := e.hyps[hi0]
	if h.err != nil {
		return 0, 0, 0, false
	}
	if k >= e.nDC {
		c := h.cold[k-e.nDC]
		return c.lo, c.nom, c.hi, true
	}
	if !h.valid[k] {
		return 0, 0, 0, false
	}
	return h.bandLo[k], h.mean[k], h.bandHi[k], true
}

// HealthyBand returns the band a reading of key should fall in on a
// healthy amplifier: bands.Set.Expect on the healthy cloud with the
// engine's meter (a cold point: bands.FromSpread on its tolerance
// corners), the band `expect`, the walk and the job sheet give under the
// same conditions and samples. diagnose shows it ("healthy predicts …").
func (e *Engine) HealthyBand(key string) (bands.Band, bool) {
	k, ok := e.index[key]
	if !ok {
		return bands.Band{}, false
	}
	e.mu.Lock()
	defer e.mu.Unlock()
	return e.healthyBand(k)
}

// shownSet is the healthy amplifier sampled as expect and the walk sample
// it (bands.DefaultSamples, the same seed and conditions), so the band a
// reading is shown against is the same in every command; the likelihood
// clouds keep opt.Samples (their size is a speed setting, not what the
// technician reads). It is solved on first need; e.mu must be held.
func (e *Engine) shownSet() *bands.Set {
	if e.shown != nil {
		return e.shown
	}
	e.shown = e.healthy
	if e.opt.Samples != bands.DefaultSamples {
		o := e.bandsOptions(nil, bands.DefaultSamples, e.opt.Seed, e.opt.Workers)
		o.Extra = nil
		if set, err := bands.Run(e.d, o); err == nil {
			e.shown = set
		}
	}
	return e.shown
}

// healthyBand is HealthyBand by point index; e.mu must be held.
func (e *Engine) healthyBand(k int) (bands.Band, bool) {
	if b, ok := e.hBand[k]; ok {
		return b, b.Quantity != ""
	}
	p := &e.points[k]
	var b bands.Band
	switch {
	case p.cold:
		if c := e.hyps[0].cold[k-e.nDC]; !c.open && !p.pulled {
			b = bands.FromSpread(amp.Ohms, c.nom, c.lo, c.hi, e.opt.Meter, "tolerance corners of the parts in the path")
		}
	case k < e.nDC && e.healthy != nil:
		if bb, err := e.shownSet().Expect(p.key, e.opt.Meter); err == nil {
			b = bb
		}
	}
	e.hBand[k] = b
	return b, b.Quantity != ""
}

// Simulate returns what a real amplifier with the given fault (or
// "healthy") would read at every point: one fresh tolerance sample, drawn
// from a generator stream the precomputed clouds never use, solved with
// the fault applied, read through the meter (its loading, and a reading
// error drawn from a normal with σ = half the meter's error limit,
// truncated at the limit). Cold points are drawn uniformly between the
// hypothesis's tolerance corners, with the same meter error (an open
// reading stays +Inf).
func (e *Engine) Simulate(fault string, seed uint64) (map[string]float64, error) {
	i, ok := e.byName[fault]
	if !ok {
		return nil, fmt.Errorf("infer: no hypothesis %q%s", fault, didYouMean(fault, e.Hypotheses()))
	}
	h := e.hyps[i]
	var fs []faults.Fault
	if h.fault != nil {
		fs = []faults.Fault{*h.fault}
	}
	// A seed distinct from the clouds' (they use stream k < Samples of
	// opt.Seed): a mixed seed that is never equal to opt.Seed.
	s2 := mix64(seed ^ 0x5bd1e9955bd1e995)
	if s2 == e.opt.Seed {
		s2++
	}
	bo := e.bandsOptions(fs, 1, s2, 1)
	bo.LoadNets, bo.ReadThroughMeter = nil, true
	set, err := bands.Run(e.d, bo)
	if err != nil {
		return nil, err
	}
	if len(set.Values) == 0 {
		return nil, fmt.Errorf("infer: simulated sample under %s did not converge: %s", fault, strings.Join(set.FailErrs, "; "))
	}
	r := rand.New(rand.NewPCG(seed, 0x9e3779b97f4a7c15))
	noise := func(x float64, q string) float64 {
		lim := e.accuracy(q, x)
		z := r.NormFloat64()
		for math.Abs(z) > 2 {
			z = r.NormFloat64()
		}
		return x + z*lim/2
	}
	out := map[string]float64{}
	for k := 0; k < e.nDC; k++ {
		p := &e.points[k]
		j, ok := set.Index(p.key)
		if !ok {
			continue
		}
		out[p.key] = noise(set.Values[0][j], p.quantity) // read through the meter already
	}
	for j, c := range h.cold {
		p := &e.points[e.nDC+j]
		if c.open {
			out[p.key] = math.Inf(1)
			continue
		}
		out[p.key] = max(0, noise(c.lo+(c.hi-c.lo)*r.Float64(), amp.Ohms))
	}
	// Looks: the sign shows with its share (a stream of its own, so the
	// readings above do not change with the looks).
	rl := rand.New(rand.NewPCG(seed, 0x6c6f6f6b))
	for j, lk := range e.looks {
		out[lk.key] = 0
		if rl.Float64() < e.seenShare(i, j) {
			out[lk.key] = 1
		}
	}
	return out, nil
}

// mix64 is the SplitMix64 finaliser (a bijection on uint64).
func mix64(z uint64) uint64 {
	z += 0x9e3779b97f4a7c15
	z = (z ^ (z >> 30)) * 0xbf58476d1ce4e5b9
	z = (z ^ (z >> 27)) * 0x94d049bb133111eb
	return z ^ (z >> 31)
}

func didYouMean(w string, cands []string) string {
	if s := design.Suggest(w, cands); len(s) > 0 {
		return fmt.Sprintf(" (did you mean %q?)", s[0])
	}
	return ""
}

// heaterPins returns a valve's heater pins for a setup note ("2 and 7").
func heaterPins(v *design.Part) string {
	ps := v.Valve.Type.PinsOf("", valves.Heater)
	s := make([]string, len(ps))
	for i, p := range ps {
		s[i] = fmt.Sprint(p)
	}
	return strings.Join(s, " and ")
}

// dcNeutral reports whether a fault leaves every value the DC solve uses
// unchanged (it only marks capacitors open, which matters to AC analysis
// alone).
func dcNeutral(m *amp.Model, f faults.Fault) bool {
	v := m.NominalValues()
	w := v.Clone()
	if err := faults.Apply(m, w, f); err != nil {
		return false
	}
	if len(w.CapOpen) == 0 {
		return false // a fault that changes nothing at all would be odd: solve it
	}
	w.CapOpen = nil
	return reflect.DeepEqual(v, w)
}

// Predicted returns a hypothesis's predicted mean at a DC point (as read
// through the meter) and the healthy amplifier's band there, without
// solving a lazy hypothesis's cloud (its mean is its nominal carried onto
// the healthy spread). ok is false for an unknown hypothesis or point, a
// cold point, or one the hypothesis does not predict.
func (e *Engine) Predicted(fault, key string) (mean, healthyLo, healthyHi float64, ok bool) {
	i, okh := e.byName[fault]
	k, okk := e.index[key]
	if !okh || !okk || k >= e.nDC {
		return 0, 0, 0, false
	}
	e.mu.Lock()
	defer e.mu.Unlock()
	h, hh := e.hyps[i], e.hyps[0]
	if h.err != nil || !h.valid[k] || !hh.valid[k] {
		return 0, 0, 0, false
	}
	return h.mean[k], hh.bandLo[k], hh.bandHi[k], true
}

// NearShort reports whether a hypothesis puts a near-short on a B+ net
// (cold): the fuse would blow at switch-on.
func (e *Engine) NearShort(fault string) bool {
	i, ok := e.byName[fault]
	return ok && e.hyps[i].nearShort
}
