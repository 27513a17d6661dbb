package procedures

import (
	"errors"
	"fmt"
	"math"
	"strings"
	"time"
	"unicode"

	"pinwalk/expect/point"
	"pinwalk/expect/units"
)

// Expecter gives the expected band of a point under the session's
// conditions and readings so far.
type Expecter interface {
	// Expect returns the band of a point at a variac fraction (0 or 1
	// for full mains), given the readings already taken.
	Expect(k point.Key, variac float64, readings []Reading) (Band, bool)
}

// judge is the optional part of an Expecter that applies the stop rules.
type judger interface {
	judge(st *Step, m *Measure, v float64, band Band, has bool, readings []Reading) judgement
}

// Runner drives a procedure: it enforces gates, records readings, skips
// and confirmations in the session, and saves the session after every
// change.
type Runner struct {
	Proc *Procedure
	Sess *Session
	// Path is where the session is saved after every change ("" = not saved).
	Path   string
	Expect Expecter
	// Now gives the time stamps (tests fix it).
	Now func() time.Time
	// Training: record attempts to go out of order, ask for predictions.
	Training bool

	cur int
	// SaveErr is the last save failure (nil after a good save). The
	// session stays in memory; Retry saving with SaveNow.
	SaveErr error
}

// Errors a runner returns.
var (
	ErrGated      = errors.New("gated")
	ErrNoMeasure  = errors.New("this step takes no reading")
	ErrQuestioned = errors.New("reading questioned")
)

// GateError says which steps must be done first.
type GateError struct {
	Step     string
	Blockers []string
}

func (e *GateError) Error() string {
	return fmt.Sprintf("step %s cannot start yet: first %s", e.Step, strings.Join(e.Blockers, ", "))
}

func (e *GateError) Unwrap() error { return ErrGated }

// NewRunner starts or resumes a procedure on a session: it moves to the
// session's saved step (or the first step not done).
func NewRunner(p *Procedure, s *Session, path string, ex Expecter) *Runner {
	r := &Runner{Proc: p, Sess: s, Path: path, Expect: ex, Now: time.Now}
	r.Training = s.Mode == Training || s.Mode == Practise
	r.cur = -1
	if s.Cursor != "" {
		if i := p.Index(s.Cursor); i >= 0 && !r.Done(p.Steps[i].ID) {
			r.cur = i
		}
	}
	if r.cur < 0 {
		r.cur = r.firstOpen(0)
	}
	return r
}

func (r *Runner) firstOpen(from int) int {
	for i := from; i < len(r.Proc.Steps); i++ {
		if !r.Done(r.Proc.Steps[i].ID) {
			return i
		}
	}
	for i := 0; i < from && i < len(r.Proc.Steps); i++ {
		if !r.Done(r.Proc.Steps[i].ID) {
			return i
		}
	}
	return len(r.Proc.Steps) - 1
}

// First moves to the earliest step not done (after a switch-off, the
// discharge checks again).
func (r *Runner) First() *Step {
	r.cur = r.firstOpen(0)
	if st := r.Current(); st != nil {
		r.Sess.Cursor = st.ID
	}
	r.save()
	return r.Current()
}

// Current returns the step the runner is on.
func (r *Runner) Current() *Step {
	if r.cur < 0 || r.cur >= len(r.Proc.Steps) {
		return nil
	}
	return r.Proc.Steps[r.cur]
}

// CurrentIndex returns the current step's position.
func (r *Runner) CurrentIndex() int { return r.cur }

// Finished reports whether every step is done.
func (r *Runner) Finished() bool {
	for _, s := range r.Proc.Steps {
		if !r.Done(s.ID) {
			return false
		}
	}
	return true
}

// Skipped reports whether a step was skipped, and why.
func (r *Runner) Skipped(id string) (string, bool) {
	for _, s := range r.Sess.Skips {
		if s.Step == id {
			return s.Reason, true
		}
	}
	return "", false
}

