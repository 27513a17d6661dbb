package jobsheet

import (
	"fmt"
	"io"
	"math"
	"pinwalk/expect/point"
	"sort"
	"strings"
	"time"

	"pinwalk/procedures"
)

// The customer's job sheet: what they said was wrong, what was found in
// plain words, the parts replaced, the readings that matter before and
// after the repair, the electrical-safety tests, the checks after the
// repair and the technician's sign-off; the bench log follows as an
// appendix, grouped. No point key, step id or raw number format reaches
// it: every point goes through Labeller.Label.

// Safety-test limits for a Class I (earthed) amplifier.
const (
	// EarthBondMaxOhms: protective-conductor resistance not over 0.1 Ω
	// plus the supply cord, about 0.2 Ω in all with a 2 m cord (IET Code
	// of Practice for In-service Inspection and Testing of Electrical
	// Equipment, 5th ed. 2020; from memory).
	EarthBondMaxOhms = 0.2
	// InsulationMinOhms: insulation resistance not under 1 MΩ at 500 V DC
	// for Class I equipment (same source; from memory).
	InsulationMinOhms = 1e6
	// InsulationTestVolts is the test voltage of the insulation test.
	InsulationTestVolts = 500
)

// Notes printed beside a safety test made with a multimeter.
const (
	EarthBondMultimeterNote  = "an indication only, not a substitute for an earth-bond tester (IEC 61557-4)"
	InsulationMultimeterNote = "an indication only, not a substitute for an insulation tester (IEC 61557-2)"
)

// CustomerMarkdown writes the customer's job sheet as Markdown.
func (sh *Sheet) CustomerMarkdown(w io.Writer) error { return sh.customerDocument().markdown(w) }

// CustomerHTML writes the customer's job sheet as one self-contained HTML
// file with a print stylesheet (A4, the bench log on its own pages), so a
// browser's print to PDF makes a clean sheet.
func (sh *Sheet) CustomerHTML(w io.Writer) error { return sh.customerDocument().html(w) }

// cVal prints a value for the customer: number and unit held together
// (no line break between them), a true minus sign.
func cVal(v float64, unit string) string {
	out := strings.ReplaceAll(fmtVal(v, unit), " ", "\u00a0")
	if strings.HasPrefix(out, "-") {
		out = "−" + out[1:]
	}
	return out
}

// cBand prints a band for the customer: "14.5 kΩ to 20.6 kΩ".
func cBand(lo, hi float64, unit string) string {
	b := fmtBand(lo, hi, unit)
	if math.IsInf(lo, 0) || math.IsInf(hi, 0) {
		return b
	}
	return cVal(lo, unit) + "\u00a0to\u00a0" + cVal(hi, unit)
}

// cStatus gives a reading's status in a customer's words, a symbol and a
// word so that it never depends on colour.
func cStatus(s procedures.Status) string {
	switch s {
	case procedures.InBand:
		return "✓\u00a0within\u00a0range"
	case procedures.OutOfBand:
		return "✗\u00a0OUT\u00a0OF\u00a0RANGE"
	case procedures.Retry:
		return "?\u00a0measured\u00a0again"
	}
	return StatusText(s)
}

// timeZ prints a time in its own (the bench's local) zone, with the zone.
func timeZ(t time.Time) string { return t.Format("2006-01-02 15:04 MST") }

// zoneOf names the zone of a time for a table heading: "UTC+01:00".
func zoneOf(t time.Time) string {
	name, off := t.Zone()
	if off == 0 {
		return "UTC"
	}
	sign := "+"
	if off < 0 {
		sign, off = "−", -off
	}
	z := fmt.Sprintf("UTC%s%02d:%02d", sign, off/3600, off%3600/60)
	if name != "" && name[0] != '+' && name[0] != '-' {
		z = name + ", " + z
	}
	return z
}

