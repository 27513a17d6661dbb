package design

import (
	"container/heap"
	"math"
	"sort"
	"strings"

	"pinwalk/expect/units"
	"pinwalk/expect/valves"
)

// Wiring checks a technician would make with the schematic in one hand:
// a valve with its plate and cathode swapped, a valve rectifier whose
// heater winding is not on its cathode, and a bias pot that can take an
// output valve's grid to 0 V. They look at the wiring only; checks that
// need the operating point (a grid positive of its cathode, a screen over
// its rated volts) are rating checks in expect/amp.

// rectifierHeaterPins settles the socket pins of a valve rectifier whose
// cathode is joined inside to a heater pin (5AR4, 5V4G: pin 8; directly
// heated 5U4GB, 5Y3GT: both filament pins). The cathode net must be one of
// the heater nets, and the shared pin carries it. It runs before the
// valve's terminals are listed.
func (l *loader) rectifierHeaterPins(p *Part, vp *ValvePart) {
	vt := vp.Type
	if vt.Kind != valves.Rectifier || vp.HeaterNets[0] == "" {
		return
	}
	cat := vp.Sections[""][valves.Cathode]
	if cat == "" {
		return
	}
	heaterPins := vt.PinsOf("", valves.Heater)
	shared := 0
	for _, hp := range heaterPins {
		for _, cp := range vt.PinsOf("", valves.Cathode) {
			if hp == cp && shared == 0 {
				shared = hp
			}
		}
	}
	if shared == 0 || vt.Heater.DirectlyHeated || len(heaterPins) != 2 {
		return // separate cathode pin (checkRectifierHeaters) or a filament (the loader's own check)
	}
	h := vp.HeaterNets
	if cat != h[0] && cat != h[1] {
		l.add(p.FieldPos("heater"), Error, p.Ref+".heater",
			"write heater: ["+cat+", F2]: one end of the rectifier's heater winding is the B+ net",
			"a %s's cathode is joined inside to heater pin %d, so its heater winding sits at B+: one heater net must be the cathode net %s, not %s, %s",
			vt.Name, shared, cat, h[0], h[1])
		return
	}
	other := h[0]
	if other == cat {
		other = h[1]
	}
	for _, hp := range heaterPins {
		if hp == shared {
			vp.PinNets[hp] = cat
		} else {
			vp.PinNets[hp] = other
		}
	}
}

// checkRectifierHeaters: an indirectly heated rectifier with a cathode pin
// of its own (EZ81, 6X4, 35W4) still has its cathode at B+. Its heater is
// normally tied to the cathode or fed from a winding of its own; on a
// grounded heater winding, or a floating one, the heater–cathode
// insulation sees B+ (common practice; the limit is the data sheet's).
func (l *loader) checkRectifierHeaters(d *Design) {
	var fromGround map[string]float64
	inString := map[string]bool{}
	if hs, _ := d.SeriesHeaters(); hs != nil {
		for _, ref := range hs.Valves {
			inString[ref] = true
		}
	}
	for _, p := range d.Valves() {
		vp := p.Valve
		vt := vp.Type
		if vt.Kind != valves.Rectifier || vt.Heater.DirectlyHeated || vp.HeaterNets[0] == "" {
			continue
		}
		if inString[p.Ref] {
			// A series-string rectifier (35W4) is built for its heater to
			// sit in the string with its cathode at B+: its rating
			// covers it (the data sheet's).
			continue
		}
		cat := vp.Sections[""][valves.Cathode]
		if cat == "" || cat == vp.HeaterNets[0] || cat == vp.HeaterNets[1] {
			continue
		}
		if ct := windingCentre(d, vp.HeaterNets); ct != "" && ct == cat {
			continue
		}
		if fromGround == nil {
			fromGround = distances(resistiveGraph(d), []string{d.Ground}, nil)
		}
		limit := "its data sheet's heater–cathode rating"
		if vt.Limits.HeaterCathodeVolts > 0 {
			limit = "its " + units.Format(vt.Limits.HeaterCathodeVolts, units.Volts) + " heater–cathode rating"
		}
		h := vp.HeaterNets
		ct := windingCentre(d, h)
		grounded := ct == d.Ground || hasNet(fromGround, h[0]) || hasNet(fromGround, h[1]) || (ct != "" && hasNet(fromGround, ct))
		switch {
		case grounded:
			l.add(p.FieldPos("heater"), Warning, p.Ref+".heater",
				"feed the rectifier's heater from a winding of its own with one end on "+cat+" (or check B+ against the rating)",
				"the %s's heater (%s, %s) is on a winding tied to ground while its cathode %s is at B+: the heater–cathode insulation sees the whole B+, against %s",
				vt.Name, h[0], h[1], cat, limit)
		default:
			l.add(p.FieldPos("heater"), Warning, p.Ref+".heater",
				"tie one end of the rectifier's heater winding to "+cat,
				"the %s's heater winding (%s, %s) is not tied to its cathode net %s: the heater–cathode volts are undefined and can reach B+, against %s",
				vt.Name, h[0], h[1], cat, limit)
		}
	}
}

