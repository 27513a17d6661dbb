// Package faults describes single-part faults of an amplifier and applies
// them to a model's part values (amp.Values), so that the whole-amp solver
// can predict what every pin reads with the fault in place.
//
// A fault is a part reference and a mode ("R7:open"). Each part kind
// declares its modes in its own file (kind_*.go, through register): how
// each changes the powered amp and the cold network, its description,
// prior weight, what the part reads out of circuit, and how to confirm
// and replace it. The functions of registry.go read those declarations.
package faults

import (
	"errors"
	"fmt"
	"math"
	"sort"
	"strings"

	"pinwalk/expect/amp"
	"pinwalk/expect/design"
)

// Mode is a way a part fails.
type Mode string

// Fault modes.
const (
	Open       Mode = "open"
	Short      Mode = "short"
	High       Mode = "high"
	Leaky      Mode = "leaky"
	Weak       Mode = "weak"
	Dead       Mode = "dead"
	HeaterOpen Mode = "heater-open"
	// CentreOpen: a winding's centre-tap lead broken (the winding itself
	// whole).
	CentreOpen Mode = "centre-open"
	// HKShort: a valve's heater broken down to its cathode.
	HKShort Mode = "hk-short"
	// ToChassis: a winding broken down to its core or frame (chassis).
	ToChassis Mode = "to-chassis"
	// Gassy: air leaked into a valve: ionic grid current.
	Gassy    Mode = "gassy"
	HalfOpen Mode = "half-open"
)

// allModes lists every mode, for messages.
var allModes = []Mode{Open, Short, High, Leaky, Weak, Dead, HeaterOpen, HalfOpen, CentreOpen, HKShort, ToChassis, Gassy}

// Fault is one part failed in one mode. Ref is a design reference, or for
// a subpart its kind declares the reference with the subpart ("OT1.a",
// "OT1.b": the half of a push-pull primary to its first or second end;
// "OT1.sec": a wired secondary).
type Fault struct {
	Ref  string
	Mode Mode
}

// String returns "REF:mode", the form Parse reads.
func (f Fault) String() string { return f.Ref + ":" + string(f.Mode) }

// SeriesOpenOhms and SeriesShortOhms stand for an open or shorted series
// element of the HT filter (a resistor or choke between two filter
// stages): the supply simulation needs a finite, nonzero series
// resistance. 1 TΩ is open for every purpose here; 10 mΩ is a solder
// bridge.
const (
	SeriesOpenOhms  = 1e11
	SeriesShortOhms = 1e-2
)

// Parse reads "REF:mode" (e.g. "R7:open", "OT1.a:open"). Spaces around
// either part are ignored. It does not check the reference against a
// design; use Check for that.
func Parse(s string) (Fault, error) {
	i := strings.LastIndex(s, ":")
	if i < 0 {
		return Fault{}, fmt.Errorf("fault %q: expected REF:MODE, e.g. R7:open (modes: %s)", s, modeList(allModes))
	}
	ref, mode := strings.TrimSpace(s[:i]), strings.TrimSpace(s[i+1:])
	if ref == "" {
		return Fault{}, fmt.Errorf("fault %q: missing the part reference: expected REF:MODE, e.g. R7:open", s)
	}
	for _, m := range allModes {
		if strings.EqualFold(mode, string(m)) {
			return Fault{Ref: ref, Mode: m}, nil
		}
	}
	hint := ""
	names := make([]string, len(allModes))
	for i, m := range allModes {
		names[i] = string(m)
	}
	if sug := design.Suggest(mode, names); len(sug) > 0 {
		hint = fmt.Sprintf(" (did you mean %q?)", sug[0])
	}
	return Fault{}, fmt.Errorf("fault %q: unknown mode %q%s: expected REF:MODE with MODE one of %s", s, mode, hint, modeList(allModes))
}

func modeList(ms []Mode) string {
	s := make([]string, len(ms))
	for i, m := range ms {
		s[i] = string(m)
	}
	return strings.Join(s, ", ")
}

