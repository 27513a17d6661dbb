package ac

import (
	"fmt"
	"math"
	"math/cmplx"
	"slices"

	"pinwalk/expect/amp"
	"pinwalk/expect/design"
	"pinwalk/expect/units"
	"pinwalk/expect/valves"
)

// Clipping. The small-signal solve is linear: drive it hard enough and it
// predicts kilovolts at a plate. Tone limits it afterwards, stage by stage
// along the signal path, with the large-signal limits a technician would
// reckon by hand (common practice, rough to tens of percent):
//
//   - a control grid clips when its peak swing against the cathode passes
//     its bias (the grid reaches its cathode and draws grid current) or
//     carries the valve into cutoff (triode: Vgk = −(Vmax − Vk)/µ, with
//     Vmax the plate's supply or twice its volts on a transformer;
//     pentode: Vgk = −(Vg2 − Vk)/µ with Koren's screen µ); a valve of a
//     push-pull pair on an output transformer is not limited by cutoff
//     (class AB: its partner carries on);
//   - a plate cannot swing above about its supply (resistor load) nor
//     below about its cathode, or its knee for a pentode (taken as 15 % of
//     its screen volts above the cathode); on an output transformer it
//     swings as far up as down, and the speaker follows through the turns
//     ratio.
//
// The first stage to reach a limit as the level rises is held at it; its
// outputs and everything it drives are scaled down together (the
// fundamental of a clipped wave taken at the limit's level). A clipped
// stage shows as a Clip in Analyzer.Clips.

// kneeFraction is the pentode knee as a fraction of the screen volts
// (common practice for power pentodes and beam valves at full current).
const kneeFraction = 0.15

// minGridSwing keeps a zero-bias grid from clipping at no signal at all:
// such a stage self-biases by grid current.
const minGridSwing = 0.1

// clipReportRatio: a stage is named as clipping when the linear prediction
// passes its limit by more than this factor (it is limited from 1.0 on;
// the margin keeps a stage that merely follows a clipped one, at its own
// limit to a few percent, from being named too).
const clipReportRatio = 1.05

// Clip says that a stage cannot pass the tone it is given.
type Clip struct {
	Section string  // "V2A"
	Ref     string  // valve reference
	At      string  // "plate" or "grid"
	Peak    float64 // the limit, volts peak, at At (grid: against the cathode)
	Wanted  float64 // the linear prediction there, volts peak
	Why     string
}

// String is the note a report prints.
func (c Clip) String() string {
	return fmt.Sprintf("stage %s clips at about %s peak at its %s (%s; the linear prediction is %s peak): the signal beyond it is limited",
		c.Section, units.Format(c.Peak, units.Volts), c.At, c.Why, units.Format(c.Wanted, units.Volts))
}

// clipWhy is the reason for a limit, put in words only for a stage that
// clips (the limits are worked out on every Monte Carlo sample).
type clipWhy struct {
	kind  uint8
	volts float64
}

const (
	whyGridCurrent uint8 = iota
	whyCutoff
	whyCathode
	whyKnee
	whySupply
)

func (w clipWhy) String() string {
	v := units.Format(w.volts, units.Volts)
	switch w.kind {
	case whyGridCurrent:
		return "grid current as it passes its " + v + " bias"
	case whyCutoff:
		return "cutoff at about " + v + " on its grid"
	case whyCathode:
		return "its plate reaches its cathode at " + v
	case whyKnee:
		return "its plate reaches its knee at about " + v
	}
	return "its plate reaches its supply at " + v
}

// clipStage is one amplifying section in signal order.
type clipStage struct {
	sec     int // index in Model.Sections and secs
	name    string
	p, k    int      // nodes of plate and cathode (-1: AC ground)
	g, g2   int      // grid, screen
	load    []string // nets across the plate load (resistor, pot, choke) from the plate net
	ot, pp  bool     // plate on an output transformer; of a push-pull pair
	drivers []int    // indices into the stage list; -1 the tone source
	outs    []int    // nodes this stage drives (its electrodes and the passive network beyond)
}

// clipPlan is the signal path of a model, found once per Analyzer.
type clipPlan struct {
	stages []clipStage
	// nodeStage is the stage whose output each node carries (-1 the
	// source, -2 none found).
	nodeStage []int
	scale     []float64 // work space: per node
	sout      []float64 // work space: per stage
}

// acGround reports nets the tone does not travel through: ground, supply
// outputs (merged with ground), the HT filter nets and nets bypassed to
// an AC ground by 1 µF or more.
func (an *Analyzer) acGroundNets() map[string]bool {
	m, d := an.m, an.m.D
	out := map[string]bool{d.Ground: true}
	for net := range d.Nets {
		if k, ok := an.nodeOf[net]; !ok || k < 0 || k == an.reservoir {
			out[net] = true
		}
	}
	if m.HT != nil {
		for _, n := range m.HT.Nets {
			out[n] = true
		}
	}
	for _, p := range d.PartsOfKind(design.Capacitor) {
		if p.Value < 1e-6 || len(p.Terminals) != 2 {
			continue
		}
		a, b := p.Terminals[0].Net, p.Terminals[1].Net
		if out[a] && !out[b] {
			out[b] = true
		} else if out[b] && !out[a] {
			out[a] = true
		}
	}
	return out
}

