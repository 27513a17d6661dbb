// Package amp turns a design into one whole-circuit model: every net a node
// of a modified-nodal-analysis network, every valve section a Koren device,
// the HT supply a rectifier-and-filter simulation coupled to the network by
// fixed-point iteration, and the heaters an AC load on their winding.
//
// A Model is built once from a design; Solve then computes the DC operating
// point for a set of part values (Values), under given bench conditions
// (mains, variac). The part values are what tolerance sampling and fault
// injection change, so one Model serves the nominal solve, thousands of
// Monte Carlo samples and every fault hypothesis.
package amp

import (
	"fmt"
	"math"
	"sort"
	"sync"

	"pinwalk/expect/design"
	"pinwalk/expect/mna"
	"pinwalk/expect/supply"
	"pinwalk/expect/valves"
)

// ElemKind says what a value slot stands for.
type ElemKind int

// Element kinds of value slots.
const (
	ElemResistance ElemKind = iota // a resistive element, ohms
	ElemSource                     // a DC source, volts
)

// Slot is one value that sampling or a fault may change: a resistance or a
// source voltage in the network.
type Slot struct {
	Ref  string // part reference
	Role string // "", "a-wiper", "wiper-b", "dcr", "leak", "half-a", "half-b", "winding"…
	Kind ElemKind
	// MainsFed: a source rectified from a power-transformer winding; its
	// volts (the part's output at the design's mains) follow the mains
	// and variac (see rectifiedVolts).
	MainsFed bool
	handle   int
}

// Section is one amplifying valve section in the network.
type Section struct {
	Ref     string // valve reference
	Section string // "A", "B" or ""
	Type    *valves.Type
	Pentode bool
	// Nodes of plate, screen (pentodes), grid, cathode.
	P, G2, G, K int
	handle      int
	tri         *valves.TriodeDevice
	pen         *valves.PentodeDevice
}

// Heater is one valve heater on a winding, or in the series heater string
// (Winding nil, InString true).
type Heater struct {
	Ref          string
	Winding      *design.Winding
	InString     bool
	RatedVolts   float64
	RatedAmps    float64
	Transformer  *design.PowerTransformerPart
	WindingIndex int
}

// Model is a design compiled for solving.
type Model struct {
	D   *design.Design
	ckt *mna.Circuit
	// points is Points, worked out once (the model's structure does not
	// change after Build).
	pointsOnce sync.Once
	points     []PointDef
	Slots      []Slot
	Nominal    []float64 // nominal value per slot
	Sections   []*Section
	Heaters    []Heater
	// Regulators are the gas regulator valves (struck) in the network.
	Regulators []*Regulator
	// Diodes are the plates of wired signal-diode sections.
	Diodes []*DiodePlate
	// String is the series heater string of a transformerless set (nil
	// when the heaters are on windings); DropSlots are its droppers'
	// value slots.
	String    *design.HeaterString
	DropSlots []int

	// The HT supply, when the design has a rectifier.
	HT *HTSupply
	// aux are the rectifiers other than the HT one (AuxRects).
	aux        []*AuxRect
	srcHandle  int // Thevenin voltage source driving the first filter net
	srcRHandle int // its series resistance
	slotByRef  map[string][]int
	nodeOf     map[string]int
	slotNets   [][2]string
	acOnly     map[string]bool // nets that carry only heater AC
	meterSlot  map[string]int
	gasSlot    map[int]int // section index → its plate-to-grid (gas current) slot
	pkSlot     map[int]int // section index → its plate-to-cathode (internal short) slot
}

// MeterSlot returns the value slot of the meter position on a net: an
// open resistance to chassis (Inf in the nominal values) that a meter's
// input resistance replaces to model loading. ok is false for nets not in
// the DC network.
func (m *Model) MeterSlot(net string) (slot int, ok bool) {
	slot, ok = m.meterSlot[net]
	return slot, ok
}

