// Package bands turns the whole-amplifier solver into tolerance bands: the
// range each reading should fall in on a healthy amplifier built from parts
// within their tolerances, under given bench conditions (mains, variac), as
// read by a given meter.
//
// Run draws Monte Carlo samples of every part within its tolerance, of the
// transformer, of the mains and of valve-to-valve spread (see sample.go
// for the distributions), solves each with the solver's fast supply path
// and reports, per point, the nominal value and the 2.5th and 97.5th
// percentiles. Set.Condition re-weights the samples by the likelihood of
// readings already taken (Bayes' rule), so the bands of points not yet
// measured tighten. Loading shows where a meter's input resistance pulls a
// reading. Results are deterministic for a seed and do not depend on the
// number of workers.
package bands

import (
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"runtime"
	"sort"
	"sync"
	"sync/atomic"

	"pinwalk/expect/amp"
	"pinwalk/expect/design"
)

// DefaultSamples is the number of tolerance samples behind every band a
// technician is shown, whichever command shows it (expect, the walk, the
// job sheet, diagnose's healthy band): one figure, so the same point under
// the same conditions reads the same everywhere. With 1000 samples the
// 2.5th and 97.5th percentiles each rest on 25 samples; their own sampling
// error is then about ±0.5 % in probability (binomial, √(p(1−p)/n)),
// small beside the model and meter terms added to every band.
const DefaultSamples = 1000

// Options control a Run. The zero value asks for the nominal solve only.
type Options struct {
	Samples int    // Monte Carlo samples (0: nominal only)
	Seed    uint64 // the same seed gives the same samples
	Workers int    // goroutines; 0 means GOMAXPROCS
	Cond    amp.Conditions
	// FixedMains: the mains is known (measured, or fixed by the caller in
	// Cond.MainsVolts) and is not sampled.
	FixedMains bool
	// Values, when set, is applied to the nominal values and to every
	// sample after its tolerances are drawn (fault injection). An error on
	// the nominal values fails the Run; on a sample it fails that sample.
	// It is called from several goroutines at once, each with its own
	// model: it must not write shared state.
	Values func(m *amp.Model, v *amp.Values) error
	// Meter the readings are taken with, for Set.Expect (zero:
	// DefaultMeter).
	Meter Meter
	// Extra, when set, adds points computed from each solved operating
	// point (AC tone levels, hum) to the set, sampled like the DC ones.
	Extra *Extra
	// LoadNets: Run also solves the nominal with Meter's input resistance
	// from each of these nets to chassis, one net at a time, and stores
	// the net's volts as read in Set.Loaded (nets outside the DC network
	// are left out).
	LoadNets []string
	// ReadThroughMeter: every sample's DC-volts points are the readings
	// Meter would give, each net solved again with the meter's input
	// resistance on it (one more solve per net); the nominal stays
	// unloaded. For simulating a bench reading, not for bands.
	ReadThroughMeter bool
	// Progress, when set, is told how far a long computation has got:
	// stage "samples" (the Monte Carlo samples of Run) or "meter loading"
	// (Set.Loading, one solve per net), done of total. Calls are never
	// concurrent; done rises by one each time.
	Progress func(stage string, done, total int)
	// Model, when set, is the design already built (amp.Build of the
	// design Run is given) for Run to solve the nominal on, and the
	// samples too when they run on one worker, instead of building its
	// own: a caller that runs many faults of one design keeps one model
	// per goroutine. Run changes the model's circuit as any solve does;
	// no other solve may use the model until Run returns.
	Model *amp.Model
}

// progress serialises Options.Progress calls from several goroutines.
type progress struct {
	mu    sync.Mutex
	done  int
	total int
	stage string
	f     func(stage string, done, total int)
}

func (p *progress) step() {
	if p == nil || p.f == nil {
		return
	}
	p.mu.Lock()
	p.done++
	p.f(p.stage, p.done, p.total)
	p.mu.Unlock()
}

// Extra describes points beyond the model's DC points. New is called once
// per model (one per worker) and returns the evaluator for that model;
// Eval writes one value per Points entry into dst.
type Extra struct {
	Points []amp.PointDef
	New    func(m *amp.Model) (Eval func(op *amp.OP, v *amp.Values, dst []float64) error, err error)
}