// Done reports whether a step is passed (confirmed, or every measure has
// an accepted reading) or skipped with a reason.
func (r *Runner) Done(id string) bool {
	if _, ok := r.Skipped(id); ok {
		return true
	}
	st := r.Proc.Step(id)
	for _, p := range r.Sess.Passes {
		if p.Step == id && (st == nil || !perCycle(st) || p.Cycle == r.Sess.Cycle) {
			return true
		}
	}
	if st == nil || len(st.Measures) == 0 {
		return false
	}
	for i := range st.Measures {
		if r.openMeasure(st, &st.Measures[i]) {
			return false
		}
	}
	return true
}

// openMeasure: a measure still wants a reading: none yet, or its latest
// reading holds a stop (or a switch-off) that no override let through. A
// cold reading's stop (a near-short) does not hold its step: it is the
// evidence the fault-finding goes on from, and it blocks every live step
// until a retake clears it.
func (r *Runner) openMeasure(st *Step, m *Measure) bool {
	rd := r.Last(st.ID, m.Point)
	return rd == nil || (r.blocking(rd) && rd.Point.Domain != point.Cold)
}

// blocking reports whether a reading's stop is in force: its consequence
// is Stop or SwitchOff and no later override names its step and point.
func (r *Runner) blocking(rd *Reading) bool {
	if rd.Consequence == GoOn {
		return false
	}
	for _, o := range r.Sess.Overrides {
		if o.Point == rd.Point && !o.At.Before(rd.At) {
			return false
		}
	}
	return true
}

// Last returns the latest accepted reading of a point in a step, or nil.
// A discharge reading counts only in the power cycle it was taken in.
func (r *Runner) Last(step string, k point.Key) *Reading {
	for i := len(r.Sess.Readings) - 1; i >= 0; i-- {
		rd := &r.Sess.Readings[i]
		if rd.Step == step && rd.Point == k && rd.Status != Retry && rd.Status != Corrected {
			if rd.Cycle != r.Sess.Cycle && (k.Domain == point.Discharge || perCycle(r.Proc.Step(step))) {
				return nil
			}
			return rd
		}
	}
	return nil
}

// perCycle: a step whose work must be done again in every power cycle
// (discharge after each switch-off, the power-up after one).
func perCycle(st *Step) bool {
	return st != nil && (st.Kind == KindDischarge || st.Kind == KindPowerUp)
}

// Stops lists the readings whose stop is in force now (the latest of
// each point), oldest first.
func (r *Runner) Stops() []Reading {
	seen := map[string]bool{}
	var out []Reading
	for i := len(r.Sess.Readings) - 1; i >= 0; i-- {
		rd := &r.Sess.Readings[i]
		id := rd.Point.String()
		if seen[id] || rd.Status == Retry || rd.Status == Corrected {
			continue
		}
		seen[id] = true
		if rd.Point.Domain == point.Discharge && rd.Cycle != r.Sess.Cycle {
			continue
		}
		if r.blocking(rd) && rd.Consequence == Stop {
			out = append([]Reading{*rd}, out...)
		}
	}
	return out
}

// PendingHalt returns the switch-off not yet confirmed, or nil.
func (r *Runner) PendingHalt() *Halt {
	for i := range r.Sess.Halts {
		if !r.Sess.Halts[i].Done {
			return &r.Sess.Halts[i]
		}
	}
	return nil
}

// Blockers lists what keeps a step from starting: gate steps not done,
// and for a live step every stop in force anywhere in the session and a
// switch-off not yet confirmed.
func (r *Runner) Blockers(st *Step) []string {
	var out []string
	for _, g := range st.Gate {
		if !r.Done(g) {
			if gs := r.Proc.Step(g); gs != nil {
				out = append(out, gs.Title)
			} else {
				out = append(out, g)
			}
		}
	}
	if st.Live && st.Kind != KindPowerDown {
		if r.Proc.HotChassis != "" && !r.Done(StepIsolation) {
			// A hot chassis is powered only through an isolation
			// transformer: no gate list can leave this out.
			out = append(out, "the isolation transformer (this set's chassis may be at mains potential)")
		}
		for _, rd := range r.Stops() {
			out = append(out, "the stop on "+r.labelOf(rd.Step, rd.Point)+" ("+FormatValue(rd.Value, rd.Unit)+")")
		}
		if h := r.PendingHalt(); h != nil && st.Kind != KindPowerDown {
			out = append(out, "switching off ("+r.labelOf(h.Step, h.Point)+")")
		}
	}
	return out
}

