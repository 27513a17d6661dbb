package supply

import "math"

// Doubler is the front end of a voltage doubler: two silicon diodes and
// two capacitors, each capacitor charged by its own diode to about the
// winding's peak, so that the output is about twice it.
//
// FullDoubler (the winding from the capacitors' junction, "mid"): C1 is
// the top capacitor (output to mid) charged through diode 1 (from the
// winding's other end up to the output) on one half cycle, C2 the bottom
// one (mid to chassis) charged through diode 2 (from chassis up to that
// winding end) on the other. Stage 0 is the output; its ShuntC (any other
// capacitor from the output to chassis) may be zero.
//
// HalfDoubler (the winding from chassis): C1 is the pump capacitor from
// the diodes' junction ("mid") to the winding's live end (its volts mid
// less that end), diode 1 clamps
// mid from chassis on one half cycle and diode 2 carries the pump
// capacitor's charge on into stage 0's reservoir on the other; stage 0's
// ShuntC is the second capacitor of the doubler and C2 must be zero.
type Doubler struct {
	C1, C2     float64 // farads
	ESR1, ESR2 float64 // ohms in series with each
	// R1, R2 are resistors across C1 and C2 (bleeders), ohms; 0 = none.
	R1, R2 float64
	// MidLoadA is the DC current the rest of the circuit draws out of
	// the mid node (either sign), amps.
	MidLoadA float64
	// Open1, Open2: that diode is open (it conducts nothing).
	Open1, Open2 bool
}

func (p Params) isDoubler() bool { return p.Topology == FullDoubler || p.Topology == HalfDoubler }

func (p Params) validateDoubler() error {
	bad := func(field, reason string) error { return &ParamError{Field: field, Reason: reason} }
	d := p.Doubler
	if p.Rect.Kind != Silicon {
		return bad("Rect.Kind", "a voltage doubler is modelled with silicon diodes")
	}
	if p.Stages[0].SeriesL > 0 || p.Stages[0].SeriesR > 0 {
		return bad("Stages[0]", "a doubler's output is its reservoir: no series element before stage 0")
	}
	for _, v := range []struct {
		name string
		x    float64
	}{{"C1", d.C1}, {"C2", d.C2}, {"ESR1", d.ESR1}, {"ESR2", d.ESR2}, {"R1", d.R1}, {"R2", d.R2}} {
		if !finite(v.x) || v.x < 0 || v.x > 1e12 {
			return bad("Doubler."+v.name, "must be a number between 0 and 1e12")
		}
	}
	if !finite(d.MidLoadA) || math.Abs(d.MidLoadA) > 1e3 {
		return bad("Doubler.MidLoadA", "must be a finite current")
	}
	if d.C1 <= 0 {
		return bad("Doubler.C1", "a doubler capacitor must be > 0 F")
	}
	switch p.Topology {
	case FullDoubler:
		if d.C2 <= 0 {
			return bad("Doubler.C2", "a doubler capacitor must be > 0 F")
		}
	case HalfDoubler:
		if d.C2 != 0 || d.R2 != 0 {
			return bad("Doubler.C2", "a half-wave doubler's second capacitor is stage 0's ShuntC")
		}
	}
	return nil
}

// doublerColdPeak is the output's highest voltage with no load: twice the
// winding's peak less a diode drop each, or one peak with a diode open.
func (p Params) doublerColdPeak() float64 {
	vpk := math.Sqrt2 * p.Vrms
	d := p.Doubler
	switch {
	case d.Open1 && d.Open2:
		return 0
	case d.Open1 || d.Open2:
		if p.Topology == HalfDoubler {
			// Either diode open leaves the pump capacitor with a
			// one-way path only: the reservoir gets at most one
			// charging of it, nothing steady. A single peak is the
			// bound.
			return vpk - p.Rect.Vf
		}
		return vpk - p.Rect.Vf
	}
	return 2 * (vpk - p.Rect.Vf)
}