func (an *Analyzer) node(net string) int {
	if k, ok := an.nodeOf[net]; ok {
		return k
	}
	return -1
}

// plan finds the signal path: a breadth-first walk from the input grids
// through resistors, pots, capacitors and chokes (never through an AC
// ground); a section is entered at its grid or cathode, and its plate,
// screen and cathode carry its output on.
func (an *Analyzer) plan(inputs []int) *clipPlan {
	m, d := an.m, an.m.D
	gnd := an.acGroundNets()
	pl := &clipPlan{nodeStage: make([]int, an.nNodes)}
	for i := range pl.nodeStage {
		pl.nodeStage[i] = -2
	}
	// Which section electrodes sit on each net.
	type elec struct {
		sec   int
		which string
	}
	onNet := map[string][]elec{}
	for i, sec := range m.Sections {
		for e, net := range d.ByRef[sec.Ref].Valve.Sections[sec.Section] {
			onNet[net] = append(onNet[net], elec{i, e})
		}
	}
	otEnd, ppEnd := map[string]bool{}, map[string]bool{}
	for _, p := range d.PartsOfKind(design.OutputTransformer) {
		for _, t := range p.Terminals {
			if t.Name == "primary.1" || t.Name == "primary.2" {
				otEnd[t.Net] = true
				if p.OT != nil && len(p.Terminals) > 0 && isPP(p) {
					ppEnd[t.Net] = true
				}
			}
		}
	}
	stageOf := map[int]int{} // section → stage index
	type item struct {
		net    string
		driver int
	}
	var queue []item
	seen := map[string]bool{}
	push := func(net string, driver int) {
		if net == "" || gnd[net] || seen[net] {
			return
		}
		seen[net] = true
		if k := an.node(net); k >= 0 && pl.nodeStage[k] == -2 {
			pl.nodeStage[k] = driver
		}
		queue = append(queue, item{net, driver})
	}
	for net := range d.Nets {
		if containsInt(inputs, an.node(net)) {
			push(net, -1)
		}
	}
	for len(queue) > 0 {
		it := queue[0]
		queue = queue[1:]
		// Enter the sections whose grid or cathode is on this net.
		for _, e := range onNet[it.net] {
			if e.which != valves.Grid && e.which != valves.Cathode {
				continue
			}
			si, ok := stageOf[e.sec]
			if ok {
				st := &pl.stages[si]
				if it.driver != si && (it.driver < 0 || it.driver < si) && !containsInt(st.drivers, it.driver) {
					st.drivers = append(st.drivers, it.driver)
				}
				continue
			}
			sec := m.Sections[e.sec]
			nets := d.ByRef[sec.Ref].Valve.Sections[sec.Section]
			st := clipStage{sec: e.sec, name: sec.Name(), p: an.node(nets[valves.Plate]), k: an.node(nets[valves.Cathode]),
				g: an.node(nets[valves.Grid]), g2: -1, drivers: []int{it.driver},
				ot: otEnd[nets[valves.Plate]], pp: ppEnd[nets[valves.Plate]]}
			if sec.Pentode {
				st.g2 = an.node(nets[valves.Screen])
			}
			st.load = passiveNeighbours(d, nets[valves.Plate])
			si = len(pl.stages)
			stageOf[e.sec] = si
			pl.stages = append(pl.stages, st)
			for _, out := range []string{nets[valves.Plate], nets[valves.Screen], nets[valves.Cathode]} {
				// The stage's own electrodes carry its output even where
				// bypassed (a cathode) or on a supply rail.
				if k := an.node(out); out != "" && k >= 0 && pl.nodeStage[k] == -2 {
					pl.nodeStage[k] = si
				}
				push(out, si)
			}
		}
		for _, next := range passiveNeighbours(d, it.net) {
			push(next, it.driver)
		}
	}
	for i := range pl.stages {
		for k, s := range pl.nodeStage {
			if s == i {
				pl.stages[i].outs = append(pl.stages[i].outs, k)
			}
		}
	}
	pl.scale = make([]float64, an.n)
	pl.sout = make([]float64, len(pl.stages))
	return pl
}

func isPP(p *design.Part) bool {
	for _, t := range p.Terminals {
		if t.Name == "primary.centre" {
			return true
		}
	}
	return false
}

func containsInt(s []int, v int) bool {
	for _, x := range s {
		if x == v {
			return true
		}
	}
	return false
}

