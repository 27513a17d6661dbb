package amp

import (
	"math"

	"pinwalk/expect/valves"
)

// HKRole is the slot role of a valve's heater-to-cathode path: open in a
// healthy valve, a few ohms when the heater has broken down to its cathode
// (the fault "hk-short").
const HKRole = "hk"

// addHeaterCathodeSlots gives each indirectly heated amplifying valve fed
// from a winding with a DC reference (its centre tap, or an end on the
// chassis) an open slot from each of its cathodes to that reference. A
// heater-to-cathode short closes it: the cathode is then tied to the heater
// circuit, and through it to the chassis or the heaters' elevation.
func (m *Model) addHeaterCathodeSlots() {
	d := m.D
	done := map[[2]string]bool{}
	for _, sec := range m.Sections {
		p := d.ByRef[sec.Ref]
		if p == nil || p.Valve == nil || p.Valve.Type.Heater.DirectlyHeated {
			continue
		}
		ref := ""
		for _, h := range m.Heaters {
			if h.Ref != sec.Ref || h.Winding == nil {
				continue
			}
			w := h.Winding
			switch {
			case w.Centre != "":
				ref = w.Centre
			case w.Ends[0] == d.Ground || w.Ends[1] == d.Ground:
				ref = d.Ground
			}
		}
		k := p.Valve.Sections[sec.Section][valves.Cathode]
		if ref == "" || k == "" || k == ref || done[[2]string{sec.Ref, k}] {
			continue
		}
		done[[2]string{sec.Ref, k}] = true
		m.addR(sec.Ref, HKRole, k, ref, math.Inf(1))
	}
}

// GasRole is the slot role of a valve section's ionic grid current: open
// in a healthy valve; a gassy valve's ions, made by the electron stream in
// what gas has leaked in, flow to the negative grid, which a resistor from
// the plate to the grid stands in for (a current that grows with the
// plate volts; the fault "gassy" sets it).
const GasRole = "gas-current"

// addGasSlots gives every amplifying section an open plate-to-grid slot.
func (m *Model) addGasSlots() {
	d := m.D
	for _, sec := range m.Sections {
		e := d.ByRef[sec.Ref].Valve.Sections[sec.Section]
		if e[valves.Plate] == "" || e[valves.Grid] == "" || e[valves.Plate] == e[valves.Grid] {
			continue
		}
		if m.gasSlot == nil {
			m.gasSlot = map[int]int{}
		}
		for i, s := range m.Sections {
			if s == sec {
				m.gasSlot[i] = m.addR(sec.Ref, GasRole+sec.Section, e[valves.Plate], e[valves.Grid], math.Inf(1))
			}
		}
	}
}

// PKRole is the slot role of a valve section's plate-to-cathode path:
// open in a healthy valve, InternalShort ohms when an electrode has
// touched another inside the glass (a sagging plate or grid, a flake of
// cathode coating; the fault "short" of an amplifying valve).
const PKRole = "pk"

// addPlateCathodeSlots gives every amplifying section an open
// plate-to-cathode slot.
func (m *Model) addPlateCathodeSlots() {
	d := m.D
	for i, sec := range m.Sections {
		e := d.ByRef[sec.Ref].Valve.Sections[sec.Section]
		if e[valves.Plate] == "" || e[valves.Cathode] == "" || e[valves.Plate] == e[valves.Cathode] {
			continue
		}
		if m.pkSlot == nil {
			m.pkSlot = map[int]int{}
		}
		m.pkSlot[i] = m.addR(sec.Ref, PKRole+sec.Section, e[valves.Plate], e[valves.Cathode], math.Inf(1))
	}
}
