package procedures

import (
	"errors"
	"fmt"
	"slices"
	"strconv"
	"strings"
	"sync"

	"pinwalk/expect/point"
	"pinwalk/procedures/infer"
)

// Controller is the one session controller: both front ends (the
// full-screen view and plain mode) and the tests send it Actions and
// render the State it returns. It owns the walk: the runner over the
// session, the bench model, the measuring loop of fault-finding, the stop
// rules' consequences (a switch-off, a hand-off from bring-up to
// fault-finding) and the ranking, computed once per accepted reading.
//
// A Controller is not safe for concurrent use; the full-screen view calls
// Do from one command at a time.
type Controller struct {
	w       *Walk
	noGuess map[point.Key]bool
}

// State is what the walk looks like after an action. It is a snapshot:
// the front ends only read it.
type State struct {
	Mode  Mode
	Title string
	// Step is the current step, Index its position (0-based) of Total.
	Step         *Step
	Index, Total int
	// Blockers: what keeps the current step from starting.
	Blockers []string
	// Ask is the next question the step puts (nil: none): answered in
	// words, before any reading.
	Ask *Ask
	// Measure is the next reading the step wants (nil: none), Band its
	// expected band.
	Measure *Measure
	Band    Band
	HasBand bool
	// WantPrediction: training asks the trainee's prediction first.
	WantPrediction bool
	// Last is the verdict of the reading the action recorded (nil: none).
	Last *Verdict
	// Said are the lines the action produced (the loop's answers, stop
	// texts, hand-offs).
	Said []string
	// Hints: the measuring loop's lines for the current step.
	Hints []string
	// Stops in force (readings whose stop no retake or override cleared).
	Stops []Reading
	// Halt is a switch-off not yet confirmed.
	Halt *Halt
	// Rank is the latest ranking of suspects (fault-finding), nil before
	// the first.
	Rank     *infer.Ranking
	Finished bool
	SaveErr  error
}

// NewController starts a controller on a walk. It does no work yet:
// the first Do (ActRefresh will do) lets the measuring loop make its
// first move.
func NewController(w *Walk) *Controller {
	return &Controller{w: w, noGuess: map[point.Key]bool{}}
}

// Walk returns the walk the controller drives now (a hand-off from
// bring-up to fault-finding replaces it).
func (c *Controller) Walk() *Walk { return c.w }

// Runner is Walk().R.
func (c *Controller) Runner() *Runner { return c.w.R }

// RankCalls counts the rankings the measuring loop has computed.
func (c *Controller) RankCalls() int {
	if l, ok := c.w.Loop.(*faultLoop); ok {
		return l.rankCalls
	}
	return 0
}

// Do carries out one action and returns the new state. An error says why
// the action was refused (the state is still the walk's current one).
func (c *Controller) Do(a Action) (State, error) {
	var said []string
	last, err := c.do(a, &said)
	if e := c.settle(); err == nil && e != nil {
		err = e
	}
	st := c.State()
	st.Last = last
	if last != nil && last.Reading.Said != "" {
		said = append([]string{last.Reading.Said}, said...)
	}
	st.Said = append(said, st.Said...)
	return st, err
}

// ErrNotHere says a command does not apply in this mode.
var ErrNotHere = errors.New("not a command in this mode")

