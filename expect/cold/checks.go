package cold

import (
	"fmt"
	"math"
	"slices"
	"sort"
	"strings"

	"gonum.org/v1/gonum/mat"

	"pinwalk/expect/amp"
	"pinwalk/expect/design"
	"pinwalk/expect/units"
	"pinwalk/expect/valves"
)

// Check is one cold resistance reading: the amplifier unplugged and
// discharged, valves out of their sockets, meter on its resistance range.
type Check struct {
	// ID is the net name for a reading to chassis, or the winding's name
	// ("OT1 primary", "OT1 half a", "OT1 tap a", "OT1 tap a to plate",
	// "OT1 secondary", "L1", "T1 HT", "T1 HT half a",
	// "T1 primary", "J1 live–neutral").
	ID       string
	From, To string  // the meter's positive and common leads
	Ohms     float64 // nominal reading; +Inf when Open
	Open     bool    // no DC path: the meter reads open (overload)
	Note     string  // what to watch for: a climbing reading, diode polarity…
	// Tol is the low and high reading with every element at its low or
	// high tolerance (exact bounds by Rayleigh's monotonicity law).
	Tol [2]float64
	// Kind is "b+" (HT filter or bench supply nets), "bias" (a bias
	// supply's output), "plate", "screen", "grid", "cathode", "net" or
	// "winding".
	Kind string
}

// climbSeconds is the settling time (to within 1 %) above which a
// reading's climb is worth a note.
const climbSeconds = 0.5

// Checks returns the cold resistance expectations of a design: first every
// B+ net (HT filter nets from the rectifier outwards, then supply outputs),
// then each valve's plate, screen, grid and cathode nets, then every other
// net carrying DC, each to chassis; then the windings: output transformer
// (whole primary, each half, each screen tap from the centre and to its
// plate, a wired secondary), chokes, power transformer secondaries
// (whole and each half) and primary, and the mains inlet live to neutral.
// Readings are in-circuit: every parallel path of the cold network counts.
func Checks(d *design.Design) ([]Check, error) {
	n := buildNetwork(d)
	var out []Check
	done := map[string]bool{d.Ground: true}
	addNet := func(net, kind string) error {
		if done[net] {
			return nil
		}
		done[net] = true
		c, err := n.check(net, net, d.Ground, kind)
		if err != nil {
			return err
		}
		out = append(out, c)
		return nil
	}
	for _, bp := range bPlusNets(d) {
		kind := "b+"
		for _, p := range d.PartsOfKind(design.BiasSupply) {
			if p.Terminals[0].Net == bp {
				kind = "bias"
			}
		}
		if err := addNet(bp, kind); err != nil {
			return nil, err
		}
	}
	for _, p := range d.Valves() {
		if p.Valve.Type.Kind == valves.Rectifier {
			continue
		}
		secs := make([]string, 0, len(p.Valve.Sections))
		for s := range p.Valve.Sections {
			if !p.Valve.Unused[s] {
				secs = append(secs, s)
			}
		}
		sort.Strings(secs)
		for _, s := range secs {
			e := p.Valve.Sections[s]
			for _, el := range []string{valves.Plate, valves.Screen, valves.Grid, valves.Cathode} {
				if net, ok := e[el]; ok && net != "" {
					if err := addNet(net, el); err != nil {
						return nil, err
					}
				}
			}
		}
	}
	mainsSide := d.MainsSideNets()
	for _, net := range d.NetNames() {
		if dcNet(d, net) && !mainsSide[net] {
			if err := addNet(net, "net"); err != nil {
				return nil, err
			}
		}
	}
	// Windings.
	wind := func(id, a, b string) error {
		c, err := n.check(id, a, b, "winding")
		if err != nil {
			return err
		}
		out = append(out, c)
		return nil
	}
	for _, p := range d.Parts {
		var err error
		switch p.Kind {
		case design.OutputTransformer:
			ot := p.OT
			err = wind(p.Ref+" primary", ot.Ends[0], ot.Ends[1])
			if err == nil && ot.Centre != "" {
				if err = wind(p.Ref+" half a", ot.Centre, ot.Ends[0]); err == nil {
					err = wind(p.Ref+" half b", ot.Centre, ot.Ends[1])
				}
			}
			for i, h := range []string{"a", "b"} {
				if err != nil || ot.Taps[i] == "" {
					break
				}
				if err = wind(p.Ref+" tap "+h, ot.Centre, ot.Taps[i]); err == nil {
					err = wind(p.Ref+" tap "+h+" to plate", ot.Taps[i], ot.Ends[i])
				}
			}
			if err == nil && ot.SecHot != "" {
				err = wind(p.Ref+" secondary", ot.SecHot, ot.SecCold)
				if err == nil {
					c := &out[len(out)-1]
					c.Note = join(c.Note, "at the speaker jack with the speaker unplugged")
				}
			}
		case design.Choke:
			err = wind(p.Ref, p.Terminals[0].Net, p.Terminals[1].Net)
		case design.PowerTransformer:
			for _, w := range p.PT.Windings {
				id := p.Ref + " " + w.Name
				if err = wind(id, w.Ends[0], w.Ends[1]); err != nil {
					break
				}
				if w.Centre != "" {
					if err = wind(id+" half a", w.Centre, w.Ends[0]); err != nil {
						break
					}
					if err = wind(id+" half b", w.Centre, w.Ends[1]); err != nil {
						break
					}
				}
			}
			if e := p.PT.PrimaryEnds; err == nil && e[0] != "" && e[1] != "" {
				err = wind(p.Ref+" primary", e[0], e[1])
			}
		case design.MainsInlet:
			l, _ := p.Net("live")
			nn, _ := p.Net("neutral")
			if hs, herr := d.SeriesHeaters(); herr == nil && hs != nil && l != "" && nn != "" {
				// A transformerless set: live to neutral at the plug is
				// the heater string, read with the valves in.
				var c Check
				if c, err = heaterString(d, hs, l, nn); err == nil {
					out = append(out, c)
				}
			} else if l != "" && nn != "" {
				err = wind(p.Ref+" live–neutral", l, nn)
				if err == nil {
					c := &out[len(out)-1]
					c.Note = join(c.Note, "at the plug with the power switch on; a reading of a few ohms is the primary (an open reading: fuse, switch or primary)")
				}
			}
		}
		if err != nil {
			return nil, err
		}
	}
	return out, nil
}

