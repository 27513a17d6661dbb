package infer

import (
	"fmt"
	"strings"

	"pinwalk/expect/amp"
	"pinwalk/expect/design"
	"pinwalk/expect/faults"
	"pinwalk/expect/valves"
)

// Roles a part plays in the amplifier, used by the prior and symptom
// tables. A part may have several.
const (
	roleSupply      = "supply"        // HT winding, rectifier, fuse, HT filter caps and series parts, bleeder
	roleFilterCap   = "filter-cap"    // HT filter (reservoir or smoothing) capacitor
	roleCoupling    = "coupling"      // capacitor into a grid (neither end at chassis)
	roleOutCoupling = "out-coupling"  // coupling capacitor into an output valve's grid
	roleBypass      = "bypass"        // capacitor from a cathode to chassis
	roleOutBypass   = "out-bypass"    // bypass of an output valve's cathode
	roleScreenR     = "screen-r"      // resistor feeding a screen
	roleHot         = "hot"           // resistor dissipating over HotFraction of its rating
	roleCarbon      = "carbon"        // carbon-composition or carbon-film resistor (or build not given)
	roleOutCathodeR = "out-cathode-r" // resistor from an output cathode
	roleOutGridR    = "out-grid-r"    // resistor on an output valve's grid (grid leak, stopper)
	roleOutput      = "output"        // output valve (a pentode, or a plate on an output transformer)
	rolePreamp      = "preamp"        // other amplifying valve
	roleRectValve   = "rect-valve"    // valve rectifier
	roleBias        = "bias"          // bias supply, or a part on its output nets
	roleString      = "heater-string" // a valve or dropper in a transformerless set's series heater string
)

// HotFraction is the share of a resistor's rated dissipation above which it
// runs hot and burns open more often (common practice: derate resistors to
// under about a third of their rating for long life).
const HotFraction = 0.30

// priorRule is one row of the failure-rate table: a part kind, an optional
// role the part must have, a mode, and a relative weight (failures per part
// in that mode, in arbitrary units; only ratios matter).
type priorRule struct {
	kind   design.Kind
	role   string // "" matches any part of the kind
	mode   faults.Mode
	weight float64
}

// priorTable gives relative failure rates of single faults (common
// practice, the repair trade's experience rather than a published survey:
// electrolytics and valves fail most; carbon resistors drift high; screen
// resistors and resistors running hot burn open more often; coupling
// capacitors go leaky; windings open less often). The first row matching
// a part's kind, role and mode applies; a mode with no row gets
// defaultPrior.
var priorTable = []priorRule{
	{design.Capacitor, roleFilterCap, faults.Open, 4}, // dried out
	{design.Capacitor, roleFilterCap, faults.Short, 1.5},
	{design.Capacitor, roleFilterCap, faults.Leaky, 2},
	{design.Capacitor, roleBypass, faults.Open, 2}, // electrolytic bypass dried out
	{design.Capacitor, roleBypass, faults.Short, 0.8},
	{design.Capacitor, roleBypass, faults.Leaky, 0.8},
	{design.Capacitor, roleCoupling, faults.Leaky, 2.5}, // coupling caps go leaky
	{design.Capacitor, roleCoupling, faults.Short, 0.3},
	{design.Capacitor, roleCoupling, faults.Open, 0.3},
	{design.Capacitor, "", faults.Open, 0.5},
	{design.Capacitor, "", faults.Short, 0.5},
	{design.Capacitor, "", faults.Leaky, 0.8},
	{design.Valve, roleRectValve, faults.Weak, 4},
	{design.Valve, roleRectValve, faults.Dead, 1},
	{design.Valve, roleRectValve, faults.HeaterOpen, 0.5},
	{design.Valve, roleRectValve, faults.HalfOpen, 1},
	{design.Valve, roleOutput, faults.Weak, 5},
	{design.Valve, roleOutput, faults.Dead, 1.5},
	{design.Valve, roleOutput, faults.HeaterOpen, 1},
	{design.Valve, "", faults.Weak, 2},
	{design.Valve, "", faults.Dead, 0.6},
	{design.Valve, "", faults.HeaterOpen, 0.6},
	{design.Resistor, "", faults.Open, 0.4},
	{design.Resistor, "", faults.Short, 0.05},
	{design.Resistor, roleCarbon, faults.High, 1.2}, // carbon drifts high
	{design.Resistor, "", faults.High, 0.2},
	{design.Pot, "", faults.Open, 0.4},
	{design.Choke, "", faults.Open, 0.3},
	{design.OutputTransformer, "", faults.Open, 0.4},
	{design.PowerTransformer, "", faults.Open, 0.2},
	{design.PowerTransformer, "", faults.HeaterOpen, 0.1},
	{design.Rectifier, "", faults.Open, 0.3},
	{design.Rectifier, "", faults.HalfOpen, 0.5},
	{design.Rectifier, "", faults.Short, 1}, // silicon diodes fail short more often than open
	{design.Fuse, "", faults.Open, 0.8},
	{design.BiasSupply, "", faults.Dead, 1.2},
	{design.DCSupply, "", faults.Dead, 0.5},
}

