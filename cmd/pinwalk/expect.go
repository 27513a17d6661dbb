package main

import (
	"encoding/json"
	"flag"
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"

	"pinwalk/expect/amp"
	"pinwalk/expect/bands"
	"pinwalk/expect/design"
	"pinwalk/expect/faults"
	"pinwalk/expect/units"
)

// jsonPoint is one entry of the `points` array: a stable contract for
// scripts.
type jsonPoint struct {
	ID       string  `json:"id"`
	Quantity string  `json:"quantity"`
	Unit     string  `json:"unit"`
	Nominal  float64 `json:"nominal"`
	Low      float64 `json:"low"`
	High     float64 `json:"high"`
	Label    string  `json:"label"`
	Net      string  `json:"net,omitempty"`
	// The reading band's meter function ("DC volts", "AC volts (true
	// rms)"), range and resolution, whether the nominal is below one
	// count, the peak-to-peak band of a ripple reading, and why the band
	// is as wide as it is.
	Function        string   `json:"function,omitempty"`
	Range           float64  `json:"range,omitempty"`
	Resolution      float64  `json:"resolution,omitempty"`
	BelowResolution bool     `json:"below_resolution,omitempty"`
	PP              *jsonPP  `json:"peak_to_peak,omitempty"`
	Why             []string `json:"why,omitempty"`
}

// jsonPP is a ripple reading's peak-to-peak band (on a scope).
type jsonPP struct {
	Nominal float64 `json:"nominal"`
	Low     float64 `json:"low"`
	High    float64 `json:"high"`
}

type jsonSection struct {
	ID          string  `json:"id"`
	Type        string  `json:"type"`
	PlateVolts  float64 `json:"plate_volts"`
	ScreenVolts float64 `json:"screen_volts,omitempty"`
	GridVolts   float64 `json:"grid_volts"`
	CathodeV    float64 `json:"cathode_volts"`
	Ia          float64 `json:"plate_amps"`
	Ig2         float64 `json:"screen_amps,omitempty"`
	Ik          float64 `json:"cathode_amps"`
	Pa          float64 `json:"plate_watts"`
	PaPct       float64 `json:"plate_watts_pct"`
	Pg2         float64 `json:"screen_watts,omitempty"`
	Pg2Pct      float64 `json:"screen_watts_pct,omitempty"`
}

type jsonResistor struct {
	Ref     string  `json:"ref"`
	Watts   float64 `json:"watts"`
	Rated   float64 `json:"rated_watts"`
	Pct     float64 `json:"pct"`
	Assumed bool    `json:"rating_assumed,omitempty"`
}

type jsonNet struct {
	Net      string  `json:"net"`
	Volts    float64 `json:"dc_volts"`
	Ripple   float64 `json:"ripple_volts"`
	LoadAmps float64 `json:"load_amps"`
	ColdPeak float64 `json:"cold_peak_volts"`
}

// jsonLoading is a point whose reading the meter visibly pulls.
type jsonLoading struct {
	ID        string  `json:"id"`
	Quantity  string  `json:"quantity"`
	Net       string  `json:"net"`
	Nominal   float64 `json:"nominal"`
	Loaded    float64 `json:"through_meter"`
	ChangePct float64 `json:"change_pct"`
}

type jsonReport struct {
	Design struct {
		File  string `json:"file"`
		Title string `json:"title"`
		Hash  string `json:"sha256"`
	} `json:"design"`
	Conditions struct {
		Mains      float64  `json:"mains_volts"`
		MainsFixed bool     `json:"mains_fixed"`
		Variac     float64  `json:"variac"`
		Faults     []string `json:"faults"`
	} `json:"conditions"`
	// Monte Carlo: samples asked, failed (did not converge), the seed, and
	// up to a few distinct failure messages.
	Samples    int      `json:"samples"`
	Failed     int      `json:"failed"`
	FailErrors []string `json:"fail_errors,omitempty"`
	Seed       uint64   `json:"seed"`
	Meter      string   `json:"meter"`
	// MeterAccuracy: the meter's accuracy on DC volts and its counts.
	MeterAccuracy string         `json:"meter_accuracy"`
	MeterOhms     float64        `json:"meter_ohms"`
	MeterLoading  []jsonLoading  `json:"meter_loading"`
	Points        []jsonPoint    `json:"points"`
	Sections      []jsonSection  `json:"sections"`
	Resistors     []jsonResistor `json:"resistors"`
	Supply        []jsonNet      `json:"supply,omitempty"`
	Windings      []jsonWinding  `json:"heater_windings"`
	Findings      []string       `json:"findings"`
	// ToneClips: the stages that cannot pass the test tone (--tone).
	ToneClips []string `json:"tone_clips,omitempty"`
}

