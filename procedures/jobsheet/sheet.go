// Package jobsheet turns a bench session into a job sheet: what amp and
// design it was, the bench conditions, the safety checks done and skipped,
// every reading against its band, each valve's operating point and
// dissipation, the findings, and for training and practice sessions the
// trainee's predictions and path. It renders the sheet as Markdown (for a
// code forge) or as one self-contained HTML file with inline SVG plots, and
// compares two sessions of the same amp point by point (before and after a
// repair). It holds no terminal code.
package jobsheet

import (
	"fmt"
	"io"
	"math"
	"pinwalk/expect/point"
	"sort"
	"strings"
	"time"

	"pinwalk/expect/amp"
	"pinwalk/expect/design"
	"pinwalk/expect/valves"
	"pinwalk/procedures"
)

// Options qualify Build.
type Options struct {
	// Design is the design the session was taken against, loaded by the
	// caller (nil: the sheet has no operating points and no plots).
	Design *design.Design
	// Proc, when given, supplies step titles and which steps are safety
	// steps. Without it a confirmed step counts as a safety check when
	// its id starts with a safety step kind (see SafetyKinds).
	Proc *procedures.Procedure
	// Suspects, when given, ranks the likely faults of a fault-finding
	// session; without it the findings list the out-of-band readings,
	// ranked by how far outside their bands they are.
	Suspects func(s *procedures.Session, d *design.Design) ([]Suspect, error)
	// Channels names the channels by output transformer as the walk does
	// (procedures.ChannelTitles); nil: by the reference alone.
	Channels map[string]string
}

// SafetyKinds are the step kinds whose confirmation is listed as a safety
// check when no procedure is given.
var SafetyKinds = []procedures.Kind{procedures.KindBriefing, procedures.KindMeter, procedures.KindDischarge, procedures.KindEarth, procedures.KindIsolation}

// Sheet is a built job sheet, ready to render.
type Sheet struct {
	Session *procedures.Session
	Title   string // the design's title (from the session when no design)
	// DesignFile and DesignHash are as the session recorded them;
	// LoadedHash is the hash of the design file loaded now ("" when none).
	DesignFile, DesignHash, LoadedHash string
	// TwoPin: the design's mains inlet has no earth (a Class II or
	// transformerless set): no earth bond to test, and the insulation
	// limit is the class II one.
	TwoPin           bool
	Mode             procedures.Mode
	Started, Updated time.Time
	// Mains is the mains volts the operating points were solved at.
	Mains   float64
	Variacs []float64 // distinct variac fractions readings were taken at (0 = none)
	// Warnings are shown prominently at the top (hash mismatch, skipped
	// safety steps, a design that could not be solved).
	Warnings []string
	Safety   []SafetyCheck
	Skips    []SkipRow
	Readings []ReadingRow
	Valves   []ValveSheet
	Supply   []SupplyRow
	// Findings.
	Suspects  []Suspect
	Ranked    bool // Suspects came from an inference (not only out-of-band readings)
	Found     string
	Replaced  []string
	Summary   string
	Notes     []procedures.Note
	Guesses   []procedures.Guess
	Attempts  []AttemptRow
	Practice  *procedures.Practice
	StepTitle map[string]string
	// Channels names each power-out channel key (an output transformer's
	// reference) as the walk asked for it ("left channel (OT1)"):
	// Options.Channels.
	Channels map[string]string

	labeller *Labeller
}

// ChannelName is a power-out channel key in words: the walk's name for
// it where the procedure gave one, else the key ("–" for none).
func (sh *Sheet) ChannelName(key string) string {
	if n := sh.Channels[key]; n != "" {
		return n
	}
	return orDash(key)
}

// Label describes a point key in words (see Labeller.Label).
func (sh *Sheet) Label(k point.Key) string { return sh.labeller.Label(k) }

