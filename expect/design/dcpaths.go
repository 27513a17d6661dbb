package design

import "pinwalk/expect/valves"

// valvePaths answers whether a net reaches the chassis's DC group when
// the plate–cathode paths of conducting valve sections count as DC paths
// too. A stacked stage (SRPP, cascode, mu-follower) sets the lower
// section's plate and the upper section's cathode and grid through the
// valves themselves: no resistor alone takes those nets to chassis or
// B+. An electrode's own section is left out of its own path, so a
// cathode with no resistor, or a plate with no load, is still found.
type valvePaths struct {
	base  map[string]string // net → representative of its passive DC group
	edges []valveEdge
}

type valveEdge struct {
	ref, sec    string
	plate, cath string // passive group representatives
}

func newValvePaths(d *Design, base map[string]string) *valvePaths {
	vp := &valvePaths{base: base}
	for _, p := range d.Valves() {
		if p.Valve.Type.Kind == valves.Rectifier {
			continue
		}
		for s, m := range p.Valve.Sections {
			if p.Valve.Unused[s] {
				continue
			}
			a, k := m[valves.Plate], m[valves.Cathode]
			if a == "" || k == "" || base[a] == base[k] {
				continue
			}
			vp.edges = append(vp.edges, valveEdge{ref: p.Ref, sec: s, plate: base[a], cath: base[k]})
		}
	}
	return vp
}

// reaches reports whether net's group joins target's group through the
// passive DC paths and the plate–cathode paths of every valve section but
// (ref, sec).
func (vp *valvePaths) reaches(net, target, ref, sec string) bool {
	from, to := vp.base[net], vp.base[target]
	if from == to {
		return true
	}
	seen := map[string]bool{from: true}
	queue := []string{from}
	for len(queue) > 0 {
		g := queue[0]
		queue = queue[1:]
		for _, e := range vp.edges {
			if e.ref == ref && e.sec == sec {
				continue
			}
			var next string
			switch g {
			case e.plate:
				next = e.cath
			case e.cath:
				next = e.plate
			default:
				continue
			}
			if next == to {
				return true
			}
			if !seen[next] {
				seen[next] = true
				queue = append(queue, next)
			}
		}
	}
	return false
}
