// Package ac is small-signal AC analysis of a whole amplifier at its solved
// DC operating point, for signal tracing: the test tone an oscilloscope or
// AC millivoltmeter should find at each grid, plate and cathode and at the
// speaker terminals, and the hum the supply ripple leaves there.
//
// Every valve section is linearised at the operating point from its Koren
// model (mutual conductance gm = ∂Ia/∂Vgk, plate conductance 1/ra =
// ∂Ia/∂Vpk, the screen terms of pentodes and the grid-current conductance),
// and the network is solved by complex nodal analysis at one frequency
// (Vlach & Singhal, "Computer Methods for Circuit Analysis and Design":
// the admittance form of modified nodal analysis). Parts:
//
//   - resistors, pots, capacitor leakage, heater windings, meter slots: the
//     resistances of the amp.Values slots, so tolerance samples and faults
//     apply; an open slot (+Inf) is left out;
//   - capacitors: 1/(jωC) from the design value, scaled by Values.StageC
//     for HT filter capacitors and by Options.CapScale otherwise;
//   - chokes: DCR (slot) + jωL;
//   - bias and DC supplies: AC ground through their source resistance;
//   - the HT supply: AC ground at the reservoir (the first filter net); for
//     hum, the ripple fundamental is injected there instead;
//   - output transformers, as their reflected load (leakage inductance,
//     core loss and secondary DCR ignored): single-ended, the winding DCR
//     in series with the rated primary impedance in parallel with an
//     assumed primary inductance SEPrimaryHenries; push-pull, the two
//     half-winding DCRs into an ideal centre-tapped transformer (3
//     terminals: V(a)+V(b) = 2·V(ct), end-to-end admittance 1/Z + 1/(jωL)
//     with Z the rated plate-to-plate impedance and L = PPPrimaryHenries,
//     and a free common-mode current from each end to the centre tap), so
//     that each half sees Z/4 when both valves drive and a lone half sees
//     Z/4 too, as in class A. The speaker volts are the ideal primary's
//     volts (behind the DCR, whole primary for push-pull) times the turns
//     ratio √(Load/Impedance); the rated load is assumed connected.
//
// Interelectrode and Miller capacitances are not modelled, so the results
// are the mid-band and low-frequency response; above some tens of kHz they
// read high.
package ac

import (
	"errors"
	"fmt"
	"math"
	"math/cmplx"
	"slices"
	"strings"

	"pinwalk/expect/amp"
	"pinwalk/expect/design"
	"pinwalk/expect/supply"
	"pinwalk/expect/valves"
)

// Quantities of the points this package predicts (stable: scripts read
// them). They are distinct from the DC points' quantities in package amp.
const (
	ToneVolts = "tone_volts" // rms volts of the injected test tone
	HumVolts  = "hum_volts"  // rms volts of the supply ripple fundamental
)

// Defaults of the test tone.
const (
	DefaultHz    = 1000.0 // Hz
	DefaultVolts = 0.1    // V rms
)

// Assumed primary inductances of output transformers (the design file
// gives none). A gapped single-ended primary is typically 10–20 H and a
// push-pull primary, carrying no net DC, several times that (common
// practice); they matter only well below 100 Hz.
const (
	SEPrimaryHenries = 15.0 // whole primary
	PPPrimaryHenries = 50.0 // plate to plate
)

// SpeakerSuffix makes the point ID of an output transformer's speaker
// terminals: "OT1.speaker".
const SpeakerSuffix = ".speaker"

// gminSiemens ties every node to ground so that a node left floating by an
// open part gives 0 V instead of a singular matrix.
const gminSiemens = 1e-12

// minOhms keeps tiny resistances finite, as the DC model does.
const minOhms = 1e-3