// faultFlags collects repeated --fault REF:MODE options.
type faultFlags []faults.Fault

func (f *faultFlags) String() string {
	var parts []string
	for _, x := range *f {
		parts = append(parts, x.String())
	}
	return strings.Join(parts, ",")
}

func (f *faultFlags) Set(s string) error {
	x, err := faults.Parse(s)
	if err != nil {
		return err
	}
	*f = append(*f, x)
	return nil
}

func runExpect(args []string, stdout, stderr io.Writer) int {
	fs := flag.NewFlagSet("expect", flag.ContinueOnError)
	fs.SetOutput(stderr)
	asJSON := fs.Bool("json", false, "print JSON with a stable shape (top-level points array)")
	mains := fs.String("mains", "", "mains volts at the wall, as measured (default: the design's, sampled within its tolerance)")
	variac := fs.String("variac", "", "variac setting in percent of the mains, e.g. 25 (default 100); \"steps\" prints 25/50/75/100 %")
	meterSpec := fs.String("meter", "10M", "the voltmeter: a digital meter's input resistance (10M) or an analogue meter's sensitivity and range (20k/V:500V)")
	accSpec := fs.String("meter-accuracy", "", "the digital meter's accuracy, % of reading + digits: 0.5%+2 for every function, or per function dcv=0.5%+2,acv=1%+3,dca=1%+3,aca=1.5%+3,ohm=0.8%+3 (default: those)")
	counts := fs.Int("meter-counts", 6000, "the digital meter's display counts (2000, 4000, 6000 …): sets its ranges and resolution")
	cold := fs.Bool("cold", false, "cold checks instead: resistances to measure with the amplifier off and discharged")
	samples := fs.Int("samples", bands.DefaultSamples, "Monte Carlo samples for the tolerance bands (0: nominal only)")
	seed := fs.Uint64("seed", 1, "random seed of the samples (the same seed gives the same bands)")
	var flts faultFlags
	tone := fs.String("tone", "", "also the AC level of a test tone at every grid, plate and cathode and the speaker, FREQ:LEVEL at the input grid (e.g. 1kHz:100mV)")
	fs.Var(&flts, "fault", "assume a fault, REF:MODE (e.g. R7:open, V2:weak); repeatable")
	fs.Usage = func() {
		fmt.Fprintln(stderr, `Usage: pinwalk expect [options] DESIGN

Solves the whole amplifier (HT supply, every valve, every net) and prints
what each socket pin should read: DC volts to chassis and the current in
each electrode, heater volts and current, the supply's filter nets with
ripple, valve and resistor dissipation. Each reading has a band: the
2.5th to 97.5th percentile over Monte Carlo samples of every part within
its tolerance, the transformer, the mains and valve-to-valve spread.
Readings that the chosen meter's input resistance visibly pulls are listed
with what the meter will show.`)
		fs.PrintDefaults()
	}
	// Flags may come before or after the design (Go's flag package stops
	// at the first argument that is not a flag: parse the rest again).
	pos, code, done := parseInterspersed(fs, args)
	if done {
		return code
	}
	if len(pos) > 1 {
		fmt.Fprintf(stderr, "pinwalk: expect takes one design, found %d: %s\n", len(pos), strings.Join(pos, " "))
		return exitUsage
	}
	designArg := ""
	if len(pos) == 1 {
		designArg = pos[0]
	}
	if *samples < 0 || *samples > 1000000 {
		fmt.Fprintf(stderr, "pinwalk: --samples %d: expected 0 to 1000000\n", *samples)
		return exitUsage
	}
	meter, err := bands.ParseMeter(*meterSpec)
	if err != nil {
		fmt.Fprintf(stderr, "pinwalk: --meter: %v\n", err)
		return exitUsage
	}
	if meter, err = bands.ParseAccuracy(meter, *accSpec); err != nil {
		fmt.Fprintf(stderr, "pinwalk: --meter-accuracy: %v\n", err)
		return exitUsage
	}
	if *counts < 1000 || *counts > 100000 {
		fmt.Fprintf(stderr, "pinwalk: --meter-counts %d: expected a display's counts, like 2000, 4000 or 6000\n", *counts)
		return exitUsage
	}
	meter.Counts = *counts
	cond := amp.Conditions{}
	fixed := false
	if *mains != "" {
		v, err := units.Parse(*mains, units.Volts)
		if err != nil || v < 50 || v > 300 {
			fmt.Fprintf(stderr, "pinwalk: --mains %q: expected the mains volts at the wall, like 230 or 240V\n", *mains)
			return exitUsage
		}
		cond.MainsVolts, fixed = v, true
	}
	steps := false
	if *variac != "" {
		if *variac == "steps" {
			steps = true
		} else {
			pct, err := strconv.ParseFloat(strings.TrimSuffix(strings.TrimSpace(*variac), "%"), 64)
			if err != nil || !(pct > 0 && pct <= 130) {
				fmt.Fprintf(stderr, "pinwalk: --variac %q: expected a setting in percent of the mains, above 0 and at most 130, like 25 or 50%%, or \"steps\"\n", *variac)
				return exitUsage
			}
			cond.Variac = pct / 100
		}
	}
	d, probs, err := loadDesign(designArg, stderr)
	if err != nil {
		for _, p := range probs.Errors() {
			fmt.Fprintln(stderr, p.Error())
		}
		fmt.Fprintf(stderr, "pinwalk: %v\n", err)
		return exitProblems
	}
	if *cold {
		return runColdExpect(d, meter, flts, *asJSON, stdout, stderr)
	}
	m, err := amp.Build(d)
	if err != nil {
		fmt.Fprintf(stderr, "pinwalk: %v\n", err)
		return exitProblems
	}
	for _, f := range flts {
		if err := faults.Check(m, f); err != nil {
			fmt.Fprintf(stderr, "pinwalk: --fault: %v\n", err)
			return exitUsage
		}
	}
	opt := bands.Options{Samples: *samples, Seed: *seed, Cond: cond, FixedMains: fixed, Meter: meter,
		Progress: progressPrinter(stderr, m.NumNodes())}
	if len(flts) > 0 {
		opt.Values = func(m *amp.Model, v *amp.Values) error {
			for _, f := range flts {
				if err := faults.Apply(m, v, f); err != nil {
					return err
				}
			}
			return nil
		}
	}
	if steps {
		return runVariacSteps(d, opt, *asJSON, stdout, stderr)
	}
	var toneClips []string
	if *tone != "" {
		topt, err := parseTone(*tone)
		if err != nil {
			fmt.Fprintf(stderr, "pinwalk: --tone: %v\n", err)
			return exitUsage
		}
		extra, clips, err := toneExtra(m, opt, topt)
		toneClips = clips
		if err != nil {
			fmt.Fprintf(stderr, "pinwalk: --tone: %v\n", err)
			return exitFailure
		}
		opt.Extra = extra
	}
	set, err := bands.Run(d, opt)
	if err != nil {
		fmt.Fprintf(stderr, "pinwalk: %v\n", err)
		return exitFailure
	}
	loading, err := set.Loading(meter)
	if err != nil {
		fmt.Fprintf(stderr, "pinwalk: meter loading: %v\n", err)
		return exitFailure
	}
	s := amp.NewSolver(m)
	var coldOP amp.OP
	var coldPtr *amp.OP
	if s.ColdStart(d.Mains.Volts*(1+d.Mains.Tol.Hi), &coldOP) == nil {
		coldPtr = &coldOP
	}
	op := set.NominalOP
	rep := buildReport(d, m, op, coldPtr, cond)
	fillBands(rep, set, loading, meter, opt, flts)
	addTonePoints(rep, set)
	rep.ToneClips = toneClips
	if *asJSON {
		enc := json.NewEncoder(stdout)
		enc.SetIndent("", "  ")
		if err := enc.Encode(rep); err != nil {
			fmt.Fprintf(stderr, "pinwalk: %v\n", err)
			return exitFailure
		}
		return exitOK
	}
	printReport(stdout, d, m, op, rep)
	return exitOK
}