// faultWords says a confirmed fault "REF:MODE" in plain words; anything
// else is returned as typed.
func faultWords(found string) string {
	ref, mode, ok := strings.Cut(found, ":")
	if !ok || strings.ContainsAny(ref, " ") {
		return found
	}
	words := map[string]string{
		"open":        "had gone open circuit",
		"short":       "had shorted",
		"high":        "had drifted high in value",
		"leaky":       "was leaking current (leaky)",
		"weak":        "was weak (worn, low emission)",
		"dead":        "was dead",
		"heater-open": "had an open heater",
		"half-open":   "had one half open",
	}
	if w, ok := words[mode]; ok {
		return ref + " " + w + "."
	}
	return ref + ": " + strings.ReplaceAll(mode, "-", " ") + "."
}

// repairTime is when the first part was replaced (zero when unknown).
func repairTime(j procedures.Job) time.Time {
	var t time.Time
	for _, p := range j.Parts {
		if !p.At.IsZero() && (t.IsZero() || p.At.Before(t)) {
			t = p.At
		}
	}
	return t
}

// settled says whether a reading counts for before and after: accepted
// (not a retry or skip), and unpowered or at full mains.
func settled(r procedures.Reading) bool {
	return r.Status != procedures.Retry && r.Status != procedures.Skipped && (r.Variac <= 0 || r.Variac >= 0.99)
}

// BeforeAfter is a point that matters: out of band at some time, with
// its first out-of-band reading and its last reading.
type BeforeAfter struct {
	Key           point.Key
	Before, After procedures.Reading
	Remeasured    bool // After is a later reading than Before
}

// beforeAfter finds the points that matter: every point with a settled
// reading out of band (before the repair, when its time is known), paired
// with its last settled reading.
func beforeAfter(rs []procedures.Reading, repaired time.Time) []BeforeAfter {
	var out []BeforeAfter
	idx := map[point.Key]int{}
	for _, r := range rs {
		if !settled(r) {
			continue
		}
		if j, ok := idx[r.Point]; ok {
			out[j].After, out[j].Remeasured = r, true
			continue
		}
		if r.Status != procedures.OutOfBand || (!repaired.IsZero() && !r.At.Before(repaired)) {
			continue
		}
		idx[r.Point] = len(out)
		out = append(out, BeforeAfter{Key: r.Point, Before: r, After: r})
	}
	return out
}

// safetyRow judges one safety test for the customer.
type safetyVerdict struct {
	Result, Verdict string
	Passed, Failed  bool
}

func judgeEarth(t *procedures.SafetyTest) safetyVerdict {
	if t == nil {
		return safetyVerdict{Result: "not tested", Verdict: "✗ NOT TESTED"}
	}
	v := safetyVerdict{Result: cVal(t.Ohms, "Ω")}
	if t.TestAmps > 0 {
		v.Result += fmt.Sprintf(" at %s test current", cVal(t.TestAmps, "A"))
	}
	switch {
	case t.Instrument == procedures.Multimeter:
		v.Verdict = "• multimeter reading: " + EarthBondMultimeterNote
	case t.Ohms <= EarthBondMaxOhms:
		v.Verdict, v.Passed = "✓ passed", true
	default:
		v.Verdict, v.Failed = "✗ FAILED", true
	}
	return v
}

func judgeInsulation(t *procedures.SafetyTest, minOhms float64) safetyVerdict {
	if t == nil {
		return safetyVerdict{Result: "not tested", Verdict: "✗ NOT TESTED"}
	}
	v := safetyVerdict{Result: cVal(t.Ohms, "Ω")}
	if t.Raw != "" && strings.HasPrefix(strings.TrimSpace(t.Raw), ">") {
		v.Result = "more than " + v.Result
	}
	if t.TestVolts > 0 {
		v.Result += fmt.Sprintf(" at %s DC", cVal(t.TestVolts, "V"))
	}
	switch {
	case t.Instrument == procedures.Multimeter:
		v.Verdict = "• multimeter reading: " + InsulationMultimeterNote
	case t.TestVolts > 0 && t.TestVolts < InsulationTestVolts:
		v.Verdict = fmt.Sprintf("• tested at %s, below the %s DC the test calls for: not a pass", cVal(t.TestVolts, "V"), cVal(InsulationTestVolts, "V"))
	case t.Ohms >= minOhms:
		v.Verdict, v.Passed = "✓ passed", true
	default:
		v.Verdict, v.Failed = "✗ FAILED", true
	}
	return v
}