// labelOf is the label of a point as its step's measure names it.
func (r *Runner) labelOf(step string, k point.Key) string {
	if st := r.Proc.Step(step); st != nil {
		for _, m := range st.Measures {
			if m.Point == k && m.Label != "" {
				return m.Label
			}
		}
	}
	for _, st := range r.Proc.Steps {
		for _, m := range st.Measures {
			if m.Point == k && m.Label != "" {
				return m.Label
			}
		}
	}
	// A point read on a step that is no longer in the procedure (a
	// fault-finding step added for one suggestion): the model's own words.
	if l, ok := r.Expect.(interface{ Label(point.Key) string }); ok {
		if s := l.Label(k); s != "" {
			return s
		}
	}
	return k.String()
}

// Goto moves to a step if its gate allows; in training mode a blocked
// attempt is logged.
func (r *Runner) Goto(id string) error {
	i := r.Proc.Index(id)
	if i < 0 {
		return fmt.Errorf("no step %q", id)
	}
	if b := r.Blockers(r.Proc.Steps[i]); len(b) > 0 {
		if r.Training {
			r.Sess.Attempts = append(r.Sess.Attempts, Attempt{Step: id, Blocked: strings.Join(b, ", "), At: r.Now()})
			r.save()
		}
		return &GateError{Step: r.Proc.Steps[i].Title, Blockers: b}
	}
	r.cur = i
	r.Sess.Cursor = id
	r.save()
	return nil
}

// Next moves to the next step that is not done (wrapping to earlier open
// steps), and returns it.
func (r *Runner) Next() *Step {
	r.cur = r.firstOpen(r.cur + 1)
	if st := r.Current(); st != nil {
		r.Sess.Cursor = st.ID
	}
	r.save()
	return r.Current()
}

// Confirm marks the current step done (steps with no reading, or a
// step whose readings are all in).
func (r *Runner) Confirm() error {
	st := r.Current()
	if st == nil {
		return errors.New("no step")
	}
	if b := r.Blockers(st); len(b) > 0 {
		return &GateError{Step: st.Title, Blockers: b}
	}
	if len(st.Measures) > 0 && !r.Done(st.ID) {
		return fmt.Errorf("%s needs its reading(s) first, or skip it with a reason", st.Title)
	}
	r.Sess.Passes = append(r.Sess.Passes, Pass{Step: st.ID, At: r.Now(), Cycle: r.Sess.Cycle})
	r.touch()
	return r.save()
}

// Skip skips the current step with a stated reason.
func (r *Runner) Skip(reason string) error {
	st := r.Current()
	if st == nil {
		return errors.New("no step")
	}
	if st.Kind == KindDischarge {
		return errors.New("a discharge check cannot be skipped: discharge the capacitor and measure it (a reading under 10 V passes)")
	}
	if st.Kind == KindIsolation {
		return errors.New("the isolation-transformer step cannot be skipped: this set's chassis may be at mains potential, and no live step is done without an isolation transformer")
	}
	for _, m := range st.Measures {
		if m.Point == InsulationKey {
			return errors.New("the insulation test cannot be skipped on a set with no mains earth: it is what shows that no metal a user can touch is on the mains")
		}
	}
	for i := range st.Measures {
		if rd := r.Last(st.ID, st.Measures[i].Point); rd != nil && r.blocking(rd) {
			if overridable(rd.Point) {
				return errors.New("this step has a stop in force: measure again, or let it through with override REASON")
			}
			return errors.New("this step has a stop in force: it cannot be skipped; measure again")
		}
	}
	reason = strings.TrimSpace(reason)
	if len(reason) < 3 {
		return errors.New("a skipped step needs a reason (a few words)")
	}
	r.Sess.Skips = append(r.Sess.Skips, Skip{Step: st.ID, Reason: reason, Safety: st.Safety, At: r.Now()})
	r.touch()
	return r.save()
}

