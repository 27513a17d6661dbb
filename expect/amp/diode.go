package amp

import (
	"strings"

	"pinwalk/expect/design"
	"pinwalk/expect/valves"
)

// DiodePlate is one plate of a signal-diode section (the detector or AGC
// diodes of a diode-triode) in the network: a value slot (role
// "diode.N", nominal DiodeSeriesOhms; opened when the plate is open inside
// the valve) from the plate's net to an inner node, and the
// Child–Langmuir device (valves.SignalDiodeDevice) from there to the
// valve's cathode, which the diodes share with its other section.
type DiodePlate struct {
	Ref     string // valve reference
	Section string // "D"
	Index   int    // 0 for the first plate net, 1 for the second
	Type    *valves.Type
	Plate   string // nets
	Cathode string
	Slot    int
	dev     *valves.SignalDiodeDevice
}

// DiodeSeriesOhms is the nominal of a diode plate's series slot: small
// beside the diode's own resistance (some kilohms at a milliamp) and the
// detector load, so it changes no reading; a fault opens it.
const DiodeSeriesOhms = 1

// DiodeRole returns the slot role of a signal diode's plate (i from 0).
func DiodeRole(i int) string { return "diode." + string(rune('1'+i)) }

// addDiodes puts a wired signal-diode section in the network.
func (m *Model) addDiodes(p *design.Part, sec string, st *valves.Type) {
	vp := p.Valve
	k := diodeCathode(p)
	for i, net := range strings.Split(vp.Sections[sec][valves.Plates], ",") {
		if net == "" {
			continue
		}
		inner := "~" + p.Ref + "." + sec + "." + string(rune('1'+i))
		slot := m.addR(p.Ref, DiodeRole(i), net, inner, DiodeSeriesOhms)
		dev := &valves.SignalDiodeDevice{A: m.node(inner), K: m.node(k), Perveance: st.Perveance, Contact: st.ContactVolts, Scale: 1}
		m.ckt.AddDevice(dev)
		m.Diodes = append(m.Diodes, &DiodePlate{Ref: p.Ref, Section: sec, Index: i, Type: st,
			Plate: net, Cathode: k, Slot: slot, dev: dev})
	}
}

// diodeCathode is the net on a valve's cathode pin: a diode-triode's
// diodes share the triode's cathode.
func diodeCathode(p *design.Part) string {
	for _, pin := range p.Valve.Type.Pins {
		if pin.Electrode == valves.Cathode {
			if n := p.Valve.PinNets[pin.Number]; n != "" {
				return n
			}
		}
	}
	return p.Valve.Sections[""][valves.Cathode]
}

// DiodeCurrent returns a diode plate's current, plate to cathode.
func (m *Model) DiodeCurrent(op *OP, d *DiodePlate) float64 {
	return m.ckt.ResistorCurrent(m.Slots[d.Slot].handle, op.V)
}

// diodeEmission sets each diode's emission share: the valve's other
// section's (its heater volts and emission: a dead or cold valve is dead in
// all its sections), none in the cold-valves solve, never above 1 (a
// diode's current is space-charge limited). The share scales the
// perveance: a rough stand-in for a cool cathode, whose detector current
// (microamps) it only has to stop when the cathode is cold.
func (s *Solver) diodeEmission(c Conditions, frac []float64) {
	m := s.m
	for _, d := range m.Diodes {
		ef, found := 1.0, false
		for i, sec := range m.Sections {
			if sec.Ref == d.Ref && i < len(frac) {
				ef, found = frac[i], true
				break
			}
		}
		if !found && c.ColdValves {
			ef = 0
		}
		d.dev.Scale = min(max(ef, 0), 1) // a hotter heater adds emission, not space-charge current
	}
}

// DiodeScales returns each diode plate's emission share (per
// Model.Diodes) under the given conditions and values, as Solve sets it.
func (s *Solver) DiodeScales(c Conditions, v *Values) []float64 {
	var op OP
	_, frac := s.emissionLimits(c, v, s.heaters(c, v, &op))
	s.diodeEmission(c, frac)
	out := make([]float64, len(s.m.Diodes))
	for i, d := range s.m.Diodes {
		out[i] = d.dev.Scale
	}
	return out
}

// diodeCathodeAmps is the current of a valve's signal diodes returning
// through the cathode pin of a point (they share the other section's).
func (m *Model) diodeCathodeAmps(op *OP, pd PointDef) float64 {
	var sum float64
	for _, d := range m.Diodes {
		if d.Ref == pd.Valve && d.Cathode == pd.Net {
			sum += m.DiodeCurrent(op, d)
		}
	}
	return sum
}