// windingCentre returns the centre-tap net of the winding whose two ends
// are the given nets, or "".
func windingCentre(d *Design, ends [2]string) string {
	for _, pt := range d.PartsOfKind(PowerTransformer) {
		for _, w := range pt.PT.Windings {
			if (w.Ends[0] == ends[0] && w.Ends[1] == ends[1]) || (w.Ends[0] == ends[1] && w.Ends[1] == ends[0]) {
				return w.Centre
			}
		}
	}
	return ""
}

// resistiveEdge is one DC path between two nets through a part with a
// known resistance.
type resistiveEdge struct {
	to   string
	ohms float64
}

// resistiveGraph lists, for each net, the nets it reaches through one
// resistor, pot, choke, fuse or output-transformer primary, with the
// resistance of that path. Valves, capacitors, rectifiers, supplies and
// power-transformer windings are not in it.
func resistiveGraph(d *Design) map[string][]resistiveEdge {
	g := map[string][]resistiveEdge{}
	link := func(a, b string, ohms float64) {
		if a == "" || b == "" || a == b {
			return
		}
		g[a] = append(g[a], resistiveEdge{b, ohms})
		g[b] = append(g[b], resistiveEdge{a, ohms})
	}
	for _, p := range d.Parts {
		switch p.Kind {
		case Resistor:
			if len(p.Terminals) == 2 {
				link(p.Terminals[0].Net, p.Terminals[1].Net, p.Value)
			}
		case Choke:
			if len(p.Terminals) == 2 {
				link(p.Terminals[0].Net, p.Terminals[1].Net, p.DCR)
			}
		case Fuse:
			if len(p.Terminals) == 2 {
				link(p.Terminals[0].Net, p.Terminals[1].Net, 0)
			}
		case Pot:
			a, _ := p.Net("a")
			b, _ := p.Net("b")
			w, _ := p.Net("wiper")
			link(a, b, p.Value)
			link(a, w, p.Setting*p.Value)
			link(w, b, (1-p.Setting)*p.Value)
		case OutputTransformer:
			ot := p.OT
			if ot.Centre == "" {
				link(ot.Ends[0], ot.Ends[1], ot.DCR[0])
			} else {
				link(ot.Centre, ot.Ends[0], ot.DCR[0])
				link(ot.Centre, ot.Ends[1], ot.DCR[1])
			}
		}
	}
	return g
}