// Multipliers on the table (common practice).
const (
	defaultPrior = 0.3
	// burnOpenFactor multiplies "open" for a screen resistor or a resistor
	// running hot.
	burnOpenFactor = 4
	// healthyShare is the prior probability that the amplifier has no
	// modelled fault (it is on the bench because someone suspects one).
	healthyShare = 0.10
)

// symptomRule multiplies the prior of faults of a part kind (any kind when
// empty), role ("" any) and mode ("" any) when a symptom is reported.
type symptomRule struct {
	symptom string
	kind    design.Kind
	role    string
	mode    faults.Mode
	factor  float64
}

// Symptoms are the symptom names New accepts.
var Symptoms = []string{"no-lights", "no-sound", "no-sound-one-channel", "hum", "fuse-blows", "red-plate", "low-volume", "crackle"}

// healthyKind marks a symptom rule that applies to the healthy hypothesis.
const healthyKind design.Kind = "(healthy)"

// Unmodelled is one kind of fault the catalogue leaves out, with why.
type Unmodelled struct {
	Fault string // in a technician's words
	Why   string // one line: what the model lacks
}

// NotModelled lists the faults that happen on the bench but have no
// hypothesis, so that a ranking can say what it cannot find (common
// practice: each is a known cause of a bench visit). Symptoms only shift
// the faults that are modelled.
var NotModelled = []Unmodelled{
	{"heater-to-cathode short (a classic cause of hum)",
		"the heaters are an AC load on their own winding with no DC path to the cathodes; the leak would join the heater circuit to a cathode"},
	{"output-transformer primary shorted to chassis (winding to core or frame)",
		"a winding has no insulation element to chassis; B+ or a plate would see a path to ground part-way along the primary"},
	{"gassy valve (positive grid current, bias drifting up, blue glow inside the glass)",
		"the valve laws have no ionic grid current; it needs a grid current that grows with plate current and volts"},
	{"microphonic or noisy valve, dry joint, arcing socket (crackle)",
		"intermittent and mechanical: nothing a steady DC reading predicts"},
}

