package supply

import (
	"fmt"
	"math"
)

// engine holds the discretised circuit. Every filter element becomes a
// backward-Euler companion model (a conductance and a history current
// source), so the linear part of the circuit has one constant nodal matrix
// G, inverted once. The rectifier, the source resistance and stage 0's
// series element form the single nonlinear branch into node 0; since the
// node voltages are affine in that branch current, each step reduces to a
// scalar equation for it (closed form for silicon, monotone Newton for a
// valve). Modified nodal analysis: Vlach & Singhal, "Computer Methods for
// Circuit Analysis and Design".
type engine struct {
	p      Params
	n      int     // nodes
	steps  int     // per cycle
	h      float64 // step, seconds
	nd     float64 // rectifier elements per path
	choke0 bool    // stage 0 has a series choke (choke input)
	l0h    float64 // L0/h
	rBr    float64 // linear resistance of the nonlinear branch incl. Thevenin z00
	vsrc   []float64
	ginv   []float64 // n×n, row major
	gc     []float64 // capacitor companion conductance, 0 = no capacitor
	hc     []float64 // h/C
	gs     []float64 // series conductance (stages ≥ 1)
	lh     []float64 // L/h (stages ≥ 1), 0 = no inductor
	parent []int
	loadA  []float64
	caps   []int // nodes with a capacitor
	inds   []int // stages ≥ 1 with a series choke
	ghist  []float64
	col0   []float64 // column 0 of ginv: node response to the branch current
	wPrev  float64   // last per-anode valve voltage (Newton warm start)
	rhs, v []float64
	// state packing
	capNode, indNode []int
	m                int
	vc, il           []float64 // working state by node
	cycles           int
	// nn is the number of nodes: the stages, and a doubler's two
	// private nodes after them (dbl, nil for other topologies).
	nn  int
	dbl *dblFront
}

func newEngine(p Params, opt Options) (*engine, error) {
	if err := p.Validate(); err != nil {
		return nil, err
	}
	opt = opt.withDefaults()
	if opt.StepsPerCycle < 20 {
		return nil, &ParamError{"Options.StepsPerCycle", "must be ≥ 20"}
	}
	if opt.MaxCycles < 1 {
		return nil, &ParamError{"Options.MaxCycles", "must be ≥ 1"}
	}
	if !(opt.Tol > 0) || !finite(opt.Tol) {
		return nil, &ParamError{"Options.Tol", "must be > 0"}
	}
	n := len(p.Stages)
	nn := n
	if p.isDoubler() {
		nn = n + 2
	}
	e := &engine{
		p: p, n: n, nn: nn, steps: opt.StepsPerCycle, h: 1 / (p.Hz * float64(opt.StepsPerCycle)),
		nd: p.elements(), vsrc: make([]float64, opt.StepsPerCycle),
		gc: make([]float64, nn), hc: make([]float64, nn), gs: make([]float64, n), lh: make([]float64, n),
		parent: make([]int, n), loadA: make([]float64, nn), ghist: make([]float64, n), col0: make([]float64, nn), rhs: make([]float64, nn), v: make([]float64, nn),
		vc: make([]float64, nn), il: make([]float64, nn),
	}
	vpk := math.Sqrt2 * p.Vrms
	for s := range e.vsrc {
		src := vpk * math.Sin(2*math.Pi*float64(s+1)/float64(e.steps))
		if p.Topology != HalfWave && !p.isDoubler() {
			src = math.Abs(src)
		}
		e.vsrc[s] = src
	}
	g := make([]float64, nn*nn)
	for k, st := range p.Stages {
		e.parent[k] = st.Parent
		e.loadA[k] = st.LoadA
		if st.ShuntC > 0 {
			e.gc[k] = 1 / (st.ESR + e.h/st.ShuntC)
			e.hc[k] = e.h / st.ShuntC
			g[k*nn+k] += e.gc[k]
			e.capNode = append(e.capNode, k)
		}
		if st.LoadOhms > 0 {
			g[k*nn+k] += 1 / st.LoadOhms
		}
		if st.SeriesL > 0 {
			e.indNode = append(e.indNode, k)
		}
		if k == 0 {
			continue
		}
		e.lh[k] = st.SeriesL / e.h
		e.gs[k] = 1 / (st.SeriesR + e.lh[k])
		if st.SeriesL > 0 {
			e.inds = append(e.inds, k)
			e.ghist[k] = e.gs[k] * e.lh[k]
		}
		q := st.Parent
		stamp(g, nn, k, q, e.gs[k])
	}
	e.m = len(e.capNode) + len(e.indNode)
	if p.isDoubler() {
		e.dbl = newDoubler(p, n, nn, e.h, g)
		e.loadA[e.dbl.mid] = p.Doubler.MidLoadA
		e.m += e.dbl.ncap
	}
	inv, ok := invert(g, nn)
	if !ok {
		return nil, &ParamError{"Stages", "filter network is singular"}
	}
	e.ginv = inv
	for r := 0; r < nn; r++ {
		e.col0[r] = inv[r*nn]
	}
	if e.dbl != nil {
		e.dbl.setResponses(inv, nn)
	}
	e.caps = e.capNode
	s0 := p.Stages[0]
	e.choke0 = s0.SeriesL > 0
	e.l0h = s0.SeriesL / e.h
	e.rBr = p.Rs + s0.SeriesR + e.l0h + e.ginv[0]
	if p.Rect.Kind == Silicon {
		e.rBr += e.nd * p.Rect.Rd
	}
	return e, nil
}