// supplyRoots are the nets where positive HT enters the circuit: the
// output of every rectifier and of a positive dc-supply.
func supplyRoots(d *Design) []string {
	var out []string
	for _, p := range d.Parts {
		switch {
		case p.Kind == Rectifier && p.Rect.Bridge:
			out = append(out, p.Rect.Plus)
		case p.Kind == Rectifier:
			if n, ok := p.Net("cathode"); ok {
				out = append(out, n)
			}
		case p.Kind == Valve && p.Valve.Type.Kind == valves.Rectifier:
			out = append(out, p.Valve.Sections[""][valves.Cathode])
		case p.Kind == DCSupply && p.Value > 0:
			if n, ok := p.Net("out"); ok {
				out = append(out, n)
			}
		}
	}
	return out
}

// distances returns the least resistance from any of the start nets to
// every net it reaches in g, never passing through a blocked net.
func distances(g map[string][]resistiveEdge, start []string, blocked map[string]bool) map[string]float64 {
	dist := map[string]float64{}
	q := &netQueue{}
	for _, s := range start {
		if s != "" && !blocked[s] {
			dist[s] = 0
			heap.Push(q, netDist{s, 0})
		}
	}
	for q.Len() > 0 {
		cur := heap.Pop(q).(netDist)
		if cur.ohms > dist[cur.net] {
			continue
		}
		for _, e := range g[cur.net] {
			if blocked[e.to] {
				continue
			}
			nd := cur.ohms + e.ohms
			if old, ok := dist[e.to]; !ok || nd < old {
				dist[e.to] = nd
				heap.Push(q, netDist{e.to, nd})
			}
		}
	}
	return dist
}

type netDist struct {
	net  string
	ohms float64
}

type netQueue []netDist

func (q netQueue) Len() int           { return len(q) }
func (q netQueue) Less(i, j int) bool { return q[i].ohms < q[j].ohms }
func (q netQueue) Swap(i, j int)      { q[i], q[j] = q[j], q[i] }
func (q *netQueue) Push(x any)        { *q = append(*q, x.(netDist)) }
func (q *netQueue) Pop() any {
	old := *q
	x := old[len(old)-1]
	*q = old[:len(old)-1]
	return x
}

// checkSwappedElectrodes finds a valve wired upside down: its cathode
// nearer (in DC resistance, not through ground) to the HT than to ground,
// and its plate nearer to ground than to the HT. In every amplifying
// stage the plate hangs from the supply through its load and the cathode
// returns to ground (or a negative supply) through its resistor; stacked
// valves (SRPP, cascode) have no resistive path from the upper cathode to
// either, and are left alone.
func (l *loader) checkSwappedElectrodes(d *Design) {
	roots := supplyRoots(d)
	if len(roots) == 0 {
		return
	}
	g := resistiveGraph(d)
	isRoot := map[string]bool{}
	for _, r := range roots {
		isRoot[r] = true
	}
	fromHT := distances(g, roots, map[string]bool{d.Ground: true})
	fromGround := distances(g, []string{d.Ground}, isRoot)
	near := func(m map[string]float64, net string) float64 {
		if v, ok := m[net]; ok {
			return v
		}
		return math.Inf(1)
	}
	for _, p := range d.Valves() {
		vp := p.Valve
		if vp.Type.Kind == valves.Rectifier {
			continue
		}
		secs := make([]string, 0, len(vp.Sections))
		for s := range vp.Sections {
			if !vp.Unused[s] {
				secs = append(secs, s)
			}
		}
		sort.Strings(secs)
		for _, s := range secs {
			m := vp.Sections[s]
			a, k := m[valves.Plate], m[valves.Cathode]
			if a == "" || k == "" || a == k {
				continue
			}
			kHT, kG := near(fromHT, k), near(fromGround, k)
			aHT, aG := near(fromHT, a), near(fromGround, a)
			if math.IsInf(kHT, 1) || math.IsInf(aG, 1) || kHT >= kG || aG >= aHT {
				continue
			}
			name := p.Ref
			if s != "" {
				name += "." + s
			}
			l.add(p.FieldPos(join(s, valves.Cathode)), Error, join(join(p.Ref, s), valves.Cathode),
				"swap the plate and cathode nets of "+name+" (check the pin numbers against the base diagram, seen from below)",
				"%s looks wired upside down: its cathode net %s reaches the HT through %s and its plate net %s reaches ground through %s; a plate is fed from the HT through its load and a cathode returns to ground",
				name, k, units.Format(kHT, units.Ohms), a, units.Format(aG, units.Ohms))
		}
	}
}