// symptomTable: what each reported symptom makes more or less likely
// (common practice). Every matching row multiplies. The faults with no
// hypothesis are listed in NotModelled.
var symptomTable = []symptomRule{
	// No lights, no sound: nothing gets mains. The fuse first, then the
	// heater supply; everything else would leave the valves glowing.
	{"no-lights", "", "", "", 0.02},
	{"no-lights", design.Fuse, "", faults.Open, 1000},
	{"no-lights", design.PowerTransformer, "", faults.HeaterOpen, 250},
	{"no-lights", design.Rectifier, "", faults.Short, 100}, // it blew the fuse
	// A series heater string: one open heater, or the dropper, and no
	// valve lights (Ohm's law: one current through them all).
	{"no-lights", design.Valve, roleString, faults.HeaterOpen, 250},
	{"no-lights", design.Resistor, roleString, faults.Open, 250},
	{"no-lights", healthyKind, "", "", 0.01},
	// The valves glow but there is no sound at all: the HT supply or a
	// stage every signal passes through.
	{"no-sound", "", roleSupply, "", 5},
	{"no-sound", design.Valve, "", faults.Dead, 2},
	{"no-sound", design.Valve, "", faults.HeaterOpen, 2},
	{"no-sound", design.Resistor, "", faults.Open, 2},
	{"no-sound", design.Capacitor, roleCoupling, faults.Open, 2},
	{"no-sound", design.OutputTransformer, "", faults.Open, 3},
	{"no-sound", "", "", faults.Weak, 0.3},
	{"no-sound", "", "", faults.High, 0.3},
	{"no-sound", healthyKind, "", "", 0.02},
	// One channel silent: a fault local to that channel; shared supply
	// faults would silence both.
	{"no-sound-one-channel", "", roleSupply, "", 0.1},
	{"no-sound-one-channel", design.Valve, "", faults.Dead, 3},
	{"no-sound-one-channel", design.Valve, "", faults.HeaterOpen, 3},
	{"no-sound-one-channel", design.Capacitor, roleCoupling, faults.Open, 4},
	{"no-sound-one-channel", design.OutputTransformer, "", faults.Open, 4},
	{"no-sound-one-channel", design.Resistor, "", faults.Open, 2},
	{"no-sound-one-channel", design.Pot, "", faults.Open, 3},
	{"no-sound-one-channel", healthyKind, "", "", 0.1},
	// Hum: filter capacitors dried out, a rectifier half gone, an
	// unbalanced push-pull stage.
	{"hum", design.Capacitor, roleFilterCap, faults.Open, 10},
	{"hum", design.Capacitor, roleFilterCap, faults.Leaky, 2},
	{"hum", design.Rectifier, "", faults.HalfOpen, 5},
	{"hum", design.Valve, roleRectValve, faults.HalfOpen, 5},
	{"hum", design.Capacitor, roleBypass, faults.Open, 2},
	{"hum", design.Valve, roleOutput, faults.Weak, 2},
	{"hum", design.OutputTransformer, "", faults.Open, 2},
	{"hum", healthyKind, "", "", 0.3},
	// Fuse blows: something shorted or a valve running away.
	{"fuse-blows", design.Capacitor, roleFilterCap, faults.Short, 8},
	{"fuse-blows", design.Rectifier, "", faults.Short, 10}, // the usual cause with silicon rectifiers
	{"fuse-blows", design.Capacitor, "", faults.Short, 3},
	{"fuse-blows", design.Valve, roleRectValve, faults.Dead, 3},
	{"fuse-blows", design.BiasSupply, "", faults.Dead, 8},
	{"fuse-blows", design.Capacitor, roleOutCoupling, faults.Leaky, 4},
	{"fuse-blows", design.Capacitor, roleOutBypass, faults.Short, 3},
	{"fuse-blows", design.Resistor, roleOutCathodeR, faults.Short, 3},
	{"fuse-blows", design.Fuse, "", faults.Open, 5},
	{"fuse-blows", "", "", faults.Weak, 0.3},
	{"fuse-blows", healthyKind, "", "", 0.1},
	// Red plate: an output valve conducting far too much.
	{"red-plate", design.BiasSupply, "", faults.Dead, 20},
	{"red-plate", "", roleBias, "", 5},
	{"red-plate", design.Capacitor, roleOutCoupling, faults.Leaky, 10},
	{"red-plate", design.Capacitor, roleOutCoupling, faults.Short, 10},
	{"red-plate", design.Resistor, roleOutCathodeR, faults.Short, 10},
	{"red-plate", design.Capacitor, roleOutBypass, faults.Short, 10},
	{"red-plate", design.Resistor, roleOutGridR, faults.Open, 5},
	{"red-plate", design.Resistor, roleScreenR, faults.Short, 3},
	{"red-plate", "", "", faults.Weak, 0.3},
	{"red-plate", healthyKind, "", "", 0.05},
	// Low volume: tired valves, drifted resistors, dried-out bypasses.
	{"low-volume", design.Valve, "", faults.Weak, 3},
	{"low-volume", design.Resistor, "", faults.High, 2},
	{"low-volume", design.Capacitor, roleBypass, faults.Open, 3},
	{"low-volume", design.Capacitor, roleCoupling, faults.Leaky, 1.5},
	{"low-volume", design.Capacitor, roleFilterCap, faults.Open, 1.5},
	{"low-volume", healthyKind, "", "", 0.5},
	// Crackle: noisy carbon resistors, leaky coupling caps, worn pots.
	{"crackle", design.Resistor, "", faults.High, 2},
	{"crackle", design.Resistor, "", faults.Open, 1.5},
	{"crackle", design.Capacitor, roleCoupling, faults.Leaky, 3},
	{"crackle", design.Pot, "", faults.Open, 3},
	{"crackle", design.Valve, "", faults.Weak, 1.5},
	{"crackle", healthyKind, "", "", 0.5},
}

