package jobsheet

import (
	"fmt"
	"strings"

	"pinwalk/expect/faults"
	"pinwalk/procedures"
)

// The sheet is first laid out as a small document (sections of headings,
// paragraphs, warnings, lists, tables and plots) that the Markdown and HTML
// renderers both walk, so the two always carry the same content.

type blockKind int

const (
	bPara    blockKind = iota
	bWarn              // shown prominently
	bHeading           // a sub-heading inside a section
	bList
	bTable
	bSVG // HTML only; Markdown shows the caption
)

type table struct {
	Head []string
	Rows [][]string
	// Strong marks rows to emphasise (out of band, safety skips).
	Strong []bool
	// Numeric marks right-aligned columns.
	Numeric []bool
}

type block struct {
	Kind  blockKind
	Text  string
	Items []string
	Table *table
	SVG   string
}

type docSection struct {
	ID, Title string
	Blocks    []block
}

type document struct {
	Title    string
	Sections []docSection
	CSS      string // the HTML style ("": the bench sheet's)
}

func (s *docSection) para(format string, args ...any) {
	s.Blocks = append(s.Blocks, block{Kind: bPara, Text: fmt.Sprintf(format, args...)})
}
func (s *docSection) warn(text string) { s.Blocks = append(s.Blocks, block{Kind: bWarn, Text: text}) }
func (s *docSection) heading(text string) {
	s.Blocks = append(s.Blocks, block{Kind: bHeading, Text: text})
}
func (s *docSection) list(items []string) {
	s.Blocks = append(s.Blocks, block{Kind: bList, Items: items})
}
func (s *docSection) table(t *table) { s.Blocks = append(s.Blocks, block{Kind: bTable, Table: t}) }
func (s *docSection) svg(svg, caption string) {
	s.Blocks = append(s.Blocks, block{Kind: bSVG, SVG: svg, Text: caption})
}

func nonEmpty(ss ...string) []string {
	var out []string
	for _, s := range ss {
		if strings.TrimSpace(s) != "" {
			out = append(out, s)
		}
	}
	return out
}

func orDash(s string) string {
	if strings.TrimSpace(s) == "" {
		return "–"
	}
	return s
}

func (sh *Sheet) title(id string) string {
	if t, ok := sh.StepTitle[id]; ok && t != "" {
		return t
	}
	return id
}