// branchCurrent solves drive = rBr·i + (nonlinear part of the rectifier
// drop) for i ≥ 0; drive is the open-circuit voltage across the branch.
func (e *engine) branchCurrent(drive float64) float64 {
	if e.p.Rect.Kind == Silicon {
		i := (drive - e.nd*e.p.Rect.Vf) / e.rBr
		if i > 0 {
			return i
		}
		return 0
	}
	if drive <= 0 {
		e.wPrev = 0
		return 0
	}
	// Per-anode voltage w: rBr·G·w^1.5 + nd·w = drive; the left side is
	// increasing and convex in w, so Newton from any start lands at or
	// above the root after one step and then falls monotonically onto it.
	// Start from the previous step's root when there is one, else from
	// an upper bound.
	g := e.p.Rect.Perveance
	a := e.rBr * g
	w := drive / e.nd
	if a > 0 {
		w = math.Min(w, math.Cbrt(drive/a)*math.Cbrt(drive/a))
	}
	if e.wPrev > 0 && e.wPrev < w {
		w = e.wPrev
	}
	for it := 0; it < 60; it++ {
		sw := math.Sqrt(w)
		f := a*w*sw + e.nd*w - drive
		df := 1.5*a*sw + e.nd
		dw := f / df
		w -= dw
		if w < 0 {
			w = 0
		}
		if math.Abs(dw) <= 1e-12*(w+1e-9) {
			break
		}
	}
	e.wPrev = w
	i := g * w * math.Sqrt(w)
	if m := e.p.Rect.MaxAmps; m > 0 && i > m {
		// Emission-limited (a cool cathode): the current cannot exceed
		// the cathode's saturation emission, whatever the voltage.
		i = m
	}
	return i
}

// step advances the working state by one step ending at sample s and
// returns the rectifier branch current; e.v holds the node voltages.
func (e *engine) step(s int) float64 {
	n := e.nn
	rhs, v, vc, il := e.rhs[:n], e.v[:n], e.vc[:n], e.il[:n]
	gc, loadA := e.gc[:n], e.loadA[:n]
	for k := range rhs {
		rhs[k] = gc[k]*vc[k] - loadA[k]
	}
	if e.dbl != nil {
		// the mid load is in loadA; the source and capacitors here
		e.dbl.rhs(rhs, e.vsrc[s])
	}
	for _, k := range e.inds {
		j := e.ghist[k] * il[k]
		rhs[k] += j
		rhs[e.parent[k]] -= j
	}
	ginv := e.ginv[:n*n]
	for r := range v {
		row := ginv[r*n : r*n+n]
		var acc float64
		for c, x := range rhs {
			acc += row[c] * x
		}
		v[r] = acc
	}
	if e.dbl != nil {
		e.dbl.solveDiodes(v)
		for _, k := range e.caps {
			vc[k] += e.hc[k] * gc[k] * (v[k] - vc[k])
		}
		for _, k := range e.inds {
			il[k] = e.gs[k] * (v[e.parent[k]] - v[k] + e.lh[k]*il[k])
		}
		e.dbl.advance(v, e.vsrc[s])
		return e.dbl.outAmps(e.p.Topology == FullDoubler)
	}
	drive := e.vsrc[s] - v[0]
	if e.choke0 {
		drive += e.l0h * il[0]
	}
	i := e.branchCurrent(drive)
	if i > 0 {
		col := e.col0[:n]
		for r := range v {
			v[r] += col[r] * i
		}
	}
	for _, k := range e.caps {
		vc[k] += e.hc[k] * gc[k] * (v[k] - vc[k])
	}
	for _, k := range e.inds {
		il[k] = e.gs[k] * (v[e.parent[k]] - v[k] + e.lh[k]*il[k])
	}
	if e.choke0 {
		il[0] = i
	}
	return i
}

