package main

import (
	"encoding/json"
	"flag"
	"fmt"
	"io"
	"math"
	"os"
	"strconv"
	"strings"

	"gopkg.in/yaml.v3"

	"pinwalk/expect/ac"
	"pinwalk/expect/amp"
	"pinwalk/expect/bands"
	"pinwalk/expect/design"
	"pinwalk/expect/faults"
	pkey "pinwalk/expect/point"
	"pinwalk/expect/units"
	"pinwalk/procedures/infer"
)

// symptomFlags collects repeated --symptom options.
type symptomFlags []string

func (s *symptomFlags) String() string     { return strings.Join(*s, ",") }
func (s *symptomFlags) Set(v string) error { *s = append(*s, v); return nil }

// rawReading is one line of a readings file before its key is checked.
type rawReading struct {
	id, value string
	line      int
}

// readingsFile is a parsed readings file.
type readingsFile struct {
	cond     amp.Conditions
	meter    string
	readings []rawReading
}

// parseReadingsFile reads a YAML mapping of point id to reading, with an
// optional `conditions:` mapping (mains, variac, meter).
func parseReadingsFile(name string, data []byte) (*readingsFile, []string) {
	var doc yaml.Node
	if err := yaml.Unmarshal(data, &doc); err != nil {
		msg := strings.TrimPrefix(err.Error(), "yaml: ")
		line := 1
		if strings.HasPrefix(msg, "line ") {
			fmt.Sscanf(msg, "line %d:", &line)
			if i := strings.Index(msg, ": "); i > 0 {
				msg = msg[i+2:]
			}
		}
		return nil, []string{fmt.Sprintf("%s:%d: not valid YAML (%s): expected a mapping of point id to reading, like `V2.3: 245V`", name, line, msg)}
	}
	if len(doc.Content) == 0 {
		return nil, []string{fmt.Sprintf("%s: empty: expected a mapping of point id to reading, like `V2.3: 245V`", name)}
	}
	root := doc.Content[0]
	if root.Kind != yaml.MappingNode {
		return nil, []string{fmt.Sprintf("%s:%d: expected a mapping of point id to reading, like `V2.3: 245V`", name, root.Line)}
	}
	rf := &readingsFile{}
	var errs []string
	seen := map[string]int{}  // point (its full key when it parses) → line of its first reading
	setAt := map[string]int{} // condition → line it was set on
	conditionsAt := 0         // line of the `conditions:` mapping
	for i := 0; i+1 < len(root.Content); i += 2 {
		k, v := root.Content[i], root.Content[i+1]
		switch k.Value {
		case "mains", "variac", "meter":
			errs = append(errs, fmt.Sprintf("%s:%d: %s: a setting, not a point: expected it under `conditions:`, like `conditions: {%s: %s}`",
				name, k.Line, k.Value, k.Value, map[string]string{"mains": "230V", "variac": "50%", "meter": "10M"}[k.Value]))
			continue
		}
		if k.Value == "conditions" {
			// One set of conditions per file: two would leave one unread.
			if conditionsAt > 0 {
				errs = append(errs, fmt.Sprintf("%s:%d: conditions: given twice, at line %d and line %d: expected one `conditions:` mapping (put mains, variac and meter in it together)", name, k.Line, conditionsAt, k.Line))
				continue
			}
			conditionsAt = k.Line
			if v.Kind != yaml.MappingNode {
				errs = append(errs, fmt.Sprintf("%s:%d: conditions: expected a mapping (mains, variac, meter)", name, v.Line))
				continue
			}
			for j := 0; j+1 < len(v.Content); j += 2 {
				ck, cv := v.Content[j], v.Content[j+1]
				if first, dup := setAt[ck.Value]; dup {
					errs = append(errs, fmt.Sprintf("%s:%d: conditions: %s set twice, at line %d and line %d: expected it once (keep the one that was true at the bench)", name, ck.Line, ck.Value, first, ck.Line))
					continue
				}
				setAt[ck.Value] = ck.Line
				switch ck.Value {
				case "mains":
					x, err := units.Parse(cv.Value, units.Volts)
					if err != nil || x < 50 || x > 300 {
						errs = append(errs, fmt.Sprintf("%s:%d: conditions: mains %q: expected the mains volts at the wall, like 230V", name, cv.Line, cv.Value))
						continue
					}
					rf.cond.MainsVolts = x
				case "variac":
					s := strings.TrimSuffix(strings.TrimSpace(cv.Value), "%")
					x, err := strconv.ParseFloat(s, 64)
					if err != nil || !(x > 0 && x <= 130) {
						errs = append(errs, fmt.Sprintf("%s:%d: conditions: variac %q: expected a setting in percent of the mains, like 50%%", name, cv.Line, cv.Value))
						continue
					}
					rf.cond.Variac = x / 100
				case "meter":
					// An empty value would quietly mean the default meter:
					// say which meter read instead.
					if strings.TrimSpace(cv.Value) == "" || cv.Tag == "!!null" {
						errs = append(errs, fmt.Sprintf("%s:%d: conditions: meter is empty: expected the meter's input resistance, like 10M, or an analogue meter like 20k/V:500V", name, cv.Line))
						continue
					}
					if _, err := bands.ParseMeter(cv.Value); err != nil {
						errs = append(errs, fmt.Sprintf("%s:%d: conditions: %v", name, cv.Line, err))
						continue
					}
					rf.meter = cv.Value
				default:
					errs = append(errs, fmt.Sprintf("%s:%d: conditions: unknown field %q%s: expected mains, variac or meter", name, ck.Line, ck.Value,
						suggestHint(ck.Value, []string{"mains", "variac", "meter"})))
				}
			}
			continue
		}
		if v.Kind != yaml.ScalarNode {
			errs = append(errs, fmt.Sprintf("%s:%d: %s: expected one reading, like 245V", name, v.Line, k.Value))
			continue
		}
		id := strings.TrimSpace(k.Value)
		// One point has one reading (common sense): "B1" and "B1 dc_volts"
		// are the same point, so they are compared by their full key.
		same := id
		if pk, err := pkey.ParseShort(id); err == nil {
			same = pk.String()
		}
		if first, dup := seen[same]; dup {
			errs = append(errs, fmt.Sprintf("%s:%d: %s: read twice, at line %d and line %d: expected one reading per point (keep the one you trust)", name, k.Line, id, first, k.Line))
			continue
		}
		seen[same] = k.Line
		if msg := checkReadingValue(id, v.Value); msg != "" {
			errs = append(errs, fmt.Sprintf("%s:%d: %s: %s", name, v.Line, id, msg))
			continue
		}
		rf.readings = append(rf.readings, rawReading{id: k.Value, value: v.Value, line: k.Line})
	}
	return rf, errs
}

