package procedures

import (
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"strings"

	"pinwalk/expect/amp"
	"pinwalk/expect/bands"
	"pinwalk/expect/design"
	"pinwalk/expect/faults"
	"pinwalk/expect/point"
	"pinwalk/expect/units"
	"pinwalk/expect/valves"
	"pinwalk/procedures/infer"
)

// Fault-finding constants.
const (
	// ClearProbability: a suspect (or one group of suspects that no
	// reading can tell apart) this probable ends the measuring loop.
	ClearProbability = 0.9
	// MinColdGainBits: a cold measurement expected to tell less than this
	// is not worth taking before power-up (our choice).
	MinColdGainBits = 0.05
	// LiveGainShare: before power-up, the amp is powered up as soon as the
	// best cold measurement is expected to tell less than this share of
	// what the best live one would (our choice): the cold checks that
	// rule out shorts and opens come first, then the amp is brought up
	// rather than walking every remaining cold path.
	LiveGainShare = 0.1
	// MaxProbes bounds the measuring loop.
	MaxProbes = 40
	// StepSymptoms and StepPowerUp are fixed step ids of fault-finding.
	StepSymptoms = "symptoms"
	StepPowerUp  = "power-up"
	StepName     = "name-fault"
	StepConfirm  = "confirm-fault"
	StepReplace  = "replace"
)

// FaultFindProcedure generates the fixed part of a fault-finding (or
// practice) procedure: symptoms, then the safety steps (briefing, meter
// proof, discharge, earth), then the summary. The measuring loop
// (newFaultLoop) adds the rest as readings come in.
func FaultFindProcedure(b *BenchModel, mode Mode) (*Procedure, error) {
	p := &Procedure{Mode: mode, Title: "Fault-finding: " + b.D.Title}
	if mode == Practise {
		p.Title = "Practice: " + b.D.Title
	}
	sym := &Step{ID: StepSymptoms, Kind: KindSymptoms, Title: "Symptoms",
		Instruction: "What does the amp do wrong? Type: symptoms LIST (comma-separated, from: " + strings.Join(infer.Symptoms, ", ") +
			"), then confirm; or confirm with none.",
		Why: "Symptoms set the starting odds: a blown fuse points at shorts, hum at filter capacitors, one dead channel at that channel's parts."}
	if mode == Practise {
		sym.Instruction = "Practice: the tool has picked a fault and answers your measurements from a simulated amp. Confirm to start. After the safety steps each best next measurement follows by itself: m to take the (simulated) reading, measure KEY to choose your own, power to power up, name REF:MODE when you know."
	}
	if chs := ChannelsOf(b); len(chs) > 1 && mode != Practise {
		var names []string
		for _, c := range chs {
			names = append(names, c.Title())
		}
		sym.Asks = []Ask{{Field: FieldChannel, Prompt: fmt.Sprintf("Which channel has the complaint: %s, or both?", strings.Join(names, ", "))}}
		if pairs, shared := swapPairs(b.D, chs); len(pairs) > 0 {
			var ps, vs []string
			for _, pr := range pairs {
				ps = append(ps, pr[0]+" with "+pr[1])
				vs = append(vs, pr[0]+"/"+pr[1])
			}
			note := ""
			if len(shared) > 0 {
				note = " " + strings.Join(shared, ", ") + " serves both channels: a swap cannot tell it."
			}
			sym.Instruction += fmt.Sprintf(" The swap test, with the amp closed and used as the customer does, a speaker or dummy load on every output: switch off and unplug, "+
				"let the valves cool (they burn), swap %s, power up and listen.%s Does the fault move to the other channel with the valve?", strings.Join(ps, " and "), note)
			sym.Asks = append(sym.Asks, Ask{Field: FieldSwap + ":" + strings.Join(vs, ","),
				Prompt: fmt.Sprintf("Swap test (%s): follows (the fault moved with the valve), stays, or Enter: not tried", strings.Join(ps, ", "))})
		}
	}
	if mode != Practise {
		p.Steps = append([]*Step{intakeStep()}, p.Steps...)
	}
	p.Steps = append(p.Steps, sym)
	safe, gate := safetySteps(b)
	for _, s := range safe {
		if len(s.Gate) == 0 {
			s.Gate = []string{StepSymptoms}
		}
	}
	p.Steps = append(p.Steps, safe...)
	if mode != Practise {
		p.Steps = append(p.Steps, visualStep(gate))
	}
	p.Steps = append(p.Steps, summaryStep())
	return p, nil
}

// swapPairs pairs the valves of the first two channels stage by stage
// where they are different valves of one type (V2 with V3); a valve
// whose sections serve both channels is listed as shared.
func swapPairs(d *design.Design, chs []Channel) (pairs [][2]string, shared []string) {
	if len(chs) < 2 {
		return nil, nil
	}
	a, b := chs[0].stages, chs[1].stages
	seen := map[string]bool{}
	for i := 0; i < len(a) && i < len(b); i++ {
		ra, rb := a[i].ref, b[i].ref
		if ra == rb {
			if !seen[ra] {
				shared = append(shared, ra)
				seen[ra] = true
			}
			continue
		}
		va, vb := d.ByRef[ra], d.ByRef[rb]
		if va == nil || vb == nil || va.Valve == nil || vb.Valve == nil || va.Valve.Type.Name != vb.Valve.Type.Name || seen[ra+"/"+rb] {
			continue
		}
		seen[ra+"/"+rb] = true
		pairs = append(pairs, [2]string{ra, rb})
	}
	return pairs, shared
}

// faultLoop is the measuring loop of fault-finding and practice.
type faultLoop struct {
	w        *Walk
	eng      *infer.Engine
	symptoms string // the symptoms the engine was built with
	safety   []string
	sim      map[string]float64 // practice: what the simulated amp reads
	rank     *infer.Ranking
	// rankFor is the evidence the ranking was computed on; rankCalls
	// counts the rankings computed (once per new piece of evidence).
	rankFor   string
	rankCalls int
}

func newFaultLoop(w *Walk) (*faultLoop, error) {
	l := &faultLoop{w: w}
	_, l.safety = safetySteps(w.B)
	for _, id := range []string{StepIntake, StepVisual} {
		if w.R.Proc.Step(id) != nil {
			l.safety = append(l.safety, id)
		}
	}
	s := w.R.Sess
	if s.Mode == Practise && s.Practice == nil {
		s.Practice = &Practice{Seed: s.Seed}
	}
	return l, nil
}