// outputValveGrids maps the grid net of every output valve (a valve whose
// plate is on an output-transformer primary) to the valve's name.
func outputValveGrids(d *Design) map[string]string {
	primary := map[string]bool{}
	for _, p := range d.PartsOfKind(OutputTransformer) {
		primary[p.OT.Ends[0]] = true
		primary[p.OT.Ends[1]] = true
	}
	out := map[string]string{}
	for _, p := range d.Valves() {
		vp := p.Valve
		if vp.Type.Kind == valves.Rectifier {
			continue
		}
		for s, m := range vp.Sections {
			if vp.Unused[s] || !primary[m[valves.Plate]] || m[valves.Grid] == "" {
				continue
			}
			name := p.Ref
			if s != "" {
				name += "." + s
			}
			if prev, ok := out[m[valves.Grid]]; ok {
				name = prev + ", " + name
			}
			out[m[valves.Grid]] = name
		}
	}
	return out
}

// checkBiasPots finds a bias pot that, turned to one end, gives an output
// valve's grid (nearly) 0 V of bias: an output valve at 0 V bias draws far
// more than its rated plate dissipation and red-plates. Common practice is
// a limiting resistor between the pot's end and ground (or the bias
// supply) so that the control's whole travel stays within a safe range.
// The bias network (the resistive nets around each negative supply, not
// through ground) is solved with the pot at each end; grids draw no
// current.
func (l *loader) checkBiasPots(d *Design) {
	grids := outputValveGrids(d)
	if len(grids) == 0 {
		return
	}
	g := resistiveGraph(d)
	for _, sup := range d.Parts {
		if (sup.Kind != BiasSupply && sup.Kind != DCSupply) || sup.Value >= 0 {
			continue
		}
		out, _ := sup.Net("out")
		ref, _ := sup.Net("ref")
		if out == "" || ref != d.Ground {
			continue
		}
		net := distances(g, []string{out}, map[string]bool{d.Ground: true})
		if !biasNetworkOnly(d, net) {
			continue
		}
		var pots []*Part
		for _, p := range d.PartsOfKind(Pot) {
			for _, t := range p.Terminals {
				if hasNet(net, t.Net) {
					pots = append(pots, p)
					break
				}
			}
		}
		for _, pot := range pots {
			for _, end := range []float64{0, 1} {
				v := solveBias(d, net, sup, pot, end)
				if v == nil {
					continue
				}
				var hit []string
				worst := math.Inf(-1)
				for gn, name := range grids {
					if vg, ok := v[gn]; ok && vg > 0.1*sup.Value {
						hit = append(hit, name)
						worst = math.Max(worst, vg)
					}
				}
				if len(hit) == 0 {
					continue
				}
				sort.Strings(hit)
				endName := "a"
				if end == 1 {
					endName = "b"
				}
				endNet, _ := pot.Net(endName)
				if math.Abs(worst) < 0.05 {
					worst = 0
				}
				l.add(pot.FieldPos("ends"), Warning, pot.Ref+".ends",
					"fit a limiting resistor in series with that end of "+pot.Ref+" (between the pot and "+endNet+") so that no setting comes near 0 V bias (common practice)",
					"turned fully to its %s end (setting %.0f%%), %s gives the grid of %s %s of bias: an output valve at 0 V bias runs far over its plate rating and red-plates",
					endNet, 100*end, pot.Ref, strings.Join(hit, ", "), units.Format(worst, units.Volts))
			}
		}
	}
}

func hasNet(m map[string]float64, n string) bool { _, ok := m[n]; return ok }

