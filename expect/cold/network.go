// Package cold computes what an unpowered amplifier should read: the
// resistance from each net to chassis and across each winding with the
// valves out of their sockets and the capacitors open (Checks), and how
// long the filter capacitors take to bleed down after power-off
// (DischargeTimes).
//
// The cold network holds every resistive path of the design: resistors,
// pots (each side of the wiper), choke, output-transformer and
// power-transformer winding resistances (DCR) and fuses (0 Ω). Valves are
// out of their sockets (or cold) and conduct nothing; capacitors are open
// for the DC reading; silicon rectifier diodes are open, since what they
// read depends on the meter's polarity (the checks say where); bias
// supplies and bench (dc-supply) supplies are open (unpowered: a bias
// supply's rectifier blocks one polarity, and a bench supply is to be
// disconnected before a cold check).
package cold

import (
	"fmt"
	"math"
	"sort"

	"pinwalk/expect/design"
	"pinwalk/expect/mna"
)

// edge is one resistive element of the cold network.
type edge struct {
	a, b string
	ohms float64
	tol  design.Tolerance
	ref  string
	// orig is the edge's index in the healthy network a fault's network
	// was copied from (FaultSet); -1 for an edge the fault added.
	orig int
}

// network is the cold resistive network of a design.
type network struct {
	d     *design.Design
	edges []edge
	adj   map[string][]int // net → edge indices
	notes []string         // modelling notes (unknown DCRs…)
}

func buildNetwork(d *design.Design) *network {
	n := &network{d: d, adj: map[string][]int{}}
	wtol := d.Defaults.Winding
	add := func(ref, a, b string, ohms float64, tol design.Tolerance) {
		if a == b || a == "" || b == "" {
			return
		}
		n.edges = append(n.edges, edge{a: a, b: b, ohms: ohms, tol: tol, ref: ref})
		i := len(n.edges) - 1
		n.adj[a] = append(n.adj[a], i)
		n.adj[b] = append(n.adj[b], i)
	}
	for _, p := range d.Parts {
		switch p.Kind {
		case design.Resistor:
			add(p.Ref, p.Terminals[0].Net, p.Terminals[1].Net, p.Value, p.Tol)
		case design.Pot:
			a, b := p.Terminals[0].Net, p.Terminals[1].Net
			w, _ := p.Net("wiper")
			add(p.Ref, a, w, p.Value*p.Setting, p.Tol)
			add(p.Ref, w, b, p.Value*(1-p.Setting), p.Tol)
		case design.Choke:
			add(p.Ref, p.Terminals[0].Net, p.Terminals[1].Net, p.DCR, p.Tol)
		case design.Fuse:
			add(p.Ref, p.Terminals[0].Net, p.Terminals[1].Net, 0, design.Tolerance{})
		case design.OutputTransformer:
			for _, sg := range p.OT.Segments() {
				add(p.Ref, sg.A, sg.B, sg.Ohms, wtol)
			}
		case design.PowerTransformer:
			pt := p.PT
			if pt.PrimaryEnds[0] != "" && pt.PrimaryEnds[1] != "" {
				if pt.PrimaryDCR == 0 {
					n.notes = append(n.notes, fmt.Sprintf("%s primary: no dcr given; taken as 0 Ω", p.Ref))
				}
				add(p.Ref, pt.PrimaryEnds[0], pt.PrimaryEnds[1], pt.PrimaryDCR, wtol)
			}
			for _, w := range pt.Windings {
				if w.DCR == 0 {
					n.notes = append(n.notes, fmt.Sprintf("%s %s: no dcr given; taken as 0 Ω", p.Ref, w.Name))
				}
				if w.Centre != "" {
					add(p.Ref, w.Centre, w.Ends[0], w.DCR/2, wtol)
					add(p.Ref, w.Centre, w.Ends[1], w.DCR/2, wtol)
				} else {
					add(p.Ref, w.Ends[0], w.Ends[1], w.DCR, wtol)
				}
			}
		}
	}
	return n
}

