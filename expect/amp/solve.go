package amp

import (
	"errors"
	"fmt"
	"math"

	"pinwalk/expect/design"
	"pinwalk/expect/mna"
	"pinwalk/expect/supply"
	"pinwalk/expect/valves"
)

// Conditions are the bench conditions of a solve.
type Conditions struct {
	// MainsVolts is the mains at the wall (rms); 0 means the design's
	// nominal mains.
	MainsVolts float64
	// Variac is the fraction of the mains applied to the amplifier,
	// 0 < Variac ≤ 1.3; 0 means 1 (no variac).
	Variac float64
	// ColdValves: no valve conducts (heaters cold, or the cold-start peak
	// of a valve rectifier's slower partner): every section's emission is
	// zero.
	ColdValves bool
}

// Values are the part values of one solve: the nominal values, a tolerance
// sample, or a fault hypothesis.
type Values struct {
	Slot []float64 // per Model.Slots: ohms or volts
	// Koren parameters per Model.Sections.
	Koren []valves.Koren
	// Emission per section: 1 normal, 0 no emission (a dead valve or an
	// open heater), between for a weak valve (scales the saturation limit).
	Emission []float64
	// Per HT stage: shunt capacitance scale (1 nominal; tolerance or a
	// dried-out capacitor).
	StageC []float64
	// HT transformer: open-circuit volts scale (ratio tolerance) and source
	// resistance scale (DCR tolerance).
	HTVolts, HTOhms float64
	// Rectifier emission scale (1 nominal; a weak valve rectifier lowers
	// its perveance); HalfOpen: one half of a full-wave rectifier open.
	RectScale float64
	HalfOpen  bool
	// RectDead: the rectifier passes no current at all (every diode open,
	// a valve rectifier with no emission, the series path out of it
	// open). The winding keeps its volts; the filter gets nothing. An HT
	// volts scale of 0 (an open winding or mains fuse) is dead too.
	RectDead bool
	// Heater winding volts scale (ratio tolerance).
	HeaterVolts float64
	// GasVolts per Model.Regulators: the valve's burning volts above its
	// type's law (0 nominal; a sample's valve-to-valve spread).
	GasVolts []float64
	// CapOpen marks capacitors (by ref) that a fault hypothesis has gone
	// open. It changes no DC value except through StageC; AC analysis reads
	// it. nil means none.
	CapOpen map[string]bool
	// StringOpen: the series heater string is broken (a heater in it
	// open, the rectifier's included): no heater in it lights. An open
	// dropper shows as its slot at +Inf, an amplifying valve's open heater
	// as its emission below 0; this flag is for the heaters neither
	// covers.
	StringOpen bool
	// AuxOpen marks auxiliary rectifiers (by ref, Model.AuxRects) whose
	// diodes are open: their supply gives nothing. nil means none.
	AuxOpen map[string]bool
	// DoublerOpen: an HT voltage doubler's diode open (Doubler.Diodes
	// order); DoublerC: its capacitors' capacitance scale (Doubler.Caps
	// order; 1 nominal).
	DoublerOpen [2]bool
	DoublerC    [2]float64
}

// NominalValues returns a fresh copy of the nominal part values.
func (m *Model) NominalValues() *Values {
	v := &Values{Slot: append([]float64(nil), m.Nominal...), HTVolts: 1, HTOhms: 1, RectScale: 1, HeaterVolts: 1, DoublerC: [2]float64{1, 1}}
	for _, s := range m.Sections {
		v.Koren = append(v.Koren, s.Type.Model)
		v.Emission = append(v.Emission, 1)
	}
	v.GasVolts = make([]float64, len(m.Regulators))
	if m.HT != nil {
		v.StageC = make([]float64, len(m.HT.Nets))
		for i := range v.StageC {
			v.StageC[i] = 1
		}
	}
	return v
}

// Clone returns a deep copy.
func (v *Values) Clone() *Values {
	c := *v
	c.Slot = append([]float64(nil), v.Slot...)
	c.Koren = append([]valves.Koren(nil), v.Koren...)
	c.Emission = append([]float64(nil), v.Emission...)
	c.StageC = append([]float64(nil), v.StageC...)
	c.GasVolts = append([]float64(nil), v.GasVolts...)
	if v.AuxOpen != nil {
		c.AuxOpen = make(map[string]bool, len(v.AuxOpen))
		for k, b := range v.AuxOpen {
			c.AuxOpen[k] = b
		}
	}
	if v.CapOpen != nil {
		c.CapOpen = make(map[string]bool, len(v.CapOpen))
		for k, b := range v.CapOpen {
			c.CapOpen[k] = b
		}
	}
	return &c
}