func (e *engine) unpack(x []float64) {
	e.wPrev = 0 // each cycle is a pure function of x
	j := 0
	for _, k := range e.capNode {
		e.vc[k] = x[j]
		j++
	}
	for _, k := range e.indNode {
		e.il[k] = x[j]
		j++
	}
	if e.dbl != nil {
		for c := 0; c < e.dbl.ncap; c++ {
			e.dbl.caps[c].v = x[j]
			j++
		}
	}
}

func (e *engine) pack(x []float64) {
	j := 0
	for _, k := range e.capNode {
		x[j] = e.vc[k]
		j++
	}
	for _, k := range e.indNode {
		x[j] = e.il[k]
		j++
	}
	if e.dbl != nil {
		for c := 0; c < e.dbl.ncap; c++ {
			x[j] = e.dbl.caps[c].v
			j++
		}
	}
}

// cycle maps the state x at phase 0 to the state one mains cycle later.
func (e *engine) cycle(x, out []float64) {
	e.unpack(x)
	for s := 0; s < e.steps; s++ {
		e.step(s)
	}
	e.pack(out)
	e.cycles++
}

// dcGuess solves the filter at DC (capacitors open, chokes as their DCR)
// with node 0 held at v0, and returns the node voltages, series currents
// and the total current drawn from node 0.
func (e *engine) dcGuess(v0 float64) (volts, amps []float64, i0 float64) {
	n := e.n
	st := e.p.Stages
	gser := make([]float64, n)
	for k := 1; k < n; k++ {
		gser[k] = 1 / math.Max(st[k].SeriesR, 1e-3)
	}
	volts = make([]float64, n)
	amps = make([]float64, n)
	volts[0] = v0
	if n > 1 {
		m := n - 1
		a := make([]float64, m*m)
		b := make([]float64, m)
		for k := 1; k < n; k++ {
			r := k - 1
			a[r*m+r] += gser[k]
			if st[k].LoadOhms > 0 {
				a[r*m+r] += 1 / st[k].LoadOhms
			}
			b[r] -= st[k].LoadA
			q := st[k].Parent
			if q == 0 {
				b[r] += gser[k] * v0
			} else {
				a[(q-1)*m+q-1] += gser[k]
				a[r*m+q-1] -= gser[k]
				a[(q-1)*m+r] -= gser[k]
			}
		}
		if inv, ok := invert(a, m); ok {
			for r := 0; r < m; r++ {
				var acc float64
				for c := 0; c < m; c++ {
					acc += inv[r*m+c] * b[c]
				}
				volts[r+1] = acc
			}
		}
	}
	i0 = st[0].LoadA
	if st[0].LoadOhms > 0 {
		i0 += v0 / st[0].LoadOhms
	}
	for k := 1; k < n; k++ {
		amps[k] = gser[k] * (volts[st[k].Parent] - volts[k])
		if st[k].Parent == 0 {
			i0 += amps[k]
		}
	}
	amps[0] = i0
	return volts, amps, i0
}