// HTSupply describes the rectifier and filter as the supply simulation
// sees them.
type HTSupply struct {
	Transformer *design.Part    // nil when fed straight from the mains
	Winding     *design.Winding // nil when fed straight from the mains
	// Line is the path from the mains to the rectifier of a
	// transformerless set (nil with a transformer): the source is the
	// mains at ratio 1, its series resistance the path's resistors
	// (LineSlots, their value slots).
	Line      *design.LineFeed
	LineSlots []int
	Rectifier *design.Part
	Topology  supply.Topology
	Rect      supply.Rectifier
	// VrmsOC is the open-circuit rms volts (per half for a centre tap) at
	// the transformer's rated primary volts; Rs the source resistance per
	// conducting path referred to the secondary.
	VrmsOC, Rs float64
	// Stages are the filter nets from the rectifier outwards: Nets[i] is
	// the net of stage i, SeriesRefs[i] the part feeding it from its
	// parent ("" for a capacitor-input reservoir), CapRefs[i] its shunt
	// capacitors.
	Nets       []string
	Parent     []int
	SeriesRefs []string
	CapRefs    [][]string
	// ChokeInput: stage 0 is fed through a choke straight from the rectifier.
	ChokeInput bool
	// RectNet is the rectifier's output net (equal to Nets[0] for
	// capacitor input).
	RectNet string
	// Doubler is the HT's voltage doubler (nil for other rectifiers);
	// Rectifier is then its first diode.
	Doubler *Doubler
}

// Node returns the network node of a net, and whether the net is in the
// DC network.
func (m *Model) Node(net string) (int, bool) {
	n, ok := m.nodeOf[net]
	return n, ok
}

// SlotsOf returns the indices of a part's value slots.
func (m *Model) SlotsOf(ref string) []int { return m.slotByRef[ref] }

// NumNodes is the number of network nodes, ground included.
func (m *Model) NumNodes() int { return m.ckt.NumNodes() }

// minOhms keeps tiny DC resistances (fuses, heater windings) finite.
const minOhms = 1e-3

func (m *Model) node(net string) int {
	if net == m.D.Ground {
		return 0
	}
	if n, ok := m.nodeOf[net]; ok {
		return n
	}
	n := m.ckt.Node(net)
	m.nodeOf[net] = n
	return n
}

func (m *Model) addR(ref, role, a, b string, ohms float64) int {
	if ohms < minOhms {
		ohms = minOhms
	}
	h := m.ckt.AddResistor(m.node(a), m.node(b), ohms)
	m.Slots = append(m.Slots, Slot{Ref: ref, Role: role, Kind: ElemResistance, handle: h})
	m.Nominal = append(m.Nominal, ohms)
	m.slotNets = append(m.slotNets, [2]string{a, b})
	i := len(m.Slots) - 1
	m.slotByRef[ref] = append(m.slotByRef[ref], i)
	return i
}

// addPrivateR adds a resistance slot on a private node of its own (held
// to chassis by a fixed resistor besides), so that it carries no current
// in the DC network: a mains-side part whose value a model outside the
// network reads.
func (m *Model) addPrivateR(ref string, ohms float64) int {
	n := m.node("~" + ref)
	m.ckt.AddResistor(n, 0, 1)
	return m.addR(ref, "", "~"+ref, m.D.Ground, ohms)
}

