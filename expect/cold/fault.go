package cold

import (
	"math"

	"pinwalk/expect/amp"
	"pinwalk/expect/design"
	"pinwalk/expect/faults"
)

// FaultChecks returns the cold checks of a design with one fault in place:
// the readings of base (Checks(d), same order, IDs, leads and notes) with
// Ohms, Tol and Open recomputed on the faulted network. changed is false
// when the fault leaves the cold network as it is (a valve, a rectifier, a
// supply gone dead, an open capacitor): base is then returned unchanged.
// m is d compiled by amp.Build (for the HT winding and heater windings).
//
// What a fault does cold is its kind's declaration (ModeSpec.Cold in
// expect/faults' kind files). The tolerance corners stay exact bounds (Rayleigh's
// monotonicity, see resistance): the fault's own element has no tolerance.
// With corners false only the nominal reading is solved and the corners
// are the base reading's corners scaled by the new reading (the relative
// spread kept): a third of the work, for callers that need speed more
// than exact bounds. Readings whose network the fault does not reach are
// copied from base.
func FaultChecks(d *design.Design, m *amp.Model, base []Check, f faults.Fault, corners bool) (out []Check, changed bool, err error) {
	if err := faults.Check(m, f); err != nil {
		return nil, false, err
	}
	out, changed, err = faultChecks(d, m, base, f, corners)
	if err != nil {
		return nil, changed, err
	}
	return faultHeaterString(d, m, out, changed, f)
}

// faultHeaterString redoes the series heater string's reading (valves in)
// under a fault: a heater of the string open, or the dropper, reads open.
func faultHeaterString(d *design.Design, m *amp.Model, out []Check, changed bool, f faults.Fault) ([]Check, bool, error) {
	hs := m.String
	if hs == nil {
		return out, changed, nil
	}
	for i, c := range out {
		if c.Kind != "heaters" {
			continue
		}
		n := buildNetwork(d)
		alterNetwork(n, m, f)
		n.adj = map[string][]int{}
		for j, e := range n.edges {
			n.adj[e.a] = append(n.adj[e.a], j)
			n.adj[e.b] = append(n.adj[e.b], j)
		}
		open := ""
		if f.Mode == faults.HeaterOpen {
			open = f.Ref
		}
		nc, err := heaterStringOn(n, hs, c.From, c.To, open)
		if err != nil {
			return nil, changed, err
		}
		if nc.Ohms != c.Ohms || nc.Open != c.Open {
			if !changed {
				out = append([]Check(nil), out...)
			}
			out[i], changed = nc, true
		}
	}
	return out, changed, nil
}

