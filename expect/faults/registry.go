package faults

import (
	"fmt"
	"math"
	"slices"
	"strings"

	"pinwalk/expect/amp"
	"pinwalk/expect/design"
)

// Kind is everything a part kind declares about the ways it fails: its
// design kind, the parts of it that fail on their own (an output
// transformer's primary halves and wired secondary), the value its
// descriptions show, what a healthy one reads out of circuit, and its
// fault modes. Each kind is declared once, in its own kind_*.go file, by
// register.
type Kind struct {
	Kind design.Kind
	// Subparts lists the named parts of p that fail on their own ("a",
	// "b", "sec"); a fault on one is "REF.SUB:mode". nil: none.
	Subparts func(p *design.Part) []string
	// Value is the part's value as a description shows it ("470 Ω",
	// "EL34"); "" shows none.
	Value func(p *design.Part) string
	// Healthy is what a good part reads out of circuit.
	Healthy func(p *design.Part) OutReading
	// Modes are the part kind's fault modes. A mode may have more than
	// one row (a valve rectifier's and an amplifying valve's "weak"): the
	// first row whose subpart and Applies match is the mode's.
	Modes []ModeSpec
}

// ModeSpec is one fault mode of a part kind, with all it does and says.
type ModeSpec struct {
	Mode Mode
	// Subparts are the subparts the mode applies to; "" is the whole
	// part. nil means the whole part only.
	Subparts []string
	// Applies reports whether the mode applies to this part of this
	// model (nil: always).
	Applies func(m *amp.Model, p *design.Part) bool
	// Live puts the fault into the model's values (the powered amp).
	Live func(v *amp.Values, t Target)
	// Cold changes the unpowered resistance network (nil: the fault
	// leaves it as it is).
	Cold func(n ColdNet, t Target)
	// Describe says the fault in a technician's words.
	Describe func(t Target) string
	// OutOfCircuit is what the failed part reads on its own (nil: what
	// a healthy one reads).
	OutOfCircuit func(t Target) OutReading
	// Prior is the base failure weight of the mode (relative failures
	// per part, common practice; only ratios matter). ByRole overrides
	// it for parts with a role (the first matching row), and Multiply
	// scales the result for a part with one of its roles (the first
	// matching row).
	Prior    float64
	ByRole   []RolePrior
	Multiply []RolePrior
	// PoweredShort: powered, the fault puts a near-short on the HT
	// supply whatever the cold readings show (no live reading may be
	// taken while it is a serious suspect).
	PoweredShort bool
	// Confirm says how to confirm the fault with the amp unplugged;
	// Replace what to fit instead, with its ratings.
	Confirm func(t Target) string
	Replace func(t Target) string
}

// Target is the part a fault hits: the model, the design part, the
// subpart ("" for the whole part) and the mode.
type Target struct {
	M    *amp.Model
	Part *design.Part
	Sub  string
	Mode Mode
}

// Ref returns the fault's reference ("R7", "OT1.a").
func (t Target) Ref() string {
	if t.Sub == "" {
		return t.Part.Ref
	}
	return t.Part.Ref + "." + t.Sub
}

// OutReading is what a part reads on its own, out of circuit: an
// ohmmeter's reading across it where one says something (OK), and the
// words of what the technician finds.
type OutReading struct {
	Ohms  float64 // +Inf: open
	OK    bool    // Ohms is an ohmmeter's reading across the part
	Words string
}

// ColdEdge is one resistive element of the unpowered network between
// two nets: its ohms, tolerance and the part it belongs to.
type ColdEdge struct {
	A, B string
	Ohms float64
	Tol  design.Tolerance
	Ref  string
}

// ColdNet is the unpowered resistance network a fault changes (expect/cold
// implements it over its own network).
type ColdNet interface {
	// Drop removes every edge match accepts.
	Drop(match func(e ColdEdge) bool)
	// Edit calls edit on every edge; an edit that returns true changed
	// the edge.
	Edit(edit func(e *ColdEdge) bool)
	// Add adds an edge.
	Add(e ColdEdge)
}

// ColdShortOhms stands for a short in the cold network (a solder bridge,
// a shorted resistor or diode): small but finite, so the nodal matrix
// stays regular.
const ColdShortOhms = 1e-3

