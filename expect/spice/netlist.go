// Package spice writes a design as a SPICE netlist of the circuit pinwalk
// solves, for a general-purpose simulator (written for ngspice: its
// behavioural sources, .func, the ternary ? : and pwr(); other simulators
// may spell those differently): the valve
// sections as behavioural current sources with their Koren parameters
// (models.go mirrors expect/valves exactly), the rectifier (silicon
// diodes, or Child–Langmuir anodes for a valve rectifier), the power
// transformer's windings as sine sources behind their winding and
// reflected primary resistance, every resistor, capacitor and choke, the
// heaters as resistive loads on their windings and the output transformer
// primaries as their DC resistance. A transient run to periodic steady
// state, averaged over whole mains cycles, is an independent check of
// pinwalk's DC solution (which couples a one-cycle shooting simulation of
// the supply to a nodal DC solve of the rest).
package spice

import (
	"fmt"
	"io"
	"math"
	"sort"
	"strings"
	"unicode"

	"pinwalk/expect/amp"
	"pinwalk/expect/design"
	"pinwalk/expect/supply"
	"pinwalk/expect/valves"
)

// minOhms is the smallest resistance pinwalk's network uses (expect/amp):
// zero-ohm parts become 1 mΩ there and here.
const minOhms = 1e-3

// diodeCJO is the junction capacitance given to silicon rectifier diodes
// (farads): of the order of a 1N4007's (about 15 pF at 0 V, from memory of
// its data sheet), far too small to change a DC level at mains frequency,
// and it spares the simulator a node with nothing but reverse-biased
// junctions on it.
const diodeCJO = 10e-12

// Probe is one quantity the deck averages: a net's volts or an electrode's
// current.
type Probe struct {
	// Name is the measurement's name in the deck (lower case, as SPICE
	// prints it): "v_<node>" or "i_<sense source>".
	Name string
	// Net is the design net of a voltage probe, "" for a current.
	Net string
	// Section ("V1A", "V2") and Electrode (valves.Plate, Screen, Grid) of a
	// current probe: the current into that electrode, amps.
	Section, Electrode string
	// expr is the SPICE vector measured: v(node) or i(source).
	expr string
}

// Netlist is a design written as a SPICE circuit. Deck turns it into a
// runnable input file.
type Netlist struct {
	Title  string
	Hz     float64 // mains frequency
	Nodes  map[string]string
	Probes []Probe
	// Mains is the rms mains volts at the wall and Variac the fraction of
	// it applied (1: none) that the winding sources are set for.
	Mains, Variac float64
	head          []string // comment lines for the top of the deck
	body          strings.Builder
	names         map[string]bool // element and node names used (lower case)
}

// Node returns the SPICE node of a design net and whether the net is in
// the netlist.
func (n *Netlist) Node(net string) (string, bool) {
	s, ok := n.Nodes[net]
	return s, ok
}

// Export writes a design as pinwalk models it at the nominal mains (the
// design's mains volts, no variac, nominal part values). It fails when the
// design cannot be built into a model (the same errors amp.Build gives).
func Export(d *design.Design) (*Netlist, error) { return ExportAt(d, amp.Conditions{}) }

// ExportAt is Export under other bench conditions (mains volts, a variac
// setting): the winding sources scale with the primary volts, and the
// emission caps pinwalk applies to cool cathodes are written in.
func ExportAt(d *design.Design, c amp.Conditions) (*Netlist, error) {
	m, err := amp.Build(d)
	if err != nil {
		return nil, err
	}
	return export(m, c, m.NominalValues())
}

func export(m *amp.Model, c amp.Conditions, v *amp.Values) (*Netlist, error) {
	d := m.D
	s := amp.NewSolver(m)
	f := s.MainsFactor(c)
	n := &Netlist{Title: d.Title, Hz: d.Mains.Hz, Mains: d.Mains.Volts, Variac: 1, Nodes: map[string]string{}, names: map[string]bool{}}
	if c.MainsVolts > 0 {
		n.Mains = c.MainsVolts
	}
	if c.Variac > 0 {
		n.Variac = c.Variac
	}
	n.Nodes[d.Ground] = "0"
	n.names["0"] = true
	// Nodes for every net pinwalk's network has, in name order, so that
	// the deck reads the same from run to run.
	for _, net := range d.NetNames() {
		if _, ok := m.Node(net); ok {
			n.node(net)
		}
	}
	n.head = append(n.head,
		fmt.Sprintf("Design file %s (sha256 %s)", d.File, short(d.Hash)),
		fmt.Sprintf("Mains %s V %s Hz%s (transformer primary at %.4g of its rated volts); nominal part values.", num(n.Mains), num(d.Mains.Hz), variacWords(n.Variac), f),
		"Written by pinwalk export --spice: the circuit pinwalk solves, as it models it.")
	var renamed []string
	for _, net := range d.NetNames() {
		if node, ok := n.Nodes[net]; ok && node != net && net != d.Ground {
			renamed = append(renamed, fmt.Sprintf("  net %s is node %s", net, node))
		}
	}
	if len(renamed) > 0 {
		n.head = append(n.head, "Nets are nodes of the same name, except (SPICE names are case-insensitive plain words):")
		n.head = append(n.head, renamed...)
	}

	if err := n.supply(m, s, c, v); err != nil {
		return nil, err
	}
	n.windings(m, f)
	n.auxRectifiers(m)
	n.parts(m, v, f)
	n.sections(m, s, c, v)
	n.regulators(m, c, v)
	n.diodes(m, s, c, v)
	n.heaters(m, v, f)
	// Probes: every net of pinwalk's network, then electrode currents
	// (added by sections).
	var probes []Probe
	for _, net := range d.NetNames() {
		node, ok := n.Nodes[net]
		if _, inNet := m.Node(net); !ok || !inNet || net == d.Ground {
			continue
		}
		probes = append(probes, Probe{Name: "v_" + strings.ToLower(node), Net: net, expr: "v(" + node + ")"})
	}
	n.Probes = append(probes, n.Probes...)
	return n, nil
}