// Largest magnitudes a bench reading can have (our limits, far above any
// valve amplifier's: its B+ is at most a few kilovolts, its mains fuse a few
// amps; a bench ohmmeter reads open (OL) long before 10 GΩ, common practice).
const (
	maxReadingVolts = 10e3
	maxReadingAmps  = 100
	maxReadingOhms  = 10e9
)

// checkReadingValue checks a reading's value for its point id (the unit
// follows from the id: "cold:…" is ohms, "… dc_amps" amps, else volts) and
// returns what was expected, or "".
func checkReadingValue(id, value string) string {
	uq, what, limit := units.Volts, "volts", maxReadingVolts
	k, _ := pkey.ParseShort(id)
	ac := false
	switch k.Quantity {
	case pkey.ACVolts, pkey.RippleVolts, pkey.ToneVolts:
		ac = true
	}
	switch k.Quantity {
	case pkey.Ohms:
		uq, what, limit = units.Ohms, "ohms", maxReadingOhms
		if pkey.IsOpenWord(value) {
			return ""
		}
	case pkey.DCAmps:
		uq, what, limit = units.Amps, "amps", maxReadingAmps
	case pkey.ACAmps:
		uq, what, limit, ac = units.Amps, "amps", maxReadingAmps, true
	}
	x, err := units.Parse(value, uq)
	if err != nil {
		return fmt.Sprintf("%v", err)
	}
	switch {
	case uq == units.Ohms && (math.IsNaN(x) || math.IsInf(x, 0) || x > limit):
		return fmt.Sprintf("%q: expected a resistance up to %s, or open for a reading beyond the meter's range (OL)", value, units.Format(limit, uq))
	case math.IsNaN(x) || math.IsInf(x, 0) || math.Abs(x) > limit:
		return fmt.Sprintf("%q: expected a finite reading in %s within ±%s", value, what, units.Format(limit, uq))
	case ac && x < 0:
		// An AC reading is the size of a swing (rms), never signed.
		return fmt.Sprintf("%q: expected an AC reading of 0 or more (a meter's AC range shows the size of the swing, never a sign)", value)
	case uq == units.Ohms && x < 0:
		return fmt.Sprintf("%q: expected a resistance of 0 Ω or more, or open (an ohmmeter shows a negative value when a charged capacitor or a live circuit drives it: power off, discharge, and measure again)", value)
	}
	return ""
}

