package amp

import (
	"fmt"
	"math"

	"pinwalk/expect/design"
	"pinwalk/expect/units"
	"pinwalk/expect/valves"
)

// PositiveGridVolts is how far a control grid may sit above its cathode at
// the DC operating point before the rating checks call it positive. A grid
// at its cathode's volts (zero bias) is a legitimate design; anything above
// draws grid current at idle. The 0.1 V margin only keeps round-off of a
// zero-bias grid from being reported.
const PositiveGridVolts = 0.1

// electrodeChecks are the rating checks on a section's electrode volts at
// the DC operating point: a control grid positive of its cathode, and a
// screen over its rated volts (the datasheet's maximum grid-2 voltage,
// taken to the cathode).
func (m *Model) electrodeChecks(op *OP, add func(p *design.Part, sev design.Severity, format string, args ...any)) {
	for i, sec := range m.Sections {
		so := op.Sections[i]
		p := m.D.ByRef[sec.Ref]
		if p == nil || p.Valve == nil {
			continue
		}
		nets := p.Valve.Sections[sec.Section]
		if vgk := so.Vg - so.Vk; vgk > PositiveGridVolts {
			add(p, design.Error, "%s control grid is %s positive of its cathode at DC (grid %s, cathode %s, %s grid current at idle): %s",
				sec.Name(), units.Format(vgk, units.Volts), units.Format(so.Vg, units.Volts), units.Format(so.Vk, units.Volts),
				units.Format(math.Max(so.Ig, 0), units.Amps), m.positiveGridCause(op, sec, nets[valves.Grid], so))
		}
		lim := sec.Type.Limits
		if !sec.Pentode || lim.ScreenVolts <= 0 {
			continue
		}
		if vs := so.Vg2 - so.Vk; vs > lim.ScreenVolts*(1+1e-4) {
			add(p, design.Error, "%s screen is %s above its cathode (screen %s on %s), over the %s's %s maximum screen volts: %s",
				sec.Name(), units.Format(vs, units.Volts), units.Format(so.Vg2, units.Volts), nets[valves.Screen],
				sec.Type.Name, units.Format(lim.ScreenVolts, units.Volts), m.screenCause(sec, nets[valves.Screen], nets[valves.Plate]))
		}
	}
}

// positiveGridCause names the likeliest reason a grid sits positive: the
// part on the grid net that leads to the highest DC volts.
func (m *Model) positiveGridCause(op *OP, sec *Section, gnet string, so SectionOP) string {
	plateOf := map[string]string{} // net → the section whose plate it is
	for _, s := range m.Sections {
		if s == sec {
			continue
		}
		if q := m.D.ByRef[s.Ref]; q != nil && q.Valve != nil {
			plateOf[q.Valve.Sections[s.Section][valves.Plate]] = s.Name()
		}
	}
	if src, ok := plateOf[gnet]; ok {
		return fmt.Sprintf("likely cause: the grid is wired straight to %s's plate; its cathode must sit a few volts above that plate for direct coupling (or a coupling capacitor is missing)", src)
	}
	var best *design.Part
	bestNet, bestV := "", math.Inf(-1)
	for _, u := range m.D.Nets[gnet] {
		q := m.D.ByRef[u.Ref]
		if q == nil {
			continue
		}
		switch q.Kind {
		case design.Resistor, design.Pot, design.Choke, design.BiasSupply, design.DCSupply:
		default:
			continue
		}
		for _, t := range q.Terminals {
			if t.Net == gnet {
				continue
			}
			if v, ok := m.NetVolts(op, t.Net); ok && v > bestV {
				best, bestNet, bestV = q, t.Net, v
			}
		}
	}
	if best == nil {
		return "likely cause: the grid's DC path lifts it above the cathode"
	}
	for _, q := range m.D.PartsOfKind(design.BiasSupply) {
		if out, _ := q.Net("out"); (out == gnet || out == bestNet) && q.Value > 0 {
			return fmt.Sprintf("likely cause: bias supply %s gives %s; a grid bias supply is negative (check its sign and the order of between: [OUT, REF])",
				q.Ref, units.Format(q.Value, units.Volts))
		}
	}
	where := bestNet
	if src, ok := plateOf[bestNet]; ok {
		where = bestNet + ", " + src + "'s plate"
	}
	if bestV > so.Vk+1 {
		return fmt.Sprintf("likely cause: %s takes the grid to %s (%s) instead of to chassis, the cathode or the bias supply (a grid resistor on the wrong net, or a coupling capacitor missing)",
			best.Ref, where, units.Format(bestV, units.Volts))
	}
	return fmt.Sprintf("likely cause: the grid returns through %s to %s (%s), which is not below the cathode: the cathode resistor or the bias is missing",
		best.Ref, where, units.Format(bestV, units.Volts))
}

// screenCause says why a screen may be over its rated volts.
func (m *Model) screenCause(sec *Section, snet, pnet string) string {
	for _, u := range m.D.Nets[snet] {
		if q := m.D.ByRef[u.Ref]; q != nil && q.Kind == design.OutputTransformer {
			return "likely cause: the screen is on the output transformer's primary; feed it from a lower supply node or through a dropping resistor"
		}
	}
	if snet == pnet {
		return "likely cause: the screen is wired to its own plate"
	}
	return fmt.Sprintf("likely cause: the %s supply to %s is too high for this type; feed the screen from a lower filter node, add a dropping resistor or choose a type rated for it", snet, sec.Name())
}
