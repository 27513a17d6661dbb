package mna

// FloatingNets returns, in node order, the names of the nodes with no DC
// path to ground: a graph check in which resistors (other than open ones),
// voltage sources and devices (all terminals joined) connect nodes and
// current sources do not. Such nodes are held only by Gmin, so their
// voltages mean little; Solve still returns them.
func (c *Circuit) FloatingNets() []string {
	parent := make([]int, len(c.names))
	for i := range parent {
		parent[i] = i
	}
	var find func(int) int
	find = func(i int) int {
		for parent[i] != i {
			parent[i] = parent[parent[i]]
			i = parent[i]
		}
		return i
	}
	union := func(a, b int) {
		ra, rb := find(a), find(b)
		if ra == rb {
			return
		}
		if ra < rb { // keep the smaller index as root so ground stays 0
			parent[rb] = ra
		} else {
			parent[ra] = rb
		}
	}
	for _, r := range c.res {
		if r.g != 0 {
			union(r.a, r.b)
		}
	}
	for _, v := range c.vs {
		union(v.plus, v.minus)
	}
	for _, d := range c.devs {
		if len(d.term) == 0 {
			continue
		}
		for _, n := range d.term[1:] {
			union(d.term[0], n)
		}
	}
	var out []string
	for i := 1; i < len(c.names); i++ {
		if find(i) != find(0) {
			out = append(out, c.names[i])
		}
	}
	return out
}
