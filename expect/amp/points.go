package amp

import (
	"fmt"
	"math"
	"slices"
	"sort"
	"strconv"
	"strings"

	"pinwalk/expect/design"
	"pinwalk/expect/point"
	"pinwalk/expect/units"
	"pinwalk/expect/valves"
)

// Quantity names used in point ids' quantities (stable: scripts read them).
const (
	DCVolts     = "dc_volts"
	DCAmps      = "dc_amps"
	ACVolts     = "ac_volts"
	ACAmps      = "ac_amps"
	RippleVolts = "ripple_volts" // AC rms on a DC net
	Ohms        = "ohms"
)

// UnitOf returns the unit symbol of a quantity.
func UnitOf(q string) string {
	switch q {
	case DCVolts, ACVolts, RippleVolts:
		return "V"
	case DCAmps, ACAmps:
		return "A"
	case Ohms:
		return "Ω"
	}
	return ""
}

// PointDef is one measurable point: a socket pin or a net, and a quantity.
type PointDef struct {
	ID        string // "V2.7" for a socket pin, the net name for a net
	Quantity  string
	Label     string // "V2 pin 7 plate"
	Valve     string // valve reference for pins, "" for nets
	Pin       int    // pin number, 0 for nets
	Electrode string
	Net       string
	// Section index in Model.Sections for pins of amplifying sections, or -1.
	Section int
}

// Key is the point's unique key, "ID quantity".
func (p PointDef) Key() string { return p.ID + " " + p.Quantity }

// Points lists every point the model predicts, in a stable order: valves
// in file order with pins in pin order, then nets by name.
func (m *Model) Points() []PointDef {
	m.pointsOnce.Do(func() { m.points = m.points0() })
	return slices.Clone(m.points)
}

func (m *Model) points0() []PointDef {
	var out []PointDef
	secIndex := map[string]int{}
	for i, s := range m.Sections {
		secIndex[s.Ref+"/"+s.Section] = i
	}
	heaterDone := map[string]bool{}
	for _, p := range m.D.Valves() {
		vt := p.Valve.Type
		pins := append([]valves.Pin(nil), vt.Pins...)
		sort.Slice(pins, func(i, j int) bool { return pins[i].Number < pins[j].Number })
		for _, pin := range pins {
			id := p.Ref + "." + strconv.Itoa(pin.Number)
			net := p.Valve.PinNets[pin.Number]
			if net == "" {
				continue
			}
			sec := -1
			if i, ok := secIndex[p.Ref+"/"+pin.Section]; ok {
				sec = i
			}
			label := fmt.Sprintf("%s pin %d %s", p.Ref, pin.Number, electrodeLabel(pin))
			def := PointDef{ID: id, Label: label, Valve: p.Ref, Pin: pin.Number, Electrode: pin.Electrode, Net: net, Section: sec}
			switch pin.Electrode {
			case valves.Heater, valves.HeaterCT:
				if heaterDone[p.Ref] {
					continue
				}
				heaterDone[p.Ref] = true
				d := def
				d.Electrode = valves.Heater
				d.Label = fmt.Sprintf("%s heater, pins %s", p.Ref, heaterPins(p))
				d.Quantity = ACVolts
				out = append(out, d)
				d.Quantity = ACAmps
				out = append(out, d)
			case valves.Plates:
				if vt.Kind != valves.Rectifier {
					// A multi-function valve's diode plates (12AV6 D:
					// unused) are tied to chassis: a DC point like any pin.
					d := def
					d.Quantity = DCVolts
					out = append(out, d)
					continue
				}
				d := def
				d.Quantity = ACVolts
				d.Label += " (to chassis)"
				out = append(out, d)
			default:
				d := def
				d.Quantity = DCVolts
				out = append(out, d)
				if sec >= 0 && (pin.Electrode == valves.Plate || pin.Electrode == valves.Screen || pin.Electrode == valves.Cathode || pin.Electrode == valves.Grid) ||
					pin.Electrode == valves.Anode && m.regulator(p.Ref) != nil {
					d.Quantity = DCAmps
					out = append(out, d)
				}
			}
		}
	}
	nets := m.D.NetNames()
	for _, n := range nets {
		if _, ok := m.nodeOf[n]; !ok || n == m.D.Ground || m.acOnly[n] || strings.HasPrefix(n, "~") {
			continue
		}
		out = append(out, PointDef{ID: n, Quantity: DCVolts, Label: "net " + n, Net: n, Section: -1})
		if m.HT != nil {
			for _, hn := range m.HT.Nets {
				if hn == n {
					out = append(out, PointDef{ID: n, Quantity: RippleVolts, Label: "net " + n + " ripple", Net: n, Section: -1})
				}
			}
		}
	}
	return out
}

