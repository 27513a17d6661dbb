package mna

import (
	"encoding/binary"
	"errors"
	"fmt"
	"math"
	"sort"
	"strings"
	"sync"
)

// relTol is the relative part of both convergence tests: a node-voltage step
// is small when |Δv| ≤ VTol + relTol·|v|, and a KCL residual is small when
// |r| ≤ ITol + relTol·(sum of the magnitudes of the terms in that row).
const relTol = 1e-9

// Options controls the Newton–Raphson iteration. Zero or negative MaxIter,
// VTol, ITol or MaxStepVolts take the DefaultOptions value; Gmin may be 0
// (no shunt conductance: a floating node then makes the matrix singular).
type Options struct {
	MaxIter      int     // Newton iterations allowed per solve attempt
	VTol         float64 // absolute node-voltage step tolerance (V)
	ITol         float64 // absolute KCL residual tolerance per node (A)
	MaxStepVolts float64 // largest change of any device-terminal node voltage per iteration (V)
	Gmin         float64 // conductance from every node to ground, always on (S)
}

// DefaultOptions returns MaxIter 100, VTol 1 µV, ITol 1 pA, MaxStepVolts
// 50 V and Gmin 1e-12 S (common practice for circuit simulators).
func DefaultOptions() Options {
	return Options{MaxIter: 100, VTol: 1e-6, ITol: 1e-12, MaxStepVolts: 50, Gmin: 1e-12}
}

// Solution holds a DC operating point. Solve reuses its slices.
type Solution struct {
	V          []float64 // node voltages (V), indexed by node; V[0] = 0
	SourceAmps []float64 // per voltage source, in the order added: current (A) out of the + terminal into the circuit
	Iterations int       // Newton iterations spent, all stages together
	Stage      string    // the stage that converged: StageNewton, StageGmin or StageSource
}

// Names of the solve stages, reported in Solution.Stage and
// ConvergenceError.Stage.
const (
	StageNewton = "newton"          // plain damped Newton–Raphson
	StageGmin   = "gmin stepping"   // shunt conductance stepped down from 1e-3 S
	StageSource = "source stepping" // all independent sources ramped from 0 to full value
)

// Causes wrapped by ConvergenceError.
var (
	ErrSingular  = errors.New("matrix singular (loop of voltage sources, or a node with no path to ground and Gmin 0)")
	ErrNonFinite = errors.New("non-finite value (device returned NaN or Inf, or voltages overflowed)")
	ErrMaxIter   = errors.New("iteration limit reached")
)

// ConvergenceError reports that no stage reached a solution. Nets names the
// nodes with the largest KCL residuals (largest first) at the end of the
// plain Newton stage, Residual is the largest of them (A), Iterations the
// total spent and Stage the last stage tried. Err is the cause of the last
// failure (ErrSingular, ErrNonFinite or ErrMaxIter).
type ConvergenceError struct {
	Nets       []string
	Residual   float64
	Iterations int
	Stage      string
	Err        error
}

func (e *ConvergenceError) Error() string {
	return fmt.Sprintf("mna: no DC solution after %d iterations (last stage %s: %v); largest KCL residual %.3g A at nets %s",
		e.Iterations, e.Stage, e.Err, e.Residual, strings.Join(e.Nets, ", "))
}

func (e *ConvergenceError) Unwrap() error { return e.Err }

