package cold

import (
	"math"
	"slices"
	"sync"
	"sync/atomic"

	"gonum.org/v1/gonum/mat"

	"pinwalk/expect/amp"
	"pinwalk/expect/design"
	"pinwalk/expect/faults"
)

// FaultSet computes the cold checks of many single faults of one design,
// sharing the work that does not depend on the fault: the healthy network,
// its components, and for each net a reading is taken to, the inverse of
// the healthy conductance matrix of that net's component (the matrix of
// driving-point and transfer resistances Z, ground at that net).
//
// Most faults change one or two elements of the cold network: a resistor
// open or drifted, a capacitor shorted, a winding open. The reading under
// the fault is then a low-rank update of the healthy one (the
// Sherman–Morrison–Woodbury identity, G. H. Golub and C. F. Van Loan,
// "Matrix Computations", 4th ed., §2.1.4): with the k changed elements'
// incidence vectors U and conductance changes D,
//
//	Z' = Z − Z U (D⁻¹ + Uᵀ Z U)⁻¹ Uᵀ Z,
//
// and a driving-point reading R'ᵢ = Z'ᵢᵢ costs O(k) entries of Z and one
// k×k solve, where a new factorisation costs the whole component. An
// element taken away entirely keeps a conductance of removedFrac of its
// own where it was the only path between its ends (the exact update is
// singular there): the nets cut off then read open by their connectivity,
// and the readings left joined are exact where the cut-off part hung from
// one element, within that fraction where it hung from several. A
// fault that joins a component to nets outside it, or whose update is
// badly conditioned (a 0 Ω fuse or solder-bridge edge taken away: the
// update's pivot is a difference of near-equal resistances), is solved
// in full, as FaultChecks always did. TestFaultSetAgreesWithFullSolve
// compares the two on every fault of every demo and template.
//
// A FaultSet is safe for concurrent use.
type FaultSet struct {
	d       *design.Design
	m       *amp.Model
	base    []Check
	healthy *network
	netID   map[string]int
	comp    []int // healthy component of each net id
	tos     map[string]*toSet
	// updated and full count the reading groups solved by the update and
	// in full (Stats).
	updated, full atomic.Int64
}

// Stats returns how many groups of readings (the readings of one fault
// taken to one net, at one corner) were solved by the low-rank update and
// how many in full.
func (s *FaultSet) Stats() (updated, full int64) { return s.updated.Load(), s.full.Load() }

// removedFrac is the share of its conductance an element taken away keeps
// in the low-rank update (see FaultSet).
const removedFrac = 1e-7

// pivotFloor is the smallest |pivot| of the update, relative to the
// resistances it is the difference of, that the update trusts: below it
// the cancellation error (about 1e-16 of those resistances) would show in
// the reading, and the fault is solved in full.
const pivotFloor = 1e-9

// toSet is the healthy component of one net readings are taken to, with
// its resistance matrix at each tolerance corner (−1, 0, +1), made on
// first need.
type toSet struct {
	to    string
	row   map[string]int // net → row of Z; to itself has none
	once  [3]sync.Once
	z     [3]*mat.SymDense
	zerr  [3]error
	inset func(net string) bool
}

// NewFaultSet prepares the cold checks of d's single faults; base is
// Checks(d) and m is d compiled by amp.Build.
func NewFaultSet(d *design.Design, m *amp.Model, base []Check) *FaultSet {
	h := buildNetwork(d)
	for i := range h.edges {
		h.edges[i].orig = i
	}
	s := &FaultSet{d: d, m: m, base: base, healthy: h, netID: map[string]int{}, tos: map[string]*toSet{}}
	id := func(net string) int {
		if i, ok := s.netID[net]; ok {
			return i
		}
		s.netID[net] = len(s.netID)
		return len(s.netID) - 1
	}
	for _, e := range h.edges {
		id(e.a)
		id(e.b)
	}
	for _, c := range base {
		id(c.From)
		id(c.To)
	}
	uf := newUnionFind(len(s.netID))
	for _, e := range h.edges {
		uf.union(s.netID[e.a], s.netID[e.b])
	}
	s.comp = make([]int, len(s.netID))
	for i := range s.comp {
		s.comp[i] = uf.find(i)
	}
	for _, c := range base {
		if _, ok := s.tos[c.To]; ok {
			continue
		}
		t := &toSet{to: c.To, row: map[string]int{}}
		root := s.comp[s.netID[c.To]]
		for net, i := range s.netID {
			if net != c.To && s.comp[i] == root {
				t.row[net] = 0
			}
		}
		// Rows in a fixed order (the map's is not).
		names := make([]string, 0, len(t.row))
		for net := range t.row {
			names = append(names, net)
		}
		slices.Sort(names)
		for r, net := range names {
			t.row[net] = r
		}
		t.inset = func(net string) bool {
			i, ok := s.netID[net]
			return ok && s.comp[i] == root
		}
		s.tos[c.To] = t
	}
	return s
}