// SafetyCheck is a safety step done: confirmed, or measured (discharge
// verified, earth continuity read).
type SafetyCheck struct {
	Step, Title string
	At          time.Time
	// Result is "" for a confirmed step, else the reading and its status.
	Result string
	// Bad: the reading was out of its band.
	Bad bool
}

// SkipRow is a skipped step with its reason.
type SkipRow struct {
	procedures.Skip
	Title string
}

// AttemptRow is a training attempt to go out of order.
type AttemptRow struct {
	procedures.Attempt
	Title string
}

// ReadingRow is one reading as the sheet shows it.
type ReadingRow struct {
	procedures.Reading
	Label   string // "V2 pin 3 plate"
	HasBand bool
}

// Suspect is one entry of the findings: a ranked suspect, or an
// out-of-band reading.
type Suspect struct {
	Name  string  // "R7:open", or the point key
	Why   string  // the evidence
	Score float64 // larger is more likely (or further outside the band)
}

// OpPoint is a valve section's DC operating point.
type OpPoint struct {
	Va, Vg2, Vk, Vg float64 // volts to chassis
	Ia, Ig2         float64 // amps
	Pa, Pg2         float64 // watts
	// How says how a measured point was obtained ("" for the solved one).
	How string
}

// ValveSheet is one valve section: the solved operating point at the
// session's mains, the measured one where the session has the readings,
// dissipation as a fraction of the ratings, and the plate plot.
type ValveSheet struct {
	Name, Type     string // "V1A", "12AU7"
	Label          string // "V1A 12AU7 section A"
	Pentode        bool
	Expected       OpPoint
	Measured       *OpPoint
	PlateWattsMax  float64
	ScreenWattsMax float64
	Chart          *PlateChart
}

// SupplyRow is one HT filter net: expected and read.
type SupplyRow struct {
	Net                string
	Nominal, Low, High float64
	HasBand            bool
	Reading            *procedures.Reading
}