// SectionOP is one valve section's operating point.
type SectionOP struct {
	Va, Vg2, Vg, Vk  float64 // electrode volts to chassis
	Ia, Ig2, Ig, Ik  float64 // amps into plate, screen and grid; Ik out of the cathode
	Pa, Pg2          float64 // plate and screen dissipation, watts
	HeaterVolts      float64 // rms at the heater pins
	EmissionFraction float64 // saturation emission relative to a fully heated cathode
}

// HeaterOP is one valve heater's state.
type HeaterOP struct {
	Ref         string
	Volts, Amps float64 // rms
}

// WindingOP is the load on one heater winding.
type WindingOP struct {
	Name        string
	Volts, Amps float64 // rms, loaded
	RatedAmps   float64
	Refs        []string
}

// FilterNetOP is one HT filter net.
type FilterNetOP struct {
	Net                string
	Vdc, RippleRms     float64
	RippleFund         float64 // rms of the ripple fundamental
	RipplePP           float64 // peak to peak (full solves only)
	LoadAmps, FeedAmps float64 // drawn at this net; flowing into it from its parent
	ColdPeak           float64 // no valve current, at these conditions
}

// SupplyOP is the HT supply's state.
type SupplyOP struct {
	Nets                  []FilterNetOP
	PeakRectAmps, RmsAmps float64 // per rectifier path
	TotalAmps             float64
	Vth, Rth              float64 // the Thevenin line the network saw
	// DoublerV, DoublerR are a voltage doubler's own nets' lines (its
	// middle net, and a half-wave doubler's winding end: Doubler.srcNets).
	DoublerV, DoublerR   [2]float64
	ConductionDeg        float64
	FixedPointIterations int
	Simulated            bool // false when the fast (linearised) supply was used
	// SecondaryRms is the loaded rms volts at a rectifier plate (per half
	// for a centre tap): open-circuit volts less the rms current\'s drop
	// in the source resistance (an approximation: the drop is not in phase).
	SecondaryRms float64
	// Dead: the supply gives nothing (Values.RectDead or no HT volts):
	// it was not simulated and its nets are held at 0 V through the
	// rectifier's reverse resistance (DeadRectOhms).
	Dead bool
}

// OP is a solved operating point.
type OP struct {
	V        []float64 // node volts, indexed by Model node
	Sections []SectionOP
	// Regulators: each gas regulator's current, anode to cathode, per
	// Model.Regulators.
	Regulators []float64
	Heaters    []HeaterOP
	Windings   []WindingOP
	Supply     *SupplyOP
	// Aux are the lines the auxiliary rectifiers had, per Model.AuxRects.
	Aux    []AuxLine
	Newton int // Newton iterations, all network solves together
	// slotG is each resistive slot's conductance as this point was
	// solved with (0 for a source slot): a slot's current is this
	// point's, whatever the model solved since.
	slotG []float64
}

// NetVolts returns the DC volts of a net and whether it is in the network.
func (m *Model) NetVolts(op *OP, net string) (float64, bool) {
	n, ok := m.nodeOf[net]
	if !ok {
		return 0, false
	}
	return op.V[n], true
}

// SlotCurrent returns the current through a resistive slot from its first
// to its second net.
func (m *Model) SlotCurrent(op *OP, slot int) float64 {
	sl := m.Slots[slot]
	if sl.Kind != ElemResistance || slot >= len(op.slotG) {
		return 0
	}
	a, b := m.ckt.ResistorNodes(sl.handle)
	return (op.V[a] - op.V[b]) * op.slotG[slot]
}

// SlotNets returns the two nets of a resistive slot.
func (m *Model) SlotNets(slot int) (a, b string) {
	return m.slotNets[slot][0], m.slotNets[slot][1]
}

// ErrNoSupply reports a fast solve asked of a model that has no cached
// supply line yet.
var ErrNoSupply = errors.New("amp: fast supply requested before a full solve")

// Solver solves one Model repeatedly. It is not safe for concurrent use;
// give each goroutine its own Model (Build is cheap).
type Solver struct {
	m       *Model
	sol     mna.Solution
	warm    []float64
	opt     mna.Options
	sopt    supply.Options
	lastVth float64
	lastRth float64
	lastSec float64
	haveTh  bool
	nomF    float64 // supply factor of the cached line
	aux     []auxState
	dbl     doublerState
}

// NewSolver returns a solver for m.
func NewSolver(m *Model) *Solver {
	so := supply.DefaultOptions()
	so.StepsPerCycle = 400
	return &Solver{m: m, opt: mna.DefaultOptions(), sopt: so}
}

