package procedures

import (
	"fmt"
	"math"
	"math/cmplx"
	"sort"
	"strings"

	"pinwalk/expect/ac"
	"pinwalk/expect/amp"
	"pinwalk/expect/bands"
	"pinwalk/expect/design"
	"pinwalk/expect/point"
	"pinwalk/expect/units"
	"pinwalk/expect/valves"
)

// Cautions of signal tracing.
const (
	DummyLoadCaution = "A dummy load of the rated impedance (a power resistor rated for the amp's full output) or a speaker must be on every output before power-up: " +
		"never run an output stage without a load, the output transformer's flyback can arc over and destroy it and the output valves."
	GeneratorCaution = "Signal generator: a sine, set to the level below at the input grid before it is connected, starting from its minimum and turning it up; " +
		"its ground lead goes to chassis. Too high a level drives a stage past its bias: the waveform clips and the readings mean nothing."
)

// StepSignalSetup is the id of the signal-tracing set-up step.
const StepSignalSetup = "signal-setup"

// Tone band widening (the AC meter and the AC model): a handheld meter's
// AC accuracy ±(1.5 % + 5 digits) (common practice), the small-signal
// model's own error 5 % of the level (our choice: interelectrode and
// Miller capacitances and transformer leakage are not modelled) and 1 mV
// of hum and noise on any reading.
const (
	toneMeterFrac = 0.015
	toneModelFrac = 0.05
	toneFloor     = 1e-3 // volts
)

// ToneBench is a BenchModel that also answers the test-tone points ("V2.5
// tone_volts", "OT1.speaker tone_volts") of a healthy amplifier at full
// mains, from a Monte Carlo set of its own (bands.Run with ac.ToneExtra,
// the same tolerance samples as the DC points); every other key goes to
// the BenchModel. Tone bands are not conditioned on readings.
type ToneBench struct {
	*BenchModel
	Tone  ac.Options // with defaults filled in and the input net named
	set   *bands.Set
	op    *amp.OP
	phase map[string]complex128 // nominal tone phasor per point ID
	// Channels: the signal paths the tone follows, one per channel of a
	// multi-channel amp (each input to its own output transformer), else
	// one.
	Channels []Channel
}

// NewToneBench solves the tone bands of a bench model's design.
func NewToneBench(b *BenchModel, tone ac.Options) (*ToneBench, error) {
	if tone.Hz <= 0 {
		tone.Hz = ac.DefaultHz
	}
	if tone.Volts <= 0 {
		tone.Volts = ac.DefaultVolts
	}
	m, err := amp.Build(b.D)
	if err != nil {
		return nil, err
	}
	an, err := ac.New(m)
	if err != nil {
		return nil, err
	}
	var chans []Channel
	if tone.InputNet == "" {
		tone.InputNet = an.InputNet()
		if tone.InputNet == "" {
			return nil, fmt.Errorf("signal tracing: %s: no input grid found (a grid with only a grid leak to chassis): name the input net", b.D.File)
		}
		// Several channels: one generator on a Y lead into every input,
		// each channel traced in turn.
		if chans = ChannelsOf(b); len(chans) > 1 {
			tone.AllInputs = true
		}
	}
	if len(chans) < 2 {
		chans = []Channel{{Input: tone.InputNet, stages: signalChain(b, tone.InputNet)}}
		chans[0].OTs = speakersOf(b.D, chans[0].stages)
	}
	v := m.NominalValues()
	var op amp.OP
	if err := amp.NewSolver(m).Solve(amp.Conditions{}, v, false, &op); err != nil {
		return nil, fmt.Errorf("signal tracing: %w", err)
	}
	// The ac package drives every input only when it picks them itself.
	acOpt := tone
	if acOpt.AllInputs {
		acOpt.InputNet = ""
	}
	x, err := ac.ToneExtra(m, &op, v, acOpt)
	if err != nil {
		return nil, fmt.Errorf("signal tracing: %w", err)
	}
	set, err := bands.Run(b.D, bands.Options{Samples: b.opt.Samples, Seed: b.opt.Seed, Workers: b.opt.Workers, Extra: x})
	if err != nil {
		return nil, fmt.Errorf("signal tracing: %w", err)
	}
	pts, err := an.Tone(&op, v, acOpt, nil)
	if err != nil {
		return nil, fmt.Errorf("signal tracing: %w", err)
	}
	ph := map[string]complex128{}
	for _, p := range pts {
		ph[p.ID] = cmplx.Rect(p.Volts, p.Phase*math.Pi/180)
	}
	return &ToneBench{BenchModel: b, Tone: tone, set: set, op: &op, phase: ph, Channels: chans}, nil
}

