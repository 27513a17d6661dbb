package amp

import (
	"fmt"
	"math"

	"pinwalk/expect/design"
	"pinwalk/expect/supply"
)

// Doubler is an HT voltage doubler written out as its parts: two silicon
// diodes (each a one-anode rectifier part) and two capacitors off one
// winding (HTSupply.Doubler). It is simulated in expect/supply as what it
// is (supply.FullDoubler or supply.HalfDoubler), each capacitor holding
// its own volts; the network sees the output as the HT's Thevenin line
// and the middle net (Mid) as a second source, the simulated middle's
// mean volts behind the doubler's own output resistance there, so every
// capacitor net has its own volts and band.
//
// Full-wave (Delon): the winding from Mid (the capacitors' junction) to
// Live; Diodes[0] from Live up to the output, Diodes[1] from chassis up
// to Live; Caps[0] the output to Mid, Caps[1] Mid to chassis.
//
// Half-wave (Greinacher): the winding from chassis to Live; Caps[0] the
// pump capacitor from Live to Mid, Diodes[0] from chassis up to Mid,
// Diodes[1] from Mid up to the output; Caps[1] the reservoir, the output
// to chassis (also stage 0's capacitor).
type Doubler struct {
	Full      bool
	Diodes    [2]*design.Part
	Caps      [2]string
	Mid, Live string
	// Bleeders are the resistors straight across each capacitor, by ref
	// ("" for none). They are in the doubler's simulation (where they
	// give a capacitor whose diode is open its DC path), and in the
	// network only as value slots on private nodes (as a transformerless
	// set's mains-side resistors are), so that their current is not
	// counted twice; Resistors reads their heat from their nets' volts.
	Bleeders   [2]string
	bleedSlots [2][]int

	// srcNets are the doubler's own nets the network holds at their
	// simulated volts: the middle net, and a half-wave doubler's winding
	// end (a node there through the pump capacitor); srcH, srcRH their
	// sources and resistances.
	line        *design.LineFeed // a transformerless doubler's path from the mains
	srcNets     []string
	srcH, srcRH []int
}

// doublerState is a solver's line for the doubler's middle net: the one
// now set and the one of the last full solve at the design's mains, for
// fast solves.
type doublerState struct {
	now, nowR, cached, cachedR [2]float64
}

// Topology is the doubler's supply topology.
func (db *Doubler) Topology() supply.Topology {
	if db.Full {
		return supply.FullDoubler
	}
	return supply.HalfDoubler
}

// DiodeIndex returns which of the doubler's diodes a part is (0 or 1), or
// -1.
func (db *Doubler) DiodeIndex(p *design.Part) int {
	if db == nil {
		return -1
	}
	for i, d := range db.Diodes {
		if d == p {
			return i
		}
	}
	return -1
}

// CapIndex returns which of the doubler's capacitors a part reference is
// (0 or 1), or -1.
func (db *Doubler) CapIndex(ref string) int {
	if db == nil {
		return -1
	}
	for i, c := range db.Caps {
		if c == ref {
			return i
		}
	}
	return -1
}

// findDoubler takes the design's voltage doubler (design.VoltageDoubler
// recognises one) into the model; nil when it has none.
func findDoubler(d *design.Design) (*Doubler, error) {
	dd, err := d.VoltageDoubler()
	if err != nil || dd == nil {
		return nil, err
	}
	db := &Doubler{Full: dd.Full, Diodes: dd.Diodes, Caps: [2]string{dd.Caps[0].Ref, dd.Caps[1].Ref}, Mid: dd.Mid, Live: dd.Live, line: dd.Line}
	for i, r := range dd.Bleeders {
		if r != nil {
			db.Bleeders[i] = r.Ref
		}
	}
	return db, nil
}

// doublerCandidate is a doubler as the HT candidate.
func doublerCandidate(db *Doubler, tr *design.Part, windingOf func(string) *design.Winding) rectCandidate {
	p := db.Diodes[0]
	dd := p.Rect.Diode
	w := windingOf(db.Live)
	out := db.Diodes[1].Rect.Plus
	if db.Full {
		out = db.Diodes[0].Rect.Plus
	}
	ht := &HTSupply{Transformer: tr, Winding: w, Rectifier: p, Topology: db.Topology(),
		Rect: supply.Rectifier{Kind: supply.Silicon, Vf: siliconDrop(dd), Rd: dd.Rs}, RectNet: out, Doubler: db, Line: db.line}
	if w == nil {
		// Off the mains (Line): findHT takes the mains as its source.
		ht.Transformer = nil
		return rectCandidate{p: p, ht: ht}
	}
	return rectCandidate{p: p, ht: ht, volts: 2 * w.Volts}
}

// isDoublerPart says whether a part is one of the doubler's diodes.
func (db *Doubler) isDiode(p *design.Part) bool { return db.DiodeIndex(p) >= 0 }

// addDoublerMid puts the doubler's own nets in the network as sources
// behind resistances.
func (m *Model) addDoublerMid() {
	if m.HT == nil || m.HT.Doubler == nil {
		return
	}
	db := m.HT.Doubler
	db.srcNets = []string{db.Mid}
	if !db.Full {
		db.srcNets = append(db.srcNets, db.Live)
	}
	for i, net := range db.srcNets {
		inner := m.node(fmt.Sprintf("~doubler%d", i))
		db.srcH = append(db.srcH, m.ckt.AddVSource(inner, 0, 0))
		db.srcRH = append(db.srcRH, m.ckt.AddResistor(inner, m.node(net), 1))
	}
}

