package amp

import (
	"errors"
	"fmt"
	"math"

	"pinwalk/expect/design"
	"pinwalk/expect/supply"
)

// AuxRect is a silicon rectifier that is not the HT one: a fixed-bias
// supply from its own winding (or a DC filament or relay supply), a
// half-wave diode or a bridge into a reservoir capacitor, either polarity.
// It sits in the DC network as what it is at DC: a source of the
// reservoir's mean volts behind the supply's incremental output
// resistance, from its return net (the winding's other end, or a bridge's
// grounded output) to the reservoir net. The line is taken from a
// periodic-steady-state simulation of the winding, diode and reservoir
// (expect/supply) at the load the network draws, iterated with the rest
// of the solve as the HT supply is; the filter after the reservoir is in
// the network as its resistors.
type AuxRect struct {
	Rectifier *design.Part
	Winding   *design.Winding
	Topology  supply.Topology
	Rect      supply.Rectifier
	// Sign is +1 for a positive output (the reservoir on the diode's
	// cathode side), -1 for a negative one (the reservoir on the anode
	// side: a grid-bias supply).
	Sign float64
	// Out is the reservoir net, Return the net the output is taken
	// against (the winding's other end or its centre; a bridge's other
	// output).
	Out, Return string
	// Feed is the winding end the diode takes (the first, for a bridge).
	Feed string
	// CapRefs are the reservoir's capacitors (to chassis or to Return).
	CapRefs []string
	// VrmsOC and Rs are the winding's open-circuit rms volts at the
	// transformer's rated primary volts and its source resistance (its
	// DCR and the reflected primary DCR), as HeaterWindingSource has them.
	VrmsOC, Rs float64

	// netR is the share of the winding's resistance the network already
	// has between Feed and Return (a half-wave supply's DC current flows
	// through its winding; a bridge's winding carries none at DC).
	netR               float64
	index              int
	srcHandle, rHandle int
}

// auxState is a solver's line for one auxiliary supply: the one now set
// (magnitudes) and the one of the last full solve at the design's mains,
// for fast solves.
type auxState struct {
	curV, curR, curF   float64
	simulated          bool
	lastV, lastR, nomF float64
	haveTh             bool
}

func (s *Solver) auxOf(a *AuxRect) *auxState {
	for len(s.aux) <= a.index {
		s.aux = append(s.aux, auxState{})
	}
	return &s.aux[a.index]
}

// AuxRects are the design's rectifiers other than the HT one.
func (m *Model) AuxRects() []*AuxRect { return m.aux }

// AuxRectOf returns the auxiliary rectifier of a part reference.
func (m *Model) AuxRectOf(ref string) *AuxRect {
	for _, a := range m.aux {
		if a.Rectifier.Ref == ref {
			return a
		}
	}
	return nil
}

// rectCandidate is one rectifier of the design before the HT is chosen.
type rectCandidate struct {
	p     *design.Part
	ht    *HTSupply
	aux   *AuxRect
	volts float64 // winding volts per path, to choose the HT
}