// Expect implements Expecter: tone points from the tone set, widened by
// the AC meter's accuracy and the model's error; the rest from the
// BenchModel.
func (t *ToneBench) Expect(k point.Key, variac float64, readings []Reading) (Band, bool) {
	if k.Quantity != point.ToneVolts {
		return t.BenchModel.Expect(k, variac, readings)
	}
	i, ok := t.set.Index(k.String())
	if !ok {
		return Band{}, false
	}
	bb := t.set.Band(i)
	hi := math.Max(math.Abs(bb.High), math.Abs(bb.Nominal))
	w := (toneMeterFrac+toneModelFrac)*hi + toneFloor
	out := Band{Nominal: bb.Nominal, Low: math.Max(0, math.Min(bb.Low, bb.Nominal)-w), High: math.Max(bb.High, bb.Nominal) + w,
		Note: fmt.Sprintf("AC rms of the %s tone", fmtTone(t.Tone))}
	if pd := t.set.Points[i]; strings.HasSuffix(pd.Label, "cathode") || strings.Contains(pd.Label, "cathode") {
		if t.bypassed(pd.ID) {
			out.Note = join(out.Note, "bypassed cathode: near zero; a reading near the grid's level means the bypass capacitor is open")
		}
	}
	return out, true
}

// bypassed reports whether a cathode pin's nominal tone is under a tenth
// of its grid's (the bypass capacitor holds it at AC ground).
func (t *ToneBench) bypassed(id string) bool {
	ref, pin, ok := amp.ParseID(id)
	if !ok {
		return false
	}
	for _, s := range t.chain() {
		if s.ref == ref && s.cathode.Pin == pin {
			return cmplx.Abs(t.phase[id]) < 0.1*cmplx.Abs(t.phase[s.grid.ID])
		}
	}
	return false
}

func fmtTone(o ac.Options) string {
	hz := fmt.Sprintf("%g Hz", o.Hz)
	if o.Hz >= 1000 {
		hz = fmt.Sprintf("%g kHz", o.Hz/1000)
	}
	return units.Format(o.Volts, units.Volts) + " " + hz
}

// stage is one amplifying section on the signal path.
type stage struct {
	ref, section         string
	index                int // in Model.Sections
	dist                 int // nets from the input
	grid, plate, cathode amp.PointDef
}

// chain returns the sections the tone passes through, every channel's in
// turn.
func (t *ToneBench) chain() []stage {
	var out []stage
	for _, c := range t.Channels {
		out = append(out, c.stages...)
	}
	return out
}