// Options select the test tone and the faults of an AC solve.
type Options struct {
	// Hz is the tone frequency (0: DefaultHz). Ignored by Hum.
	Hz float64
	// Volts is the tone's rms level at the input (0: DefaultVolts).
	Volts float64
	// InputNet is where the tone is injected: a net name or a pin id
	// ("V1.7"). "" means the first stage's input grid (see InputNet).
	InputNet string
	// AllInputs injects the same tone at every input grid found (both
	// channels of a stereo amp, as from one generator on a Y lead) when
	// InputNet is "".
	AllInputs bool
	// Open lists part references treated as open circuit: a capacitor,
	// resistor, pot, choke or output transformer carries no current at
	// all; a valve contributes no gain.
	Open map[string]bool
	// CapScale multiplies the value of a capacitor by reference
	// (tolerance samples, a dried-out electrolytic); absent means 1. HT
	// filter capacitors are scaled by Values.StageC as well.
	CapScale map[string]float64
	// RippleVolts overrides the ripple fundamental at the reservoir for
	// Hum (rms volts); 0 takes it from the operating point, which only a
	// full (not fast) solve fills in.
	RippleVolts float64
	// Linear turns off the large-signal limits of Tone (clip.go): the
	// small-signal prediction at any level.
	Linear bool
}

// Point is one predicted AC reading.
type Point struct {
	ID       string // pin id "V2.5", net name "B3", or "OT1.speaker"
	Net      string // the net ("" for speaker terminals)
	Quantity string // ToneVolts or HumVolts
	Label    string
	Volts    float64 // rms magnitude
	Phase    float64 // degrees, relative to the injected source
}

// Key is the point's unique key, "ID quantity", as amp.PointDef.Key.
func (p Point) Key() string { return p.ID + " " + p.Quantity }

// ErrNoRipple reports a hum analysis asked of an operating point that
// carries no ripple (a fast solve) with no Options.RippleVolts given.
var ErrNoRipple = errors.New("ac: the operating point carries no ripple (fast solve): give Options.RippleVolts from a full solve")

type resElem struct {
	a, b    int
	slot    int
	ref     string
	henries float64 // chokes: series inductance
}

type capElem struct {
	a, b   int
	ref    string
	farads float64
	stage  int // HT filter stage, or -1
}

// seElem is a single-ended output transformer: a —DCR— x —(Z ∥ jωL)— b.
type seElem struct {
	ref, id, label string
	a, x, b        int
	slot           int
	ohms, henrys   float64
	ratio          float64 // secondary/primary volts
	sec            speakerNets
}

// ppElem is a push-pull output transformer: ends ea, eb through the half
// DCRs to the ideal primary's ends xa, xb; centre tap c; j the common-mode
// current unknown.
type ppElem struct {
	ref, id, label string
	ea, eb, c      int
	xa, xb, j      int
	slotA, slotB   int
	slotA2, slotB2 int // tap-to-plate segments of halves with a screen tap, -1 when none
	ohms, henrys   float64
	ratio          float64
	sec            speakerNets
}

type secElem struct {
	index int
	ref   string
	pen   bool
	term  [4]int // plate, [screen,] grid, cathode
}

// probe reads one value from a solution: a node's volts, or an output
// transformer's speaker volts.
type probe struct {
	node int // -1 ground
	se   int // index into ses, or -1
	pp   int // index into pps, or -1
}

type pinPoint struct {
	id, net, label string
	electrode      string
	pr             probe
}

// Analyzer holds the AC network structure of one model, built once, and
// the work space of its solves. It is not safe for concurrent use; give
// each goroutine its own (New is cheap).
type Analyzer struct {
	m      *amp.Model
	nodeOf map[string]int
	nNodes int
	n      int // unknowns: nodes, then push-pull common-mode currents

	res     []resElem
	caps    []capElem
	ses     []seElem
	pps     []ppElem
	secs    []secElem
	winds   []windElem // screen taps and wired secondaries (windings.go)
	windRes []windRes

	reservoir int // node of the first HT filter net, -1 when none
	filter    []int
	filterLab []string
	pins      []pinPoint
	input     string   // default input net, "" when none qualifies
	inputs    []string // every input grid net, in design order

	a, b []complex128
	jac  [16]float64
	cur  [4]float64

	clips      []Clip // of the last Tone (clip.go)
	clipPlan   *clipPlan
	clipInputs []int
}