// chooseHT picks the HT rectifier among several: a valve rectifier, else
// the positive silicon rectifier on the highest winding volts (the one
// feeding the plates); a design with one rectifier keeps it whatever it
// feeds. Every other one becomes an auxiliary rectifier.
func chooseHT(d *design.Design, cands []rectCandidate) (*HTSupply, []*AuxRect, error) {
	if len(cands) == 0 {
		return nil, nil, nil
	}
	if len(cands) == 1 && cands[0].ht != nil {
		return cands[0].ht, nil, nil
	}
	best := -1
	for i, c := range cands {
		if c.ht == nil {
			continue
		}
		if best < 0 {
			best = i
			continue
		}
		b := cands[best]
		bValve := b.ht.Rect.Kind == supply.Valve
		cValve := c.ht.Rect.Kind == supply.Valve
		if cValve && bValve {
			return nil, nil, fmt.Errorf("%s:%d:%d: %s: a second valve rectifier: only one HT rectifier is modelled",
				d.File, c.p.Pos.Line, c.p.Pos.Col, c.p.Ref)
		}
		if cValve || (!bValve && c.volts > b.volts) {
			best = i
		}
	}
	var ht *HTSupply
	var aux []*AuxRect
	for i, c := range cands {
		if i == best {
			ht = c.ht
			continue
		}
		if c.aux == nil {
			return nil, nil, fmt.Errorf("%s:%d:%d: %s: a second rectifier that is not silicon off its own winding: only one HT rectifier is modelled",
				d.File, c.p.Pos.Line, c.p.Pos.Col, c.p.Ref)
		}
		aux = append(aux, c.aux)
	}
	for _, a := range aux {
		if ref := heaterFedBy(d, a); ref != "" {
			p := a.Rectifier
			return nil, nil, fmt.Errorf("%s:%d:%d: %s: a DC heater or filament supply (it feeds %s's heater) is not yet modelled: expected heaters on a winding, or describe the supply as a dc-supply part",
				d.File, p.Pos.Line, p.Pos.Col, p.Ref, ref)
		}
		if ht != nil && a.Winding != nil && a.Winding == ht.Winding {
			p := a.Rectifier
			return nil, nil, fmt.Errorf("%s:%d:%d: %s: a rectifier off the HT winding (%s) besides the HT rectifier is not modelled: expected its own winding, or describe the supply as a bias-supply part",
				d.File, p.Pos.Line, p.Pos.Col, p.Ref, a.Winding.Name)
		}
	}
	return ht, aux, nil
}

// auxCandidate describes a silicon rectifier as an auxiliary supply, or
// says why it cannot be one.
func auxCandidate(d *design.Design, p *design.Part, windingOf func(string) *design.Winding) (*AuxRect, error) {
	r := p.Rect
	dd := r.Diode
	a := &AuxRect{Rectifier: p, Rect: supply.Rectifier{Kind: supply.Silicon, Vf: siliconDrop(dd), Rd: dd.Rs}, srcHandle: -1, rHandle: -1}
	where := func() string { return fmt.Sprintf("%s:%d:%d: %s", d.File, p.Pos.Line, p.Pos.Col, p.Ref) }
	switch {
	case r.Bridge:
		a.Topology = supply.Bridge
		a.Feed = r.AC[0]
		a.Winding = windingOf(r.AC[0])
		switch {
		case r.Plus == d.Ground:
			a.Sign, a.Out, a.Return = -1, r.Minus, r.Plus
		default:
			a.Sign, a.Out, a.Return = 1, r.Plus, r.Minus
		}
	case len(r.Anodes) == 1:
		a.Topology = supply.HalfWave
		if w := windingOf(r.Anodes[0]); w != nil {
			a.Sign, a.Feed, a.Out, a.Winding = 1, r.Anodes[0], r.Plus, w
		} else if w := windingOf(r.Plus); w != nil {
			a.Sign, a.Feed, a.Out, a.Winding = -1, r.Plus, r.Anodes[0], w
		}
		if a.Winding != nil {
			a.Return = a.Winding.Ends[0]
			if a.Return == a.Feed {
				a.Return = a.Winding.Ends[1]
			}
			if a.Winding.Centre != "" {
				a.Return = a.Winding.Centre
			}
		}
	default:
		return nil, fmt.Errorf("%s: a second full-wave centre-tap rectifier: an auxiliary supply is modelled as a half-wave diode or a bridge", where())
	}
	if a.Winding == nil {
		return nil, fmt.Errorf("%s: rectifier not fed from a transformer winding", where())
	}
	for _, u := range d.Nets[a.Out] {
		c := d.ByRef[u.Ref]
		if c == nil || c.Kind != design.Capacitor || c.Value < 0.5e-6 {
			continue
		}
		x, y := c.Terminals[0].Net, c.Terminals[1].Net
		if x == a.Out {
			x, y = y, x
		}
		if x == d.Ground || x == a.Return {
			a.CapRefs = append(a.CapRefs, c.Ref)
		}
		_ = y
	}
	if len(a.CapRefs) == 0 {
		return nil, fmt.Errorf("%s: the rectifier output %s has no reservoir capacitor: expected a capacitor of 0.5 µF or more from %s to %s",
			where(), a.Out, a.Out, d.Ground)
	}
	return a, nil
}