// Build assembles a job sheet from a session. A design that cannot be
// solved is not an error: the sheet carries a warning and no operating
// points.
func Build(s *procedures.Session, opt Options) (*Sheet, error) {
	if s == nil {
		return nil, fmt.Errorf("jobsheet: no session")
	}
	sh := &Sheet{Session: s, Title: s.Design.Title, DesignFile: s.Design.File, DesignHash: s.Design.Hash,
		Mode: s.Mode, Started: s.Started, Updated: s.Updated, StepTitle: map[string]string{}}
	d := opt.Design
	if d != nil {
		sh.LoadedHash = d.Hash
		sh.TwoPin = d.TwoPin()
		if d.Title != "" {
			sh.Title = d.Title
		}
		if d.Hash != s.Design.Hash {
			sh.Warnings = append(sh.Warnings, fmt.Sprintf("The design file %s has changed since the session: its sha256 is %s, the session recorded %s. Expected values below are from the design as it is now.",
				d.File, short(d.Hash), short(s.Design.Hash)))
		}
	}
	sh.Channels = opt.Channels
	stepTitle := func(id string) string {
		if opt.Proc != nil {
			if st := opt.Proc.Step(id); st != nil {
				return st.Title
			}
		}
		return id
	}
	isSafety := func(id string) bool {
		if opt.Proc != nil {
			if st := opt.Proc.Step(id); st != nil {
				return st.Safety
			}
		}
		for _, k := range SafetyKinds {
			if id == string(k) || strings.HasPrefix(id, string(k)+"-") || strings.HasPrefix(id, string(k)+":") || strings.HasPrefix(id, string(k)+".") {
				return true
			}
		}
		return false
	}

	// Conditions.
	sh.Mains = s.Bench.Mains
	if sh.Mains == 0 && d != nil {
		sh.Mains = d.Mains.Volts
	}
	seenV := map[float64]bool{}
	for _, r := range s.Readings {
		if !seenV[r.Variac] {
			seenV[r.Variac] = true
			sh.Variacs = append(sh.Variacs, r.Variac)
		}
	}
	sort.Float64s(sh.Variacs)

	// Safety checks and skips.
	for _, p := range s.Passes {
		sh.StepTitle[p.Step] = stepTitle(p.Step)
		if isSafety(p.Step) {
			sh.Safety = append(sh.Safety, SafetyCheck{Step: p.Step, Title: stepTitle(p.Step), At: p.At})
		}
	}
	// Safety steps done by a reading (a discharge verified, the earth
	// continuity measured) are safety checks too.
	listed := map[string]bool{}
	for _, c := range sh.Safety {
		listed[c.Step] = true
	}
	for _, r := range s.Readings {
		if !isSafety(r.Step) || r.Status == procedures.Retry {
			continue
		}
		res := fmt.Sprintf("%s (read %s)", StatusText(r.Status), r.Raw)
		c := SafetyCheck{Step: r.Step, Title: stepTitle(r.Step), At: r.At, Result: res, Bad: r.Status == procedures.OutOfBand}
		if listed[r.Step] {
			for i := range sh.Safety {
				if sh.Safety[i].Step == r.Step {
					sh.Safety[i].Result, sh.Safety[i].Bad = c.Result, c.Bad
				}
			}
			continue
		}
		listed[r.Step] = true
		sh.Safety = append(sh.Safety, c)
	}
	sort.SliceStable(sh.Safety, func(i, j int) bool { return sh.Safety[i].At.Before(sh.Safety[j].At) })
	for _, k := range s.Skips {
		sh.StepTitle[k.Step] = stepTitle(k.Step)
		sh.Skips = append(sh.Skips, SkipRow{Skip: k, Title: stepTitle(k.Step)})
		if k.Safety {
			sh.Warnings = append(sh.Warnings, fmt.Sprintf("Safety step skipped: %s (%s), reason given: %q.", stepTitle(k.Step), k.At.Format(TimeLayout), k.Reason))
		}
	}
	// Safety skips first, then in time order.
	sort.SliceStable(sh.Skips, func(i, j int) bool { return sh.Skips[i].Safety && !sh.Skips[j].Safety })
	for _, a := range s.Attempts {
		sh.Attempts = append(sh.Attempts, AttemptRow{Attempt: a, Title: stepTitle(a.Step)})
	}

	// Readings with labels from the design's points.
	var m *amp.Model
	labels := map[string]string{}
	if d != nil {
		var err error
		m, err = amp.Build(d)
		if err != nil {
			sh.Warnings = append(sh.Warnings, "The design could not be compiled, so the sheet has no operating points: "+err.Error())
			m = nil
		} else {
			for _, pd := range m.Points() {
				labels[pd.Key()] = pd.Label
			}
		}
	}
	sh.labeller = NewLabeller(d)
	for _, r := range s.Readings {
		sh.StepTitle[r.Step] = stepTitle(r.Step)
		labels[r.Point.String()] = sh.labeller.Label(r.Point)
		row := ReadingRow{Reading: r, Label: labels[r.Point.String()], HasBand: r.Low != 0 || r.High != 0 || r.Nominal != 0}
		sh.Readings = append(sh.Readings, row)
	}

	// Operating points, plots and the supply chain.
	if m != nil {
		if err := sh.solve(m, s); err != nil {
			sh.Warnings = append(sh.Warnings, "The design could not be solved at the session's mains, so the sheet has no operating points: "+err.Error())
		}
	}

	// Findings.
	if o := s.Outcome; o != nil {
		sh.Found, sh.Replaced, sh.Summary = o.Found, o.Replaced, o.Summary
	}
	sh.Notes = s.Notes
	sh.Guesses = s.Guesses
	sh.Practice = s.Practice
	if opt.Suspects != nil && d != nil {
		sus, err := opt.Suspects(s, d)
		if err != nil {
			sh.Warnings = append(sh.Warnings, "Ranking the suspects failed: "+err.Error())
		} else {
			sh.Suspects, sh.Ranked = sus, true
		}
	}
	if !sh.Ranked {
		sh.Suspects = OutOfBand(s.Readings, labels)
	}
	return sh, nil
}