// New builds the AC network of a model.
func New(m *amp.Model) (*Analyzer, error) {
	d := m.D
	an := &Analyzer{m: m, nodeOf: map[string]int{}, reservoir: -1}
	// Sources are AC shorts: merge the source's inner net with its
	// reference net.
	parent := map[string]string{}
	var find func(string) string
	find = func(s string) string {
		p, ok := parent[s]
		if !ok || p == s {
			return s
		}
		r := find(p)
		parent[s] = r
		return r
	}
	union := func(a, b string) {
		ra, rb := find(a), find(b)
		if ra == rb {
			return
		}
		if rb == d.Ground {
			ra, rb = rb, ra
		}
		parent[rb] = ra // the ground stays a root
	}
	for i, sl := range m.Slots {
		if sl.Kind != amp.ElemSource {
			continue
		}
		a, b := m.SlotNets(i)
		if _, ok := m.Node("~" + sl.Ref); ok {
			union(b, "~"+sl.Ref)
		} else {
			union(b, a)
		}
	}
	idx := func(net string) int {
		r := find(net)
		if r == d.Ground {
			return -1
		}
		if k, ok := an.nodeOf[r]; ok {
			an.nodeOf[net] = k
			return k
		}
		k := an.nNodes
		an.nNodes++
		an.nodeOf[r] = k
		an.nodeOf[net] = k
		return k
	}
	internal := func() int {
		k := an.nNodes
		an.nNodes++
		return k
	}
	for i, sl := range m.Slots {
		if sl.Kind != amp.ElemResistance {
			continue
		}
		p := d.ByRef[sl.Ref]
		if p != nil && p.Kind == design.OutputTransformer {
			continue
		}
		a, b := m.SlotNets(i)
		e := resElem{a: idx(a), b: idx(b), slot: i, ref: sl.Ref}
		if p != nil && p.Kind == design.Choke {
			e.henries = p.Value
		}
		an.res = append(an.res, e)
	}
	stageOf := map[string]int{}
	if m.HT != nil {
		for i, refs := range m.HT.CapRefs {
			for _, r := range refs {
				stageOf[r] = i
			}
		}
	}
	for _, p := range d.Parts {
		switch p.Kind {
		case design.Capacitor:
			if p.Value <= 0 {
				continue
			}
			st, ok := stageOf[p.Ref]
			if !ok {
				st = -1
			}
			an.caps = append(an.caps, capElem{a: idx(p.Terminals[0].Net), b: idx(p.Terminals[1].Net),
				ref: p.Ref, farads: p.Value, stage: st})
		case design.OutputTransformer:
			ot := p.OT
			ratio := 0.0
			if ot.Impedance > 0 && ot.Load > 0 {
				ratio = math.Sqrt(ot.Load / ot.Impedance)
			}
			if ot.Centre == "" {
				e := seElem{ref: p.Ref, id: p.Ref + SpeakerSuffix, label: speakerLabel(d, p.Ref), a: idx(ot.Ends[0]), b: idx(ot.Ends[1]), x: internal(), slot: -1,
					ohms: ot.Impedance, henrys: SEPrimaryHenries, ratio: ratio}
				for _, s := range m.SlotsOf(p.Ref) {
					if m.Slots[s].Role == "primary" {
						e.slot = s
					}
				}
				e.sec = an.otWindings(p, [2]int{e.x, e.b}, -1, ratio, idx, internal)
				if e.sec.wired {
					e.ohms = 0 // the load is on the secondary itself
				}
				an.ses = append(an.ses, e)
				continue
			}
			e := ppElem{ref: p.Ref, id: p.Ref + SpeakerSuffix, label: speakerLabel(d, p.Ref), ea: idx(ot.Ends[0]), eb: idx(ot.Ends[1]), c: idx(ot.Centre),
				xa: internal(), xb: internal(), j: len(an.pps), slotA: -1, slotB: -1, slotA2: -1, slotB2: -1,
				ohms: ot.Impedance, henrys: PPPrimaryHenries, ratio: ratio}
			for _, s := range m.SlotsOf(p.Ref) {
				switch m.Slots[s].Role {
				case "half-a":
					e.slotA = s
				case "half-b":
					e.slotB = s
				case "half-a.outer":
					e.slotA2 = s
				case "half-b.outer":
					e.slotB2 = s
				}
			}
			e.sec = an.otWindings(p, [2]int{e.xa, e.xb}, e.c, ratio, idx, internal)
			if e.sec.wired {
				e.ohms = 0 // the load is on the secondary itself
			}
			an.pps = append(an.pps, e)
		}
	}
	for i, sec := range m.Sections {
		nets := d.ByRef[sec.Ref].Valve.Sections[sec.Section]
		e := secElem{index: i, ref: sec.Ref, pen: sec.Pentode}
		if sec.Pentode {
			e.term = [4]int{idx(nets[valves.Plate]), idx(nets[valves.Screen]), idx(nets[valves.Grid]), idx(nets[valves.Cathode])}
		} else {
			e.term = [4]int{idx(nets[valves.Plate]), idx(nets[valves.Grid]), idx(nets[valves.Cathode]), -1}
		}
		an.secs = append(an.secs, e)
	}
	if m.HT != nil {
		an.reservoir = idx(m.HT.Nets[0])
		for _, net := range m.HT.Nets {
			an.filter = append(an.filter, idx(net))
			an.filterLab = append(an.filterLab, "net "+net+" ripple")
		}
	}
	for _, pd := range m.Points() {
		if pd.Quantity != amp.DCVolts || pd.Section < 0 {
			continue
		}
		switch pd.Electrode {
		case valves.Plate, valves.Screen, valves.Grid, valves.Cathode:
			an.pins = append(an.pins, pinPoint{id: pd.ID, net: pd.Net, label: pd.Label, electrode: pd.Electrode,
				pr: probe{node: idx(pd.Net), se: -1, pp: -1}})
		}
	}
	an.input = findInput(m)
	an.inputs = findInputs(m)
	an.n = an.nNodes + len(an.pps) + len(an.winds)
	for i := range an.pps {
		an.pps[i].j += an.nNodes
	}
	for i := range an.winds {
		an.winds[i].j = an.nNodes + len(an.pps) + i
	}
	an.a = make([]complex128, an.n*an.n)
	an.b = make([]complex128, an.n)
	return an, nil
}