// NextMeasure returns the first measure of the current step that still
// wants a reading (none yet, or a stop in force), or nil.
func (r *Runner) NextMeasure() *Measure {
	st := r.Current()
	if st == nil {
		return nil
	}
	for i := range st.Measures {
		if r.openMeasure(st, &st.Measures[i]) {
			return &st.Measures[i]
		}
	}
	return nil
}

// overridable: the stops an override with a reason may let through
// (earth continuity on a set with no mains earth by design, a cold
// near-short the technician has explained); never a discharge check.
func overridable(k point.Key) bool { return k.Domain == point.Earth || k.Domain == point.Cold }

// Override lets the stop in force on the current step through, with a
// stated reason; it is recorded and boxed in every summary and job sheet.
func (r *Runner) Override(reason string) error {
	st := r.Current()
	if st == nil {
		return errors.New("no step")
	}
	reason = strings.TrimSpace(reason)
	if len(reason) < 8 {
		return errors.New("an override needs a reason in words (for example: double insulated, no mains earth by design)")
	}
	for i := range st.Measures {
		rd := r.Last(st.ID, st.Measures[i].Point)
		if rd == nil || !r.blocking(rd) {
			continue
		}
		if !overridable(rd.Point) {
			return errors.New("this stop cannot be overridden: " + firstSentence(rd.Said))
		}
		r.Sess.Overrides = append(r.Sess.Overrides, Override{Step: st.ID, Point: rd.Point, Reason: reason, At: r.Now()})
		r.touch()
		return r.save()
	}
	return errors.New("no stop is in force on this step: there is nothing to override")
}

func firstSentence(s string) string {
	if i := strings.Index(s, ". "); i > 0 {
		return s[:i+1]
	}
	return s
}

// Expected returns a measure's band under the current step's conditions.
func (r *Runner) Expected(st *Step, m *Measure) (Band, bool) {
	if r.Expect == nil {
		return Band{}, false
	}
	return r.Expect.Expect(m.Point, st.Variac, r.Sess.Readings)
}

// Verdict is the outcome of a reading.
type Verdict struct {
	Reading Reading
	Band    Band
	HasBand bool
	Message string
	// HandOff: the reading is a stop that sends a bring-up to
	// fault-finding from it.
	HandOff bool
}