func suggestHint(w string, cands []string) string {
	if s := design.Suggest(w, cands); len(s) > 0 {
		return fmt.Sprintf(" (did you mean %q?)", s[0])
	}
	return ""
}

// resolveReading turns a readings-file entry into an observation: "V2.3"
// and net names are DC volts, "V2.3 dc_amps" names the quantity, "cold:B1"
// is a cold resistance ("open" or "OL" for an open reading).
func resolveReading(e *infer.Engine, keys map[string]bool, ids []string, file string, r rawReading) (infer.Observation, error) {
	id := strings.TrimSpace(r.id)
	pk, perr := pkey.ParseShort(id)
	key := pk.String()
	if pk.Quantity == pkey.ToneVolts && !keys[key] && !hasTone(keys) {
		return infer.Observation{}, fmt.Errorf("%s:%d: %s: a tone reading needs the tone set up: give --tone FREQ:LEVEL (like 1kHz:100mV), as injected at the input", file, r.line, id)
	}
	if perr != nil || !keys[key] {
		return infer.Observation{}, fmt.Errorf("%s:%d: %s: no such point in the design%s", file, r.line, id, suggestHint(id, ids))
	}
	uq := units.Volts
	switch pk.Quantity {
	case pkey.DCAmps, pkey.ACAmps:
		uq = units.Amps
	case pkey.Ohms:
		uq = units.Ohms
		if pkey.IsOpenWord(r.value) {
			return infer.Observation{Key: key, Value: math.Inf(1)}, nil
		}
	}
	x, err := units.Parse(r.value, uq)
	if err != nil {
		return infer.Observation{}, fmt.Errorf("%s:%d: %s: %v", file, r.line, id, err)
	}
	return infer.Observation{Key: key, Value: x}, nil
}

// hasTone reports whether the engine predicts tone points.
func hasTone(keys map[string]bool) bool {
	for k := range keys {
		if infer.IsTone(k) {
			return true
		}
	}
	return false
}

// acMeterNote describes how the AC meter's response and bandwidth were
// allowed for.
func acMeterNote(mt infer.ACMeter, tone *ac.Options) string {
	var parts []string
	switch mt.Response {
	case infer.Average:
		parts = append(parts, fmt.Sprintf("average-responding AC meter: reads a sine (the tone) correctly, reservoir ripple (a sawtooth) %.1f %% low (form factor; allowed for)", 100*(1-infer.SawtoothAverageRatio)))
	case infer.TrueRMS:
		parts = append(parts, "true-rms AC meter")
	}
	if mt.BandwidthHz > 0 {
		s := fmt.Sprintf("AC bandwidth %s", units.Format(mt.BandwidthHz, units.Hertz))
		if tone != nil && tone.Hz > mt.BandwidthHz {
			s += fmt.Sprintf(": reads the %s tone about %.0f %% low (allowed for, with that much more uncertainty); a tone within the meter's range reads truer",
				units.Format(tone.Hz, units.Hertz), 100*(1-mt.Gain(tone.Hz)))
		}
		parts = append(parts, s)
	}
	return strings.Join(parts, "; ")
}

type jsonSuspect struct {
	Part        string   `json:"part"`
	Mode        string   `json:"mode"`
	Label       string   `json:"label"`
	Probability float64  `json:"probability"`
	Group       int      `json:"group"`
	Why         []string `json:"why"`
}