// workspace holds every buffer the solver needs, sized once per topology.
type workspace struct {
	valid  bool
	nn     int // node unknowns (NumNodes-1)
	size   int // nn + number of voltage sources
	bsrc   []float64
	b      []float64
	x      []float64
	xstart []float64
	xgood  []float64
	xfail  []float64
	branch []float64 // voltage-source currents of the last successful solve
	r      []float64
	rscale []float64
	devRow []bool // node unknown touched by a device: its step is limited

	// The assembled matrix lives in vals, in the filled pattern of the
	// sparse factorisation (sparse.go); vbase holds the linear stamps.
	sym    *symbolic
	vals   []float64
	vbase  []float64
	vcopy  []float64 // the assembled matrix before factorisation (refinement)
	bcopy  []float64
	y      []float64
	gidx   []int    // per node unknown: value index of its diagonal
	resIdx [][4]int // per resistor: (a,a), (b,b), (a,b), (b,a); −1 for ground
	vsIdx  [][4]int // per voltage source: (p,row), (row,p), (m,row), (row,m)
	devIdx [][]int  // per device: nt×nt value indexes (−1 for ground)
	rowPtr []int    // original pattern, row by row: columns cols[rowPtr[i]:rowPtr[i+1]]
	cols   []int
	colIdx []int // value index of each (row, cols[t])

	// Dense fallback (lu.go), allocated on first use.
	a    []float64
	piv  []int
	span []int

	// Frozen Jacobian (Freeze): the factors of the matrix at a solution,
	// reused by chord iterations.
	frozen   []float64
	frozenOK bool
}

func (c *Circuit) prepare() {
	w := &c.ws
	if w.valid {
		return
	}
	w.nn = len(c.names) - 1
	w.size = w.nn + len(c.vs)
	s := w.size
	w.bsrc = make([]float64, s)
	w.b = make([]float64, s)
	w.x = make([]float64, s)
	w.xstart = make([]float64, s)
	w.xgood = make([]float64, s)
	w.xfail = make([]float64, s)
	w.branch = make([]float64, s-w.nn)
	w.r = make([]float64, s)
	w.rscale = make([]float64, s)
	w.y = make([]float64, s)
	w.devRow = make([]bool, w.nn)
	for _, d := range c.devs {
		for _, n := range d.term {
			if n > 0 {
				w.devRow[n-1] = true
			}
		}
	}
	mark := c.buildPattern()
	w.sym = c.symbolicFor(mark)
	w.vals = make([]float64, w.sym.nnz)
	w.vbase = make([]float64, w.sym.nnz)
	w.vcopy = make([]float64, w.sym.nnz)
	w.bcopy = make([]float64, s)
	at := func(i, j int) int {
		if i < 0 || j < 0 {
			return -1
		}
		return int(w.sym.idx[i*s+j])
	}
	w.colIdx = make([]int, len(w.cols))
	for i := 0; i < s; i++ {
		for t := w.rowPtr[i]; t < w.rowPtr[i+1]; t++ {
			w.colIdx[t] = at(i, w.cols[t])
		}
	}
	w.gidx = make([]int, w.nn)
	for i := range w.gidx {
		w.gidx[i] = at(i, i)
	}
	w.resIdx = make([][4]int, len(c.res))
	for k, r := range c.res {
		a, b := r.a-1, r.b-1
		w.resIdx[k] = [4]int{at(a, a), at(b, b), at(a, b), at(b, a)}
	}
	w.vsIdx = make([][4]int, len(c.vs))
	for k, v := range c.vs {
		row := w.nn + k
		p, m := v.plus-1, v.minus-1
		w.vsIdx[k] = [4]int{at(p, row), at(row, p), at(m, row), at(row, m)}
	}
	w.devIdx = make([][]int, len(c.devs))
	for k, d := range c.devs {
		nt := len(d.term)
		ix := make([]int, nt*nt)
		for i, a := range d.term {
			for j, b := range d.term {
				ix[i*nt+j] = at(a-1, b-1)
			}
		}
		w.devIdx[k] = ix
	}
	w.a, w.piv, w.span = nil, nil, nil
	w.frozen, w.frozenOK = nil, false
	w.valid = true
}

// symCache holds symbolic analyses by pattern: every tolerance sample and
// fault hypothesis of an amplifier builds a circuit of the same topology
// (and most faults leave the cold resistance networks' topology alone),
// and an analysis (ordering and fill) is read-only once made. The cache is
// emptied when it reaches maxSymCache patterns.
var (
	symMu    sync.Mutex
	symCache = map[string]*symbolic{}
)