func variacWords(v float64) string {
	if v == 1 {
		return ""
	}
	return fmt.Sprintf(" on a variac at %.4g %%", 100*v)
}

func short(h string) string {
	if len(h) > 16 {
		return h[:16]
	}
	return h
}

// node returns the SPICE node of a net, creating it: the net's own name
// when it is a plain identifier not yet used (SPICE names are case
// insensitive), otherwise a cleaned name with a number.
func (n *Netlist) node(net string) string {
	if s, ok := n.Nodes[net]; ok {
		return s
	}
	name := clean(net)
	if name != net || n.names[strings.ToLower(name)] || !unicode.IsLetter(rune(name[0])) {
		base := "n_" + name
		name = base
		for i := 2; n.names[strings.ToLower(name)]; i++ {
			name = fmt.Sprintf("%s_%d", base, i)
		}
	}
	n.names[strings.ToLower(name)] = true
	n.Nodes[net] = name
	return name
}

// inner returns a fresh internal node name (between a source and its
// resistance, inside a choke).
func (n *Netlist) inner(base string) string {
	name := clean(base)
	for i := 2; n.names[strings.ToLower(name)]; i++ {
		name = fmt.Sprintf("%s_%d", clean(base), i)
	}
	n.names[strings.ToLower(name)] = true
	return name
}

// elem returns a fresh element name with the given SPICE letter.
func (n *Netlist) elem(letter, ref string) string {
	base := letter + "_" + clean(ref)
	name := base
	for i := 2; n.names[strings.ToLower(name)]; i++ {
		name = fmt.Sprintf("%s_%d", base, i)
	}
	n.names[strings.ToLower(name)] = true
	return name
}

// clean keeps letters, digits and underscores of a name.
func clean(s string) string {
	var b strings.Builder
	for _, r := range s {
		if r < 128 && (unicode.IsLetter(r) || unicode.IsDigit(r) || r == '_') {
			b.WriteRune(r)
		} else {
			b.WriteByte('_')
		}
	}
	if b.Len() == 0 {
		return "x"
	}
	return b.String()
}

func (n *Netlist) comment(format string, a ...any) {
	fmt.Fprintf(&n.body, "* "+format+"\n", a...)
}

func (n *Netlist) line(format string, a ...any) {
	fmt.Fprintf(&n.body, format+"\n", a...)
}

func (n *Netlist) section(title string) {
	fmt.Fprintf(&n.body, "\n* --- %s %s\n", title, strings.Repeat("-", max(0, 70-len(title))))
}

// resistor writes a resistor, kept to pinwalk's 1 mΩ floor; an infinite
// resistance writes nothing.
func (n *Netlist) resistor(ref, a, b string, ohms float64, what string) {
	if math.IsInf(ohms, 1) {
		n.comment("%s: %s, open (not written)", ref, what)
		return
	}
	n.line("%s %s %s %s", n.elem("R", ref), a, b, num(max(ohms, minOhms)))
	if what != "" {
		n.line("*   %s", what)
	}
}

