package procedures

import (
	"fmt"
	"math"
	"math/rand/v2"
	"strings"

	"pinwalk/expect/amp"
	"pinwalk/expect/design"
	"pinwalk/expect/faults"
	"pinwalk/expect/units"
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
		sym.Instruction = "Practice: the tool has picked a fault and answers your measurements from a simulated amp. Confirm to start; type next for the best next measurement, measure KEY to choose your own, m to take the reading, name REF:MODE when you know."
	}
	p.Steps = append(p.Steps, sym)
	safe, _ := safetySteps(b)
	for _, s := range safe {
		if len(s.Gate) == 0 {
			s.Gate = []string{StepSymptoms}
		}
	}
	p.Steps = append(p.Steps, safe...)
	p.Steps = append(p.Steps, summaryStep())
	return p, nil
}

// faultLoop is the measuring loop of fault-finding and practice.
type faultLoop struct {
	w        *Walk
	eng      *infer.Engine
	symptoms string // the symptoms the engine was built with
	safety   []string
	sim      map[string]float64 // practice: what the simulated amp reads
	rank     *infer.Ranking
}

func newFaultLoop(w *Walk) (*faultLoop, error) {
	l := &faultLoop{w: w}
	_, l.safety = safetySteps(w.B)
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
		all := faults.All(l.w.B.M)
		if len(all) == 0 {
			return fmt.Errorf("practice: the design has no modelled faults")
		}
		r := rand.New(rand.NewPCG(s.Practice.Seed, 0x70726163))
		s.Practice.Fault = all[r.IntN(len(all))].String()
	}
	sim, err := e.Simulate(s.Practice.Fault, s.Practice.Seed)
	if err != nil {
		return err
	}
	l.sim = sim
	return nil
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

// observations: accepted readings of cold points and of live points at
// full mains.
func (l *faultLoop) observations() []infer.Observation {
	var out []infer.Observation
	for _, r := range l.w.R.Sess.Readings {
		if r.Status == Retry || math.IsNaN(r.Value) {
			continue
		}
		if strings.HasPrefix(r.Point, coldPrefix) || (!strings.Contains(r.Point, ":") && r.Point != EarthKey && r.Point != MainsKey && (r.Variac == 0 || r.Variac == 1)) {
			out = append(out, infer.Observation{Key: r.Point, Value: r.Value})
		}
	}
	return out
}

func (l *faultLoop) allowed() func(string) bool {
	if l.powered() {
		return func(k string) bool { return !strings.HasPrefix(k, coldPrefix) }
	}
	return func(k string) bool { return strings.HasPrefix(k, coldPrefix) }
}