const maxSymCache = 128

func (c *Circuit) symbolicFor(mark []bool) *symbolic {
	w := &c.ws
	s := w.size
	analyseNow := func() *symbolic {
		hasDiag := make([]bool, s)
		for i := 0; i < w.nn; i++ {
			hasDiag[i] = true
		}
		return analyse(mark, s, hasDiag)
	}
	key := make([]byte, 0, 4*(len(w.cols)+len(w.rowPtr)+2))
	key = binary.LittleEndian.AppendUint32(key, uint32(s))
	key = binary.LittleEndian.AppendUint32(key, uint32(w.nn))
	for _, v := range w.rowPtr {
		key = binary.LittleEndian.AppendUint32(key, uint32(v))
	}
	for _, v := range w.cols {
		key = binary.LittleEndian.AppendUint32(key, uint32(v))
	}
	symMu.Lock()
	sym, ok := symCache[string(key)]
	symMu.Unlock()
	if ok {
		return sym
	}
	sym = analyseNow()
	symMu.Lock()
	if len(symCache) >= maxSymCache {
		clear(symCache)
	}
	symCache[string(key)] = sym
	symMu.Unlock()
	return sym
}

// buildPattern records which entries of the assembled matrix can be
// nonzero: the diagonal of every node row (gmin), resistor and voltage-source
// stamps, and every pair of device terminals. It returns the pattern as an
// s×s mask and keeps it row by row in rowPtr and cols.
func (c *Circuit) buildPattern() []bool {
	w := &c.ws
	s := w.size
	mark := make([]bool, s*s)
	set := func(i, j int) {
		if i >= 0 && j >= 0 {
			mark[i*s+j] = true
		}
	}
	for i := 0; i < w.nn; i++ {
		set(i, i)
	}
	for _, r := range c.res {
		a, b := r.a-1, r.b-1
		set(a, a)
		set(b, b)
		set(a, b)
		set(b, a)
	}
	for k, v := range c.vs {
		row := w.nn + k
		p, m := v.plus-1, v.minus-1
		set(p, row)
		set(row, p)
		set(m, row)
		set(row, m)
	}
	for _, d := range c.devs {
		for _, a := range d.term {
			for _, b := range d.term {
				set(a-1, b-1)
			}
		}
	}
	w.rowPtr = make([]int, s+1)
	w.cols = w.cols[:0]
	for i := 0; i < s; i++ {
		for j := 0; j < s; j++ {
			if mark[i*s+j] {
				w.cols = append(w.cols, j)
			}
		}
		w.rowPtr[i+1] = len(w.cols)
	}
	return mark
}

// stampLinear writes the resistor and voltage-source stamps into abase and
// the full-value source terms into bsrc. Row i < nn is KCL at node i+1:
// the sum of currents leaving the node into its elements equals zero.
func (c *Circuit) stampLinear() error {
	w := &c.ws
	nn := w.nn
	clear(w.vbase)
	clear(w.bsrc)
	for i, r := range c.res {
		if math.IsNaN(r.ohms) {
			return fmt.Errorf("mna: resistor %d (%s–%s) is NaN", i, c.names[r.a], c.names[r.b])
		}
		g := r.g
		ix := &w.resIdx[i]
		if ix[0] >= 0 {
			w.vbase[ix[0]] += g
		}
		if ix[1] >= 0 {
			w.vbase[ix[1]] += g
		}
		if ix[2] >= 0 {
			w.vbase[ix[2]] -= g
			w.vbase[ix[3]] -= g
		}
	}
	for k, v := range c.vs {
		if math.IsNaN(v.volts) || math.IsInf(v.volts, 0) {
			return fmt.Errorf("mna: voltage source %d (%s–%s) is %v", k, c.names[v.plus], c.names[v.minus], v.volts)
		}
		row := nn + k
		// Branch current j flows from the + node into the source.
		ix := &w.vsIdx[k]
		if ix[0] >= 0 {
			w.vbase[ix[0]] += 1
			w.vbase[ix[1]] += 1
		}
		if ix[2] >= 0 {
			w.vbase[ix[2]] -= 1
			w.vbase[ix[3]] -= 1
		}
		w.bsrc[row] = v.volts
	}
	for k, is := range c.is {
		if math.IsNaN(is.amps) || math.IsInf(is.amps, 0) {
			return fmt.Errorf("mna: current source %d (%s–%s) is %v", k, c.names[is.from], c.names[is.to], is.amps)
		}
		if f := is.from - 1; f >= 0 {
			w.bsrc[f] -= is.amps
		}
		if t := is.to - 1; t >= 0 {
			w.bsrc[t] += is.amps
		}
	}
	return nil
}