// Model returns the solver's model.
func (s *Solver) Model() *Model { return s.m }

// emissionFraction is the saturation emission of an oxide cathode at a
// heater voltage ratio r = V/Vrated, relative to rated, by the
// Richardson–Dushman law J = A·T²·exp(−W/kT) with W = 1 eV and 1050 K at
// rated heat (from memory), and the cathode temperature from a radiative
// balance at constant heater resistance (P ∝ V² ∝ T⁴, so T ∝ √r; a
// simplification: a real heater's resistance falls as it cools). It gives
// well under 1 % at half heater volts and about a fifth at 80 %.
func emissionFraction(r float64) float64 {
	if r <= 0 {
		return 0
	}
	const t0 = 1050.0
	const wOverK = 11604.5 // 1 eV / k, kelvin
	t := t0 * math.Sqrt(r)
	return (t / t0) * (t / t0) * math.Exp(-wOverK*(1/t-1/t0))
}

// EmissionFraction is the exported form of the heater-emission law, for
// documentation and tests.
func EmissionFraction(heaterRatio float64) float64 { return emissionFraction(heaterRatio) }

// emissionReserve is the saturation emission of a fully heated cathode as
// a multiple of the largest rated or typical cathode current (common
// practice: a healthy oxide cathode has ample reserve; only the order of
// magnitude matters here, since it acts only when the heater runs cool).
const emissionReserve = 10

func saturationAmps(t *valves.Type) float64 {
	best := t.Limits.CathodeAmps
	for _, r := range t.Rows {
		best = max(best, r.Ia+r.Ig2)
	}
	if best == 0 {
		best = 0.01
	}
	return emissionReserve * best
}

// MainsFactor is the ratio of the volts on the transformer primary under
// conditions c (mains times variac) to its rated primary volts: every
// winding's open-circuit volts scale by it.
func (s *Solver) MainsFactor(c Conditions) float64 { return s.mainsFactor(c) }

// SupplyParams returns the parameters the HT supply simulation of a full
// Solve starts from under conditions c with values v (stage loads zero:
// Solve fills them in from the network), and false when the design has
// no HT rectifier.
func (s *Solver) SupplyParams(c Conditions, v *Values) (supply.Params, bool) {
	if s.m.HT == nil {
		return supply.Params{}, false
	}
	var op OP
	hv := s.heaters(c, v, &op)
	return s.supplyParams(c, v, hv), true
}

// EmissionLimits returns, per Model.Sections, the cathode current (amps)
// at which Solve caps each section's current under conditions c with
// values v (valves.EmissionCap; 0 means no cap, a fully heated cathode).
func (s *Solver) EmissionLimits(c Conditions, v *Values) []float64 {
	var op OP
	lim, _ := s.emissionLimits(c, v, s.heaters(c, v, &op))
	return lim
}

// emissionLimits returns each section's emission cap (amps, 0 = none) and
// its saturation emission relative to a fully heated cathode.
func (s *Solver) emissionLimits(c Conditions, v *Values, heaterVolts map[string]float64) (lim, frac []float64) {
	m := s.m
	lim = make([]float64, len(m.Sections))
	frac = make([]float64, len(m.Sections))
	for i, sec := range m.Sections {
		ef := 1.0
		if hv, ok := heaterVolts[sec.Ref]; ok {
			ef = emissionFraction(hv / m.heaterRated(sec.Ref))
		}
		em := v.Emission[i]
		if em < 0 {
			em = 0 // heater open
		}
		ef *= em
		if c.ColdValves {
			ef = 0
		}
		if ef < 0.999 {
			lim[i] = max(saturationAmps(sec.Type)*ef, 1e-9)
		}
		frac[i] = ef
	}
	return lim, frac
}

func (s *Solver) mainsFactor(c Conditions) float64 {
	mains := c.MainsVolts
	if mains <= 0 {
		mains = s.m.D.Mains.Volts
	}
	variac := c.Variac
	if variac <= 0 {
		variac = 1
	}
	prim := s.m.D.Mains.Volts
	if s.m.HT != nil && s.m.HT.Transformer != nil && s.m.HT.Transformer.PT.PrimaryVolts > 0 {
		prim = s.m.HT.Transformer.PT.PrimaryVolts
	} else if pts := s.m.D.PartsOfKind(design.PowerTransformer); len(pts) > 0 {
		prim = pts[0].PT.PrimaryVolts
	}
	return mains * variac / prim
}