// bPlusNets returns the HT filter nets in stage order (from the HT supply
// model), then the outputs of bias and bench supplies.
func bPlusNets(d *design.Design) []string {
	var out []string
	if m, err := amp.Build(d); err == nil && m.HT != nil {
		if m.HT.ChokeInput {
			out = append(out, m.HT.RectNet)
		}
		out = append(out, m.HT.Nets...)
	}
	for _, p := range d.Parts {
		if p.Kind == design.BiasSupply || p.Kind == design.DCSupply {
			out = append(out, p.Terminals[0].Net)
		}
	}
	return out
}

// dcNet reports whether a net carries DC worth a cold reading: it joins a
// resistor, capacitor, choke, pot, output transformer, supply, a silicon
// rectifier's output, or an amplifying valve's plate, screen, grid or
// cathode. Nets of mains wiring, heater wiring and rectifier anodes only
// are left to the winding checks.
func dcNet(d *design.Design, net string) bool {
	if net == d.Ground {
		return false
	}
	for _, u := range d.Nets[net] {
		p := d.ByRef[u.Ref]
		if p == nil {
			continue
		}
		switch p.Kind {
		case design.Resistor, design.Capacitor, design.Choke, design.Pot, design.OutputTransformer,
			design.BiasSupply, design.DCSupply:
			return true
		case design.Rectifier:
			if net == p.Rect.Plus || net == p.Rect.Minus {
				return true
			}
		case design.Valve:
			pin := 0
			fmt.Sscanf(u.Terminal, "pin %d", &pin)
			for _, vp := range p.Valve.Type.Pins {
				if vp.Number != pin {
					continue
				}
				switch vp.Electrode {
				case valves.Plate, valves.Screen, valves.Grid, valves.Cathode:
					if p.Valve.Type.Kind != valves.Rectifier || vp.Electrode == valves.Cathode {
						return true
					}
				}
			}
		}
	}
	return false
}

func join(a, b string) string {
	if a == "" {
		return b
	}
	if b == "" {
		return a
	}
	return a + "; " + b
}

// check computes one reading with its tolerance corners and notes.
func (n *network) check(id, from, to, kind string) (Check, error) {
	c := Check{ID: id, From: from, To: to, Kind: kind}
	r, open, err := n.resistance(from, to, 0)
	if err != nil {
		return c, err
	}
	if open {
		c.Ohms, c.Open = math.Inf(1), true
		c.Tol = [2]float64{math.Inf(1), math.Inf(1)}
		c.Note = "no DC path: reads open (+Inf)"
	} else {
		lo, _, err := n.resistance(from, to, -1)
		if err != nil {
			return c, err
		}
		hi, _, err := n.resistance(from, to, 1)
		if err != nil {
			return c, err
		}
		c.Ohms, c.Tol = r, [2]float64{lo, hi}
		if kind == "winding" && hi < 1 {
			c.Note = "under 1 Ω: null the meter leads first (common practice)"
		}
	}
	if to == n.d.Ground {
		if note := n.climbNote(from, c.Ohms); note != "" {
			c.Note = join(c.Note, note)
		}
	}
	if note := n.diodeNote(from, to); note != "" {
		c.Note = join(c.Note, note)
	}
	return c, nil
}