// InputNet returns the net the test tone goes into by default: the grid
// net of the first amplifying section (in design order) whose only other
// connections are resistors to ground (a grid leak and no other driver),
// or "" when there is none.
func (an *Analyzer) InputNet() string { return an.input }

// InputNets returns every input grid net found the same way, in design
// order: one per channel of a stereo amp (AllInputs drives them all).
func (an *Analyzer) InputNets() []string { return append([]string(nil), an.inputs...) }

func findInput(m *amp.Model) string {
	if in := findInputs(m); len(in) > 0 {
		return in[0]
	}
	return ""
}

// findInputs returns every input grid net, in design order: a grid net
// whose only other parts are grid leaks to ground. An amp whose first
// stage has its grid leak returned elsewhere (a long-tailed pair's input
// grid returned to the tail, a bootstrapped leak) has none of those; then
// an input grid is a grid net whose only other parts are resistors to
// nets that no plate and no capacitor other than one to ground feed (so
// neither a grid stopper behind a coupling capacitor nor a DC-coupled
// grid counts).
func findInputs(m *amp.Model) []string {
	if out := findInputsBy(m, groundLeaks); len(out) > 0 {
		return out
	}
	return findInputsBy(m, quietReturns)
}

// groundLeaks accepts a grid net's resistor when it goes to ground.
func groundLeaks(m *amp.Model, p *design.Part, g string) bool {
	return otherNet(p, g) == m.D.Ground
}

// quietReturns accepts a grid net's resistor to ground, or to a net fed by
// no valve plate and no capacitor other than one to ground.
func quietReturns(m *amp.Model, p *design.Part, g string) bool {
	d := m.D
	o := otherNet(p, g)
	if o == "" {
		return false
	}
	if o == d.Ground {
		return true
	}
	for _, sec := range m.Sections {
		if d.ByRef[sec.Ref].Valve.Sections[sec.Section][valves.Plate] == o {
			return false
		}
	}
	for _, u := range d.Nets[o] {
		q := d.ByRef[u.Ref]
		if q == nil || q.Kind == design.Capacitor && otherNet(q, o) != d.Ground {
			return false
		}
	}
	return true
}

// findInputsBy returns the grid nets whose only other parts are the
// valve and resistors that leak accepts, at least one of them.
func findInputsBy(m *amp.Model, leak func(*amp.Model, *design.Part, string) bool) []string {
	d := m.D
	var out []string
	for _, sec := range m.Sections {
		g := d.ByRef[sec.Ref].Valve.Sections[sec.Section][valves.Grid]
		if g == "" || g == d.Ground {
			continue
		}
		leaks, ok := 0, true
		for _, u := range d.Nets[g] {
			p := d.ByRef[u.Ref]
			switch {
			case p == nil:
				ok = false
			case p.Kind == design.Valve:
			case p.Kind == design.Resistor && leak(m, p, g):
				leaks++
			default:
				ok = false
			}
		}
		if ok && leaks > 0 && !slices.Contains(out, g) {
			out = append(out, g)
		}
	}
	return out
}