// DefaultPrior is the failure weight of a mode that declares none
// (common practice: a rarely failing part).
const DefaultPrior = 0.3

// RolePrior is a failure weight (or factor) for parts with a role.
type RolePrior struct {
	Role   Role
	Weight float64
}

var registry = map[design.Kind]*Kind{}

// noFaults are the design kinds that declare no fault, each with why.
var noFaults = map[design.Kind]string{
	design.MainsInlet: "its earth pin's bond to chassis is a cold check with a stop rule of its own, and its live and neutral are the mains itself",
}

// register adds a part kind's declaration; each kind is declared once.
func register(k Kind) {
	if _, dup := registry[k.Kind]; dup {
		panic("faults: part kind " + string(k.Kind) + " declared twice")
	}
	for _, s := range k.Modes {
		if s.Live == nil || s.Describe == nil || s.Confirm == nil || s.Replace == nil {
			panic(fmt.Sprintf("faults: %s:%s lacks its live effect, description, confirm or replace words", k.Kind, s.Mode))
		}
	}
	registry[k.Kind] = &k
}

// KindOf returns the fault declaration of a part's kind; nil for a kind
// with no modelled faults.
func KindOf(p *design.Part) *Kind {
	if p == nil {
		return nil
	}
	return registry[p.Kind]
}

// subparts of a part by its kind.
func subparts(p *design.Part) []string {
	if k := KindOf(p); k != nil && k.Subparts != nil {
		return k.Subparts(p)
	}
	return nil
}

// splitRef splits "OT1.a" into the part and its subpart ("a", "b", "sec"
// or "").
func splitRef(m *amp.Model, ref string) (*design.Part, string) {
	if p := m.D.ByRef[ref]; p != nil {
		return p, ""
	}
	if i := strings.LastIndex(ref, "."); i > 0 {
		sub := ref[i+1:]
		if p := m.D.ByRef[ref[:i]]; p != nil && slices.Contains(subparts(p), sub) {
			return p, sub
		}
	}
	return nil, ""
}

// applies reports whether a spec is the one for a subpart of p.
func (s *ModeSpec) applies(m *amp.Model, p *design.Part, sub string) bool {
	subs := s.Subparts
	if subs == nil {
		subs = []string{""}
	}
	return slices.Contains(subs, sub) && (s.Applies == nil || s.Applies(m, p))
}

// specOf returns the spec and target of a fault; nil when the fault does
// not apply.
func specOf(m *amp.Model, f Fault) (*ModeSpec, Target) {
	p, sub := splitRef(m, f.Ref)
	k := KindOf(p)
	if k == nil {
		return nil, Target{}
	}
	for i := range k.Modes {
		s := &k.Modes[i]
		if s.Mode == f.Mode && s.applies(m, p, sub) {
			return s, Target{M: m, Part: p, Sub: sub, Mode: f.Mode}
		}
	}
	return nil, Target{}
}

// Modes returns the modes that apply to a part (or a subpart, "OT1.a"),
// in its kind's order; nil for an unknown reference or a part with no
// modelled fault.
func Modes(m *amp.Model, ref string) []Mode {
	p, sub := splitRef(m, ref)
	k := KindOf(p)
	if k == nil {
		return nil
	}
	var out []Mode
	for i := range k.Modes {
		s := &k.Modes[i]
		if s.applies(m, p, sub) && !slices.Contains(out, s.Mode) {
			out = append(out, s.Mode)
		}
	}
	return out
}