// heaters computes heater volts per valve and winding loads. Heaters are
// taken as constant resistances at their rated operating point; the
// winding's open-circuit volts are its rated volts plus the drop of its
// rated current in its DCR (common practice).
func (s *Solver) heaters(c Conditions, v *Values, op *OP) map[string]float64 {
	f := s.mainsFactor(c) * v.HeaterVolts
	volts := map[string]float64{}
	type wl struct {
		g    float64
		refs []string
		w    *design.Winding
		pt   *design.PowerTransformerPart
	}
	var order []*design.Winding
	loads := map[*design.Winding]*wl{}
	for i, h := range s.m.Heaters {
		_ = i
		if h.InString {
			continue
		}
		l := loads[h.Winding]
		if l == nil {
			l = &wl{w: h.Winding, pt: h.Transformer}
			loads[h.Winding] = l
			order = append(order, h.Winding)
		}
		if v != nil && s.heaterOpen(h.Ref, v) {
			continue
		}
		l.g += h.RatedAmps / h.RatedVolts
		l.refs = append(l.refs, h.Ref)
	}
	for _, w := range order {
		l := loads[w]
		voc, r := HeaterWindingSource(w, l.pt)
		rated := w.RatedAmps
		vl := voc * f / (1 + r*l.g)
		for _, ref := range l.refs {
			volts[ref] = vl
		}
		op.Windings = append(op.Windings, WindingOP{Name: w.Name, Volts: vl, Amps: vl * l.g, RatedAmps: rated, Refs: l.refs})
	}
	if hs := s.m.String; hs != nil {
		s.stringHeaters(c, v, f, volts, op)
	}
	for _, h := range s.m.Heaters {
		vv, ok := volts[h.Ref]
		if !ok {
			op.Heaters = append(op.Heaters, HeaterOP{Ref: h.Ref})
			continue
		}
		op.Heaters = append(op.Heaters, HeaterOP{Ref: h.Ref, Volts: vv, Amps: h.RatedAmps * vv / h.RatedVolts})
	}
	return volts
}

// SeriesStringName names the series heater string among the heater
// windings of an operating point.
const SeriesStringName = "series heater string"

// stringHeaters sets the volts of each heater of the series string: one
// current, the mains (through the variac) over the droppers and every
// heater at its rated resistance (rated volts over rated amps, as for a
// heater on a winding); each heater's volts are its share. One heater
// open, or the dropper, and the string carries nothing: every heater is
// cold.
func (s *Solver) stringHeaters(c Conditions, v *Values, f float64, volts map[string]float64, op *OP) {
	hs := s.m.String
	mains := s.m.D.Mains.Volts * f
	r := 0.0
	for _, sl := range s.m.DropSlots {
		r += v.Slot[sl]
	}
	open := math.IsInf(r, 1) || (v != nil && v.StringOpen)
	var refs []string
	for _, h := range s.m.Heaters {
		if !h.InString {
			continue
		}
		refs = append(refs, h.Ref)
		r += h.RatedVolts / h.RatedAmps
		if v != nil && s.heaterOpen(h.Ref, v) {
			open = true
		}
	}
	amps := 0.0
	if !open && r > 0 {
		amps = mains / r
	}
	for _, h := range s.m.Heaters {
		if h.InString {
			volts[h.Ref] = amps * h.RatedVolts / h.RatedAmps
		}
	}
	op.Windings = append(op.Windings, WindingOP{Name: SeriesStringName, Volts: mains, Amps: amps, RatedAmps: hs.Amps, Refs: refs})
}

// HeaterWindingSource returns the open-circuit rms volts (at the
// transformer's rated primary volts) and the source resistance (winding
// DCR plus reflected primary DCR, ohms) of a heater or other non-HT
// winding: its rated volts are at its rated current, so the open-circuit
// volts add that current's drop in the source resistance (common
// practice). A winding whose DCRs are unknown rises about 5 % unloaded
// (common practice for small heater windings).
func HeaterWindingSource(w *design.Winding, pt *design.PowerTransformerPart) (vocRms, ohms float64) {
	r := w.DCR
	if pt.PrimaryVolts > 0 {
		ratio := w.Volts / pt.PrimaryVolts
		r += pt.PrimaryDCR * ratio * ratio
	}
	voc := w.Volts + w.RatedAmps*r
	if r == 0 {
		voc = w.Volts * 1.05
		r = 0.05 * w.Volts / max(w.RatedAmps, 0.1)
	}
	return voc, r
}

func (s *Solver) heaterOpen(ref string, v *Values) bool {
	for i, sec := range s.m.Sections {
		if sec.Ref == ref && v.Emission[i] < 0 {
			return true
		}
	}
	return false
}