// doublerMidOhms is the middle net's source resistance in the network:
// about a capacitor-input reservoir's 1/(f·C) droop per amp (the droop
// argument of supply's doubler hand checks), the two capacitors together.
func (m *Model) doublerMidOhms(p supply.Params) float64 {
	c := p.Doubler.C1 + p.Doubler.C2
	if !m.HT.Doubler.Full {
		c = p.Doubler.C1
	}
	return 1 / (p.Hz * math.Max(c, 1e-9))
}

// doublerParams fills the doubler's part of the supply parameters from
// the values: the capacitors (scaled by DoublerC), the diodes open.
func (s *Solver) doublerParams(p *supply.Params, v *Values) {
	db := s.m.HT.Doubler
	if db == nil {
		return
	}
	c1 := s.m.D.ByRef[db.Caps[0]].Value * v.DoublerC[0]
	p.Doubler = supply.Doubler{C1: math.Max(c1, 1e-9), Open1: v.DoublerOpen[0], Open2: v.DoublerOpen[1]}
	if db.Full {
		p.Doubler.C2 = math.Max(s.m.D.ByRef[db.Caps[1]].Value*v.DoublerC[1], 1e-9)
	}
	r := [2]*float64{&p.Doubler.R1, &p.Doubler.R2}
	for i, ref := range db.Bleeders {
		if sl := s.m.slotByRef[ref]; ref != "" && len(sl) > 0 && !math.IsInf(v.Slot[sl[0]], 1) {
			*r[i] = v.Slot[sl[0]]
		}
	}
}

// doublerPrivate marks the doubler's bleeders as private value slots.
func (m *Model) doublerPrivate(private map[string]*[]int) {
	if m.HT == nil || m.HT.Doubler == nil {
		return
	}
	db := m.HT.Doubler
	for i, ref := range db.Bleeders {
		if ref != "" {
			private[ref] = &db.bleedSlots[i]
		}
	}
}

// doublerBleeder fills a doubler bleeder's volts, current and heat from
// its own nets (its slot is private); false for any other slot.
func (m *Model) doublerBleeder(op *OP, slot int, r *ResistorOP) bool {
	if m.HT == nil || m.HT.Doubler == nil {
		return false
	}
	db := m.HT.Doubler
	for i := range db.Bleeders {
		if len(db.bleedSlots[i]) == 0 || db.bleedSlots[i][0] != slot {
			continue
		}
		p := m.D.ByRef[db.Bleeders[i]]
		va, _ := m.NetVolts(op, p.Terminals[0].Net)
		vb, _ := m.NetVolts(op, p.Terminals[1].Net)
		ohms := m.Nominal[slot]
		r.Volts, r.Amps = va-vb, (va-vb)/ohms
		r.Watts = math.Abs(r.Volts * r.Amps)
		return true
	}
	return false
}

// doublerLoads turns the loads the network draws into what the doubler
// simulation takes: the output's load as the resistance it shows at its
// volts (a doubler with a diode open has no steady state into a constant
// current: its output collapses into a resistive load), and the current
// the network draws out of the middle net.
func (s *Solver) doublerLoads(p *supply.Params) {
	m := s.m
	db := m.HT.Doubler
	if db == nil {
		return
	}
	out := m.HT.Nets[0]
	mid := s.sol.SourceAmps[m.ckt.VSourceIndex(db.srcH[0])]
	v0 := s.sol.V[m.nodeOf[out]]
	if i := p.Stages[0].LoadA; i > 0 && v0 > 1 {
		p.Stages[0].LoadOhms = v0 / i
		p.Stages[0].LoadA = 0
	}
	p.Doubler.MidLoadA = mid
}

// setDoublerMid holds the middle net at the simulated middle's volts
// (behind its source resistance, at the load the network drew).
func (s *Solver) setDoublerMid(p supply.Params, res supply.Result) {
	db := s.m.HT.Doubler
	if db == nil {
		return
	}
	// The winding end's line: its simulated mean behind the winding's
	// source resistance (the network draws next to nothing there).
	r := [2]float64{s.m.doublerMidOhms(p), math.Max(p.Rs, minOhms)}
	v := [2]float64{res.Mid.Vdc + r[0]*p.Doubler.MidLoadA, res.Live.Vdc}
	for i := range db.srcH {
		if math.IsNaN(v[i]) {
			v[i] = 0
		}
		s.m.ckt.SetSource(db.srcH[i], v[i])
		s.m.ckt.SetResistance(db.srcRH[i], r[i])
	}
	s.dbl.now, s.dbl.nowR = v, r
}

// doublerDead holds the middle net through a dead rectifier's leakage.
func (s *Solver) doublerDead() {
	if db := s.m.HT.Doubler; db != nil {
		for i := range db.srcH {
			s.m.ckt.SetSource(db.srcH[i], 0)
			s.m.ckt.SetResistance(db.srcRH[i], DeadRectOhms)
		}
	}
}

// doublerFast scales the middle net's last full-solve line as the HT's is.
func (s *Solver) doublerFast(scale float64) {
	if db := s.m.HT.Doubler; db != nil && s.dbl.cachedR[0] > 0 {
		for i := range db.srcH {
			s.m.ckt.SetSource(db.srcH[i], s.dbl.cached[i]*scale)
			s.m.ckt.SetResistance(db.srcRH[i], s.dbl.cachedR[i])
		}
	}
}

// perturbFloor is the smallest load step of the perturbed simulation
// that gives the HT's output resistance: 1 mA, or 10 µA for a doubler,
// whose output resistance with a diode open is its bleeder's (100 kΩ and
// more: a 1 mA step would take it below 0 V).
func (s *Solver) perturbFloor() float64 {
	if s.m.HT != nil && s.m.HT.Doubler != nil {
		return 1e-5
	}
	return 1e-3
}