// dblFront is the doubler's part of the engine: two private nodes (mid
// and the winding's live end), the winding as a Norton source, two
// floating capacitors and two diode branches solved together each step.
type dblFront struct {
	mid, w   int     // nodes
	ref      int     // the winding's other end: mid (full-wave) or -1 (chassis)
	gsrc     float64 // 1/Rs
	caps     [2]fcap // floating capacitors (a half-wave doubler uses one)
	ncap     int
	diodes   [2]dbranch
	k        [2][2]float64 // k[j][l]: the volts across diode j per amp in diode l
	iw       float64       // last winding current
	amps     [2]float64    // last diode currents
	rd, vf   float64
	open     [2]bool
	midLoadA float64
}

// fcap is a capacitor between nodes a and b (-1 = chassis), its voltage
// v(a) − v(b) the state.
type fcap struct {
	a, b   int
	g, hc  float64
	v      float64
	bleedG float64
}

// dbranch is a diode from anode node a to cathode node c (-1 = chassis);
// resp is the network's node response to one amp through it.
type dbranch struct {
	a, c int
	resp []float64
}

func at(v []float64, i int) float64 {
	if i < 0 {
		return 0
	}
	return v[i]
}

func stamp(g []float64, nn, a, b int, y float64) {
	if a >= 0 {
		g[a*nn+a] += y
	}
	if b >= 0 {
		g[b*nn+b] += y
	}
	if a >= 0 && b >= 0 {
		g[a*nn+b] -= y
		g[b*nn+a] -= y
	}
}

// doublerMinRs keeps the winding's Norton conductance finite.
const doublerMinRs = 1e-2

// newDoubler adds the doubler's nodes n and n+1 to the nodal matrix g
// (size nn = n+2) and returns its front end.
func newDoubler(p Params, n, nn int, h float64, g []float64) *dblFront {
	d := p.Doubler
	f := &dblFront{rd: p.Rect.Rd, vf: p.Rect.Vf, open: [2]bool{d.Open1, d.Open2}, midLoadA: d.MidLoadA}
	f.gsrc = 1 / math.Max(p.Rs, doublerMinRs)
	mkcap := func(a, b int, c, esr, r float64) fcap {
		fc := fcap{a: a, b: b, g: 1 / (esr + h/c), hc: h / c}
		if r > 0 {
			fc.bleedG = 1 / r
		}
		return fc
	}
	if p.Topology == FullDoubler {
		f.mid, f.w, f.ref = n, n+1, n
		f.caps[0] = mkcap(0, f.mid, d.C1, d.ESR1, d.R1)
		f.caps[1] = mkcap(f.mid, -1, d.C2, d.ESR2, d.R2)
		f.ncap = 2
		f.diodes[0] = dbranch{a: f.w, c: 0}
		f.diodes[1] = dbranch{a: -1, c: f.w}
	} else {
		f.w, f.mid, f.ref = n, n+1, -1
		f.caps[0] = mkcap(f.mid, f.w, d.C1, d.ESR1, d.R1)
		f.ncap = 1
		f.diodes[0] = dbranch{a: -1, c: f.mid}
		f.diodes[1] = dbranch{a: f.mid, c: 0}
	}
	stamp(g, nn, f.w, f.ref, f.gsrc)
	for j := 0; j < f.ncap; j++ {
		c := f.caps[j]
		stamp(g, nn, c.a, c.b, c.g+c.bleedG)
	}
	return f
}

// setResponses fills each diode's node response from the inverse matrix.
func (f *dblFront) setResponses(ginv []float64, nn int) {
	for j := range f.diodes {
		b := &f.diodes[j]
		b.resp = make([]float64, nn)
		for r := 0; r < nn; r++ {
			// One amp out of the anode node, into the cathode node.
			x := 0.0
			if b.c >= 0 {
				x += ginv[r*nn+b.c]
			}
			if b.a >= 0 {
				x -= ginv[r*nn+b.a]
			}
			b.resp[r] = x
		}
	}
	for j := range f.diodes {
		for l := range f.diodes {
			rl := f.diodes[l].resp
			// Volts across diode j (anode − cathode) per amp in diode l.
			f.k[j][l] = at(rl, f.diodes[j].a) - at(rl, f.diodes[j].c)
		}
	}
}