// assemble builds a and b for the Newton iteration at the current x:
// the linear stamps, gmin on every node diagonal, the sources scaled by
// lambda and each device's linearised companion. It returns false if a
// device gave a non-finite value.
func (c *Circuit) assemble(lambda, gmin float64) bool {
	w := &c.ws
	copy(w.vals, w.vbase)
	for _, q := range w.gidx {
		w.vals[q] += gmin
	}
	for i, v := range w.bsrc {
		w.b[i] = lambda * v
	}
	for di := range c.devs {
		d := &c.devs[di]
		nt := len(d.term)
		ix := w.devIdx[di]
		for k, n := range d.term {
			if n == 0 {
				d.v[k] = 0
			} else {
				d.v[k] = w.x[n-1]
			}
		}
		d.d.Eval(d.v, d.cur, d.jac)
		for k, nk := range d.term {
			if nk == 0 {
				continue
			}
			row := nk - 1
			// i_k(v) ≈ i_k(v0) + Σ_j J_kj (v_j − v0_j)
			eq := d.cur[k]
			if !finite(eq) {
				return false
			}
			for j, nj := range d.term {
				jv := d.jac[k*nt+j]
				if !finite(jv) {
					return false
				}
				eq -= jv * d.v[j]
				if nj != 0 {
					w.vals[ix[k*nt+j]] += jv
				}
			}
			w.b[row] -= eq
		}
	}
	return true
}

// factorSolve factors the assembled matrix and solves A·x = b in place in
// b: the sparse LU, or, when it gives up on a pivot, the dense LU with
// partial pivoting on the matrix assembled again (lambda, gmin as for the
// assembly). It returns false when the matrix is singular.
func (c *Circuit) factorSolve(lambda, gmin float64) bool {
	w := &c.ws
	copy(w.vcopy, w.vals)
	copy(w.bcopy, w.b)
	if growth, ok := w.sym.factor(w.vals); ok {
		w.sym.solve(w.vals, w.b, w.y)
		if growth > refineGrowth {
			// One step of iterative refinement: d = A⁻¹(b − A·x), x += d.
			for i := 0; i < w.size; i++ {
				sum := w.bcopy[i]
				lo, hi := w.rowPtr[i], w.rowPtr[i+1]
				for t, j := range w.cols[lo:hi] {
					sum -= w.vcopy[w.colIdx[lo+t]] * w.b[j]
				}
				w.r[i] = sum
			}
			w.sym.solve(w.vals, w.r, w.y)
			for i, d := range w.r {
				w.b[i] += d
			}
		}
		return true
	}
	if !c.assemble(lambda, gmin) {
		return false
	}
	c.densify()
	if !luFactor(w.a, w.size, w.piv, w.span) {
		return false
	}
	luSolve(w.a, w.size, w.piv, w.span, w.b)
	return true
}