// fillBands puts the reading bands (bands.Set.Expect: the Monte Carlo
// spread, the meter's loading, accuracy and resolution, the model error),
// the sample counts and the meter loading notes into the report.
func fillBands(rep *jsonReport, set *bands.Set, loading []bands.Loading, meter bands.Meter, opt bands.Options, flts faultFlags) {
	rep.Samples, rep.Failed, rep.FailErrors, rep.Seed = set.Samples, set.Failed, set.FailErrs, opt.Seed
	rep.Conditions.MainsFixed = opt.FixedMains
	rep.Conditions.Faults = []string{}
	for _, f := range flts {
		rep.Conditions.Faults = append(rep.Conditions.Faults, f.String())
	}
	for k := range rep.Points {
		p := &rep.Points[k]
		i, ok := set.Index(p.ID + " " + p.Quantity)
		if !ok {
			continue
		}
		b, err := set.Expect(set.Points[i].Key(), meter)
		if err != nil {
			continue
		}
		fillPoint(p, b)
	}
	rep.Meter, rep.MeterOhms = meter.Name, meter.Ohms()
	rep.MeterAccuracy = fmt.Sprintf("DC volts %s, %d counts", meter.SpecFor(amp.DCVolts), meter.Counts)
	rep.MeterLoading = []jsonLoading{}
	for _, l := range loading {
		if !l.Significant {
			continue
		}
		id, q, _ := strings.Cut(l.Key, " ")
		rep.MeterLoading = append(rep.MeterLoading, jsonLoading{ID: id, Quantity: q, Net: l.Net,
			Nominal: round(l.Unloaded), Loaded: round(l.Loaded), ChangePct: round(100 * l.Change)})
	}
}

