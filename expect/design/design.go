// Package design holds the design file: the schema of an amplifier written
// as parts joined by named nets, its loader (with file, line and column on
// every problem) and its validation.
//
// A design file is YAML. Its top level has a schema version (`pinwalk: 1`),
// a title, the mains supply, default tolerances, the name of the chassis
// ground net and a mapping of parts keyed by their schematic reference. Each
// part names its kind with its main value (`R1: {resistor: 4K7, between:
// [B2, B3]}`); DEVELOPERS.md documents every field.
package design

import (
	"fmt"
	"sort"
	"strings"

	"pinwalk/expect/valves"
)

// SchemaVersion is the design-file version this build reads.
const SchemaVersion = 1

// Kind is a part kind as written in a design file.
type Kind string

// Part kinds.
const (
	Resistor          Kind = "resistor"
	Capacitor         Kind = "capacitor"
	Choke             Kind = "choke"
	PowerTransformer  Kind = "power-transformer"
	OutputTransformer Kind = "output-transformer"
	Rectifier         Kind = "rectifier"
	Valve             Kind = "valve"
	Pot               Kind = "pot"
	Fuse              Kind = "fuse"
	MainsInlet        Kind = "mains-inlet"
	BiasSupply        Kind = "bias-supply"
	DCSupply          Kind = "dc-supply" // a bench HT supply feeding a preamp under test
)

// Kinds lists every part kind, in the order the documentation gives them.
var Kinds = []Kind{Resistor, Capacitor, Choke, Pot, PowerTransformer, OutputTransformer,
	Rectifier, Valve, Fuse, MainsInlet, BiasSupply, DCSupply}

// Pos is a place in the design file (1-based line and column).
type Pos struct {
	Line, Col int
}

// Tolerance is an asymmetric tolerance as fractions: Lo ≤ 0 ≤ Hi
// (5 % is {-0.05, 0.05}; an electrolytic's −10 %/+50 % is {-0.1, 0.5}).
type Tolerance struct {
	Lo, Hi float64
}

// Mains is the supply the amplifier is plugged into.
type Mains struct {
	Volts float64 // rms
	Hz    float64
	Tol   Tolerance
}

// Defaults are per-design tolerances that parts inherit unless they say
// otherwise.
type Defaults struct {
	Resistor     Tolerance
	Capacitor    Tolerance // film, mica, ceramic, paper
	Electrolytic Tolerance
	Winding      Tolerance // DCR of chokes and transformer windings
}

// Terminal is one connection of a part to a net.
type Terminal struct {
	Name string // "a", "b", "plate", "pin 7", "HT.end", ...
	Net  string
	Pos  Pos
}

// Part is one schematic part.
type Part struct {
	Ref  string
	Kind Kind
	Pos  Pos // position of the reference key

	// Value is the main value in SI units: ohms (resistor, pot), farads
	// (capacitor), henries (choke), amps (fuse), volts (bias supply).
	Value float64
	Tol   Tolerance
	// Watts and Volts are ratings (0 when not given).
	Watts, Volts float64
	Material     string  // capacitor kind (electrolytic, film…) or resistor build (carbon-comp, metal-film…)
	DCR          float64 // chokes, bias supply source resistance
	RatedAmps    float64 // chokes
	Leakage      float64 // capacitors: parallel leakage resistance in ohms, 0 = none
	Setting      float64 // pots: wiper position 0..1 from end a
	// MainsFed: a bias or DC supply rectified from a winding of the power
	// transformer, whose output follows the mains and the variac
	// (mains-fed; default true for bias-supply, false for dc-supply).
	MainsFed    bool
	Placeholder []string
	Terminals   []Terminal
	Note        string

	Valve *ValvePart
	PT    *PowerTransformerPart
	OT    *OutputTransformerPart
	Rect  *RectifierPart

	fields map[string]Pos // every field's position, for later messages
}

// FieldPos returns the position of a field of the part ("watts",
// "between"), or the part's own position when the field is absent.
func (p *Part) FieldPos(field string) Pos {
	if pos, ok := p.fields[field]; ok {
		return pos
	}
	return p.Pos
}

// Net returns the net of the named terminal and whether it exists.
func (p *Part) Net(terminal string) (string, bool) {
	for _, t := range p.Terminals {
		if t.Name == terminal {
			return t.Net, true
		}
	}
	return "", false
}

// ValvePart is a valve envelope: its type and what each pin is wired to.
type ValvePart struct {
	Type *valves.Type
	// Sections maps a section name ("" for single-section valves, "A"/"B"
	// for double triodes) to electrode → net. An unused section maps every
	// electrode to ground.
	Sections map[string]map[string]string
	Unused   map[string]bool
	// HeaterNets are the two heater supply nets; HeaterVolts the wiring
	// chosen (6.3 or 12.6 on a double triode).
	HeaterNets  [2]string
	HeaterVolts float64
	HeaterAmps  float64
	// PinNets maps every used pin number to its net.
	PinNets map[int]string
}

// Winding is one secondary of a power transformer.
type Winding struct {
	Name      string
	Volts     float64 // rated rms at rated current: whole winding, or each half for a centre-tapped one
	CentreTap bool    // written as 250-0-250
	Ends      [2]string
	Centre    string  // centre-tap net, "" when none
	DCR       float64 // whole winding, ohms (0 = unknown)
	RatedAmps float64 // rms (for HT: DC rating as written, see docs)
	Pos       Pos
}

// PowerTransformerPart is the mains transformer.
type PowerTransformerPart struct {
	PrimaryVolts float64
	PrimaryDCR   float64
	PrimaryEnds  [2]string // optional; "" when not wired in the file
	Regulation   float64   // fraction: full-load to no-load drop, used when DCRs are unknown
	Windings     []*Winding
}