// initialState estimates the steady DC state (a charge-balance estimate of
// the reservoir voltage, then the DC solution of the filter) so that the
// shooting iteration starts close to the answer.
func (e *engine) initialState(x []float64) (iScale float64) {
	if e.dbl != nil {
		return e.initialDoubler(x)
	}
	p := e.p
	vpk := math.Sqrt2 * p.Vrms
	np := float64(p.pulses())
	s0 := p.Stages[0]
	rLin := p.Rs + s0.SeriesR
	v0 := vpk - p.rectDrop(0)
	var volts, amps []float64
	var i0 float64
	for pass := 0; pass < 3; pass++ {
		volts, amps, i0 = e.dcGuess(v0)
		capIn := vpk - p.rectDrop(4*i0/np) - i0/(2*np*p.Hz*s0.ShuntC) - 3*i0*(rLin+e.nd*p.Rect.Rd)
		v0 = capIn
		if e.choke0 {
			lc := e.criticalL(v0, i0)
			if s0.SeriesL >= lc {
				v0 = vpk*np/math.Pi - p.rectDrop(i0) - i0*rLin
			}
		}
		v0 = math.Max(v0, 0.05*vpk)
	}
	volts, amps, i0 = e.dcGuess(v0)
	for k := range volts {
		e.vc[k] = volts[k]
		e.il[k] = amps[k]
	}
	e.pack(x)
	return math.Max(i0, 1e-4)
}

// criticalL is the full-wave critical inductance R/(3ω) for load resistance
// R = v/i (Radiotron Designer's Handbook 4th ed. ch. 30, from memory).
func (e *engine) criticalL(v, i float64) float64 {
	if i <= 0 || v <= 0 {
		return math.Inf(1)
	}
	return v / i / (3 * 2 * math.Pi * e.p.Hz)
}

// Simulate integrates the supply to its periodic steady state and returns
// DC levels, ripple and rectifier currents. The state (capacitor voltages,
// choke currents) is stepped with backward Euler, opt.StepsPerCycle steps
// per mains cycle; the steady state is found by Newton's method on the
// one-cycle map x ↦ P(x) (shooting; Jacobian by finite differences, one
// extra cycle per state variable), falling back to plain cycle-by-cycle
// integration whenever a Newton step does not reduce the residual. It is
// reached when |P(x) − x| ≤ Tol·scale for every state: the scale is the
// estimated DC load current for choke currents and, for a capacitor C, the
// smaller of √2·Vrms and the voltage step I/(C·f) that the load current
// would make in one cycle (so the charge balance holds to about Tol).
//
// Zero fields of opt take their DefaultOptions values. Invalid parameters give a
// *ParamError. If the cycle budget runs out, the last cycle is reported
// with an error wrapping ErrNoSteadyState.
func Simulate(p Params, opt Options) (Result, error) {
	opt = opt.withDefaults()
	e, err := newEngine(p, opt)
	if err != nil {
		return Result{}, err
	}
	m := e.m
	x := make([]float64, m)
	iScale := e.initialState(x)
	scale := make([]float64, m)
	vpk := math.Sqrt2 * p.Vrms
	nodeState := len(e.capNode) + len(e.indNode)
	for j := range scale {
		if j >= nodeState {
			// A doubler's capacitor, judged as a filter capacitor is.
			c := p.Doubler.C1
			if j > nodeState {
				c = p.Doubler.C2
			}
			scale[j] = math.Max(math.Min(vpk, iScale/(c*p.Hz)), 1e-7*vpk)
		} else if j < len(e.capNode) {
			// A cycle-to-cycle change Δv on capacitor C means a mean
			// charge imbalance of Δv·C·f amps: judge it against the load
			// current as well as against the peak voltage, so that charge
			// balance holds to Tol even for a large reservoir.
			c := p.Stages[e.capNode[j]].ShuntC
			scale[j] = math.Max(math.Min(vpk, iScale/(c*p.Hz)), 1e-7*vpk)
		} else {
			scale[j] = iScale
		}
	}
	resid := func(x, px []float64) float64 {
		var r float64
		for j := range x {
			r = math.Max(r, math.Abs(px[j]-x[j])/scale[j])
		}
		return r
	}
	px := make([]float64, m)
	xt := make([]float64, m)
	pt := make([]float64, m)
	jac := make([]float64, m*m)
	rhs := make([]float64, m)
	cols := make([][]float64, m)
	for j := range cols {
		cols[j] = make([]float64, m)
	}
	e.cycle(x, px)
	r := resid(x, px)
	converged := r <= opt.Tol
	for !converged && e.cycles+m+1 <= opt.MaxCycles {
		// Jacobian of F(x) = P(x) − x by forward differences.
		for j := 0; j < m; j++ {
			copy(xt, x)
			d := 1e-6 * scale[j]
			xt[j] += d
			e.cycle(xt, cols[j])
			for i := 0; i < m; i++ {
				jac[i*m+j] = (cols[j][i] - px[i]) / d
			}
			jac[j*m+j] -= 1
		}
		for i := 0; i < m; i++ {
			rhs[i] = x[i] - px[i]
		}
		delta, ok := solve(jac, rhs, m)
		accepted := false
		if ok {
			lambda := 1.0
			for try := 0; try < 4 && e.cycles < opt.MaxCycles; try++ {
				for i := range x {
					xt[i] = x[i] + lambda*delta[i]
					if e.dbl != nil && (i < len(e.capNode) || i >= nodeState) {
						// A doubler's capacitors hold up to twice
						// the winding's peak.
						xt[i] = min(max(xt[i], -vpk), 2*vpk)
					} else if i < len(e.capNode) {
						// A filter capacitor fed by a rectifier holds
						// between 0 V and the winding's peak: keep the
						// Newton step of the shooting inside what the
						// circuit can reach.
						xt[i] = min(max(xt[i], 0), vpk)
					}
				}
				e.cycle(xt, pt)
				if rt := resid(xt, pt); rt < r && finiteAll(pt) {
					copy(x, xt)
					copy(px, pt)
					r = rt
					accepted = true
					break
				}
				lambda /= 2
			}
		}
		if !accepted && e.cycles < opt.MaxCycles {
			// Plain integration: the next cycle starts where this one ended.
			copy(x, px)
			e.cycle(x, px)
			r = resid(x, px)
		}
		converged = r <= opt.Tol
	}
	for !converged && e.cycles < opt.MaxCycles {
		copy(x, px)
		e.cycle(x, px)
		r = resid(x, px)
		converged = r <= opt.Tol
	}
	res := e.record(x)
	if !converged {
		return res, fmt.Errorf("%w (residual %.3g after %d cycles)", ErrNoSteadyState, r, res.Cycles)
	}
	return res, nil
}