// supply writes the HT winding as sine sources behind their source
// resistance, and the rectifier.
func (n *Netlist) supply(m *amp.Model, s *amp.Solver, c amp.Conditions, v *amp.Values) error {
	ht := m.HT
	if ht == nil {
		return nil
	}
	p, _ := s.SupplyParams(c, v)
	w := ht.Winding
	n.section("HT supply")
	vpk := math.Sqrt2 * p.Vrms
	src := func(ref, from, to string, phase float64, what string) {
		mid := n.inner(clean(ref) + "_emf")
		n.line("%s %s %s sin(0 %s %s 0 0 %s)", n.elem("V", ref), mid, from, num(vpk), num(p.Hz), num(phase))
		n.line("%s %s %s %s", n.elem("R", ref), mid, to, num(max(p.Rs, minOhms)))
		n.comment("  %s: %s V rms open-circuit, behind %s ohm (winding DCR and reflected primary DCR)", what, num(p.Vrms), num(p.Rs))
	}
	if lf := ht.Line; lf != nil {
		// Transformerless: the mains itself, from the neutral (the
		// chassis) to the anode, behind the path's resistors.
		n.comment("no power transformer: the mains (%s V rms at this variac) from %s to the anode %s, behind %s (%s ohm)",
			num(p.Vrms), m.D.Ground, lf.Anode, strings.Join(lf.Series, " + "), num(p.Rs))
		mid := n.inner("mains_ht_emf")
		n.line("%s %s 0 sin(0 %s %s 0 0 0)", n.elem("V", "mains_ht"), mid, num(vpk), num(p.Hz))
		n.line("%s %s %s %s", n.elem("R", "mains_ht"), mid, n.node(lf.Anode), num(max(p.Rs, minOhms)))
	} else if ht.Doubler != nil {
		n.doublerWinding(ht, p, src)
	} else {
		n.htWinding(ht, w, p, src)
	}
	if ht.Doubler != nil {
		n.doublerDiodes(ht)
		return nil
	}
	return n.rectifier(ht, p)
}

// htWinding writes the HT winding's sources.
func (n *Netlist) htWinding(ht *amp.HTSupply, w *design.Winding, p supply.Params, src func(ref, from, to string, phase float64, what string)) {
	tr := ht.Transformer.Ref
	n.comment("%s winding %s (%s): the sources are its open-circuit volts, %s V rms per conducting path", tr, w.Name, p.Topology, num(p.Vrms))
	n.comment("at this mains; each path's resistance is the winding's share of its DCR plus the primary DCR")
	n.comment("reflected by the turns ratio squared (as pinwalk's supply model has it).")
	gnd := func(net string) string {
		if net == "" {
			return "0"
		}
		return n.node(net)
	}
	switch p.Topology {
	case supply.CentreTap:
		ct := gnd(w.Centre)
		src(tr+"_"+w.Name+"_a", ct, n.node(w.Ends[0]), 0, "half "+w.Ends[0])
		src(tr+"_"+w.Name+"_b", ct, n.node(w.Ends[1]), 180, "half "+w.Ends[1])
	case supply.Bridge:
		src(tr+"_"+w.Name, n.node(w.Ends[1]), n.node(w.Ends[0]), 0, "whole winding")
	case supply.HalfWave:
		anode := ht.Rectifier.RectifierAnodes()[0]
		other := w.Ends[0]
		if other == anode {
			other = w.Ends[1]
		}
		if w.Centre != "" {
			other = w.Centre
		}
		src(tr+"_"+w.Name, n.node(other), n.node(anode), 0, "winding, to the anode end")
	}
}

// rectifier writes the HT rectifier.
func (n *Netlist) rectifier(ht *amp.HTSupply, p supply.Params) error {
	gnd := func(net string) string {
		if net == "" {
			return "0"
		}
		return n.node(net)
	}
	rp := ht.Rectifier
	switch p.Rect.Kind {
	case supply.Silicon:
		dd := rp.Rect.Diode
		model := n.elem("DM", rp.Ref)
		n.comment("%s: silicon rectifier %q, Shockley's law with series resistance (the library's diode);", rp.Ref, dd.Name)
		n.comment("  CJO: %s of junction capacitance, which pinwalk leaves out, so that a bridge's winding", num(diodeCJO))
		n.comment("  is not left floating between conduction pulses (it changes no DC level)")
		n.line(".model %s D(IS=%s N=%s RS=%s CJO=%s)", model, num(dd.Is), num(dd.N), num(dd.Rs), num(diodeCJO))
		if rp.Rect.Bridge {
			plus, minus := n.node(rp.Rect.Plus), gnd(rp.Rect.Minus)
			for i, ac := range rp.Rect.AC {
				a := n.node(ac)
				n.line("%s %s %s %s", n.elem("D", fmt.Sprintf("%s_%d", rp.Ref, 2*i+1)), a, plus, model)
				n.line("%s %s %s %s", n.elem("D", fmt.Sprintf("%s_%d", rp.Ref, 2*i+2)), minus, a, model)
			}
		} else {
			for _, an := range rp.Rect.Anodes {
				n.line("%s %s %s %s", n.elem("D", rp.Ref+"_"+an), n.node(an), n.node(rp.Rect.Plus), model)
			}
		}
	case supply.Valve:
		k := n.node(ht.RectNet)
		n.comment("%s: %s valve rectifier, Child-Langmuir per anode, %s A/V^1.5", rp.Ref, rp.Valve.Type.Name, num(p.Rect.Perveance))
		if p.Rect.MaxAmps > 0 {
			n.comment("  emission-limited to %s A per anode (cool filament)", num(p.Rect.MaxAmps))
		}
		for _, an := range rp.RectifierAnodes() {
			a := n.node(an)
			n.line("%s %s %s I = %s", n.elem("B", rp.Ref+"_"+an), a, k,
				rectifierAnode(fmt.Sprintf("V(%s,%s)", a, k), p.Rect.Perveance, p.Rect.MaxAmps))
		}
	}
	return nil
}