func (c *Controller) do(a Action, said *[]string) (*Verdict, error) {
	r := c.w.R
	st := r.Current()
	loopLine := func(line string) error {
		if c.w.Loop == nil {
			return fmt.Errorf("%q: %w (fault-finding and practice only)", strings.Fields(line)[0], ErrNotHere)
		}
		handled, out, err := c.w.Loop.Command(line)
		*said = append(*said, out...)
		if !handled && err == nil {
			err = fmt.Errorf("%q: %w", line, ErrNotHere)
		}
		return err
	}
	if q := r.NextAsk(); q != nil && (a.Kind == ActRead || a.Kind == ActConfirm) {
		if err := r.AnswerAsk(a.Text); err != nil {
			return nil, err
		}
		if r.Done(st.ID) && !r.Finished() {
			r.Next()
		}
		return nil, nil
	}
	switch a.Kind {
	case ActRead:
		if st == nil {
			return nil, errors.New("no step")
		}
		vd, err := r.Enter(point.Key{}, a.Text)
		if err != nil {
			return nil, err
		}
		c.afterReading(vd, said)
		return vd, nil
	case ActRetake, ActCorrect:
		if st == nil {
			return nil, errors.New("no step")
		}
		k := point.Key{}
		for i := len(r.Sess.Readings) - 1; i >= 0; i-- {
			if r.Sess.Readings[i].Step == st.ID {
				k = r.Sess.Readings[i].Point
				break
			}
		}
		if k.IsZero() {
			return nil, errors.New("no reading on this step yet: type the reading")
		}
		var vd *Verdict
		var err error
		if a.Kind == ActCorrect {
			vd, err = r.Correct(k, a.Text, a.Reason)
		} else {
			vd, err = r.Enter(k, a.Text)
		}
		if err != nil {
			return nil, err
		}
		c.afterReading(vd, said)
		return vd, nil
	case ActConfirm:
		if st == nil {
			return nil, errors.New("no step")
		}
		if c.w.Loop != nil && st.ID == StepName && !r.Done(StepName) {
			return nil, loopLine("y")
		}
		if h := r.PendingHalt(); h != nil && st.Kind == KindPowerDown {
			return nil, c.confirmOff(h, said)
		}
		if m := r.NextMeasure(); m != nil {
			if rd := r.Last(st.ID, m.Point); rd != nil && r.blocking(rd) {
				return nil, errors.New("a stop is in force on this step: measure again (type the new reading)" + overrideHint(rd.Point))
			}
			if r.Sess.Mode == Practise {
				return nil, fmt.Errorf("this step needs a reading (%s): m takes the simulated reading, s REASON skips it", m.Label)
			}
			return nil, fmt.Errorf("this step needs a reading (%s): type the meter's value, or s REASON to skip it", m.Label)
		}
		if !r.Done(st.ID) {
			if err := r.Confirm(); err != nil {
				return nil, err
			}
		}
		if !r.Finished() {
			r.Next()
		}
		return nil, nil
	case ActSkip:
		if err := r.Skip(a.Reason); err != nil {
			return nil, err
		}
		if st.Safety {
			*said = append(*said, fmt.Sprintf("SKIPPED SAFETY STEP %q: recorded with your reason and shown in every summary.", st.Title))
		}
		r.Next()
		return nil, nil
	case ActOverride:
		if err := r.Override(a.Reason); err != nil {
			return nil, err
		}
		*said = append(*said, "OVERRIDE recorded with your reason: it is boxed in every summary and on the job sheet.")
		if r.Done(st.ID) {
			r.Next()
		}
		return nil, nil
	case ActNote:
		if strings.TrimSpace(a.Text) == "" {
			return nil, errors.New("a note needs its text: n TEXT")
		}
		return nil, r.Note(a.Text)
	case ActGoto:
		id := strings.TrimSpace(a.Step)
		if n, err := strconv.Atoi(id); err == nil && n >= 1 && n <= len(r.Proc.Steps) {
			id = r.Proc.Steps[n-1].ID
		}
		return nil, r.Goto(id)
	case ActNext:
		if c.w.Loop != nil {
			return nil, loopLine("next")
		}
		r.Next()
		return nil, nil
	case ActSymptoms:
		return nil, loopLine("symptoms " + a.Text)
	case ActPowerUp:
		return nil, loopLine("power")
	case ActStop:
		return nil, loopLine("stop")
	case ActSimulate:
		if r.Sess.Mode != Practise {
			return nil, errors.New("m takes a simulated reading only in practice: type the meter's reading")
		}
		n := len(r.Sess.Readings)
		if err := loopLine("m"); err != nil {
			return nil, err
		}
		if len(r.Sess.Readings) > n {
			rd := r.Sess.Readings[len(r.Sess.Readings)-1]
			vd := &Verdict{Reading: rd, Message: string(rd.Status)}
			c.afterReading(vd, said)
			return vd, nil
		}
		return nil, nil
	case ActChoose:
		k, err := c.resolve(a.Text)
		if err != nil {
			return nil, err
		}
		return nil, loopLine("measure " + k.String())
	case ActName:
		return nil, loopLine("name " + a.Text)
	case ActReveal:
		return nil, loopLine("reveal")
	case ActPredict:
		m := r.NextMeasure()
		if st == nil || m == nil {
			return nil, errors.New("nothing to predict on this step")
		}
		if strings.TrimSpace(a.Text) == "" {
			c.noGuess[m.Point] = true
			return nil, nil
		}
		g, err := r.Predict(st, m, a.Text)
		if err != nil {
			return nil, err
		}
		word := "outside"
		if g.Good {
			word = "within"
		}
		*said = append(*said, fmt.Sprintf("Your prediction %s is %s the band.", a.Text, word))
		if st.Why != "" {
			*said = append(*said, "Why: "+st.Why)
		}
		return nil, nil
	case ActList, ActHelp, ActQuit, ActRefresh:
		return nil, nil
	}
	return nil, fmt.Errorf("unknown action %d", a.Kind)
}

