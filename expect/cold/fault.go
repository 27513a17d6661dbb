package cold

import (
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
// copied from base. Many faults of one design: NewFaultSet, which shares
// the healthy network's solve between them.
func FaultChecks(d *design.Design, m *amp.Model, base []Check, f faults.Fault, corners bool) (out []Check, changed bool, err error) {
	return NewFaultSet(d, m, base).Checks(f, corners)
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
			ne := fromCold(x)
			ne.orig = e.orig
			c.n.edges[i], c.changed = ne, true
		}
	}
}

func (c *coldNet) Add(e faults.ColdEdge) {
	ne := fromCold(e)
	ne.orig = -1
	c.n.edges = append(c.n.edges, ne)
	c.changed = true
}