func otherNet(p *design.Part, net string) string {
	if len(p.Terminals) != 2 {
		return ""
	}
	if p.Terminals[0].Net == net {
		return p.Terminals[1].Net
	}
	return p.Terminals[0].Net
}

// resolve turns a net name, a pin id ("V1.7") or a speaker id
// ("OT1.speaker") into a probe.
func (an *Analyzer) resolve(id string) (probe, error) {
	d := an.m.D
	if ref, ok := strings.CutSuffix(id, SpeakerSuffix); ok {
		for i, e := range an.ses {
			if e.ref == ref {
				return probe{node: -1, se: i, pp: -1}, nil
			}
		}
		for i, e := range an.pps {
			if e.ref == ref {
				return probe{node: -1, se: -1, pp: i}, nil
			}
		}
	}
	if id == d.Ground {
		return probe{node: -1, se: -1, pp: -1}, nil
	}
	if k, ok := an.nodeOf[id]; ok {
		return probe{node: k, se: -1, pp: -1}, nil
	}
	if ref, pin, ok := amp.ParseID(id); ok {
		if p := d.ByRef[ref]; p != nil && p.Valve != nil {
			if net, ok := p.Valve.PinNets[pin]; ok {
				if net == d.Ground {
					return probe{node: -1, se: -1, pp: -1}, nil
				}
				if k, ok := an.nodeOf[net]; ok {
					return probe{node: k, se: -1, pp: -1}, nil
				}
			}
		}
	}
	var names []string
	for n := range d.Nets {
		names = append(names, n)
	}
	msg := fmt.Sprintf("ac: %q is not a net, pin id or speaker id of %s", id, d.File)
	if s := design.Suggest(id, names); len(s) > 0 {
		msg += fmt.Sprintf(" (did you mean %s?)", strings.Join(s, " or "))
	}
	return probe{}, errors.New(msg)
}

func (an *Analyzer) read(pr probe, x []complex128) complex128 {
	switch {
	case pr.se >= 0:
		e := an.ses[pr.se]
		if e.sec.wired {
			return volt(x, e.sec.hot) - volt(x, e.sec.cold)
		}
		return (volt(x, e.x) - volt(x, e.b)) * complex(e.ratio, 0)
	case pr.pp >= 0:
		e := an.pps[pr.pp]
		if e.sec.wired {
			return volt(x, e.sec.hot) - volt(x, e.sec.cold)
		}
		return (volt(x, e.xa) - volt(x, e.xb)) * complex(e.ratio, 0)
	}
	return volt(x, pr.node)
}

func volt(x []complex128, k int) complex128 {
	if k < 0 {
		return 0
	}
	return x[k]
}

// check verifies that op and v belong to the analyzer's model.
func (an *Analyzer) check(op *amp.OP, v *amp.Values) error {
	m := an.m
	if op == nil || v == nil {
		return errors.New("ac: nil operating point or values")
	}
	if len(op.Sections) != len(m.Sections) || len(v.Slot) != len(m.Slots) || len(v.Koren) != len(m.Sections) {
		return fmt.Errorf("ac: operating point or values not from this model (%d/%d sections, %d/%d slots)",
			len(op.Sections), len(m.Sections), len(v.Slot), len(m.Slots))
	}
	return nil
}