// Set is the outcome of a Run: per point the nominal value and every
// converged sample's value, with the samples' weights.
type Set struct {
	Points  []amp.PointDef // points with a finite nominal value
	Nominal []float64      // per point, the nominal solve
	// Values[j][i] is point i in converged sample j; Sample[j] is that
	// sample's index (its generator stream) in 0..Samples-1.
	Values [][]float64
	Sample []int
	// Weights per converged sample: all 1 until conditioned.
	Weights []float64
	Samples int // samples asked for
	// Failed samples did not converge (or the Values hook failed on them);
	// they are counted, never silently dropped. FailErrs holds up to
	// MaxFailErrs distinct messages.
	Failed   int
	FailErrs []string
	// ESS is the effective sample size (Σw)²/Σw², equal to the number of
	// converged samples until conditioned.
	ESS float64
	// Degenerate: conditioning left fewer than MinESS effective samples;
	// Reason says why and Tempered the fraction of the readings'
	// log-likelihood kept to reach MinESS (1 when not degenerate).
	Degenerate bool
	// Misfit: a reading lies outside what a healthy amplifier can read
	// (beyond its band by more than 3σ of the reading): the "does not fit
	// a healthy amplifier" alarm. A set can be Degenerate without it.
	Misfit    bool
	Reason    string
	Tempered  float64
	Cond      amp.Conditions
	NominalOP *amp.OP
	Readings  []Reading // readings the set is conditioned on
	// Loaded: per net of Options.LoadNets, the nominal volts as read
	// through Options.Meter.
	Loaded map[string]float64

	d            *design.Design
	opt          Options
	index        map[string]int
	netElectrode map[string]string // a valve electrode on each net
	meters       *meterCache       // the meter's loading, per input resistance (meter.go)
}

// MaxFailErrs bounds the distinct failure messages kept.
const MaxFailErrs = 5

// blockSize is the number of samples solved by one fresh model and
// solver: each block starts from the same solver state, which makes every
// sample's result independent of which worker solved it and after what.
const blockSize = 50

// Band is a point's expected range. Set.Band fills only Nominal, Low and
// High (the model's own spread); Set.Expect and FromSpread give the band
// of a reading, with the meter and the model error, and say why.
type Band struct {
	Nominal, Low, High float64
	// Quantity of the point; Function the meter function it is read on
	// ("DC volts", "AC volts (true rms)"); Range the meter range in use.
	Quantity, Function string
	Range              Range
	// BelowResolution: the nominal value is below one count of the range:
	// the meter shows 0 for it and the band is "under High".
	BelowResolution bool
	// PP is the peak-to-peak band of a ripple reading (on a scope), beside
	// the rms one the meter shows; nil for other quantities.
	PP *Band
	// Why lists, in words, what the band is conditioned on and widened by.
	Why []string
}

// Width is High − Low.
func (b Band) Width() float64 { return b.High - b.Low }

// Contains reports whether x lies within the band.
func (b Band) Contains(x float64) bool { return x >= b.Low && x <= b.High }