// applyValues loads part values into the network.
func (s *Solver) applyValues(c Conditions, v *Values, heaterVolts map[string]float64) []float64 {
	m := s.m
	mf := s.mainsFactor(c)
	for i, sl := range m.Slots {
		switch sl.Kind {
		case ElemResistance:
			r := v.Slot[i]
			if r < minOhms && !math.IsInf(r, 1) {
				r = minOhms
			}
			m.ckt.SetResistance(sl.handle, r)
		case ElemSource:
			x := v.Slot[i]
			if sl.MainsFed {
				x = RectifiedVolts(x, mf)
			}
			m.ckt.SetSource(sl.handle, x)
		}
	}
	for i, rg := range m.Regulators {
		if c.ColdValves {
			// At switch-on the regulator is dark until its anode reaches
			// the striking volts: the cold-start solve shows what it sees.
			m.ckt.SetResistance(m.Slots[rg.Slot].handle, math.Inf(1))
		}
		rg.dev.Offset = rg.Law.Offset
		if i < len(v.GasVolts) {
			rg.dev.Offset += v.GasVolts[i]
		}
	}
	lim, frac := s.emissionLimits(c, v, heaterVolts)
	s.diodeEmission(c, frac)
	for i, sec := range m.Sections {
		if sec.tri != nil {
			sec.tri.Model = v.Koren[i]
			sec.tri.EmissionLimit = lim[i]
		} else {
			sec.pen.Model = v.Koren[i]
			sec.pen.EmissionLimit = lim[i]
		}
	}
	return frac
}

// BiasDiodeDrop is the forward drop of the silicon diode of a rectified
// bias winding (common practice: about 0.7 V).
const BiasDiodeDrop = 0.7

// RectifiedVolts is the unloaded output of a supply rectified from a
// transformer winding whose output is v0 (signed) at the design's mains,
// at f times the transformer's rated primary volts: the winding's peak
// scales with its primary, the diode's drop does not (a peak-rectified
// winding: Vout = f·(|v0| + Vd) − Vd, and 0 once the peak no longer
// clears the diode).
func RectifiedVolts(v0, f float64) float64 {
	out := math.Max(0, f*(math.Abs(v0)+BiasDiodeDrop)-BiasDiodeDrop)
	return math.Copysign(out, v0)
}

func (m *Model) heaterRated(ref string) float64 {
	for _, h := range m.Heaters {
		if h.Ref == ref {
			return h.RatedVolts
		}
	}
	return 1
}

// supplyParams builds the supply simulation's parameters.
func (s *Solver) supplyParams(c Conditions, v *Values, hv map[string]float64) supply.Params {
	ht := s.m.HT
	f := s.mainsFactor(c)
	p := supply.Params{Topology: ht.Topology, Vrms: ht.VrmsOC * f * v.HTVolts, Rs: ht.Rs * v.HTOhms,
		Hz: s.m.D.Mains.Hz, Rect: ht.Rect}
	if ht.Line != nil {
		// Off the mains: the series resistors as they are in these
		// values; one of them open leaves no HT at all.
		rs := 0.0
		for _, sl := range ht.LineSlots {
			rs += v.Slot[sl]
		}
		if math.IsInf(rs, 1) {
			p.Vrms = 0
		} else {
			p.Rs = rs * v.HTOhms
		}
	}
	p.Rect.Perveance *= v.RectScale
	if ht.Rect.Kind == supply.Valve {
		// A valve rectifier's filament runs cool on a low variac setting:
		// its emission caps the current like any cathode's.
		rp := ht.Rectifier
		if volts, ok := hv[rp.Ref]; ok {
			if ef := emissionFraction(volts / s.m.heaterRated(rp.Ref)); ef < 0.999 {
				p.Rect.MaxAmps = max(saturationAmps(rp.Valve.Type)*ef, 1e-9)
			}
		}
	}
	if v.HalfOpen && p.Topology == supply.CentreTap {
		// One half of a full-wave rectifier open: the other half works on
		// alone as a half-wave rectifier on its half-winding.
		p.Topology = supply.HalfWave
	}
	if c.ColdValves && ht.Rect.Kind == supply.Valve {
		// A cold valve rectifier conducts nothing; the cold-start peak is
		// taken with a warm rectifier and cold amplifier valves instead.
		p.Rect.Perveance = ht.Rect.Perveance
	}
	for i, net := range ht.Nets {
		st := supply.Stage{Parent: ht.Parent[i]}
		for _, ref := range ht.CapRefs[i] {
			st.ShuntC += s.m.D.ByRef[ref].Value
		}
		st.ShuntC *= v.StageC[i]
		if ref := ht.SeriesRefs[i]; ref != "" {
			part := s.m.D.ByRef[ref]
			if part.Kind == design.Choke {
				st.SeriesL = part.Value
				st.SeriesR = part.DCR
			} else {
				st.SeriesR = part.Value
			}
			if sl := s.m.slotByRef[ref]; len(sl) > 0 {
				st.SeriesR = v.Slot[sl[0]]
			}
		}
		if st.ShuntC <= 0 {
			st.ShuntC = 1e-9
		}
		_ = net
		p.Stages = append(p.Stages, st)
	}
	s.doublerParams(&p, v)
	return p
}