// passiveNeighbours lists the nets one resistor, pot, capacitor or choke
// away from net.
func passiveNeighbours(d *design.Design, net string) []string {
	var out []string
	for _, u := range d.Nets[net] {
		p := d.ByRef[u.Ref]
		if p == nil {
			continue
		}
		switch p.Kind {
		case design.Resistor, design.Pot, design.Capacitor, design.Choke:
		default:
			continue
		}
		for _, t := range p.Terminals {
			if t.Net != net {
				out = append(out, t.Net)
			}
		}
	}
	return out
}

// limit scales the solution x in place so that no stage passes more than
// its limits allow, and records the clipped stages in an.clips.
func (an *Analyzer) limit(op *amp.OP, v *amp.Values, x []complex128, inputs []int) {
	an.clips = an.clips[:0]
	if an.clipPlan == nil || !slices.Equal(an.clipInputs, inputs) {
		an.clipPlan = an.plan(inputs)
		an.clipInputs = append(an.clipInputs[:0], inputs...)
	}
	pl := an.clipPlan
	m := an.m
	for si := range pl.stages {
		st := &pl.stages[si]
		sin := math.Inf(1)
		for _, dr := range st.drivers {
			s := 1.0
			if dr >= 0 {
				s = pl.sout[dr]
			}
			sin = math.Min(sin, s)
		}
		if math.IsInf(sin, 1) {
			sin = 1
		}
		so := op.Sections[st.sec]
		mu := v.Koren[st.sec].Mu
		k := 1.0
		var clip Clip
		var clipBy clipWhy
		// The grid against its cathode.
		vgk := so.Vg - so.Vk
		vmax := so.Va
		for _, net := range st.load {
			if vv, ok := m.NetVolts(op, net); ok && vv > vmax {
				vmax = vv
			}
		}
		if st.ot {
			vmax = 2*so.Va - so.Vk
		}
		gridLim, why := math.Max(-vgk, minGridSwing), clipWhy{whyGridCurrent, vgk}
		if mu > 0 && !st.pp {
			cut := -(vmax - so.Vk) / mu
			if m.Sections[st.sec].Pentode {
				cut = -(so.Vg2 - so.Vk) / mu
			}
			if c := vgk - cut; c < gridLim {
				gridLim, why = math.Max(c, minGridSwing), clipWhy{whyCutoff, cut}
			}
		}
		if peak := math.Sqrt2 * sin * cmplx.Abs(volt(x, st.g)-volt(x, st.k)); peak > gridLim && gridLim/peak < k {
			k = gridLim / peak
			clip, clipBy = Clip{At: "grid", Peak: gridLim, Wanted: peak}, why
		}
		// The plate.
		if st.p >= 0 {
			knee := 0.0
			if m.Sections[st.sec].Pentode {
				knee = kneeFraction * (so.Vg2 - so.Vk)
			}
			down := so.Va - so.Vk - knee
			lim, why := down, clipWhy{whyCathode, so.Vk}
			if knee > 0 {
				why = clipWhy{whyKnee, so.Vk + knee}
			}
			if !st.ot && vmax-so.Va < lim {
				lim, why = vmax-so.Va, clipWhy{whySupply, vmax}
			}
			lim = math.Max(lim, 0)
			if peak := math.Sqrt2 * sin * cmplx.Abs(x[st.p]); peak > lim && lim/peak < k {
				k = lim / peak
				clip, clipBy = Clip{At: "plate", Peak: lim, Wanted: peak}, why
			}
		}
		pl.sout[si] = sin * k
		if k < 1/clipReportRatio {
			clip.Section, clip.Ref, clip.Why = st.name, m.Sections[st.sec].Ref, clipBy.String()
			an.clips = append(an.clips, clip)
		}
	}
	// Scale every node by the stage whose output it carries; nodes off the
	// signal path (supply rails, AC grounds) by the smallest scale.
	least := 1.0
	for _, s := range pl.sout {
		least = math.Min(least, s)
	}
	for k := range pl.scale {
		pl.scale[k] = least
	}
	for k, s := range pl.nodeStage {
		switch {
		case s == -1:
			pl.scale[k] = 1
		case s >= 0:
			pl.scale[k] = pl.sout[s]
		}
	}
	// The ideal windings of output transformers follow their plates.
	for _, e := range an.ses {
		if e.a >= 0 && e.x >= 0 {
			pl.scale[e.x] = pl.scale[e.a]
		}
	}
	for _, e := range an.pps {
		s := 1.0
		for _, n := range []int{e.ea, e.eb} {
			if n >= 0 {
				s = math.Min(s, pl.scale[n])
			}
		}
		for _, n := range []int{e.xa, e.xb} {
			if n >= 0 {
				pl.scale[n] = s
			}
		}
	}
	for k := 0; k < an.nNodes; k++ {
		x[k] *= complex(pl.scale[k], 0)
	}
}

// Clips returns the stages the last Tone found clipping, in signal order
// (empty when the whole path is linear at that level or Options.Linear
// was set). The slice is reused by the next Tone.
func (an *Analyzer) Clips() []Clip { return an.clips }