// engine builds (or rebuilds after the symptoms changed) the inference.
func (l *faultLoop) engine() (*infer.Engine, error) {
	key := strings.Join(l.w.R.Sess.Symptoms, ",")
	if l.eng != nil && key == l.symptoms {
		return l.eng, nil
	}
	e, err := infer.New(l.w.B.D, infer.Options{Seed: l.w.R.Sess.Seed, Symptoms: l.w.R.Sess.Symptoms})
	if err != nil {
		return nil, err
	}
	l.eng, l.symptoms = e, key
	return e, nil
}

// practiceFault picks the hidden fault by seed and simulates the amp.
func (l *faultLoop) practice() error {
	s := l.w.R.Sess
	if s.Mode != Practise || l.sim != nil {
		return nil
	}
	e, err := l.engine()
	if err != nil {
		return err
	}
	if s.Practice.Fault == "" {
		f, c, err := l.drawPractice(e, s.Practice.Seed)
		if err != nil {
			return err
		}
		s.Practice.Fault, s.Practice.Complaint, s.Practice.Symptom = f, c.Words, c.Symptom
		// The complaint is on the job card: its symptom sets the starting
		// odds, as a technician would enter it (symptoms LIST changes it).
		if len(s.Symptoms) == 0 && c.Symptom != "" {
			s.Symptoms = []string{c.Symptom}
		}
	} else if s.Practice.Complaint == "" {
		// A fault set by hand (a trainer's choice): the complaint it gives.
		if c, ok := complaintOf(l.w.B, e, s.Practice.Fault); ok {
			s.Practice.Complaint, s.Practice.Symptom = c.Words, c.Symptom
			if len(s.Symptoms) == 0 && c.Symptom != "" {
				s.Symptoms = []string{c.Symptom}
			}
		}
	}
	sim, err := e.Simulate(s.Practice.Fault, s.Practice.Seed)
	if err != nil {
		return err
	}
	l.sim = sim
	return nil
}

// drawPractice picks a practice session's hidden fault: among the faults
// a customer would notice (complaintOf) and some reading of the walk can
// tell from a healthy amp (one no reading sees teaches nothing: an open
// coupling capacitor shows only on a test tone), weighted by their priors
// (common-practice failure rates), with the complaint in the customer's
// words and the symptom it reports.
func (l *faultLoop) drawPractice(e *infer.Engine, seed uint64) (fault string, c Complaint, err error) {
	all := faults.All(l.w.B.M)
	if len(all) == 0 {
		return "", Complaint{}, fmt.Errorf("practice: the design has no modelled faults")
	}
	type cand struct {
		name string
		c    Complaint
		w    float64
	}
	var cs []cand
	total := 0.0
	for _, f := range all {
		name := f.String()
		w := e.Prior(name)
		if !(w > 0) || e.SameGroup(name, infer.Healthy, true) {
			continue
		}
		c, ok := complaintOf(l.w.B, e, name)
		if !ok {
			continue
		}
		cs = append(cs, cand{name, c, w})
		total += w
	}
	if len(cs) == 0 {
		return "", Complaint{}, fmt.Errorf("practice: no modelled fault of this design would be noticed by its owner")
	}
	r := rand.New(rand.NewPCG(seed, 0x70726163))
	x := r.Float64() * total
	for _, c := range cs {
		if x -= c.w; x <= 0 {
			return c.name, c.c, nil
		}
	}
	last := cs[len(cs)-1]
	return last.name, last.c, nil
}

// Complaint is what an owner says about a fault, and the symptom (one of
// infer.Symptoms, or "") it reports.
type Complaint struct {
	Words, Symptom string
}

// darkShare: heater volts under this share of healthy: no glow (common
// practice).
const darkShare = 0.3

// complaintOf says what an owner would notice with a fault, in the
// owner's words, and the symptom it reports. The fault is solved in the
// whole amp and its levels compared with the healthy amp's (notice.go):
// a fault that moves the gain or the maximum output by less than
// NoticeDB, kills nothing, blows nothing, hums no more and overheats
// nothing is not noticed (ok false): nobody brings such an amplifier in.
// The complaint names what the owner hears and sees, the most striking
// first: no lights, a fuse that blows, a valve that stays dark, a red
// plate, no sound, one channel silent or weak, hum, a burning smell, a
// quieter amp, one that breaks up early, one that got louder.
func complaintOf(b *BenchModel, e *infer.Engine, fault string) (Complaint, bool) {
	m := b.M
	if e.NearShort(fault) {
		return Complaint{"It blew its fuse. I put a new one in and that blew too, as soon as I switched on.", "fuse-blows"}, true
	}
	ef := effectOf(m, fault)
	if !ef.noticed() {
		return Complaint{}, false
	}
	if ef.allDark {
		return Complaint{"Nothing at all: the valves don't light up and there is no sound, not even a hum.", "no-lights"}, true
	}
	stereo := len(ef.gainDB) > 1
	silent, weak, fine := 0, 0, 0
	worst := 0.0
	for i, g := range ef.gainDB {
		switch {
		case g <= -SilentDB:
			silent++
		case g <= -NoticeDB || ef.maxDB[i] <= -NoticeDB:
			weak++
		default:
			fine++
		}
		worst = math.Min(worst, g)
	}
	power := func(ref string) bool {
		for _, s := range m.Sections {
			if s.Ref == ref && s.Type.Limits.PlateWatts >= PowerValveWatts {
				return true
			}
		}
		return false
	}
	if len(ef.dark) > 0 {
		ref := ef.dark[0]
		switch {
		case b.D.ByRef[ref] != nil && b.D.ByRef[ref].Valve != nil && b.D.ByRef[ref].Valve.Type.Kind == valves.Rectifier:
			return Complaint{"The valves light up except one, and there is no sound at all.", "no-sound"}, true
		case power(ref) && stereo && fine > 0:
			return Complaint{"One channel has gone silent, and one of the big valves does not light up.", "no-sound-one-channel"}, true
		case power(ref):
			return Complaint{"It has gone weak and distorted, and one of the big valves does not light up.", "low-volume"}, true
		case silent > 0 && fine == 0:
			return Complaint{"One of the small valves does not light up, and the sound has gone.", "no-sound"}, true
		case stereo && fine > 0:
			return Complaint{"One of the small valves does not light up, and one channel has gone quiet.", "no-sound-one-channel"}, true
		}
		return Complaint{"One of the small valves does not light up, and it has gone quiet.", "low-volume"}, true
	}
	if len(ef.red) > 0 {
		if silent > 0 && fine == 0 && weak == 0 {
			return Complaint{"There is no sound at all, and after a few minutes the big valves glow red inside.", "red-plate"}, true
		}
		if stereo && silent > 0 {
			return Complaint{"One channel has gone silent, and after a few minutes one of its big valves glows red inside.", "red-plate"}, true
		}
		return Complaint{"After a few minutes one of the big valves glows red inside, and it starts to sound rough.", "red-plate"}, true
	}
	switch {
	case silent > 0 && fine == 0 && weak == 0:
		return Complaint{"The valves light up but there is no sound at all.", "no-sound"}, true
	case stereo && silent > 0:
		return Complaint{"One channel has gone silent (or very faint); the other is fine.", "no-sound-one-channel"}, true
	}
	if ef.humLoud {
		return Complaint{"It hums loudly, even with the volume right down.", "hum"}, true
	}
	if ef.humUp {
		return Complaint{"There's a hum from the speaker that wasn't there before; you hear it between songs.", "hum"}, true
	}
	if len(ef.burnt) > 0 {
		return Complaint{"After it has been on a while there is a hot, burning smell from inside.", ""}, true
	}
	if stereo && weak > 0 && fine > 0 {
		return Complaint{"One channel is quieter than the other and breaks up sooner.", "low-volume"}, true
	}
	if weak > 0 {
		gainLow, maxLow := false, false
		for i := range ef.gainDB {
			gainLow = gainLow || ef.gainDB[i] <= -NoticeDB
			maxLow = maxLow || ef.maxDB[i] <= -NoticeDB
		}
		switch {
		case worst <= -VeryQuietDB:
			return Complaint{"It has gone very quiet: even turned right up it is nowhere near as loud as it was.", "low-volume"}, true
		case gainLow:
			return Complaint{"It's quieter than it used to be: I have to turn it up further for the same volume.", "low-volume"}, true
		case maxLow && worstMax(ef) <= -VeryQuietDB:
			return Complaint{"It distorts even when I play it quietly.", "low-volume"}, true
		case maxLow:
			return Complaint{"It breaks up early: it can't play as loud as it used to before it distorts.", "low-volume"}, true
		}
	}
	// What is left of noticed(): the gain has gone up by NoticeDB or more.
	return Complaint{"It has got louder at the same setting of the volume, and harsher.", ""}, true
}