// windings writes every winding other than the HT one as a sine source
// behind its DCR (with the reflected primary DCR), as pinwalk's heater
// model has them; they carry only AC.
func (n *Netlist) windings(m *amp.Model, f float64) {
	first := true
	for _, p := range m.D.PartsOfKind(design.PowerTransformer) {
		for _, w := range p.PT.Windings {
			if m.HT != nil && w == m.HT.Winding {
				continue
			}
			if first {
				n.section("other windings (heaters)")
				first = false
			}
			voc, r := amp.HeaterWindingSource(w, p.PT)
			whole := voc * f
			if w.CentreTap {
				whole *= 2
			}
			n.comment("%s winding %s: %s V rms open-circuit end to end, behind %s ohm", p.Ref, w.Name, num(whole), num(r))
			a, b := n.node(w.Ends[0]), n.node(w.Ends[1])
			if w.Centre != "" {
				ct := n.node(w.Centre)
				for i, end := range []string{a, b} {
					mid := n.inner(clean(p.Ref+"_"+w.Name) + "_emf")
					n.line("%s %s %s sin(0 %s %s 0 0 %d)", n.elem("V", fmt.Sprintf("%s_%s_%c", p.Ref, w.Name, 'a'+i)), mid, ct, num(math.Sqrt2*whole/2), num(m.D.Mains.Hz), 180*i)
					n.line("%s %s %s %s", n.elem("R", fmt.Sprintf("%s_%s_%c", p.Ref, w.Name, 'a'+i)), mid, end, num(max(r/2, minOhms)))
				}
				continue
			}
			mid := n.inner(clean(p.Ref+"_"+w.Name) + "_emf")
			n.line("%s %s %s sin(0 %s %s 0 0 0)", n.elem("V", p.Ref+"_"+w.Name), mid, b, num(math.Sqrt2*whole), num(m.D.Mains.Hz))
			n.line("%s %s %s %s", n.elem("R", p.Ref+"_"+w.Name), mid, a, num(max(r, minOhms)))
		}
	}
}

// heaters writes each valve heater on a winding as its rated resistance;
// a series heater string gets the mains across it, behind its droppers.
func (n *Netlist) heaters(m *amp.Model, v *amp.Values, f float64) {
	if len(m.Heaters) == 0 {
		return
	}
	n.section("heaters (resistive loads at their rated volts and amps)")
	if hs := m.String; hs != nil {
		r := 0.0
		for _, i := range m.DropSlots {
			r += v.Slot[i]
		}
		vrms := m.D.Mains.Volts * f
		n.comment("series heater string %s: the mains (%s V rms) from %s, behind the dropper %s (%s ohm)",
			strings.Join(hs.Valves, ", "), num(vrms), hs.Return, strings.Join(hs.Droppers, " + "), num(r))
		mid := n.inner("mains_string_emf")
		n.line("%s %s %s sin(0 %s %s 0 0 0)", n.elem("V", "mains_string"), mid, n.node(hs.Return), num(math.Sqrt2*vrms), num(m.D.Mains.Hz))
		n.resistor("string_dropper", mid, n.node(hs.Top), r, "dropper")
	}
	for _, h := range m.Heaters {
		p := m.D.ByRef[h.Ref]
		if h.RatedAmps <= 0 {
			continue
		}
		hn := p.Valve.HeaterNets
		n.resistor(h.Ref+"_heater", n.node(hn[0]), n.node(hn[1]), h.RatedVolts/h.RatedAmps,
			fmt.Sprintf("%s %s heater, %s V %s A", h.Ref, p.Valve.Type.Name, num(h.RatedVolts), num(h.RatedAmps)))
	}
}