// reach returns the nets joined to from by resistive paths that do not
// pass through stop (stop itself is included when reached).
func (n *network) reach(from, stop string) map[string]bool {
	seen := map[string]bool{from: true}
	queue := []string{from}
	for len(queue) > 0 {
		x := queue[0]
		queue = queue[1:]
		if x == stop && x != from {
			continue
		}
		for _, ei := range n.adj[x] {
			e := n.edges[ei]
			y := e.a
			if y == x {
				y = e.b
			}
			if !seen[y] {
				seen[y] = true
				queue = append(queue, y)
			}
		}
	}
	return seen
}

// scale picks the ohms of an edge for a reading: nominal (0), every
// element at its low tolerance (-1) or at its high tolerance (+1).
func (e edge) scaled(corner int) float64 {
	switch corner {
	case -1:
		return e.ohms * (1 + e.tol.Lo)
	case 1:
		return e.ohms * (1 + e.tol.Hi)
	}
	return e.ohms
}

// resistance is the reading of an ideal ohmmeter from net `from` to net
// `to`: 1 A injected into from, returned at to, by modified nodal
// analysis on the nets joined to from (expect/mna). open is true when no
// resistive path joins them (the reading is then +Inf).
//
// With corner −1 or +1 every element sits at its low or high tolerance:
// by Rayleigh's monotonicity law the resistance between two points of a
// network never decreases when any element's resistance increases
// (P. G. Doyle and J. L. Snell, "Random Walks and Electric Networks",
// 1984, §1.4), so these corners bound the reading exactly.
func (n *network) resistance(from, to string, corner int) (ohms float64, open bool, err error) {
	if from == to {
		return 0, false, nil
	}
	comp := n.reach(from, "")
	if !comp[to] {
		return math.Inf(1), true, nil
	}
	c := mna.New()
	c.SetGround(to)
	names := make([]string, 0, len(comp))
	for net := range comp {
		names = append(names, net)
	}
	sort.Strings(names) // deterministic node order
	for _, net := range names {
		c.Node(net)
	}
	seenEdge := map[int]bool{}
	for _, net := range names {
		for _, ei := range n.adj[net] {
			if seenEdge[ei] {
				continue
			}
			seenEdge[ei] = true
			e := n.edges[ei]
			c.AddResistor(c.Node(e.a), c.Node(e.b), e.scaled(corner))
		}
	}
	c.AddISource(0, c.Node(from), 1)
	opt := mna.DefaultOptions()
	opt.Gmin = 0
	var sol mna.Solution
	if err := c.Solve(opt, nil, &sol); err != nil {
		return 0, false, fmt.Errorf("cold resistance %s to %s: %w", from, to, err)
	}
	return sol.V[c.Node(from)], false, nil
}

// resistances is resistance for several nets `from` to one net `to`: one
// circuit on the nets joined to `to`, built and factored once
// (mna.Circuit.DrivingPoint), one pair of triangular solves per reading.
// The readings equal resistance's: a net not joined to `to` reads open,
// and the nets outside to's component carry no current either way.
func (n *network) resistances(froms []string, to string, corner int) (ohms []float64, open []bool, err error) {
	ohms = make([]float64, len(froms))
	open = make([]bool, len(froms))
	comp := n.reach(to, "")
	c := mna.New()
	c.SetGround(to)
	names := make([]string, 0, len(comp))
	for net := range comp {
		names = append(names, net)
	}
	sort.Strings(names)
	for _, net := range names {
		c.Node(net)
	}
	seenEdge := map[int]bool{}
	for _, net := range names {
		for _, ei := range n.adj[net] {
			if seenEdge[ei] {
				continue
			}
			seenEdge[ei] = true
			e := n.edges[ei]
			c.AddResistor(c.Node(e.a), c.Node(e.b), e.scaled(corner))
		}
	}
	var nodes []int
	var at []int
	for i, from := range froms {
		switch {
		case from == to:
			continue
		case !comp[from]:
			ohms[i], open[i] = math.Inf(1), true
			continue
		}
		nodes = append(nodes, c.Node(from))
		at = append(at, i)
	}
	if len(nodes) == 0 {
		return ohms, open, nil
	}
	rs, err := c.DrivingPoint(nodes)
	if err != nil {
		return nil, nil, fmt.Errorf("cold resistance to %s: %w", to, err)
	}
	for k, i := range at {
		ohms[i] = rs[k]
	}
	return ohms, open, nil
}