// ParseReading reads what the user typed for a measure: a number (the
// measure's unit), or a value with SI or RKM notation. A value with the
// unit of another quantity is an error; an absurd magnitude is questioned
// (ErrQuestioned) unless the text ends in "!".
func ParseReading(raw string, m *Measure, expect *Band) (float64, error) {
	s := strings.TrimSpace(raw)
	force := strings.HasSuffix(s, "!")
	s = strings.TrimSpace(strings.TrimSuffix(s, "!"))
	if s == "" {
		return 0, errors.New("empty reading: type the meter's value, like 312 or 4.7mA")
	}
	if m.Point.Quantity == point.Seen {
		return parseSeen(s)
	}
	q := units.BySymbol(m.Unit)
	if q == units.None {
		q = units.Volts
	}
	if q == units.Ohms && point.IsOpenWord(s) {
		return math.Inf(1), nil
	}
	s, kind := cutACDC(s)
	if kind != "" && (q == units.Volts || q == units.Amps) {
		ac := isAC(m.Point.Quantity)
		if (kind == "AC") != ac {
			want := "DC"
			if ac {
				want = "AC"
			}
			return 0, fmt.Errorf("%s is an %s reading: this step measures %s; set the meter to %s %s and read again",
				strings.TrimSpace(raw), kind, m.Function, want, q.Symbol())
		}
	}
	if _, q2, err := units.ParseAny(s); err == nil && q2 != units.None && q2 != q {
		return 0, fmt.Errorf("%s is a %s: this step measures %s (%s)", s, q2.String(), q.String(), m.Function)
	}
	v, err := units.Parse(s, q)
	if err != nil {
		var me *units.MismatchError
		if errors.As(err, &me) {
			return 0, fmt.Errorf("%s: this step measures %s (%s)", err.Error(), q.String(), m.Function)
		}
		var se *units.SyntaxError
		if errors.As(err, &se) && se.NotAValue() {
			return 0, fmt.Errorf("%q is not a reading: %s", strings.TrimSpace(raw), readingForms(m, q))
		}
		return 0, err
	}
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return 0, fmt.Errorf("%q is not a reading", raw)
	}
	if !force {
		limit := 5000.0 // volts: nothing in a valve amp
		switch q {
		case units.Amps:
			limit = 20
		case units.Ohms:
			limit = 1e10
		}
		if expect != nil {
			limit = math.Max(limit/10, 20*math.Max(math.Abs(expect.High), math.Abs(expect.Low)))
		}
		if math.Abs(v) > limit {
			return v, fmt.Errorf("%w: %s is far beyond anything this amp can read here; check the meter's range and the decimal point, "+
				"and type it again followed by ! if it really reads that", ErrQuestioned, units.Format(v, q))
		}
		if expect != nil && m.Point.Domain != point.Discharge && m.Point.Domain != point.Earth && m.Point.Domain != point.Insulation {
			if f, ok := unitSlip(v, *expect); ok {
				return v, fmt.Errorf("%w: %s is about %s from the band (%s): did you mean %s? Type it with its prefix, or %s! to keep %s",
					ErrQuestioned, units.Format(v, q), slipWord(f), FormatBand(*expect, m.Unit), units.Format(v*f, q), s, units.Format(v, q))
			}
		}
	}
	return v, nil
}

// cutACDC takes an AC or DC qualifier off the end of a reading as meters
// and habit write it ("6.4 VAC", "6.4VAC", "6.4 V AC", "6.4 V~",
// "312 VDC", "45 mA DC", "6.4 Vrms"): the rest, and "AC", "DC" or "" for
// none. The qualifier counts only after a unit letter or a number, so a
// resistor code is never cut.
func cutACDC(s string) (string, string) {
	low := strings.ToLower(s)
	for _, q := range []struct{ suf, kind string }{{"ac", "AC"}, {"dc", "DC"}, {"rms", "AC"}, {"~", "AC"}} {
		if !strings.HasSuffix(low, q.suf) {
			continue
		}
		rest := strings.TrimRightFunc(s[:len(s)-len(q.suf)], unicode.IsSpace)
		if rest == "" {
			return s, ""
		}
		last := rest[len(rest)-1]
		if last == 'v' || last == 'V' || last == 'a' || last == 'A' || (last >= '0' && last <= '9') {
			return rest, q.kind
		}
	}
	return s, ""
}

// isAC reports whether a point's quantity is read on an AC range.
func isAC(q string) bool {
	return q == point.ACVolts || q == point.ACAmps || q == point.RippleVolts || q == point.ToneVolts
}

// readingForms says what a reading of the measure's quantity looks like,
// for the error on text that is none.
func readingForms(m *Measure, q units.Quantity) string {
	switch q {
	case units.Volts:
		if isAC(m.Point.Quantity) {
			return "type the meter's AC volts, like 6.4, 6.4V, 6.4 VAC or 250mV"
		}
		return "type the meter's DC volts, like 289, 289V, -12.5 or 350mV (6.4 VAC only on an AC step)"
	case units.Amps:
		return "type the meter's current, like 45mA, 0.045A or 45 mA DC"
	case units.Ohms:
		return "type the meter's resistance, like 470, 4.7k, 4K7, 1M or OL for open"
	}
	return "type the meter's value, like 312 or 4.7mA"
}