// Run solves the design's nominal operating point at opt.Cond and then
// opt.Samples tolerance samples. The nominal solve failing is an error;
// failing samples are counted in Set.Failed.
func Run(d *design.Design, opt Options) (*Set, error) {
	if opt.Samples < 0 {
		return nil, fmt.Errorf("bands: %d samples: expected 0 or more", opt.Samples)
	}
	nomRun, err := solveNominal(d, opt)
	if err != nil {
		return nil, err
	}
	m, nom := nomRun.m, nomRun.op
	set := &Set{Samples: opt.Samples, Cond: opt.Cond, NominalOP: nom, d: d, opt: opt, Tempered: 1, meters: &meterCache{}}
	set.opt.Model = nil // the caller's, for this Run only
	for _, pd := range m.Points() {
		x := m.Value(nom, pd)
		if math.IsNaN(x) || math.IsInf(x, 0) {
			continue
		}
		set.Points = append(set.Points, pd)
		set.Nominal = append(set.Nominal, x)
	}
	nDC := len(set.Points)
	if opt.Extra != nil {
		eval, err := opt.Extra.New(m)
		if err != nil {
			return nil, err
		}
		xs := make([]float64, len(opt.Extra.Points))
		if err := eval(nom, nomRun.base, xs); err != nil {
			return nil, fmt.Errorf("nominal extra points: %w", err)
		}
		set.Points = append(set.Points, opt.Extra.Points...)
		set.Nominal = append(set.Nominal, xs...)
	}
	set.buildIndex()
	if len(opt.LoadNets) > 0 {
		set.Loaded = map[string]float64{}
		for _, net := range opt.LoadNets {
			if x, ok := nomRun.loaded(opt, nomRun.base, nom, net); ok {
				set.Loaded[net] = x
			}
		}
	}

	n := opt.Samples
	type result struct {
		vals []float64
		err  error
	}
	results := make([]result, n)
	nBlocks := (n + blockSize - 1) / blockSize
	workers := opt.Workers
	if workers <= 0 {
		workers = runtime.GOMAXPROCS(0)
	}
	workers = min(workers, max(nBlocks, 1))
	bopt := opt
	if workers > 1 {
		bopt.Model = nil // one model per block solver
	}
	var next atomic.Int64
	var wg sync.WaitGroup
	var buildErr error
	var once sync.Once
	pl := newPlan(m)
	prog := &progress{total: n, stage: "samples", f: opt.Progress}
	for range workers {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for {
				b := int(next.Add(1) - 1)
				if b >= nBlocks {
					return
				}
				w, err := newBlockSolver(d, bopt, nom)
				if err != nil {
					once.Do(func() { buildErr = err })
					return
				}
				for k := b * blockSize; k < min(n, (b+1)*blockSize); k++ {
					vals, err := w.sample(k, pl, set.Points[:nDC], len(set.Points))
					results[k] = result{vals, err}
					prog.step()
				}
			}
		}()
	}
	wg.Wait()
	if buildErr != nil {
		return nil, buildErr
	}
	seen := map[string]bool{}
	for k, r := range results {
		if r.err != nil {
			set.Failed++
			msg := fmt.Sprintf("sample %d: %v", k, r.err)
			if !seen[r.err.Error()] && len(set.FailErrs) < MaxFailErrs {
				seen[r.err.Error()] = true
				set.FailErrs = append(set.FailErrs, msg)
			}
			continue
		}
		set.Values = append(set.Values, r.vals)
		set.Sample = append(set.Sample, k)
		set.Weights = append(set.Weights, 1)
	}
	set.ESS = float64(len(set.Values))
	return set, nil
}

// nominalRun is a solved nominal operating point with its model.
type nominalRun struct {
	m    *amp.Model
	s    *amp.Solver
	base *amp.Values
	op   *amp.OP
}

// solveNominal builds the design and solves it in full (supply simulated)
// at opt.Cond with the nominal values, after the Values hook.
func solveNominal(d *design.Design, opt Options) (*nominalRun, error) {
	m := opt.Model
	if m == nil {
		var err error
		if m, err = amp.Build(d); err != nil {
			return nil, err
		}
	}
	s := amp.NewSolver(m)
	base := m.NominalValues()
	if opt.Values != nil {
		if err := opt.Values(m, base); err != nil {
			return nil, err
		}
	}
	op := &amp.OP{}
	if err := s.Solve(opt.Cond, base, false, op); err != nil {
		return nil, fmt.Errorf("nominal solve: %w", err)
	}
	if err := s.CacheSupplyAt(opt.Cond, base, op); err != nil {
		return nil, err
	}
	return &nominalRun{m: m, s: s, base: base, op: op}, nil
}

// loaded solves the operating point op (values v) again with the meter of
// opt on net and returns the net's volts; ok is false when the net has no
// meter slot or the loaded solve fails.
func (r *nominalRun) loaded(opt Options, v *amp.Values, op *amp.OP, net string) (float64, bool) {
	return loadedVolts(r.m, r.s, opt, opt.Cond, v, op, net)
}

func loadedVolts(m *amp.Model, s *amp.Solver, opt Options, c amp.Conditions, v *amp.Values, op *amp.OP, net string) (float64, bool) {
	slot, ok := m.MeterSlot(net)
	if !ok {
		return 0, false
	}
	mt := opt.Meter
	if mt.isZero() {
		mt = DefaultMeter()
	}
	w := v.Clone()
	w.Slot[slot] = mt.Ohms()
	s.SetWarm(op.V)
	var lop amp.OP
	if err := s.Solve(c, w, true, &lop); err != nil {
		return 0, false
	}
	return m.NetVolts(&lop, net)
}

// blockSolver solves samples on its own model, starting every sample from
// the nominal solution and the nominal supply line.
type blockSolver struct {
	m    *amp.Model
	s    *amp.Solver
	opt  Options
	nom  *amp.OP
	pris *amp.Values // nominal values (before the hook)
	op   amp.OP
	rip  rippleScale
	xev  func(op *amp.OP, v *amp.Values, dst []float64) error
}