type jsonProbe struct {
	ID       string  `json:"id"`
	Label    string  `json:"label"`
	GainBits float64 `json:"gain_bits"`
	Reason   string  `json:"reason"`
	Cost     float64 `json:"cost"`
	Live     bool    `json:"live"`
	Setup    string  `json:"setup"`
}

type jsonDiagnosis struct {
	Design     string        `json:"design"`
	Readings   int           `json:"readings"`
	Symptoms   []string      `json:"symptoms"`
	Suspects   []jsonSuspect `json:"suspects"`
	Groups     [][]string    `json:"groups"`
	GroupNotes []string      `json:"group_notes"`
	Fits       bool          `json:"fits"`
	FitNote    string        `json:"fit_note,omitempty"`
	Pairs      []jsonSuspect `json:"pairs,omitempty"`
	Next       *jsonProbe    `json:"next"`
	Unsolved   []string      `json:"unsolved,omitempty"`
	ACMeter    string        `json:"ac_meter,omitempty"`
	// NotModelled: faults that happen on the bench but that the ranking
	// cannot see, each with why; listed so that none is silently absent.
	NotModelled []jsonUnmodelled `json:"not_modelled"`
}

type jsonUnmodelled struct {
	Fault string `json:"fault"`
	Why   string `json:"why"`
}

func notModelledJSON() []jsonUnmodelled {
	var out []jsonUnmodelled
	for _, u := range faults.NotModelled() {
		out = append(out, jsonUnmodelled{u.Fault, u.Why})
	}
	return out
}

func toJSONSuspect(s infer.Suspect) jsonSuspect {
	part, mode := "", s.Fault
	if i := strings.LastIndexByte(s.Fault, ':'); i > 0 && !strings.Contains(s.Fault, "+") {
		part, mode = s.Fault[:i], s.Fault[i+1:]
	}
	return jsonSuspect{Part: part, Mode: mode, Label: s.Label, Probability: s.Probability, Group: s.Group, Why: s.Why}
}

