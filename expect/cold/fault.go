package cold

import (
	"math"
	"strings"

	"pinwalk/expect/amp"
	"pinwalk/expect/design"
	"pinwalk/expect/faults"
	"pinwalk/expect/valves"
)

// shortOhms stands for a short in the cold network (a solder bridge or a
// shorted capacitor): small but finite, so the nodal matrix stays regular.
const shortOhms = 1e-3

// FaultChecks returns the cold checks of a design with one fault in place:
// the readings of base (Checks(d), same order, IDs, leads and notes) with
// Ohms, Tol and Open recomputed on the faulted network. changed is false
// when the fault leaves the cold network as it is (a valve, a rectifier, a
// supply gone dead, an open capacitor): base is then returned unchanged.
// m is d compiled by amp.Build (for the HT winding and heater windings).
//
// What a fault does cold: a resistor open loses its element, short is
// 1 mΩ, high multiplies it by faults.HighFactor; a pot with its wiper
// open loses both halves; a shorted capacitor is faults.ShortedCapOhms
// across it with corners faults.ShortedCapLoOhms–ShortedCapHiOhms, a leaky
// one its leakage resistance (faults.LeakyElectrolyticOhms or
// faults.LeakyFilmOhms); a choke open loses its winding; an output
// transformer "OT1.a"/"OT1.b" loses one half (both segments of a half
// with a screen tap), "OT1.sec" its wired secondary, a push-pull "OT1" open (the
// centre-tap lead) parts the centre tap from both halves, a single-ended
// one loses its primary; a power transformer open loses the HT winding,
// heater-open the heater windings feeding amplifying valves; a fuse open
// loses its 0 Ω link; a silicon rectifier with a diode shorted joins that
// diode's ends (1 mΩ). The tolerance corners stay exact bounds (Rayleigh's
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
	orig := buildNetwork(d)
	if !alterNetwork(n, m, f) {
		return base, false, nil
	}
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

// alterNetwork puts a fault into the cold network's edges and reports
// whether anything changed (adjacency is left for the caller to rebuild).
func alterNetwork(n *network, m *amp.Model, f faults.Fault) bool {
	d := n.d
	ref, half := f.Ref, ""
	if d.ByRef[ref] == nil {
		for _, h := range []string{"a", "b", faults.SecondaryWinding} {
			if base, ok := strings.CutSuffix(ref, "."+h); ok && d.ByRef[base] != nil {
				ref, half = base, h
			}
		}
	}
	p := d.ByRef[ref]
	if p == nil {
		return false
	}
	var keep []edge
	changed := false
	drop := func(match func(e edge) bool) {
		keep = keep[:0]
		for _, e := range n.edges {
			if match(e) {
				changed = true
				continue
			}
			keep = append(keep, e)
		}
		n.edges = append([]edge(nil), keep...)
	}
	mine := func(e edge) bool { return e.ref == p.Ref }
	between := func(a, b string) func(e edge) bool {
		return func(e edge) bool {
			return e.ref == p.Ref && ((e.a == a && e.b == b) || (e.a == b && e.b == a))
		}
	}
	switch p.Kind {
	case design.Resistor:
		switch f.Mode {
		case faults.Open:
			drop(mine)
		case faults.Short, faults.High:
			for i := range n.edges {
				if mine(n.edges[i]) {
					changed = true
					if f.Mode == faults.Short {
						n.edges[i].ohms, n.edges[i].tol = shortOhms, design.Tolerance{}
					} else {
						n.edges[i].ohms *= faults.HighFactor
					}
				}
			}
		}
	case design.Pot, design.Choke, design.Fuse:
		if f.Mode == faults.Open {
			drop(mine)
		}
	case design.Capacitor:
		a, b := p.Terminals[0].Net, p.Terminals[1].Net
		switch f.Mode {
		case faults.Short:
			// A shorted capacitor is not a clean 0 Ω: its tolerance
			// corners span what an ohmmeter finds on one.
			r := faults.ShortedCapOhms
			n.edges = append(n.edges, edge{a: a, b: b, ohms: r, ref: p.Ref,
				tol: design.Tolerance{Lo: faults.ShortedCapLoOhms/r - 1, Hi: faults.ShortedCapHiOhms/r - 1}})
			changed = true
		case faults.Leaky:
			r := faults.LeakyFilmOhms
			if p.Material == "electrolytic" {
				r = faults.LeakyElectrolyticOhms
			}
			n.edges = append(n.edges, edge{a: a, b: b, ohms: r, ref: p.Ref})
			changed = true
		}
	case design.Rectifier:
		// One diode shorted: the first diode's ends joined (a centre-tap
		// or half-wave rectifier's first anode to its cathode, a bridge's
		// first AC end to plus). An ohmmeter on a healthy diode is not in
		// this network (its reading depends on the meter's polarity and
		// volts), so only the short shows.
		if f.Mode == faults.Short && p.Rect != nil {
			a := p.Rect.AC[0]
			if !p.Rect.Bridge && len(p.Rect.Anodes) > 0 {
				a = p.Rect.Anodes[0]
			}
			if a != "" && p.Rect.Plus != "" {
				n.edges = append(n.edges, edge{a: a, b: p.Rect.Plus, ohms: shortOhms, ref: p.Ref})
				changed = true
			}
		}
	case design.OutputTransformer:
		ot := p.OT
		switch {
		case half == "a" || half == "b":
			drop(otSegments(p, design.HalfRoles(half)...))
		case half == faults.SecondaryWinding:
			drop(otSegments(p, "secondary"))
		case ot.Centre == "":
			drop(otSegments(p, "primary"))
		default:
			// The centre-tap lead open: both halves stay joined end to
			// end, parted from the centre-tap net.
			lead := p.Ref + "~centre-tap"
			for i := range n.edges {
				e := &n.edges[i]
				if e.ref != p.Ref {
					continue
				}
				if e.a == ot.Centre {
					e.a, changed = lead, true
				} else if e.b == ot.Centre {
					e.b, changed = lead, true
				}
			}
		}
	case design.PowerTransformer:
		var ws []*design.Winding
		switch f.Mode {
		case faults.Open:
			if m.HT != nil && m.HT.Winding != nil {
				ws = append(ws, m.HT.Winding)
			}
		case faults.HeaterOpen:
			seen := map[*design.Winding]bool{}
			for _, h := range m.Heaters {
				if h.Transformer == p.PT && h.Winding != nil && !seen[h.Winding] && amplifying(d, h.Ref) {
					seen[h.Winding] = true
					ws = append(ws, h.Winding)
				}
			}
		}
		for _, w := range ws {
			if w.Centre != "" {
				drop(between(w.Centre, w.Ends[0]))
				drop(between(w.Centre, w.Ends[1]))
			} else {
				drop(between(w.Ends[0], w.Ends[1]))
			}
		}
	}
	return changed
}

// amplifying reports whether a valve reference is an amplifying valve
// (not a rectifier).
func amplifying(d *design.Design, ref string) bool {
	p := d.ByRef[ref]
	return p != nil && p.Valve != nil && p.Valve.Type.Kind != valves.Rectifier
}