// signalChain returns the sections a tone at the input net passes
// through, in signal order: a breadth-first walk over the nets from it, through
// resistors, pots and capacitors (either way) and through each valve
// section from its grid to its plate and cathode (one way), never through
// chassis or a supply net (both AC ground). Sections are ordered by the
// distance of their grid from the input, then in design order.
func signalChain(b *BenchModel, input string) []stage {
	d := b.D
	ground := map[string]bool{d.Ground: true}
	for _, n := range supplyNets(b) {
		ground[n] = true
	}
	dist := map[string]int{input: 0}
	if id, ok := netOfPin(d, input); ok {
		dist = map[string]int{id: 0}
	}
	q := []string{}
	for n := range dist {
		q = append(q, n)
	}
	secs := b.M.Sections
	for len(q) > 0 {
		n := q[0]
		q = q[1:]
		visit := func(m string) {
			if m == "" || ground[m] {
				return
			}
			if _, seen := dist[m]; !seen {
				dist[m] = dist[n] + 1
				q = append(q, m)
			}
		}
		for _, u := range d.Nets[n] {
			p := d.ByRef[u.Ref]
			if p == nil {
				continue
			}
			switch p.Kind {
			case design.Resistor, design.Pot, design.Capacitor:
				for _, tm := range p.Terminals {
					visit(tm.Net)
				}
			}
		}
		for _, s := range secs {
			e := d.ByRef[s.Ref].Valve.Sections[s.Section]
			if e[valves.Grid] == n {
				visit(e[valves.Plate])
				visit(e[valves.Cathode])
			}
		}
	}
	pts := b.M.Points()
	var out []stage
	for i, s := range secs {
		e := d.ByRef[s.Ref].Valve.Sections[s.Section]
		dg, ok := dist[e[valves.Grid]]
		if !ok {
			continue
		}
		st := stage{ref: s.Ref, section: s.Section, index: i, dist: dg}
		for _, pd := range pts {
			if pd.Section != i || pd.Quantity != amp.DCVolts {
				continue
			}
			switch pd.Electrode {
			case valves.Grid:
				st.grid = pd
			case valves.Plate:
				st.plate = pd
			case valves.Cathode:
				if st.cathode.ID == "" {
					st.cathode = pd
				}
			}
		}
		if st.grid.ID == "" || st.plate.ID == "" {
			continue
		}
		out = append(out, st)
	}
	sort.SliceStable(out, func(a, c int) bool { return out[a].dist < out[c].dist })
	return out
}

// netOfPin resolves a pin id ("V1.7") to its net.
func netOfPin(d *design.Design, id string) (string, bool) {
	ref, pin, ok := amp.ParseID(id)
	if !ok {
		return "", false
	}
	p := d.ByRef[ref]
	if p == nil || p.Valve == nil {
		return "", false
	}
	n, ok := p.Valve.PinNets[pin]
	return n, ok
}

// speakersOf returns the output transformers whose primary carries the
// signal (a primary end on a plate of the chain), in chain order.
func speakersOf(d *design.Design, ch []stage) []*design.Part {
	var out []*design.Part
	seen := map[string]bool{}
	for _, s := range ch {
		for _, p := range d.PartsOfKind(design.OutputTransformer) {
			if seen[p.Ref] {
				continue
			}
			for _, end := range p.OT.Ends {
				if end == s.plate.Net {
					out = append(out, p)
					seen[p.Ref] = true
					break
				}
			}
		}
	}
	return out
}

// clipLevel returns the highest input tone (rms volts) before a stage's
// grid swings past its bias (peak grid-to-cathode tone = DC bias), and
// that stage's ref; +Inf when no stage limits.
func (t *ToneBench) clipLevel(ch []stage) (float64, string) {
	best, who := math.Inf(1), ""
	for _, s := range ch {
		so := t.op.Sections[s.index]
		bias := so.Vk - so.Vg
		vgk := t.phase[s.grid.ID]
		if s.cathode.ID != "" {
			vgk -= t.phase[s.cathode.ID]
		}
		pk := math.Sqrt2 * cmplx.Abs(vgk)
		if bias <= 0 || pk <= 0 {
			continue
		}
		if lim := t.Tone.Volts * bias / pk; lim < best {
			best, who = lim, s.ref+s.section
		}
	}
	return best, who
}

// toneMeasure builds the measure of a tone point.
func (t *ToneBench) toneMeasure(id, label, probes string) (Measure, bool) {
	key := point.LiveKey(id, point.ToneVolts)
	bd, ok := t.Expect(key, 1, nil)
	if !ok {
		return Measure{}, false
	}
	return Measure{Point: key, Label: label + " (tone)", Function: FuncACV, Unit: "V", Range: acRange(bd.High), Probes: probes}, true
}

// acRange suggests an AC volts range.
func acRange(v float64) string {
	if v <= 0.18 {
		return "200 mV AC"
	}
	return rangeFor(v, "V AC")
}

