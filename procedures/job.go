package procedures

import (
	"errors"
	"fmt"
	"math"
	"strings"
	"time"
	"unicode"

	"pinwalk/expect/design"
	"pinwalk/expect/point"
	"pinwalk/expect/units"
)

// Ask is a question a step puts to the technician whose answer is words
// (or a figure) for the job's paperwork rather than a meter reading: the
// intake, the visual inspection, the close-out. Field names where the
// answer goes (see Session.answer); an empty Enter passes a question that
// is not Required.
type Ask struct {
	Field    string `yaml:"field"`
	Prompt   string `yaml:"prompt"`
	Required bool   `yaml:"required,omitempty"`
}

// Answer records one answer to a step's question.
type Answer struct {
	Step  string    `yaml:"step"`
	Field string    `yaml:"field"`
	Text  string    `yaml:"text"` // as typed; "" = passed
	At    time.Time `yaml:"at"`
}

// Answer fields.
const (
	FieldCustomer   = "customer"
	FieldAmp        = "amp"
	FieldSerial     = "serial"
	FieldComplaint  = "complaint"
	FieldTechnician = "technician"
	FieldMeter      = "meter"
	FieldVisual     = "visual"
	FieldChannel    = "channel"
	FieldSwap       = "swap"
	FieldPart       = "part"        // REF VALUE RATING, reason
	FieldPowerOut   = "power-out:"  // + channel name: watts into the dummy load
	FieldSoak       = "soak"        // minutes, or a duration
	FieldEarthBond  = "earth-bond"  // ohms, with the instrument
	FieldInsulation = "insulation"  // ohms at 500 V DC, with the instrument
	FieldSignOff    = "sign-off"    // the technician's name
	FieldDummyLoad  = "dummy-load"  // ohms of the dummy load
	FieldNoteAnswer = "note-answer" // a free answer kept as a note
)

// answered reports whether a step's question has an answer (a pass
// counts) in this session.
func (r *Runner) answered(step, field string) bool {
	for _, a := range r.Sess.Answers {
		if a.Step == step && a.Field == field {
			return true
		}
	}
	return false
}

// NextAsk returns the first question of the current step not answered,
// or nil.
func (r *Runner) NextAsk() *Ask {
	st := r.Current()
	if st == nil {
		return nil
	}
	for i := range st.Asks {
		if !r.answered(st.ID, st.Asks[i].Field) {
			return &st.Asks[i]
		}
	}
	return nil
}

// AnswerAsk records the answer to the current step's next question: the
// session's job fields take it (a figure is parsed and checked), and the
// typed text is kept as it was.
func (r *Runner) AnswerAsk(text string) error {
	st := r.Current()
	q := r.NextAsk()
	if st == nil || q == nil {
		return errors.New("this step asks nothing")
	}
	text = strings.TrimSpace(text)
	if text == "" && q.Required {
		return fmt.Errorf("%s: an answer is needed here", q.Prompt)
	}
	if text != "" {
		if err := r.Sess.answer(q.Field, text, r.Now()); err != nil {
			return fmt.Errorf("%s: %w", q.Prompt, err)
		}
	}
	r.Sess.Answers = append(r.Sess.Answers, Answer{Step: st.ID, Field: q.Field, Text: text, At: r.Now()})
	// "Nothing (more)" passes the repeats of the same question.
	if text == "" || isNothing(text) {
		for _, o := range st.Asks {
			if o.Field != q.Field && baseField(o.Field) == baseField(q.Field) && !r.answered(st.ID, o.Field) {
				r.Sess.Answers = append(r.Sess.Answers, Answer{Step: st.ID, Field: o.Field, At: r.Now()})
			}
		}
	}
	r.touch()
	return r.save()
}

// baseField drops a repeat number from a field ("visual-2" is another
// "visual").
func baseField(f string) string {
	if i := strings.LastIndexByte(f, '-'); i > 0 && i < len(f)-1 && strings.Trim(f[i+1:], "0123456789") == "" {
		return f[:i]
	}
	return f
}