// addAux puts each auxiliary rectifier in the network as a source behind
// a resistance, from its return net to its reservoir.
func (m *Model) addAux() {
	for i, a := range m.aux {
		a.index = i
		inner := m.node("~" + a.Rectifier.Ref)
		from := a.Return
		if a.Topology == supply.HalfWave {
			// From the winding's diode end, so that the mean current
			// flows in the winding as it does (its end reads I·DCR).
			from = a.Feed
			r := a.Winding.DCR
			if r == 0 {
				r = 0.05 // as Build puts the winding in the network
			}
			if a.Winding.Centre != "" {
				r /= 2
			}
			a.netR = r
		}
		a.srcHandle = m.ckt.AddVSource(inner, m.node(from), 0)
		a.rHandle = m.ckt.AddResistor(inner, m.node(a.Out), 1)
	}
}

// auxParams is the supply simulation of an auxiliary rectifier at a load
// (amps out of the reservoir, a magnitude).
func (s *Solver) auxParams(a *AuxRect, c Conditions, v *Values, load float64) supply.Params {
	f := s.mainsFactor(c) * v.HeaterVolts
	cap := 0.0
	for _, ref := range a.CapRefs {
		cap += s.m.D.ByRef[ref].Value
	}
	return supply.Params{Topology: a.Topology, Vrms: a.VrmsOC * f, Rs: a.Rs, Hz: s.m.D.Mains.Hz, Rect: a.Rect,
		Stages: []supply.Stage{{Parent: -1, ShuntC: cap, LoadA: max(load, 0)}}}
}

// AuxDroopOhms is the first guess of an auxiliary supply's output
// resistance before its simulation: the winding's source resistance and
// the ripple droop of a capacitor-input filter, about 1/(2·f·C) per amp
// of load for half-wave and 1/(4·f·C) for full-wave and bridge (the mean
// of a sawtooth that falls I/(f·C) or I/(2f·C) between charging peaks;
// Schade 1943 and the Radiotron Designer's Handbook, 4th ed., ch. 30, from
// memory).
func AuxDroopOhms(t supply.Topology, hz, farads float64) float64 {
	if hz <= 0 || farads <= 0 {
		return 0
	}
	if t == supply.HalfWave {
		return 1 / (2 * hz * farads)
	}
	return 1 / (4 * hz * farads)
}

// auxDead reports whether an auxiliary rectifier gives nothing under
// these values.
func auxDead(a *AuxRect, v *Values) bool {
	return v.HeaterVolts <= 0 || v.AuxOpen[a.Rectifier.Ref]
}

// auxSet sets an auxiliary source's line (magnitudes).
func (s *Solver) auxSet(a *AuxRect, vth, rth float64) error {
	if math.IsNaN(vth) || math.IsNaN(rth) {
		return fmt.Errorf("%s supply: no finite operating point", a.Rectifier.Ref)
	}
	s.m.ckt.SetSource(a.srcHandle, a.Sign*vth)
	s.m.ckt.SetResistance(a.rHandle, max(rth-a.netR, minOhms))
	st := s.auxOf(a)
	st.curV, st.curR = vth, rth
	return nil
}

// auxLoad is the current the network draws from an auxiliary reservoir
// (amps, positive out of it).
func (s *Solver) auxLoad(a *AuxRect) float64 {
	return a.Sign * s.sol.SourceAmps[s.m.ckt.VSourceIndex(a.srcHandle)]
}