// capsToChassis returns capacitors from a net to chassis of at least
// minFarads, by net.
func capsToChassis(d *design.Design, minFarads float64) map[string][]*design.Part {
	out := map[string][]*design.Part{}
	for _, p := range d.PartsOfKind(design.Capacitor) {
		a, b := p.Terminals[0].Net, p.Terminals[1].Net
		if p.Value < minFarads {
			continue
		}
		switch {
		case b == d.Ground && a != d.Ground:
			out[a] = append(out[a], p)
		case a == d.Ground && b != d.Ground:
			out[b] = append(out[b], p)
		}
	}
	return out
}

// climbNote says how long a reading to chassis takes to settle (to
// within 1 %) while the meter's test current charges the capacitors
// (≥ 1 µF, to chassis) on the nets joined to the measured net without
// passing through chassis. The meter is taken as a constant current
// source and the capacitors as starting discharged; the settling time is
// found from the modal solution of the RC network (see rcNet).
func (n *network) climbNote(net string, ohms float64) string {
	d := n.d
	caps := capsToChassis(d, 1e-6)
	set := n.reach(net, d.Ground)
	delete(set, d.Ground)
	var names []string
	var refs []string
	total := 0.0
	for x := range set {
		names = append(names, x)
	}
	sort.Strings(names)
	for _, x := range names {
		for _, p := range caps[x] {
			refs = append(refs, p.Ref)
			total += p.Value
		}
	}
	if len(refs) == 0 {
		return ""
	}
	if math.IsInf(ohms, 1) {
		return fmt.Sprintf("%s (%s) charge from the meter: the reading climbs and never settles", strings.Join(refs, ", "), units.Format(total, units.Farads))
	}
	g, c, idx := n.matrices(names, caps)
	rc, err := newRC(g, c)
	if err != nil {
		return ""
	}
	// Final voltages with 1 A injected at net: G·v = e.
	var lu mat.LU
	lu.Factorize(g)
	e := mat.NewVecDense(len(names), nil)
	e.SetVec(idx[net], 1)
	var vinf mat.VecDense
	if err := lu.SolveVecTo(&vinf, false, e); err != nil {
		return ""
	}
	v0 := make([]float64, len(rc.capIx))
	for k, i := range rc.capIx {
		v0[k] = -vinf.AtVec(i) // deviation from final value, starting from 0 V
	}
	// Observed deviation: at a capacitor node directly; at an eliminated
	// node the deviation is −X·(deviation of v_c) as well, since the
	// injection's direct part is already in the final value.
	a := rc.coeffs(rc.observe(idx[net]), v0)
	t := lastAbove(a, rc.lambda, 0.01*ohms)
	if t < climbSeconds {
		return ""
	}
	return fmt.Sprintf("reading climbs for about %s as %s (%s) charge from the meter: wait for it to settle", FormatDuration(t), strings.Join(refs, ", "), units.Format(total, units.Farads))
}

// matrices builds the nodal conductance matrix over nets (chassis the
// reference) and the capacitance to chassis per net.
func (n *network) matrices(nets []string, caps map[string][]*design.Part) (*mat.Dense, []float64, map[string]int) {
	idx := map[string]int{}
	for i, x := range nets {
		idx[x] = i
	}
	g := mat.NewDense(len(nets), len(nets), nil)
	c := make([]float64, len(nets))
	for _, e := range n.edges {
		ia, oka := idx[e.a]
		ib, okb := idx[e.b]
		if !oka && !okb {
			continue
		}
		r := max(e.ohms, 1e-6)
		gg := 1 / r
		if oka {
			g.Set(ia, ia, g.At(ia, ia)+gg)
		}
		if okb {
			g.Set(ib, ib, g.At(ib, ib)+gg)
		}
		if oka && okb {
			g.Set(ia, ib, g.At(ia, ib)-gg)
			g.Set(ib, ia, g.At(ib, ia)-gg)
		}
	}
	for i, x := range nets {
		for _, p := range caps[x] {
			c[i] += p.Value
		}
	}
	return g, c, idx
}

