package jobsheet

import (
	"math"
	"strconv"
	"strings"

	"pinwalk/expect/units"
	"pinwalk/procedures"
)

func short(h string) string {
	if len(h) > 12 {
		return h[:12] + "…"
	}
	return h
}

// fmtVal prints a value with its unit, 3 significant figures with an SI
// prefix; an infinite resistance prints as "open (OL)".
func fmtVal(v float64, unit string) string {
	if math.IsInf(v, 1) && unit == "Ω" {
		return "open (OL)"
	}
	if math.IsInf(v, 0) || math.IsNaN(v) {
		return "no limit"
	}
	q := units.BySymbol(unit)
	if q == units.None {
		return strconv.FormatFloat(v, 'g', 3, 64) + unit
	}
	return units.Format(clean(v), q)
}

// fmtBand prints a band "261 V to 298 V".
func fmtBand(lo, hi float64, unit string) string {
	switch {
	case math.IsInf(lo, 1) && unit == "Ω":
		return "open (OL)"
	case math.IsInf(hi, 1):
		if unit == "Ω" {
			return fmtVal(lo, unit) + " or more, up to open"
		}
		return fmtVal(lo, unit) + " or more"
	case math.IsInf(lo, -1):
		return fmtVal(hi, unit) + " or less"
	}
	return fmtVal(lo, unit) + " to " + fmtVal(hi, unit)
}

// fmtChange prints a signed difference with its unit.
func fmtChange(d float64, unit string) string {
	if d > 0 {
		return "+" + fmtVal(d, unit)
	}
	if d < 0 {
		return "−" + fmtVal(-d, unit)
	}
	return "no change"
}

// StatusText gives a status as a symbol and a word, so that it never
// depends on colour.
func StatusText(s procedures.Status) string {
	switch s {
	case procedures.InBand:
		return "✓ in band"
	case procedures.OutOfBand:
		return "✗ OUT OF BAND"
	case procedures.Retry:
		return "? re-measure"
	case procedures.Done:
		return "• recorded"
	case procedures.Skipped:
		return "– skipped"
	}
	if s == "" {
		return "–"
	}
	return string(s)
}

// ModeText names a session mode.
func ModeText(m procedures.Mode) string {
	switch m {
	case procedures.BringUp:
		return "bring-up"
	case procedures.FaultFind:
		return "fault-finding"
	case procedures.Training:
		return "training"
	case procedures.Practise:
		return "practice"
	}
	return string(m)
}

func pct(v, of float64) string {
	if of <= 0 {
		return "–"
	}
	return strconv.FormatFloat(100*v/of, 'f', 0, 64) + " %"
}

// variacText says how the amp was powered, from the variac fractions its
// readings were taken at (0: unpowered): "not powered" when no reading
// was taken with mains applied, "not used" only when every powered
// reading was at full mains.
func variacText(vs []float64) string {
	var parts []string
	powered, reduced := false, false
	for _, v := range vs {
		if v <= 0 {
			continue
		}
		powered = true
		if v < 0.99 {
			reduced = true
		}
		parts = append(parts, strconv.FormatFloat(100*v, 'f', 0, 64)+" %")
	}
	switch {
	case !powered:
		return "not powered: no reading was taken with mains applied"
	case !reduced:
		return "not used: powered at full mains"
	}
	return "readings at " + strings.Join(parts, ", ") + " of mains"
}