// unitSlip reports a reading that lies below its band but inside it
// once multiplied by a factor of 1000 or a million: a dropped prefix (220
// typed for 220 kΩ). A reading too high is never questioned down: on a
// safety reading that would hide a danger; the magnitude limit above
// questions the absurd ones.
func unitSlip(v float64, b Band) (float64, bool) {
	if b.Contains(v) || v == 0 || math.IsInf(v, 0) || math.IsInf(b.High, 0) {
		return 0, false
	}
	lo, hi := b.Low, b.High
	if lo > hi {
		lo, hi = hi, lo
	}
	for _, f := range []float64{1e3, 1e6} {
		w := v * f
		if w >= lo-0.5*math.Abs(hi-lo) && w <= hi+0.5*math.Abs(hi-lo) {
			return f, true
		}
	}
	return 0, false
}

func slipWord(f float64) string {
	if f == 1e3 {
		return "a factor of 1000"
	}
	return "a factor of a million"
}

// Enter records a reading for the current step's next measure (or the
// measure with the given point key when point is not zero), judges it
// against its band and the step's stop rules, and saves.
func (r *Runner) Enter(k point.Key, raw string) (*Verdict, error) {
	return r.enter(k, raw, "")
}

// Correct replaces the latest reading of a point on the current step
// with a corrected one: the old reading stays in the history marked
// corrected, the new one carries the reason.
func (r *Runner) Correct(k point.Key, raw, reason string) (*Verdict, error) {
	reason = strings.TrimSpace(reason)
	if len(reason) < 3 {
		return nil, errors.New("a correction needs a reason (a few words: misread the range, wrong pin)")
	}
	st := r.Current()
	if st == nil {
		return nil, errors.New("no step")
	}
	if k.IsZero() {
		for i := len(r.Sess.Readings) - 1; i >= 0; i-- {
			if r.Sess.Readings[i].Step == st.ID {
				k = r.Sess.Readings[i].Point
				break
			}
		}
	}
	old := r.Last(st.ID, k)
	if old == nil {
		return nil, errors.New("there is no reading on this step to correct: type the reading")
	}
	idx := -1
	for i := range r.Sess.Readings {
		if &r.Sess.Readings[i] == old {
			idx = i
		}
	}
	vd, err := r.enter(k, raw, reason)
	if err != nil {
		return nil, err
	}
	r.Sess.Readings[idx].Status = Corrected
	return vd, r.save()
}

func (r *Runner) enter(k point.Key, raw, reason string) (*Verdict, error) {
	st := r.Current()
	if st == nil {
		return nil, errors.New("no step")
	}
	if b := r.Blockers(st); len(b) > 0 {
		if r.Training {
			r.Sess.Attempts = append(r.Sess.Attempts, Attempt{Step: st.ID, Blocked: strings.Join(b, ", "), At: r.Now()})
			r.save()
		}
		return nil, &GateError{Step: st.Title, Blockers: b}
	}
	var m *Measure
	if k.IsZero() {
		m = r.NextMeasure()
		if m == nil && len(st.Measures) > 0 {
			m = &st.Measures[len(st.Measures)-1]
		}
	} else {
		for i := range st.Measures {
			if st.Measures[i].Point == k {
				m = &st.Measures[i]
			}
		}
	}
	if m == nil {
		return nil, ErrNoMeasure
	}
	band, has := r.Expected(st, m)
	var bp *Band
	if has {
		bp = &band
	}
	v, err := ParseReading(raw, m, bp)
	if err != nil {
		return nil, err
	}
	rd := Reading{Step: st.ID, Point: m.Point, Raw: raw, Value: v, Unit: m.Unit, At: r.Now(), Variac: st.Variac, Mains: r.Sess.Bench.Mains,
		Reason: reason, Pulled: append([]string(nil), st.Pulled...), Cycle: r.Sess.Cycle}
	vd := &Verdict{Band: band, HasBand: has}
	if has {
		rd.Low, rd.High, rd.Nominal = band.Low, band.High, band.Nominal
		switch {
		case band.Contains(v):
			rd.Status = InBand
			vd.Message = "in band"
		case nearEdge(v, band):
			rd.Status = Retry
			vd.Message = "just outside the band: re-seat the probes and measure again"
		default:
			rd.Status = OutOfBand
			vd.Message = "OUT OF BAND"
		}
	} else {
		rd.Status = Done
		vd.Message = "recorded"
	}
	if rd.Status == Retry && r.lastRetry(st.ID, m.Point) {
		// A second borderline reading stands: it is out of band.
		rd.Status = OutOfBand
		vd.Message = "out of band (confirmed by a second reading)"
	}
	if j, ok := r.Expect.(judger); ok {
		jd := j.judge(st, m, v, band, has, r.Sess.Readings)
		rd.Consequence, rd.Said = jd.Consequence, jd.Said
		if rd.Consequence != GoOn && rd.Status == Retry {
			rd.Status = OutOfBand // a stop rule fired: no borderline retry
		}
		vd.HandOff = jd.HandOff && rd.Consequence == Stop
	}
	r.Sess.Readings = append(r.Sess.Readings, rd)
	if rd.Consequence == SwitchOff {
		r.Sess.Halts = append(r.Sess.Halts, Halt{Step: st.ID, Point: rd.Point, Value: v, Why: rd.Said, At: rd.At})
	}
	vd.Reading = rd
	r.touch()
	return vd, r.save()
}