// insulationMin is the insulation limit of the sheet's amplifier: Class I
// (earthed), or Class II for a set with no mains earth, the walk's own
// limit (procedures.InsulationStopOhms).
func (sh *Sheet) insulationMin() float64 {
	if sh.TwoPin {
		return procedures.InsulationStopOhms
	}
	return InsulationMinOhms
}

// safetyVerdicts judges the after-repair earth bond and insulation; a set
// with no mains earth has no earth bond to test.
func (sh *Sheet) safetyVerdicts(j procedures.Job) (eb, ins safetyVerdict) {
	eb, ins = judgeEarth(j.After.EarthBond), judgeInsulation(j.After.Insulation, sh.insulationMin())
	if sh.TwoPin {
		eb = safetyVerdict{Result: "no mains earth (two-pin inlet)", Verdict: "– not applicable", Passed: true}
	}
	return eb, ins
}

// durationWords prints a soak time: "2 h", "1 h 30 min", "45 min".
func durationWords(d time.Duration) string {
	h := int(d.Hours())
	m := int(math.Round(d.Minutes())) - 60*h
	switch {
	case h > 0 && m > 0:
		return fmt.Sprintf("%d h %d min", h, m)
	case h > 0:
		return fmt.Sprintf("%d h", h)
	}
	return fmt.Sprintf("%d min", m)
}