// Build compiles a design that loaded without errors.
func Build(d *design.Design) (*Model, error) {
	m := &Model{D: d, ckt: mna.New(), slotByRef: map[string][]int{}, nodeOf: map[string]int{},
		srcHandle: -1, srcRHandle: -1}
	m.ckt.SetGround(d.Ground)
	m.nodeOf[d.Ground] = 0
	ht, aux, err := findHT(d)
	if err != nil {
		return nil, err
	}
	m.HT, m.aux = ht, aux
	skip := map[string]bool{} // parts folded into the supply model
	if ht != nil && ht.ChokeInput {
		skip[ht.SeriesRefs[0]] = true
	}
	// The mains side of a transformerless set is AC only: the rectifier's
	// series resistors and the heater string's droppers are value slots
	// (for tolerances and faults) on private nodes, out of the DC
	// network; the supply model and the heater string read them.
	private := map[string]*[]int{}
	if ht != nil && ht.Line != nil {
		for _, ref := range ht.Line.Series {
			private[ref] = &ht.LineSlots
		}
	}
	m.doublerPrivate(private)
	if hs, err := d.SeriesHeaters(); err == nil && hs != nil {
		m.String = hs
		for _, ref := range hs.Droppers {
			private[ref] = &m.DropSlots
		}
	}
	for _, p := range d.Parts {
		if skip[p.Ref] {
			continue
		}
		if dst, ok := private[p.Ref]; ok {
			*dst = append(*dst, m.addPrivateR(p.Ref, p.Value))
			continue
		}
		switch p.Kind {
		case design.Resistor:
			m.addR(p.Ref, "", p.Terminals[0].Net, p.Terminals[1].Net, p.Value)
		case design.Choke:
			m.addR(p.Ref, "dcr", p.Terminals[0].Net, p.Terminals[1].Net, p.DCR)
		case design.Pot:
			a, b := p.Terminals[0].Net, p.Terminals[1].Net
			w := p.Terminals[2].Net
			m.addR(p.Ref, "a-wiper", a, w, p.Value*p.Setting)
			m.addR(p.Ref, "wiper-b", w, b, p.Value*(1-p.Setting))
		case design.Capacitor:
			leak := math.Inf(1)
			if p.Leakage > 0 {
				leak = p.Leakage
			}
			m.addR(p.Ref, "leak", p.Terminals[0].Net, p.Terminals[1].Net, leak)
		case design.BiasSupply, design.DCSupply:
			out, ref := p.Terminals[0].Net, p.Terminals[1].Net
			inner := "~" + p.Ref
			h := m.ckt.AddVSource(m.node(inner), m.node(ref), p.Value)
			m.Slots = append(m.Slots, Slot{Ref: p.Ref, Role: "volts", Kind: ElemSource, MainsFed: p.MainsFed, handle: h})
			m.Nominal = append(m.Nominal, p.Value)
			m.slotNets = append(m.slotNets, [2]string{out, ref})
			m.slotByRef[p.Ref] = append(m.slotByRef[p.Ref], len(m.Slots)-1)
			m.addR(p.Ref, "dcr", inner, out, p.DCR)
		case design.OutputTransformer:
			m.addOutputTransformer(p)
		case design.PowerTransformer:
			for _, w := range p.PT.Windings {
				if ht != nil && w == ht.Winding {
					continue // the HT winding lives in the supply model
				}
				r := w.DCR
				if r == 0 {
					r = 0.05
				}
				if w.Centre != "" {
					m.addR(p.Ref, w.Name+".half-a", w.Centre, w.Ends[0], r/2)
					m.addR(p.Ref, w.Name+".half-b", w.Centre, w.Ends[1], r/2)
				} else {
					m.addR(p.Ref, w.Name, w.Ends[0], w.Ends[1], r)
				}
			}
		case design.Valve:
			m.addValve(p)
		}
	}
	if ht != nil {
		top := m.node(ht.Nets[0])
		inner := m.node("~supply")
		m.srcHandle = m.ckt.AddVSource(inner, 0, 0)
		m.srcRHandle = m.ckt.AddResistor(inner, top, 1)
	}
	m.addDoublerMid()
	m.addAux()
	m.addHeaterCathodeSlots()
	m.addGasSlots()
	m.addPlateCathodeSlots()
	m.acOnly = acOnlyNets(d)
	m.auxACOnly()
	// A meter slot on every DC net: open (Inf) unless a meter's input
	// resistance is placed there to show the reading a real meter gives.
	m.meterSlot = map[string]int{}
	for _, net := range d.NetNames() {
		if _, ok := m.nodeOf[net]; !ok || net == d.Ground || m.acOnly[net] {
			continue
		}
		m.meterSlot[net] = m.addR("meter:"+net, "meter", net, d.Ground, math.Inf(1))
	}
	if len(m.Sections) == 0 && len(m.Regulators) == 0 && ht == nil {
		return nil, fmt.Errorf("%s: nothing to solve: no amplifying valves and no HT supply", d.File)
	}
	return m, nil
}

// addOutputTransformer puts an output transformer's windings in the
// network as their DC resistances: the primary (halves, split at screen
// taps) and, when wired, the secondary.
func (m *Model) addOutputTransformer(p *design.Part) {
	for _, sg := range p.OT.Segments() {
		m.addR(p.Ref, sg.Role, sg.A, sg.B, sg.Ohms)
	}
}