// withDefaults fills zero fields from DefaultOptions.
func (o Options) withDefaults() Options {
	d := DefaultOptions()
	if o.StepsPerCycle == 0 {
		o.StepsPerCycle = d.StepsPerCycle
	}
	if o.MaxCycles == 0 {
		o.MaxCycles = d.MaxCycles
	}
	if o.Tol == 0 {
		o.Tol = d.Tol
	}
	return o
}

func finiteAll(x []float64) bool {
	for _, v := range x {
		if !finite(v) {
			return false
		}
	}
	return true
}

// record runs one more cycle from x and measures it. Ripple figures are
// taken after removing the straight-line drift between the start and end
// of the cycle, which is zero at an exact steady state.
func (e *engine) record(x []float64) Result {
	n, N := e.n, e.steps
	e.unpack(x)
	samples := make([]float64, n*N)
	sumSeries := make([]float64, n)
	var iPk, iSum, i2Sum, pSum float64
	conducting := 0
	var dr *dblRecord
	if e.dbl != nil {
		dr = newDblRecord(N)
	}
	for s := 0; s < N; s++ {
		i := e.step(s)
		for k := 0; k < n; k++ {
			samples[k*N+s] = e.v[k]
		}
		if dr != nil {
			dr.sample(e, s)
		}
		sumSeries[0] += i
		if dr != nil {
			sumSeries[0] += e.dbl.bleedIntoOut(e.v)
		}
		for k := 1; k < n; k++ {
			if e.lh[k] > 0 {
				sumSeries[k] += e.il[k]
			} else {
				sumSeries[k] += e.gs[k] * (e.v[e.parent[k]] - e.v[k])
			}
		}
		if i > 0 {
			conducting++
			pSum += i * e.p.rectDrop(i)
		}
		iPk = math.Max(iPk, i)
		iSum += i
		i2Sum += i * i
	}
	e.cycles++
	res := Result{Nets: make([]NetResult, n), Cycles: e.cycles}
	np := e.p.pulses()
	cosT := make([]float64, N)
	sinT := make([]float64, N)
	for s := 0; s < N; s++ {
		ph := 2 * math.Pi * float64(np) * float64(s+1) / float64(N)
		cosT[s], sinT[s] = math.Cos(ph), math.Sin(ph)
	}
	for k := 0; k < n; k++ {
		w := samples[k*N : k*N+N]
		// Drift per step from the state change over the cycle.
		var drift float64
		if e.gc[k] > 0 {
			j := indexOf(e.capNode, k)
			drift = (e.vc[k] - x[j]) / float64(N)
		}
		var sum float64
		for s, v := range w {
			w[s] = v - drift*float64(s+1)
			sum += w[s]
		}
		mean := sum / float64(N)
		lo, hi := math.Inf(1), math.Inf(-1)
		var sq, re, im float64
		for s, v := range w {
			d := v - mean
			sq += d * d
			lo = math.Min(lo, v)
			hi = math.Max(hi, v)
			re += d * cosT[s]
			im += d * sinT[s]
		}
		fund := 2 * math.Hypot(re, im) / float64(N) / math.Sqrt2
		res.Nets[k] = NetResult{
			Vdc:        mean,
			RippleRms:  math.Sqrt(sq / float64(N)),
			RipplePP:   hi - lo,
			DCAmps:     sumSeries[k] / float64(N),
			RippleFund: fund,
		}
	}
	res.PeakRectAmps = iPk
	res.AvgRectAmps = iSum / float64(N)
	rms := math.Sqrt(i2Sum / float64(N))
	if e.p.Topology == CentreTap {
		rms /= math.Sqrt2 // each half-winding carries alternate pulses
	}
	res.RmsRectAmps = rms
	if iSum > 0 {
		res.RectDropMean = pSum / iSum
	}
	res.ConductionDeg = 360 * float64(conducting) / float64(N) / float64(np)
	if dr != nil {
		dr.finish(e, &res)
	}
	if e.choke0 && e.p.Topology != HalfWave {
		res.CriticalL = e.criticalL(res.Nets[0].Vdc, res.Nets[0].DCAmps)
		if math.IsInf(res.CriticalL, 0) {
			res.CriticalL = 0
		}
	}
	return res
}