func electrodeLabel(p valves.Pin) string {
	e := p.Electrode
	switch e {
	case valves.HeaterCT:
		e = "heater centre tap"
	case valves.Plates:
		e = "plate"
	case valves.Grid3:
		e = "grid 3"
	}
	if p.Section != "" {
		return e + " " + p.Section
	}
	return e
}

// heaterPins describes the heater pins as wired: "2-7", or "4+5 to 9"
// for a double triode on 6.3 V.
func heaterPins(p *design.Part) string {
	vp := p.Valve
	hp := vp.Type.PinsOf("", valves.Heater)
	ct := vp.Type.PinsOf("", valves.HeaterCT)
	if len(ct) > 0 && vp.PinNets[ct[0]] != "" && len(hp) == 2 && vp.PinNets[hp[0]] == vp.PinNets[hp[1]] {
		return fmt.Sprintf("%d+%d to %d", hp[0], hp[1], ct[0])
	}
	if len(hp) == 2 {
		return fmt.Sprintf("%d-%d", hp[0], hp[1])
	}
	return fmt.Sprint(hp)
}

// clean turns numerical dust into zero: below a microvolt or a picoamp
// nothing is measurable.
func clean(v float64, q string) float64 {
	switch q {
	case DCVolts, ACVolts, RippleVolts:
		if math.Abs(v) < 1e-6 {
			return 0
		}
	case DCAmps, ACAmps:
		if math.Abs(v) < 1e-12 {
			return 0
		}
	}
	return v
}

// Value returns a point's value in an operating point (SI units). Pin
// currents are positive in the electrode's normal direction: into plate,
// screen and grid, out of the cathode.
func (m *Model) Value(op *OP, pd PointDef) float64 {
	return clean(m.rawValue(op, pd), pd.Quantity)
}

func (m *Model) rawValue(op *OP, pd PointDef) float64 {
	switch pd.Quantity {
	case DCVolts:
		v, _ := m.NetVolts(op, pd.Net)
		return v
	case DCAmps:
		if pd.Electrode == valves.Anode {
			if rg := m.regulator(pd.Valve); rg != nil {
				return m.RegulatorCurrent(op, rg)
			}
		}
		if pd.Section < 0 || pd.Section >= len(op.Sections) {
			return 0
		}
		so := op.Sections[pd.Section]
		switch pd.Electrode {
		case valves.Plate:
			return so.Ia
		case valves.Screen:
			return so.Ig2
		case valves.Grid:
			return so.Ig
		case valves.Cathode:
			return so.Ik + m.diodeCathodeAmps(op, pd)
		}
	case ACVolts:
		if pd.Electrode == valves.Plates {
			return m.platesAC(op)
		}
		for _, h := range op.Heaters {
			if h.Ref == pd.Valve {
				return h.Volts
			}
		}
	case ACAmps:
		for _, h := range op.Heaters {
			if h.Ref == pd.Valve {
				return h.Amps
			}
		}
	case RippleVolts:
		if op.Supply != nil {
			for _, n := range op.Supply.Nets {
				if n.Net == pd.Net {
					return n.RippleRms
				}
			}
		}
	}
	return math.NaN()
}

// platesAC is the AC volts from a rectifier plate to chassis under load.
func (m *Model) platesAC(op *OP) float64 {
	if op.Supply == nil {
		return 0
	}
	return op.Supply.SecondaryRms
}

// ResistorOP is the dissipation in one resistor.
type ResistorOP struct {
	Ref           string
	Volts, Amps   float64
	Watts         float64
	RatedWatts    float64
	RatingAssumed bool // no watts in the design: 0.5 W assumed
}

// DefaultResistorWatts is the rating assumed when a resistor gives none.
const DefaultResistorWatts = 0.5