// refs returns every fault reference of a model in design order (a
// part's subparts after itself).
func refs(m *amp.Model) []string {
	var out []string
	for _, p := range m.D.Parts {
		out = append(out, p.Ref)
		for _, s := range subparts(p) {
			out = append(out, p.Ref+"."+s)
		}
	}
	return out
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

// Apply puts a fault into v, in place (its kind's live effect). It
// returns Check's error for a fault that does not apply, and leaves v
// unchanged then. The modelling choices of each mode are in its kind's
// file.
func Apply(m *amp.Model, v *amp.Values, f Fault) error {
	if err := Check(m, f); err != nil {
		return err
	}
	s, t := specOf(m, f)
	s.Live(v, t)
	return nil
}

// ApplyCold puts a fault into the unpowered network n. It reports false
// when the fault has no cold effect (a valve, a supply gone dead, an
// open capacitor) or does not apply.
func ApplyCold(m *amp.Model, n ColdNet, f Fault) bool {
	s, t := specOf(m, f)
	if s == nil || s.Cold == nil {
		return false
	}
	s.Cold(n, t)
	return true
}

// Describe returns a technician's description of a fault:
// "R7 (470 Ω) open circuit".
func Describe(f Fault, m *amp.Model) string {
	s, t := specOf(m, f)
	if s == nil {
		p, _ := splitRef(m, f.Ref)
		if p == nil {
			return f.String()
		}
		return partName(Target{M: m, Part: p}) + " " + string(f.Mode)
	}
	return s.Describe(t)
}

// Confirm says how to confirm a fault with the amp unplugged and
// discharged.
func Confirm(m *amp.Model, f Fault) string {
	s, t := specOf(m, f)
	if s == nil {
		return "Unplugged and discharged: check " + f.String() + " directly."
	}
	return s.Confirm(t)
}

// Replace says what to fit in place of the failed part, with the ratings
// the circuit puts on it.
func Replace(m *amp.Model, f Fault) string {
	s, t := specOf(m, f)
	if s == nil {
		return "Replace " + f.String() + " with a part of the same value and ratings."
	}
	return s.Replace(t)
}

// OutOfCircuit returns what part ref reads out of circuit when the amp's
// fault is f (nil: none): the failed part's own reading, else a healthy
// part's. ok is false for an unknown part.
func OutOfCircuit(m *amp.Model, ref string, f *Fault) (OutReading, bool) {
	p := m.D.ByRef[ref]
	if p == nil {
		return OutReading{}, false
	}
	if f != nil && f.Ref == ref {
		if s, t := specOf(m, *f); s != nil && s.OutOfCircuit != nil {
			return s.OutOfCircuit(t), true
		}
	}
	if k := KindOf(p); k != nil && k.Healthy != nil {
		return k.Healthy(p), true
	}
	return OutReading{Ohms: math.NaN(), Words: "as a good " + string(p.Kind)}, true
}

// Prior returns a fault's relative failure weight before symptoms, from
// its mode's declaration and the part's roles (Roles); DefaultPrior for
// a fault that does not apply or declares none.
func Prior(m *amp.Model, roles map[string]RoleSet, f Fault) float64 {
	s, t := specOf(m, f)
	if s == nil {
		return DefaultPrior
	}
	r := roles[t.Part.Ref]
	w := s.Prior
	if w == 0 {
		w = DefaultPrior
	}
	for _, row := range s.ByRole {
		if r[row.Role] {
			w = row.Weight
			break
		}
	}
	for _, row := range s.Multiply {
		if r[row.Role] {
			w *= row.Weight
			break
		}
	}
	return w
}

// PoweredShort reports whether a fault, powered, puts a near-short on the
// HT supply whatever its cold readings show.
func PoweredShort(m *amp.Model, f Fault) bool {
	s, _ := specOf(m, f)
	return s != nil && s.PoweredShort
}

// Unmodelled is one kind of fault the catalogue leaves out, with why.
type Unmodelled struct {
	Fault string // in a technician's words
	Why   string // one line: what the model lacks
}

// notModelled: the faults that happen on the bench but have no hypothesis
// (common practice: each is a known cause of a bench visit).
var notModelled = []Unmodelled{
	{"heater-to-cathode leak or short on a heater winding with no DC reference (floating, or a series string)",
		"with no centre tap or grounded end the heater circuit has no DC path for the leak to follow; a heater winding with one has the hk-short fault"},
	{"output-transformer primary leaking to chassis part-way along a winding (kilohms, not a hard short)",
		"a leak part-way along a winding has no single place or value to model; a hard breakdown at an end is the to-chassis fault"},
	{"valve internal short between electrodes other than plate and cathode (grid to cathode, screen to grid)",
		"only the plate-to-cathode short has a path in the model (the valve's short fault); the others would each need a path of their own between electrode nets"},
	{"microphonic or noisy valve, dry joint, arcing socket (crackle)",
		"intermittent and mechanical: nothing a steady DC reading predicts"},
}

// NotModelled lists the faults that happen on the bench but have no
// hypothesis, each with why, so that a ranking can say what it cannot
// find.
func NotModelled() []Unmodelled { return slices.Clone(notModelled) }