// baseDone: symptoms and every safety step done.
func (l *faultLoop) baseDone() bool {
	if !l.w.R.Done(StepSymptoms) {
		return false
	}
	for _, id := range l.safety {
		if !l.w.R.Done(id) {
			return false
		}
	}
	return true
}

func (l *faultLoop) powered() bool { return l.w.R.Done(StepPowerUp) }

// observations: the session's evidence (Observations).
func (l *faultLoop) observations() []infer.Observation {
	return Observations(l.w.R.Sess.Readings, l.w.B.D)
}

// isCold reports whether an inference key names a cold point (a
// resistance unplugged, or a look with the power off).
func isCold(k string) bool {
	pk, err := point.Parse(k)
	return err == nil && (pk.Domain == point.Cold || pk.Domain == point.Look)
}

func isLive(k string) bool { return !isCold(k) }

func (l *faultLoop) allowed() func(string) bool {
	if l.powered() {
		return isLive
	}
	return isCold
}

// Rank ranks the suspects on the readings so far. The ranking is
// computed once per new piece of evidence (a reading accepted, the amp
// powered, the symptoms changed) and reused until then.
func (l *faultLoop) Rank() (*infer.Ranking, error) {
	e, err := l.engine()
	if err != nil {
		return nil, err
	}
	obs := l.observations()
	var sig strings.Builder
	fmt.Fprintf(&sig, "%v|%s|", l.powered(), l.symptoms)
	for _, o := range obs {
		fmt.Fprintf(&sig, "%s=%g;", o.Key, o.Value)
	}
	if l.rank != nil && sig.String() == l.rankFor {
		return l.rank, nil
	}
	l.rank = e.Rank(obs, l.allowed())
	l.rankFor = sig.String()
	l.rankCalls++
	return l.rank, nil
}

// clear reports the clear suspect (or group), if any.
func clearSuspect(r *infer.Ranking) (string, bool) {
	if r == nil || len(r.Suspects) == 0 {
		return "", false
	}
	top := r.Suspects[0]
	if top.Probability >= ClearProbability {
		return top.Fault, true
	}
	for _, g := range r.Groups {
		sum := 0.0
		for _, f := range g {
			for _, s := range r.Suspects {
				if s.Fault == f {
					sum += s.Probability
				}
			}
		}
		if sum >= ClearProbability && len(g) > 0 {
			return strings.Join(g, " or "), true
		}
	}
	return "", false
}

func (l *faultLoop) countProbes() int {
	n := 0
	for _, s := range l.w.R.Proc.Steps {
		if strings.HasPrefix(s.ID, "probe-") {
			n++
		}
	}
	return n
}

// openStep reports whether an added step is still open.
func (l *faultLoop) openAdded() bool {
	for _, s := range l.w.R.Sess.Added {
		if !l.w.R.Done(s.ID) {
			return true
		}
	}
	return false
}

// Advance implements Loop. Once the safety steps are done it ranks the
// suspects after every reading and adds (and moves to) the best next
// measurement, until one suspect (or one group no reading separates) is
// clear; then it adds the confirm and replacement steps (and in practice
// the naming step). When no cold measurement is worth taking it adds the
// power-up step first.
func (l *faultLoop) Advance() error {
	r := l.w.R
	if r.Sess.Mode == Practise && r.Sess.Outcome == nil {
		if err := l.practice(); err != nil {
			return err
		}
	}
	if r.Sess.Outcome == nil && l.offForStop() {
		return nil
	}
	if !l.baseDone() || l.openAdded() || r.Sess.Outcome != nil {
		return nil
	}
	rk, err := l.Rank()
	if err != nil {
		return err
	}
	if f, ok := clearSuspect(rk); ok || l.countProbes() >= MaxProbes {
		if !ok {
			f = rk.Suspects[0].Fault
		}
		l.conclude(f, ok)
		return nil
	}
	return l.addNext(rk)
}

// addNext adds the best next measurement, or the power-up step when no
// cold measurement is worth taking. While a stop is in force, or after a
// switch-off, the amp is not powered again by the loop: cold readings go
// on while one tells anything (stophold.go), then the measuring ends
// with the leading suspect (power stays the technician's own command).
func (l *faultLoop) addNext(rk *infer.Ranking) error {
	if l.powered() && l.w.R.PendingHalt() == nil {
		if cold := l.coldNext(); coldNow(rk.Next, cold) {
			l.withdraw()
			l.offForCold(cold)
			return nil
		}
	}
	if !l.powered() && l.underStop() {
		if rk.Next == nil || rk.Next.Live || rk.Next.GainBits < MinColdGainBits {
			l.conclude(rk.Suspects[0].Fault, false)
			return nil
		}
		l.addProbe(*rk.Next, rk)
		return nil
	}
	if !l.powered() && powerNow(rk.Next, l.liveNext) {
		return l.addPowerUp()
	}
	if rk.Next == nil {
		l.conclude(rk.Suspects[0].Fault, false)
		return nil
	}
	l.addProbe(*rk.Next, rk)
	return nil
}

