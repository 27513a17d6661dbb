package cold

import (
	"fmt"
	"math"
	"sort"

	"pinwalk/expect/amp"
	"pinwalk/expect/design"
	"pinwalk/expect/units"
)

// Discharge thresholds, volts DC.
const (
	// HazardVolts: a part is not hazardous live at or below 60 V DC
	// (IEC 60065, audio, video and similar apparatus, as quoted in the
	// project's reference notes).
	HazardVolts = 60.0
	// TouchVolts: common practice is to go on to below 10 V before
	// touching.
	TouchVolts = 10.0
)

// Discharge is how one filter or supply capacitor bleeds down after
// power-off.
type Discharge struct {
	Ref, Net string
	// Other is a floating capacitor's second net (a voltage doubler's;
	// "" for chassis): its volts are read from Net to Other.
	Other  string
	Farads float64
	// PeakVolts is the capacitor's volts at the cold-start peak (valves
	// cold, high mains): the most it can hold.
	PeakVolts float64
	// BleedOhms is the DC resistance from the capacitor's net to chassis
	// with every capacitor open and the valves cold: the bleed path a
	// meter would read (+Inf when there is none).
	BleedOhms float64
	// To60 and To10 are the seconds from PeakVolts until the capacitor
	// stays below HazardVolts and TouchVolts; +Inf with no bleed path.
	To60, To10 float64
	NoPath     bool
	Warning    string
}

// DischargeTimes computes the bleed-down of each HT filter capacitor
// (m.HT.CapRefs, stage by stage), each capacitor of 0.5 µF or more on a
// bias-supply or bench-supply output, and those of every other
// rectifier's reservoir and filter (amp.AuxRect), from the cold-start peak at
// mains·(1 + the design's upper mains tolerance) (mains 0: the design's
// mains). The bias and bench supplies hold their nominal output in that
// solve (they do not follow the mains in the model).
//
// After power-off the valves are cold and conduct nothing, rectifiers
// block (a capacitor's charge cannot flow back through them), and bias
// and bench supplies are open: the capacitors discharge only through the
// cold resistive network (bleeders, dividers, series resistors and choke
// DCRs between stages, output transformer windings). Every capacitor
// from a net to chassis takes part, all at once: C·dV/dt = −G·V, solved
// by diagonalisation (see rcNet); capacitors between two non-chassis
// nets are left out. A capacitor whose net has no resistive path to
// chassis never discharges: NoPath, times +Inf and a loud warning.
func DischargeTimes(d *design.Design, m *amp.Model, mains float64) ([]Discharge, error) {
	if mains <= 0 {
		mains = d.Mains.Volts
	}
	var op amp.OP
	if err := amp.NewSolver(m).ColdStart(mains*(1+d.Mains.Tol.Hi), &op); err != nil {
		return nil, fmt.Errorf("discharge: cold-start peak: %w", err)
	}
	// The capacitors to report, in order.
	var rows []Discharge
	seen := map[string]bool{}
	addRow := func(p *design.Part, net string) {
		if seen[p.Ref] {
			return
		}
		seen[p.Ref] = true
		v, _ := m.NetVolts(&op, net)
		rows = append(rows, Discharge{Ref: p.Ref, Net: net, Farads: p.Value, PeakVolts: v})
	}
	all := capsToChassis(d, 0)
	if m.HT != nil {
		for i, refs := range m.HT.CapRefs {
			for _, r := range refs {
				addRow(d.ByRef[r], m.HT.Nets[i])
			}
		}
	}
	for _, p := range d.Parts {
		if p.Kind != design.BiasSupply && p.Kind != design.DCSupply {
			continue
		}
		out := p.Terminals[0].Net
		for _, c := range all[out] {
			if c.Value >= 0.5e-6 {
				addRow(c, out)
			}
		}
	}
	// A rectifier off its own winding: its reservoir and the filter
	// capacitors behind it (nets reached through resistors, pots and
	// chokes without passing chassis).
	for _, a := range m.AuxRects() {
		for _, net := range filterNets(d, a.Out) {
			for _, c := range all[net] {
				if c.Value >= 0.5e-6 {
					addRow(c, net)
				}
			}
		}
	}
	n := buildNetwork(d)
	if out, ok, err := doublerDischarge(d, m, &op, n, all, rows); ok {
		return out, err
	}
	// The dynamic network: every net with a capacitor to chassis that has
	// a resistive path to chassis, and the nets joined to it.
	grounded := n.reach(d.Ground, "")
	var nets []string
	for x := range grounded {
		if x != d.Ground {
			nets = append(nets, x)
		}
	}
	sort.Strings(nets)
	g, c, idx := n.matrices(nets, all)
	var rc *rcNet
	hasCap := false
	for _, ci := range c {
		hasCap = hasCap || ci > 0
	}
	if hasCap {
		var err error
		if rc, err = newRC(g, c); err != nil {
			return nil, fmt.Errorf("discharge: %w", err)
		}
	}
	var v0 []float64
	if rc != nil {
		v0 = make([]float64, len(rc.capIx))
		for k, i := range rc.capIx {
			v, _ := m.NetVolts(&op, nets[i])
			v0[k] = v
		}
	}
	for i := range rows {
		r := &rows[i]
		bleed, open, err := n.resistance(r.Net, d.Ground, 0)
		if err != nil {
			return nil, err
		}
		r.BleedOhms = bleed
		peak := math.Abs(r.PeakVolts)
		if open || !grounded[r.Net] {
			r.NoPath = true
			r.BleedOhms = math.Inf(1)
			r.To60, r.To10 = math.Inf(1), math.Inf(1)
			if peak < TouchVolts {
				r.To60, r.To10 = 0, 0
			} else if peak < HazardVolts {
				r.To60 = 0
			}
			r.Warning = fmt.Sprintf("WARNING: %s (%s on %s) has NO BLEED PATH: it can hold %s for hours after power-off. Discharge it with a resistor tool (a few kΩ, several watts, on insulated leads) and verify below %g V with the meter before touching",
				r.Ref, units.Format(r.Farads, units.Farads), r.Net, units.Format(peak, units.Volts), TouchVolts)
			if isBench(d, r.Net) {
				r.Warning += "; a bench supply's own bleeder, if it has one, is not in the design"
			}
			continue
		}
		o := rc.observe(idx[r.Net])
		a := rc.coeffs(o, v0)
		r.To60 = lastAbove(a, rc.lambda, HazardVolts)
		r.To10 = lastAbove(a, rc.lambda, TouchVolts)
		if r.To10 > 300 {
			r.Warning = fmt.Sprintf("%s takes %s to fall below %g V: discharge it with a resistor tool rather than wait, and verify with the meter",
				r.Ref, FormatDuration(r.To10), TouchVolts)
		}
	}
	return rows, nil
}

func isBench(d *design.Design, net string) bool {
	for _, p := range d.PartsOfKind(design.DCSupply) {
		if p.Terminals[0].Net == net {
			return true
		}
	}
	return false
}

// filterNets returns from and the nets reached from it through resistors,
// pots and chokes without passing chassis, nearest first.
func filterNets(d *design.Design, from string) []string {
	out := []string{from}
	seen := map[string]bool{from: true, d.Ground: true}
	for i := 0; i < len(out); i++ {
		for _, u := range d.Nets[out[i]] {
			p := d.ByRef[u.Ref]
			if p == nil || (p.Kind != design.Resistor && p.Kind != design.Pot && p.Kind != design.Choke) {
				continue
			}
			for _, t := range p.Terminals {
				if !seen[t.Net] {
					seen[t.Net] = true
					out = append(out, t.Net)
				}
			}
		}
	}
	return out
}
