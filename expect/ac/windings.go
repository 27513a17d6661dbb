package ac

import (
	"math"

	"pinwalk/expect/amp"
	"pinwalk/expect/design"
)

// Screen taps and wired secondaries of output transformers.
//
// A screen (ultralinear) tap on a push-pull half is a point of the ideal
// primary: V(tap) = V(c) + t·(V(x) − V(c)), t the tap's share of the
// half's turns from the centre tap, with the tap's current taken from the
// half's ends in the same proportion (an ideal autotransformer, lossless:
// the constraint and its transpose). The tap reaches its net through the
// centre-to-tap segment's DCR; the plate path keeps the whole half's DCR
// (the inner segment's drop from the plate current is not coupled into
// the tap, a small error next to the reflected load).
//
// A wired secondary (secondary: {hot: SPK}) is an ideal winding of the
// turns ratio √(Load/Impedance): V(s) − V(cold) = ratio·(V(x0) − V(x1)),
// x0 and x1 the ideal primary's ends (x0 on the side of the first primary
// end), behind the secondary's DCR to the hot net, with the rated load
// from hot to cold. The rated impedance is then not also put across the
// primary: the load on the secondary reflects into it. A feedback
// resistor from the hot net to a cathode is an ordinary resistor.

// windElem is one ideal-winding constraint: V(out) = Σ coef·V(node), with
// its current unknown j.
type windElem struct {
	ref   string
	out   int
	nodes []int
	coefs []float64
	j     int
}

// windRes is a resistance stamped with the windings: a tap's or a
// secondary's DCR (a slot) or the rated load (ohms, slot −1).
type windRes struct {
	ref  string
	a, b int
	slot int
	ohms float64
}

// speakerNets are a wired secondary's hot and cold nodes.
type speakerNets struct {
	wired     bool
	hot, cold int
}

// otWindings adds the screen taps and the wired secondary of output
// transformer p, whose ideal primary runs from prim[0] to prim[1] with
// centre c (−1 single-ended), and returns the secondary's nodes.
func (an *Analyzer) otWindings(p *design.Part, prim [2]int, c int, ratio float64, idx func(string) int, internal func() int) speakerNets {
	ot := p.OT
	m := an.m
	slotOf := func(role string) int {
		for _, s := range m.SlotsOf(p.Ref) {
			if m.Slots[s].Role == role {
				return s
			}
		}
		return -1
	}
	if ot.Taps[0] != "" {
		t := ot.TapFrac
		for i, h := range []string{"a", "b"} {
			y := internal()
			an.winds = append(an.winds, windElem{ref: p.Ref, out: y, nodes: []int{c, prim[i]}, coefs: []float64{1 - t, t}})
			an.windRes = append(an.windRes, windRes{ref: p.Ref, a: y, b: idx(ot.Taps[i]), slot: slotOf("half-" + h)})
		}
	}
	if ot.SecHot == "" || ratio == 0 {
		return speakerNets{}
	}
	s := internal()
	hot, cold := idx(ot.SecHot), idx(ot.SecCold)
	an.winds = append(an.winds, windElem{ref: p.Ref, out: s, nodes: []int{cold, prim[0], prim[1]}, coefs: []float64{1, ratio, -ratio}})
	an.windRes = append(an.windRes,
		windRes{ref: p.Ref, a: s, b: hot, slot: slotOf("secondary")},
		windRes{ref: p.Ref, a: hot, b: cold, slot: -1, ohms: ot.Load})
	return speakerNets{wired: true, hot: hot, cold: cold}
}

// slotOhms is a slot's resistance, 0 for slot −1.
func slotOhms(v *amp.Values, i int) float64 {
	if i < 0 {
		return 0
	}
	return v.Slot[i]
}

// stampWindings adds the winding constraints and resistances.
func (an *Analyzer) stampWindings(slots []float64, add func(i, j int, y complex128), open map[string]bool) {
	n := an.n
	a := an.a
	for _, w := range an.winds {
		j := w.j
		if open[w.ref] {
			a[j*n+j] = 1 // no winding current
			continue
		}
		a[w.out*n+j] += 1
		a[j*n+w.out] += 1
		for k, node := range w.nodes {
			if node < 0 {
				continue
			}
			a[node*n+j] -= complex(w.coefs[k], 0)
			a[j*n+node] -= complex(w.coefs[k], 0)
		}
	}
	for _, r := range an.windRes {
		if open[r.ref] {
			continue
		}
		ohms := r.ohms
		if r.slot >= 0 {
			ohms = slots[r.slot]
		}
		if math.IsInf(ohms, 1) || math.IsNaN(ohms) {
			continue
		}
		add(r.a, r.b, complex(1/max(ohms, minOhms), 0))
	}
}