// stamp builds the nodal admittance matrix at angular frequency w into
// an.a and clears an.b.
func (an *Analyzer) stamp(op *amp.OP, v *amp.Values, w float64, opt *Options) {
	n := an.n
	a := an.a
	clear(a)
	clear(an.b)
	for k := 0; k < an.nNodes; k++ {
		a[k*n+k] = gminSiemens
	}
	add := func(i, j int, y complex128) {
		if i >= 0 {
			a[i*n+i] += y
		}
		if j >= 0 {
			a[j*n+j] += y
		}
		if i >= 0 && j >= 0 {
			a[i*n+j] -= y
			a[j*n+i] -= y
		}
	}
	open := opt.Open
	for _, e := range an.res {
		if open[e.ref] {
			continue
		}
		r := v.Slot[e.slot]
		if math.IsInf(r, 1) || math.IsNaN(r) {
			continue
		}
		r = max(r, minOhms)
		add(e.a, e.b, 1/complex(r, w*e.henries))
	}
	for _, e := range an.caps {
		if open[e.ref] || v.CapOpen[e.ref] {
			continue // open by the caller, or by a fault hypothesis in the values
		}
		c := e.farads
		if s, ok := opt.CapScale[e.ref]; ok {
			c *= s
		}
		if e.stage >= 0 && e.stage < len(v.StageC) {
			c *= v.StageC[e.stage]
		}
		add(e.a, e.b, complex(0, w*c))
	}
	for _, e := range an.ses {
		if open[e.ref] || e.slot < 0 {
			continue
		}
		r := v.Slot[e.slot]
		if math.IsInf(r, 1) {
			continue
		}
		add(e.a, e.x, complex(1/max(r, minOhms), 0))
		add(e.x, e.b, primaryY(e.ohms, e.henrys, w))
	}
	for _, e := range an.pps {
		if open[e.ref] {
			continue
		}
		if e.slotA >= 0 {
			if r := v.Slot[e.slotA] + slotOhms(v, e.slotA2); !math.IsInf(r, 1) {
				add(e.ea, e.xa, complex(1/max(r, minOhms), 0))
			}
		}
		if e.slotB >= 0 {
			if r := v.Slot[e.slotB] + slotOhms(v, e.slotB2); !math.IsInf(r, 1) {
				add(e.eb, e.xb, complex(1/max(r, minOhms), 0))
			}
		}
		add(e.xa, e.xb, primaryY(e.ohms, e.henrys, w))
		// Ideal centre tap: common-mode current j from each end to the
		// centre, and the constraint V(xa) + V(xb) − 2·V(c) = 0.
		j := e.j
		a[e.xa*n+j] += 1
		a[e.xb*n+j] += 1
		a[j*n+e.xa] += 1
		a[j*n+e.xb] += 1
		if e.c >= 0 {
			a[e.c*n+j] -= 2
			a[j*n+e.c] -= 2
		}
	}
	an.stampWindings(v.Slot, add, open)
	for _, e := range an.secs {
		if open[e.ref] {
			continue
		}
		so := &op.Sections[e.index]
		lim := an.m.SectionEmissionLimit(op, e.index)
		nt := 3
		if e.pen {
			nt = 4
			dev := valves.PentodeDevice{P: 0, G2: 1, G1: 2, K: 3, Model: v.Koren[e.index], EmissionLimit: lim}
			vv := [4]float64{so.Va, so.Vg2, so.Vg, so.Vk}
			dev.Eval(vv[:], an.cur[:4], an.jac[:16])
		} else {
			dev := valves.TriodeDevice{P: 0, G: 1, K: 2, Model: v.Koren[e.index], EmissionLimit: lim}
			vv := [3]float64{so.Va, so.Vg, so.Vk}
			dev.Eval(vv[:], an.cur[:3], an.jac[:9])
		}
		for r := 0; r < nt; r++ {
			i := e.term[r]
			if i < 0 {
				continue
			}
			for c := 0; c < nt; c++ {
				if j := e.term[c]; j >= 0 {
					a[i*n+j] += complex(an.jac[r*nt+c], 0)
				}
			}
		}
	}
}

// primaryY is the admittance of a reflected load of z ohms in parallel with
// a primary inductance of l henries at angular frequency w.
func primaryY(z, l, w float64) complex128 {
	var y complex128
	if z > 0 {
		y = complex(1/z, 0)
	}
	if l > 0 && w > 0 {
		y += complex(0, -1/(w*l))
	}
	return y
}

// fix makes node k a voltage source of value val (to ground) by replacing
// its equation with V(k) = val.
func (an *Analyzer) fix(k int, val complex128) {
	if k < 0 {
		return
	}
	n := an.n
	row := an.a[k*n : k*n+n]
	clear(row)
	row[k] = 1
	an.b[k] = val
}

func (an *Analyzer) solve() error { return luSolve(an.a, an.b, an.n) }