func runDiagnose(args []string, stdout, stderr io.Writer) int {
	fs := flag.NewFlagSet("diagnose", flag.ContinueOnError)
	fs.SetOutput(stderr)
	readings := fs.String("readings", "", "YAML file of readings: point id to value (V2.3: 245V, B1: 318, \"V2.3 dc_amps\": 45mA, cold:B1: 220k, \"B1 ripple\": 2.1V, with --tone \"V2.5 tone\": 1.2V)")
	var symptoms symptomFlags
	fs.Var(&symptoms, "symptom", "a reported symptom, repeatable: "+strings.Join(infer.Symptoms, ", "))
	asJSON := fs.Bool("json", false, "print JSON (suspects, next, fits, groups)")
	meterSpec := fs.String("meter", "", "the voltmeter: 10M (digital) or 20k/V:500V (analogue); default the readings file's, else 10M")
	samples := fs.Int("samples", infer.DefaultSamples, "tolerance samples per hypothesis")
	seed := fs.Uint64("seed", 1, "random seed of the samples")
	toneSpec := fs.String("tone", "", "a test tone is injected at the input, FREQ:LEVEL (e.g. 1kHz:100mV): tone readings (V2.5 tone: 1.2V) then count as evidence")
	acMeterSpec := fs.String("ac-meter", "", "the AC meter for tone and ripple readings: true-rms or average (average-responding; reads a sine correctly, sawtooth ripple low); default true-rms")
	acBandwidth := fs.String("ac-bandwidth", "", "the AC meter's specified frequency range's top, e.g. 400Hz for a cheap meter (above it the meter reads low); default flat")
	fs.Usage = func() {
		fmt.Fprintln(stderr, `Usage: pinwalk diagnose [options] DESIGN --readings FILE

Ranks the likely faults from the readings taken so far: every single-part
fault the model knows is solved with the parts' tolerances, and each is
weighed by how well it predicts the readings (Bayes' rule). Prints the
suspects with why, suspects no reading can tell apart, and the reading
that would narrow them down most for the effort.`)
		fs.PrintDefaults()
	}
	pos, code, done := parseInterspersed(fs, args)
	if done {
		return code
	}
	if len(pos) > 1 {
		fmt.Fprintf(stderr, "pinwalk: diagnose takes one design, found %d: %s\n", len(pos), strings.Join(pos, " "))
		return exitUsage
	}
	if *readings == "" {
		fmt.Fprintln(stderr, "pinwalk: diagnose: --readings FILE is required (a YAML mapping of point id to reading, like `V2.3: 245V`)")
		return exitUsage
	}
	if *samples < 10 || *samples > 5000 {
		fmt.Fprintf(stderr, "pinwalk: --samples %d: expected 10 to 5000\n", *samples)
		return exitUsage
	}
	designArg := ""
	if len(pos) == 1 {
		designArg = pos[0]
	}
	d, probs, err := loadDesign(designArg, stderr)
	if err != nil {
		for _, p := range probs.Errors() {
			fmt.Fprintln(stderr, p.Error())
		}
		fmt.Fprintf(stderr, "pinwalk: %v\n", err)
		return exitProblems
	}
	data, err := os.ReadFile(*readings)
	if err != nil {
		fmt.Fprintf(stderr, "pinwalk: %v\n", err)
		return exitProblems
	}
	rf, errs := parseReadingsFile(*readings, data)
	if len(errs) > 0 {
		for _, e := range errs {
			fmt.Fprintln(stderr, e)
		}
		return exitProblems
	}
	spec := rf.meter
	if *meterSpec != "" {
		spec = *meterSpec
	}
	meter, err := bands.ParseMeter(spec)
	if err != nil {
		fmt.Fprintf(stderr, "pinwalk: meter: %v\n", err)
		return exitUsage
	}
	var acm infer.ACMeter
	if *acMeterSpec != "" {
		if acm.Response, err = infer.ParseResponse(*acMeterSpec); err != nil {
			fmt.Fprintf(stderr, "pinwalk: --ac-meter: %v\n", err)
			return exitUsage
		}
	}
	if *acBandwidth != "" {
		bw, err := units.Parse(*acBandwidth, units.Hertz)
		if err != nil || bw < 10 || bw > 10e6 {
			fmt.Fprintf(stderr, "pinwalk: --ac-bandwidth %q: expected a frequency like 400Hz or 20kHz\n", *acBandwidth)
			return exitUsage
		}
		acm.BandwidthHz = bw
	}
	var tone *ac.Options
	if *toneSpec != "" {
		t, err := parseTone(*toneSpec)
		if err != nil {
			fmt.Fprintf(stderr, "pinwalk: --tone: %v\n", err)
			return exitUsage
		}
		tone = &t
	}
	e, err := infer.New(d, infer.Options{Samples: *samples, Seed: *seed, Meter: meter, Symptoms: symptoms, Cond: rf.cond, Tone: tone, ACMeter: acm})
	if err != nil {
		fmt.Fprintf(stderr, "pinwalk: %v\n", err)
		if strings.Contains(err.Error(), "symptom") {
			return exitUsage
		}
		return exitFailure
	}
	keys := map[string]bool{}
	var ids []string
	for _, k := range e.Keys() {
		keys[k] = true
		ids = append(ids, k)
		if i := strings.LastIndexByte(k, ' '); i > 0 {
			ids = append(ids, k[:i])
		}
	}
	var obs []infer.Observation
	bad := false
	firstLine := map[string]int{}
	for _, r := range rf.readings {
		o, err := resolveReading(e, keys, ids, *readings, r)
		if err != nil {
			fmt.Fprintln(stderr, err)
			bad = true
			continue
		}
		if l, dup := firstLine[o.Key]; dup {
			fmt.Fprintf(stderr, "%s:%d: %s: the same point as line %d (%s): expected one reading per point\n", *readings, r.line, strings.TrimSpace(r.id), l, o.Key)
			bad = true
			continue
		}
		firstLine[o.Key] = r.line
		obs = append(obs, o)
	}
	if bad {
		return exitProblems
	}
	rk := e.Rank(obs, nil)
	if *asJSON {
		out := jsonDiagnosis{NotModelled: notModelledJSON(), Design: d.File, Readings: len(obs), Symptoms: append([]string{}, symptoms...), Groups: rk.Groups,
			GroupNotes: append([]string{}, rk.GroupNotes...), Fits: rk.Fits, FitNote: rk.FitNote, Unsolved: rk.Unsolved, ACMeter: acMeterNote(acm, tone)}
		for _, s := range rk.Suspects {
			out.Suspects = append(out.Suspects, toJSONSuspect(s))
		}
		for _, s := range rk.Pairs {
			out.Pairs = append(out.Pairs, toJSONSuspect(s))
		}
		if n := rk.Next; n != nil {
			out.Next = &jsonProbe{ID: n.Key, Label: n.Label, GainBits: n.GainBits, Cost: n.Cost, Live: n.Live, Setup: n.Setup, Reason: n.Reason}
		}
		enc := json.NewEncoder(stdout)
		enc.SetIndent("", "  ")
		if err := enc.Encode(out); err != nil {
			return exitFailure
		}
		return exitOK
	}
	printDiagnosis(stdout, d, e, rk, len(obs), symptoms)
	if note := acMeterNote(acm, tone); note != "" {
		fmt.Fprintf(stdout, "AC readings: %s.\n", note)
	}
	return exitOK
}