func faultChecks(d *design.Design, m *amp.Model, base []Check, f faults.Fault, corners bool) (out []Check, changed bool, err error) {
	n := buildNetwork(d)
	if !alterNetwork(n, m, f) {
		return base, false, nil // most live-only faults: one build, no solve
	}
	orig := buildNetwork(d)
	// Nets whose elements the fault touched: a reading whose component
	// (before the fault) holds none of them is unchanged.
	touched := map[string]bool{}
	key := func(e edge) [3]string { return [3]string{e.ref, e.a, e.b} }
	before := map[[3]string]edge{}
	for _, e := range orig.edges {
		before[key(e)] = e
	}
	after := map[[3]string]bool{}
	for _, e := range n.edges {
		after[key(e)] = true
		if b, ok := before[key(e)]; !ok || b.ohms != e.ohms {
			touched[e.a], touched[e.b] = true, true
		}
	}
	for k, e := range before {
		if !after[k] {
			touched[e.a], touched[e.b] = true, true
		}
	}
	n.adj = map[string][]int{}
	for i, e := range n.edges {
		n.adj[e.a] = append(n.adj[e.a], i)
		n.adj[e.b] = append(n.adj[e.b], i)
	}
	out = make([]Check, len(base))
	hits := make([]bool, len(base))
	byTo := map[string][]int{} // readings to solve, by the net they are read to
	var tos []string
	// Components of the network before the fault, each found once.
	compOf := map[string]int{}
	var compHit []bool
	for i, c := range base {
		out[i] = c
		ci, ok := compOf[c.From]
		if !ok {
			ci = len(compHit)
			hit := false
			for net := range orig.reach(c.From, "") {
				compOf[net] = ci
				hit = hit || touched[net]
			}
			compHit = append(compHit, hit)
		}
		hits[i] = compHit[ci]
		if hits[i] {
			if _, ok := byTo[c.To]; !ok {
				tos = append(tos, c.To)
			}
			byTo[c.To] = append(byTo[c.To], i)
		}
	}
	solve := func(n *network) ([]float64, []bool, error) {
		ohms := make([]float64, len(base))
		opens := make([]bool, len(base))
		for _, to := range tos {
			idx := byTo[to]
			froms := make([]string, len(idx))
			for k, i := range idx {
				froms[k] = base[i].From
			}
			rs, os, err := n.resistances(froms, to, 0)
			if err != nil {
				return nil, nil, err
			}
			for k, i := range idx {
				ohms[i], opens[i] = rs[k], os[k]
			}
		}
		return ohms, opens, nil
	}
	nomOhms, nomOpen, err := solve(n)
	if err != nil {
		return nil, true, err
	}
	// The fault's own element with a spread of its own (a shorted
	// capacitor): without corners, its two ends are solved with the rest
	// nominal, so the reading's spread holds the fault's.
	var ownLo, ownHi []float64
	if !corners {
		for i, e := range n.edges {
			if e.ref != f.Ref || e.tol == (design.Tolerance{}) {
				continue
			}
			for _, c := range []int{-1, 1} {
				n2 := *n
				n2.edges = append([]edge(nil), n.edges...)
				n2.edges[i].ohms, n2.edges[i].tol = e.scaled(c), design.Tolerance{}
				rs, _, err := solve(&n2)
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
	for i, c := range base {
		if !hits[i] {
			continue
		}
		r, open := nomOhms[i], nomOpen[i]
		if open {
			out[i].Ohms, out[i].Open = math.Inf(1), true
			out[i].Tol = [2]float64{math.Inf(1), math.Inf(1)}
			continue
		}
		if !corners {
			lo, hi := r, r
			if ownLo != nil {
				lo, hi = ownLo[i], ownHi[i]
			}
			if c.Ohms > 0 && !c.Open {
				lo, hi = lo*c.Tol[0]/c.Ohms, hi*c.Tol[1]/c.Ohms
			}
			out[i].Ohms, out[i].Open, out[i].Tol = r, false, [2]float64{lo, hi}
			continue
		}
		lo, _, err := n.resistance(c.From, c.To, -1)
		if err != nil {
			return nil, true, err
		}
		hi, _, err := n.resistance(c.From, c.To, 1)
		if err != nil {
			return nil, true, err
		}
		out[i].Ohms, out[i].Open, out[i].Tol = r, false, [2]float64{lo, hi}
	}
	return out, true, nil
}

// alterNetwork puts a fault into the cold network's edges through its
// kind's cold effect (faults.ApplyCold) and reports whether anything
// changed (adjacency is left for the caller to rebuild).
func alterNetwork(n *network, m *amp.Model, f faults.Fault) bool {
	c := &coldNet{n: n}
	faults.ApplyCold(m, c, f)
	return c.changed
}

// coldNet is the network as a fault's kind changes it (faults.ColdNet).
type coldNet struct {
	n       *network
	changed bool
}

func toCold(e edge) faults.ColdEdge {
	return faults.ColdEdge{A: e.a, B: e.b, Ohms: e.ohms, Tol: e.tol, Ref: e.ref}
}

func fromCold(e faults.ColdEdge) edge {
	return edge{a: e.A, b: e.B, ohms: e.Ohms, tol: e.Tol, ref: e.Ref}
}

func (c *coldNet) Drop(match func(e faults.ColdEdge) bool) {
	var keep []edge
	for _, e := range c.n.edges {
		if match(toCold(e)) {
			c.changed = true
			continue
		}
		keep = append(keep, e)
	}
	c.n.edges = keep
}

func (c *coldNet) Edit(edit func(e *faults.ColdEdge) bool) {
	for i, e := range c.n.edges {
		x := toCold(e)
		if edit(&x) {
			c.n.edges[i], c.changed = fromCold(x), true
		}
	}
}

func (c *coldNet) Add(e faults.ColdEdge) {
	c.n.edges = append(c.n.edges, fromCold(e))
	c.changed = true
}