// Tone injects a test tone and returns its rms volts and phase at every
// plate, screen, grid and cathode pin of every amplifying section (ID = pin
// id, in amp.Points order) and at each output transformer's speaker
// terminals (ID = ref+SpeakerSuffix), Quantity ToneVolts. The tone is an
// ideal source of opt.Volts rms at opt.Hz between opt.InputNet (default:
// InputNet()) and ground; the HT reservoir is AC ground. dst is reused
// (pass nil or the previous result). It returns an error for an unknown
// input net, for values or an operating point from another model, and for
// a singular network.
func (an *Analyzer) Tone(op *amp.OP, v *amp.Values, opt Options, dst []Point) ([]Point, error) {
	if err := an.check(op, v); err != nil {
		return nil, err
	}
	hz, volts := opt.Hz, opt.Volts
	if hz <= 0 {
		hz = DefaultHz
	}
	if volts <= 0 {
		volts = DefaultVolts
	}
	in := opt.InputNet
	if in == "" {
		in = an.input
		if in == "" {
			if len(an.m.Sections) == 0 {
				return nil, fmt.Errorf("ac: %s: no amplifying valve in the design: a test tone has nowhere to go", an.m.D.File)
			}
			return nil, fmt.Errorf("ac: %s: no input grid found (a grid net with only grid leaks to ground, or to a net no plate or coupling capacitor feeds): name the input net", an.m.D.File)
		}
	}
	src, err := an.resolve(in)
	if err != nil {
		return nil, err
	}
	if src.node < 0 {
		return nil, fmt.Errorf("ac: the tone cannot be injected at %q (ground or a speaker)", in)
	}
	an.stamp(op, v, 2*math.Pi*hz, &opt)
	if src.node != an.reservoir {
		an.fix(an.reservoir, 0)
	}
	an.fix(src.node, complex(volts, 0))
	injected := []int{src.node}
	if opt.AllInputs && opt.InputNet == "" {
		for _, other := range an.inputs[1:] {
			if pr, err := an.resolve(other); err == nil && pr.node >= 0 {
				an.fix(pr.node, complex(volts, 0))
				injected = append(injected, pr.node)
			}
		}
	}
	if err := an.solve(); err != nil {
		return nil, err
	}
	x := an.b
	if opt.Linear {
		an.clips = an.clips[:0]
	} else {
		an.limit(op, v, x, injected)
	}
	dst = dst[:0]
	for _, p := range an.pins {
		dst = append(dst, point(p.id, p.net, ToneVolts, p.label, an.read(p.pr, x)))
	}
	dst = an.speakers(dst, ToneVolts, x)
	return dst, nil
}

func (an *Analyzer) speakers(dst []Point, q string, x []complex128) []Point {
	for i, e := range an.ses {
		dst = append(dst, point(e.id, "", q, e.label, an.read(probe{node: -1, se: i, pp: -1}, x)))
	}
	for i, e := range an.pps {
		dst = append(dst, point(e.id, "", q, e.label, an.read(probe{node: -1, se: -1, pp: i}, x)))
	}
	return dst
}

func speakerLabel(d *design.Design, ref string) string {
	if p := d.ByRef[ref]; p != nil && p.OT != nil && p.OT.Load > 0 {
		return fmt.Sprintf("%s speaker terminals (%g Ω load)", ref, p.OT.Load)
	}
	return ref + " speaker terminals"
}

func point(id, net, q, label string, z complex128) Point {
	mag := cmplx.Abs(z)
	ph := 0.0
	if mag > 0 {
		ph = cmplx.Phase(z) * 180 / math.Pi
	}
	return Point{ID: id, Net: net, Quantity: q, Label: label, Volts: mag, Phase: ph}
}

// RippleHz returns the frequency of the ripple fundamental: twice the
// mains for a full-wave rectifier, the mains for a half-wave one (or a
// full-wave one with a half open, Values.HalfOpen).
func RippleHz(m *amp.Model, v *amp.Values) float64 {
	hz := m.D.Mains.Hz
	if m.HT == nil {
		return hz
	}
	if m.HT.Topology == supply.HalfWave || m.HT.Topology == supply.HalfDoubler || (v != nil && v.HalfOpen && m.HT.Topology == supply.CentreTap) ||
		(v != nil && m.HT.Doubler != nil && (v.DoublerOpen[0] || v.DoublerOpen[1])) {
		return hz
	}
	return 2 * hz
}