// parts writes the passive parts and DC sources.
func (n *Netlist) parts(m *amp.Model, v *amp.Values, mainsFactor float64) {
	d := m.D
	n.section("parts")
	slot := func(ref, role string) (float64, bool) {
		for _, i := range m.SlotsOf(ref) {
			if m.Slots[i].Role == role {
				return v.Slot[i], true
			}
		}
		return 0, false
	}
	// A transformerless set's surge resistor and heater dropper are
	// written with their mains sources, as pinwalk folds them.
	folded := map[string]bool{}
	if m.HT != nil && m.HT.Line != nil {
		for _, ref := range m.HT.Line.Series {
			folded[ref] = true
		}
	}
	if m.String != nil {
		for _, ref := range m.String.Droppers {
			folded[ref] = true
		}
	}
	for _, p := range d.Parts {
		t := func(i int) string { return n.node(p.Terminals[i].Net) }
		what := p.Note
		switch p.Kind {
		case design.Resistor:
			if folded[p.Ref] {
				continue // written with the source it belongs to
			}
			r, _ := slot(p.Ref, "")
			n.resistor(p.Ref, t(0), t(1), r, what)
		case design.Capacitor:
			n.line("%s %s %s %s", n.elem("C", p.Ref), t(0), t(1), num(p.Value))
			if leak, ok := slot(p.Ref, "leak"); ok && !math.IsInf(leak, 1) {
				n.resistor(p.Ref+"_leak", t(0), t(1), leak, p.Ref+" leakage")
			}
		case design.Choke:
			r, ok := slot(p.Ref, "dcr")
			if !ok {
				r = p.DCR
			}
			mid := n.inner(clean(p.Ref) + "_l")
			n.line("%s %s %s %s", n.elem("L", p.Ref), t(0), mid, num(p.Value))
			n.resistor(p.Ref+"_dcr", mid, t(1), r, fmt.Sprintf("%s choke %s H, DCR", p.Ref, num(p.Value)))
		case design.Pot:
			aw, _ := slot(p.Ref, "a-wiper")
			wb, _ := slot(p.Ref, "wiper-b")
			n.resistor(p.Ref+"_aw", t(0), t(2), aw, fmt.Sprintf("%s pot %s ohm at %.4g %%, end to wiper", p.Ref, num(p.Value), 100*p.Setting))
			n.resistor(p.Ref+"_wb", t(2), t(1), wb, p.Ref+" wiper to end")
		case design.BiasSupply, design.DCSupply:
			volts, _ := slot(p.Ref, "volts")
			if p.MainsFed {
				// Rectified from a winding: it follows the mains and
				// the variac as the solver has it (amp.RectifiedVolts).
				volts = amp.RectifiedVolts(volts, mainsFactor)
			}
			r, _ := slot(p.Ref, "dcr")
			mid := n.inner(clean(p.Ref) + "_emf")
			n.line("%s %s %s dc %s", n.elem("V", p.Ref), mid, t(1), num(volts))
			n.resistor(p.Ref+"_dcr", mid, t(0), r, fmt.Sprintf("%s %s %s V behind its DCR", p.Ref, p.Kind, num(volts)))
		case design.OutputTransformer:
			n.outputTransformer(p, slot)
		case design.Fuse:
			// pinwalk's network leaves fuses out (they sit on the mains
			// side); one joining two nets of the network would be a
			// short there.
			a, b := p.Terminals[0].Net, p.Terminals[1].Net
			_, okA := m.Node(a)
			_, okB := m.Node(b)
			if okA && okB {
				n.resistor(p.Ref, t(0), t(1), minOhms, p.Ref+" fuse")
			}
		}
	}
}

// sections writes every amplifying valve section: behavioural sources for
// the plate, screen and grid currents, each through a zero-volt source
// that measures it.
func (n *Netlist) sections(m *amp.Model, s *amp.Solver, c amp.Conditions, v *amp.Values) {
	if len(m.Sections) == 0 {
		return
	}
	n.section("valves (Koren models, the library's fitted parameters)")
	lims := s.EmissionLimits(c, v)
	for i, sec := range m.Sections {
		p := m.D.ByRef[sec.Ref]
		e := p.Valve.Sections[sec.Section]
		k := v.Koren[i]
		name := sec.Name()
		kn := n.node(e[valves.Cathode])
		sense := func(electrode, net string) string {
			src := n.elem("V", name+"_i"+electrode[:1])
			pin := n.inner(clean(name) + "_" + electrode[:1])
			n.line("%s %s %s dc 0", src, n.node(net), pin)
			n.Probes = append(n.Probes, Probe{Name: "i_" + strings.ToLower(src), Section: name, Electrode: electrode, expr: "i(" + src + ")"})
			return pin
		}
		if sec.Pentode {
			n.comment("%s: %s%s, Koren pentode mu=%s ex=%s kg1=%s kg2=%s kp=%s kvb=%s, grid diode behind %s ohm",
				name, sec.Type.Name, sectionWord(sec.Section), num(k.Mu), num(k.Ex), num(k.KG1), num(k.KG2), num(k.KP), num(k.KVB), num(gridOhms(k)))
		} else {
			n.comment("%s: %s%s, Koren triode mu=%s ex=%s kg1=%s kp=%s kvb=%s, grid diode behind %s ohm",
				name, sec.Type.Name, sectionWord(sec.Section), num(k.Mu), num(k.Ex), num(k.KG1), num(k.KP), num(k.KVB), num(gridOhms(k)))
		}
		if lims[i] > 0 {
			n.comment("  emission-limited: cathode current capped smoothly near %s A", num(lims[i]))
		}
		pp := sense(valves.Plate, e[valves.Plate])
		gp := sense(valves.Grid, e[valves.Grid])
		vgk := fmt.Sprintf("V(%s,%s)", gp, kn)
		vpk := fmt.Sprintf("V(%s,%s)", pp, kn)
		if sec.Pentode {
			sp := sense(valves.Screen, e[valves.Screen])
			vg2k := fmt.Sprintf("V(%s,%s)", sp, kn)
			ip, ig2 := pentodeCurrents(k, vgk, vg2k, vpk, lims[i])
			n.line("%s %s %s I = %s", n.elem("B", name+"_ip"), pp, kn, ip)
			n.line("%s %s %s I = %s", n.elem("B", name+"_ig2"), sp, kn, ig2)
		} else {
			n.line("%s %s %s I = %s", n.elem("B", name+"_ip"), pp, kn, triodeIp(k, vgk, vpk, lims[i]))
		}
		n.line("%s %s %s I = %s", n.elem("B", name+"_ig"), gp, kn, gridIg(k, vgk))
	}
}