// powerNow reports whether to power up rather than take the best cold
// measurement: none is left, or it is expected to tell less than
// MinColdGainBits, or less than LiveGainShare of the best live one.
func powerNow(cold *infer.Probe, live func() *infer.Probe) bool {
	if cold == nil || cold.GainBits < MinColdGainBits {
		return true
	}
	lp := live()
	return lp != nil && cold.GainBits < LiveGainShare*lp.GainBits
}

// coldNext is the best cold measurement (or look) on the readings so far.
func (l *faultLoop) coldNext() *infer.Probe {
	e, err := l.engine()
	if err != nil {
		return nil
	}
	return e.NextAmong(l.observations(), isCold)
}

// liveNext is the best live measurement on the readings so far (the next
// measurement only: the ranking itself is not computed again).
func (l *faultLoop) liveNext() *infer.Probe {
	e, err := l.engine()
	if err != nil {
		return nil
	}
	return e.NextAmong(l.observations(), isLive)
}

// addPowerUp adds the power-up step (once) and moves to it; an open
// suggested cold measurement that has no reading yet is withdrawn.
func (l *faultLoop) addPowerUp() error {
	w := l.w
	if w.R.Proc.Step(StepPowerUp) == nil {
		st, err := l.powerUpStep()
		if err != nil {
			return err
		}
		l.withdraw()
		// Suspects that would over-dissipate the output valves: a first
		// power-up with them out of their sockets proves the grids.
		if risky := l.riskyOutputs(); len(risky.valves) > 0 && w.R.Proc.Step(StepPowerUpPulled) == nil {
			pre, refit := l.pulledPowerUp(risky)
			w.AddStep(pre)
			w.AddStep(refit)
			st.Gate = append(st.Gate, pre.ID, refit.ID)
			st.Why += " " + risky.why
		}
		w.AddStep(st)
	}
	if id := StepPowerUpPulled; w.R.Proc.Step(id) != nil && !w.R.Done(id) {
		if err := w.R.Goto(id); err == nil {
			return nil
		}
	}
	if id := StepRefitOutputs; w.R.Proc.Step(id) != nil && !w.R.Done(id) && w.R.Done(StepPowerUpPulled) {
		if err := w.R.Goto(id); err == nil {
			return nil
		}
	}
	if w.R.Done(StepPowerUp) {
		return nil
	}
	if err := w.R.Goto(StepPowerUp); err != nil {
		var ge *GateError
		if errors.As(err, &ge) {
			return nil // the state shows what blocks it
		}
		return err
	}
	return nil
}

// Step ids of the power-up with the output valves out.
const (
	StepPowerUpPulled = "power-up-outputs-out"
	StepRefitOutputs  = "refit-outputs"
)

// RiskShare: a suspect at least this probable that would drive an output
// valve over its rated plate or screen dissipation makes the first
// power-up go without the output valves (our choice).
const RiskShare = 0.05

type riskyOut struct {
	valves []string // output valves to pull
	grids  []amp.PointDef
	why    string
}

// riskyOutputs finds the leading suspects under which powering up with
// every valve fitted would over-dissipate an output valve (a lost bias,
// a shorted cathode resistor or bypass, an open plate winding leaving
// the screen to take the current): each is solved at full mains and its
// output sections' plate and screen dissipation compared with their
// ratings.
func (l *faultLoop) riskyOutputs() riskyOut {
	var out riskyOut
	if l.rank == nil {
		if _, err := l.Rank(); err != nil {
			return out
		}
	}
	m := l.w.B.M
	solver := amp.NewSolver(m)
	seen := map[string]bool{}
	var whys []string
	for _, sp := range l.rank.Suspects {
		if sp.Probability < RiskShare || len(whys) >= 3 {
			continue
		}
		f, err := faults.Parse(sp.Fault)
		if err != nil {
			continue
		}
		v := m.NominalValues()
		if faults.Apply(m, v, f) != nil {
			continue
		}
		var op amp.OP
		if solver.Solve(amp.Conditions{}, v, false, &op) != nil {
			continue
		}
		for i, sec := range m.Sections {
			if !sec.Pentode || i >= len(op.Sections) {
				continue
			}
			so, lim := op.Sections[i], sec.Type.Limits
			over := ""
			switch {
			case lim.PlateWatts > 0 && so.Pa > lim.PlateWatts:
				over = fmt.Sprintf("%s plate %s of its %s", sec.Ref, units.Format(so.Pa, units.Watts), units.Format(lim.PlateWatts, units.Watts))
			case lim.ScreenWatts > 0 && so.Pg2 > lim.ScreenWatts:
				over = fmt.Sprintf("%s screen %s of its %s", sec.Ref, units.Format(so.Pg2, units.Watts), units.Format(lim.ScreenWatts, units.Watts))
			}
			if over == "" {
				continue
			}
			whys = append(whys, fmt.Sprintf("with %s (%.0f %%) %s", sp.Label, 100*sp.Probability, over))
			for _, s2 := range m.Sections {
				if s2.Pentode && !seen[s2.Ref] {
					seen[s2.Ref] = true
					out.valves = append(out.valves, s2.Ref)
				}
			}
			break
		}
	}
	if len(out.valves) == 0 {
		return out
	}
	for _, pd := range m.Points() {
		if pd.Electrode == valves.Grid && pd.Quantity == amp.DCVolts && seen[pd.Valve] && pd.Section >= 0 && m.Sections[pd.Section].Pentode {
			out.grids = append(out.grids, pd)
		}
	}
	out.why = "The first power-up goes without the output valves: " + strings.Join(whys, "; ") + "."
	return out
}