// rhs adds the winding source and the capacitors' history (the mid
// load is the engine's loadA at mid).
func (f *dblFront) rhs(rhs []float64, vs float64) {
	j := vs * f.gsrc
	rhs[f.w] += j
	if f.ref >= 0 {
		rhs[f.ref] -= j
	}
	for c := 0; c < f.ncap; c++ {
		fc := f.caps[c]
		x := fc.g * fc.v
		if fc.a >= 0 {
			rhs[fc.a] += x
		}
		if fc.b >= 0 {
			rhs[fc.b] -= x
		}
	}
}

// solveDiodes finds both diodes' currents on the node volts v (computed
// with no diode current) by projected Gauss–Seidel on the two piecewise
// linear laws i = max(0, (vd − Vf)/Rd), and adds their response to v. In
// a doubler the two diodes conduct on opposite half cycles, so one sweep
// normally settles it; the loop covers the instants both are near the
// knee.
func (f *dblFront) solveDiodes(v []float64) {
	var vd0 [2]float64
	for j, b := range f.diodes {
		vd0[j] = at(v, b.a) - at(v, b.c)
	}
	var i [2]float64
	for sweep := 0; sweep < 20; sweep++ {
		moved := 0.0
		for j := range f.diodes {
			if f.open[j] {
				continue
			}
			// Volts across diode j with the other's current as it is.
			vd := vd0[j]
			for l := range f.diodes {
				if l != j {
					vd += f.k[j][l] * i[l]
				}
			}
			// vd + k[j][j]·i − Vf − Rd·i = 0, k[j][j] < 0.
			ni := (vd - f.vf) / (f.rd - f.k[j][j])
			if ni < 0 {
				ni = 0
			}
			moved = math.Max(moved, math.Abs(ni-i[j]))
			i[j] = ni
		}
		if moved <= 1e-12 {
			break
		}
	}
	for j, b := range f.diodes {
		if i[j] == 0 {
			continue
		}
		for r := range v {
			v[r] += b.resp[r] * i[j]
		}
	}
	f.amps = i
}

// advance updates the capacitor states and the winding current from the
// node volts of the step just solved.
func (f *dblFront) advance(v []float64, vs float64) {
	for c := 0; c < f.ncap; c++ {
		fc := &f.caps[c]
		fc.v += fc.hc * fc.g * (at(v, fc.a) - at(v, fc.b) - fc.v)
	}
	f.iw = f.gsrc * (vs - (at(v, f.w) - at(v, f.ref)))
}

// outAmps is the current the doubler puts into stage 0.
func (f *dblFront) outAmps(full bool) float64 {
	if full {
		return f.amps[0]
	}
	return f.amps[1]
}

// initialDoubler estimates the steady state of a doubler: each capacitor
// at the winding's peak less its diode and its share of the droop
// I/(f·C) (the usual doubler approximation, from memory), the filter at
// DC behind the output.
func (e *engine) initialDoubler(x []float64) (iScale float64) {
	p := e.p
	d := p.Doubler
	vpk := math.Sqrt2 * p.Vrms
	c := d.C1
	if p.Topology == FullDoubler {
		c = math.Min(d.C1, d.C2)
	} else if c0 := p.Stages[0].ShuntC; c0 > 0 {
		c = math.Min(c, c0)
	}
	v0 := p.doublerColdPeak()
	var volts, amps []float64
	var i0 float64
	for pass := 0; pass < 3; pass++ {
		volts, amps, i0 = e.dcGuess(v0)
		v0 = math.Max(p.doublerColdPeak()-i0/(p.Hz*c)-6*i0*p.Rs, 0.05*vpk)
	}
	volts, amps, i0 = e.dcGuess(v0)
	for k := range volts {
		e.vc[k] = volts[k]
		e.il[k] = amps[k]
	}
	f := e.dbl
	if p.Topology == FullDoubler {
		f.caps[0].v, f.caps[1].v = v0/2, v0/2
		if d.Open1 {
			f.caps[0].v = 0
		}
		if d.Open2 {
			f.caps[1].v = 0
		}
	} else {
		f.caps[0].v = vpk - p.Rect.Vf
	}
	e.pack(x)
	return math.Max(i0, 1e-4)
}