// document lays out the sheet.
func (sh *Sheet) document() *document {
	s := sh.Session
	doc := &document{Title: "Job sheet: " + orDash(sh.Title)}

	// Amp and design.
	top := docSection{ID: "amp", Title: "Amp and design"}
	for _, w := range sh.Warnings {
		top.warn(w)
	}
	hash := sh.DesignHash
	switch {
	case sh.LoadedHash == "":
		hash += " (design not loaded: not checked)"
	case sh.LoadedHash == sh.DesignHash:
		hash += " (matches the design file)"
	default:
		hash += " (DIFFERS from the design file now: " + sh.LoadedHash + ")"
	}
	top.table(&table{Head: []string{"Item", "Value"}, Rows: [][]string{
		{"Amp", orDash(s.Bench.AmpID)},
		{"Design", orDash(sh.Title)},
		{"Design file", orDash(sh.DesignFile)},
		{"Design sha256", hash},
		{"Session", ModeText(sh.Mode)},
		{"Date", sh.Started.Format("2006-01-02")},
		{"Started", sh.Started.Format(TimeLayout + " MST")},
		{"Last change", sh.Updated.Format(TimeLayout + " MST")},
	}})
	// Job intake, when the session has it.
	var intake [][]string
	for _, r := range [][2]string{{"Customer", s.Job.Customer}, {"Serial", s.Bench.Serial}, {"Complaint", s.Job.Complaint}, {"Channel", s.Job.Channel}, {"Swap test", swapWords(s.Job.Swap)}} {
		if strings.TrimSpace(r[1]) != "" {
			intake = append(intake, []string{r[0], r[1]})
		}
	}
	if len(intake) > 0 {
		top.heading("Job intake")
		top.table(&table{Head: []string{"Item", "Value"}, Rows: intake})
	}
	if len(s.Job.Visual) > 0 {
		top.heading("Visual inspection")
		top.list(s.Job.Visual)
	}
	if len(s.Symptoms) > 0 {
		top.heading("Symptoms reported")
		top.list(s.Symptoms)
	}
	doc.Sections = append(doc.Sections, top)

	// Conditions.
	cond := docSection{ID: "conditions", Title: "Bench conditions"}
	mains := "not stated"
	if s.Bench.Mains > 0 {
		mains = fmtVal(s.Bench.Mains, "V") + " at the wall, as stated"
	} else if sh.Mains > 0 {
		mains = "not stated: the design's " + fmtVal(sh.Mains, "V") + " assumed"
	}
	cond.table(&table{Head: []string{"Condition", "Value"}, Rows: [][]string{
		{"Mains", mains},
		{"Variac", variacText(sh.Variacs)},
		{"Meter", orDash(s.Bench.Meter)},
		{"Technician", orDash(s.Bench.Who)},
	}})
	doc.Sections = append(doc.Sections, cond)

	// Safety.
	saf := docSection{ID: "safety", Title: "Safety checks"}
	var safetySkips []SkipRow
	for _, k := range sh.Skips {
		if k.Safety {
			safetySkips = append(safetySkips, k)
		}
	}
	if len(safetySkips) > 0 {
		for _, k := range safetySkips {
			saf.warn(fmt.Sprintf("SKIPPED SAFETY STEP: %s at %s. Reason given: %s", k.Title, k.At.Format(TimeLayout), k.Reason))
		}
	}
	if len(sh.Safety) == 0 {
		saf.para("No safety step was confirmed in this session.")
	} else {
		t := &table{Head: []string{"Time", "Safety check", "Result"}}
		for _, c := range sh.Safety {
			res := c.Result
			if res == "" {
				res = "✓ done"
			}
			t.Rows = append(t.Rows, []string{c.At.Format(TimeLayout), c.Title, res})
			t.Strong = append(t.Strong, c.Bad)
		}
		saf.table(t)
	}
	if len(sh.Skips) > 0 {
		saf.heading("Skipped steps")
		t := &table{Head: []string{"Time", "Step", "Safety step", "Reason"}}
		for _, k := range sh.Skips {
			yes := "no"
			if k.Safety {
				yes = "⚠ YES"
			}
			t.Rows = append(t.Rows, []string{k.At.Format(TimeLayout), k.Title, yes, k.Reason})
			t.Strong = append(t.Strong, k.Safety)
		}
		saf.table(t)
	}
	doc.Sections = append(doc.Sections, saf)

	// Readings.
	rs := docSection{ID: "readings", Title: "Readings"}
	if len(sh.Readings) == 0 {
		rs.para("No readings were taken.")
	} else {
		rs.para("Every reading in the order taken, with the band expected when it was taken. A reading marked “re-measure” was just outside its band and was taken again.")
		t := &table{Head: []string{"Time", "Step", "Point", "What", "Variac", "Expected band", "Typed", "Reading", "Status"},
			Numeric: []bool{false, false, false, false, true, false, false, true, false}}
		for _, r := range sh.Readings {
			band := "–"
			if r.HasBand {
				band = fmtBand(r.Low, r.High, r.Unit)
			}
			v := "–"
			if r.Variac > 0 {
				v = pct(r.Variac, 1)
			}
			t.Rows = append(t.Rows, []string{r.At.Format("15:04"), sh.title(r.Step), r.Point.String(), r.Label, v, band,
				r.Raw, fmtVal(r.Value, r.Unit), StatusText(r.Status)})
			t.Strong = append(t.Strong, r.Status == procedures.OutOfBand)
		}
		rs.table(t)
	}
	doc.Sections = append(doc.Sections, rs)

	// Operating points.
	if len(sh.Valves) > 0 {
		ops := docSection{ID: "valves", Title: "Valve operating points"}
		ops.para("Expected: the design solved with nominal part values at %s mains. Measured: from this session's readings at full mains. Dissipation is shown as a percentage of the valve's maximum rating.", fmtVal(sh.Mains, "V"))
		t := &table{Head: []string{"Section", "Which", "Plate", "Screen", "Cathode", "Plate current", "Plate dissipation", "Of rating", "Screen dissipation", "Of rating"},
			Numeric: []bool{false, false, true, true, true, true, true, true, true, true}}
		row := func(v ValveSheet, which string, o OpPoint) {
			scr, pg2, pg2pct := "–", "–", "–"
			if v.Pentode {
				scr, pg2, pg2pct = fmtVal(o.Vg2, "V"), fmtVal(o.Pg2, "W"), pctFlag(o.Pg2, v.ScreenWattsMax)
			}
			ia, pa, papct := fmtVal(o.Ia, "A"), fmtVal(o.Pa, "W"), pctFlag(o.Pa, v.PlateWattsMax)
			if which == "measured" && o.How == "plate current not known from these readings" {
				ia, pa, papct, pg2, pg2pct = "–", "–", "–", "–", "–"
			}
			t.Rows = append(t.Rows, []string{v.Label, which, fmtVal(o.Va, "V"), scr, fmtVal(o.Vk, "V"), ia, pa, papct, pg2, pg2pct})
			t.Strong = append(t.Strong, o.Pa > v.PlateWattsMax && v.PlateWattsMax > 0)
		}
		var hows []string
		for _, v := range sh.Valves {
			row(v, "expected", v.Expected)
			if v.Measured != nil {
				row(v, "measured", *v.Measured)
				hows = append(hows, v.Name+": "+v.Measured.How)
			}
		}
		ops.table(t)
		if len(hows) > 0 {
			ops.heading("How the measured points were found")
			ops.list(hows)
		}
		for _, v := range sh.Valves {
			if v.Chart == nil {
				continue
			}
			ops.heading(v.Label)
			ops.svg(v.Chart.SVG(), v.Chart.Desc())
		}
		doc.Sections = append(doc.Sections, ops)
	}

	// Supply.
	if len(sh.Supply) > 0 {
		sup := docSection{ID: "supply", Title: "B+ chain"}
		sup.para("DC volts to chassis of each HT filter net, from the rectifier outwards, at full mains.")
		t := &table{Head: []string{"Net", "Expected", "Expected band", "Reading", "Status"}, Numeric: []bool{false, true, false, true, false}}
		for _, r := range sh.Supply {
			band, read, st := "–", "not read", "–"
			if r.HasBand {
				band = fmtBand(r.Low, r.High, "V")
			}
			if r.Reading != nil {
				read, st = fmtVal(r.Reading.Value, "V"), StatusText(r.Reading.Status)
			}
			t.Rows = append(t.Rows, []string{r.Net, fmtVal(r.Nominal, "V"), band, read, st})
			t.Strong = append(t.Strong, r.Reading != nil && r.Reading.Status == procedures.OutOfBand)
		}
		sup.table(t)
		sup.svg(SupplySVG(sh.Supply), "")
		doc.Sections = append(doc.Sections, sup)
	}

	// Findings.
	fd := docSection{ID: "findings", Title: "Findings"}
	if sh.Ranked {
		fd.heading("Suspects, most likely first")
	} else {
		fd.heading("Readings out of band, furthest first")
	}
	if len(sh.Suspects) == 0 {
		fd.para("None.")
	} else {
		t := &table{Head: []string{"Rank", "Suspect", "Evidence"}, Numeric: []bool{true, false, false}}
		for i, x := range sh.Suspects {
			t.Rows = append(t.Rows, []string{fmt.Sprint(i + 1), x.Name, x.Why})
			t.Strong = append(t.Strong, false)
		}
		fd.table(t)
	}
	if sh.Ranked || sh.Mode == procedures.FaultFind || sh.Mode == procedures.Practise {
		// None of these is silently absent from a ranking that cannot see it.
		fd.heading("Not in the ranking (not modelled: check by other means)")
		var items []string
		for _, u := range faults.NotModelled() {
			items = append(items, u.Fault+": "+u.Why)
		}
		fd.list(items)
	}
	fd.heading("Outcome")
	fd.table(&table{Head: []string{"Item", "Value"}, Rows: [][]string{
		{"Confirmed fault", orDash(sh.Found)},
		{"Parts replaced", orDash(strings.Join(sh.Replaced, ", "))},
		{"Summary", orDash(sh.Summary)},
	}})
	if j := s.Job; len(j.Parts) > 0 || j.After.EarthBond != nil || j.After.Insulation != nil || len(j.After.PowerOut) > 0 || j.After.Soak != nil || j.SignOff != nil {
		fd.heading("Close-out")
		var rows [][]string
		for _, p := range j.Parts {
			rows = append(rows, []string{"Replaced " + p.Ref, strings.Join(nonEmpty(p.Value, p.Rating, p.Reason), "; ")})
		}
		eb, ins := sh.safetyVerdicts(j)
		rows = append(rows, []string{"Earth bond", eb.Result + ": " + eb.Verdict}, []string{"Insulation resistance", ins.Result + ": " + ins.Verdict})
		for _, p := range j.After.PowerOut {
			rows = append(rows, []string{"Power out, " + sh.ChannelName(p.Channel), strings.TrimSpace(fmtVal(p.Watts, "W") + " into " + loadWords(p.LoadOhms) + " " + p.Note)})
		}
		if j.After.Soak != nil {
			rows = append(rows, []string{"Soak", strings.Join(nonEmpty(durationWords(j.After.Soak.Duration), j.After.Soak.Note), ": ")})
		}
		if j.SignOff != nil {
			rows = append(rows, []string{"Signed off", j.SignOff.Name + ", " + timeZ(j.SignOff.At)})
		}
		fd.table(&table{Head: []string{"Item", "Value"}, Rows: rows})
	}
	if len(sh.Notes) > 0 {
		fd.heading("Notes")
		t := &table{Head: []string{"Time", "Step", "Note"}}
		for _, n := range sh.Notes {
			t.Rows = append(t.Rows, []string{n.At.Format(TimeLayout), orDash(sh.title(n.Step)), n.Text})
			t.Strong = append(t.Strong, false)
		}
		fd.table(t)
	}
	doc.Sections = append(doc.Sections, fd)

	// Training and practice.
	if sh.Mode == procedures.Training || sh.Mode == procedures.Practise || len(sh.Guesses) > 0 || len(sh.Attempts) > 0 || sh.Practice != nil {
		tr := docSection{ID: "training", Title: "Training"}
		tr.heading("Predictions")
		if len(sh.Guesses) == 0 {
			tr.para("No predictions were made.")
		} else {
			good := 0
			t := &table{Head: []string{"Time", "Point", "Predicted", "Band", "Result"}}
			for _, g := range sh.Guesses {
				unit := g.Point.Unit()
				res := "✗ outside the band"
				if g.Good {
					res = "✓ within the band"
					good++
				}
				t.Rows = append(t.Rows, []string{g.At.Format("15:04"), sh.Label(g.Point), g.Raw + " (" + fmtVal(g.Value, unit) + ")", fmtBand(g.Low, g.High, unit), res})
				t.Strong = append(t.Strong, false)
			}
			tr.para("%d of %d predictions within the band.", good, len(sh.Guesses))
			tr.table(t)
		}
		tr.heading("Path: attempts to go out of order")
		if len(sh.Attempts) == 0 {
			tr.para("None: every step was taken in order.")
		} else {
			t := &table{Head: []string{"Time", "Tried to start", "Blocked until done"}}
			for _, a := range sh.Attempts {
				t.Rows = append(t.Rows, []string{a.At.Format(TimeLayout), a.Title, a.Blocked})
				t.Strong = append(t.Strong, false)
			}
			tr.table(t)
		}
		if p := sh.Practice; p != nil {
			tr.heading("Practice")
			hidden := p.Fault
			if !p.Revealed && sh.Found == "" {
				hidden = "(not revealed yet)"
			}
			verdict := "–"
			if p.Named != "" {
				verdict = "✗ not the hidden fault"
				if p.Named == p.Fault {
					verdict = "✓ the hidden fault"
				}
				if !p.Revealed && sh.Found == "" {
					verdict = "(shown when revealed)"
				}
			}
			tr.table(&table{Head: []string{"Item", "Value"}, Rows: [][]string{
				{"Hidden fault", hidden},
				{"Fault named", orDash(p.Named)},
				{"Named correctly", verdict},
				{"Score", fmt.Sprint(p.Score)},
				{"Seed", fmt.Sprint(p.Seed)},
			}})
		}
		doc.Sections = append(doc.Sections, tr)
	}
	return doc
}

// pctFlag prints a percentage of a rating, flagged when over it.
func pctFlag(v, rating float64) string {
	if rating <= 0 {
		return "–"
	}
	s := pct(v, rating)
	if v > rating {
		s = "⚠ " + s + " OVER"
	}
	return s
}

// unitOfKey gives the unit of a point key from its quantity.
func unitOfKey(key string) string {
	_, q, _ := strings.Cut(key, " ")
	switch q {
	case "dc_volts", "ac_volts", "ripple_volts":
		return "V"
	case "dc_amps", "ac_amps":
		return "A"
	case "ohms":
		return "Ω"
	}
	return ""
}