// answer puts one answer where the job's paperwork keeps it.
func (s *Session) answer(field, text string, at time.Time) error {
	j := &s.Job
	field = baseField(field)
	switch {
	case field == FieldCustomer:
		j.Customer = text
	case field == FieldAmp:
		s.Bench.AmpID = text
	case field == FieldSerial:
		s.Bench.Serial = text
	case field == FieldComplaint:
		j.Complaint = text
	case field == FieldTechnician:
		s.Bench.Who = text
	case field == FieldMeter:
		s.Bench.Meter = text
	case field == FieldVisual:
		if !isNothing(text) {
			j.Visual = append(j.Visual, text)
		}
	case field == FieldChannel:
		j.Channel = text
	case field == FieldSwap || strings.HasPrefix(field, FieldSwap+":"):
		res, err := parseSwap(text)
		if err != nil {
			return err
		}
		j.Swap = &SwapTest{Valves: strings.TrimPrefix(strings.TrimPrefix(field, FieldSwap), ":"), Result: res, Said: text, At: at}
	case field == FieldNoteAnswer, field == FieldDummyLoad:
		s.Notes = append(s.Notes, Note{Text: field + ": " + text, At: at})
	case field == FieldPart:
		f := strings.Fields(text)
		if len(f) < 2 {
			return errors.New("expected REF VALUE [RATING], REASON (like: C2 100µF 450V, bulging)")
		}
		body, reason, _ := strings.Cut(text, ",")
		bf := strings.Fields(body)
		pc := PartChange{Ref: bf[0], At: at, Reason: strings.TrimSpace(reason)}
		if len(bf) > 1 {
			pc.Value = bf[1]
		}
		if len(bf) > 2 {
			pc.Rating = strings.Join(bf[2:], " ")
		}
		j.Parts = append(j.Parts, pc)
		if s.Outcome != nil {
			s.Outcome.Replaced = append(s.Outcome.Replaced, pc.Ref)
		}
	case strings.HasPrefix(field, FieldPowerOut):
		w, err := units.Parse(strings.TrimSuffix(strings.TrimSpace(text), "W"), units.Watts)
		if err != nil || !(w >= 0) || w > 2000 {
			return fmt.Errorf("%q: expected watts into the dummy load, like 12 or 12W", text)
		}
		j.After.PowerOut = append(j.After.PowerOut, PowerOut{Channel: strings.TrimPrefix(field, FieldPowerOut), Watts: w, At: at})
	case field == FieldSoak:
		d, err := parseSoak(text)
		if err != nil {
			return err
		}
		j.After.Soak = &Soak{Duration: d, At: at}
	case field == FieldEarthBond, field == FieldInsulation:
		t, err := parseSafetyTest(field, text, at)
		if err != nil {
			return err
		}
		if field == FieldEarthBond {
			j.After.EarthBond = t
		} else {
			j.After.Insulation = t
		}
	case field == FieldSignOff:
		j.SignOff = &SignOff{Name: text, At: at}
	default:
		return fmt.Errorf("unknown answer field %q", field)
	}
	return nil
}

func isNothing(s string) bool {
	switch strings.ToLower(strings.TrimSpace(s)) {
	case "ok", "none", "nothing", "no", "-", "fine", "good":
		return true
	}
	return false
}

// parseSwap reads the answer of the swap test: follows (moves, yes:
// the fault went to the other channel with the valve), stays (no: it
// stayed on its channel) or not tried.
func parseSwap(text string) (string, error) {
	w := strings.ToLower(strings.TrimSpace(text))
	first := ""
	if f := strings.FieldsFunc(w, func(r rune) bool { return !unicode.IsLetter(r) }); len(f) > 0 {
		first = f[0]
	}
	switch {
	case first == "follows" || first == "followed" || first == "follow" || first == "moves" || first == "moved" || first == "yes" || first == "y":
		return SwapFollows, nil
	case first == "stays" || first == "stayed" || first == "stay" || first == "no" || first == "n":
		return SwapStays, nil
	case w == "not tried" || first == "untried" || first == "skipped" || w == "-" || strings.HasPrefix(w, "not tried"):
		return SwapNotTried, nil
	}
	return "", fmt.Errorf("%q: expected follows (the fault moved with the valve), stays (it stayed on its channel) or not tried", text)
}