func newBlockSolver(d *design.Design, opt Options, nom *amp.OP) (*blockSolver, error) {
	m := opt.Model // Run passes it on only when the samples run on one worker
	var err error
	if m == nil {
		if m, err = amp.Build(d); err != nil {
			return nil, err
		}
	}
	s := amp.NewSolver(m)
	pris := m.NominalValues()
	base := pris.Clone()
	if opt.Values != nil {
		if err := opt.Values(m, base); err != nil {
			return nil, err
		}
	}
	if err := s.CacheSupplyAt(opt.Cond, base, nom); err != nil {
		return nil, err
	}
	w := &blockSolver{m: m, s: s, opt: opt, nom: nom, pris: pris, rip: newRippleScale(m, base, nom)}
	if opt.Extra != nil {
		if w.xev, err = opt.Extra.New(m); err != nil {
			return nil, err
		}
	}
	return w, nil
}

// sample solves sample k and returns its point values.
func (w *blockSolver) sample(k int, pl *plan, points []amp.PointDef, total int) ([]float64, error) {
	v := w.pris.Clone() // a fresh copy: the hook may set any field
	r := rand.New(rand.NewPCG(w.opt.Seed, uint64(k)))
	mf := pl.sample(r, w.m, v, w.opt.FixedMains)
	if w.opt.Values != nil {
		if err := w.opt.Values(w.m, v); err != nil {
			return nil, err
		}
	}
	c := w.opt.Cond
	if mf != 1 {
		mains := c.MainsVolts
		if mains <= 0 {
			mains = w.m.D.Mains.Volts
		}
		c.MainsVolts = mains * mf
	}
	w.s.SetWarm(w.nom.V)
	if err := w.s.Solve(c, v, true, &w.op); err != nil {
		return nil, err
	}
	w.rip.apply(&w.op, v)
	out := make([]float64, total)
	for i, pd := range points {
		x := w.m.Value(&w.op, pd)
		if math.IsNaN(x) || math.IsInf(x, 0) {
			return nil, fmt.Errorf("%s is not finite", pd.Key())
		}
		out[i] = x
	}
	if w.opt.ReadThroughMeter {
		byNet := map[string]float64{}
		op := w.op
		for i, pd := range points {
			if pd.Quantity != amp.DCVolts {
				continue
			}
			x, done := byNet[pd.Net]
			if !done {
				var ok bool
				if x, ok = loadedVolts(w.m, w.s, w.opt, c, v, &op, pd.Net); !ok {
					x = out[i]
				}
				byNet[pd.Net] = x
			}
			out[i] = x
		}
		w.op = op
	}
	if w.xev != nil {
		if err := w.xev(&w.op, v, out[len(points):]); err != nil {
			return nil, err
		}
	}
	return out, nil
}

// rippleScale estimates each filter net's ripple in a fast solve, which
// does not simulate the rectifier: the nominal ripple scaled, to first
// order, by the total DC load (a reservoir's ripple is Idc/(2fC) peak to
// peak, charge balance; Schade 1943), by 1/C of every stage from the
// reservoir to the net (the reservoir's charge balance, and each RC or LC
// section's attenuation 1/(ωRC) or 1/(ω²LC) for a well-filtered stage,
// Radiotron Designer's Handbook ch. 31) and by 1/R of every resistive
// series element on the way.
type rippleScale struct {
	nomRipple []float64
	nomLoad   float64
	parent    []int
	seriesOf  []int // slot of a resistive series element, or -1
	nomR      []float64
	nomC      []float64
}

func newRippleScale(m *amp.Model, base *amp.Values, nom *amp.OP) rippleScale {
	var rs rippleScale
	if m.HT == nil || nom.Supply == nil {
		return rs
	}
	for i, n := range nom.Supply.Nets {
		rs.nomRipple = append(rs.nomRipple, n.RippleRms)
		rs.parent = append(rs.parent, m.HT.Parent[i])
		sl := -1
		r := 0.0
		if ref := m.HT.SeriesRefs[i]; ref != "" {
			if p := m.D.ByRef[ref]; p != nil && p.Kind == design.Resistor {
				if s := m.SlotsOf(ref); len(s) > 0 {
					sl = s[0]
					r = base.Slot[sl]
				}
			}
		}
		rs.seriesOf = append(rs.seriesOf, sl)
		rs.nomR = append(rs.nomR, r)
		rs.nomC = append(rs.nomC, base.StageC[i])
	}
	rs.nomLoad = nom.Supply.Nets[0].FeedAmps
	return rs
}