// diodes writes each signal-diode plate as pinwalk solves it: its series
// slot (the plate's open fault) and the Child–Langmuir law with the
// contact potential as a behavioural source, plate to cathode.
func (n *Netlist) diodes(m *amp.Model, s *amp.Solver, c amp.Conditions, v *amp.Values) {
	if len(m.Diodes) == 0 {
		return
	}
	n.section("signal diodes (Child-Langmuir with contact potential)")
	scales := s.DiodeScales(c, v)
	for i, d := range m.Diodes {
		name := fmt.Sprintf("%s%s%d", d.Ref, d.Section, d.Index+1)
		n.comment("%s: %s diode plate %d, perveance %s A/V^1.5, contact potential %s V, emission share %s",
			name, d.Type.Name, d.Index+1, num(d.Type.Perveance), num(d.Type.ContactVolts), num(scales[i]))
		a := n.inner(clean(name) + "_d")
		b := n.inner(clean(name) + "_dp")
		n.resistor(name+"_rs", n.node(d.Plate), a, v.Slot[d.Slot], "series slot")
		// The plate current, measured: it returns through the cathode pin
		// the diodes share with the valve's other section.
		src := n.elem("V", name+"_i")
		n.line("%s %s %s dc 0", src, a, b)
		n.Probes = append(n.Probes, Probe{Name: "i_" + strings.ToLower(src), Section: cathodeSection(m, d), Electrode: valves.Plates, expr: "i(" + src + ")"})
		vak := fmt.Sprintf("V(%s,%s)", b, n.node(d.Cathode))
		n.line("%s %s %s I = %s", n.elem("B", name), b, n.node(d.Cathode), signalDiode(vak, d.Type.Perveance, d.Type.ContactVolts, scales[i]))
	}
}

// cathodeSection names the section whose cathode a diode plate shares
// ("V1T"), "" when none is in the network.
func cathodeSection(m *amp.Model, d *amp.DiodePlate) string {
	for _, sec := range m.Sections {
		if sec.Ref == d.Ref && m.D.ByRef[sec.Ref].Valve.Sections[sec.Section][valves.Cathode] == d.Cathode {
			return sec.Name()
		}
	}
	return ""
}

// regulators writes each gas regulator as pinwalk solves it, struck
// (valves.GasLaw): its incremental resistance, a DC source of its offset
// and a diode with the library's silicon law standing in for the
// discharge's knee, anode to cathode. A regulator still dark at switch-on
// (Conditions.ColdValves) is left out.
func (n *Netlist) regulators(m *amp.Model, c amp.Conditions, v *amp.Values) {
	if len(m.Regulators) == 0 {
		return
	}
	n.section("gas regulators (struck: incremental resistance, offset, knee)")
	for i, rg := range m.Regulators {
		g := rg.Type.Gas
		n.comment("%s: %s, maintaining %s V over %s-%s A, striking %s V", rg.Ref, rg.Type.Name,
			num(g.MaintainVolts), num(g.MinAmps), num(g.MaxAmps), num(g.StrikeVolts))
		if c.ColdValves {
			n.comment("  dark at switch-on (not written)")
			continue
		}
		offset := rg.Law.Offset
		if i < len(v.GasVolts) {
			offset += v.GasVolts[i]
		}
		a := n.inner(clean(rg.Ref) + "_gr")
		k := n.inner(clean(rg.Ref) + "_gk")
		n.resistor(rg.Ref+"_r", n.node(rg.Anode), a, v.Slot[rg.Slot], "incremental resistance")
		n.line("%s %s %s dc %s", n.elem("V", rg.Ref+"_off"), a, k, num(offset))
		model := n.elem("DM", rg.Ref)
		d := rg.Law.Junction
		n.line(".model %s D(IS=%s N=%s RS=0)", model, num(d.Is), num(d.N))
		n.line("%s %s %s %s", n.elem("D", rg.Ref), k, n.node(rg.Cathode), model)
	}
}