// fillPoint copies a reading band into a report point.
func fillPoint(p *jsonPoint, b bands.Band) {
	p.Nominal, p.Low, p.High = round(b.Nominal), round(b.Low), round(b.High)
	if b.BelowResolution {
		p.Nominal = 0
	}
	p.Function, p.Range, p.Resolution, p.BelowResolution, p.Why = b.Function, round(b.Range.Full), b.Range.Res, b.BelowResolution, b.Why
	if b.PP != nil {
		p.PP = &jsonPP{Nominal: round(b.PP.Nominal), Low: round(b.PP.Low), High: round(b.PP.High)}
	}
}

// formatBand prints a report point's band as the meter shows it.
func formatBand(p jsonPoint) string {
	return bandOfPoint(p).Format()
}

func bandOfPoint(p jsonPoint) bands.Band {
	return bands.Band{Nominal: p.Nominal, Low: p.Low, High: p.High, Quantity: p.Quantity,
		Range: bands.Range{Full: p.Range, Res: p.Resolution}, BelowResolution: p.BelowResolution}
}

func buildReport(d *design.Design, m *amp.Model, op, cold *amp.OP, cond amp.Conditions) *jsonReport {
	rep := &jsonReport{}
	rep.Design.File, rep.Design.Title, rep.Design.Hash = d.File, d.Title, d.Hash
	rep.Conditions.Mains = d.Mains.Volts
	if cond.MainsVolts > 0 {
		rep.Conditions.Mains = cond.MainsVolts
	}
	rep.Conditions.Variac = 1
	if cond.Variac > 0 {
		rep.Conditions.Variac = cond.Variac
	}
	for _, pd := range m.Points() {
		v := m.Value(op, pd)
		if math.IsNaN(v) {
			continue
		}
		rep.Points = append(rep.Points, jsonPoint{ID: pd.ID, Quantity: pd.Quantity, Unit: amp.UnitOf(pd.Quantity),
			Nominal: round(v), Low: round(v), High: round(v), Label: pd.Label, Net: pd.Net})
	}
	for i, sec := range m.Sections {
		so := op.Sections[i]
		js := jsonSection{ID: sec.Name(), Type: sec.Type.Name, PlateVolts: round(so.Va), GridVolts: round(so.Vg), CathodeV: round(so.Vk),
			Ia: round(so.Ia), Ik: round(so.Ik), Pa: round(so.Pa)}
		if sec.Type.Limits.PlateWatts > 0 {
			js.PaPct = round(100 * so.Pa / sec.Type.Limits.PlateWatts)
		}
		if sec.Pentode {
			js.ScreenVolts, js.Ig2, js.Pg2 = round(so.Vg2), round(so.Ig2), round(so.Pg2)
			if sec.Type.Limits.ScreenWatts > 0 {
				js.Pg2Pct = round(100 * so.Pg2 / sec.Type.Limits.ScreenWatts)
			}
		}
		rep.Sections = append(rep.Sections, js)
	}
	for _, r := range m.Resistors(op) {
		rep.Resistors = append(rep.Resistors, jsonResistor{Ref: r.Ref, Watts: round(r.Watts), Rated: r.RatedWatts,
			Pct: round(100 * r.Watts / r.RatedWatts), Assumed: r.RatingAssumed})
	}
	if op.Supply != nil {
		for i, n := range op.Supply.Nets {
			jn := jsonNet{Net: n.Net, Volts: round(n.Vdc), Ripple: round(n.RippleRms), LoadAmps: round(n.LoadAmps)}
			if cold != nil && cold.Supply != nil {
				jn.ColdPeak = round(cold.Supply.Nets[i].Vdc)
			}
			rep.Supply = append(rep.Supply, jn)
		}
	}
	for _, hw := range op.Windings {
		refs := hw.Refs
		if refs == nil {
			refs = []string{}
		}
		rep.Windings = append(rep.Windings, jsonWinding{Name: hw.Name, Volts: round(hw.Volts), Amps: round(hw.Amps),
			RatedAmps: hw.RatedAmps, Refs: refs})
	}
	for _, f := range m.RatingChecks(op, cold) {
		rep.Findings = append(rep.Findings, fmt.Sprintf("%s: %s", f.Severity, f.Msg))
	}
	if rep.Findings == nil {
		rep.Findings = []string{}
	}
	return rep
}