// diodeNote names silicon rectifiers, bias supplies and bench supplies on
// a net: their reading depends on the meter's polarity, and the cold
// network leaves them open.
func (n *network) diodeNote(from, to string) string {
	d := n.d
	var notes []string
	for _, net := range []string{from, to} {
		if net == d.Ground {
			continue
		}
		for _, u := range d.Nets[net] {
			p := d.ByRef[u.Ref]
			if p == nil {
				continue
			}
			switch p.Kind {
			case design.Rectifier:
				if net == p.Rect.Plus {
					notes = append(notes, fmt.Sprintf("%s's cathodes are here: with the positive lead here the diodes are reverse-biased and the reading is as shown; with the leads swapped they conduct and the reading falls (modelled as open)", p.Ref))
				} else {
					// A meter's ohms range drives its positive lead
					// positive: on an anode net that forward-biases the
					// diodes (common practice).
					notes = append(notes, fmt.Sprintf("%s's anodes are here: with the positive lead here the diodes conduct and the reading falls; with the positive lead on chassis (leads swapped) they are reverse-biased and the reading is as shown (modelled as open)", p.Ref))
				}
			case design.BiasSupply:
				notes = append(notes, fmt.Sprintf("bias supply %s modelled as open: its rectifier may conduct with one meter polarity", p.Ref))
			case design.DCSupply:
				notes = append(notes, fmt.Sprintf("disconnect bench supply %s first (modelled as open)", p.Ref))
			}
		}
	}
	var uniq []string
	for _, s := range notes {
		if !slices.Contains(uniq, s) {
			uniq = append(uniq, s)
		}
	}
	return strings.Join(uniq, "; ")
}

// FormatDuration formats a time in seconds for a note: "12 s", "3.4 min",
// "1.2 h", "forever" for +Inf.
func FormatDuration(t float64) string {
	switch {
	case math.IsInf(t, 1):
		return "forever"
	case t < 60:
		return fmt.Sprintf("%.2g s", t)
	case t < 3600:
		return fmt.Sprintf("%.2g min", t/60)
	}
	return fmt.Sprintf("%.2g h", t/3600)
}

// Cold heater resistance: a tungsten heater's resistance cold is a
// fraction of its hot (rated volts over rated amps) resistance. Tungsten's
// resistivity rises about 5.7 times from 300 K to 1200 K and 6.8 times to
// 1400 K, where indirectly heated heaters run (CRC Handbook of Chemistry
// and Physics, resistivity of tungsten, from memory); the band takes the
// cold heater at a fifth to an eighth of its hot resistance, 1/6.5
// nominal.
const (
	ColdHeaterShare   = 1 / 6.5
	ColdHeaterShareLo = 1.0 / 8
	ColdHeaterShareHi = 1.0 / 5
)

// heaterString is THE cold check of a transformerless set: live to
// neutral at the plug, power switch on, valves in their sockets: the
// dropper and every heater of the series string end to end (the
// rectifier's plate path is open cold). One open heater, or the dropper,
// reads open, and then no valve lights.
func heaterString(d *design.Design, hs *design.HeaterString, live, neutral string) (Check, error) {
	return heaterStringOn(buildNetwork(d), hs, live, neutral, "")
}

// heaterStringOn is heaterString on a cold network n (a fault may have
// changed it), the heater of valve open (if any) left out.
func heaterStringOn(n *network, hs *design.HeaterString, live, neutral, open string) (Check, error) {
	d := n.d
	add := func(ref, a, b string, ohms float64, tol design.Tolerance) {
		n.edges = append(n.edges, edge{a: a, b: b, ohms: ohms, tol: tol, ref: ref})
		i := len(n.edges) - 1
		n.adj[a] = append(n.adj[a], i)
		n.adj[b] = append(n.adj[b], i)
	}
	tol := design.Tolerance{Lo: ColdHeaterShareLo/ColdHeaterShare - 1, Hi: ColdHeaterShareHi/ColdHeaterShare - 1}
	for _, ref := range hs.Valves {
		if ref == open {
			continue
		}
		vp := d.ByRef[ref].Valve
		add(ref, vp.HeaterNets[0], vp.HeaterNets[1], ColdHeaterShare*vp.HeaterVolts/vp.HeaterAmps, tol)
	}
	c, err := n.check("heater string", live, neutral, "heaters")
	if err != nil {
		return c, err
	}
	c.Note = join(c.Note, fmt.Sprintf("valves IN their sockets, at the plug with the power switch on: the dropper %s and the heaters of %s in series, cold (a fifth to an eighth of hot); open: a heater or the dropper is open and no valve lights",
		strings.Join(hs.Droppers, "+"), strings.Join(hs.Valves, ", ")))
	return c, nil
}