// customerDocument lays out the customer's sheet.
func (sh *Sheet) customerDocument() *document {
	s := sh.Session
	j := s.Job
	amp := orDash(s.Bench.AmpID)
	title := s.Bench.AmpID
	if strings.TrimSpace(title) == "" {
		title = orDash(sh.Title)
	}
	doc := &document{Title: "Repair report: " + title, CSS: customerCSS}

	// The job.
	job := docSection{ID: "job", Title: "The job"}
	worked := timeZ(sh.Started)
	if u := sh.Updated.In(sh.Started.Location()); !sh.Updated.IsZero() && u.After(sh.Started) {
		if u.Format("2006-01-02") == sh.Started.Format("2006-01-02") {
			worked = sh.Started.Format("2006-01-02, 15:04") + " to " + u.Format("15:04 MST")
		} else {
			worked += " to " + timeZ(u)
		}
	}
	job.table(&table{Head: []string{"", ""}, Rows: [][]string{
		{"Customer", orDash(j.Customer)},
		{"Amplifier", amp},
		{"Serial number", orDash(s.Bench.Serial)},
		{"Technician", orDash(s.Bench.Who)},
		{"Worked on", worked},
	}})
	job.heading("The fault as you described it")
	if strings.TrimSpace(j.Complaint) != "" {
		job.para("“%s”", strings.TrimSpace(j.Complaint))
	} else if len(s.Symptoms) > 0 {
		job.list(s.Symptoms)
	} else {
		job.para("Not recorded.")
	}
	if c := strings.TrimSpace(j.Channel); c != "" {
		job.para("Channel with the fault: %s.", c)
	}
	if sw := swapWords(j.Swap); sw != "" {
		job.para("%s", sw)
	}
	doc.Sections = append(doc.Sections, job)

	// Safety verdict first, so nobody misses it.
	eb, ins := sh.safetyVerdicts(j)
	insMin := sh.insulationMin()

	// What we found.
	fd := docSection{ID: "found", Title: "What we found"}
	if eb.Failed || ins.Failed {
		fd.warn("This amplifier FAILED an electrical-safety test (see Safety tests). Do not use it until it has been put right and tested again.")
	}
	var found []string
	if sh.Found != "" {
		found = append(found, faultWords(sh.Found))
	}
	switch {
	case sh.Summary != "" && sh.Found != "" && strings.HasPrefix(sh.Summary, "Found by measurement: "):
		found = append(found, "Found by measurement.") // the words of the fault are already there
	case sh.Summary != "":
		found = append(found, sh.Summary)
	}
	if len(found) > 0 {
		fd.para("%s", strings.Join(found, " "))
	}
	if len(j.Visual) > 0 {
		fd.heading("On inspection")
		fd.list(j.Visual)
	}
	ba := beforeAfter(s.Readings, repairTime(j))
	if len(ba) > 0 {
		var items []string
		for _, x := range ba {
			items = append(items, fmt.Sprintf("%s: read %s; should read %s.",
				capital(sh.Label(x.Key)), cVal(x.Before.Value, x.Before.Unit), cBand(x.Before.Low, x.Before.High, x.Before.Unit)))
		}
		fd.heading("Measurements outside what this amplifier should read")
		fd.list(items)
	} else if len(found) == 0 && len(j.Visual) == 0 {
		fd.para("Every measurement was within what this amplifier should read.")
	}
	// A part measured out of circuit and then replaced: its readings are
	// of the old part, a finding, not a point of the amp to read again.
	replaced := map[string]bool{}
	for _, p := range j.Parts {
		replaced[p.Ref] = true
	}
	var again []BeforeAfter
	for _, x := range ba {
		if !(x.Key.Domain == point.Part && replaced[x.Key.ID]) {
			again = append(again, x)
		}
	}
	var still []string
	for _, x := range again {
		if x.Remeasured && x.After.Status == procedures.OutOfBand {
			still = append(still, sh.Label(x.Key))
		}
	}
	if len(still) > 0 {
		fd.warn("Still outside what it should read at the last measurement: " + strings.Join(still, "; ") + ".")
	}
	doc.Sections = append(doc.Sections, fd)

	// Parts replaced.
	pr := docSection{ID: "parts", Title: "Parts replaced"}
	switch {
	case len(j.Parts) > 0:
		t := &table{Head: []string{"Part", "New part", "Rating", "Why"}}
		for _, p := range j.Parts {
			t.Rows = append(t.Rows, []string{p.Ref, orDash(p.Value), orDash(p.Rating), orDash(p.Reason)})
		}
		pr.table(t)
	case len(sh.Replaced) > 0:
		pr.para("%s.", strings.Join(sh.Replaced, ", "))
	default:
		pr.para("None.")
	}
	doc.Sections = append(doc.Sections, pr)

	// Before and after.
	if len(again) > 0 {
		bs := docSection{ID: "before-after", Title: "Before and after the repair"}
		t := &table{Head: []string{"Measurement", "Should read", "Before", "After", "Now"}, Numeric: []bool{false, false, true, true, false}}
		if len(j.Parts) == 0 && len(sh.Replaced) == 0 {
			bs.Title = "Readings that were out of range"
			t.Head = []string{"Measurement", "Should read", "First reading", "Last reading", "Now"}
		}
		for _, x := range again {
			after, now := "not measured again", "–"
			if x.Remeasured {
				after = cVal(x.After.Value, x.After.Unit)
				now = cStatus(x.After.Status)
			}
			t.Rows = append(t.Rows, []string{capital(sh.Label(x.Key)), cBand(x.After.Low, x.After.High, x.After.Unit),
				cVal(x.Before.Value, x.Before.Unit), after, now})
			t.Strong = append(t.Strong, !x.Remeasured || x.After.Status == procedures.OutOfBand)
		}
		bs.table(t)
		doc.Sections = append(doc.Sections, bs)
	}

	// Safety tests.
	st := docSection{ID: "safety", Title: "Electrical-safety tests"}
	if sh.TwoPin {
		st.para("Before the amplifier goes back, with it unplugged from the mains: it has no mains earth, so the insulation between the mains plug's pins and every metal part a user can touch at %s DC (%s or more). Limit for equipment with no protective earth (Class II); local codes rule.",
			cVal(InsulationTestVolts, "V"), cVal(insMin, "Ω"))
	} else {
		st.para("Before the amplifier goes back, with it unplugged from the mains: the earth bond from the mains plug's earth pin to the chassis (%s or less) and the insulation between the mains conductors and earth at %s DC (%s or more). Limits for an earthed (Class I) amplifier; local codes rule.",
			cVal(EarthBondMaxOhms, "Ω"), cVal(InsulationTestVolts, "V"), cVal(InsulationMinOhms, "Ω"))
	}
	st.table(&table{Head: []string{"Test", "Result", "Verdict"}, Rows: [][]string{
		{"Earth bond", eb.Result, eb.Verdict},
		{"Insulation resistance", ins.Result, ins.Verdict},
	}, Strong: []bool{!eb.Passed, !ins.Passed}})
	for _, k := range sh.Skips {
		if k.Safety {
			st.warn(fmt.Sprintf("A safety step was skipped during the work: %s (reason given: %s).", stepWords(k.Title, k.Step), k.Reason))
		}
	}
	if e := lastAccepted(s.Readings, procedures.EarthKey.String()); e != nil && j.After.EarthBond == nil {
		st.para("Earth continuity was checked with a multimeter before the amplifier was first powered: %s (%s).",
			cVal(e.Value, "Ω"), EarthBondMultimeterNote)
	}
	if !eb.Passed || !ins.Passed {
		st.warn("The electrical-safety tests above are not all passed with a proper tester: this sheet does not certify the amplifier as safe.")
	}
	doc.Sections = append(doc.Sections, st)

	// After-repair checks.
	ac := docSection{ID: "checks", Title: "Checks after the repair"}
	if len(j.After.PowerOut) > 0 {
		t := &table{Head: []string{"Channel", "Power out", "Into", "At", "Note"}, Numeric: []bool{false, true, true, true, false}}
		for _, p := range j.After.PowerOut {
			hz := "–"
			if p.Hz > 0 {
				hz = cVal(p.Hz, "Hz")
			}
			t.Rows = append(t.Rows, []string{sh.ChannelName(p.Channel), cVal(p.Watts, "W"), loadWords(p.LoadOhms), hz, orDash(p.Note)})
		}
		ac.table(t)
	} else {
		ac.para("Power out: not measured.")
	}
	if sk := j.After.Soak; sk != nil && sk.Duration > 0 {
		line := "Soak test: ran for " + durationWords(sk.Duration)
		if !sk.At.IsZero() {
			line += ", ending " + timeZ(sk.At)
		}
		if sk.Note != "" {
			line += ": " + sk.Note
		}
		ac.para("%s.", strings.TrimSuffix(line, "."))
	} else {
		ac.para("Soak test: not done.")
	}
	doc.Sections = append(doc.Sections, ac)

	// Sign-off.
	so := docSection{ID: "sign-off", Title: "Sign-off"}
	if j.SignOff != nil && strings.TrimSpace(j.SignOff.Name) != "" {
		so.para("Repaired and tested by %s, signed off %s.", j.SignOff.Name, timeZ(j.SignOff.At))
	} else {
		so.warn("Not signed off: this sheet is a record of work in progress.")
	}
	so.para("Valve amplifiers hold lethal voltages inside, and their capacitors keep them after power-off: do not open the case.")
	doc.Sections = append(doc.Sections, so)

	doc.Sections = append(doc.Sections, sh.benchLog(repairTime(j)))
	return doc
}