func (m *Model) addValve(p *design.Part) {
	vp := p.Valve
	vt := vp.Type
	// Heater.
	if m.String != nil {
		for _, ref := range m.String.Valves {
			if ref == p.Ref {
				m.Heaters = append(m.Heaters, Heater{Ref: p.Ref, InString: true, RatedVolts: vp.HeaterVolts, RatedAmps: vp.HeaterAmps})
			}
		}
	}
	for _, pp := range m.D.PartsOfKind(design.PowerTransformer) {
		for wi, w := range pp.PT.Windings {
			e := map[string]bool{w.Ends[0]: true, w.Ends[1]: true}
			if e[vp.HeaterNets[0]] && e[vp.HeaterNets[1]] {
				m.Heaters = append(m.Heaters, Heater{Ref: p.Ref, Winding: w, RatedVolts: vp.HeaterVolts,
					RatedAmps: vp.HeaterAmps, Transformer: pp.PT, WindingIndex: wi})
			}
		}
	}
	if vt.Kind == valves.Rectifier {
		return // in the supply model
	}
	if vt.Kind == valves.Regulator {
		m.addRegulator(p)
		return
	}
	secs := make([]string, 0, len(vp.Sections))
	for s := range vp.Sections {
		secs = append(secs, s)
	}
	sort.Strings(secs)
	for _, s := range secs {
		if vp.Unused[s] {
			continue
		}
		e := vp.Sections[s]
		// A multi-function valve's section takes the kind, model and
		// limits of its unit type; the name and pins stay the valve's.
		st := vt.SectionType(s, m.D.SideValves)
		if st != nil && st.Kind == valves.Diode && st.Wireable() {
			m.addDiodes(p, s, st)
			continue
		}
		if st == nil || (st.Kind != valves.Triode && st.Kind != valves.Pentode) {
			continue // the loader refuses wired sections it cannot model
		}
		sec := &Section{Ref: p.Ref, Section: s, Type: st, Pentode: st.Kind == valves.Pentode,
			P: m.node(e[valves.Plate]), G: m.node(e[valves.Grid]), K: m.node(e[valves.Cathode])}
		if sec.Pentode {
			sec.G2 = m.node(e[valves.Screen])
			sec.pen = &valves.PentodeDevice{P: sec.P, G2: sec.G2, G1: sec.G, K: sec.K, Model: st.Model}
			sec.handle = m.ckt.AddDevice(sec.pen)
		} else {
			sec.tri = &valves.TriodeDevice{P: sec.P, G: sec.G, K: sec.K, Model: st.Model}
			sec.handle = m.ckt.AddDevice(sec.tri)
		}
		m.Sections = append(m.Sections, sec)
	}
}

// Regulator is a cold-cathode gas regulator in the network, struck: its
// law (valves.GasLaw) as a resistor slot (role "gas": the incremental
// resistance, opened when the valve will not strike or is dead) from the
// anode to an inner node, and the offset-and-knee device from there to
// the cathode.
type Regulator struct {
	Ref     string
	Type    *valves.Type
	Law     valves.GasLaw
	Anode   string // nets
	Cathode string
	Slot    int // the "gas" resistance slot
	dev     *valves.GasDevice
}

func (m *Model) addRegulator(p *design.Part) {
	e := p.Valve.Sections[""]
	law := valves.GasLawOf(p.Valve.Type.Gas)
	inner := "~" + p.Ref + ".gas"
	slot := m.addR(p.Ref, "gas", e[valves.Anode], inner, law.R)
	dev := &valves.GasDevice{A: m.node(inner), K: m.node(e[valves.Cathode]), Offset: law.Offset, Diode: law.Junction}
	m.ckt.AddDevice(dev)
	m.Regulators = append(m.Regulators, &Regulator{Ref: p.Ref, Type: p.Valve.Type, Law: law,
		Anode: e[valves.Anode], Cathode: e[valves.Cathode], Slot: slot, dev: dev})
}

// regulator returns the regulator of a valve reference, or nil.
func (m *Model) regulator(ref string) *Regulator {
	for _, rg := range m.Regulators {
		if rg.Ref == ref {
			return rg
		}
	}
	return nil
}

// RegulatorCurrent returns a regulator's current, anode to cathode.
func (m *Model) RegulatorCurrent(op *OP, r *Regulator) float64 {
	for i, x := range m.Regulators {
		if x == r && i < len(op.Regulators) {
			return op.Regulators[i]
		}
	}
	return 0
}

// Name returns "V1A" or "V2" for a section.
func (s *Section) Name() string { return s.Ref + s.Section }