// stageLoads reads each filter net's DC load from a network solution.
func (s *Solver) stageLoads(p *supply.Params, sp *SupplyOP) {
	ht := s.m.HT
	m := s.m
	feed := make([]float64, len(ht.Nets))
	feed[0] = s.sol.SourceAmps[m.ckt.VSourceIndex(m.srcHandle)]
	for i := 1; i < len(ht.Nets); i++ {
		sl := m.slotByRef[ht.SeriesRefs[i]][0]
		cur := m.ckt.ResistorCurrent(m.Slots[sl].handle, s.sol.V)
		if m.slotNets[sl][0] != ht.Nets[ht.Parent[i]] {
			cur = -cur
		}
		feed[i] = cur
	}
	for i := range ht.Nets {
		load := feed[i]
		for j := range ht.Nets {
			if ht.Parent[j] == i {
				load -= feed[j]
			}
		}
		p.Stages[i].LoadA = max(load, 0)
		if sp != nil {
			sp.Nets[i].LoadAmps = load
			sp.Nets[i].FeedAmps = feed[i]
		}
	}
}

// Solve computes the operating point. With fast set, the HT supply is
// represented by the Thevenin line cached from the last full solve, scaled
// by the mains and the sample's transformer tolerances (a linearisation
// for tolerance sampling); otherwise the rectifier and filter are
// simulated to periodic steady state and coupled to the network by
// fixed-point iteration on the filter nets' loads.
func (s *Solver) Solve(c Conditions, v *Values, fast bool, op *OP) error {
	m := s.m
	*op = OP{Sections: op.Sections[:0], Regulators: op.Regulators[:0], Heaters: op.Heaters[:0], Windings: op.Windings[:0], Aux: op.Aux[:0]}
	hv := s.heaters(c, v, op)
	frac := s.applyValues(c, v, hv)
	if err := s.auxStart(c, v, fast); err != nil {
		return err
	}
	if m.HT == nil {
		if err := s.network(); err != nil {
			return err
		}
		if !fast || !s.auxCached() {
			if err := s.auxSettle(c, v); err != nil {
				return err
			}
		}
		s.extract(op, hv, frac)
		return nil
	}
	p := s.supplyParams(c, v, hv)
	sp := &SupplyOP{Nets: make([]FilterNetOP, len(m.HT.Nets))}
	op.Supply = sp
	f := s.mainsFactor(c) * v.HTVolts
	if v.RectDead || !(p.Vrms > 0) {
		return s.solveDead(c, v, p, sp, hv, frac, op)
	}
	if fast {
		if !s.haveTh {
			return ErrNoSupply
		}
		vth := s.lastVth * f / s.nomF
		rth := s.lastRth * v.HTOhms
		if err := s.setSource(vth, rth); err != nil {
			return err
		}
		s.doublerFast(f / s.nomF)
		if err := s.network(); err != nil {
			return err
		}
		if !s.auxCached() {
			if err := s.auxSettle(c, v); err != nil {
				return err
			}
		}
		sp.Vth, sp.Rth = vth, rth
		sp.SecondaryRms = s.lastSec * f / s.nomF
		s.stageLoads(&p, sp)
		for i, net := range m.HT.Nets {
			sp.Nets[i].Net = net
		}
		s.extract(op, hv, frac)
		return nil
	}
	// Full solve: start from a guess of the load, then iterate.
	cold := supply.ColdPeak(p)
	vth, rth := cold, p.Rs*4+100
	if err := s.setSource(vth, rth); err != nil {
		return err
	}
	if err := s.network(); err != nil {
		return err
	}
	var res supply.Result
	var err error
	prevV := math.Inf(1)
	prevV0, prevI0 := math.Inf(1), 0.0
	for it := 1; it <= 30; it++ {
		sp.FixedPointIterations = it
		s.stageLoads(&p, nil)
		s.doublerLoads(&p)
		res, err = supply.Simulate(p, s.sopt)
		if err != nil && !errors.Is(err, supply.ErrNoSteadyState) {
			return fmt.Errorf("HT supply: %w", err)
		}
		// A rectifier and capacitor-input filter cannot hold the reservoir
		// below 0 V nor above the cold-start peak (no current flows
		// backwards through a rectifier); a simulation that has not
		// settled (an emission-limited valve rectifier on a low variac
		// setting, a rectifier open) can report either, so the line is
		// clamped to what the supply can physically give.
		v0 := clampSupply(res.Nets[0].Vdc, cold)
		i0 := max(res.Nets[0].DCAmps, 0)
		if it > 1 && math.Abs(v0-prevV0) > 0.05*max(1, math.Abs(v0)) && i0 != prevI0 {
			// B+ still moves by more than 5 %: the supply's line is far
			// from straight (an emission-limited rectifier on a low
			// variac setting); the secant through the last two points
			// of the supply's curve keeps the iteration from
			// oscillating between no load and overload.
			if sec := (prevV0 - v0) / (i0 - prevI0); sec > rth {
				rth = sec
			}
		}
		prevV0, prevI0 = v0, i0
		if it == 1 {
			// Incremental output resistance from a perturbed simulation.
			dI := max(0.02*i0, s.perturbFloor())
			p2 := p
			p2.Stages = append([]supply.Stage(nil), p.Stages...)
			p2.Stages[0].LoadA += dI
			r2, err2 := supply.Simulate(p2, s.sopt)
			if err2 == nil || errors.Is(err2, supply.ErrNoSteadyState) {
				rth = max((v0-clampSupply(r2.Nets[0].Vdc, cold))/dI, 0.1)
			}
		}
		vth = v0 + rth*i0
		if err := s.setSource(vth, rth); err != nil {
			return err
		}
		s.setDoublerMid(p, res)
		auxMoved, err := s.auxUpdate(c, v, it == 1)
		if err != nil {
			return err
		}
		if err := s.network(); err != nil {
			return err
		}
		vNow := s.sol.V[m.nodeOf[m.HT.Nets[0]]]
		if math.Abs(vNow-prevV) < 1e-3*max(1, math.Abs(vNow)) && math.Abs(vNow-v0) < 2e-3*max(1, math.Abs(v0)) && auxMoved < 1e-3 {
			break
		}
		prevV = vNow
	}
	s.stageLoads(&p, sp)
	for i, net := range m.HT.Nets {
		sp.Nets[i].Net = net
		sp.Nets[i].RippleRms = res.Nets[i].RippleRms
		sp.Nets[i].RippleFund = res.Nets[i].RippleFund
		sp.Nets[i].RipplePP = res.Nets[i].RipplePP
	}
	sp.ColdPeakAll(supply.ColdPeak(p))
	sp.PeakRectAmps, sp.RmsAmps, sp.TotalAmps = res.PeakRectAmps, res.RmsRectAmps, res.AvgRectAmps
	sp.ConductionDeg = res.ConductionDeg
	sp.Vth, sp.Rth, sp.Simulated = vth, rth, true
	sp.DoublerV, sp.DoublerR = s.dbl.now, s.dbl.nowR
	sp.SecondaryRms = max(0, p.Vrms-res.RmsRectAmps*p.Rs)
	if c.Variac <= 0 || c.Variac == 1 {
		if c.MainsVolts <= 0 || c.MainsVolts == m.D.Mains.Volts {
			if !c.ColdValves {
				s.lastVth, s.lastRth, s.nomF, s.haveTh = vth, rth, f, true
				s.lastSec = sp.SecondaryRms
				s.dbl.cached, s.dbl.cachedR = s.dbl.now, s.dbl.nowR
			}
		}
	}
	s.extract(op, hv, frac)
	return nil
}