// pulledPowerUp is the power-up with the output valves out (their grids
// read: the bias or the coupling from the driver) and the hands-in step
// that refits them.
func (l *faultLoop) pulledPowerUp(r riskyOut) (*Step, *Step) {
	b := l.w.B
	g := append([]string(nil), l.safety...)
	pre := &Step{ID: StepPowerUpPulled, Kind: KindPowerUp, Live: true, Variac: 1, Gate: g, Pulled: r.valves,
		Title:    "Power up with the output valves out",
		Cautions: []string{LiveCaution, VariacCaution},
		Instruction: fmt.Sprintf("Unplugged: pull %s out of their sockets. %s Plug in through the variac and series lamp and bring it up slowly to 100 %%, then measure each output socket's grid pin: it shows the bias (or the driver's coupling) with no valve to harm.",
			strings.Join(r.valves, ", "), r.why),
		StopIf: []string{"a grid reads near 0 V or positive where it should be negative (no bias)", "smoke, arcing, a smell of hot varnish, or the fuse blows"},
		Why:    r.why}
	for _, pd := range r.grids {
		if bd, ok := b.Expect(pd.PointKey(), 1, nil); ok {
			m := pointMeasure(pd, bd.Low)
			m.Label = fmt.Sprintf("%s grid (pin %d, valve out)", pd.Valve, pd.Pin)
			pre.Measures = append(pre.Measures, m)
		}
	}
	refit := b.handsIn(StepRefitOutputs, "Refit the output valves",
		fmt.Sprintf("Variac to zero, switch off and unplug. Measure B+ to chassis: it must read below 10 V before you touch anything (discharge it if not). Then refit %s.", strings.Join(r.valves, ", ")),
		"The grids are proved: the output valves go back for the power-up with every valve fitted.", append(g, StepPowerUpPulled))
	return pre, refit
}

// withdraw removes the suggested measurements that are open and have no
// reading (the user chose another point, or powered up instead).
func (l *faultLoop) withdraw() {
	r := l.w.R
	var keepP []*Step
	for _, st := range r.Proc.Steps {
		if strings.HasPrefix(st.ID, "probe-") && !r.Done(st.ID) && !l.hasReading(st.ID) {
			continue
		}
		keepP = append(keepP, st)
	}
	r.Proc.Steps = keepP
	var keepA []*Step
	for _, st := range r.Sess.Added {
		if r.Proc.Step(st.ID) != nil {
			keepA = append(keepA, st)
		}
	}
	r.Sess.Added = keepA
}

// unpowered takes the power-up step and the live measurements not yet
// taken out of the procedure after a switch-off: the amp is off, and it
// is powered again only when the loop (or the technician) says so.
func (l *faultLoop) unpowered() {
	r := l.w.R
	var keep []*Step
	for _, st := range r.Proc.Steps {
		if st.ID == StepPowerUp || st.ID == StepPowerUpPulled || st.ID == StepRefitOutputs || (strings.HasPrefix(st.ID, "probe-") && st.Live && !r.Done(st.ID)) {
			continue
		}
		keep = append(keep, st)
	}
	r.Proc.Steps = keep
	var added []*Step
	for _, st := range r.Sess.Added {
		if r.Proc.Step(st.ID) != nil {
			added = append(added, st)
		}
	}
	r.Sess.Added = added
}

func (l *faultLoop) hasReading(step string) bool {
	for _, rd := range l.w.R.Sess.Readings {
		if rd.Step == step {
			return true
		}
	}
	return false
}

// powerUpStep is the variac ramp of fault-finding: one step whose
// instruction lists, for each variac setting, the expected B+ and heater
// volts (healthy amp), with the live and variac cautions and the stop
// criteria; the readings are taken at 100 %. It is gated on every safety
// step (discharge and earth included).
func (l *faultLoop) powerUpStep() (*Step, error) {
	b := l.w.B
	g := append([]string(nil), l.safety...)
	st := &Step{ID: StepPowerUp, Kind: KindPowerUp, Live: true, Variac: 1, Gate: g, Title: "Power up on the variac",
		Cautions: []string{LiveCaution, VariacCaution},
		StopIf: []string{"B+ far below its band at any setting, or the series lamp glows bright and stays bright (a short or a heavy load)",
			"B+ above its band (the valves are not conducting, or the bleeder is open)",
			"a plate glows red", "smoke, arcing, a smell of hot varnish, or the fuse blows"},
		Why: "No cold measurement tells the suspects apart any more: the rest needs the amp powered, brought up slowly so that a short cannot do more damage."}
	steps, err := liveSteps(b, g, false)
	if err != nil {
		return nil, err
	}
	if len(steps) > 0 {
		st.Measures = steps[0].Measures
	}
	var ramp []string
	for _, f := range bands.VariacSettings {
		var parts []string
		for _, m := range st.Measures {
			if bd, ok := b.Expect(m.Point, f, nil); ok {
				parts = append(parts, fmt.Sprintf("%s %s", m.Label, FormatBand(bd, m.Unit)))
			}
		}
		if len(parts) > 0 {
			ramp = append(ramp, fmt.Sprintf("%.0f %%: %s", 100*f, strings.Join(parts, "; ")))
		}
	}
	st.Instruction = "Plug in through the variac and series lamp, with a dummy load on the output, and bring it up in steps, waiting a minute at each and watching the lamp and the meter."
	if len(ramp) > 0 {
		st.Instruction += " Expected (healthy amp) at each setting: " + strings.Join(ramp, " | ") + "."
	}
	if len(st.Measures) > 0 {
		st.Instruction += " At 100 % enter the readings."
	} else {
		st.Instruction += " Confirm when it is up at 100 %."
	}
	return st, nil
}

func measureFor(key point.Key, label, setup string) Measure {
	m := Measure{Point: key, Label: label, Probes: setup}
	switch key.Quantity {
	case point.Seen:
		m.Function, m.Unit = FuncLook, point.Seen
	case point.Ohms:
		m.Function, m.Unit, m.Range = FuncOhms, "Ω", "autorange"
	case point.ACVolts, point.RippleVolts, point.ToneVolts:
		m.Function, m.Unit, m.Range = FuncACV, "V", "autorange (AC)"
	case point.DCAmps:
		m.Function, m.Unit, m.Range = FuncDCA, "A", "200 mA DC"
	default:
		m.Function, m.Unit, m.Range = FuncDCV, "V", "autorange (DC)"
	}
	return m
}

// addProbe adds a step measuring one point and moves to it.
func (l *faultLoop) addProbe(p infer.Probe, rk *infer.Ranking) *Step {
	l.withdraw()
	n := l.countProbes() + 1
	key, err := point.Parse(p.Key)
	if err != nil {
		return nil
	}
	st := &Step{ID: fmt.Sprintf("probe-%d", n), Title: "Measure " + p.Label, Measures: []Measure{measureFor(key, p.Label, p.Setup)}}
	g := append([]string(nil), l.safety...)
	live := p.Live || !isCold(p.Key)
	if live {
		st.Kind, st.Live, st.Variac = KindLive, true, 1
		st.Cautions = []string{LiveCaution, VariacCaution}
		g = append(g, StepPowerUp)
		st.Instruction = "At 100 % mains on the variac: " + p.Setup
	} else {
		st.Kind = KindCold
		st.Cautions = []string{UnpluggedCaution}
		st.Instruction = "Unplugged and discharged: " + p.Setup
	}
	st.Gate = g
	if p.Reason != "" {
		st.Why = "Best next for the effort: " + p.Reason
	} else {
		st.Why = "Your choice of measurement"
	}
	if top := shortRanking(rk, 3); top != "" {
		st.Why += "; leading suspects: " + top
	}
	st.Why += "."
	l.w.AddStep(st)
	if err := l.w.R.Goto(st.ID); err != nil {
		l.w.R.SaveNow()
	}
	return st
}