// parseSoak reads a soak time: minutes as a bare number, or a Go duration
// ("2h", "90m").
func parseSoak(text string) (time.Duration, error) {
	t := strings.TrimSpace(strings.TrimSuffix(strings.TrimSuffix(strings.TrimSpace(text), "min"), " "))
	var m float64
	if _, err := fmt.Sscanf(t, "%g", &m); err == nil && !strings.ContainsAny(t, "hms") {
		if m <= 0 || m > 7*24*60 {
			return 0, fmt.Errorf("%q: expected the soak time in minutes (like 60) or as 2h", text)
		}
		return time.Duration(m * float64(time.Minute)), nil
	}
	d, err := time.ParseDuration(t)
	if err != nil || d <= 0 {
		return 0, fmt.Errorf("%q: expected the soak time in minutes (like 60) or as 2h", text)
	}
	return d, nil
}

// parseSafetyTest reads "0.08 tester" or "5M tester" (the proper
// instrument) or "0.3 meter" (a multimeter: an indication only).
func parseSafetyTest(field, text string, at time.Time) (*SafetyTest, error) {
	f := strings.Fields(text)
	want := "expected the reading and the instrument, like 0.08 tester (an earth-bond tester, IEC 61557-4) or 0.3 meter (a multimeter: an indication only)"
	if field == FieldInsulation {
		want = "expected the reading and the instrument, like 50M tester (an insulation tester at 500 V DC, IEC 61557-2) or 20M meter (a multimeter: an indication only)"
	}
	if len(f) == 3 && (f[0] == ">" || f[0] == "<") {
		f = []string{f[0] + f[1], f[2]}
	}
	if len(f) != 2 {
		return nil, fmt.Errorf("%q: %s", text, want)
	}
	// A tester past its range shows ">200 MΩ" (insulation) or "<0.01 Ω"
	// (earth bond): the bound it shows is kept, which is the worse case
	// for the verdict either way.
	if field == FieldInsulation {
		f[0] = strings.TrimPrefix(f[0], ">")
	} else {
		f[0] = strings.TrimPrefix(f[0], "<")
	}
	v := math.Inf(1)
	if !point.IsOpenWord(f[0]) {
		x, err := units.Parse(f[0], units.Ohms)
		if err != nil || x < 0 {
			return nil, fmt.Errorf("%q: %s", text, want)
		}
		v = x
	}
	t := &SafetyTest{Ohms: v, Raw: text, At: at}
	switch strings.ToLower(f[1]) {
	case "tester":
		t.Instrument = EarthBondTester
		if field == FieldInsulation {
			t.Instrument, t.TestVolts = InsulationTester, 500
		}
	case "meter", "multimeter":
		t.Instrument = Multimeter
	default:
		return nil, fmt.Errorf("%q: %s", text, want)
	}
	return t, nil
}

// intakeStep is the job intake: who, what, the complaint in the
// customer's words, the technician and the meter. Every question may be
// passed with an empty Enter (a bench session for one's own amp).
func intakeStep() *Step {
	return &Step{ID: StepIntake, Kind: KindIntake, Title: "Job intake",
		Instruction: "Who and what is on the bench: answer each question (an empty Enter passes it). The answers go on the job sheet.",
		Asks: []Ask{
			{Field: FieldCustomer, Prompt: "Customer (name or job number)"},
			{Field: FieldAmp, Prompt: "Amplifier make and model"},
			{Field: FieldSerial, Prompt: "Serial number"},
			{Field: FieldComplaint, Prompt: "The complaint, in the customer's words"},
			{Field: FieldTechnician, Prompt: "Technician"},
			{Field: FieldMeter, Prompt: "Meter (make, model)"},
		},
		Why: "The job sheet is the record of what came in, what was found and what was done: it starts with who brought what, and what they said was wrong."}
}

// visualStep is the visual inspection, unplugged and discharged, before
// any resistance is measured.
func visualStep(gate []string) *Step {
	return &Step{ID: StepVisual, Kind: KindVisual, Gate: append([]string(nil), gate...), Cautions: []string{UnpluggedCaution},
		Title: "Look before you measure",
		Instruction: "Unplugged and discharged, look and smell: the fuse (its rating against the one marked on the chassis or the schematic), burnt or cracked resistors, bulging, leaking or vented capacitors, " +
			"valves with a whitened (milky) getter or a cracked envelope, loose or corroded valve sockets, dry or cracked solder joints, scorched boards, a smell of hot varnish. " +
			"Type what you find, one finding per answer (ok when nothing more).",
		Asks: []Ask{{Field: FieldVisual, Prompt: "Finding (ok: nothing)"}, {Field: FieldVisual + "-2", Prompt: "Another finding (ok: nothing more)"}},
		Why:  "A burnt resistor, a bulging capacitor or a whitened getter says more in a second than ten readings; the wrong fuse in the holder is how many amps arrive with a second fault."}
}