// capital upper-cases the first letter.
func capital(s string) string {
	if s == "" {
		return s
	}
	r := []rune(s)
	if r[0] >= 'a' && r[0] <= 'z' {
		r[0] -= 'a' - 'A'
	}
	return string(r)
}

// logGroup is one group of the bench log.
type logGroup struct {
	order int
	title string
	rows  [][]string
	bad   []bool
}

// groupOf places a reading in a bench-log group: by what was measured,
// the variac setting and whether it was taken after the repair.
func (sh *Sheet) groupOf(r procedures.Reading, repaired time.Time) (int, string) {
	key, label := r.Point, sh.Label(r.Point)
	if !repaired.IsZero() && !r.At.Before(repaired) {
		return 90, "After the repair"
	}
	switch {
	case key.Domain == point.Discharge:
		return 0, "Filter capacitors discharged before work"
	case key.Domain == point.Earth:
		return 1, "Mains earth continuity (multimeter)"
	case key.Domain == point.Insulation:
		return 1, "Insulation, mains pins to exposed metal"
	case key.Domain == point.Cold && !strings.Contains(label, "to chassis"):
		return 3, "Windings and mains input, unplugged"
	case key.Domain == point.Cold:
		return 2, "Resistance to chassis, unplugged"
	case key.Domain == point.Part:
		return 4, "Parts measured out of circuit"
	case key.Domain == point.Mains:
		return 5, "Mains"
	case r.Variac > 0 && r.Variac < 0.99:
		return 6, "First power-up, mains raised in steps on a variac"
	case key.Domain == point.Bias:
		return 60, "Output valve bias"
	case key.Quantity == point.ToneVolts:
		return 70, "Signal tracing with a test tone"
	case strings.Contains(label, "heater"):
		return 7, "Heaters"
	case strings.HasPrefix(label, "net "):
		return 8, "Supply and other circuit points, full mains"
	}
	if ref, _, ok := key.Valve(); ok {
		return 10, "Valve " + ref + ", full mains"
	}
	return 80, "Other measurements"
}

