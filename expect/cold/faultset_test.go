package cold

import (
	"math"
	"testing"

	"pinwalk/expect/amp"
	"pinwalk/expect/design"
	"pinwalk/expect/faults"
	"pinwalk/internal/gen"
)

// TestFaultSetAgreesWithFullSolve: the low-rank update of the healthy
// resistance matrix (FaultSet) reads what a new factorisation of the
// faulted network reads (faultChecks), for every single fault of every
// demo, every template and a generated 4-channel amp, with and without
// tolerance corners: the same open readings, the same nominal and corner
// ohms within 1e-6 relative (or 1 µΩ).
func TestFaultSetAgreesWithFullSolve(t *testing.T) {
	type job struct {
		name string
		d    *design.Design
	}
	var jobs []job
	for _, name := range demos {
		d, _ := loadDemo(t, name)
		jobs = append(jobs, job{name, d})
	}
	for _, tp := range design.Templates() {
		d, probs := design.Parse(tp.Name+".yaml", tp.Text)
		if len(probs.Errors()) > 0 {
			t.Fatalf("%s: %v", tp.Name, probs.Errors())
		}
		jobs = append(jobs, job{tp.Name, d})
	}
	jobs = append(jobs, job{"generated 4 channels", gen.Design(4)})
	close := func(a, b float64) bool {
		if math.IsInf(a, 1) || math.IsInf(b, 1) {
			return a == b
		}
		return math.Abs(a-b) <= 1e-6*math.Max(math.Abs(a), math.Abs(b))+1e-6
	}
	total, updated, full := 0, 0, 0
	for _, j := range jobs {
		m, err := amp.Build(j.d)
		if err != nil {
			t.Fatalf("%s: %v", j.name, err)
		}
		base, err := Checks(j.d)
		if err != nil {
			t.Fatalf("%s: %v", j.name, err)
		}
		s := NewFaultSet(j.d, m, base)
		for _, f := range faults.All(m) {
			for _, corners := range []bool{false, true} {
				want, wch, werr := faultChecks(j.d, m, base, f, corners)
				got, gch, gerr := s.checks(f, corners)
				if (werr != nil) != (gerr != nil) {
					t.Fatalf("%s %s: errors differ: %v / %v", j.name, f, werr, gerr)
				}
				if werr != nil {
					continue
				}
				if wch != gch || len(want) != len(got) {
					t.Fatalf("%s %s: changed %v/%v, %d/%d readings", j.name, f, wch, gch, len(want), len(got))
				}
				for i := range want {
					w, g := want[i], got[i]
					if w.Open != g.Open || !close(w.Ohms, g.Ohms) || !close(w.Tol[0], g.Tol[0]) || !close(w.Tol[1], g.Tol[1]) {
						t.Errorf("%s %s corners=%v %s: full solve %g [%g %g] open %v, update %g [%g %g] open %v",
							j.name, f, corners, w.ID, w.Ohms, w.Tol[0], w.Tol[1], w.Open, g.Ohms, g.Tol[0], g.Tol[1], g.Open)
					}
				}
			}
			total++
		}
		u, f := s.Stats()
		updated += int(u)
		full += int(f)
	}
	t.Logf("%d faults compared; reading groups by update %d, in full %d", total, updated, full)
}

// faultChecks is the full solve FaultSet is checked against: the faulted
// network built and every group of readings factored anew.
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
