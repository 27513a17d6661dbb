package cold

import (
	"errors"
	"fmt"
	"math"
	"sort"

	"gonum.org/v1/gonum/mat"

	"pinwalk/expect/amp"
	"pinwalk/expect/design"
	"pinwalk/expect/units"
)

// A voltage doubler's capacitors are not all to chassis: a full-wave
// doubler's top capacitor sits between the output and the capacitors'
// junction, a half-wave doubler's pump capacitor between the winding and
// the diodes' junction. After power-off each discharges through what is
// across it and what the rest of the network offers, coupled to the other
// through their shared net. doublerDischarge solves the whole cold network
// with every capacitor in it, floating ones included: C·dv/dt = −G·v with
// a full capacitance matrix C. The nodes without capacitance are
// eliminated as rcNet does (Kron reduction), C = L·Lᵀ (Cholesky) and
// y = Lᵀ·v turns it into dy/dt = −A·y with A = L⁻¹·G·L⁻ᵀ symmetric, whose
// eigenpairs give the normal modes (any linear-systems text); each
// capacitor's own volts (across its two nets) is then a sum of decaying
// modes, as for the capacitors to chassis.

// doublerDischarge replaces the discharge rows of a design with an HT
// voltage doubler by the solution with every capacitor in it, and adds a
// row per doubler capacitor (Other its second net when not chassis). ok
// is false for designs without a doubler.
func doublerDischarge(d *design.Design, m *amp.Model, op *amp.OP, n *network, all map[string][]*design.Part, rows []Discharge) (out []Discharge, ok bool, err error) {
	if m.HT == nil || m.HT.Doubler == nil {
		return rows, false, nil
	}
	db := m.HT.Doubler
	// Rows: the doubler's capacitors first, then the rest as found.
	var dbl []Discharge
	for _, ref := range db.Caps {
		p := d.ByRef[ref]
		a, b := p.Terminals[0].Net, p.Terminals[1].Net
		if a == d.Ground || (b != d.Ground && a == db.Mid && b != db.Live) {
			a, b = b, a // the upper net first
		}
		if b == d.Ground {
			b = ""
		}
		va, _ := m.NetVolts(op, a)
		vb := 0.0
		if b != "" {
			vb, _ = m.NetVolts(op, b)
		}
		dbl = append(dbl, Discharge{Ref: ref, Net: a, Other: b, Farads: p.Value, PeakVolts: va - vb})
	}
	for _, r := range rows {
		if r.Ref != db.Caps[0] && r.Ref != db.Caps[1] {
			dbl = append(dbl, r)
		}
	}
	rows = dbl
	// Every capacitor of 0.5 µF or more, chassis or floating.
	type capEdge struct {
		a, b string
		f    float64
	}
	var caps []capEdge
	for _, p := range d.PartsOfKind(design.Capacitor) {
		if p.Value >= 0.5e-6 {
			caps = append(caps, capEdge{p.Terminals[0].Net, p.Terminals[1].Net, p.Value})
		}
	}
	grounded := n.reach(d.Ground, "")
	var nets []string
	for x := range grounded {
		if x != d.Ground {
			nets = append(nets, x)
		}
	}
	sort.Strings(nets)
	g, _, idx := n.matrices(nets, all)
	cm := mat.NewDense(len(nets), len(nets), nil)
	for _, c := range caps {
		ia, oka := idx[c.a]
		ib, okb := idx[c.b]
		if (!oka && c.a != d.Ground) || (!okb && c.b != d.Ground) {
			continue // an end with no path to chassis: no charge moves through it
		}
		if oka {
			cm.Set(ia, ia, cm.At(ia, ia)+c.f)
		}
		if okb {
			cm.Set(ib, ib, cm.At(ib, ib)+c.f)
		}
		if oka && okb {
			cm.Set(ia, ib, cm.At(ia, ib)-c.f)
			cm.Set(ib, ia, cm.At(ib, ia)-c.f)
		}
	}
	rc, err := newRCFull(g, cm)
	if err != nil {
		return nil, true, fmt.Errorf("discharge: %w", err)
	}
	v0 := make([]float64, len(rc.capIx))
	for k, i := range rc.capIx {
		v0[k], _ = m.NetVolts(op, nets[i])
	}
	for i := range rows {
		r := &rows[i]
		other := r.Other
		if other == "" {
			other = d.Ground
		}
		bleed, open, err := n.resistance(r.Net, other, 0)
		if err != nil {
			return nil, true, err
		}
		r.BleedOhms = bleed
		r.NoPath, r.Warning = false, ""
		peak := math.Abs(r.PeakVolts)
		_, okA := idx[r.Net]
		_, okB := idx[other]
		if r.Net == d.Ground {
			okA = true
		}
		if other == d.Ground {
			okB = true
		}
		if open || !okA || !okB {
			r.NoPath = true
			r.BleedOhms = math.Inf(1)
			r.To60, r.To10 = math.Inf(1), math.Inf(1)
			if peak < TouchVolts {
				r.To60, r.To10 = 0, 0
			} else if peak < HazardVolts {
				r.To60 = 0
			}
			r.Warning = fmt.Sprintf("WARNING: %s (%s on %s) has NO BLEED PATH: it can hold %s for hours after power-off. Discharge it with a resistor tool (a few kΩ, several watts, on insulated leads) and verify below %g V with the meter before touching",
				r.Ref, units.Format(r.Farads, units.Farads), r.Across(), units.Format(peak, units.Volts), TouchVolts)
			continue
		}
		o := rc.observe(idx, r.Net, other)
		a := rc.coeffs(o, v0)
		r.To60 = lastAbove(a, rc.lambda, HazardVolts)
		r.To10 = lastAbove(a, rc.lambda, TouchVolts)
		if r.To10 > 300 {
			r.Warning = fmt.Sprintf("%s takes %s to fall below %g V: discharge it with a resistor tool rather than wait, and verify with the meter",
				r.Ref, FormatDuration(r.To10), TouchVolts)
		}
	}
	return rows, true, nil
}