// dblRecord measures a doubler's own waveforms over the recorded cycle.
type dblRecord struct {
	caps       [2][]float64
	mid, live  []float64
	sum, pk    [2]float64
	iw2, pSum  float64
	conducting int
}

func newDblRecord(n int) *dblRecord {
	return &dblRecord{caps: [2][]float64{make([]float64, n), make([]float64, n)}, mid: make([]float64, n), live: make([]float64, n)}
}

func (r *dblRecord) sample(e *engine, s int) {
	f := e.dbl
	r.caps[0][s] = f.caps[0].v
	if f.ncap > 1 {
		r.caps[1][s] = f.caps[1].v
	} else {
		r.caps[1][s] = e.v[0]
	}
	r.mid[s] = e.v[f.mid]
	r.live[s] = e.v[f.w]
	any := false
	for j, i := range f.amps {
		r.sum[j] += i
		r.pk[j] = math.Max(r.pk[j], i)
		if i > 0 {
			any = true
			r.pSum += i * (f.vf + f.rd*i)
		}
	}
	if any {
		r.conducting++
	}
	r.iw2 += f.iw * f.iw
}

func waveStats(w []float64) NetResult {
	var sum float64
	for _, v := range w {
		sum += v
	}
	mean := sum / float64(len(w))
	lo, hi := math.Inf(1), math.Inf(-1)
	var sq float64
	for _, v := range w {
		sq += (v - mean) * (v - mean)
		lo = math.Min(lo, v)
		hi = math.Max(hi, v)
	}
	return NetResult{Vdc: mean, RippleRms: math.Sqrt(sq / float64(len(w))), RipplePP: hi - lo}
}

// finish puts the doubler's figures in the result: each capacitor's
// volts and its diode's mean current, the mid node, the peak diode
// current, the winding's rms current, the conduction of both diodes.
func (r *dblRecord) finish(e *engine, res *Result) {
	n := float64(len(r.mid))
	res.Caps = make([]NetResult, 2)
	for c := range res.Caps {
		res.Caps[c] = waveStats(r.caps[c])
		res.Caps[c].DCAmps = r.sum[c] / n
	}
	res.Mid = waveStats(r.mid)
	res.Live = waveStats(r.live)
	res.PeakRectAmps = math.Max(r.pk[0], r.pk[1])
	res.RmsRectAmps = math.Sqrt(r.iw2 / n)
	if tot := r.sum[0] + r.sum[1]; tot > 0 {
		res.RectDropMean = r.pSum / tot
	} else {
		res.RectDropMean = 0
	}
	// Two pulses a cycle, one per diode: the conduction per pulse.
	res.ConductionDeg = 360 * float64(r.conducting) / n / 2
}

// bleedIntoOut is the current a full-wave doubler's top bleeder carries
// from the middle node into the output (stage 0): with the diode's, the
// DC the front end gives the output (its capacitor's is zero on average
// at the steady state). A half-wave doubler's output is fed by its diode
// alone.
func (f *dblFront) bleedIntoOut(v []float64) float64 {
	c := f.caps[0]
	if f.ncap < 2 || c.bleedG == 0 {
		return 0
	}
	return c.bleedG * (v[f.mid] - v[0])
}