// TimeLayout is how the sheet prints times: in the session's own zone.
const TimeLayout = "2006-01-02 15:04"

// lastAccepted returns the latest reading of a point that is not a
// retry, at full mains (no variac or variac ≥ 0.99), or nil.
func lastAccepted(rs []procedures.Reading, key string) *procedures.Reading {
	for i := len(rs) - 1; i >= 0; i-- {
		r := &rs[i]
		if r.Point.String() == key && r.Status != procedures.Retry && r.Status != procedures.Skipped && (r.Variac == 0 || r.Variac >= 0.99) {
			return r
		}
	}
	return nil
}

// OutOfBand lists the out-of-band readings (the last accepted reading of
// each point), ranked by how far outside the band they are, in band
// widths (a reading twice the band's width above it scores 2). labels
// maps point keys to labels (may be nil).
func OutOfBand(rs []procedures.Reading, labels map[string]string) []Suspect {
	var out []Suspect
	seen := map[string]bool{}
	for i := len(rs) - 1; i >= 0; i-- {
		r := rs[i]
		key := r.Point.String() + fmt.Sprint(r.Variac)
		if seen[key] || r.Status == procedures.Retry {
			continue
		}
		seen[key] = true
		if r.Status != procedures.OutOfBand {
			continue
		}
		width := r.High - r.Low
		if width <= 0 {
			width = math.Max(math.Abs(r.Nominal)*0.01, 1e-12)
		}
		dir, dist := "above", (r.Value-r.High)/width
		if r.Value < r.Low {
			dir, dist = "below", (r.Low-r.Value)/width
		}
		label := labels[r.Point.String()]
		if label == "" {
			label = (*Labeller)(nil).Label(r.Point)
		}
		why := fmt.Sprintf("%s reads %s, %s its band (%s) by %.2g band widths",
			label, fmtVal(r.Value, r.Unit), dir, fmtBand(r.Low, r.High, r.Unit), dist)
		out = append(out, Suspect{Name: label, Why: why, Score: dist})
	}
	sort.SliceStable(out, func(i, j int) bool { return out[i].Score > out[j].Score })
	return out
}

// solve fills the valve operating points and the supply chain from a
// nominal solve at the session's mains.
func (sh *Sheet) solve(m *amp.Model, s *procedures.Session) error {
	sv := amp.NewSolver(m)
	var op amp.OP
	if err := sv.Solve(amp.Conditions{MainsVolts: sh.Mains}, m.NominalValues(), false, &op); err != nil {
		return err
	}
	points := m.Points()
	for i, sec := range m.Sections {
		so := op.Sections[i]
		vs := ValveSheet{Name: sec.Name(), Type: sec.Type.Name, Label: amp.SectionLabel(sec), Pentode: sec.Pentode,
			PlateWattsMax: sec.Type.Limits.PlateWatts, ScreenWattsMax: sec.Type.Limits.ScreenWatts}
		vs.Expected = OpPoint{Va: clean(so.Va), Vg2: clean(so.Vg2), Vk: clean(so.Vk), Vg: clean(so.Vg), Ia: clean(so.Ia), Ig2: clean(so.Ig2), Pa: clean(so.Pa), Pg2: clean(so.Pg2)}
		load := plateLoad(m.D, sec)
		vs.Measured = measuredOp(m, &op, i, points, s.Readings, load)
		vs.Chart = newPlateChart(m, &op, i, load, vs.Measured)
		sh.Valves = append(sh.Valves, vs)
	}
	if m.HT != nil {
		for _, n := range m.HT.Nets {
			row := SupplyRow{Net: n}
			row.Nominal, _ = m.NetVolts(&op, n)
			row.Reading = lastAccepted(s.Readings, n+" "+amp.DCVolts)
			if row.Reading != nil && (row.Reading.Low != 0 || row.Reading.High != 0) {
				row.Low, row.High, row.HasBand = row.Reading.Low, row.Reading.High, true
				row.Nominal = row.Reading.Nominal
			}
			sh.Supply = append(sh.Supply, row)
		}
	}
	return nil
}