// round keeps 6 significant figures so JSON output is stable across
// platforms' last-bit differences.
func round(v float64) float64 {
	if v == 0 || math.IsNaN(v) || math.IsInf(v, 0) {
		return v
	}
	e := math.Floor(math.Log10(math.Abs(v)))
	f := math.Pow(10, 5-e)
	return math.Round(v*f) / f
}

func printReport(w io.Writer, d *design.Design, m *amp.Model, op *amp.OP, rep *jsonReport) {
	fmt.Fprintf(w, "%s\n%s\n", d.Title, strings.Repeat("=", len([]rune(d.Title))))
	fmt.Fprintln(w, "DANGER: these voltages are lethal and filter capacitors hold them after power-off.")
	fmt.Fprintln(w, "Measure one-handed with insulated, shrouded probes and a meter rated above the highest")
	fmt.Fprintln(w, "voltage here; follow local codes and licensed practice.")
	hotChassisBanner(w, d)
	fmt.Fprintln(w)
	mainsNote := "sampled within the design's tolerance"
	if rep.Conditions.MainsFixed {
		mainsNote = "as measured"
	}
	fmt.Fprintf(w, "Mains %s (%s), variac %.0f%%, design file %s\n", units.Format(rep.Conditions.Mains, units.Volts), mainsNote,
		100*rep.Conditions.Variac, d.File)
	if len(rep.Conditions.Faults) > 0 {
		fmt.Fprintf(w, "Assuming the fault(s): %s\n", strings.Join(rep.Conditions.Faults, ", "))
	}
	if rep.Samples > 0 {
		fmt.Fprintf(w, "Bands: 95%% of %d Monte Carlo samples (parts within tolerance, transformer, mains, valve spread; seed %d),\n",
			rep.Samples-rep.Failed, rep.Seed)
	} else {
		fmt.Fprintln(w, "Nominal values only (--samples 0): bands without the parts' tolerances,")
	}
	fmt.Fprintf(w, "widened by the model's own error and the meter's (%s) on the range each reading uses;\n", rep.MeterAccuracy)
	fmt.Fprintln(w, "values below the meter's resolution show as 0. `--json` lists why for every band.")
	if rep.Failed > 0 {
		fmt.Fprintf(w, "WARNING: %d of %d samples did not converge and are left out of the bands:\n", rep.Failed, rep.Samples)
		for _, e := range rep.FailErrors {
			fmt.Fprintf(w, "  %s\n", e)
		}
	}
	fmt.Fprintln(w)
	byKey := map[string]jsonPoint{}
	for _, p := range rep.Points {
		byKey[p.ID+" "+p.Quantity] = p
	}
	bandOf := func(id, q string) string {
		p, ok := byKey[id+" "+q]
		if !ok {
			return ""
		}
		return formatBand(p)
	}
	nominalOf := func(pd amp.PointDef, v float64) string {
		p, ok := byKey[pd.Key()]
		if !ok {
			return amp.FormatValue(v, pd.Quantity)
		}
		return bandOfPoint(p).FormatNominal()
	}
	points := m.Points()
	for _, vp := range d.Valves() {
		fmt.Fprintf(w, "%s  %s (%s base, pins seen from below)\n", vp.Ref, vp.Valve.Type.Name, vp.Valve.Type.Base)
		for _, pd := range amp.PinsOfValve(points, vp.Ref) {
			v := m.Value(op, pd)
			line := fmt.Sprintf("  %-38s %-21s %10s   %s", pd.Label, bands.Function(pd.Quantity), nominalOf(pd, v), bandOf(pd.ID, pd.Quantity))
			fmt.Fprintln(w, strings.TrimRight(line, " "))
		}
		fmt.Fprintln(w)
	}
	if op.Supply != nil {
		fmt.Fprintln(w, "HT supply (from the rectifier outwards)")
		for _, n := range rep.Supply {
			band := bandOf(n.Net, amp.DCVolts)
			if band != "" {
				band = " (" + band + ")"
			}
			fmt.Fprintf(w, "  %-6s DC volts %8s%s  load %8s  switch-on peak %8s\n", n.Net,
				nominalOf(amp.PointDef{ID: n.Net, Quantity: amp.DCVolts}, n.Volts), band,
				units.Format(n.LoadAmps, units.Amps), units.Format(n.ColdPeak, units.Volts))
			if p, ok := byKey[n.Net+" "+amp.RippleVolts]; ok {
				line := fmt.Sprintf("         ripple, %s: %s (%s)", p.Function, bandOfPoint(p).FormatNominal(), formatBand(p))
				if p.PP != nil {
					line += fmt.Sprintf(", %s – %s peak to peak on a scope", units.FormatMeasured(p.PP.Low, units.Volts, p.Resolution),
						units.FormatMeasured(p.PP.High, units.Volts, p.Resolution))
				}
				fmt.Fprintln(w, line)
			}
		}
		fmt.Fprintf(w, "  rectifier peak current %s per path\n\n", units.Format(op.Supply.PeakRectAmps, units.Amps))
	}
	fmt.Fprintln(w, "Other nets")
	for _, pd := range points {
		if pd.Valve != "" || pd.Quantity != amp.DCVolts || isSupplyNet(rep, pd.Net) || strings.HasPrefix(pd.Net, "~") {
			continue
		}
		line := fmt.Sprintf("  %-8s %10s   %s", pd.Net, nominalOf(pd, m.Value(op, pd)), bandOf(pd.ID, pd.Quantity))
		fmt.Fprintln(w, strings.TrimRight(line, " "))
	}
	fmt.Fprintln(w)
	fmt.Fprintf(w, "Meter loading (%s, %s input)\n", rep.Meter, units.Format(rep.MeterOhms, units.Ohms))
	if len(rep.MeterLoading) == 0 {
		fmt.Fprintln(w, "  no reading moves by more than 1 % under the meter")
	} else {
		fmt.Fprintln(w, "  these read differently through the meter (high-impedance nodes):")
		// One line per net, naming the socket pins on it.
		pins := map[string][]string{}
		var order []string
		for _, l := range rep.MeterLoading {
			if _, ok := pins[l.Net]; !ok {
				order = append(order, l.Net)
				pins[l.Net] = nil
			}
			if l.ID != l.Net {
				pins[l.Net] = append(pins[l.Net], l.ID)
			}
		}
		for _, net := range order {
			for _, l := range rep.MeterLoading {
				if l.Net != net {
					continue
				}
				where := "net " + net
				if len(pins[net]) > 0 {
					where += " (" + strings.Join(pins[net], ", ") + ")"
				}
				fmt.Fprintf(w, "  %-24s expected %10s, the meter shows %10s (%+.1f%%)\n", where,
					amp.FormatValue(l.Nominal, l.Quantity), amp.FormatValue(l.Loaded, l.Quantity), l.ChangePct)
				break
			}
		}
	}
	fmt.Fprintln(w)
	printTone(w, rep)
	fmt.Fprintln(w, "Valve dissipation")
	for _, s := range rep.Sections {
		line := fmt.Sprintf("  %-5s %-7s plate %8s (%3.0f%%)", s.ID, s.Type, units.Format(s.Pa, units.Watts), s.PaPct)
		if s.Pg2 != 0 {
			line += fmt.Sprintf("  screen %8s (%3.0f%%)", units.Format(s.Pg2, units.Watts), s.Pg2Pct)
		}
		fmt.Fprintln(w, line)
	}
	fmt.Fprintln(w)
	fmt.Fprintln(w, "Heater windings")
	for _, hw := range op.Windings {
		fmt.Fprintf(w, "  %-8s %8s  %8s of %8s rated  (%s)\n", hw.Name, units.Format(hw.Volts, units.Volts),
			units.Format(hw.Amps, units.Amps), units.Format(hw.RatedAmps, units.Amps), strings.Join(hw.Refs, " "))
	}
	fmt.Fprintln(w)
	fmt.Fprintln(w, "Resistor dissipation over 25% of rating")
	for _, r := range rep.Resistors {
		if r.Pct < 25 {
			continue
		}
		a := ""
		if r.Assumed {
			a = " (rating assumed)"
		}
		fmt.Fprintf(w, "  %-14s %8s of %6s  %3.0f%%%s\n", r.Ref, units.Format(r.Watts, units.Watts), units.Format(r.Rated, units.Watts), r.Pct, a)
	}
	if len(rep.Findings) > 0 {
		fmt.Fprintln(w)
		fmt.Fprintln(w, "Rating checks")
		for _, f := range rep.Findings {
			fmt.Fprintf(w, "  %s\n", f)
		}
	}
}