func sectionWord(s string) string {
	if s == "" {
		return ""
	}
	return " section " + s
}

// DeckOptions says how long to run the transient and what to average.
type DeckOptions struct {
	// Cycles is the number of mains cycles simulated; 0 means 150.
	Cycles int
	// Average is the number of whole mains cycles at the end over which
	// every probe is averaged; 0 means 10.
	Average int
	// StepsPerCycle bounds the time step to a fraction of the mains
	// period; 0 means 100.
	StepsPerCycle int
	// Initial holds starting volts for some design nets (.ic): the
	// simulator's initial operating point is its own DC solution with those
	// nets held there, so every capacitor starts charged to that DC state
	// instead of empty. Starting the reservoir near its working volts skips
	// the power-on charge, whose slowest parts (a self-biased long-tailed
	// pair's grid capacitors, bootstrapped by the tail) take many seconds
	// to settle; the periodic steady state reached does not depend on it.
	Initial map[string]float64

	dataFile string // set by Simulate: write waveforms there instead of .meas lines
}

// probesPerFile keeps each wrdata command line short.
const probesPerFile = 16

func (o DeckOptions) withDefaults() DeckOptions {
	if o.Cycles <= 0 {
		o.Cycles = 150
	}
	if o.Average <= 0 {
		o.Average = 10
	}
	if o.Average > o.Cycles {
		o.Average = o.Cycles
	}
	if o.StepsPerCycle <= 0 {
		o.StepsPerCycle = 100
	}
	return o
}

// Deck returns the runnable SPICE input: the circuit, a transient from
// power-on to o.Cycles mains cycles and .meas lines that print each probe's
// mean over the last whole cycles.
func (n *Netlist) Deck(o DeckOptions) string {
	o = o.withDefaults()
	var b strings.Builder
	title := strings.Map(func(r rune) rune {
		if r == '\n' || r == '\r' {
			return ' '
		}
		return r
	}, n.Title)
	fmt.Fprintf(&b, "* %s\n", title)
	for _, h := range n.head {
		fmt.Fprintf(&b, "* %s\n", h)
	}
	period := 1 / n.Hz
	tstop := float64(o.Cycles) * period
	// Saved from a little before the averaged cycles, so that the first
	// one is covered from its start.
	tsave := max(0, (float64(o.Cycles-o.Average)-0.05)*period)
	start := "at power-on, every capacitor empty"
	if len(o.Initial) > 0 {
		start = "from the state given at the .ic lines"
	}
	fmt.Fprintf(&b, "*\n* Run: ngspice -b THIS_FILE. The transient runs %d mains cycles, starting\n", o.Cycles)
	fmt.Fprintf(&b, "* %s; the .meas lines print each net's volts (v_NODE)\n", start)
	fmt.Fprintf(&b, "* and each valve electrode's current (i_SOURCE, into the electrode) averaged\n")
	fmt.Fprintf(&b, "* over the last %d whole cycles: the DC a meter reads.\n", o.Average)
	fmt.Fprintf(&b, "* Valve heaters are loads on their windings only; the valve models do not\n")
	fmt.Fprintf(&b, "* depend on heater volts except through the emission caps written below.\n")
	b.WriteString("\n.options temp=26.85 tnom=26.85 reltol=1e-5 rshunt=1e12\n")
	b.WriteString("* (27 C less 0.15 K: the diode's thermal voltage at 300 K, as in expect/valves;\n")
	b.WriteString("*  rshunt gives a floating heater winding a reference to chassis)\n")
	b.WriteString("\n* --- device laws (the same equations as pinwalk's expect/valves) ----------\n")
	b.WriteString(funcs())
	b.WriteString(n.body.String())
	b.WriteString("\n* --- analysis -------------------------------------------------------------\n")
	if len(o.Initial) > 0 {
		nets := make([]string, 0, len(o.Initial))
		for net := range o.Initial {
			if _, ok := n.Nodes[net]; ok {
				nets = append(nets, net)
			}
		}
		sort.Strings(nets)
		b.WriteString("* Start: the simulator's DC solution with these nets held at the volts below\n")
		b.WriteString("* (every capacitor charged to that state), then released at t = 0. Delete the\n")
		b.WriteString("* .ic lines to simulate power-on from empty capacitors (slower to settle).\n")
		for _, net := range nets {
			fmt.Fprintf(&b, ".ic v(%s)=%s\n", n.Nodes[net], num(o.Initial[net]))
		}
	}
	fmt.Fprintf(&b, ".tran %s %s %s %s\n", num(period/float64(o.StepsPerCycle)), num(tstop), num(tsave), num(period/float64(o.StepsPerCycle)))
	if o.dataFile != "" {
		// Simulate reads the waveforms and averages them itself, exactly
		// over whole cycles.
		b.WriteString(".control\nset wr_singlescale\nset wr_vecnames\noption numdgt=12\nrun\n")
		for i := 0; i < len(n.Probes); i += probesPerFile {
			var vecs []string
			for _, p := range n.Probes[i:min(i+probesPerFile, len(n.Probes))] {
				vecs = append(vecs, p.expr)
			}
			fmt.Fprintf(&b, "wrdata %s.%d %s\n", o.dataFile, i/probesPerFile, strings.Join(vecs, " "))
		}
		b.WriteString("quit\n.endc\n")
	} else {
		for _, p := range n.Probes {
			fmt.Fprintf(&b, ".meas tran %s avg %s from=%s to=%s\n", p.Name, p.expr, num(tstop-float64(o.Average)*period), num(tstop))
		}
	}
	b.WriteString(".end\n")
	return b.String()
}