// matrix returns Z of t's component at a tolerance corner.
func (s *FaultSet) matrix(t *toSet, corner int) (*mat.SymDense, error) {
	k := corner + 1
	t.once[k].Do(func() {
		n := len(t.row)
		if n == 0 {
			t.z[k] = nil
			return
		}
		l := mat.NewSymDense(n, nil)
		for _, e := range s.healthy.edges {
			if !t.inset(e.a) {
				continue
			}
			g := conductance(e.scaled(corner))
			ra, okA := t.row[e.a]
			rb, okB := t.row[e.b]
			if okA {
				l.SetSym(ra, ra, l.At(ra, ra)+g)
			}
			if okB {
				l.SetSym(rb, rb, l.At(rb, rb)+g)
			}
			if okA && okB {
				l.SetSym(ra, rb, l.At(ra, rb)-g)
			}
		}
		var ch mat.Cholesky
		if !ch.Factorize(l) {
			t.zerr[k] = errNotFactored
			return
		}
		z := mat.NewSymDense(n, nil)
		if err := ch.InverseTo(z); err != nil {
			t.zerr[k] = err
			return
		}
		t.z[k] = z
	})
	return t.z[k], t.zerr[k]
}

type constErr string

func (e constErr) Error() string { return string(e) }

const errNotFactored = constErr("cold: healthy conductance matrix not positive definite")

// conductance is an edge's conductance as the network solver stamps it (a
// 0 Ω edge as the solver's short).
func conductance(ohms float64) float64 {
	switch {
	case math.IsInf(ohms, 1):
		return 0
	case ohms == 0:
		return 1 / mnaShortOhms
	}
	return 1 / ohms
}

// mnaShortOhms is what expect/mna stamps for a 0 Ω resistor.
const mnaShortOhms = 1e-6

// Checks returns the cold checks with fault f in place, as FaultChecks
// does.
func (s *FaultSet) Checks(f faults.Fault, corners bool) (out []Check, changed bool, err error) {
	if err := faults.Check(s.m, f); err != nil {
		return nil, false, err
	}
	out, changed, err = s.checks(f, corners)
	if err != nil {
		return nil, changed, err
	}
	return faultHeaterString(s.d, s.m, out, changed, f)
}

func (s *FaultSet) checks(f faults.Fault, corners bool) ([]Check, bool, error) {
	n := &network{d: s.d, edges: append([]edge(nil), s.healthy.edges...)}
	if !alterNetwork(n, s.m, f) {
		return s.base, false, nil
	}
	// Nets whose elements the fault touched (ends or ohms changed, added
	// or taken away): a reading whose healthy component holds none of
	// them is unchanged.
	seen := make([]bool, len(s.healthy.edges))
	touched := map[string]bool{}
	for _, e := range n.edges {
		if e.orig >= 0 && !seen[e.orig] {
			seen[e.orig] = true
			h := s.healthy.edges[e.orig]
			if h.a == e.a && h.b == e.b && h.ohms == e.ohms {
				continue
			}
			touched[h.a], touched[h.b] = true, true
		}
		touched[e.a], touched[e.b] = true, true
	}
	for i, h := range s.healthy.edges {
		if !seen[i] {
			touched[h.a], touched[h.b] = true, true
		}
	}
	compHit := map[int]bool{}
	for net := range touched {
		if i, ok := s.netID[net]; ok {
			compHit[s.comp[i]] = true
		}
	}
	out := make([]Check, len(s.base))
	copy(out, s.base)
	byTo := map[string][]int{}
	var tos []string
	for i, c := range s.base {
		if !compHit[s.comp[s.netID[c.From]]] {
			continue
		}
		if _, ok := byTo[c.To]; !ok {
			tos = append(tos, c.To)
		}
		byTo[c.To] = append(byTo[c.To], i)
	}
	if len(tos) == 0 {
		return out, true, nil
	}
	solve := func(edges []edge, corner int) ([]float64, []bool, error) {
		return s.solve(edges, corner, tos, byTo)
	}
	nomOhms, nomOpen, err := solve(n.edges, 0)
	if err != nil {
		return nil, true, err
	}
	var ownLo, ownHi []float64
	if !corners {
		for i, e := range n.edges {
			if e.ref != f.Ref || e.tol == (design.Tolerance{}) {
				continue
			}
			for _, c := range []int{-1, 1} {
				es := append([]edge(nil), n.edges...)
				es[i].ohms, es[i].tol = e.scaled(c), design.Tolerance{}
				rs, _, err := solve(es, 0)
				if err != nil {
					return nil, true, err
				}
				if c < 0 {
					ownLo = rs
				} else {
					ownHi = rs
				}
			}
			break
		}
	}
	var cornerLo, cornerHi []float64
	if corners {
		if cornerLo, _, err = solve(n.edges, -1); err != nil {
			return nil, true, err
		}
		if cornerHi, _, err = solve(n.edges, 1); err != nil {
			return nil, true, err
		}
	}
	for _, to := range tos {
		for _, i := range byTo[to] {
			c := s.base[i]
			r, open := nomOhms[i], nomOpen[i]
			switch {
			case open:
				out[i].Ohms, out[i].Open = math.Inf(1), true
				out[i].Tol = [2]float64{math.Inf(1), math.Inf(1)}
			case corners:
				out[i].Ohms, out[i].Open, out[i].Tol = r, false, [2]float64{cornerLo[i], cornerHi[i]}
			default:
				lo, hi := r, r
				if ownLo != nil {
					lo, hi = ownLo[i], ownHi[i]
				}
				if c.Ohms > 0 && !c.Open {
					lo, hi = lo*c.Tol[0]/c.Ohms, hi*c.Tol[1]/c.Ohms
				}
				out[i].Ohms, out[i].Open, out[i].Tol = r, false, [2]float64{lo, hi}
			}
		}
	}
	return out, true, nil
}