// SignalProcedure generates the signal-tracing procedure of a design: the
// safety steps, then with a dummy load on every output and a sine tone
// (tone: level and frequency; the input net defaults to the first stage's
// input grid, ac.Analyzer.InputNet, and on a multi-channel amp to every
// channel's input through a Y lead, ChannelsOf) the tone's AC level at
// each grid, plate and cathode of every stage on the signal path in
// signal order, then at the speaker terminals, channel by channel (each
// step's title names its channel), each against its band (bands.Run with
// ac.ToneExtra, widened by the AC meter's accuracy and the model's
// error), then the summary. Run it with the ToneBench it returns as the
// Expecter (NewToneBench), or call SignalProcedureWith.
func SignalProcedure(b *BenchModel, tone ac.Options) (*Procedure, error) {
	tb, err := NewToneBench(b, tone)
	if err != nil {
		return nil, err
	}
	return SignalProcedureWith(tb)
}

// SignalProcedureWith is SignalProcedure on a ToneBench already solved.
func SignalProcedureWith(tb *ToneBench) (*Procedure, error) {
	b := tb.BenchModel
	p := &Procedure{Mode: FaultFind, Title: "Signal tracing: " + b.D.Title}
	safe, gate := safetySteps(b)
	p.Steps = append(p.Steps, safe...)
	ch := tb.chain()
	if len(ch) == 0 {
		return nil, fmt.Errorf("signal tracing: %s: no stage is reached from the input net %s", b.D.File, tb.Tone.InputNet)
	}
	multi := len(tb.Channels) > 1
	cautions := []string{LiveCaution, DummyLoadCaution, GeneratorCaution}
	clip, who := tb.clipLevel(ch)
	into := inputWhere(tb.Tone.InputNet, ch[0])
	if multi {
		var ins []string
		for _, c := range tb.Channels {
			if len(c.stages) > 0 {
				ins = append(ins, c.Title()+" into "+inputWhere(c.Input, c.stages[0]))
			}
		}
		into = "every input at once through a Y lead, chassis as its ground (" + strings.Join(ins, "; ") + ")"
	} else {
		into += " (chassis as its ground)"
	}
	level := fmt.Sprintf("Set the generator to a sine of %s rms at %s into %s.", units.Format(tb.Tone.Volts, units.Volts), fmtHz(tb.Tone.Hz), into)
	if !math.IsInf(clip, 1) {
		if tb.Tone.Volts > 0.7*clip {
			level += fmt.Sprintf(" WARNING: at this level %s's grid swings past (or close to) its bias: the amp clips above about %s at the input. Use %s or less.",
				who, units.Format(clip, units.Volts), units.Format(0.5*clip, units.Volts))
		} else {
			level += fmt.Sprintf(" The amp clips above about %s at the input (%s's grid reaches its bias): stay well below.", units.Format(clip, units.Volts), who)
		}
	}
	inputWord := "input"
	if multi {
		inputWord = "inputs"
	}
	var loads []string
	for _, c := range tb.Channels {
		for _, ot := range c.OTs {
			if ot.OT.Load > 0 {
				loads = append(loads, fmt.Sprintf("%s: %s", ot.Ref, units.Format(ot.OT.Load, units.Ohms)))
			}
		}
	}
	setup := &Step{ID: StepSignalSetup, Kind: KindTone, Live: true, Variac: 1, Gate: gate, Cautions: cautions,
		Title: "Set up: dummy load, signal generator, power up",
		Instruction: fmt.Sprintf("Unplugged: connect a dummy load of the rated impedance to every output (%s) and the signal generator to the %s. %s "+
			"Plug in through the variac and series lamp and bring it up to 100 %%; wait a minute for the heaters. Use the meter's AC volts function (or a scope) for every reading in this procedure.",
			strings.Join(loads, ", "), inputWord, level),
		Why:    "A test tone of known level at the input shows, stage by stage, where the signal stops or shrinks: an open coupling capacitor, an open cathode bypass or a weak valve leaves the DC volts normal but not the tone.",
		StopIf: []string{"the series lamp glows bright and stays bright", "a plate glows red", "smoke, arcing, or a smell of hot varnish"}}
	if multi {
		setup.Why += " Each channel is traced in turn from its own input; the channels' readings should match each other as well as their bands."
	}
	p.Steps = append(p.Steps, setup)
	done := map[string]bool{}
	for _, c := range tb.Channels {
		prefix := ""
		if multi {
			t := c.Title()
			prefix = strings.ToUpper(t[:1]) + t[1:] + ": "
		}
		// Each channel's steps follow the set-up and each other; one
		// channel does not wait on another (the complaint's side first).
		prev := setup.ID
		for n, s := range c.stages {
			id := "signal-" + s.ref + s.section
			if done[id] {
				continue
			}
			v := b.D.ByRef[s.ref]
			name := s.ref
			if s.section != "" {
				name += " section " + s.section
			}
			st := &Step{ID: id, Kind: KindTone, Live: true, Variac: 1, Gate: append(append([]string(nil), gate...), prev), Cautions: cautions,
				Title: fmt.Sprintf("%sTone through %s (%s)", prefix, name, v.Valve.Type.Name),
				Instruction: fmt.Sprintf("With the tone on, measure AC volts from %s's grid, plate and cathode to chassis (socket viewed from below). The plate carries hundreds of volts DC: the AC volts function blocks it on most meters (else a 0.1 µF capacitor rated for the HT in series).",
					name),
				Why:    "The grid shows what reaches the stage, the plate what it makes of it; a bypassed cathode sits near zero, and reads near the grid's level when its bypass capacitor is open (the stage's gain falls).",
				StopIf: []string{"a plate glows red", "smoke, arcing, or a smell of hot varnish"}}
			if n == 0 {
				st.Why = "The first reading checks the generator's level at the input grid: every later band assumes it."
			}
			for _, pd := range []amp.PointDef{s.grid, s.plate, s.cathode} {
				if pd.ID == "" || pd.Net == b.D.Ground {
					continue
				}
				probes := fmt.Sprintf("red on %s pin %d (socket viewed from below), black on chassis", pd.Valve, pd.Pin)
				if m, ok := tb.toneMeasure(pd.ID, pd.Label+" (from below)", probes); ok {
					st.Measures = append(st.Measures, m)
				}
			}
			if len(st.Measures) > 0 {
				p.Steps = append(p.Steps, st)
				done[id] = true
				prev = st.ID
			}
		}
		for _, ot := range c.OTs {
			id := "signal-" + ot.Ref
			if done[id] {
				continue
			}
			m, ok := tb.toneMeasure(ot.Ref+ac.SpeakerSuffix, fmt.Sprintf("%s speaker terminals", ot.Ref), "across the dummy load (the speaker terminals), either lead")
			if !ok {
				continue
			}
			bd, _ := tb.Expect(m.Point, 1, nil)
			watts := 0.0
			if ot.OT.Load > 0 {
				watts = bd.Nominal * bd.Nominal / ot.OT.Load
			}
			p.Steps = append(p.Steps, &Step{ID: id, Kind: KindTone, Live: true, Variac: 1, Gate: append(append([]string(nil), gate...), prev), Cautions: cautions,
				Title:       fmt.Sprintf("%sTone at the %s speaker terminals", prefix, ot.Ref),
				Instruction: fmt.Sprintf("Measure AC volts across the dummy load on %s's secondary: about %s into %s (%s W).", ot.Ref, units.Format(bd.Nominal, units.Volts), units.Format(ot.OT.Load, units.Ohms), fmt.Sprintf("%.2g", watts)),
				Measures:    []Measure{m},
				Why:         "The output is the product of every stage's gain and the transformer's ratio; if every earlier reading is in band and this one is not, suspect the output transformer or its wiring.",
				StopIf:      []string{"the dummy load runs hot beyond its rating", "smoke, arcing, or a smell of hot varnish"}})
			done[id] = true
			prev = id
		}
	}
	p.Steps = append(p.Steps, summaryStep())
	return p, nil
}

func inputWhere(input string, first stage) string {
	if first.grid.ID != "" && (first.grid.Net == input || first.grid.ID == input) {
		return fmt.Sprintf("%s's grid (pin %d, net %s)", first.ref, first.grid.Pin, first.grid.Net)
	}
	return "net " + input
}

func fmtHz(hz float64) string {
	if hz >= 1000 {
		return fmt.Sprintf("%g kHz", hz/1000)
	}
	return fmt.Sprintf("%g Hz", hz)
}