// DeadRectOhms is the resistance a rectifier that conducts nothing leaves
// between the winding and the reservoir: the reverse leakage of a silicon
// diode at working volts is microamps (from memory: 1N4007-class
// datasheets give 5 µA at 1000 V, about 200 MΩ); a cold valve rectifier
// passes less. 100 MΩ keeps the first filter net defined where no
// bleeder does and is open for every reading a meter can take.
const DeadRectOhms = 100e6

// solveDead solves with a supply that gives nothing: no rectifier
// current flows (a rectifier only conducts forwards, and with no winding
// volts or no conducting path there is nothing to conduct), so the
// filter nets see only the network's own sources. The winding's volts
// at the rectifier plates stay at their open-circuit value when only the
// rectifier is dead.
func (s *Solver) solveDead(c Conditions, v *Values, p supply.Params, sp *SupplyOP, hv map[string]float64, frac []float64, op *OP) error {
	m := s.m
	if err := s.setSource(0, DeadRectOhms); err != nil {
		return err
	}
	s.doublerDead()
	if err := s.network(); err != nil {
		return err
	}
	if err := s.auxSettle(c, v); err != nil {
		return err
	}
	s.stageLoads(&p, sp)
	for i, net := range m.HT.Nets {
		sp.Nets[i].Net = net
	}
	sp.Vth, sp.Rth, sp.Dead = 0, DeadRectOhms, true
	sp.SecondaryRms = max(p.Vrms, 0)
	s.extract(op, hv, frac)
	return nil
}