func (rs *rippleScale) apply(op *amp.OP, v *amp.Values) {
	if op.Supply == nil || len(rs.nomRipple) != len(op.Supply.Nets) {
		return
	}
	load := 1.0
	if rs.nomLoad > 0 {
		load = max(op.Supply.Nets[0].FeedAmps, 0) / rs.nomLoad
	}
	for i := range op.Supply.Nets {
		f := load
		for j := i; j >= 0; j = rs.parent[j] {
			if v.StageC[j] > 0 {
				f *= rs.nomC[j] / v.StageC[j]
			}
			if sl := rs.seriesOf[j]; sl >= 0 && v.Slot[sl] > 0 && !math.IsInf(v.Slot[sl], 1) {
				f *= rs.nomR[j] / v.Slot[sl]
			}
		}
		op.Supply.Nets[i].RippleRms = rs.nomRipple[i] * f
	}
}

func (s *Set) buildIndex() {
	s.index = make(map[string]int, len(s.Points))
	s.netElectrode = map[string]string{}
	for i, pd := range s.Points {
		s.index[pd.Key()] = i
		if pd.Valve != "" && pd.Quantity == amp.DCVolts && pd.Electrode != "" {
			if _, ok := s.netElectrode[pd.Net]; !ok || pd.Electrode == "cathode" {
				s.netElectrode[pd.Net] = pd.Electrode
			}
		}
	}
}

// Index returns the position of a point by its key (PointDef.Key(),
// "V2.3 dc_volts").
func (s *Set) Index(key string) (int, bool) {
	i, ok := s.index[key]
	return i, ok
}

// Band returns point i's nominal value and the weighted 2.5th and 97.5th
// percentiles of its samples. With no converged samples Low and High are
// the nominal value.
func (s *Set) Band(i int) Band {
	lo, hi := s.Percentiles(i, 0.025, 0.975)
	return Band{Nominal: s.Nominal[i], Low: lo, High: hi}
}

// Percentiles returns point i's weighted p and q quantiles (0 ≤ p, q ≤ 1).
// Sample j sits at cumulative position (W_j − w_j/2)/W (W_j the running
// sum of weights in sorted order, W the total), which for equal weights is
// Hazen's plotting position (k − ½)/n; between positions it interpolates
// linearly, and outside them it takes the extreme sample.
func (s *Set) Percentiles(i int, p, q float64) (float64, float64) {
	type vw struct{ v, w float64 }
	xs := make([]vw, 0, len(s.Values))
	total := 0.0
	for j, row := range s.Values {
		if w := s.Weights[j]; w > 0 {
			xs = append(xs, vw{row[i], w})
			total += w
		}
	}
	if len(xs) == 0 || !(total > 0) {
		return s.Nominal[i], s.Nominal[i]
	}
	sort.Slice(xs, func(a, b int) bool { return xs[a].v < xs[b].v })
	pos := make([]float64, len(xs))
	cum := 0.0
	for j, x := range xs {
		pos[j] = (cum + x.w/2) / total
		cum += x.w
	}
	at := func(f float64) float64 {
		if f <= pos[0] {
			return xs[0].v
		}
		if f >= pos[len(pos)-1] {
			return xs[len(xs)-1].v
		}
		j := sort.SearchFloat64s(pos, f)
		a, b := pos[j-1], pos[j]
		t := (f - a) / (b - a)
		return xs[j-1].v + t*(xs[j].v-xs[j-1].v)
	}
	return at(p), at(q)
}

// Mean returns point i's weighted mean over the samples (the nominal value
// when there are none).
func (s *Set) Mean(i int) float64 {
	var sw, sx float64
	for j, row := range s.Values {
		sw += s.Weights[j]
		sx += s.Weights[j] * row[i]
	}
	if !(sw > 0) {
		return s.Nominal[i]
	}
	return sx / sw
}

// BandOf returns the band of a point by key.
func (s *Set) BandOf(key string) (Band, error) {
	i, ok := s.Index(key)
	if !ok {
		return Band{}, fmt.Errorf("bands: no point %q", key)
	}
	return s.Band(i), nil
}

// ErrNoSamples reports an operation that needs samples on a set without.
var ErrNoSamples = errors.New("bands: no converged samples")