// ErrUnknownRef and ErrMode are wrapped by Check's errors.
var (
	ErrUnknownRef = errors.New("unknown part")
	ErrMode       = errors.New("mode does not apply")
)

// Check reports whether a fault applies to a model: an unknown reference
// (wrapping ErrUnknownRef, with a did-you-mean suggestion) or a mode the
// part cannot have (wrapping ErrMode, listing the modes it can).
func Check(m *amp.Model, f Fault) error {
	p, _ := splitRef(m, f.Ref)
	if p == nil {
		hint := ""
		if sug := design.Suggest(f.Ref, refs(m)); len(sug) > 0 {
			hint = fmt.Sprintf(" (did you mean %s?)", strings.Join(sug, " or "))
		}
		return fmt.Errorf("fault %s: %w %q in %s%s", f, ErrUnknownRef, f.Ref, m.D.File, hint)
	}
	ms := Modes(m, f.Ref)
	for _, x := range ms {
		if x == f.Mode {
			return nil
		}
	}
	if len(ms) == 0 {
		return fmt.Errorf("fault %s: %w: %s (%s) has no modelled faults", f, ErrMode, f.Ref, p.Kind)
	}
	return fmt.Errorf("fault %s: %w to %s (%s): expected one of %s", f, ErrMode, f.Ref, p.Kind, modeList(ms))
}

func slotsWithRole(m *amp.Model, ref string, roles ...string) []int {
	var out []int
	for _, i := range m.SlotsOf(ref) {
		for _, r := range roles {
			if m.Slots[i].Role == r {
				out = append(out, i)
			}
		}
	}
	return out
}

// htSeries reports whether a part is a series element between HT filter
// stages.
func htSeries(m *amp.Model, ref string) bool {
	if m.HT == nil {
		return false
	}
	for i, r := range m.HT.SeriesRefs {
		if r == ref && (i > 0 || !m.HT.ChokeInput) {
			return true
		}
	}
	return false
}

func parallel(a, b float64) float64 {
	if math.IsInf(a, 1) {
		return b
	}
	if math.IsInf(b, 1) {
		return a
	}
	return a * b / (a + b)
}

// OpenCapacitors returns the references of the capacitors a fault
// hypothesis has gone open, sorted; nil when none.
func OpenCapacitors(v *amp.Values) []string {
	var out []string
	for r, open := range v.CapOpen {
		if open {
			out = append(out, r)
		}
	}
	sort.Strings(out)
	return out
}

// setSlots sets slots of v to one value.
func setSlots(v *amp.Values, ix []int, val float64) {
	for _, i := range ix {
		v.Slot[i] = val
	}
}

// mainSlots are a part's own element slots (a resistor's resistance).
func mainSlots(t Target) []int { return slotsWithRole(t.M, t.Part.Ref, "") }

// seriesOhms are what open and short mean for a part's element: infinite
// and 0 Ω, or SeriesOpenOhms and SeriesShortOhms for a series element of
// the HT filter.
func seriesOhms(t Target) (open, short float64) {
	if htSeries(t.M, t.Part.Ref) {
		return SeriesOpenOhms, SeriesShortOhms
	}
	return math.Inf(1), 0
}

// ofPart matches the cold-network edges of the fault's part.
func ofPart(t Target) func(e ColdEdge) bool {
	return func(e ColdEdge) bool { return e.Ref == t.Part.Ref }
}

// --- the series heater string of a transformerless set ---------------------

// breakString is what a heater open does to a series heater string: a
// heater open anywhere in it (an amplifying valve's or the rectifier's)
// breaks the string, and no valve in it lights. (An open dropper is its
// resistor slot at +Inf, which the string model reads itself.)
func breakString(v *amp.Values, t Target) {
	if t.M.String == nil {
		return
	}
	for _, ref := range t.M.String.Valves {
		if ref == t.Part.Ref {
			v.StringOpen = true
		}
	}
}