// densify copies the assembled matrix into the dense work array.
func (c *Circuit) densify() {
	w := &c.ws
	s := w.size
	if len(w.a) != s*s {
		w.a = make([]float64, s*s)
		w.piv = make([]int, s)
		w.span = make([]int, 2*s)
	}
	clear(w.a)
	for i := 0; i < s; i++ {
		for t := w.rowPtr[i]; t < w.rowPtr[i+1]; t++ {
			w.a[i*s+w.cols[t]] = w.vals[w.colIdx[t]]
		}
	}
}

// residual computes r = A x − b for every row and whether all rows are within
// tolerance. For node rows at the linearisation point this is the true KCL
// residual of the nonlinear circuit (A); for source rows it is the voltage
// error (V). ok is false if a residual is not finite.
func (c *Circuit) residual(opt *Options) (small, ok bool) {
	w := &c.ws
	s := w.size
	small = true
	for i := 0; i < s; i++ {
		sum := -w.b[i]
		scale := math.Abs(w.b[i])
		lo, hi := w.rowPtr[i], w.rowPtr[i+1]
		for t, j := range w.cols[lo:hi] {
			t := w.vals[w.colIdx[lo+t]] * w.x[j]
			sum += t
			scale += math.Abs(t)
		}
		w.r[i] = sum
		w.rscale[i] = scale
		if !finite(sum) {
			return false, false
		}
		tol := opt.ITol
		if i >= w.nn {
			tol = opt.VTol
		}
		if math.Abs(sum) > tol+relTol*scale {
			small = false
		}
	}
	return small, true
}

// newton runs damped Newton–Raphson from the current x at source scale
// lambda and shunt conductance gmin. It returns the iterations spent and
// nil on convergence, else the cause.
func (c *Circuit) newton(opt *Options, lambda, gmin float64) (int, error) {
	w := &c.ws
	s, nn := w.size, w.nn
	linear := len(c.devs) == 0
	stepSmall := false
	for it := 0; it < opt.MaxIter; it++ {
		if !c.assemble(lambda, gmin) {
			return it, ErrNonFinite
		}
		small, ok := c.residual(opt)
		if !ok {
			return it, ErrNonFinite
		}
		// Converged when KCL balances and either the last Newton step was
		// small, or the circuit is linear (one exact step), or this is the
		// first look at a warm start that already balances.
		if small && (it == 0 || stepSmall || linear) {
			return it, nil
		}
		// Solve A·xnew = b, using b as the result vector.
		if !c.factorSolve(lambda, gmin) {
			return it + 1, ErrSingular
		}
		alpha := 1.0
		if !linear && opt.MaxStepVolts > 0 {
			maxd := 0.0
			for i := 0; i < nn; i++ {
				if w.devRow[i] {
					if d := math.Abs(w.b[i] - w.x[i]); d > maxd {
						maxd = d
					}
				}
			}
			if maxd > opt.MaxStepVolts {
				alpha = opt.MaxStepVolts / maxd
			}
		}
		stepSmall = alpha == 1
		for i := 0; i < s; i++ {
			d := alpha * (w.b[i] - w.x[i])
			xi := w.x[i] + d
			if !finite(xi) {
				return it + 1, ErrNonFinite
			}
			w.x[i] = xi
			if i < nn && math.Abs(d) > opt.VTol+relTol*math.Abs(xi) {
				stepSmall = false
			}
		}
	}
	return opt.MaxIter, ErrMaxIter
}