// benchLog is the appendix: every reading, grouped.
func (sh *Sheet) benchLog(repaired time.Time) docSection {
	s := sh.Session
	bl := docSection{ID: "bench-log", Title: "Appendix: bench log"}
	mains := "not stated"
	if s.Bench.Mains > 0 {
		mains = cVal(s.Bench.Mains, "V") + " as measured"
	}
	zone := zoneOf(sh.Started)
	bl.table(&table{Head: []string{"", ""}, Rows: [][]string{
		{"Design", orDash(sh.Title)},
		{"Meter", orDash(s.Bench.Meter)},
		{"Bench mains", mains},
		{"Variac", variacText(sh.Variacs)},
		{"Times", "local, " + zone},
	}})
	if len(sh.Safety) > 0 || len(sh.Skips) > 0 {
		var items []string
		for _, c := range sh.Safety {
			item := c.At.Format("15:04") + " " + stepWords(c.Title, c.Step)
			switch {
			case c.Result == "":
				item += ": done"
			case c.Bad:
				item += ": ✗ OUT OF RANGE"
			default:
				item += ": ✓ within range"
			}
			items = append(items, item)
		}
		for _, k := range sh.Skips {
			items = append(items, fmt.Sprintf("%s %s: SKIPPED (reason given: %s)", k.At.Format("15:04"), stepWords(k.Title, k.Step), k.Reason))
		}
		bl.heading("Safety steps")
		bl.list(items)
	}
	groups := map[string]*logGroup{}
	var order []*logGroup
	for _, r := range sh.Readings {
		o, title := sh.groupOf(r.Reading, repaired)
		if o == 10 {
			o += len(order) // valves in the order first read
		}
		g := groups[title]
		if g == nil {
			g = &logGroup{order: o, title: title}
			groups[title] = g
			order = append(order, g)
		}
		what := capital(sh.Label(r.Point))
		if r.Variac > 0 && r.Variac < 0.99 {
			what += fmt.Sprintf(", at %s mains", pct(r.Variac, 1))
		}
		band := "–"
		if r.HasBand {
			band = cBand(r.Low, r.High, r.Unit)
		}
		g.rows = append(g.rows, []string{r.At.Format("15:04"), what, band, cVal(r.Value, r.Unit), cStatus(r.Status)})
		g.bad = append(g.bad, r.Status == procedures.OutOfBand)
	}
	sort.SliceStable(order, func(a, b int) bool { return order[a].order < order[b].order })
	if len(order) == 0 {
		bl.para("No readings were taken.")
	}
	for _, g := range order {
		bl.heading(g.title)
		bl.table(&table{Head: []string{"Time", "Measurement", "Should read", "Reading", "Result"}, Rows: g.rows, Strong: g.bad,
			Numeric: []bool{false, false, false, true, false}})
	}
	if len(sh.Notes) > 0 {
		bl.heading("Notes")
		var items []string
		for _, n := range sh.Notes {
			items = append(items, n.At.Format("15:04")+" "+n.Text)
		}
		bl.list(items)
	}
	return bl
}