// Resistors returns the dissipation of every resistor and pot section.
func (m *Model) Resistors(op *OP) []ResistorOP {
	var out []ResistorOP
	for i, sl := range m.Slots {
		p := m.D.ByRef[sl.Ref]
		if p == nil || (p.Kind != design.Resistor && p.Kind != design.Pot) || sl.Kind != ElemResistance {
			continue
		}
		a, b := m.slotNets[i][0], m.slotNets[i][1]
		va, _ := m.NetVolts(op, a)
		vb, _ := m.NetVolts(op, b)
		cur := m.SlotCurrent(op, i)
		r := ResistorOP{Ref: p.Ref, Volts: va - vb, Amps: cur, Watts: math.Abs((va - vb) * cur), RatedWatts: p.Watts}
		if rms, ok := m.mainsSideAmps(op, i); ok {
			// A transformerless set's surge resistor or dropper, out of
			// the DC network: its rms current, heat I²R.
			ohms := m.Nominal[i]
			r.Volts, r.Amps, r.Watts = rms*ohms, rms, rms*rms*ohms
		}
		m.doublerBleeder(op, i, &r)
		if p.Kind == design.Pot {
			r.Ref = p.Ref + " (" + sl.Role + ")"
		}
		if r.RatedWatts == 0 {
			r.RatedWatts, r.RatingAssumed = DefaultResistorWatts, true
		}
		out = append(out, r)
	}
	return out
}

// SectionLabel returns "V2 6V6GT" or "V1A 12AU7 section A".
func SectionLabel(s *Section) string {
	if s.Section == "" {
		return s.Ref + " " + s.Type.Name
	}
	return s.Ref + s.Section + " " + s.Type.Name + " section " + s.Section
}

// PinsOfValve returns the point definitions of one valve, in pin order.
func PinsOfValve(points []PointDef, ref string) []PointDef {
	var out []PointDef
	for _, p := range points {
		if p.Valve == ref {
			out = append(out, p)
		}
	}
	return out
}

// ParseID splits a point id into valve and pin ("V2.7" → "V2", 7); ok is
// false for a net id.
func ParseID(id string) (valve string, pin int, ok bool) {
	i := strings.LastIndexByte(id, '.')
	if i <= 0 {
		return "", 0, false
	}
	n, err := strconv.Atoi(id[i+1:])
	if err != nil {
		return "", 0, false
	}
	return id[:i], n, true
}

// FormatValue prints a point's value in engineering notation with the unit
// of its quantity ("312 V", "41.8 mA", "220 kΩ").
func FormatValue(v float64, quantity string) string {
	switch quantity {
	case DCVolts, ACVolts, RippleVolts:
		return units.Format(v, units.Volts)
	case DCAmps, ACAmps:
		return units.Format(v, units.Amps)
	case Ohms:
		return units.Format(v, units.Ohms)
	}
	return fmt.Sprintf("%.4g", v)
}

// PointKey is the point's typed key (domain live).
func (p PointDef) PointKey() point.Key { return point.LiveKey(p.ID, p.Quantity) }

// ProbeAt names where a probe goes on a net, as the technician finds it:
// a valve socket pin on the net when there is one ("V1 pin 6 (net PL1)"),
// "chassis" for the ground net, else the net ("net B1").
func (m *Model) ProbeAt(net string) string {
	if net == m.D.Ground {
		return "chassis"
	}
	for _, pd := range m.Points() {
		if pd.Net == net && pd.Valve != "" && pd.Quantity == DCVolts {
			return fmt.Sprintf("%s pin %d (net %s)", pd.Valve, pd.Pin, net)
		}
	}
	return "net " + net
}

// mainsSideAmps is the rms current of a mains-side slot of a
// transformerless set: a dropper carries the series heater string's
// current, a surge resistor the rectifier's rms current (ok false for
// any other slot).
func (m *Model) mainsSideAmps(op *OP, slot int) (float64, bool) {
	for _, i := range m.DropSlots {
		if i == slot {
			for _, w := range op.Windings {
				if w.Name == SeriesStringName {
					return w.Amps, true
				}
			}
			return 0, true
		}
	}
	if m.HT != nil {
		for _, i := range m.HT.LineSlots {
			if i == slot {
				if op.Supply == nil {
					return 0, true
				}
				return op.Supply.RmsAmps, true
			}
		}
	}
	return 0, false
}
