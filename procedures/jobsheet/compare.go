package jobsheet

import (
	"fmt"
	"io"
	"math"
	"strings"

	"pinwalk/procedures"
)

// CompareRow is one point read in either session.
type CompareRow struct {
	Point, Label, Unit string
	Variac             float64
	Low, High          float64
	HasBand            bool
	Old, New           *procedures.Reading
}

// Comparison is two sessions of the same amp, point by point: before and
// after a repair.
type Comparison struct {
	Old, New *Sheet
	Rows     []CompareRow
}

// Compare pairs the last accepted reading of every point (at each variac
// setting) of two sessions, in the new session's order, then points read
// only in the old one. The band shown is the new session's (the old one's
// when the new session did not read the point).
func Compare(old, new *Sheet) *Comparison {
	c := &Comparison{Old: old, New: new}
	index := map[string]int{}
	add := func(rows []ReadingRow, isNew bool) {
		for i := range rows {
			r := &rows[i]
			if r.Status == procedures.Retry {
				continue
			}
			key := fmt.Sprintf("%s@%g", r.Point, r.Variac)
			j, ok := index[key]
			if !ok {
				c.Rows = append(c.Rows, CompareRow{Point: r.Point.String(), Label: r.Label, Unit: r.Unit, Variac: r.Variac})
				j = len(c.Rows) - 1
				index[key] = j
			}
			cr := &c.Rows[j]
			rd := r.Reading
			if isNew {
				cr.New = &rd
				if r.HasBand {
					cr.Low, cr.High, cr.HasBand = r.Low, r.High, true
				}
			} else {
				cr.Old = &rd
				if r.HasBand && !cr.HasBand {
					cr.Low, cr.High, cr.HasBand = r.Low, r.High, true
				}
			}
		}
	}
	add(new.Readings, true)
	add(old.Readings, false)
	return c
}

func (c *Comparison) document() *document {
	doc := &document{Title: "Before and after: " + orDash(c.New.Title)}
	top := docSection{ID: "sessions", Title: "Sessions"}
	if c.Old.DesignHash != c.New.DesignHash {
		top.warn(fmt.Sprintf("The two sessions were taken against different design files (sha256 %s and %s): bands may differ.", short(c.Old.DesignHash), short(c.New.DesignHash)))
	}
	if c.Old.Session.Bench.AmpID != c.New.Session.Bench.AmpID {
		top.warn(fmt.Sprintf("The sessions name different amps (%s and %s).", orDash(c.Old.Session.Bench.AmpID), orDash(c.New.Session.Bench.AmpID)))
	}
	for _, sh := range []*Sheet{c.Old, c.New} {
		for _, k := range sh.Skips {
			if k.Safety {
				top.warn(fmt.Sprintf("Session of %s skipped a safety step: %s. Reason given: %s", sh.Started.Format(TimeLayout), k.Title, k.Reason))
			}
		}
	}
	top.table(&table{Head: []string{"Item", "Before", "After"}, Rows: [][]string{
		{"Session", ModeText(c.Old.Mode), ModeText(c.New.Mode)},
		{"Started", c.Old.Started.Format(TimeLayout + " MST"), c.New.Started.Format(TimeLayout + " MST")},
		{"Amp", orDash(c.Old.Session.Bench.AmpID), orDash(c.New.Session.Bench.AmpID)},
		{"Mains", mainsText(c.Old), mainsText(c.New)},
		{"Technician", orDash(c.Old.Session.Bench.Who), orDash(c.New.Session.Bench.Who)},
		{"Confirmed fault", orDash(c.Old.Found), orDash(c.New.Found)},
		{"Parts replaced", orDash(joinComma(c.Old.Replaced)), orDash(joinComma(c.New.Replaced))},
	}})
	doc.Sections = append(doc.Sections, top)

	pts := docSection{ID: "points", Title: "Point by point"}
	t := &table{Head: []string{"Point", "What", "Variac", "Expected band", "Before", "After", "Change", "Status before", "Status after"},
		Numeric: []bool{false, false, true, false, true, true, true, false, false}}
	fixed, broke := 0, 0
	for _, r := range c.Rows {
		band := "–"
		if r.HasBand {
			band = fmtBand(r.Low, r.High, r.Unit)
		}
		oldV, newV, change, so, sn := "not read", "not read", "–", "–", "–"
		if r.Old != nil {
			oldV, so = fmtVal(r.Old.Value, r.Unit), StatusText(r.Old.Status)
		}
		if r.New != nil {
			newV, sn = fmtVal(r.New.Value, r.Unit), StatusText(r.New.Status)
		}
		if r.Old != nil && r.New != nil && !math.IsInf(r.Old.Value, 0) && !math.IsInf(r.New.Value, 0) {
			d := r.New.Value - r.Old.Value
			change = fmtChange(d, r.Unit)
			if r.Old.Value != 0 && d != 0 {
				change += strings.Replace(fmt.Sprintf(" (%+.1f %%)", 100*d/math.Abs(r.Old.Value)), "-", "−", 1)
			}
			if r.Old.Status == procedures.OutOfBand && r.New.Status == procedures.InBand {
				fixed++
			}
			if r.Old.Status == procedures.InBand && r.New.Status == procedures.OutOfBand {
				broke++
			}
		}
		v := "–"
		if r.Variac > 0 {
			v = pct(r.Variac, 1)
		}
		t.Rows = append(t.Rows, []string{r.Point, r.Label, v, band, oldV, newV, change, so, sn})
		t.Strong = append(t.Strong, (r.Old != nil && r.Old.Status == procedures.OutOfBand) || (r.New != nil && r.New.Status == procedures.OutOfBand))
	}
	pts.para("%d point(s) compared; %d back in band after being out of band; %d now out of band that were in band before.", len(c.Rows), fixed, broke)
	pts.table(t)
	doc.Sections = append(doc.Sections, pts)
	return doc
}

func mainsText(sh *Sheet) string {
	if sh.Session.Bench.Mains > 0 {
		return fmtVal(sh.Session.Bench.Mains, "V")
	}
	return "not stated"
}

func joinComma(s []string) string {
	out := ""
	for i, x := range s {
		if i > 0 {
			out += ", "
		}
		out += x
	}
	return out
}

// Markdown writes the comparison as GitHub-flavoured Markdown.
func (c *Comparison) Markdown(w io.Writer) error { return c.document().markdown(w) }

// HTML writes the comparison as one self-contained HTML file.
func (c *Comparison) HTML(w io.Writer) error { return c.document().html(w) }