// stepWords is a step's title for a person; without a procedure to name
// it, its id with the punctuation turned into words.
func stepWords(title, id string) string {
	if title != "" && title != id {
		return title
	}
	return capital(strings.NewReplacer("-", " ", "_", " ", ".", " ", ":", " ").Replace(id))
}

// customerCSS is the customer sheet's style: a clean page on screen and
// on paper (A4), every status a symbol and a word, the bench log on its
// own pages.
const customerCSS = `
body { font-family: "DejaVu Sans", "Liberation Sans", Arial, sans-serif; color: #000; background: #fff; margin: 2em auto; max-width: 46em; padding: 0 1em; line-height: 1.4; font-size: 11pt; }
h1 { font-size: 1.5em; border-bottom: 2px solid #000; padding-bottom: .2em; margin-bottom: .4em; }
h2 { font-size: 1.2em; border-bottom: 1px solid #888; margin: 1.3em 0 .4em; }
h3 { font-size: 1em; margin: 1em 0 .3em; }
p, ul { margin: .4em 0; }
table { border-collapse: collapse; margin: .5em 0; width: 100%; }
th, td { border: 1px solid #888; padding: .25em .5em; text-align: left; vertical-align: top; }
th { background: #eee; font-weight: bold; }
thead th:empty { display: none; }
#job td:first-child, #bench-log > table:first-of-type td:first-child { width: 11em; font-weight: bold; background: #f6f6f6; }
td.num { text-align: right; white-space: nowrap; }
tr.strong td { font-weight: bold; }
.warn { border: 2px solid #000; padding: .5em .8em; margin: .8em 0; font-weight: bold; }
.warn::before { content: "⚠ "; }
#bench-log { font-size: .9em; }
#bench-log td:first-child { white-space: nowrap; }
@page { size: A4; margin: 16mm 14mm; }
@media print {
  body { margin: 0; max-width: none; font-size: 10pt; }
  th, #job td:first-child { background: none; }
  #bench-log { break-before: page; page-break-before: always; }
  h2, h3 { break-after: avoid; page-break-after: avoid; }
  tr, .warn { break-inside: avoid; page-break-inside: avoid; }
  #job table, #parts table, #before-after table, #safety table, #checks table { break-inside: avoid; page-break-inside: avoid; }
}
`

// swapWords says the swap test's result in plain words, "" when it was
// not recorded.
func swapWords(sw *procedures.SwapTest) string {
	if sw == nil {
		return ""
	}
	valves := strings.ReplaceAll(strings.ReplaceAll(sw.Valves, "/", " and "), ",", "; ")
	switch sw.Result {
	case procedures.SwapFollows:
		return fmt.Sprintf("Swap test (%s exchanged between the channels): the fault moved with the valve, so the valve is the cause.", valves)
	case procedures.SwapStays:
		return fmt.Sprintf("Swap test (%s exchanged between the channels): the fault stayed on its channel, so those valves are not the cause.", valves)
	}
	return fmt.Sprintf("Swap test (%s exchanged between the channels): not tried.", valves)
}

// loadWords names the dummy load a power figure was read into ("8 Ω
// dummy load"; "dummy load" when its ohms were not given).
func loadWords(ohms float64) string {
	if ohms <= 0 {
		return "dummy load"
	}
	return cVal(ohms, "Ω") + " dummy load"
}