func isSupplyNet(rep *jsonReport, net string) bool {
	for _, n := range rep.Supply {
		if n.Net == net {
			return true
		}
	}
	return false
}

func qtyWord(q string) string {
	switch q {
	case amp.DCVolts:
		return "DC volts"
	case amp.DCAmps:
		return "DC current"
	case amp.ACVolts:
		return "AC volts"
	case amp.ACAmps:
		return "AC current"
	case amp.RippleVolts:
		return "ripple"
	}
	return q
}

// jsonWinding is one heater winding: loaded rms volts and amps, the
// winding's rated current (0 when the design does not give it) and the
// valves it feeds.
type jsonWinding struct {
	Name      string   `json:"name"`
	Volts     float64  `json:"volts"`
	Amps      float64  `json:"amps"`
	RatedAmps float64  `json:"rated_amps"`
	Refs      []string `json:"valves"`
}

// jsonStep is one variac setting of `expect --variac steps`.
type jsonStep struct {
	Variac  float64     `json:"variac"`
	Samples int         `json:"samples"`
	Failed  int         `json:"failed"`
	Points  []jsonPoint `json:"points"`
	Cold    []jsonNet   `json:"cold_peak"`
}

// runVariacSteps prints, at 25, 50, 75 and 100 % variac, every socket
// pin's DC volts in one table (a column per setting, nominal over its
// reading band), then the supply nets and every plate and cathode current
// with bands, and each filter net's switch-on peak at that setting
// (nominal and at high mains). Bands are bands.Set.Expect's, read with
// opt.Meter.
func runVariacSteps(d *design.Design, opt bands.Options, asJSON bool, stdout, stderr io.Writer) int {
	steps, err := bands.VariacSteps(d, opt, bands.VariacSettings)
	if err != nil {
		fmt.Fprintf(stderr, "pinwalk: %v\n", err)
		return exitFailure
	}
	// The grid-bias supplies' outputs scale with the variac too: they are
	// listed with the HT nets.
	bias := map[string]bool{}
	if m, err := amp.Build(d); err == nil {
		for _, n := range m.BiasNets() {
			bias[n] = true
		}
	}
	var out []jsonStep
	for _, st := range steps {
		js := jsonStep{Variac: st.Variac, Samples: st.Set.Samples, Failed: st.Set.Failed}
		c := opt.Cond
		c.Variac = st.Variac
		peaks, err := bands.ColdPeaks(d, c)
		if err != nil {
			fmt.Fprintf(stderr, "pinwalk: %v\n", err)
			return exitFailure
		}
		for _, p := range peaks {
			js.Cold = append(js.Cold, jsonNet{Net: p.Net, Volts: round(p.Nominal), ColdPeak: round(p.HighMains)})
		}
		for _, pd := range st.Set.Points {
			keep := pd.Valve == "" && pd.Quantity == amp.DCVolts && (isFilterNet(peaks, pd.Net) || bias[pd.Net]) ||
				pd.Valve != "" && pd.Quantity == amp.DCVolts ||
				pd.Quantity == amp.DCAmps && (pd.Electrode == "plate" || pd.Electrode == "cathode")
			if !keep {
				continue
			}
			b, err := st.Set.Expect(pd.Key(), opt.Meter)
			if err != nil {
				continue
			}
			jp := jsonPoint{ID: pd.ID, Quantity: pd.Quantity, Unit: amp.UnitOf(pd.Quantity), Label: pd.Label, Net: pd.Net}
			fillPoint(&jp, b)
			js.Points = append(js.Points, jp)
		}
		out = append(out, js)
	}
	if asJSON {
		enc := json.NewEncoder(stdout)
		enc.SetIndent("", "  ")
		if err := enc.Encode(struct {
			Steps []jsonStep `json:"variac_steps"`
		}{out}); err != nil {
			fmt.Fprintf(stderr, "pinwalk: %v\n", err)
			return exitFailure
		}
		return exitOK
	}
	w := stdout
	fmt.Fprintf(w, "%s: bring-up on a variac\n", d.Title)
	fmt.Fprintln(w, "DANGER: these voltages are lethal and filter capacitors hold them after power-off.")
	fmt.Fprintln(w, "At low settings the heaters run cool, the valves barely conduct and B+ rises towards its")
	fmt.Fprintln(w, "switch-on peak: the figures there are emission-limited estimates, not precise values.")
	hotChassisBanner(w, d)
	for _, js := range out {
		if js.Failed > 0 {
			fmt.Fprintf(w, "WARNING: at %.0f%% variac %d of %d samples did not converge\n", 100*js.Variac, js.Failed, js.Samples)
		}
	}
	printPinSteps(w, out)
	for _, js := range out {
		fmt.Fprintf(w, "\nVariac %.0f%%: supply and currents\n", 100*js.Variac)
		for _, p := range js.Points {
			if p.Quantity == amp.DCVolts && p.ID != p.Net {
				continue // socket pins: in the table above
			}
			fmt.Fprintf(w, "  %-36s %10s   %s\n", p.Label+" "+qtyWord(p.Quantity), bandOfPoint(p).FormatNominal(), formatBand(p))
		}
		for _, c := range js.Cold {
			fmt.Fprintf(w, "  %-36s %10s   at high mains %s\n", "net "+c.Net+" switch-on peak", units.Format(c.Volts, units.Volts),
				units.Format(c.ColdPeak, units.Volts))
		}
	}
	return exitOK
}