// partRoles classifies every part of a design; op is the healthy nominal
// operating point (for resistor dissipation).
func partRoles(m *amp.Model, op *amp.OP) map[string]map[string]bool {
	d := m.D
	roles := map[string]map[string]bool{}
	add := func(ref, role string) {
		if roles[ref] == nil {
			roles[ref] = map[string]bool{}
		}
		roles[ref][role] = true
	}
	// Nets by electrode.
	otEnds := map[string]bool{}
	for _, p := range d.PartsOfKind(design.OutputTransformer) {
		otEnds[p.OT.Ends[0]], otEnds[p.OT.Ends[1]] = true, true
	}
	grid, cathode, screen := map[string]bool{}, map[string]bool{}, map[string]bool{}
	outGrid, outCathode := map[string]bool{}, map[string]bool{}
	for _, s := range m.Sections {
		p := d.ByRef[s.Ref]
		e := p.Valve.Sections[s.Section]
		out := s.Pentode || otEnds[e[valves.Plate]]
		if out {
			add(s.Ref, roleOutput)
			outGrid[e[valves.Grid]], outCathode[e[valves.Cathode]] = true, true
		} else {
			add(s.Ref, rolePreamp)
		}
		grid[e[valves.Grid]], cathode[e[valves.Cathode]] = true, true
		if n := e[valves.Screen]; n != "" {
			screen[n] = true
		}
	}
	// A grid stopper (≤ 10 kΩ) extends an output grid to the net before it.
	for _, p := range d.PartsOfKind(design.Resistor) {
		a, b := p.Terminals[0].Net, p.Terminals[1].Net
		if p.Value <= 10e3 && (outGrid[a] || outGrid[b]) && a != d.Ground && b != d.Ground {
			outGrid[a], outGrid[b] = true, true
			grid[a], grid[b] = true, true
		}
	}
	supplyNet := map[string]bool{}
	if m.HT != nil {
		for _, n := range m.HT.Nets {
			supplyNet[n] = true
		}
		supplyNet[m.HT.RectNet] = true
		for _, r := range m.HT.SeriesRefs {
			if r != "" {
				add(r, roleSupply)
			}
		}
		for _, cs := range m.HT.CapRefs {
			for _, r := range cs {
				add(r, roleSupply)
				add(r, roleFilterCap)
			}
		}
		if m.HT.Transformer != nil {
			add(m.HT.Transformer.Ref, roleSupply)
		}
		if m.HT.Rectifier != nil {
			add(m.HT.Rectifier.Ref, roleSupply)
			if m.HT.Rectifier.Kind == design.Valve {
				add(m.HT.Rectifier.Ref, roleRectValve)
			}
		}
	}
	if hs := m.String; hs != nil {
		for _, r := range append(append([]string(nil), hs.Valves...), hs.Droppers...) {
			add(r, roleString)
		}
	}
	biasNet := map[string]bool{}
	for _, p := range d.PartsOfKind(design.BiasSupply) {
		add(p.Ref, roleBias)
		biasNet[p.Terminals[0].Net] = true
	}
	watts := map[string]float64{}
	rated := map[string]float64{}
	if op != nil {
		for _, r := range m.Resistors(op) {
			watts[r.Ref] += r.Watts
			rated[r.Ref] = r.RatedWatts
		}
	}
	for _, p := range d.Parts {
		var nets []string
		for _, t := range p.Terminals {
			nets = append(nets, t.Net)
		}
		has := func(set map[string]bool) bool {
			for _, n := range nets {
				if set[n] {
					return true
				}
			}
			return false
		}
		grounded := false
		for _, n := range nets {
			if n == d.Ground {
				grounded = true
			}
		}
		switch p.Kind {
		case design.Fuse:
			add(p.Ref, roleSupply)
		case design.Resistor:
			if has(screen) {
				add(p.Ref, roleScreenR)
			}
			if rated[p.Ref] > 0 && watts[p.Ref] > HotFraction*rated[p.Ref] {
				add(p.Ref, roleHot)
			}
			if b := strings.ToLower(p.Material); b == "" || strings.HasPrefix(b, "carbon") {
				add(p.Ref, roleCarbon)
			}
			if has(outCathode) {
				add(p.Ref, roleOutCathodeR)
			}
			if has(outGrid) {
				add(p.Ref, roleOutGridR)
			}
			if grounded && has(supplyNet) {
				add(p.Ref, roleSupply) // bleeder
			}
			if has(biasNet) {
				add(p.Ref, roleBias)
			}
		case design.Pot:
			if has(biasNet) || has(outGrid) {
				add(p.Ref, roleBias)
			}
		case design.Capacitor:
			switch {
			case !grounded && has(grid):
				add(p.Ref, roleCoupling)
				if has(outGrid) {
					add(p.Ref, roleOutCoupling)
				}
			case grounded && has(cathode):
				add(p.Ref, roleBypass)
				if has(outCathode) {
					add(p.Ref, roleOutBypass)
				}
			case has(biasNet):
				add(p.Ref, roleBias)
			}
		}
	}
	return roles
}