// auxStart sets every auxiliary source for a first network solve: the
// winding's peak less the diode, behind its resistance and droop; fast
// solves take the cached line, scaled with the mains as the peak is.
func (s *Solver) auxStart(c Conditions, v *Values, fast bool) error {
	for _, a := range s.m.aux {
		st := s.auxOf(a)
		st.simulated, st.curF = false, s.mainsFactor(c)*v.HeaterVolts
		if auxDead(a, v) {
			if err := s.auxSet(a, 0, DeadRectOhms); err != nil {
				return err
			}
			continue
		}
		p := s.auxParams(a, c, v, 0)
		vth := supply.ColdPeak(p)
		rth := a.Rs + AuxDroopOhms(a.Topology, p.Hz, p.Stages[0].ShuntC)
		if fast && st.haveTh {
			f := s.mainsFactor(c) * v.HeaterVolts
			vth = RectifiedScale(st.lastV, f/st.nomF, a.Rect.Vf*diodesInPath(a.Topology))
			rth = st.lastR
		}
		if err := s.auxSet(a, vth, rth); err != nil {
			return err
		}
	}
	return nil
}

// diodesInPath is the number of diodes a conducting path goes through.
func diodesInPath(t supply.Topology) float64 {
	if t == supply.Bridge {
		return 2
	}
	return 1
}

// RectifiedScale scales a peak-rectified output v (volts, a magnitude)
// by a mains factor f: the winding's peak scales, the diodes' drop vd
// does not.
func RectifiedScale(v, f, vd float64) float64 {
	return max(0, f*(v+vd)-vd)
}

// auxUpdate simulates each auxiliary supply at the load of the last
// network solve and sets its line; it reports the largest relative move
// of a reservoir's volts. first takes the output resistance from a
// perturbed simulation.
func (s *Solver) auxUpdate(c Conditions, v *Values, first bool) (float64, error) {
	moved := 0.0
	for _, a := range s.m.aux {
		if auxDead(a, v) {
			continue
		}
		i0 := max(s.auxLoad(a), 0)
		p := s.auxParams(a, c, v, i0)
		res, err := supply.Simulate(p, s.sopt)
		if err != nil && !errors.Is(err, supply.ErrNoSteadyState) {
			return 0, fmt.Errorf("%s supply: %w", a.Rectifier.Ref, err)
		}
		peak := supply.ColdPeak(p)
		v0 := clampSupply(res.Nets[0].Vdc, peak)
		st := s.auxOf(a)
		rth := st.curR
		if first {
			dI := max(0.05*i0, 1e-4)
			p2 := s.auxParams(a, c, v, i0+dI)
			r2, err2 := supply.Simulate(p2, s.sopt)
			if err2 == nil || errors.Is(err2, supply.ErrNoSteadyState) {
				rth = max((v0-clampSupply(r2.Nets[0].Vdc, peak))/dI, 0.1)
			}
		}
		vNow := a.Sign * (s.sol.V[s.m.nodeOf[a.Out]] - s.nodeV(a.Return))
		moved = max(moved, math.Abs(vNow-v0)/max(1, math.Abs(v0)))
		if err := s.auxSet(a, v0+rth*i0, rth); err != nil {
			return 0, err
		}
		st.simulated = true
		if c.Variac <= 0 || c.Variac == 1 {
			if (c.MainsVolts <= 0 || c.MainsVolts == s.m.D.Mains.Volts) && !c.ColdValves {
				st.lastV, st.lastR, st.nomF, st.haveTh = v0+rth*i0, rth, s.mainsFactor(c)*v.HeaterVolts, true
			}
		}
	}
	return moved, nil
}

// nodeV is a net's volts in the last network solution (0 for chassis).
func (s *Solver) nodeV(net string) float64 {
	n, ok := s.m.nodeOf[net]
	if !ok || n == 0 {
		return 0
	}
	return s.sol.V[n]
}

