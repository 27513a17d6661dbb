package valves

import "math"

// A cold-cathode gas regulator (OA2, OB2, 0D3) at DC, once struck: its
// burning voltage is nearly constant over its current range, rising by
// the datasheet's regulation from min to max current. pinwalk models it
// as a diode-plus-source (GasLaw): an ideal source of Offset volts in
// series with an incremental resistance R and a junction with the
// library's silicon-diode law (its sharp knee stands in for the
// discharge's: below the burning voltage the valve passes no current),
//
//	V(I) = Offset + R·I + n·Vt·ln(1 + I/Is),
//
// with R = regulation / (max − min) and Offset chosen so that V at the
// middle of the current range is the maintaining volts. The SPICE export
// writes the same three elements (a DC source, a resistor and a diode
// model with the same Is and n). Striking (the supply must reach strike
// volts with the valve not yet conducting) and the current range are
// rating checks, not part of the law: a valve that cannot strike is an
// open circuit (the fault "dead").

// defaultRegulationOhms is the incremental resistance used when a type
// gives no regulation: about 2 V over 25 mA (an OA2's, from memory).
const defaultRegulationOhms = 80

// GasLaw is a struck regulator's law, in the parts pinwalk builds it of.
type GasLaw struct {
	Offset   float64      // series source, volts
	R        float64      // incremental resistance, ohms
	Junction SiliconDiode // the knee (Rs 0)
}

// GasLawOf returns the law of a regulator type.
func GasLawOf(g GasRating) GasLaw {
	r := defaultRegulationOhms * 1.0
	if g.RegulationVolts > 0 && g.MaxAmps > g.MinAmps {
		r = g.RegulationVolts / (g.MaxAmps - g.MinAmps)
	}
	d := DefaultDiode()
	d.Rs = 0
	mid := (g.MinAmps + g.MaxAmps) / 2
	vj := d.N * thermalVolts * math.Log1p(mid/d.Is)
	return GasLaw{Offset: g.MaintainVolts - r*mid - vj, R: r, Junction: d}
}

// Volts returns the burning voltage at current i (amps, > 0).
func (l GasLaw) Volts(i float64) float64 {
	return l.Offset + l.R*i + l.Junction.N*thermalVolts*math.Log1p(i/l.Junction.Is)
}

// GasDevice is the junction and offset of a regulator between nodes A
// (the internal node behind its incremental resistance, which the network
// holds as a resistor) and K (cathode): I = Junction(Va − Vk − Offset).
type GasDevice struct {
	A, K   int
	Offset float64
	Diode  SiliconDiode
}

// Terminals returns the node indices in the order anode side, cathode.
func (d *GasDevice) Terminals() []int { return []int{d.A, d.K} }

// Eval writes terminal currents and their Jacobian for voltages v = (Va, Vk).
func (d *GasDevice) Eval(v, cur, jac []float64) {
	i, g := d.Diode.Current(v[0] - v[1] - d.Offset)
	cur[0], cur[1] = i, -i
	jac[0], jac[1], jac[2], jac[3] = g, -g, -g, g
}
