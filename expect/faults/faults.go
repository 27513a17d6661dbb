// Package faults describes single-part faults of an amplifier and applies
// them to a model's part values (amp.Values), so that the whole-amp solver
// can predict what every pin reads with the fault in place.
//
// A fault is a part reference and a mode ("R7:open"). Which modes apply
// depends on the part's kind:
//
//	resistor            open, short, high (drifted up: value ×2; carbon
//	                    resistors drift high with age and heat, common practice)
//	pot                 open (the wiper lifted off the track; see Apply)
//	capacitor           short, leaky, open
//	choke               open
//	output-transformer  open (single-ended: the primary; push-pull: the
//	                    centre-tap lead, both halves); "OT1.a"/"OT1.b": the
//	                    half to the first / second end of a push-pull primary
//	                    (with its screen-tap segments); "OT1.sec": a wired
//	                    secondary (secondary: {hot: SPK}) open
//	power-transformer   open (the HT winding), heater-open (the heater
//	                    windings feeding amplifying valves)
//	rectifier (silicon) open (every diode), half-open (one diode of a
//	                    full-wave centre-tap rectifier), short (one diode
//	                    shorted: see Apply)
//	valve               weak, dead, heater-open; a valve rectifier also
//	                    half-open (one plate of a full-wave rectifier)
//	fuse                open (a mains fuse: nothing is powered)
//	bias-supply         dead (its output falls to 0 V)
//	dc-supply           dead
package faults

import (
	"errors"
	"fmt"
	"math"
	"sort"
	"strings"

	"pinwalk/expect/amp"
	"pinwalk/expect/design"
	"pinwalk/expect/supply"
	"pinwalk/expect/units"
	"pinwalk/expect/valves"
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
	HalfOpen   Mode = "half-open"
)

// allModes lists every mode, for messages.
var allModes = []Mode{Open, Short, High, Leaky, Weak, Dead, HeaterOpen, HalfOpen}

// Fault is one part failed in one mode. Ref is a design reference, or for
// the halves of a push-pull output transformer's primary the reference with
// ".a" or ".b" (the half to the first or second end).
type Fault struct {
	Ref  string
	Mode Mode
}

// String returns "REF:mode", the form Parse reads.
func (f Fault) String() string { return f.Ref + ":" + string(f.Mode) }