// channels lists the amp's output channels by output transformer, in
// design order.
func channels(d *design.Design) []string {
	var out []string
	for _, p := range d.PartsOfKind(design.OutputTransformer) {
		out = append(out, p.Ref)
	}
	return out
}

// closeOutSteps is the after-repair sequence of fault-finding: the parts
// replaced, power up again on the variac, the points out of band read
// again, the output into a dummy load per channel, a soak, the final
// safety tests with the proper testers, and the sign-off.
func (l *faultLoop) closeOutSteps() []*Step {
	b := l.w.B
	g := append([]string(nil), l.safety...)
	var out []*Step
	out = append(out, &Step{ID: "parts-replaced", Kind: KindConfirm, Gate: append(append([]string(nil), g...), StepReplace), Cautions: []string{UnpluggedCaution},
		Title:       "Parts replaced",
		Instruction: "For each part you replaced: its reference, the new part's value and rating as written on it, and why (like: C2 100µF 450V, bulging). An empty Enter when there are no more.",
		Asks:        []Ask{{Field: FieldPart, Prompt: "Part replaced (REF VALUE RATING, reason)"}, {Field: FieldPart + "-2", Prompt: "Another part (empty: no more)"}, {Field: FieldPart + "-3", Prompt: "Another part (empty: no more)"}},
		Why:         "The customer's sheet lists every part replaced with its value and rating; the next technician reads it too."})
	pw := &Step{ID: "after-power", Kind: KindPowerUp, Live: true, Variac: 1, Gate: append(append([]string(nil), g...), "parts-replaced"),
		Cautions: []string{LiveCaution, VariacCaution}, Title: "After the repair: power up on the variac",
		Instruction: "Plug in through the variac (and the series lamp for the first seconds), with a dummy load on every output, and bring it up in steps to 100 %, watching B+ and the lamp. At 100 % measure:",
		StopIf:      []string{"B+ far below its band, or the lamp stays bright", "a plate glows red", "smoke, arcing or the fuse blows"},
		Why:         "The repaired amp comes up as carefully as a new build: a second fault, or a part fitted the wrong way round, shows in the first seconds."}
	if steps, err := liveSteps(b, g, false); err == nil && len(steps) > 0 {
		pw.Measures = append(pw.Measures, steps[0].Measures...)
	}
	out = append(out, pw)
	// The points out of band before the repair, read again.
	again := &Step{ID: "after-readings", Kind: KindLive, Live: true, Variac: 1, Gate: append(append([]string(nil), g...), pw.ID),
		Cautions: []string{LiveCaution, VariacCaution}, Title: "After the repair: the readings that were out",
		Instruction: "At 100 % mains, measure again each point that read out of band before the repair.",
		Why:         "Before and after, side by side, is the proof of the repair on the customer's sheet."}
	seen := map[point.Key]bool{}
	for _, rd := range l.w.R.Sess.Readings {
		if rd.Status != OutOfBand || rd.Point.Domain != point.Live || seen[rd.Point] || !(rd.Variac == 0 || rd.Variac == 1) {
			continue
		}
		seen[rd.Point] = true
		again.Measures = append(again.Measures, measureFor(rd.Point, l.w.R.labelOf(rd.Step, rd.Point), "as before: "+l.w.R.labelOf(rd.Step, rd.Point)))
	}
	if len(again.Measures) > 0 {
		out = append(out, again)
	}
	prev := out[len(out)-1].ID
	for _, bs := range b.BiasStages() {
		if st := b.biasStep(bs, "after-bias-"+bs.Ref, "After the repair: bias of "+bs.Ref, append(append([]string(nil), g...), prev), []string{LiveCaution, VariacCaution}); st != nil {
			out = append(out, st)
			prev = st.ID
		}
	}
	po := &Step{ID: "power-out", Kind: KindConfirm, Live: true, Variac: 1, Gate: append(append([]string(nil), g...), prev),
		Cautions: []string{LiveCaution, VariacCaution}, Title: "Power out into a dummy load",
		Instruction: "With a dummy load of the rated impedance on each output and a test tone at the input, raise the level to the onset of clipping on a scope and read the AC volts across the load: power = V²/R. Type the watts of each channel.",
		Why:         "A repaired amp must make its power on every channel: a low figure is a weak output valve, a tired supply or a second fault."}
	// The field keeps the output transformer's reference (a stable key in
	// the session); the prompt names the channel as the walk does
	// everywhere (ChannelsOf: "left channel (OT1)").
	title := ChannelTitles(b)
	for _, ch := range channels(b.D) {
		name := "channel " + ch
		if t, ok := title[ch]; ok {
			name = t
		}
		po.Asks = append(po.Asks, Ask{Field: FieldPowerOut + ch, Prompt: "Watts into the dummy load, " + name})
	}
	if len(po.Asks) == 0 {
		po.Asks = []Ask{{Field: FieldPowerOut + "output", Prompt: "Watts into the dummy load"}}
	}
	out = append(out, po)
	out = append(out, &Step{ID: "soak", Kind: KindConfirm, Live: true, Variac: 1, Gate: append(append([]string(nil), g...), po.ID),
		Cautions: []string{LiveCaution}, Title: "Soak",
		Instruction: "Leave the amp running into its dummy loads, lid on as in use, for an hour or more (common practice), checking now and then for smell, noise and the bias. Type how long it ran.",
		Asks:        []Ask{{Field: FieldSoak, Prompt: "Soak time (minutes, or 2h)"}},
		Why:         "Intermittent faults, a marginal part and a bias that drifts show only when everything is hot."})
	safety := b.handsIn("final-safety", "Final safety tests",
		"Switch off and unplug; measure B+ to chassis (below 10 V before touching). Then, with the proper testers: the earth bond from the plug's earth pin to the chassis (an earth-bond tester, IEC 61557-4: not over 0.1 Ω plus the cord, IET Code of Practice) and the insulation resistance from live and neutral joined to earth at 500 V DC (an insulation tester, IEC 61557-2: at least 1 MΩ). Type each reading and the instrument (tester, or meter if you only had a multimeter: an indication only). Local codes and licensed practice rule.",
		"A repaired amp goes back to a home: the earth bond and the insulation are what make it safe to touch, and only the proper testers prove them.", append(append([]string(nil), g...), "soak"))
	safety.Asks = []Ask{{Field: FieldEarthBond, Prompt: "Earth bond, ohms and instrument (like 0.08 tester)", Required: true},
		{Field: FieldInsulation, Prompt: "Insulation at 500 V DC, ohms and instrument (like 50M tester)", Required: true}}
	if b.D.TwoPin() {
		// No earth pin: the insulation from the mains pins to what a
		// user can touch is the whole of the safety test.
		safety.Instruction = fmt.Sprintf("Switch off and unplug; measure B+ to chassis (below 10 V before touching). This set has no mains earth: with an insulation tester (IEC 61557-2) at 500 V DC, the set's switch on, measure from the plug's live and neutral pins joined to every metal part a user can touch (knobs' grub screws, cabinet and back-panel screws, socket shells): at least %s (class II, IET Code of Practice, from memory). Type the lowest reading and the instrument. Local codes and licensed practice rule.", FormatValue(InsulationStopOhms, "Ω"))
		safety.Why = "A set with no mains earth goes back to a home on its insulation alone: only an insulation tester proves it."
		safety.Asks = []Ask{{Field: FieldInsulation, Prompt: "Insulation, mains pins to exposed metal at 500 V DC, ohms and instrument (like 200M tester)", Required: true}}
	}
	out = append(out, safety)
	out = append(out, &Step{ID: "sign-off", Kind: KindConfirm, Gate: append(append([]string(nil), g...), safety.ID), Title: "Sign-off",
		Instruction: "Your name signs the job off: it goes on the customer's sheet with the time.",
		Asks:        []Ask{{Field: FieldSignOff, Prompt: "Technician signing off", Required: true}},
		Why:         "The sign-off says a named person checked the amp after the repair."})
	return out
}