// clampSupply limits a simulated reservoir voltage to [0, peak] (NaN
// gives 0).
func clampSupply(v, peak float64) float64 {
	if !(v > 0) {
		return 0
	}
	return min(v, max(peak, 0))
}

// ColdPeakAll records the same cold-start peak on every net (no current
// flows, so no drop in the series elements).
func (sp *SupplyOP) ColdPeakAll(v float64) {
	for i := range sp.Nets {
		sp.Nets[i].ColdPeak = v
	}
}

func (s *Solver) setSource(vth, rth float64) error {
	if math.IsNaN(vth) || math.IsNaN(rth) {
		return errors.New("HT supply: no finite operating point")
	}
	s.m.ckt.SetSource(s.m.srcHandle, vth)
	s.m.ckt.SetResistance(s.m.srcRHandle, max(rth, minOhms))
	return nil
}

func (s *Solver) network() error {
	var warm []float64
	if len(s.warm) == s.m.ckt.NumNodes() {
		warm = s.warm
	}
	if err := s.m.ckt.Solve(s.opt, warm, &s.sol); err != nil {
		s.warm = s.warm[:0]
		var ce *mna.ConvergenceError
		if errors.As(err, &ce) {
			return fmt.Errorf("%s: the operating point did not converge (%s stage, %d iterations; largest imbalance at %v): %w",
				s.m.D.File, ce.Stage, ce.Iterations, ce.Nets, err)
		}
		return err
	}
	s.warm = append(s.warm[:0], s.sol.V...)
	return nil
}

// Solution exposes the raw network solution of the last solve.
func (s *Solver) Solution() *mna.Solution { return &s.sol }

func (s *Solver) extract(op *OP, hv map[string]float64, frac []float64) {
	m := s.m
	op.V = append(op.V[:0], s.sol.V...)
	op.Newton += s.sol.Iterations
	op.slotG = op.slotG[:0]
	for _, sl := range m.Slots {
		g := 0.0
		if sl.Kind == ElemResistance {
			g = m.ckt.Conductance(sl.handle)
		}
		op.slotG = append(op.slotG, g)
	}
	s.auxLines(op)
	for i, sec := range m.Sections {
		var so SectionOP
		so.Va, so.Vg, so.Vk = op.V[sec.P], op.V[sec.G], op.V[sec.K]
		var devCur [4]float64 // per call: solvers run in parallel goroutines
		cur := devCur[:]
		if sec.Pentode {
			m.ckt.DeviceCurrents(sec.handle, op.V, cur[:4])
			so.Vg2 = op.V[sec.G2]
			so.Ia, so.Ig2, so.Ig = cur[0], cur[1], cur[2]
			so.Ik = -cur[3]
		} else {
			m.ckt.DeviceCurrents(sec.handle, op.V, cur[:3])
			so.Ia, so.Ig = cur[0], cur[1]
			so.Ik = -cur[2]
		}
		if gs, ok := m.gasSlot[i]; ok {
			// A gassy valve's ion current (the plate-to-grid slot) is
			// the valve's own: it leaves the plate pin and the grid pin
			// reads it as reverse grid current.
			ig := m.ckt.ResistorCurrent(m.Slots[gs].handle, op.V)
			so.Ia += ig
			so.Ig -= ig
		}
		if ps, ok := m.pkSlot[i]; ok {
			// A plate shorted to its cathode inside the valve: the
			// current through the short enters at the plate pin and
			// leaves at the cathode pin, as the valve's own.
			ik := m.ckt.ResistorCurrent(m.Slots[ps].handle, op.V)
			so.Ia += ik
			so.Ik += ik
		}
		so.Pa = (so.Va - so.Vk) * so.Ia
		so.Pg2 = (so.Vg2 - so.Vk) * so.Ig2
		so.HeaterVolts = hv[sec.Ref]
		so.EmissionFraction = frac[i]
		op.Sections = append(op.Sections, so)
	}
	op.Regulators = op.Regulators[:0]
	for _, rg := range m.Regulators {
		op.Regulators = append(op.Regulators, m.ckt.ResistorCurrent(m.Slots[rg.Slot].handle, op.V))
	}
	if op.Supply != nil {
		for i := range op.Supply.Nets {
			op.Supply.Nets[i].Vdc = op.V[m.nodeOf[m.HT.Nets[i]]]
		}
	}
}