// Solve computes the DC operating point into sol, reusing its slices.
//
// warm, if not nil, holds starting node voltages indexed like Solution.V
// (typically a previous solution); it must have NumNodes entries. Plain
// damped Newton–Raphson is tried first; if it fails, gmin stepping (a shunt
// conductance on every node stepped down from 1e-3 S, cf. Vlach & Singhal on
// continuation methods), then source stepping (all independent sources
// scaled from 0 to 1 in adaptive steps). If all fail Solve returns a
// *ConvergenceError and leaves sol unchanged. It never stores NaN or Inf in
// sol: a non-finite value is a failure. Invalid values (a NaN resistor or
// source, a negative Gmin, a warm slice of the wrong length) give a plain
// error. After the first call on a circuit of fixed topology, Solve does not
// allocate.
func (c *Circuit) Solve(opt Options, warm []float64, sol *Solution) error {
	def := DefaultOptions()
	if opt.MaxIter <= 0 {
		opt.MaxIter = def.MaxIter
	}
	if !(opt.VTol > 0) {
		opt.VTol = def.VTol
	}
	if !(opt.ITol > 0) {
		opt.ITol = def.ITol
	}
	if !(opt.MaxStepVolts > 0) {
		opt.MaxStepVolts = def.MaxStepVolts
	}
	if !(opt.Gmin >= 0) || math.IsInf(opt.Gmin, 0) {
		return fmt.Errorf("mna: Gmin %v must be finite and non-negative", opt.Gmin)
	}
	if warm != nil && len(warm) != len(c.names) {
		return fmt.Errorf("mna: warm start has %d voltages, circuit has %d nodes", len(warm), len(c.names))
	}
	c.prepare()
	if err := c.stampLinear(); err != nil {
		return err
	}
	w := &c.ws
	clear(w.xstart)
	if warm != nil {
		for i := 1; i < len(warm); i++ {
			if !finite(warm[i]) {
				return fmt.Errorf("mna: warm start voltage at %s is %v", c.names[i], warm[i])
			}
			w.xstart[i-1] = warm[i]
		}
		// Branch currents are not in warm: take those of the last
		// successful solve, so a warm start at the answer balances at once.
		copy(w.xstart[w.nn:], w.branch)
	}
	copy(w.x, w.xstart)
	total := 0

	// Stage 1: plain damped Newton.
	n, err := c.newton(&opt, 1, opt.Gmin)
	total += n
	if err == nil {
		c.store(sol, total, StageNewton)
		return nil
	}
	copy(w.xfail, w.x)
	lastErr, lastStage := err, StageNewton
	if len(c.devs) > 0 {
		// Stage 2: gmin stepping.
		n, err = c.gminStepping(&opt)
		total += n
		if err == nil {
			c.store(sol, total, StageGmin)
			return nil
		}
		lastErr, lastStage = err, StageGmin
		// Stage 3: source stepping.
		n, err = c.sourceStepping(&opt)
		total += n
		if err == nil {
			c.store(sol, total, StageSource)
			return nil
		}
		lastErr, lastStage = err, StageSource
	}
	return c.failure(&opt, total, lastStage, lastErr)
}

const (
	gminStart    = 1e-3 // first shunt conductance of gmin stepping (S)
	gminFloor    = 1e-11
	minStepRatio = 1.05 // give up gmin stepping when the factor falls below this
	maxSubSolves = 200  // cap on Newton runs within one stepping stage
	minSourceH   = 1e-7 // smallest source-scale step
	firstSourceH = 0.1  // first source-scale step
	maxSourceH   = 0.5  // largest source-scale step
	sourceGrow   = 2.0  // step growth after a success
	sourceShrink = 0.25 // step shrink after a failure
)

// gminStepping solves with an extra shunt g on every node, starting at
// gminStart and dividing g by a factor (10, shrinking on failure) until it
// is dropped; each solve starts from the previous solution.
func (c *Circuit) gminStepping(opt *Options) (int, error) {
	w := &c.ws
	copy(w.x, w.xstart)
	total := 0
	g := gminStart
	gGood := -1.0
	factor := 10.0
	for runs := 0; runs < maxSubSolves; runs++ {
		n, err := c.newton(opt, 1, opt.Gmin+g)
		total += n
		if err == nil {
			if g == 0 {
				return total, nil
			}
			copy(w.xgood, w.x)
			gGood = g
			g /= factor
			if g < gminFloor {
				g = 0
			}
			continue
		}
		if gGood < 0 {
			return total, err
		}
		factor = math.Sqrt(factor)
		if factor < minStepRatio {
			return total, err
		}
		copy(w.x, w.xgood)
		g = gGood / factor
	}
	return total, ErrMaxIter
}