func clean(v float64) float64 {
	if math.Abs(v) < 1e-9 {
		return 0
	}
	return v
}

// PlateLoad is a section's DC plate load: the part between the plate net
// and its supply net, and its resistance (a resistor's value, or the DC
// resistance of the output transformer's primary, or of its half for
// push-pull).
type PlateLoad struct {
	Ref       string
	SupplyNet string
	Ohms      float64
	// Output: the load is an output transformer; ACOhms is the AC load
	// line's impedance per plate (single-ended: the primary impedance;
	// push-pull: Zaa/4, class B one-valve-conducting), ACWhat names it.
	Output bool
	ACOhms float64
	ACWhat string
}

// plateLoad finds the DC plate load of a section, or nil.
func plateLoad(d *design.Design, sec *amp.Section) *PlateLoad {
	vp := d.ByRef[sec.Ref].Valve
	plate := vp.Sections[sec.Section][valves.Plate]
	if plate == "" || plate == d.Ground {
		return nil
	}
	var res *PlateLoad
	for _, u := range d.Nets[plate] {
		p := d.ByRef[u.Ref]
		if p == nil {
			continue
		}
		switch p.Kind {
		case design.OutputTransformer:
			ot := p.OT
			if ot == nil {
				continue
			}
			if ot.Centre != "" {
				dcr := ot.DCR[0]
				if plate == ot.Ends[1] && ot.DCR[1] > 0 {
					dcr = ot.DCR[1]
				}
				return &PlateLoad{Ref: p.Ref, SupplyNet: ot.Centre, Ohms: dcr, Output: true, ACOhms: ot.Impedance / 4,
					ACWhat: "push-pull: a quarter of the plate-to-plate impedance (Zaa/4), one valve conducting"}
			}
			other := ot.Ends[0]
			if other == plate {
				other = ot.Ends[1]
			}
			return &PlateLoad{Ref: p.Ref, SupplyNet: other, Ohms: ot.DCR[0], Output: true, ACOhms: ot.Impedance,
				ACWhat: "single-ended: the primary impedance"}
		case design.Resistor, design.Choke:
			if res != nil || len(p.Terminals) < 2 {
				continue
			}
			other := p.Terminals[0].Net
			if other == plate {
				other = p.Terminals[1].Net
			}
			if other == d.Ground {
				continue
			}
			ohms := p.Value
			if p.Kind == design.Choke {
				ohms = p.DCR
			}
			res = &PlateLoad{Ref: p.Ref, SupplyNet: other, Ohms: ohms}
		}
	}
	return res
}

