package faults

import (
	"strings"

	"pinwalk/expect/amp"
	"pinwalk/expect/design"
	"pinwalk/expect/valves"
)

// Role is what a part does in the amplifier, used by the failure weights
// (ModeSpec.ByRole) and by symptom tables. A part may have several.
type Role string

// RoleSet is the roles of one part.
type RoleSet map[Role]bool

// Roles.
const (
	RoleSupply      Role = "supply"        // HT winding, rectifier, fuse, HT filter caps and series parts, bleeder
	RoleFilterCap   Role = "filter-cap"    // HT filter (reservoir or smoothing) capacitor
	RoleCoupling    Role = "coupling"      // capacitor into a grid (neither end at chassis)
	RoleOutCoupling Role = "out-coupling"  // coupling capacitor into an output valve's grid
	RoleBypass      Role = "bypass"        // capacitor from a cathode to chassis
	RoleOutBypass   Role = "out-bypass"    // bypass of an output valve's cathode
	RoleScreenR     Role = "screen-r"      // resistor feeding a screen
	RoleHot         Role = "hot"           // resistor dissipating over HotFraction of its rating
	RoleCarbon      Role = "carbon"        // carbon-composition or carbon-film resistor (or build not given)
	RoleOutCathodeR Role = "out-cathode-r" // resistor from an output cathode
	RoleOutGridR    Role = "out-grid-r"    // resistor on an output valve's grid (grid leak, stopper)
	RoleBleeder     Role = "bleeder"       // resistor from an HT filter net to chassis
	RoleOutput      Role = "output"        // output valve (a pentode, or a plate on an output transformer)
	RolePreamp      Role = "preamp"        // other amplifying valve
	RoleRectValve   Role = "rect-valve"    // valve rectifier
	RoleBias        Role = "bias"          // bias supply, or a part on its output nets
	RoleString      Role = "heater-string" // a valve or dropper in a transformerless set's series heater string
)

// HotFraction is the share of a resistor's rated dissipation above which it
// runs hot and burns open more often (common practice: derate resistors to
// under about a third of their rating for long life).
const HotFraction = 0.30

// Roles classifies every part of a design; op is the healthy nominal
// operating point (for resistor dissipation; nil: no resistor is hot).
func Roles(m *amp.Model, op *amp.OP) map[string]RoleSet {
	d := m.D
	roles := map[string]RoleSet{}
	add := func(ref string, role Role) {
		if roles[ref] == nil {
			roles[ref] = RoleSet{}
		}
		roles[ref][role] = true
	}
	// Nets by electrode.
	otEnds := otEndNets(d)
	grid, cathode, screen := map[string]bool{}, map[string]bool{}, map[string]bool{}
	outGrid, outCathode := map[string]bool{}, map[string]bool{}
	for _, s := range m.Sections {
		p := d.ByRef[s.Ref]
		e := p.Valve.Sections[s.Section]
		if outputSection(d, s, otEnds) {
			add(s.Ref, RoleOutput)
			outGrid[e[valves.Grid]], outCathode[e[valves.Cathode]] = true, true
		} else {
			add(s.Ref, RolePreamp)
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
				add(r, RoleSupply)
			}
		}
		for _, cs := range m.HT.CapRefs {
			for _, r := range cs {
				add(r, RoleSupply)
				add(r, RoleFilterCap)
			}
		}
		if db := m.HT.Doubler; db != nil {
			for _, r := range db.Caps {
				add(r, RoleSupply)
				add(r, RoleFilterCap)
			}
			add(db.Diodes[1].Ref, RoleSupply)
		}
		if m.HT.Transformer != nil {
			add(m.HT.Transformer.Ref, RoleSupply)
		}
		if m.HT.Rectifier != nil {
			add(m.HT.Rectifier.Ref, RoleSupply)
			if m.HT.Rectifier.Kind == design.Valve {
				add(m.HT.Rectifier.Ref, RoleRectValve)
			}
		}
	}
	if hs := m.String; hs != nil {
		for _, r := range append(append([]string(nil), hs.Valves...), hs.Droppers...) {
			add(r, RoleString)
		}
	}
	biasNet := map[string]bool{}
	for _, p := range d.PartsOfKind(design.BiasSupply) {
		add(p.Ref, RoleBias)
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
			add(p.Ref, RoleSupply)
		case design.Resistor:
			if has(screen) {
				add(p.Ref, RoleScreenR)
			}
			if rated[p.Ref] > 0 && watts[p.Ref] > HotFraction*rated[p.Ref] {
				add(p.Ref, RoleHot)
			}
			if b := strings.ToLower(p.Material); b == "" || strings.HasPrefix(b, "carbon") {
				add(p.Ref, RoleCarbon)
			}
			if has(outCathode) {
				add(p.Ref, RoleOutCathodeR)
			}
			if has(outGrid) {
				add(p.Ref, RoleOutGridR)
			}
			if grounded && has(supplyNet) {
				add(p.Ref, RoleSupply)
				add(p.Ref, RoleBleeder)
			}
			if has(biasNet) {
				add(p.Ref, RoleBias)
			}
		case design.Pot:
			if has(biasNet) || has(outGrid) {
				add(p.Ref, RoleBias)
			}
		case design.Capacitor:
			switch {
			case !grounded && has(grid):
				add(p.Ref, RoleCoupling)
				if has(outGrid) {
					add(p.Ref, RoleOutCoupling)
				}
			case grounded && has(cathode):
				add(p.Ref, RoleBypass)
				if has(outCathode) {
					add(p.Ref, RoleOutBypass)
				}
			case has(biasNet):
				add(p.Ref, RoleBias)
			}
		}
	}
	return roles
}

// otEndNets returns the nets on the ends of output-transformer primaries.
func otEndNets(d *design.Design) map[string]bool {
	ends := map[string]bool{}
	for _, p := range d.PartsOfKind(design.OutputTransformer) {
		ends[p.OT.Ends[0]], ends[p.OT.Ends[1]] = true, true
	}
	return ends
}

// outputSection reports whether a valve section is an output one (the
// RoleOutput rule): a pentode or beam section, or a plate on an output
// transformer's primary end (otEnds, from otEndNets).
func outputSection(d *design.Design, s *amp.Section, otEnds map[string]bool) bool {
	return s.Pentode || otEnds[d.ByRef[s.Ref].Valve.Sections[s.Section][valves.Plate]]
}