// partOf returns the design part of a fault reference ("OT1.a" → OT1).
func partOf(d *design.Design, ref string) *design.Part {
	if p := d.ByRef[ref]; p != nil {
		return p
	}
	if i := strings.LastIndex(ref, "."); i > 0 {
		return d.ByRef[ref[:i]]
	}
	return nil
}

// priorOf returns a fault's relative prior weight before symptoms.
func priorOf(d *design.Design, roles map[string]map[string]bool, f faults.Fault) float64 {
	p := partOf(d, f.Ref)
	if p == nil {
		return defaultPrior
	}
	r := roles[p.Ref]
	w := defaultPrior
	for _, row := range priorTable {
		if row.kind == p.Kind && row.mode == f.Mode && (row.role == "" || r[row.role]) {
			w = row.weight
			break
		}
	}
	if p.Kind == design.Resistor && f.Mode == faults.Open && (r[roleScreenR] || r[roleHot]) {
		w *= burnOpenFactor
	}
	return w
}

// symptomFactor returns the product of the symptom rows matching a
// fault (nil: the healthy hypothesis).
func symptomFactor(d *design.Design, roles map[string]map[string]bool, f *faults.Fault, symptoms []string) float64 {
	x := 1.0
	for _, s := range symptoms {
		for _, row := range symptomTable {
			if row.symptom != s {
				continue
			}
			if f == nil {
				if row.kind == healthyKind {
					x *= row.factor
				}
				continue
			}
			p := partOf(d, f.Ref)
			if p == nil || row.kind == healthyKind || (row.kind != "" && row.kind != p.Kind) ||
				(row.mode != "" && row.mode != f.Mode) || (row.role != "" && !roles[p.Ref][row.role]) {
				continue
			}
			x *= row.factor
		}
	}
	return x
}

// checkSymptoms reports unknown symptom names, with a suggestion.
func checkSymptoms(ss []string) error {
	for _, s := range ss {
		ok := false
		for _, k := range Symptoms {
			if s == k {
				ok = true
			}
		}
		if !ok {
			hint := ""
			if sug := design.Suggest(s, Symptoms); len(sug) > 0 {
				hint = fmt.Sprintf(" (did you mean %q?)", sug[0])
			}
			return fmt.Errorf("infer: unknown symptom %q%s: expected one of %s", s, hint, strings.Join(Symptoms, ", "))
		}
	}
	return nil
}