// Write writes the design's deck for a user's own simulator run: Export,
// then Deck with the defaults, starting from pinwalk's nominal volts at the
// reservoir (the first filter net) when pinwalk can solve the design, from
// power-on otherwise (a comment in the deck says which).
func Write(w io.Writer, d *design.Design) error {
	n, err := Export(d)
	if err != nil {
		return err
	}
	o := DeckOptions{}
	if start, err := ReservoirStart(d); err == nil {
		o.Initial = start
	} else {
		n.head = append(n.head, "pinwalk could not solve this design ("+firstLine(err.Error())+"): the run starts at power-on.")
	}
	_, err = io.WriteString(w, n.Deck(o))
	return err
}

// ReservoirStart solves the design at nominal mains and returns the volts
// of its first HT filter net (the reservoir), for DeckOptions.Initial; an
// empty map when the design has no HT rectifier. Errors are the solver's.
func ReservoirStart(d *design.Design) (map[string]float64, error) {
	m, err := amp.Build(d)
	if err != nil {
		return nil, err
	}
	if m.HT == nil && len(m.AuxRects()) == 0 {
		return map[string]float64{}, nil
	}
	var op amp.OP
	if err := amp.NewSolver(m).Solve(amp.Conditions{}, m.NominalValues(), false, &op); err != nil {
		return nil, err
	}
	return Reservoirs(m, &op), nil
}

// Reservoirs returns the volts of every rectifier's reservoir in a
// solution: the HT's first filter net and each other rectifier's.
func Reservoirs(m *amp.Model, op *amp.OP) map[string]float64 {
	out := map[string]float64{}
	if m.HT != nil {
		v, _ := m.NetVolts(op, m.HT.Nets[0])
		out[m.HT.Nets[0]] = v
		if db := m.HT.Doubler; db != nil {
			out[db.Mid], _ = m.NetVolts(op, db.Mid)
		}
	}
	for _, a := range m.AuxRects() {
		if v, ok := m.NetVolts(op, a.Out); ok {
			out[a.Out] = v
		}
	}
	return out
}

func firstLine(s string) string {
	if i := strings.IndexByte(s, '\n'); i >= 0 {
		return s[:i]
	}
	return s
}

// auxRectifiers writes each rectifier other than the HT one as its
// diodes (the library's silicon diode) on its winding, whose source
// windings has written; its reservoir and filter are among the parts.
func (n *Netlist) auxRectifiers(m *amp.Model) {
	aux := m.AuxRects()
	if len(aux) == 0 {
		return
	}
	n.section("other rectifiers (bias and DC supplies off their own windings)")
	for _, a := range aux {
		rp := a.Rectifier
		dd := rp.Rect.Diode
		model := n.elem("DM", rp.Ref)
		polarity := "positive"
		if a.Sign < 0 {
			polarity = "negative"
		}
		n.comment("%s: silicon rectifier %q, %s, %s output at %s, Shockley's law with series resistance", rp.Ref, dd.Name, a.Topology, polarity, a.Out)
		n.line(".model %s D(IS=%s N=%s RS=%s CJO=%s)", model, num(dd.Is), num(dd.N), num(dd.Rs), num(diodeCJO))
		if rp.Rect.Bridge {
			plus, minus := n.node(rp.Rect.Plus), n.node(rp.Rect.Minus)
			for i, ac := range rp.Rect.AC {
				x := n.node(ac)
				n.line("%s %s %s %s", n.elem("D", fmt.Sprintf("%s_%d", rp.Ref, 2*i+1)), x, plus, model)
				n.line("%s %s %s %s", n.elem("D", fmt.Sprintf("%s_%d", rp.Ref, 2*i+2)), minus, x, model)
			}
			continue
		}
		for _, an := range rp.Rect.Anodes {
			n.line("%s %s %s %s", n.elem("D", rp.Ref+"_"+an), n.node(an), n.node(rp.Rect.Plus), model)
		}
	}
}