func (r *Runner) lastRetry(step string, k point.Key) bool {
	for i := len(r.Sess.Readings) - 1; i >= 0; i-- {
		rd := r.Sess.Readings[i]
		if rd.Step == step && rd.Point == k {
			return rd.Status == Retry
		}
	}
	return false
}

// nearEdge: out of band by less than 2 % of the band's scale — within a
// typical meter's and probe's uncertainty (common practice: re-measure).
func nearEdge(v float64, b Band) bool {
	// An open-ended band (an insulation reading: 2 MΩ to open) takes its
	// scale from its finite end.
	hi, lo := math.Abs(b.High), math.Abs(b.Low)
	if math.IsInf(hi, 1) {
		hi = 0
	}
	scale := math.Max(hi, lo)
	tol := 0.02*scale + 1e-9
	return (v < b.Low && b.Low-v <= tol) || (v > b.High && v-b.High <= tol)
}

// Predict records a trainee's prediction for a measure before its band is
// shown, and says whether it lay within the band.
func (r *Runner) Predict(st *Step, m *Measure, raw string) (Guess, error) {
	v, err := ParseReading(raw, m, nil)
	if err != nil {
		return Guess{}, err
	}
	band, _ := r.Expected(st, m)
	g := Guess{Point: m.Point, Raw: raw, Value: v, Low: band.Low, High: band.High, Good: band.Contains(v), At: r.Now()}
	r.Sess.Guesses = append(r.Sess.Guesses, g)
	r.touch()
	return g, r.save()
}

// Note adds a note to the session.
func (r *Runner) Note(text string) error {
	st := r.Current()
	id := ""
	if st != nil {
		id = st.ID
	}
	r.Sess.Notes = append(r.Sess.Notes, Note{Text: text, At: r.Now(), Step: id})
	r.touch()
	return r.save()
}

func (r *Runner) touch() { r.Sess.Updated = r.Now() }

// SaveNow retries a failed save.
func (r *Runner) SaveNow() error { return r.save() }

func (r *Runner) save() error {
	if r.Path == "" {
		return nil
	}
	if st := r.Current(); st != nil {
		r.Sess.Cursor = st.ID
	}
	r.SaveErr = r.Sess.Save(r.Path)
	return r.SaveErr
}

// SkippedSafety lists skipped safety steps with reasons, for every
// summary.
func (r *Runner) SkippedSafety() []Skip {
	var out []Skip
	for _, s := range r.Sess.Skips {
		if s.Safety {
			out = append(out, s)
		}
	}
	return out
}

// parseSeen reads the answer to a look: seen (yes, y, 1) or not seen
// (no, n, 0).
func parseSeen(s string) (float64, error) {
	switch strings.ToLower(strings.Join(strings.Fields(s), " ")) {
	case "seen", "yes", "y", "1":
		return 1, nil
	case "not seen", "no", "n", "0", "none":
		return 0, nil
	}
	return 0, fmt.Errorf("%q is not an answer to a look: type seen (the sign is there) or not seen", s)
}
