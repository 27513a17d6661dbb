package main

import (
	"encoding/json"
	"flag"
	"fmt"
	"io"
	"math"
	"strings"

	"pinwalk/expect/amp"
	"pinwalk/expect/design"
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

type jsonReport struct {
	Design struct {
		File  string `json:"file"`
		Title string `json:"title"`
		Hash  string `json:"sha256"`
	} `json:"design"`
	Conditions struct {
		Mains  float64 `json:"mains_volts"`
		Variac float64 `json:"variac"`
	} `json:"conditions"`
	Points    []jsonPoint     `json:"points"`
	Sections  []jsonSection   `json:"sections"`
	Resistors []jsonResistor  `json:"resistors"`
	Supply    []jsonNet       `json:"supply,omitempty"`
	Windings  []amp.WindingOP `json:"heater_windings"`
	Findings  []string        `json:"findings"`
}

func runExpect(args []string, stdout, stderr io.Writer) int {
	fs := flag.NewFlagSet("expect", flag.ContinueOnError)
	fs.SetOutput(stderr)
	asJSON := fs.Bool("json", false, "print JSON with a stable shape (top-level points array)")
	mains := fs.String("mains", "", "mains volts at the wall (default: the design's)")
	fs.Usage = func() {
		fmt.Fprintln(stderr, `Usage: pinwalk expect [options] DESIGN

Solves the whole amplifier (HT supply, every valve, every net) and prints
what each socket pin should read: DC volts to chassis and the current in
each electrode, heater volts and current, the supply's filter nets with
ripple, valve and resistor dissipation.`)
		fs.PrintDefaults()
	}
	if err := fs.Parse(args); err != nil {
		return exitUsage
	}
	d, probs, err := loadDesign(fs.Arg(0), stderr)
	if err != nil {
		for _, p := range probs.Errors() {
			fmt.Fprintln(stderr, p.Error())
		}
		fmt.Fprintf(stderr, "pinwalk: %v\n", err)
		return exitProblems
	}
	cond := amp.Conditions{}
	if *mains != "" {
		v, err := units.Parse(*mains, units.Volts)
		if err != nil || v < 50 || v > 300 {
			fmt.Fprintf(stderr, "pinwalk: --mains %q: expected the mains volts at the wall, like 230 or 240V\n", *mains)
			return exitUsage
		}
		cond.MainsVolts = v
	}
	m, err := amp.Build(d)
	if err != nil {
		fmt.Fprintf(stderr, "pinwalk: %v\n", err)
		return exitProblems
	}
	s := amp.NewSolver(m)
	var op amp.OP
	if err := s.Solve(cond, m.NominalValues(), false, &op); err != nil {
		fmt.Fprintf(stderr, "pinwalk: %v\n", err)
		return exitFailure
	}
	var cold amp.OP
	var coldOP *amp.OP
	if s.ColdStart(d.Mains.Volts*(1+d.Mains.Tol.Hi), &cold) == nil {
		coldOP = &cold
	}
	rep := buildReport(d, m, &op, coldOP, cond)
	if *asJSON {
		enc := json.NewEncoder(stdout)
		enc.SetIndent("", "  ")
		if err := enc.Encode(rep); err != nil {
			fmt.Fprintf(stderr, "pinwalk: %v\n", err)
			return exitFailure
		}
		return exitOK
	}
	printReport(stdout, d, m, &op, rep)
	return exitOK
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
	rep.Windings = op.Windings
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

func fmtQ(v float64, q string) string {
	switch q {
	case amp.DCVolts, amp.ACVolts, amp.RippleVolts:
		return units.Format(v, units.Volts)
	case amp.DCAmps, amp.ACAmps:
		return units.Format(v, units.Amps)
	}
	return fmt.Sprintf("%.4g", v)
}

func printReport(w io.Writer, d *design.Design, m *amp.Model, op *amp.OP, rep *jsonReport) {
	fmt.Fprintf(w, "%s\n%s\n", d.Title, strings.Repeat("=", len([]rune(d.Title))))
	fmt.Fprintf(w, "Mains %s, design file %s\n\n", units.Format(rep.Conditions.Mains, units.Volts), d.File)
	fmt.Fprintln(w, "DANGER: these voltages are lethal and filter capacitors hold them after power-off.")
	fmt.Fprintln(w, "Measure one-handed with insulated, shrouded probes and a meter rated above the highest")
	fmt.Fprintln(w, "voltage here; follow local codes and licensed practice.")
	fmt.Fprintln(w)
	points := m.Points()
	for _, vp := range d.Valves() {
		fmt.Fprintf(w, "%s  %s (%s base, pins seen from below)\n", vp.Ref, vp.Valve.Type.Name, vp.Valve.Type.Base)
		for _, pd := range amp.PinsOfValve(points, vp.Ref) {
			v := m.Value(op, pd)
			fmt.Fprintf(w, "  %-44s %-12s %12s\n", pd.Label, qtyWord(pd.Quantity), fmtQ(v, pd.Quantity))
		}
		fmt.Fprintln(w)
	}
	if op.Supply != nil {
		fmt.Fprintln(w, "HT supply (from the rectifier outwards)")
		for _, n := range rep.Supply {
			fmt.Fprintf(w, "  %-8s %10s DC  ripple %10s rms  load %9s  switch-on peak %10s\n", n.Net,
				units.Format(n.Volts, units.Volts), units.Format(n.Ripple, units.Volts), units.Format(n.LoadAmps, units.Amps), units.Format(n.ColdPeak, units.Volts))
		}
		fmt.Fprintf(w, "  rectifier peak current %s per path\n\n", units.Format(op.Supply.PeakRectAmps, units.Amps))
	}
	fmt.Fprintln(w, "Other nets")
	for _, pd := range points {
		if pd.Valve != "" || pd.Quantity != amp.DCVolts || isSupplyNet(rep, pd.Net) || strings.HasPrefix(pd.Net, "~") {
			continue
		}
		fmt.Fprintf(w, "  %-8s %10s\n", pd.Net, fmtQ(m.Value(op, pd), pd.Quantity))
	}
	fmt.Fprintln(w)
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