// conclude adds the confirm and replacement steps for the found fault.
func (l *faultLoop) conclude(fault string, clear bool) {
	r := l.w.R
	first := strings.Split(fault, " or ")[0]
	desc := fault
	if f, err := faults.Parse(first); err == nil {
		desc = faults.Describe(f, l.w.B.M)
	}
	conf := &Step{ID: StepConfirm, Kind: KindConfirm, Gate: append([]string(nil), l.safety...),
		Title:    "Confirm the fault: " + desc,
		Cautions: []string{UnpluggedCaution, DischargeCaution},
		Why:      "A ranking is a probability, not a proof: confirm the part itself before replacing it."}
	if !clear {
		conf.Title = "Most likely (not clear): " + desc
	}
	conf.Instruction = confirmText(l.w.B, first)
	if f, err := faults.Parse(first); err == nil {
		if p := l.w.B.D.ByRef[f.Ref]; p != nil && p.Kind == design.Resistor {
			conf.Measures = []Measure{{Point: point.PartKey(p.Ref), Label: p.Ref + " out of circuit", Function: FuncOhms, Unit: "Ω", Range: "autorange",
				Probes: "across " + p.Ref + " with one end lifted"}}
		}
	}
	rep := &Step{ID: StepReplace, Kind: KindConfirm, Gate: []string{StepConfirm}, Title: "Replace",
		Instruction: Replacement(l.w.B, first), Cautions: []string{UnpluggedCaution},
		Why: "A replacement must meet the ratings the circuit puts on it, with margin: watts at least twice the dissipation, volts at least the switch-on peak (common practice)."}
	l.w.AddStep(conf)
	l.w.AddStep(rep)
	if r.Sess.Mode == FaultFind {
		for _, st := range l.closeOutSteps() {
			if r.Proc.Step(st.ID) == nil {
				l.w.AddStep(st)
			}
		}
	}
	if r.Sess.Mode == Practise && r.Proc.Step(StepName) == nil {
		l.w.AddStep(&Step{ID: StepName, Kind: KindConfirm, Gate: []string{StepReplace}, Title: "Name the fault",
			Instruction: "Type name REF:MODE for the fault you think the amp has (the measurements point at " + fault + "); the tool then reveals the fault and scores your path.",
			Why:         "Naming the fault before it is revealed is the test: the readings, not a guess, should lead to it."})
	}
	r.Sess.Outcome = &Outcome{Found: fault, At: r.Now(), Summary: "Found by measurement: " + desc}
	if !clear {
		r.Sess.Outcome.Summary = "Not clear after the measurements available; most likely: " + desc
	}
	r.Goto(StepConfirm)
}

// confirmText says how to confirm a fault out of circuit: its kind's
// words (faults.Confirm).
func confirmText(b *BenchModel, fault string) string {
	f, err := faults.Parse(fault)
	if err != nil {
		return "Unplugged and discharged: check " + fault + " directly."
	}
	return faults.Confirm(b.M, f)
}

// Replacement says what to fit in place of a failed part: its kind's
// words (faults.Replace: the nearest preferred value and the ratings the
// operating point needs, with margin).
func Replacement(b *BenchModel, fault string) string {
	f, err := faults.Parse(fault)
	if err != nil {
		return "Replace " + fault + " with a part of the same value and ratings."
	}
	return faults.Replace(b.M, f)
}

// shortRanking lists the n most probable suspects with their
// probabilities: "R7 (470 Ω) open circuit 62 %, …".
func shortRanking(rk *infer.Ranking, n int) string {
	if rk == nil {
		return ""
	}
	var top []string
	for i, s := range rk.Suspects {
		if i == n {
			break
		}
		top = append(top, fmt.Sprintf("%s %.0f %%", s.Label, 100*s.Probability))
	}
	return strings.Join(top, ", ")
}

// Hint implements Loop: on a suggested measurement, why it was chosen
// (what it does for the suspects, in words); in fault-finding the leading
// suspects.
// Practice shows the reason after the trainee's prediction instead.
func (l *faultLoop) Hint() []string {
	r := l.w.R
	if l.rank == nil && l.baseDone() {
		l.Rank()
	}
	var out []string
	st := r.Current()
	if r.Sess.Mode == Practise {
		if p := r.Sess.Practice; p != nil && p.Complaint != "" && !p.Revealed {
			out = append(out, "The customer says: \""+p.Complaint+"\"")
		}
		if st != nil && st.ID == StepPowerUp && l.rank != nil && l.rank.Next != nil {
			out = append(out, fmt.Sprintf("best cold measurement left: %s (%s)", l.rank.Next.Label, l.rank.Next.Reason))
		}
		return out
	}
	if st != nil && (strings.HasPrefix(st.ID, "probe-") || st.ID == StepPowerUp) && st.Why != "" {
		out = append(out, st.Why)
	}
	if l.rank == nil || len(l.rank.Suspects) == 0 || (r.Sess.Outcome != nil && (st == nil || st.ID != StepConfirm)) {
		return out
	}
	for i, s := range l.rank.Suspects {
		if i == 5 {
			break
		}
		out = append(out, fmt.Sprintf("suspect %d: %s (%s) %.0f %%", i+1, s.Label, s.Fault, 100*s.Probability))
	}
	if !l.rank.Fits && l.rank.FitNote != "" {
		out = append(out, "note: "+l.rank.FitNote)
	}
	return out
}

// NoReading is the message for a reading typed on a step that takes
// none.
const NoReading = "this step takes no reading: press Enter (or y) to confirm, or s REASON to skip"