func overrideHint(k point.Key) string {
	if overridable(k) {
		return ", or let it through with override REASON"
	}
	return ""
}

// afterReading moves on from a step whose readings are all in and carry
// no stop, and hands a bring-up over to fault-finding on a stop that
// says so.
func (c *Controller) afterReading(vd *Verdict, said *[]string) {
	r := c.w.R
	if vd.HandOff && (r.Sess.Mode == BringUp || r.Sess.Mode == Training) {
		if err := c.handOff(vd.Reading.Said, "fuse-blows"); err != nil {
			*said = append(*said, "error: "+err.Error())
			return
		}
		*said = append(*said, "The bring-up is stopped: fault-finding goes on from this reading (the amp stays unpowered). After the repair, measure the point again (measure cold "+vd.Reading.Point.ID+").")
		return
	}
	if vd.Reading.Consequence != GoOn || vd.Reading.Status == Retry {
		return
	}
	if st := r.Current(); st != nil && r.Done(st.ID) && !r.Finished() {
		r.Next()
	}
}

// settle brings the walk to where it must be after any action: a
// switch-off not yet confirmed takes over the screen; the measuring loop
// adds its next steps.
func (c *Controller) settle() error {
	r := c.w.R
	if h := r.PendingHalt(); h != nil {
		id := fmt.Sprintf("switch-off-%d", len(r.Sess.Halts))
		if r.Proc.Step(id) == nil {
			title := "SWITCH OFF NOW"
			switch {
			case h.Stop:
				title = "Switch off: a stop holds"
			case h.Cold:
				title = "Switch off: the next readings are cold"
			}
			c.w.AddStep(&Step{ID: id, Kind: KindPowerDown, Live: true, Title: title,
				Instruction: h.Why + " When the variac is at zero and the amp is switched off and unplugged, confirm (y). Its capacitors are charged: the walk asks you to discharge them again.",
				Cautions:    []string{LiveCaution, UnpluggedCaution}})
		}
		if st := r.Current(); st == nil || st.ID != id {
			if err := r.Goto(id); err != nil {
				return err
			}
		}
		return nil
	}
	if c.w.Loop != nil {
		if err := c.w.Loop.Advance(); err != nil {
			return err
		}
		if r.PendingHalt() != nil {
			// The loop asked for a switch-off (a stop holds on a live step).
			return c.settle()
		}
	}
	// A live step held only for the isolation transformer: the walk
	// takes the technician to that step.
	if st := r.Current(); st != nil && st.Live && r.Proc.HotChassis != "" && !r.Done(StepIsolation) {
		_ = r.Goto(StepIsolation)
	}
	return nil
}

// confirmOff records that the amp is off after a switch-off: the power
// cycle ends (every discharge check opens again) and a bring-up goes on
// as fault-finding with the readings as evidence.
func (c *Controller) confirmOff(h *Halt, said *[]string) error {
	r := c.w.R
	h.Done = true
	if st := r.Current(); st != nil {
		r.Sess.Passes = append(r.Sess.Passes, Pass{Step: st.ID, At: r.Now(), Cycle: r.Sess.Cycle})
	}
	r.Sess.Cycle++
	r.touch()
	if err := r.save(); err != nil {
		return err
	}
	*said = append(*said, "Switched off. Discharge and verify the capacitors again before you touch anything.")
	symptom := ""
	if strings.Contains(h.Why, "dissipating") || strings.Contains(h.Why, "positive of its cathode") {
		symptom = "red-plate"
	}
	if r.Sess.Mode == BringUp || r.Sess.Mode == Training {
		if err := c.handOff(h.Why, symptom); err != nil {
			return err
		}
		*said = append(*said, "The bring-up is stopped: fault-finding goes on unpowered, with every reading so far as evidence.")
		return nil
	}
	if l, ok := c.w.Loop.(*faultLoop); ok {
		l.unpowered()
	}
	r.First()
	return nil
}