// biasNetworkOnly reports whether the nets reached from a bias supply are
// a bias network alone: none of them is on the HT side (a rectifier, an
// output transformer, or a valve's plate, screen or cathode).
func biasNetworkOnly(d *Design, nets map[string]float64) bool {
	for n := range nets {
		for _, u := range d.Nets[n] {
			p := d.ByRef[u.Ref]
			if p == nil {
				continue
			}
			switch p.Kind {
			case Rectifier, OutputTransformer, PowerTransformer:
				return false
			case Valve:
				for _, m := range p.Valve.Sections {
					if m[valves.Plate] == n || m[valves.Screen] == n || m[valves.Cathode] == n {
						return false
					}
				}
			}
		}
	}
	return true
}

// solveBias solves the resistive bias network (nets, ground at 0 V, the
// supply as its volts behind its DCR) with the pot's wiper at one end
// (0: end a, 1: end b), and returns each net's volts, or nil when the
// network is singular.
func solveBias(d *Design, nets map[string]float64, sup *Part, pot *Part, end float64) map[string]float64 {
	idx := map[string]int{}
	var names []string
	for n := range nets {
		if n != d.Ground {
			names = append(names, n)
		}
	}
	sort.Strings(names)
	for i, n := range names {
		idx[n] = i
	}
	N := len(names)
	A := make([][]float64, N)
	for i := range A {
		A[i] = make([]float64, N+1)
	}
	stamp := func(a, b string, ohms float64) {
		gc := 1 / math.Max(ohms, 1e-3)
		ia, oka := idx[a]
		ib, okb := idx[b]
		if oka {
			A[ia][ia] += gc
		}
		if okb {
			A[ib][ib] += gc
		}
		if oka && okb {
			A[ia][ib] -= gc
			A[ib][ia] -= gc
		}
	}
	inNet := func(n string) bool { return n == d.Ground || hasNet(nets, n) }
	for _, p := range d.Parts {
		switch p.Kind {
		case Resistor, Choke, Fuse:
			if len(p.Terminals) != 2 || !inNet(p.Terminals[0].Net) || !inNet(p.Terminals[1].Net) {
				continue
			}
			r := p.Value
			if p.Kind == Choke {
				r = p.DCR
			} else if p.Kind == Fuse {
				r = 0
			}
			stamp(p.Terminals[0].Net, p.Terminals[1].Net, r)
		case Pot:
			a, _ := p.Net("a")
			b, _ := p.Net("b")
			w, _ := p.Net("wiper")
			s := p.Setting
			if p == pot {
				s = end
			}
			if inNet(a) && inNet(w) {
				stamp(a, w, s*p.Value)
			}
			if inNet(w) && inNet(b) {
				stamp(w, b, (1-s)*p.Value)
			}
		}
	}
	out, _ := sup.Net("out")
	rs := math.Max(sup.DCR, 1)
	io := idx[out]
	A[io][io] += 1 / rs
	A[io][N] += sup.Value / rs
	// Gaussian elimination with partial pivoting.
	for c := 0; c < N; c++ {
		piv := c
		for r := c + 1; r < N; r++ {
			if math.Abs(A[r][c]) > math.Abs(A[piv][c]) {
				piv = r
			}
		}
		if math.Abs(A[piv][c]) < 1e-15 {
			return nil
		}
		A[c], A[piv] = A[piv], A[c]
		for r := c + 1; r < N; r++ {
			f := A[r][c] / A[c][c]
			if f == 0 {
				continue
			}
			for k := c; k <= N; k++ {
				A[r][k] -= f * A[c][k]
			}
		}
	}
	v := make([]float64, N)
	for r := N - 1; r >= 0; r-- {
		s := A[r][N]
		for k := r + 1; k < N; k++ {
			s -= A[r][k] * v[k]
		}
		v[r] = s / A[r][r]
	}
	res := map[string]float64{d.Ground: 0}
	for i, n := range names {
		res[n] = v[i]
	}
	return res
}