func indexOf(a []int, v int) int {
	for i, x := range a {
		if x == v {
			return i
		}
	}
	return -1
}

// invert returns the inverse of the n×n row-major matrix a by Gauss–Jordan
// elimination with partial pivoting; ok is false if a is singular.
func invert(a []float64, n int) ([]float64, bool) {
	m := append([]float64(nil), a...)
	inv := make([]float64, n*n)
	for i := 0; i < n; i++ {
		inv[i*n+i] = 1
	}
	for c := 0; c < n; c++ {
		p := c
		for r := c + 1; r < n; r++ {
			if math.Abs(m[r*n+c]) > math.Abs(m[p*n+c]) {
				p = r
			}
		}
		piv := m[p*n+c]
		if piv == 0 || !finite(piv) {
			return nil, false
		}
		if p != c {
			for j := 0; j < n; j++ {
				m[p*n+j], m[c*n+j] = m[c*n+j], m[p*n+j]
				inv[p*n+j], inv[c*n+j] = inv[c*n+j], inv[p*n+j]
			}
		}
		for j := 0; j < n; j++ {
			m[c*n+j] /= piv
			inv[c*n+j] /= piv
		}
		for r := 0; r < n; r++ {
			if r == c {
				continue
			}
			f := m[r*n+c]
			if f == 0 {
				continue
			}
			for j := 0; j < n; j++ {
				m[r*n+j] -= f * m[c*n+j]
				inv[r*n+j] -= f * inv[c*n+j]
			}
		}
	}
	return inv, true
}

// solve returns the solution of a·x = b (a is n×n row major), or ok = false
// if a is numerically singular.
func solve(a, b []float64, n int) ([]float64, bool) {
	inv, ok := invert(a, n)
	if !ok {
		return nil, false
	}
	x := make([]float64, n)
	for r := 0; r < n; r++ {
		var acc float64
		for c := 0; c < n; c++ {
			acc += inv[r*n+c] * b[c]
		}
		x[r] = acc
	}
	if !finiteAll(x) {
		return nil, false
	}
	return x, true
}