// findHT finds the HT rectifier and walks its filter outwards; the other
// rectifiers are auxiliary supplies (chooseHT says which is which).
func findHT(d *design.Design) (*HTSupply, []*AuxRect, error) {
	var windings []*design.Winding
	var tr *design.Part
	for _, p := range d.PartsOfKind(design.PowerTransformer) {
		tr = p
		windings = append(windings, p.PT.Windings...)
	}
	windingOf := func(net string) *design.Winding {
		for _, w := range windings {
			if w.Ends[0] == net || w.Ends[1] == net {
				return w
			}
		}
		return nil
	}
	dbl, err := findDoubler(d)
	if err != nil {
		return nil, nil, err
	}
	var cands []rectCandidate
	if dbl != nil {
		cands = append(cands, doublerCandidate(dbl, tr, windingOf))
	}
	for _, p := range d.Parts {
		if dbl.isDiode(p) {
			continue
		}
		var anodes []string
		var out string
		var rect supply.Rectifier
		topo := supply.CentreTap
		switch {
		case p.Kind == design.Rectifier:
			dd := p.Rect.Diode
			rect = supply.Rectifier{Kind: supply.Silicon, Vf: siliconDrop(dd), Rd: dd.Rs}
			out = p.Rect.Plus
			anodes = p.RectifierAnodes()
			switch {
			case p.Rect.Bridge:
				topo = supply.Bridge
			case len(anodes) == 1:
				topo = supply.HalfWave
			}
		case p.Kind == design.Valve && p.Valve.Type.Kind == valves.Rectifier:
			anodes = p.RectifierAnodes()
			out = p.Valve.Sections[""][valves.Cathode]
			rect = supply.Rectifier{Kind: supply.Valve, Perveance: p.Valve.Type.Perveance}
			if len(anodes) == 1 {
				topo = supply.HalfWave
			}
		default:
			continue
		}
		cand := rectCandidate{p: p}
		if p.Kind == design.Rectifier {
			a, err := auxCandidate(d, p, windingOf)
			if err == nil {
				a.VrmsOC, a.Rs = HeaterWindingSource(a.Winding, tr.PT)
				cand.aux = a
			} else if windingOf(anodes[0]) == nil {
				if _, ok := d.LineFeedTo(anodes[0]); !ok || tr != nil {
					return nil, nil, err
				}
			}
		}
		w := windingOf(anodes[0])
		switch {
		case w == nil:
			if lf, ok := d.LineFeedTo(anodes[0]); ok && tr == nil && topo == supply.HalfWave {
				cand.ht = &HTSupply{Line: &lf, Rectifier: p, Topology: topo, Rect: rect, RectNet: out}
			} else if cand.aux == nil {
				return nil, nil, fmt.Errorf("%s:%d:%d: %s: rectifier not fed from a transformer winding", d.File, p.Pos.Line, p.Pos.Col, p.Ref)
			}
		case p.Kind != design.Rectifier || !p.Rect.Bridge || p.Rect.Plus != d.Ground:
			cand.ht = &HTSupply{Transformer: tr, Winding: w, Rectifier: p, Topology: topo, Rect: rect, RectNet: out}
			cand.volts = w.Volts
		}
		cands = append(cands, cand)
	}
	ht, aux, err := chooseHT(d, cands)
	if err != nil || ht == nil {
		return nil, aux, err
	}
	if ht.Line != nil {
		// Straight off the mains: the source is the mains itself (ratio
		// 1), behind the path's resistors.
		ht.VrmsOC = d.Mains.Volts
		ht.Rs = ht.Line.Ohms
		return ht, aux, ht.filter(d)
	}
	// Source: open-circuit volts and resistance per conducting path.
	pt := ht.Transformer.PT
	w := ht.Winding
	perPath := w.Volts // centre tap: each half
	secDCR := w.DCR
	if ht.Topology == supply.CentreTap {
		secDCR = w.DCR / 2
	}
	ratio := perPath / pt.PrimaryVolts
	rs := secDCR + pt.PrimaryDCR*ratio*ratio
	rated := w.RatedAmps
	if rated == 0 {
		rated = 0.1
	}
	switch {
	case w.DCR > 0 || pt.PrimaryDCR > 0:
		// Rated volts are at rated current: open-circuit volts are higher by
		// the drop in the windings (common practice for small transformers).
		ht.VrmsOC = perPath + rated*rs
	default:
		reg := pt.Regulation
		if reg == 0 {
			reg = 0.08 // common practice for a small mains transformer
		}
		ht.VrmsOC = perPath * (1 + reg)
		rs = perPath * reg / rated
	}
	ht.Rs = rs
	return ht, aux, ht.filter(d)
}