// sourceStepping ramps every independent source from 0 to full value in
// adaptive steps, each solve starting from the previous solution.
func (c *Circuit) sourceStepping(opt *Options) (int, error) {
	w := &c.ws
	clear(w.x)
	total := 0
	n, err := c.newton(opt, 0, opt.Gmin)
	total += n
	if err != nil {
		return total, err
	}
	copy(w.xgood, w.x)
	lam, h := 0.0, firstSourceH
	for runs := 0; runs < maxSubSolves; runs++ {
		next := math.Min(1, lam+h)
		n, err = c.newton(opt, next, opt.Gmin)
		total += n
		if err == nil {
			if next == 1 {
				return total, nil
			}
			lam = next
			copy(w.xgood, w.x)
			h = math.Min(h*sourceGrow, maxSourceH)
			continue
		}
		h *= sourceShrink
		if h < minSourceH {
			return total, err
		}
		copy(w.x, w.xgood)
	}
	return total, ErrMaxIter
}

// failure builds the ConvergenceError from the residuals at the end of the
// plain Newton stage.
func (c *Circuit) failure(opt *Options, total int, stage string, cause error) error {
	w := &c.ws
	copy(w.x, w.xfail)
	type netRes struct {
		node int
		r    float64
	}
	var list []netRes
	var worst netRes
	if c.assemble(1, opt.Gmin) {
		c.residual(opt)
		for i := 0; i < w.nn; i++ {
			r := math.Abs(w.r[i])
			if math.IsNaN(r) {
				r = math.Inf(1)
			}
			if r > worst.r || worst.node == 0 {
				worst = netRes{i + 1, r}
			}
			if r > opt.ITol+relTol*w.rscale[i] {
				list = append(list, netRes{i + 1, r})
			}
		}
	} else {
		// A device gave a non-finite value at that point: name its nets.
		for di := range c.devs {
			d := &c.devs[di]
			bad := false
			for k := range d.cur {
				if !finite(d.cur[k]) {
					bad = true
				}
			}
			for k := range d.jac {
				if !finite(d.jac[k]) {
					bad = true
				}
			}
			if bad {
				for _, n := range d.term {
					if n > 0 {
						list = append(list, netRes{n, math.Inf(1)})
					}
				}
			}
		}
		worst = netRes{0, math.Inf(1)}
	}
	if len(list) == 0 && worst.node > 0 {
		list = append(list, worst)
	}
	sort.SliceStable(list, func(i, j int) bool { return list[i].r > list[j].r })
	const maxNets = 5
	e := &ConvergenceError{Residual: worst.r, Iterations: total, Stage: stage, Err: cause}
	seen := map[int]bool{}
	for _, nr := range list {
		if len(e.Nets) == maxNets {
			break
		}
		if !seen[nr.node] {
			seen[nr.node] = true
			e.Nets = append(e.Nets, c.names[nr.node])
		}
	}
	return e
}

// store copies the converged x into sol, sizing its slices if needed.
func (c *Circuit) store(sol *Solution, iters int, stage string) {
	w := &c.ws
	nv := len(c.names)
	if cap(sol.V) < nv {
		sol.V = make([]float64, nv)
	}
	sol.V = sol.V[:nv]
	if cap(sol.SourceAmps) < len(c.vs) {
		sol.SourceAmps = make([]float64, len(c.vs))
	}
	sol.SourceAmps = sol.SourceAmps[:len(c.vs)]
	sol.V[0] = 0
	copy(sol.V[1:], w.x[:w.nn])
	for k := range c.vs {
		sol.SourceAmps[k] = -w.x[w.nn+k]
	}
	copy(w.branch, w.x[w.nn:])
	sol.Iterations = iters
	sol.Stage = stage
}

func finite(v float64) bool { return !math.IsNaN(v) && !math.IsInf(v, 0) }