// bar draws a probability as a bar of plain characters: "#####....." .
func bar(p float64, width int) string {
	n := int(math.Round(p * float64(width)))
	n = max(0, min(width, n))
	return strings.Repeat("#", n) + strings.Repeat(".", width-n)
}

func printDiagnosis(w io.Writer, d *design.Design, e *infer.Engine, rk *infer.Ranking, n int, symptoms []string) {
	fmt.Fprintf(w, "Diagnosis: %s\n", d.Title)
	fmt.Fprintf(w, "%d reading(s)", n)
	if len(symptoms) > 0 {
		fmt.Fprintf(w, "; symptoms: %s", strings.Join(symptoms, ", "))
	}
	fmt.Fprintln(w)
	fmt.Fprintln(w)
	fmt.Fprintln(w, "Suspects (most likely first):")
	for i, s := range rk.Suspects {
		fmt.Fprintf(w, "%3d. [%s] %5.1f %%  %-14s %s", i+1, bar(s.Probability, 20), 100*s.Probability, s.Fault, s.Label)
		if len(rk.Groups[s.Group]) > 1 {
			fmt.Fprintf(w, "  (group %d)", s.Group+1)
		}
		fmt.Fprintln(w)
		for _, y := range s.Why {
			fmt.Fprintf(w, "        - %s\n", y)
		}
	}
	if len(rk.GroupNotes) > 0 {
		fmt.Fprintln(w)
		fmt.Fprintln(w, "Cannot be told apart:")
		for _, g := range rk.GroupNotes {
			fmt.Fprintf(w, "  - %s\n", g)
		}
	}
	if !rk.Fits {
		fmt.Fprintln(w)
		fmt.Fprintf(w, "NOTHING FITS WELL: %s\n", rk.FitNote)
		for _, p := range rk.Pairs {
			fmt.Fprintf(w, "  [%s] %5.1f %%  %s\n", bar(p.Probability, 20), 100*p.Probability, p.Label)
		}
	}
	for _, u := range rk.Unsolved {
		fmt.Fprintf(w, "note: hypothesis not solved (left out): %s\n", u)
	}
	fmt.Fprintln(w)
	if nx := rk.Next; nx != nil {
		fmt.Fprintf(w, "Next measurement: %s: %s\n", nx.Label, nx.Reason)
		fmt.Fprintf(w, "  Setup: %s\n", nx.Setup)
		if nx.Live {
			fmt.Fprintln(w, "  CAUTION: this reading is taken with the amplifier powered. The voltages are lethal; one hand, clip the")
			fmt.Fprintln(w, "  black lead first, use a meter and probes rated above the highest voltage in the amplifier.")
		}
	} else {
		fmt.Fprintln(w, "No further reading left to suggest.")
	}
	fmt.Fprintln(w)
	fmt.Fprintln(w, "Not in this ranking (faults pinwalk does not model; check them by other means):")
	for _, u := range faults.NotModelled() {
		fmt.Fprintf(w, "  - %s: %s\n", u.Fault, u.Why)
	}
}