// Command implements Loop: symptoms LIST, next, power, measure KEY, stop,
// and in practice m (take the simulated reading) and name FAULT.
func (l *faultLoop) Command(line string) (bool, []string, error) {
	r := l.w.R
	word, rest, _ := strings.Cut(strings.TrimSpace(line), " ")
	rest = strings.TrimSpace(rest)
	practice := r.Sess.Mode == Practise
	if st := r.Current(); practice && st != nil && st.ID == StepName && !r.Done(StepName) {
		switch strings.ToLower(word) {
		case "", "y", "yes":
			return true, []string{"name the fault first: name REF:MODE (like R7:open)"}, nil
		}
	}
	switch strings.ToLower(word) {
	case "symptoms", "symptom":
		var list []string
		for _, s := range strings.Split(rest, ",") {
			s = strings.TrimSpace(s)
			if s == "" {
				continue
			}
			ok := false
			for _, k := range infer.Symptoms {
				ok = ok || k == s
			}
			if !ok {
				return true, nil, fmt.Errorf("unknown symptom %q: expected one of %s", s, strings.Join(infer.Symptoms, ", "))
			}
			list = append(list, s)
		}
		r.Sess.Symptoms = list
		return true, []string{"symptoms: " + strings.Join(list, ", ")}, r.SaveNow()
	case "next":
		if !l.baseDone() {
			return true, nil, fmt.Errorf("finish the safety steps first")
		}
		if st := r.Current(); st != nil && !r.Done(st.ID) && (strings.HasPrefix(st.ID, "probe-") || st.ID == StepPowerUp) {
			return true, []string{"this is the best next measurement: " + st.Title}, nil
		}
		if err := l.Advance(); err != nil {
			return true, nil, err
		}
		return true, []string{"next: " + r.Current().Title}, nil
	case "power":
		if !l.baseDone() {
			return true, nil, fmt.Errorf("finish the safety steps first (discharge and earth) before powering up")
		}
		if l.powered() {
			return true, []string{"the amp is already powered up"}, nil
		}
		if err := l.addPowerUp(); err != nil {
			return true, nil, err
		}
		return true, []string{"next: " + r.Current().Title}, r.SaveNow()
	case "stop":
		if !l.baseDone() {
			return true, nil, fmt.Errorf("finish the safety steps first")
		}
		if r.Sess.Outcome != nil {
			return true, []string{"the measuring is already over"}, nil
		}
		rk, err := l.Rank()
		if err != nil {
			return true, nil, err
		}
		l.withdraw()
		f, ok := clearSuspect(rk)
		if !ok {
			f = rk.Suspects[0].Fault
		}
		l.conclude(f, ok)
		return true, []string{"stopped measuring; next: " + r.Current().Title}, r.SaveNow()
	case "measure", "m":
		if rest != "" {
			return true, nil, l.choose(rest)
		}
		if !practice {
			if r.NextMeasure() == nil {
				return true, []string{NoReading}, nil
			}
			return true, []string{"type the meter's reading (m takes a simulated reading only in practice)"}, nil
		}
		if r.NextMeasure() == nil {
			return true, []string{NoReading}, nil
		}
		return true, nil, l.answer()
	case "name":
		if !practice {
			return false, nil, nil
		}
		out, err := l.name(rest)
		return true, out, err
	case "reveal":
		if !practice {
			return false, nil, nil
		}
		out, err := l.reveal()
		return true, out, err

	}
	return false, nil, nil
}

// choose adds a step for a point the user picked (in place of the
// suggested one, which is withdrawn if it has no reading yet).
func (l *faultLoop) choose(key string) error {
	if !l.baseDone() {
		// In practice the attempt is logged by the gate.
		if err := l.practice(); err != nil {
			return err
		}
	}
	e, err := l.engine()
	if err != nil {
		return err
	}
	label := e.Label(key)
	if label == "" {
		return fmt.Errorf("no point %q: expected a point like \"V2 pin 3\", a net like \"B1\", or \"cold B1\" for a cold resistance", key)
	}
	live := !isCold(key)
	if !live && l.powered() {
		return fmt.Errorf("the amp is powered: cold readings need it unplugged and discharged again")
	}
	if live && !l.powered() {
		if l.baseDone() {
			if err := l.addPowerUp(); err != nil {
				return err
			}
		} else if l.w.R.Proc.Step(StepPowerUp) == nil {
			st, err := l.powerUpStep()
			if err != nil {
				return err
			}
			l.w.AddStep(st)
		}
	}
	setup := "measure " + key
	if l.rank != nil && l.rank.Next != nil && l.rank.Next.Key == key {
		setup = l.rank.Next.Setup
	}
	st := l.addProbe(infer.Probe{Key: key, Label: label, Setup: setup, Live: live}, l.rank)
	if live && !l.powered() {
		// Power up first: the chosen live point waits behind it.
		l.w.R.Goto(StepPowerUp)
	}
	_ = st
	return nil
}

// partOhms is what the simulated amp's part reads out of circuit: the
// hidden fault's own reading when it is that part (faults.OutOfCircuit),
// a healthy part's otherwise.
func (l *faultLoop) partOhms(k point.Key) (float64, bool) {
	var hidden *faults.Fault
	if f, err := faults.Parse(l.w.R.Sess.Practice.Fault); err == nil {
		hidden = &f
	}
	r, ok := faults.OutOfCircuit(l.w.B.M, k.ID, hidden)
	if !ok || !r.OK {
		return 0, false
	}
	return r.Ohms, true
}

// answer enters the simulated amp's reading for the current measure.
func (l *faultLoop) answer() error {
	r := l.w.R
	st := r.Current()
	m := r.NextMeasure()
	if st == nil || m == nil {
		return errors.New(NoReading)
	}
	if err := l.practice(); err != nil {
		return err
	}
	v, ok := l.sim[m.Point.String()]
	switch {
	case ok:
	case m.Point.Domain == point.Discharge:
		v, ok = 0.4, true // discharged through the resistor tool
	case m.Point.Domain == point.Earth:
		v, ok = 0.15, true
	case m.Point.Domain == point.Insulation:
		v, ok = InsulationGoodOhms, true
	case m.Point.Domain == point.Part:
		v, ok = l.partOhms(m.Point)
	}
	if !ok {
		return fmt.Errorf("the simulated amp has no reading for %s", m.Point)
	}
	raw := "OL"
	switch {
	case m.Point.Quantity == point.Seen:
		raw = "not seen"
		if v >= 0.5 {
			raw = "seen"
		}
	case !math.IsInf(v, 1):
		raw = fmt.Sprintf("%.6g%s!", v, m.Unit)
		if m.Unit == "Ω" {
			raw = fmt.Sprintf("%.6gohm!", v)
		}
	}
	vd, err := r.Enter(m.Point, raw)
	if err == nil && vd.Reading.Status == Retry {
		// The simulated meter reads the same again: the second reading
		// stands (out of band).
		_, err = r.Enter(m.Point, raw)
	}
	return err
}