// printPinSteps prints every socket pin's DC volts at each variac step:
// one row of nominal values and one of reading bands per pin, a column
// per step, within 100 columns for four steps.
func printPinSteps(w io.Writer, steps []jsonStep) {
	const label, cell = 20, 20
	fmt.Fprintf(w, "\nDC volts at every socket pin (to chassis): nominal, then the 95 %% reading band\n")
	head := fmt.Sprintf("%-*s", label, "pin")
	for _, js := range steps {
		head += fmt.Sprintf("%-*s", cell, fmt.Sprintf("variac %.0f%%", 100*js.Variac))
	}
	fmt.Fprintln(w, strings.TrimRight(head, " "))
	var order []string
	byStep := make([]map[string]jsonPoint, len(steps))
	labels := map[string]string{}
	for k, js := range steps {
		byStep[k] = map[string]jsonPoint{}
		for _, p := range js.Points {
			if p.Quantity != amp.DCVolts || p.ID == p.Net {
				continue
			}
			if _, ok := labels[p.ID]; !ok {
				labels[p.ID] = p.Label
				order = append(order, p.ID)
			}
			byStep[k][p.ID] = p
		}
	}
	for _, id := range order {
		l := labels[id]
		if len([]rune(l)) > label-1 {
			l = string([]rune(l)[:label-1])
		}
		nom := fmt.Sprintf("%-*s", label, l)
		band := strings.Repeat(" ", label)
		for k := range steps {
			p, ok := byStep[k][id]
			n, b := "—", ""
			if ok {
				n, b = bandOfPoint(p).FormatNominal(), formatBand(p)
			}
			nom += fmt.Sprintf("%-*s ", cell-1, n)
			band += fmt.Sprintf("%-*s ", cell-1, b)
		}
		fmt.Fprintln(w, strings.TrimRight(nom, " "))
		fmt.Fprintln(w, strings.TrimRight(band, " "))
	}
}

func isFilterNet(peaks []bands.ColdPeak, net string) bool {
	for _, p := range peaks {
		if p.Net == net {
			return true
		}
	}
	return false
}

// hotChassisBanner warns, under the danger lines, of a chassis that may be
// at mains potential (design.Design.HotChassis), and of the variac that
// does not isolate.
func hotChassisBanner(w io.Writer, d *design.Design) {
	if hot, why := d.HotChassis(); hot {
		fmt.Fprintf(w, "LIVE CHASSIS: the chassis may be at mains potential (%s).\n", why)
		fmt.Fprintln(w, "Feed the set through an isolation transformer; a variac alone is an autotransformer and does NOT isolate.")
		fmt.Fprintln(w, "Every reading here is to that chassis: the black lead is on the mains side of the set.")
	}
}
