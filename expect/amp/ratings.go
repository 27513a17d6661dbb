package amp

import (
	"fmt"
	"math"
	"sort"

	"pinwalk/expect/design"
	"pinwalk/expect/units"
	"pinwalk/expect/valves"
)

// Finding is a rating check's result.
type Finding struct {
	Ref      string
	Severity design.Severity
	Msg      string
	Pos      design.Pos
}

// ColdStart solves the design with no valve conducting at the given mains
// (0 = nominal): the voltages every part sees at switch-on before the
// valves warm (and, with a silicon or fast rectifier, the highest they see).
func (s *Solver) ColdStart(mains float64, op *OP) error {
	return s.Solve(Conditions{MainsVolts: mains, ColdValves: true}, s.m.NominalValues(), false, op)
}

// RatingChecks compares the operating point hot (op) and at the
// switch-on peak at high mains (cold) with every part's ratings:
// resistor dissipation over half its rating (common practice), capacitor
// voltage ratings against the highest voltage across them, valve plate and
// screen dissipation, grid-1 resistance against the datasheet maximum, a
// control grid positive of its cathode, screen volts over the datasheet
// maximum, gas regulators (current range, striking volts at switch-on,
// capacitance across them), and heater windings and heater volts (±10 %,
// common practice).
func (m *Model) RatingChecks(op, cold *OP) []Finding {
	var out []Finding
	add := func(p *design.Part, sev design.Severity, format string, args ...any) {
		f := Finding{Severity: sev, Msg: fmt.Sprintf(format, args...)}
		if p != nil {
			f.Ref, f.Pos = p.Ref, p.Pos
		}
		out = append(out, f)
	}
	for _, r := range m.Resistors(op) {
		p := m.D.ByRef[trimRole(r.Ref)]
		pct := 100 * r.Watts / r.RatedWatts
		assumed := ""
		if r.RatingAssumed {
			assumed = " (no watts given: 0.5 W assumed)"
		}
		switch {
		case pct > 100:
			add(p, design.Error, "%s dissipates %s, over its %s rating%s", r.Ref, units.Format(r.Watts, units.Watts), units.Format(r.RatedWatts, units.Watts), assumed)
		case pct > 50:
			add(p, design.Warning, "%s dissipates %s, %.0f%% of its %s rating%s: common practice is at most half; fit a %s part",
				r.Ref, units.Format(r.Watts, units.Watts), pct, units.Format(r.RatedWatts, units.Watts), assumed, units.Format(nextWatts(2*r.Watts), units.Watts))
		}
	}
	for _, p := range m.D.PartsOfKind(design.Capacitor) {
		if p.Volts == 0 {
			continue
		}
		a, b := p.Terminals[0].Net, p.Terminals[1].Net
		worst := 0.0
		for _, o := range []*OP{op, cold} {
			if o == nil {
				continue
			}
			va, _ := m.NetVolts(o, a)
			vb, _ := m.NetVolts(o, b)
			worst = math.Max(worst, math.Abs(va-vb))
		}
		if worst > p.Volts {
			add(p, design.Error, "%s is rated %s but sees %s (switch-on peak at high mains, before the valves conduct)",
				p.Ref, units.Format(p.Volts, units.Volts), units.Format(worst, units.Volts))
		} else if worst > 0.9*p.Volts {
			add(p, design.Warning, "%s is rated %s and sees up to %s at switch-on: little margin",
				p.Ref, units.Format(p.Volts, units.Volts), units.Format(worst, units.Volts))
		}
	}
	for i, sec := range m.Sections {
		so := op.Sections[i]
		p := m.D.ByRef[sec.Ref]
		lim := sec.Type.Limits
		if lim.PlateWatts > 0 {
			pct := 100 * so.Pa / lim.PlateWatts
			if pct > 100 {
				add(p, design.Error, "%s plate dissipation %s is %.0f%% of its %s rating", sec.Name(), units.Format(so.Pa, units.Watts), pct, units.Format(lim.PlateWatts, units.Watts))
			}
		}
		if sec.Pentode && lim.ScreenWatts > 0 && so.Pg2 > lim.ScreenWatts {
			add(p, design.Error, "%s screen dissipation %s is over its %s rating", sec.Name(), units.Format(so.Pg2, units.Watts), units.Format(lim.ScreenWatts, units.Watts))
		}
		// Grid-1 resistance: the largest resistor from the grid net.
		rg := 0.0
		gnet := m.D.ByRef[sec.Ref].Valve.Sections[sec.Section][valves.Grid]
		for _, u := range m.D.Nets[gnet] {
			if q := m.D.ByRef[u.Ref]; q != nil && q.Kind == design.Resistor {
				rg = math.Max(rg, q.Value)
			}
		}
		fixed := so.Vk < 1 && so.Vg < -1
		limit, kind := lim.GridOhmsCathode, "cathode"
		if fixed {
			limit, kind = lim.GridOhmsFixed, "fixed"
		}
		if limit > 0 && rg > limit {
			add(p, design.Warning, "%s grid resistance %s is over the datasheet maximum of %s for %s bias",
				sec.Name(), units.Format(rg, units.Ohms), units.Format(limit, units.Ohms), kind)
		}
	}
	m.electrodeChecks(op, add)
	m.regulatorChecks(op, cold, add)
	for _, w := range op.Windings {
		if w.RatedAmps > 0 && w.Amps > w.RatedAmps*1.0001 {
			add(nil, design.Error, "heater winding %s carries %s (%v), over its %s rating",
				w.Name, units.Format(w.Amps, units.Amps), w.Refs, units.Format(w.RatedAmps, units.Amps))
		}
	}
	seen := map[string]bool{}
	for _, h := range m.Heaters {
		if seen[h.Ref] {
			continue
		}
		seen[h.Ref] = true
		for _, ho := range op.Heaters {
			if ho.Ref != h.Ref || ho.Volts == 0 {
				continue
			}
			r := ho.Volts / h.RatedVolts
			if r > 1.1 || r < 0.9 {
				add(m.D.ByRef[h.Ref], design.Warning, "%s heater at %s, outside ±10%% of its %s rating (common practice)",
					h.Ref, units.Format(ho.Volts, units.Volts), units.Format(h.RatedVolts, units.Volts))
			}
		}
	}
	sort.SliceStable(out, func(i, j int) bool { return out[i].Severity < out[j].Severity })
	return out
}

func trimRole(ref string) string {
	for i := 0; i < len(ref); i++ {
		if ref[i] == ' ' {
			return ref[:i]
		}
	}
	return ref
}

// nextWatts is the next usual resistor power rating at or above w.
func nextWatts(w float64) float64 {
	for _, r := range []float64{0.25, 0.5, 1, 2, 3, 5, 7, 10, 17, 25, 50} {
		if r >= w {
			return r
		}
	}
	return math.Ceil(w)
}