// name records the trainee's answer. The right fault (or one no reading
// tells from it) ends the practice: the fault is revealed and the path
// scored. A wrong name is kept and costs points, and the practice goes
// on: more readings (measure POINT), another name, or reveal.
func (l *faultLoop) name(fault string) ([]string, error) {
	s := l.w.R.Sess
	if fault == "" {
		return nil, fmt.Errorf("name the fault as REF:MODE, like R7:open")
	}
	if err := l.practice(); err != nil {
		return nil, err
	}
	if _, err := faults.Parse(fault); err != nil && fault != infer.Healthy {
		return nil, err
	}
	e, err := l.engine()
	if err != nil {
		return nil, err
	}
	p := s.Practice
	if p.Revealed {
		return []string{"the fault is already revealed: " + p.Fault}, nil
	}
	if fault != p.Fault && !e.SameGroup(fault, p.Fault, true) {
		p.Guesses = append(p.Guesses, fault)
		return []string{fmt.Sprintf("Not %s. The practice goes on: take more readings (measure POINT), name again, or type reveal to end it and see the fault (each wrong name costs %d points).",
			e.Describe(fault), wrongNameCost)}, l.w.R.SaveNow()
	}
	return l.finish(fault)
}

// Practice scoring (our scale, out of 100): safe order 30 (10 off per
// out-of-order attempt), the fault 50 (35 for one no reading tells from
// it; wrongNameCost off per wrong name), readings 20 (2 off per reading
// beyond the best path's, and none unless the fault was found).
const (
	scoreSafe, scoreFault, scoreReadings = 30, 50, 20
	wrongNameCost                        = 15
)

// reveal ends the practice at the trainee's request: the fault is shown
// and the path scored as not found.
func (l *faultLoop) reveal() ([]string, error) {
	if err := l.practice(); err != nil {
		return nil, err
	}
	if l.w.R.Sess.Practice.Revealed {
		return []string{"the fault is already revealed: " + l.w.R.Sess.Practice.Fault}, nil
	}
	return l.finish("")
}

// finish reveals the fault and scores the trainee's path against the
// best one, in readings and in safety.
func (l *faultLoop) finish(named string) ([]string, error) {
	r := l.w.R
	s := r.Sess
	best, err := l.BestPath()
	if err != nil {
		return nil, err
	}
	e, err := l.engine()
	if err != nil {
		return nil, err
	}
	p := s.Practice
	p.Named, p.Revealed = named, true
	var path []string
	for _, st := range r.Proc.Steps {
		if strings.HasPrefix(st.ID, "probe-") && len(st.Measures) > 0 && l.hasReading(st.ID) {
			path = append(path, st.Measures[0].Label)
		}
	}
	var bestWords []string
	for _, k := range best {
		bestWords = append(bestWords, e.Label(k))
	}
	safe := max(0, scoreSafe-10*len(s.Attempts))
	correct := 0
	switch {
	case named == "":
	case named == p.Fault:
		correct = scoreFault
	default:
		correct = 35 // indistinguishable by measurement
	}
	if correct > 0 {
		correct = max(0, correct-wrongNameCost*len(p.Guesses))
	}
	fewer := 0
	if named != "" {
		fewer = max(0, scoreReadings-2*max(0, len(path)-len(best)))
	}
	p.Score = safe + correct + fewer
	desc := e.Describe(p.Fault)
	out := []string{fmt.Sprintf("The fault was %s (%s).", p.Fault, desc)}
	switch {
	case named == "":
		out = append(out, "You asked to see it without naming it.")
	default:
		out = append(out, fmt.Sprintf("You named %s.", named))
	}
	if len(p.Guesses) > 0 {
		out = append(out, fmt.Sprintf("Wrong names first (%d): %s.", len(p.Guesses), strings.Join(p.Guesses, ", ")))
	}
	out = append(out,
		fmt.Sprintf("Your path (%d readings): %s", len(path), listOrNone(path)),
		fmt.Sprintf("Best path (%d readings): %s", len(best), listOrNone(bestWords)))
	if n := len(s.Attempts); n > 0 {
		var what []string
		for _, a := range s.Attempts {
			what = append(what, a.Step+" before "+a.Blocked)
		}
		out = append(out, fmt.Sprintf("Safety: %d out-of-order attempts (%s); the best path has none.", n, strings.Join(what, "; ")))
	} else {
		out = append(out, "Safety: every step in a safe order, as on the best path.")
	}
	out = append(out, fmt.Sprintf("Score %d of 100: safe order %d/%d, fault %d/%d, readings %d/%d", p.Score, safe, scoreSafe, correct, scoreFault, fewer, scoreReadings))
	s.Outcome = &Outcome{Found: p.Fault, At: r.Now(), Summary: fmt.Sprintf("Practice: named %s, the fault was %s", orNothing(named), p.Fault)}
	st := r.Proc.Step(StepName)
	if st == nil {
		st = &Step{ID: StepName, Kind: KindConfirm, Why: "Compare your path with the best one: each reading should split the suspects as evenly as possible, cold first."}
		l.w.AddStep(st)
	}
	title := "Fault named: " + named
	if named == "" {
		title = "Fault revealed: " + p.Fault
	}
	st.Title, st.Instruction, st.Gate = title, strings.Join(out, "\n"), nil
	for _, a := range s.Added {
		if a.ID == StepName {
			a.Title, a.Instruction, a.Gate = st.Title, st.Instruction, nil
		}
	}
	// The measuring is over: suggested measurements not taken are withdrawn.
	l.withdraw()
	r.Sess.Passes = append(r.Sess.Passes, Pass{Step: StepName, At: r.Now()})
	r.Goto(StepSummary)
	return out, r.SaveNow()
}

func listOrNone(xs []string) string {
	if len(xs) == 0 {
		return "none"
	}
	return strings.Join(xs, ", ")
}

func orNothing(s string) string {
	if s == "" {
		return "nothing"
	}
	return s
}

// BestPath is the sequence of measurements the inference itself would
// take on the simulated amp: its Next, cold points first, then live
// ones, until one suspect is clear.
func (l *faultLoop) BestPath() ([]string, error) {
	e, err := l.engine()
	if err != nil {
		return nil, err
	}
	if err := l.practice(); err != nil {
		return nil, err
	}
	var obs []infer.Observation
	var path []string
	powered := false
	seen := map[string]bool{}
	for range MaxProbes {
		allowed := func(k string) bool { return isCold(k) != powered && !seen[k] }
		rk := e.Rank(obs, allowed)
		if _, ok := clearSuspect(rk); ok {
			break
		}
		if rk.Next == nil || (!powered && powerNow(rk.Next, func() *infer.Probe {
			return e.Rank(obs, func(k string) bool { return isLive(k) && !seen[k] }).Next
		})) {
			if powered {
				break
			}
			powered = true
			continue
		}
		k := rk.Next.Key
		v, ok := l.sim[k]
		if !ok {
			break
		}
		seen[k] = true
		obs = append(obs, infer.Observation{Key: k, Value: v})
		path = append(path, k)
	}
	return path, nil
}