// Winding returns the secondary with the given name.
func (t *PowerTransformerPart) Winding(name string) *Winding {
	for _, w := range t.Windings {
		if w.Name == name {
			return w
		}
	}
	return nil
}

// OutputTransformerPart is the output transformer. A single-ended one has
// no centre tap.
type OutputTransformerPart struct {
	Ends   [2]string
	Centre string     // B+ feed of a push-pull primary; "" single-ended
	DCR    [2]float64 // per half (push-pull) or [whole, 0] (single-ended)
	// DCRWhole: a push-pull primary's dcr was given as one figure, the
	// whole primary end to end (as schematics give it); DCR holds half of
	// it for each half. False when the file gave one figure per half.
	// DCRSaid: the file said which explicitly (dcr: {whole: 200R} or
	// dcr: {halves: [95R, 105R]}) rather than by the bare form (one
	// figure, taken as the whole; a list, per half).
	DCRWhole  bool
	DCRSaid   bool
	Impedance float64 // primary impedance, plate to plate for push-pull
	Load      float64 // speaker load the impedance is quoted for
	SecDCR    float64
	// Taps are screen (ultralinear) taps on a push-pull primary: Taps[i]
	// is the net of the tap on the half to Ends[i], TapFrac the fraction
	// of each half's turns from the centre tap to the tap ("" and 0 when
	// the primary has none). See otwinding.go.
	Taps    [2]string
	TapFrac float64
	// SecHot and SecCold are the secondary's speaker-side nets when the
	// file wires them (secondary: {hot: SPK}); SecHot is "" when the
	// secondary is not wired to anything. The hot end is in phase with
	// the first primary end (Ends[0]).
	SecHot, SecCold string
}

// RectifierPart is a silicon rectifier (diodes or a bridge). Valve
// rectifiers are valves.
type RectifierPart struct {
	Diode  valves.SiliconDiode
	Bridge bool
	Anodes []string // centre-tap or half-wave
	AC     [2]string
	Plus   string
	Minus  string
}

// NetUse is one connection to a net.
type NetUse struct {
	Ref      string
	Terminal string
	Pos      Pos
}

// Design is a loaded design file.
type Design struct {
	File     string
	Hash     string // sha256 of the file bytes, hex
	Version  int
	Title    string
	Mains    Mains
	Defaults Defaults
	Ground   string
	Parts    []*Part // in file order
	ByRef    map[string]*Part
	// Nets maps each net name to its connections, in file order.
	Nets map[string][]NetUse
	// SideValves are the valve types loaded from the design's valve-files,
	// in file order (they take precedence over the library).
	SideValves []*valves.Type
}

// NetNames returns the net names sorted, ground first.
func (d *Design) NetNames() []string {
	names := make([]string, 0, len(d.Nets))
	for n := range d.Nets {
		if n != d.Ground {
			names = append(names, n)
		}
	}
	sort.Strings(names)
	return append([]string{d.Ground}, names...)
}

// PartsOfKind returns the parts of a kind in file order.
func (d *Design) PartsOfKind(k Kind) []*Part {
	var out []*Part
	for _, p := range d.Parts {
		if p.Kind == k {
			out = append(out, p)
		}
	}
	return out
}

// Valves returns the valve parts in file order.
func (d *Design) Valves() []*Part { return d.PartsOfKind(Valve) }

// Severity of a problem.
type Severity int

// Severities.
const (
	Error Severity = iota
	Warning
	Note
)

func (s Severity) String() string {
	switch s {
	case Error:
		return "error"
	case Warning:
		return "warning"
	}
	return "note"
}

// Problem is one finding about a design file, with its place.
type Problem struct {
	File     string
	Pos      Pos
	Field    string // dotted path: "parts.C3.capacitor"
	Severity Severity
	Msg      string
	Hint     string // optional one-line hint
}

func (p Problem) Error() string {
	s := fmt.Sprintf("%s:%d:%d: %s: %s: %s", p.File, p.Pos.Line, p.Pos.Col, p.Severity, p.Field, p.Msg)
	if p.Hint != "" {
		s += " (hint: " + p.Hint + ")"
	}
	return s
}

// Problems is every problem found in a design file. As an error it lists
// them one a line.
type Problems []Problem

func (ps Problems) Error() string {
	s := ""
	for i, p := range ps {
		if i > 0 {
			s += "\n"
		}
		s += p.Error()
	}
	return s
}

// Errors returns only the problems of severity Error.
func (ps Problems) Errors() Problems {
	var out Problems
	for _, p := range ps {
		if p.Severity == Error {
			out = append(out, p)
		}
	}
	return out
}

// Sort orders problems by line, then column.
func (ps Problems) Sort() {
	sort.SliceStable(ps, func(i, j int) bool {
		if ps[i].Pos.Line != ps[j].Pos.Line {
			return ps[i].Pos.Line < ps[j].Pos.Line
		}
		return ps[i].Pos.Col < ps[j].Pos.Col
	})
}

// RectifierAnodes returns the nets a rectifier part takes its AC from: a
// bridge's two AC ends, a silicon rectifier's anodes, a valve rectifier's
// plate nets; nil for any other part. Every reader of a rectifier's feed
// asks here.
func (p *Part) RectifierAnodes() []string {
	switch {
	case p.Kind == Rectifier && p.Rect.Bridge:
		return p.Rect.AC[:]
	case p.Kind == Rectifier:
		return p.Rect.Anodes
	case p.Kind == Valve && p.Valve.Type.Kind == valves.Rectifier:
		var out []string
		for _, s := range strings.Split(p.Valve.Sections[""][valves.Plates], ",") {
			if s != "" {
				out = append(out, s)
			}
		}
		return out
	}
	return nil
}
