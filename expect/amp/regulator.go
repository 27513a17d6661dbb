package amp

import (
	"math"

	"pinwalk/expect/design"
	"pinwalk/expect/units"
)

// MaxGasShuntFarads is the largest capacitance wired straight across a
// gas regulator: more makes the discharge relax (strike, charge, go out,
// strike again) and oscillate (from memory: regulator data sheets give
// about 0.1 µF as the limit).
const MaxGasShuntFarads = 0.1e-6

// regulatorChecks compares each gas regulator with its type's ratings:
// its current hot within the datasheet's range, the volts its anode sees
// at switch-on (cold, the regulator still dark) against its striking
// volts, and the capacitance straight across it.
func (m *Model) regulatorChecks(op, cold *OP, add func(p *design.Part, sev design.Severity, format string, args ...any)) {
	for _, rg := range m.Regulators {
		p := m.D.ByRef[rg.Ref]
		g := rg.Type.Gas
		i := m.RegulatorCurrent(op, rg)
		switch {
		case g.MaxAmps > 0 && i > g.MaxAmps:
			add(p, design.Error, "%s (%s) carries %s, over its %s maximum: the discharge overheats and the valve's life is short; raise its feed resistor",
				rg.Ref, rg.Type.Name, units.Format(i, units.Amps), units.Format(g.MaxAmps, units.Amps))
		case g.MinAmps > 0 && i < g.MinAmps:
			add(p, design.Warning, "%s (%s) carries %s, under its %s minimum: it may go out or oscillate; lower its feed resistor or the load",
				rg.Ref, rg.Type.Name, units.Format(math.Max(i, 0), units.Amps), units.Format(g.MinAmps, units.Amps))
		}
		if cold != nil && g.StrikeVolts > 0 {
			va, _ := m.NetVolts(cold, rg.Anode)
			vk, _ := m.NetVolts(cold, rg.Cathode)
			if va-vk < g.StrikeVolts {
				add(p, design.Error, "%s (%s) sees at most %s at switch-on, under its %s striking volts: it will not strike (the stage it feeds gets the unregulated supply through the feed resistor)",
					rg.Ref, rg.Type.Name, units.Format(va-vk, units.Volts), units.Format(g.StrikeVolts, units.Volts))
			}
		}
		shunt := 0.0
		for _, c := range m.D.PartsOfKind(design.Capacitor) {
			a, b := c.Terminals[0].Net, c.Terminals[1].Net
			if a == rg.Anode && b == rg.Cathode || a == rg.Cathode && b == rg.Anode {
				shunt += c.Value
			}
		}
		if shunt > MaxGasShuntFarads*1.0001 {
			add(p, design.Warning, "%s (%s) has %s straight across it, over about %s: a gas regulator with more capacitance across it can oscillate (from memory, regulator data)",
				rg.Ref, rg.Type.Name, units.Format(shunt, units.Farads), units.Format(MaxGasShuntFarads, units.Farads))
		}
	}
}