// filter walks the filter tree from the rectifier outwards.
func (ht *HTSupply) filter(d *design.Design) error {
	isFilterCap := func(p *design.Part, net string) bool {
		if p.Kind != design.Capacitor || p.Value < 0.5e-6 {
			return false
		}
		a, b := p.Terminals[0].Net, p.Terminals[1].Net
		return (a == net && b == d.Ground) || (b == net && a == d.Ground)
	}
	capsOn := func(net string) []string {
		var refs []string
		for _, u := range d.Nets[net] {
			if p := d.ByRef[u.Ref]; p != nil && isFilterCap(p, net) {
				refs = append(refs, p.Ref)
			}
		}
		return refs
	}
	visited := map[string]bool{}
	addStage := func(net string, parent int, series string) {
		ht.Nets = append(ht.Nets, net)
		ht.Parent = append(ht.Parent, parent)
		ht.SeriesRefs = append(ht.SeriesRefs, series)
		ht.CapRefs = append(ht.CapRefs, capsOn(net))
		visited[net] = true
	}
	if ht.Doubler != nil {
		visited[ht.Doubler.Mid] = true // its own node, not a filter stage
	}
	if len(capsOn(ht.RectNet)) > 0 || ht.Doubler != nil {
		addStage(ht.RectNet, -1, "")
	} else {
		for _, u := range d.Nets[ht.RectNet] {
			p := d.ByRef[u.Ref]
			if p == nil || p.Kind != design.Choke {
				continue
			}
			other := p.Terminals[0].Net
			if other == ht.RectNet {
				other = p.Terminals[1].Net
			}
			if len(capsOn(other)) > 0 {
				ht.ChokeInput = true
				visited[ht.RectNet] = true
				addStage(other, -1, p.Ref)
				break
			}
		}
		if !ht.ChokeInput {
			p := ht.Rectifier
			return fmt.Errorf("%s:%d:%d: %s: the rectifier output %s has no reservoir capacitor and no choke into one: expected a capacitor or a choke-input filter",
				d.File, p.Pos.Line, p.Pos.Col, p.Ref, ht.RectNet)
		}
	}
	for i := 0; i < len(ht.Nets); i++ {
		net := ht.Nets[i]
		for _, u := range d.Nets[net] {
			p := d.ByRef[u.Ref]
			if p == nil || (p.Kind != design.Resistor && p.Kind != design.Choke) {
				continue
			}
			other := p.Terminals[0].Net
			if other == net {
				other = p.Terminals[1].Net
			}
			if visited[other] || other == d.Ground || len(capsOn(other)) == 0 {
				continue
			}
			addStage(other, i, p.Ref)
		}
	}
	return nil
}

// siliconDrop is the diode's junction drop at 100 mA, Shockley's law
// V = n·Vt·ln(I/Is + 1), the knee the supply model's Vf + Rd·I line uses.
func siliconDrop(d valves.SiliconDiode) float64 {
	if d.Is <= 0 || d.N <= 0 {
		return 0.7
	}
	return d.N * 0.025852 * math.Log(0.1/d.Is+1)
}

// acOnlyNets finds nets joined only to heater pins and non-HT windings:
// they carry heater AC, and their DC level is not a useful reading.
func acOnlyNets(d *design.Design) map[string]bool {
	out := map[string]bool{}
	for net, uses := range d.Nets {
		if net == d.Ground {
			continue
		}
		only := true
		for _, u := range uses {
			p := d.ByRef[u.Ref]
			switch {
			case p == nil:
			case p.Kind == design.PowerTransformer:
			case p.Kind == design.Valve:
				pin := 0
				fmt.Sscanf(u.Terminal, "pin %d", &pin)
				e := ""
				for _, vp := range p.Valve.Type.Pins {
					if vp.Number == pin {
						e = vp.Electrode
					}
				}
				if e != valves.Heater && e != valves.HeaterCT {
					only = false
				}
			default:
				only = false
			}
		}
		out[net] = only
	}
	return out
}