// Hum carries the ripple fundamental at the reservoir (the first HT filter
// net; op.Supply.Nets[0].RippleFund, or opt.RippleVolts) through the
// filter and the whole circuit at RippleHz, every other source AC-grounded,
// and returns Quantity HumVolts at each HT filter net (ID = net name, the
// expected ripple there), at every plate and screen pin (ID = pin id) and
// at each speaker output (ID = ref+SpeakerSuffix). Phases are relative to
// the reservoir ripple. Only the fundamental is carried: the supply's
// harmonics (RippleRms includes them) are attenuated further by every
// filter section. A design with no HT rectifier gives (nil, nil); a fast
// operating point without opt.RippleVolts gives ErrNoRipple.
func (an *Analyzer) Hum(op *amp.OP, v *amp.Values, opt Options, dst []Point) ([]Point, error) {
	if err := an.check(op, v); err != nil {
		return nil, err
	}
	if an.m.HT == nil {
		return nil, nil
	}
	ripple := opt.RippleVolts
	if ripple <= 0 {
		if op.Supply == nil || len(op.Supply.Nets) == 0 || !op.Supply.Simulated {
			return nil, ErrNoRipple
		}
		ripple = op.Supply.Nets[0].RippleFund
	}
	an.stamp(op, v, 2*math.Pi*RippleHz(an.m, v), &opt)
	an.fix(an.reservoir, complex(ripple, 0))
	if err := an.solve(); err != nil {
		return nil, err
	}
	x := an.b
	dst = dst[:0]
	for i, k := range an.filter {
		net := an.m.HT.Nets[i]
		dst = append(dst, point(net, net, HumVolts, an.filterLab[i], volt(x, k)))
	}
	for _, p := range an.pins {
		if p.electrode == valves.Plate || p.electrode == valves.Screen {
			dst = append(dst, point(p.id, p.net, HumVolts, p.label, an.read(p.pr, x)))
		}
	}
	dst = an.speakers(dst, HumVolts, x)
	return dst, nil
}

// Gain returns the complex voltage ratio V(to)/V(from) at opt.Hz
// (default DefaultHz) with an ideal source at from and the HT reservoir
// AC-grounded (unless from is the reservoir). from and to are net names or
// pin ids; to may also be a speaker id ("OT1.speaker").
func (an *Analyzer) Gain(op *amp.OP, v *amp.Values, from, to string, opt Options) (complex128, error) {
	if err := an.check(op, v); err != nil {
		return 0, err
	}
	src, err := an.resolve(from)
	if err != nil {
		return 0, err
	}
	if src.node < 0 {
		return 0, fmt.Errorf("ac: no source can be placed at %q (ground or a speaker)", from)
	}
	dst, err := an.resolve(to)
	if err != nil {
		return 0, err
	}
	hz := opt.Hz
	if hz <= 0 {
		hz = DefaultHz
	}
	an.stamp(op, v, 2*math.Pi*hz, &opt)
	if src.node != an.reservoir {
		an.fix(an.reservoir, 0)
	}
	an.fix(src.node, 1)
	if err := an.solve(); err != nil {
		return 0, err
	}
	return an.read(dst, an.b), nil
}

// Tone is Analyzer.Tone on a fresh analyzer; for repeated calls on one
// model (Monte Carlo) keep an Analyzer.
func Tone(m *amp.Model, op *amp.OP, v *amp.Values, opt Options) ([]Point, error) {
	an, err := New(m)
	if err != nil {
		return nil, err
	}
	return an.Tone(op, v, opt, nil)
}

// Hum is Analyzer.Hum on a fresh analyzer with no faults.
func Hum(m *amp.Model, op *amp.OP, v *amp.Values) ([]Point, error) {
	an, err := New(m)
	if err != nil {
		return nil, err
	}
	return an.Hum(op, v, Options{}, nil)
}

// Gain is Analyzer.Gain on a fresh analyzer at hz (0: DefaultHz), with no
// faults.
func Gain(m *amp.Model, op *amp.OP, v *amp.Values, from, to string, hz float64) (complex128, error) {
	an, err := New(m)
	if err != nil {
		return 0, err
	}
	return an.Gain(op, v, from, to, Options{Hz: hz})
}