// Rank ranks the suspects on the readings so far.
func (l *faultLoop) Rank() (*infer.Ranking, error) {
	e, err := l.engine()
	if err != nil {
		return nil, err
	}
	l.rank = e.Rank(l.observations(), l.allowed())
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

// Advance implements Loop.
func (l *faultLoop) Advance() error {
	r := l.w.R
	if !l.baseDone() || l.openAdded() || r.Sess.Outcome != nil {
		return nil
	}
	if err := l.practice(); err != nil {
		return err
	}
	if r.Sess.Mode == Practise {
		return nil // the trainee chooses: next, measure KEY, name
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
// cold measurement is worth taking.
func (l *faultLoop) addNext(rk *infer.Ranking) error {
	if !l.powered() && (rk.Next == nil || rk.Next.GainBits < MinColdGainBits) {
		if l.w.R.Proc.Step(StepPowerUp) == nil {
			st, err := l.powerUpStep()
			if err != nil {
				return err
			}
			l.w.AddStep(st)
			l.w.R.Next()
		}
		return nil
	}
	if rk.Next == nil {
		l.conclude(rk.Suspects[0].Fault, false)
		return nil
	}
	l.addProbe(*rk.Next, rk)
	return nil
}

func (l *faultLoop) powerUpStep() (*Step, error) {
	g := append([]string(nil), l.safety...)
	steps, err := liveSteps(l.w.B, g, false)
	if err != nil {
		return nil, err
	}
	if len(steps) == 0 {
		return &Step{ID: StepPowerUp, Kind: KindPowerUp, Live: true, Variac: 1, Gate: g, Title: "Power up on the variac",
			Cautions:    []string{LiveCaution, VariacCaution},
			Instruction: "Plug in through the variac and series lamp and bring it up slowly to 100 %. Confirm when it is up.",
			Why:         "No cold measurement tells the suspects apart any more: the rest needs the amp powered."}, nil
	}
	st := steps[0]
	st.ID, st.Kind = StepPowerUp, KindPowerUp
	st.Why = "No cold measurement tells the suspects apart any more: the rest needs the amp powered, brought up slowly so a short cannot do more damage."
	return st, nil
}

func measureFor(key, label, setup string) Measure {
	m := Measure{Point: key, Label: label, Probes: setup}
	switch {
	case strings.HasSuffix(key, " ohms"):
		m.Function, m.Unit, m.Range = FuncOhms, "Ω", "autorange"
	case strings.HasSuffix(key, " ac_volts"):
		m.Function, m.Unit, m.Range = FuncACV, "V", "autorange (AC)"
	case strings.HasSuffix(key, " dc_amps"):
		m.Function, m.Unit, m.Range = FuncDCA, "A", "200 mA DC"
	default:
		m.Function, m.Unit, m.Range = FuncDCV, "V", "autorange (DC)"
	}
	return m
}

// addProbe adds a step measuring one point and moves to it.
func (l *faultLoop) addProbe(p infer.Probe, rk *infer.Ranking) *Step {
	n := l.countProbes() + 1
	st := &Step{ID: fmt.Sprintf("probe-%d", n), Title: "Measure " + p.Label, Measures: []Measure{measureFor(p.Key, p.Label, p.Setup)}}
	g := append([]string(nil), l.safety...)
	live := p.Live || !strings.HasPrefix(p.Key, coldPrefix)
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
	st.Why = fmt.Sprintf("Expected to tell the suspects apart by about %.2f bits (the most of any measurement allowed now)", p.GainBits)
	if rk != nil && len(rk.Suspects) > 0 {
		var top []string
		for i, s := range rk.Suspects {
			if i == 3 {
				break
			}
			top = append(top, fmt.Sprintf("%s %.0f %%", s.Label, 100*s.Probability))
		}
		st.Why += "; leading suspects: " + strings.Join(top, ", ")
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
			conf.Measures = []Measure{{Point: "part:" + p.Ref + " ohms", Label: p.Ref + " out of circuit", Function: FuncOhms, Unit: "Ω", Range: "autorange",
				Probes: "across " + p.Ref + " with one end lifted"}}
		}
	}
	rep := &Step{ID: StepReplace, Kind: KindConfirm, Gate: []string{StepConfirm}, Title: "Replace",
		Instruction: Replacement(l.w.B, first), Cautions: []string{UnpluggedCaution},
		Why: "A replacement must meet the ratings the circuit puts on it, with margin: watts at least twice the dissipation, volts at least the switch-on peak (common practice)."}
	l.w.AddStep(conf)
	l.w.AddStep(rep)
	r.Sess.Outcome = &Outcome{Found: fault, At: r.Now(), Summary: "Found by measurement: " + desc}
	if !clear {
		r.Sess.Outcome.Summary = "Not clear after the measurements available; most likely: " + desc
	}
	r.Goto(StepConfirm)
}

func confirmText(b *BenchModel, fault string) string {
	f, err := faults.Parse(fault)
	if err != nil {
		return "Unplugged and discharged: check " + fault + " directly."
	}
	p := b.D.ByRef[strings.SplitN(f.Ref, ".", 2)[0]]
	if p == nil {
		return "Unplugged and discharged: check " + fault + " directly."
	}
	switch p.Kind {
	case design.Resistor:
		return fmt.Sprintf("Unplugged and discharged: lift one end of %s and measure it (%s ±%.0f %% expected when healthy). Enter the reading.", p.Ref, units.Format(p.Value, units.Ohms), 100*p.Tol.Hi)
	case design.Capacitor:
		return fmt.Sprintf("Unplugged and discharged: lift one end of %s; check it on a capacitance meter and for leakage at its working volts, and look for bulging or leaking electrolyte. Confirm when checked.", p.Ref)
	case design.Valve:
		return fmt.Sprintf("Swap %s for a known-good %s (or test it on a valve tester); the fault should follow the valve. Confirm when checked.", p.Ref, p.Valve.Type.Name)
	}
	return fmt.Sprintf("Unplugged and discharged: check %s (%s) out of circuit or by substitution. Confirm when checked.", p.Ref, p.Kind)
}

// seriesFor picks the E-series for a tolerance (IEC 60063): E96 for 1 %,
// E48 for 2 %, E24 for 5 %, E12 for 10 %, E6 for 20 % or wider.
func seriesFor(tol design.Tolerance) int {
	t := math.Max(math.Abs(tol.Lo), math.Abs(tol.Hi))
	switch {
	case t == 0:
		return 12
	case t <= 0.01:
		return 96
	case t <= 0.02:
		return 48
	case t <= 0.05:
		return 24
	case t <= 0.1:
		return 12
	}
	return 6
}

var wattRatings = []float64{0.25, 0.5, 1, 2, 3, 5, 7, 10, 15, 25, 50}
var voltRatings = []float64{16, 25, 35, 50, 63, 100, 160, 250, 350, 400, 450, 500, 550, 600, 630, 700, 800, 1000, 1200, 1600}

func nextRating(v float64, list []float64) float64 {
	for _, r := range list {
		if r >= v {
			return r
		}
	}
	return v
}

// Replacement says what to fit in place of a failed part: the nearest
// preferred value (units.Nearest, the series from the part's tolerance),
// and the rating the operating point needs: watts at least 2× the
// dissipation at full mains, volts at least the switch-on peak across
// the part at the top of the mains tolerance (common practice).
func Replacement(b *BenchModel, fault string) string {
	f, err := faults.Parse(fault)
	if err != nil {
		return "Replace " + fault + " with a part of the same value and ratings."
	}
	p := b.D.ByRef[strings.SplitN(f.Ref, ".", 2)[0]]
	if p == nil {
		return "Replace " + fault + " with a part of the same value and ratings."
	}
	s := amp.NewSolver(b.M)
	var hot, peak amp.OP
	hotOK := s.Solve(amp.Conditions{}, b.M.NominalValues(), false, &hot) == nil
	peakOK := s.ColdStart(b.D.Mains.Volts*(1+b.D.Mains.Tol.Hi), &peak) == nil
	across := func(op *amp.OP) float64 {
		if len(p.Terminals) < 2 {
			return 0
		}
		a, _ := b.M.NetVolts(op, p.Terminals[0].Net)
		c, _ := b.M.NetVolts(op, p.Terminals[1].Net)
		return math.Abs(a - c)
	}
	switch p.Kind {
	case design.Resistor:
		n := seriesFor(p.Tol)
		v, _ := units.Nearest(p.Value, n)
		watts := 0.0
		if hotOK {
			for _, r := range b.M.Resistors(&hot) {
				if r.Ref == p.Ref {
					watts = r.Watts
				}
			}
		}
		need := nextRating(math.Max(2*watts, p.Watts), wattRatings)
		return fmt.Sprintf("Fit %s: %s (E%d, ±%.0f %%), rated at least %s (it dissipates %s at full mains: 2× margin, common practice).",
			p.Ref, units.Format(v, units.Ohms), n, 100*math.Max(math.Abs(p.Tol.Lo), p.Tol.Hi), units.Format(need, units.Watts), units.Format(watts, units.Watts))
	case design.Capacitor:
		n := seriesFor(p.Tol)
		if p.Material == "electrolytic" {
			n = 6
		}
		v, _ := units.Nearest(p.Value, n)
		vpk := 0.0
		if peakOK {
			vpk = across(&peak)
		}
		if hotOK {
			vpk = math.Max(vpk, across(&hot))
		}
		need := nextRating(math.Max(vpk, p.Volts), voltRatings)
		return fmt.Sprintf("Fit %s: %s %s (E%d), rated at least %s (switch-on peak across it %s at high mains).",
			p.Ref, units.Format(v, units.Farads), p.Material, n, units.Format(need, units.Volts), units.Format(vpk, units.Volts))
	case design.Valve:
		return fmt.Sprintf("Fit a known-good %s in %s; for a push-pull output pair, fit a matched pair and re-set the bias.", p.Valve.Type.Name, p.Ref)
	}
	return fmt.Sprintf("Replace %s (%s) with a part of the same value and ratings; find why it failed before powering up again.", p.Ref, p.Kind)
}

// Hint implements Loop: the leading suspects.
func (l *faultLoop) Hint() []string {
	if l.rank == nil || len(l.rank.Suspects) == 0 || l.w.R.Sess.Mode == Practise {
		return nil
	}
	var out []string
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

// Command implements Loop: symptoms, next, measure [KEY], name FAULT.
func (l *faultLoop) Command(line string) (bool, []string, error) {
	r := l.w.R
	word, rest, _ := strings.Cut(strings.TrimSpace(line), " ")
	rest = strings.TrimSpace(rest)
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
		if r.Sess.Mode != Practise {
			return false, nil, nil
		}
		if !l.baseDone() {
			return true, nil, fmt.Errorf("finish the safety steps first")
		}
		if err := l.practice(); err != nil {
			return true, nil, err
		}
		if l.openAdded() {
			return true, []string{"finish the current measurement first (m)"}, nil
		}
		rk, err := l.Rank()
		if err != nil {
			return true, nil, err
		}
		r.Sess.Notes = append(r.Sess.Notes, Note{Text: "asked for the next measurement", At: r.Now()})
		if err := l.addNext(rk); err != nil {
			return true, nil, err
		}
		return true, []string{"next: " + r.Current().Title}, nil
	case "measure", "m":
		if r.Sess.Mode != Practise {
			return false, nil, nil
		}
		if rest != "" {
			return true, nil, l.choose(rest)
		}
		return true, nil, l.answer()
	case "name":
		if r.Sess.Mode != Practise {
			return false, nil, nil
		}
		out, err := l.name(rest)
		return true, out, err
	}
	return false, nil, nil
}

// choose adds a step for a point the trainee picked.
func (l *faultLoop) choose(key string) error {
	if err := l.practice(); err != nil {
		return err
	}
	if _, ok := l.sim[key]; !ok {
		return fmt.Errorf("no point %q: expected a key like \"V2.3 dc_volts\" or \"cold:B1 ohms\"", key)
	}
	live := !strings.HasPrefix(key, coldPrefix)
	if live && !l.powered() && l.w.R.Proc.Step(StepPowerUp) == nil {
		st, err := l.powerUpStep()
		if err != nil {
			return err
		}
		l.w.AddStep(st)
	}
	if !live && l.powered() {
		return fmt.Errorf("the amp is powered: cold readings need it unplugged and discharged again (not modelled in practice)")
	}
	l.addProbe(infer.Probe{Key: key, Label: key, Setup: "measure " + key, Live: live}, l.rank)
	return nil
}

// answer enters the simulated amp's reading for the current measure.
func (l *faultLoop) answer() error {
	r := l.w.R
	st := r.Current()
	m := r.NextMeasure()
	if st == nil || m == nil {
		return fmt.Errorf("this step takes no reading")
	}
	if err := l.practice(); err != nil {
		return err
	}
	v, ok := l.sim[m.Point]
	switch {
	case ok:
	case strings.HasPrefix(m.Point, dischargePrefix):
		v, ok = 0.4, true // discharged through the resistor tool
	case m.Point == EarthKey:
		v, ok = 0.15, true
	}
	if !ok {
		return fmt.Errorf("the simulated amp has no reading for %s", m.Point)
	}
	raw := "OL"
	if !math.IsInf(v, 1) {
		raw = fmt.Sprintf("%.6g%s!", v, m.Unit)
		if m.Unit == "Ω" {
			raw = fmt.Sprintf("%.6gohm!", v)
		}
	}
	_, err := r.Enter(m.Point, raw)
	return err
}

// name records the trainee's answer, reveals the fault and scores.
func (l *faultLoop) name(fault string) ([]string, error) {
	r := l.w.R
	s := r.Sess
	if fault == "" {
		return nil, fmt.Errorf("name the fault as REF:MODE, like R7:open")
	}
	if err := l.practice(); err != nil {
		return nil, err
	}
	if _, err := faults.Parse(fault); err != nil && fault != infer.Healthy {
		return nil, err
	}
	best, err := l.BestPath()
	if err != nil {
		return nil, err
	}
	p := s.Practice
	p.Named, p.Revealed = fault, true
	probes := 0
	var path []string
	for _, st := range r.Proc.Steps {
		if strings.HasPrefix(st.ID, "probe-") && r.Done(st.ID) {
			probes++
			path = append(path, st.Measures[0].Point)
		}
	}
	safe := max(0, 30-10*len(s.Attempts))
	correct := 0
	if fault == p.Fault {
		correct = 50
	} else if l.rank != nil {
		for _, g := range l.rank.Groups {
			in := func(x string) bool {
				for _, y := range g {
					if y == x {
						return true
					}
				}
				return false
			}
			if in(fault) && in(p.Fault) {
				correct = 35 // indistinguishable by measurement
			}
		}
	}
	fewer := max(0, 20-2*max(0, probes-len(best)))
	p.Score = safe + correct + fewer
	s.Outcome = &Outcome{Found: p.Fault, At: r.Now(), Summary: fmt.Sprintf("Practice: named %s, the fault was %s", fault, p.Fault)}
	out := []string{
		fmt.Sprintf("The fault was %s. You named %s.", p.Fault, fault),
		fmt.Sprintf("Your path (%d readings): %s", probes, strings.Join(path, ", ")),
		fmt.Sprintf("Best path (%d readings): %s", len(best), strings.Join(best, ", ")),
		fmt.Sprintf("Score %d of 100: safe order %d/30 (%d out-of-order attempts), fault %d/50, readings %d/20", p.Score, safe, len(s.Attempts), correct, fewer),
	}
	st := &Step{ID: StepName, Kind: KindConfirm, Title: "Fault named: " + fault, Instruction: strings.Join(out, "\n"), Why: "Compare your path with the best one: each reading should split the suspects as evenly as possible, cold first."}
	l.w.AddStep(st)
	r.Sess.Passes = append(r.Sess.Passes, Pass{Step: StepName, At: r.Now()})
	r.Goto(StepSummary)
	return out, r.SaveNow()
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
		allowed := func(k string) bool { return strings.HasPrefix(k, coldPrefix) != powered && !seen[k] }
		rk := e.Rank(obs, allowed)
		if _, ok := clearSuspect(rk); ok {
			break
		}
		if rk.Next == nil || (!powered && rk.Next.GainBits < MinColdGainBits) {
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