// Model values used by Apply (fault magnitudes).
const (
	// HighFactor is the drift of a resistor gone high (common practice:
	// carbon-composition and carbon-film resistors drift upwards; double
	// is a typical "clearly out" value).
	HighFactor = 2.0
	// LeakyElectrolyticOhms and LeakyFilmOhms are the parallel resistance
	// of a leaky capacitor (common practice: a leaky electrolytic passes
	// milliamps at working volts, a leaky paper or film coupling capacitor
	// shows a few megohms).
	LeakyElectrolyticOhms = 20e3
	LeakyFilmOhms         = 5e6
	// OpenCapFraction is the capacitance left by an HT filter capacitor
	// gone open (dried out): a few percent (common practice).
	OpenCapFraction = 0.02
	// WeakFactor divides a worn valve's perveance: Koren's KG1 (and KG2
	// for pentodes) multiplied by it, so plate current at a given bias
	// falls well under normal (common practice for a valve that tests
	// "weak" on an emission tester).
	WeakFactor = 2.5
	// WeakRectScale is a worn valve rectifier's perveance scale (common
	// practice: a worn rectifier drops noticeably more volts).
	WeakRectScale = 0.3
	// SeriesOpenOhms and SeriesShortOhms stand for an open or shorted
	// series element of the HT filter (a resistor or choke between two
	// filter stages): the supply simulation needs a finite, nonzero series
	// resistance. 1 TΩ is open for every purpose here; 10 mΩ is a solder
	// bridge.
	SeriesOpenOhms  = 1e11
	SeriesShortOhms = 1e-2
	// ShortedCapOhms is what a shorted capacitor leaves across its ends,
	// and ShortedCapLoOhms–ShortedCapHiOhms the spread an ohmmeter finds on
	// one: an electrolytic that has broken down reads anywhere from a
	// fraction of an ohm to a few hundred ohms, a punctured film capacitor
	// much the same (common practice). Powered it is 0 Ω (see Apply): the
	// supply collapses and would blow the mains fuse.
	ShortedCapOhms   = 10.0
	ShortedCapLoOhms = 0.01
	ShortedCapHiOhms = 500.0
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

// splitRef splits "OT1.a" into the part and its winding ("a", "b", "sec"
// or "").
func splitRef(m *amp.Model, ref string) (*design.Part, string) {
	if p := m.D.ByRef[ref]; p != nil {
		return p, ""
	}
	if i := strings.LastIndex(ref, "."); i > 0 {
		half := ref[i+1:]
		if p := m.D.ByRef[ref[:i]]; p != nil && p.Kind == design.OutputTransformer &&
			(p.OT.Centre != "" && (half == "a" || half == "b") || p.OT.SecHot != "" && half == SecondaryWinding) {
			return p, half
		}
	}
	return nil, ""
}

// SecondaryWinding is the suffix of an output transformer's wired
// secondary in a fault reference ("OT1.sec").
const SecondaryWinding = "sec"

// Modes returns the modes that apply to a part (or a push-pull output
// transformer half, "OT1.a"), in a fixed order; nil for an unknown
// reference or a part with no modelled fault.
func Modes(m *amp.Model, ref string) []Mode {
	p, half := splitRef(m, ref)
	if p == nil {
		return nil
	}
	if half != "" {
		return []Mode{Open}
	}
	switch p.Kind {
	case design.Resistor:
		return []Mode{Open, Short, High}
	case design.Pot:
		return []Mode{Open}
	case design.Capacitor:
		return []Mode{Short, Leaky, Open}
	case design.Choke, design.OutputTransformer:
		return []Mode{Open}
	case design.PowerTransformer:
		var out []Mode
		if m.HT != nil && m.HT.Transformer == p {
			out = append(out, Open)
		}
		if len(heaterSections(m, p)) > 0 {
			out = append(out, HeaterOpen)
		}
		return out
	case design.Rectifier:
		if m.HT == nil || m.HT.Rectifier != p {
			return nil
		}
		if m.HT.Topology == supply.CentreTap {
			return []Mode{Open, HalfOpen, Short}
		}
		return []Mode{Open, Short}
	case design.Valve:
		if p.Valve.Type.Kind == valves.Rectifier {
			if m.HT == nil || m.HT.Rectifier != p {
				return nil
			}
			out := []Mode{Weak, Dead, HeaterOpen}
			if m.HT.Topology == supply.CentreTap {
				out = append(out, HalfOpen)
			}
			return out
		}
		if len(sectionsOf(m, p.Ref)) == 0 {
			return nil
		}
		return []Mode{Weak, Dead, HeaterOpen}
	case design.Fuse:
		if mainsFuse(m.D, p) {
			return []Mode{Open}
		}
	case design.BiasSupply, design.DCSupply:
		return []Mode{Dead}
	}
	return nil
}

// mainsFuse reports whether a fuse is on the mains side (one of its nets
// is a mains-inlet live or neutral, or a power transformer primary end):
// the model has no other place for a fuse.
func mainsFuse(d *design.Design, f *design.Part) bool {
	mains := map[string]bool{}
	for _, p := range d.PartsOfKind(design.MainsInlet) {
		for _, t := range p.Terminals {
			if t.Name != "earth" {
				mains[t.Net] = true
			}
		}
	}
	for _, p := range d.PartsOfKind(design.PowerTransformer) {
		for _, e := range p.PT.PrimaryEnds {
			if e != "" {
				mains[e] = true
			}
		}
	}
	for _, t := range f.Terminals {
		if mains[t.Net] {
			return true
		}
	}
	return false
}

func sectionsOf(m *amp.Model, ref string) []int {
	var out []int
	for i, s := range m.Sections {
		if s.Ref == ref {
			out = append(out, i)
		}
	}
	return out
}

// heaterSections returns the amplifying sections whose heaters a power
// transformer feeds.
func heaterSections(m *amp.Model, pt *design.Part) []int {
	fed := map[string]bool{}
	for _, h := range m.Heaters {
		if h.Transformer == pt.PT {
			fed[h.Ref] = true
		}
	}
	var out []int
	for i, s := range m.Sections {
		if fed[s.Ref] {
			out = append(out, i)
		}
	}
	return out
}

// refs returns every fault reference of a model in design order
// (push-pull output transformers add their halves after themselves).
func refs(m *amp.Model) []string {
	var out []string
	for _, p := range m.D.Parts {
		out = append(out, p.Ref)
		if p.Kind == design.OutputTransformer && p.OT.Centre != "" {
			out = append(out, p.Ref+".a", p.Ref+".b")
		}
		if p.Kind == design.OutputTransformer && p.OT.SecHot != "" {
			out = append(out, p.Ref+"."+SecondaryWinding)
		}
	}
	return out
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

// All returns every single fault of every part: parts in design order,
// modes in Modes order.
func All(m *amp.Model) []Fault {
	var out []Fault
	for _, r := range refs(m) {
		for _, md := range Modes(m, r) {
			out = append(out, Fault{Ref: r, Mode: md})
		}
	}
	return out
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

// Apply puts a fault into v, in place. It returns Check's error for a
// fault that does not apply, and leaves v unchanged then.
//
// Modelling choices: an open element is an infinite resistance, a short
// 0 Ω (the solver keeps it at 1 mΩ). A pot's wiper lifted off the track is
// both of its halves open: the model has no separate end-to-end track
// element, so the track's own path between its ends is lost too. An open
// HT filter capacitor keeps OpenCapFraction of its capacitance in its
// filter stage; an open capacitor of any kind is recorded in v.CapOpen
// (see OpenCapacitors) for AC analysis. A dead supply (open HT winding,
// open silicon rectifier, dead or heater-open valve rectifier, open
// mains fuse) conducts nothing into the filter: an open winding or fuse
// sets the HT volts scale to 0 (no volts at the rectifier plates either),
// a dead rectifier or an open choke-input choke sets RectDead (the
// winding keeps its volts). An open mains fuse
// also opens every heater and kills the bias supplies. A valve
// rectifier's heater load stays on its winding when its heater opens.
//
// A shorted silicon diode (Rectifier short) puts AC across the reservoir
// and, in a full-wave or bridge rectifier, shorts the HT winding through
// the diode opposite it every other half-cycle: the mains fuse blows at
// switch-on (common practice: the usual cause of a fuse that blows with
// silicon rectifiers). The supply model has no reverse conduction, so the
// fault is modelled as what the bench then shows: the fuse gone, nothing
// powered (as an open mains fuse), whether or not the design draws a fuse.
// Its cold signature is in expect/cold: the diode's anode and cathode
// joined.
func Apply(m *amp.Model, v *amp.Values, f Fault) error {
	if err := Check(m, f); err != nil {
		return err
	}
	p, half := splitRef(m, f.Ref)
	setSlots := func(ix []int, val float64) {
		for _, i := range ix {
			v.Slot[i] = val
		}
	}
	seriesString(m, v, p, f)
	open, short := math.Inf(1), 0.0
	if htSeries(m, p.Ref) {
		open, short = SeriesOpenOhms, SeriesShortOhms
	}
	switch p.Kind {
	case design.Resistor:
		ix := slotsWithRole(m, p.Ref, "")
		switch f.Mode {
		case Open:
			setSlots(ix, open)
		case Short:
			setSlots(ix, short)
		case High:
			for _, i := range ix {
				v.Slot[i] *= HighFactor
			}
		}
	case design.Pot:
		setSlots(slotsWithRole(m, p.Ref, "a-wiper", "wiper-b"), math.Inf(1))
	case design.Capacitor:
		ix := slotsWithRole(m, p.Ref, "leak")
		switch f.Mode {
		case Short:
			// Powered, a broken-down capacitor carries amps and
			// burns to a hard short: 0 Ω (ShortedCapOhms is its cold
			// reading).
			setSlots(ix, 0)
		case Leaky:
			r := LeakyFilmOhms
			if p.Material == "electrolytic" {
				r = LeakyElectrolyticOhms
			}
			for _, i := range ix {
				v.Slot[i] = parallel(v.Slot[i], r)
			}
		case Open:
			if v.CapOpen == nil {
				v.CapOpen = map[string]bool{}
			}
			v.CapOpen[p.Ref] = true
			if m.HT != nil {
				for st, caps := range m.HT.CapRefs {
					total := 0.0
					mine := 0.0
					for _, r := range caps {
						c := m.D.ByRef[r].Value
						total += c
						if r == p.Ref {
							mine = c
						}
					}
					if mine > 0 && st < len(v.StageC) {
						v.StageC[st] *= (total - (1-OpenCapFraction)*mine) / total
					}
				}
			}
		}
	case design.Choke:
		ix := slotsWithRole(m, p.Ref, "dcr")
		if len(ix) == 0 {
			// A choke-input filter's choke lives in the supply model:
			// open, nothing leaves the rectifier.
			v.RectDead = true
		}
		setSlots(ix, open)
	case design.OutputTransformer:
		switch half {
		case "a", "b":
			setSlots(slotsWithRole(m, p.Ref, design.HalfRoles(half)...), math.Inf(1))
		case SecondaryWinding:
			setSlots(slotsWithRole(m, p.Ref, "secondary"), math.Inf(1))
		default:
			setSlots(slotsWithRole(m, p.Ref, append(append([]string{"primary"}, design.HalfRoles("a")...), design.HalfRoles("b")...)...), math.Inf(1))
		}
	case design.PowerTransformer:
		switch f.Mode {
		case Open:
			v.HTVolts = 0
		case HeaterOpen:
			for _, i := range heaterSections(m, p) {
				v.Emission[i] = -1
			}
		}
	case design.Rectifier:
		switch f.Mode {
		case Open:
			v.RectDead = true
		case HalfOpen:
			v.HalfOpen = true
		case Short:
			blowFuse(m, v, setSlots)
		}
	case design.Valve:
		if p.Valve.Type.Kind == valves.Rectifier {
			switch f.Mode {
			case Weak:
				v.RectScale *= WeakRectScale
			case Dead, HeaterOpen:
				v.RectDead = true
			case HalfOpen:
				v.HalfOpen = true
			}
			return nil
		}
		for _, i := range sectionsOf(m, p.Ref) {
			switch f.Mode {
			case Weak:
				v.Koren[i].KG1 *= WeakFactor
				if v.Koren[i].KG2 > 0 {
					v.Koren[i].KG2 *= WeakFactor
				}
			case Dead:
				v.Emission[i] = 0
			case HeaterOpen:
				v.Emission[i] = -1
			}
		}
	case design.Fuse:
		blowFuse(m, v, setSlots)
	case design.BiasSupply, design.DCSupply:
		setSlots(slotsWithRole(m, p.Ref, "volts"), 0)
	}
	return nil
}

// blowFuse puts an open mains fuse into v: no HT, no heaters, no bias.
func blowFuse(m *amp.Model, v *amp.Values, setSlots func([]int, float64)) {
	v.HTVolts = 0
	for i := range v.Emission {
		v.Emission[i] = -1
	}
	for _, b := range m.D.PartsOfKind(design.BiasSupply) {
		setSlots(slotsWithRole(m, b.Ref, "volts"), 0)
	}
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

// Describe returns a technician's description of a fault:
// "R7 (470 Ω) open circuit".
func Describe(f Fault, m *amp.Model) string {
	p, half := splitRef(m, f.Ref)
	if p == nil {
		return f.String()
	}
	val := ""
	switch p.Kind {
	case design.Resistor, design.Pot:
		val = units.Format(p.Value, units.Ohms)
	case design.Capacitor:
		val = units.Format(p.Value, units.Farads)
		if p.Material != "" {
			val += " " + p.Material
		}
	case design.Choke:
		val = units.Format(p.Value, units.Henries)
	case design.Valve:
		val = p.Valve.Type.Name
	case design.BiasSupply, design.DCSupply:
		val = units.Format(p.Value, units.Volts)
	case design.Fuse:
		val = units.Format(p.Value, units.Amps)
	}
	name := f.Ref
	if val != "" {
		name += " (" + val + ")"
	}
	switch p.Kind {
	case design.Resistor:
		switch f.Mode {
		case Open:
			return name + " open circuit"
		case Short:
			return name + " short circuit"
		case High:
			return fmt.Sprintf("%s drifted high (about ×%g)", name, HighFactor)
		}
	case design.Pot:
		return name + " wiper open (lifted off the track)"
	case design.Capacitor:
		switch f.Mode {
		case Short:
			return name + " shorted"
		case Leaky:
			r := LeakyFilmOhms
			if p.Material == "electrolytic" {
				r = LeakyElectrolyticOhms
			}
			return fmt.Sprintf("%s leaky (about %s across it)", name, units.Format(r, units.Ohms))
		case Open:
			return name + " open (dried out or a broken lead)"
		}
	case design.Choke:
		return name + " winding open"
	case design.OutputTransformer:
		switch half {
		case "a":
			return fmt.Sprintf("%s primary half %s–%s open", p.Ref, p.OT.Centre, p.OT.Ends[0])
		case "b":
			return fmt.Sprintf("%s primary half %s–%s open", p.Ref, p.OT.Centre, p.OT.Ends[1])
		case SecondaryWinding:
			return fmt.Sprintf("%s secondary %s–%s open (no sound; feedback taken from the speaker is lost)", p.Ref, p.OT.SecHot, p.OT.SecCold)
		}
		if p.OT.Centre != "" {
			return name + " primary centre-tap lead open (both halves)"
		}
		return name + " primary open"
	case design.PowerTransformer:
		if f.Mode == HeaterOpen {
			return name + " heater winding open (no valve lights)"
		}
		return name + " HT winding open (no B+)"
	case design.Rectifier:
		if f.Mode == HalfOpen {
			return name + " one diode open (half-wave operation, more ripple)"
		}
		if f.Mode == Short {
			return name + " one diode shorted (shorts the HT winding: the mains fuse blows)"
		}
		return name + " open (no B+)"
	case design.Valve:
		switch f.Mode {
		case Weak:
			if p.Valve.Type.Kind == valves.Rectifier {
				return name + " weak (low emission: extra drop, low B+)"
			}
			return name + " weak (low emission: plate current well under normal)"
		case Dead:
			if p.Valve.Type.Kind == valves.Rectifier {
				return name + " dead (no B+)"
			}
			return name + " dead (no emission: no plate current)"
		case HeaterOpen:
			return name + " heater open (valve does not light)"
		case HalfOpen:
			return name + " one plate open (half-wave operation, more ripple)"
		}
	case design.Fuse:
		return name + " open (nothing powered)"
	case design.BiasSupply, design.DCSupply:
		return name + " dead (output at 0 V)"
	}
	return name + " " + string(f.Mode)
}

// --- the series heater string of a transformerless set ---------------------

// seriesString applies what a fault does to the series heater string: a
// heater open anywhere in it (an amplifying valve's or the rectifier's)
// breaks the string, and no valve in it lights. (An open dropper is its
// resistor slot at +Inf, which the string model reads itself.)
func seriesString(m *amp.Model, v *amp.Values, p *design.Part, f Fault) {
	if m.String == nil || f.Mode != HeaterOpen || p.Kind != design.Valve {
		return
	}
	for _, ref := range m.String.Valves {
		if ref == p.Ref {
			v.StringOpen = true
		}
	}
}