// Across names where a discharge row is read: its net, or across a
// floating capacitor's two nets.
func (r Discharge) Across() string {
	if r.Other == "" {
		return r.Net
	}
	return r.Net + "–" + r.Other
}

// rcFull is an RC network with a full (symmetric, positive definite on the
// capacitor nodes) capacitance matrix: C·dv/dt = −G·v.
type rcFull struct {
	capIx  []int
	cpos   map[int]int
	rpos   map[int]int
	x      *mat.Dense // Grr⁻¹·Grc, nil when every node has capacitance
	linv   *mat.Dense // L⁻¹ (C over capacitor nodes = L·Lᵀ)
	lambda []float64
	u      *mat.Dense
}

func newRCFull(g, c *mat.Dense) (*rcFull, error) {
	n, _ := c.Dims()
	r := &rcFull{cpos: map[int]int{}, rpos: map[int]int{}}
	var resIx []int
	for i := 0; i < n; i++ {
		if c.At(i, i) > 0 {
			r.cpos[i] = len(r.capIx)
			r.capIx = append(r.capIx, i)
		} else {
			r.rpos[i] = len(resIx)
			resIx = append(resIx, i)
		}
	}
	nc, nr := len(r.capIx), len(resIx)
	if nc == 0 {
		return nil, errors.New("rc: no capacitor nodes")
	}
	sub := func(m *mat.Dense, rows, cols []int) *mat.Dense {
		out := mat.NewDense(len(rows), len(cols), nil)
		for i, a := range rows {
			for j, b := range cols {
				out.Set(i, j, m.At(a, b))
			}
		}
		return out
	}
	gred := sub(g, r.capIx, r.capIx)
	if nr > 0 {
		grr := sub(g, resIx, resIx)
		grc := sub(g, resIx, r.capIx)
		var lu mat.LU
		lu.Factorize(grr)
		r.x = mat.NewDense(nr, nc, nil)
		if err := lu.SolveTo(r.x, false, grc); err != nil {
			var ce mat.Condition
			if !errors.As(err, &ce) || math.IsInf(float64(ce), 1) {
				return nil, errors.New("rc: a node without capacitance has no resistive path (singular reduction)")
			}
		}
		var corr mat.Dense
		corr.Mul(grc.T(), r.x)
		gred.Sub(gred, &corr)
	}
	// A stray capacitance to chassis on every capacitor node, 10⁻⁷ of
	// the largest capacitor (10 pF beside 100 µF, the order of a part's
	// and its wiring's stray capacitance, common practice): a node joined
	// to chassis only through resistance (a half-wave doubler's winding
	// end, behind its pump capacitor) makes C singular without it, and
	// its own mode then dies in well under a microsecond.
	cmax := 0.0
	for i := 0; i < nc; i++ {
		cmax = math.Max(cmax, c.At(r.capIx[i], r.capIx[i]))
	}
	cc := mat.NewSymDense(nc, nil)
	for i := 0; i < nc; i++ {
		for j := i; j < nc; j++ {
			cc.SetSym(i, j, c.At(r.capIx[i], r.capIx[j]))
		}
		cc.SetSym(i, i, cc.At(i, i)+1e-7*cmax)
	}
	var ch mat.Cholesky
	if !ch.Factorize(cc) {
		return nil, errors.New("rc: the capacitance matrix is not positive definite (a capacitor net with no capacitance to chassis through the others)")
	}
	var l mat.TriDense
	ch.LTo(&l)
	r.linv = mat.NewDense(nc, nc, nil)
	if err := r.linv.Inverse(&l); err != nil {
		return nil, fmt.Errorf("rc: %w", err)
	}
	var t1, t2 mat.Dense
	t1.Mul(r.linv, gred)
	t2.Mul(&t1, r.linv.T())
	a := mat.NewSymDense(nc, nil)
	for i := 0; i < nc; i++ {
		for j := i; j < nc; j++ {
			a.SetSym(i, j, 0.5*(t2.At(i, j)+t2.At(j, i)))
		}
	}
	var es mat.EigenSym
	if !es.Factorize(a, true) {
		return nil, errors.New("rc: eigen decomposition failed")
	}
	r.lambda = es.Values(nil)
	r.u = &mat.Dense{}
	es.VectorsTo(r.u)
	return r, nil
}