// term is one changed element of the update: its ends and its change of
// conductance.
type term struct {
	a, b string
	dg   float64
}

// solve returns the readings of base's entries in byTo (indexed as base)
// on the network of edges, each element at a tolerance corner.
func (s *FaultSet) solve(edges []edge, corner int, tos []string, byTo map[string][]int) ([]float64, []bool, error) {
	ohms := make([]float64, len(s.base))
	open := make([]bool, len(s.base))
	// Connectivity of the faulted network.
	ids := make(map[string]int, 8)
	id := func(net string) int {
		if i, ok := s.netID[net]; ok {
			return i
		}
		if i, ok := ids[net]; ok {
			return i
		}
		ids[net] = len(s.netID) + len(ids)
		return ids[net]
	}
	for _, e := range edges {
		id(e.a)
		id(e.b)
	}
	uf := newUnionFind(len(s.netID) + len(ids))
	for _, e := range edges {
		uf.union(id(e.a), id(e.b))
	}
	// The change against the healthy network, by pair of nets.
	seen := make([]bool, len(s.healthy.edges))
	var terms []term
	addTerm := func(a, b string, dg float64) {
		if dg == 0 {
			return
		}
		if b < a {
			a, b = b, a
		}
		for k := range terms {
			if terms[k].a == a && terms[k].b == b {
				terms[k].dg += dg
				return
			}
		}
		terms = append(terms, term{a: a, b: b, dg: dg})
	}
	removed := func(h edge) {
		g := conductance(h.scaled(corner))
		if uf.find(id(h.a)) != uf.find(id(h.b)) {
			g *= 1 - removedFrac // the only path between its ends: see FaultSet
		}
		addTerm(h.a, h.b, -g)
	}
	for _, e := range edges {
		if e.orig >= 0 && !seen[e.orig] {
			seen[e.orig] = true
			h := s.healthy.edges[e.orig]
			if h.a == e.a && h.b == e.b {
				gn, gh := conductance(e.scaled(corner)), conductance(h.scaled(corner))
				if gn == 0 && gh > 0 {
					removed(h)
				} else {
					addTerm(e.a, e.b, gn-gh)
				}
				continue
			}
			removed(h)
		}
		addTerm(e.a, e.b, conductance(e.scaled(corner)))
	}
	for i, h := range s.healthy.edges {
		if !seen[i] {
			removed(h)
		}
	}
	for k := 0; k < len(terms); k++ {
		if math.Abs(terms[k].dg) < 1e-300 {
			terms = append(terms[:k], terms[k+1:]...)
			k--
		}
	}
	var full *network
	for _, to := range tos {
		idx := byTo[to]
		t := s.tos[to]
		ok := false
		var err error
		if t != nil {
			ok, err = s.update(t, corner, terms, uf, id, idx, ohms, open)
			if err != nil {
				return nil, nil, err
			}
		}
		if ok {
			s.updated.Add(1)
			continue
		}
		s.full.Add(1)
		if full == nil {
			full = &network{d: s.d, edges: edges, adj: map[string][]int{}}
			for i, e := range edges {
				full.adj[e.a] = append(full.adj[e.a], i)
				full.adj[e.b] = append(full.adj[e.b], i)
			}
		}
		froms := make([]string, len(idx))
		for k, i := range idx {
			froms[k] = s.base[i].From
		}
		rs, os, err := full.resistances(froms, to, corner)
		if err != nil {
			return nil, nil, err
		}
		for k, i := range idx {
			ohms[i], open[i] = rs[k], os[k]
		}
	}
	return ohms, open, nil
}

