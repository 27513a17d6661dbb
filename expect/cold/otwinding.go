package cold

import (
	"slices"

	"pinwalk/expect/design"
)

// otSegments matches the cold-network edges of an output transformer's
// winding segments with the given roles (design.WindingSegment): a half
// split at its screen tap is two edges, and the secondary is not part of
// the primary.
func otSegments(p *design.Part, roles ...string) func(e edge) bool {
	var want [][2]string
	for _, sg := range p.OT.Segments() {
		if slices.Contains(roles, sg.Role) {
			want = append(want, [2]string{sg.A, sg.B})
		}
	}
	return func(e edge) bool {
		if e.ref != p.Ref {
			return false
		}
		for _, w := range want {
			if (e.a == w[0] && e.b == w[1]) || (e.a == w[1] && e.b == w[0]) {
				return true
			}
		}
		return false
	}
}