// auxSettle iterates the auxiliary supplies with the network until their
// reservoirs hold still (no HT loop around them).
func (s *Solver) auxSettle(c Conditions, v *Values) error {
	for it := 0; it < 20; it++ {
		moved, err := s.auxUpdate(c, v, it == 0)
		if err != nil {
			return err
		}
		if err := s.network(); err != nil {
			return err
		}
		if moved < 1e-4 {
			return nil
		}
	}
	return nil
}

// auxCached reports whether every auxiliary supply has a cached line.
func (s *Solver) auxCached() bool {
	for _, a := range s.m.aux {
		if !s.auxOf(a).haveTh {
			return false
		}
	}
	return true
}

// BiasNets returns the output nets of the grid-bias supplies, the one list
// of them: every bias-supply part's output, then each negative auxiliary
// rectifier's reservoir.
func (m *Model) BiasNets() []string {
	var out []string
	for _, p := range m.D.PartsOfKind(design.BiasSupply) {
		out = append(out, p.Terminals[0].Net)
	}
	for _, a := range m.aux {
		if a.Sign < 0 {
			out = append(out, a.Out)
		}
	}
	return out
}

// AuxLine is an auxiliary rectifier's line in a solve: the source volts
// (a magnitude) and resistance at its reservoir, at supply factor F (the
// mains factor times the winding's scale); Simulated when the line came
// from its supply simulation in that solve.
type AuxLine struct {
	V, R, F   float64
	Simulated bool
}

// auxLines records each auxiliary supply's line in op.
func (s *Solver) auxLines(op *OP) {
	for _, a := range s.m.aux {
		st := s.auxOf(a)
		op.Aux = append(op.Aux, AuxLine{V: st.curV, R: st.curR, F: st.curF, Simulated: st.simulated})
	}
}

// cacheAux takes the auxiliary supplies' lines of a full solve for later
// fast solves.
func (s *Solver) cacheAux(op *OP) {
	for i, a := range s.m.aux {
		if i >= len(op.Aux) || !op.Aux[i].Simulated {
			continue
		}
		l := op.Aux[i]
		st := s.auxOf(a)
		st.lastV, st.lastR, st.nomF, st.haveTh = l.V, l.R, l.F, true
	}
}

// auxACOnly marks a bridge's winding ends as carrying AC only: the
// winding floats, its mean set by the diodes' conduction midway between
// the outputs, which the network's DC line does not model, so no DC
// reading is offered there.
func (m *Model) auxACOnly() {
	for _, a := range m.aux {
		if a.Topology == supply.Bridge {
			for _, net := range a.Rectifier.Rect.AC {
				m.acOnly[net] = true
			}
		}
	}
}

// heaterFedBy returns the first valve whose heater an auxiliary supply
// feeds (its output or return net, or a net reached from them through
// resistors and chokes short of chassis), or "".
func heaterFedBy(d *design.Design, a *AuxRect) string {
	seen := map[string]bool{d.Ground: true}
	var todo []string
	for _, n := range []string{a.Out, a.Return} {
		if !seen[n] {
			seen[n] = true
			todo = append(todo, n)
		}
	}
	for i := 0; i < len(todo); i++ {
		for _, u := range d.Nets[todo[i]] {
			p := d.ByRef[u.Ref]
			if p == nil {
				continue
			}
			if p.Kind == design.Valve && (p.Valve.HeaterNets[0] == todo[i] || p.Valve.HeaterNets[1] == todo[i]) {
				return p.Ref
			}
			if p.Kind != design.Resistor && p.Kind != design.Choke {
				continue
			}
			for _, t := range p.Terminals {
				if !seen[t.Net] {
					seen[t.Net] = true
					todo = append(todo, t.Net)
				}
			}
		}
	}
	return ""
}