// observe returns the observation vector over capacitor nodes of the
// volts from net a to net b (either may be chassis, absent from idx).
func (r *rcFull) observe(idx map[string]int, a, b string) []float64 {
	o := make([]float64, len(r.capIx))
	add := func(net string, s float64) {
		i, ok := idx[net]
		if !ok {
			return // chassis
		}
		if p, ok := r.cpos[i]; ok {
			o[p] += s
			return
		}
		p := r.rpos[i]
		for j := range o {
			o[j] -= s * r.x.At(p, j)
		}
	}
	add(a, 1)
	add(b, -1)
	return o
}

// coeffs returns the modal coefficients of y(t) = o·v(t) from v(0) = v0:
// v = L⁻ᵀ·U·exp(−Λt)·Uᵀ·Lᵀ·v0.
func (r *rcFull) coeffs(o, v0 []float64) []float64 {
	nc := len(r.capIx)
	ov := mat.NewVecDense(nc, o)
	// left = Uᵀ·L⁻¹·o (as a row: o·L⁻ᵀ·U).
	var lo, left mat.VecDense
	lo.MulVec(r.linv, ov)
	left.MulVec(r.u.T(), &lo)
	// right = Uᵀ·Lᵀ·v0, with Lᵀ·v0 = (L⁻¹)⁻ᵀ… solved from L⁻¹ directly.
	var l mat.Dense
	if err := l.Inverse(r.linv); err != nil {
		return make([]float64, nc)
	}
	var ltv, right mat.VecDense
	ltv.MulVec(l.T(), mat.NewVecDense(nc, v0))
	right.MulVec(r.u.T(), &ltv)
	out := make([]float64, nc)
	for k := range out {
		out[k] = left.AtVec(k) * right.AtVec(k)
	}
	return out
}