// update fills the readings idx (all taken to t.to) by the low-rank update
// of t's healthy matrix; false when the fault needs a full solve there.
func (s *FaultSet) update(t *toSet, corner int, all []term, uf *unionFind, id func(string) int, idx []int, ohms []float64, open []bool) (bool, error) {
	// Terms that reach t's component; one that joins it to a net
	// outside grows the component: full solve.
	var terms []term
	for _, tm := range all {
		inA := tm.a == t.to || t.inset(tm.a)
		inB := tm.b == t.to || t.inset(tm.b)
		switch {
		case inA && inB:
			terms = append(terms, tm)
		case inA || inB:
			if tm.dg > 0 {
				return false, nil
			}
		}
	}
	z, err := s.matrix(t, corner)
	if err != nil {
		return false, nil // a matrix that will not factor: solved in full
	}
	at := func(net string, r int) float64 { // Z[row(net)][r]
		if net == t.to {
			return 0
		}
		return z.At(t.row[net], r)
	}
	zz := func(a, b string) float64 {
		if a == t.to || b == t.to {
			return 0
		}
		return z.At(t.row[a], t.row[b])
	}
	k := len(terms)
	// C = D⁻¹ + Uᵀ Z U.
	var cm *mat.Dense
	var lu mat.LU
	if k > 0 {
		cm = mat.NewDense(k, k, nil)
		for i, ti := range terms {
			for j, tj := range terms {
				v := zz(ti.a, tj.a) - zz(ti.a, tj.b) - zz(ti.b, tj.a) + zz(ti.b, tj.b)
				if i == j {
					scale := math.Abs(zz(ti.a, ti.a)) + math.Abs(zz(ti.b, ti.b)) + 2*math.Abs(zz(ti.a, ti.b))
					v += 1 / ti.dg
					if math.Abs(v) <= pivotFloor*scale {
						return false, nil
					}
				}
				cm.Set(i, j, v)
			}
		}
		lu.Factorize(cm)
		if lu.Det() == 0 || lu.Cond() > 1e10 {
			return false, nil
		}
	}
	toRoot := uf.find(id(t.to))
	w := mat.NewVecDense(max(k, 1), nil)
	x := mat.NewVecDense(max(k, 1), nil)
	for _, i := range idx {
		from := s.base[i].From
		switch {
		case from == t.to:
			ohms[i], open[i] = 0, false
			continue
		case uf.find(id(from)) != toRoot:
			ohms[i], open[i] = math.Inf(1), true
			continue
		}
		r, ok := t.row[from]
		if !ok {
			return false, nil // joined by the fault only: cannot happen (checked above)
		}
		v := z.At(r, r)
		if k > 0 {
			for j, tj := range terms {
				w.SetVec(j, at(tj.a, r)-at(tj.b, r))
			}
			if err := lu.SolveVecTo(x, false, w); err != nil {
				return false, nil
			}
			v -= mat.Dot(w, x)
		}
		if !(v > 0) || math.IsInf(v, 0) {
			return false, nil
		}
		ohms[i], open[i] = v, false
	}
	return true, nil
}

// unionFind is a disjoint-set forest over net ids.
type unionFind struct{ parent []int }

func newUnionFind(n int) *unionFind {
	u := &unionFind{parent: make([]int, n)}
	for i := range u.parent {
		u.parent[i] = i
	}
	return u
}

func (u *unionFind) find(i int) int {
	for u.parent[i] != i {
		u.parent[i] = u.parent[u.parent[i]]
		i = u.parent[i]
	}
	return i
}

func (u *unionFind) union(a, b int) {
	ra, rb := u.find(a), u.find(b)
	if ra != rb {
		u.parent[ra] = rb
	}
}