// handOff turns a bring-up session into fault-finding from its readings:
// the symptoms step is taken as answered, the safety steps already done
// stay done (discharge again after a power cycle), and the measuring loop
// ranks on every reading so far.
func (c *Controller) handOff(why, symptom string) error {
	r := c.w.R
	s := r.Sess
	s.Mode = FaultFind
	s.Notes = append(s.Notes, Note{Text: "bring-up stopped and handed to fault-finding: " + why, At: r.Now(), Step: s.Cursor})
	if symptom != "" && !contains(s.Symptoms, symptom) {
		s.Symptoms = append(s.Symptoms, symptom)
	}
	s.Passes = append(s.Passes, Pass{Step: StepSymptoms, At: r.Now(), Cycle: s.Cycle})
	s.Cursor = ""
	w, err := openWith(c.w.B, s, r.Path, c.w.opt)
	if err != nil {
		return err
	}
	w.R.Now = r.Now
	c.w = w
	return nil
}

func contains(xs []string, x string) bool {
	for _, y := range xs {
		if y == x {
			return true
		}
	}
	return false
}

// resolve reads a point as a technician names it: "V2 pin 3", "V2.3",
// "B1" (DC volts), "cold B1", or a key's text form.
func (c *Controller) resolve(text string) (point.Key, error) {
	t := strings.TrimSpace(text)
	if k, err := point.Parse(t); err == nil {
		return k, nil
	}
	f := strings.Fields(t)
	switch {
	case len(f) == 2 && strings.EqualFold(f[0], "cold"):
		return point.ColdKey(f[1]), nil
	case len(f) == 3 && strings.EqualFold(f[1], "pin"):
		return point.LiveKey(f[0]+"."+f[2], point.DCVolts), nil
	case len(f) == 1 && f[0] != "":
		return point.LiveKey(f[0], point.DCVolts), nil
	}
	return point.Key{}, fmt.Errorf("%q: expected a point like \"V2 pin 3\", a net like \"B1\", or \"cold B1\" for a cold resistance", text)
}

// State returns the walk's state now.
func (c *Controller) State() State {
	r := c.w.R
	st := r.Current()
	s := State{Mode: r.Sess.Mode, Title: r.Proc.Title, Step: st, Index: r.CurrentIndex(), Total: len(r.Proc.Steps),
		Stops: r.Stops(), Halt: r.PendingHalt(), Finished: r.Finished(), SaveErr: r.SaveErr}
	if st != nil {
		s.Blockers = r.Blockers(st)
		s.Ask = r.NextAsk()
		if m := r.NextMeasure(); m != nil && s.Ask == nil {
			s.Measure = m
			s.Band, s.HasBand = r.Expected(st, m)
			s.WantPrediction = r.Training && !c.guessed(m.Point) && !c.noGuess[m.Point] && len(s.Blockers) == 0
		}
	}
	if c.w.Loop != nil {
		s.Hints = c.w.Loop.Hint()
		if l, ok := c.w.Loop.(*faultLoop); ok {
			s.Rank = l.rank
		}
	}
	return s
}

func (c *Controller) guessed(k point.Key) bool {
	for _, g := range c.w.R.Sess.Guesses {
		if g.Point == k {
			return true
		}
	}
	return false
}

// Ranker ranks suspects on a copy of the readings for a walk with no
// measuring loop (bring-up, training), with an inference engine built
// from the design on first use. It may run beside Do (it reads only the
// readings it is given); calls are serialised.
func (c *Controller) Ranker() func([]Reading) (*infer.Ranking, error) {
	var mu sync.Mutex
	var eng *infer.Engine
	d := c.w.B.D
	seed := c.w.R.Sess.Seed
	symptoms := slices.Clone(c.w.R.Sess.Symptoms)
	return func(rs []Reading) (*infer.Ranking, error) {
		mu.Lock()
		defer mu.Unlock()
		if eng == nil {
			e, err := infer.New(d, infer.Options{Seed: seed, Symptoms: symptoms})
			if err != nil {
				return nil, err
			}
			eng = e
		}
		return eng.Rank(Observations(rs, d), nil), nil
	}
}