// measuredOp builds a section's operating point from the session's
// readings: plate (and screen) volts as read; cathode volts as read (0 on
// a grounded cathode); plate current read directly when the session has
// it, otherwise from the cathode volts over the cathode resistor (shared
// equally by the sections on one cathode net, less the solved screen
// share), otherwise from the drop across the plate load. nil when the
// plate volts were not read.
func measuredOp(m *amp.Model, op *amp.OP, i int, points []amp.PointDef, rs []procedures.Reading, load *PlateLoad) *OpPoint {
	sec := m.Sections[i]
	so := op.Sections[i]
	var plateKey, screenKey, cathKey, plateAmps string
	var cathNet string
	for _, pd := range points {
		if pd.Section != i {
			continue
		}
		switch {
		case pd.Electrode == valves.Plate && pd.Quantity == amp.DCVolts:
			plateKey = pd.Key()
		case pd.Electrode == valves.Plate && pd.Quantity == amp.DCAmps:
			plateAmps = pd.Key()
		case pd.Electrode == valves.Screen && pd.Quantity == amp.DCVolts:
			screenKey = pd.Key()
		case pd.Electrode == valves.Cathode && pd.Quantity == amp.DCVolts:
			cathKey, cathNet = pd.Key(), pd.Net
		}
	}
	pr := lastAccepted(rs, plateKey)
	if plateKey == "" || pr == nil {
		return nil
	}
	mo := &OpPoint{Va: pr.Value}
	var kr *procedures.Reading
	if cathKey != "" {
		kr = lastAccepted(rs, cathKey)
		if kr == nil {
			// The cathode net may have been read as a net.
			kr = lastAccepted(rs, cathNet+" "+amp.DCVolts)
		}
	}
	if kr != nil {
		mo.Vk = kr.Value
	} else if cathNet == m.D.Ground {
		mo.Vk = 0
	} else {
		mo.Vk = so.Vk
	}
	if sec.Pentode {
		if r := lastAccepted(rs, screenKey); r != nil {
			mo.Vg2 = r.Value
		} else {
			mo.Vg2 = so.Vg2
		}
	}
	ratio := 1.0 // Ia/Ik from the solve (screen current share)
	if so.Ik > 0 {
		ratio = so.Ia / so.Ik
	}
	rk, shared := cathodeOhms(m, cathNet)
	switch {
	case lastAccepted(rs, plateAmps) != nil:
		mo.Ia = lastAccepted(rs, plateAmps).Value
		mo.How = "plate current as read"
	case kr != nil && rk > 0:
		mo.Ia = kr.Value / rk / float64(shared) * ratio
		mo.How = fmt.Sprintf("plate current from the cathode volts over %s", fmtVal(rk, "Ω"))
		if shared > 1 {
			mo.How += fmt.Sprintf(" shared by %d sections", shared)
		}
		if sec.Pentode {
			mo.How += ", less the screen's share"
		}
	case load != nil && load.Ohms > 0:
		sup := lastAccepted(rs, load.SupplyNet+" "+amp.DCVolts)
		if sup == nil {
			return mo
		}
		mo.Ia = (sup.Value - pr.Value) / load.Ohms
		mo.How = fmt.Sprintf("plate current from the drop across %s (%s)", load.Ref, fmtVal(load.Ohms, "Ω"))
	default:
		mo.How = "plate current not known from these readings"
		return mo
	}
	if sec.Pentode && so.Ia > 0 {
		mo.Ig2 = mo.Ia * so.Ig2 / so.Ia
		mo.Pg2 = (mo.Vg2 - mo.Vk) * mo.Ig2
	}
	mo.Pa = (mo.Va - mo.Vk) * mo.Ia
	return mo
}

// cathodeOhms returns the DC resistance from a cathode net to chassis
// (resistors to ground in parallel) and how many sections share the net;
// 0 when the net has no resistor straight to ground.
func cathodeOhms(m *amp.Model, net string) (float64, int) {
	if net == "" || net == m.D.Ground {
		return 0, 1
	}
	g := 0.0
	for _, u := range m.D.Nets[net] {
		p := m.D.ByRef[u.Ref]
		if p == nil || p.Kind != design.Resistor || len(p.Terminals) < 2 || p.Value <= 0 {
			continue
		}
		if p.Terminals[0].Net == m.D.Ground || p.Terminals[1].Net == m.D.Ground {
			g += 1 / p.Value
		}
	}
	n := 0
	for _, sec := range m.Sections {
		if m.D.ByRef[sec.Ref].Valve.Sections[sec.Section][valves.Cathode] == net {
			n++
		}
	}
	if g == 0 {
		return 0, max(n, 1)
	}
	return 1 / g, max(n, 1)
}

// Markdown writes the sheet as GitHub-flavoured Markdown (tables, no raw
// HTML; the plots are described in words).
func (sh *Sheet) Markdown(w io.Writer) error { return sh.document().markdown(w) }

// HTML writes the sheet as one self-contained HTML file: inline CSS and
// inline SVG plots, no scripts and no external resources.
func (sh *Sheet) HTML(w io.Writer) error { return sh.document().html(w) }
