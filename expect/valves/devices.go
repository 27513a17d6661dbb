package valves

import "math"

// The devices below satisfy the solver's nonlinear-device contract
// (Terminals() []int; Eval(v, cur, jac []float64)): cur[k] is the current
// flowing from the circuit INTO terminal k (amps) and jac[k*n+j] =
// ∂cur[k]/∂v[j] (siemens). Currents sum to zero. Eval does not allocate.

// gminSiemens is a tiny conductance put across rectifier and diode
// junctions so that the Jacobian is never singular in reverse bias.
const gminSiemens = 1e-12

// TriodeDevice is one triode section between nodes P (plate), G (grid) and
// K (cathode), using Koren's triode model plus the grid-current diode.
// EmissionLimit (amps of cathode current, 0 = none) caps the plate current
// smoothly, for reduced heater voltage.
type TriodeDevice struct {
	P, G, K       int
	Model         Koren
	EmissionLimit float64
}

// Terminals returns the node indices in the order plate, grid, cathode.
func (d *TriodeDevice) Terminals() []int { return []int{d.P, d.G, d.K} }

// Eval writes terminal currents and their Jacobian for voltages v = (Vp, Vg, Vk).
func (d *TriodeDevice) Eval(v, cur, jac []float64) {
	vgk := v[1] - v[2]
	vpk := v[0] - v[2]
	ip, gm, gp := d.Model.TriodePlate(vgk, vpk)
	if d.EmissionLimit > 0 {
		r, dr := emissionScale(ip, d.EmissionLimit)
		f := r + ip*dr // d(ip·r(ip))/dip
		ip *= r
		gm *= f
		gp *= f
	}
	ig, gg := d.Model.GridCurrent(vgk)
	cur[0] = ip
	cur[1] = ig
	cur[2] = -ip - ig
	// rows: plate, grid, cathode; columns: Vp, Vg, Vk
	jac[0], jac[1], jac[2] = gp, gm, -gp-gm
	jac[3], jac[4], jac[5] = 0, gg, -gg
	jac[6], jac[7], jac[8] = -gp, -gm-gg, gp+gm+gg
}

// PentodeDevice is a pentode or beam tetrode between nodes P (plate), G2
// (screen), G1 (control grid) and K (cathode, with grid 3 or the beam
// plates), using Koren's pentode model plus the grid-current diode.
// EmissionLimit (amps, 0 = none) caps plate plus screen current smoothly,
// scaling both alike.
type PentodeDevice struct {
	P, G2, G1, K  int
	Model         Koren
	EmissionLimit float64
}

// Terminals returns the node indices in the order plate, screen, grid, cathode.
func (d *PentodeDevice) Terminals() []int { return []int{d.P, d.G2, d.G1, d.K} }

// Eval writes terminal currents and their Jacobian for voltages
// v = (Vp, Vg2, Vg1, Vk).
func (d *PentodeDevice) Eval(v, cur, jac []float64) {
	vk := v[3]
	vg1k := v[2] - vk
	ip, ig2, dIp, dIg2 := d.Model.Pentode(vg1k, v[1]-vk, v[0]-vk)
	if d.EmissionLimit > 0 {
		ik := ip + ig2
		r, dr := emissionScale(ik, d.EmissionLimit)
		for j := 0; j < 3; j++ {
			dik := dIp[j] + dIg2[j]
			dIp[j] = dIp[j]*r + ip*dr*dik
			dIg2[j] = dIg2[j]*r + ig2*dr*dik
		}
		ip *= r
		ig2 *= r
	}
	ig, gg := d.Model.GridCurrent(vg1k)
	cur[0] = ip
	cur[1] = ig2
	cur[2] = ig
	cur[3] = -ip - ig2 - ig
	// Columns: Vp, Vg2, Vg1, Vk. dIp = (∂/∂vg1k, ∂/∂vg2k, ∂/∂vpk).
	row := func(k int, dv [3]float64, gExtra float64) {
		jac[k*4+0] = dv[2]
		jac[k*4+1] = dv[1]
		jac[k*4+2] = dv[0] + gExtra
		jac[k*4+3] = -(dv[0] + dv[1] + dv[2] + gExtra)
	}
	row(0, dIp, 0)
	row(1, dIg2, 0)
	row(2, [3]float64{}, gg)
	for j := 0; j < 4; j++ {
		jac[12+j] = -(jac[j] + jac[4+j] + jac[8+j])
	}
}

// RectifierDevice is one anode of a valve rectifier between nodes A (anode)
// and K (cathode), following the Child–Langmuir law I = Perveance·V^1.5 for
// V > 0 (A/V^1.5) with a tiny leakage conductance added everywhere.
// EmissionLimit (amps, 0 = none) caps the current smoothly.
type RectifierDevice struct {
	A, K          int
	Perveance     float64
	EmissionLimit float64
}

// Terminals returns the node indices in the order anode, cathode.
func (d *RectifierDevice) Terminals() []int { return []int{d.A, d.K} }

// Eval writes terminal currents and their Jacobian for voltages v = (Va, Vk).
func (d *RectifierDevice) Eval(v, cur, jac []float64) {
	i, g := d.Current(v[0] - v[1])
	cur[0], cur[1] = i, -i
	jac[0], jac[1], jac[2], jac[3] = g, -g, -g, g
}

// Current returns the anode current (amps) and dI/dV (siemens) at an
// anode-to-cathode voltage vak (volts).
func (d *RectifierDevice) Current(vak float64) (i, g float64) {
	i, g = gminSiemens*vak, gminSiemens
	if vak > 0 && d.Perveance > 0 {
		sq := math.Sqrt(vak)
		ic := d.Perveance * vak * sq
		gc := 1.5 * d.Perveance * sq
		if d.EmissionLimit > 0 {
			r, dr := emissionScale(ic, d.EmissionLimit)
			gc *= r + ic*dr
			ic *= r
		}
		i += ic
		g += gc
	}
	return i, g
}

// SignalDiodeDevice is one plate of a signal (detector) diode between nodes
// A (plate) and K (cathode): Child–Langmuir, I = Scale·Perveance·(V+Contact)^1.5
// for V+Contact > 0, with the tiny leakage conductance of the rectifier.
// Contact is the contact potential that lets the plate collect electrons
// (the initial-velocity current) until it sits that far below the cathode,
// so a detector returned to its cathode through a resistor reads a little
// negative with no signal. Scale is the cathode's emission share (1 hot, 0
// cold).
type SignalDiodeDevice struct {
	A, K               int
	Perveance, Contact float64
	Scale              float64
}

// Terminals returns the node indices in the order plate, cathode.
func (d *SignalDiodeDevice) Terminals() []int { return []int{d.A, d.K} }

// Eval writes terminal currents and their Jacobian for voltages v = (Va, Vk).
func (d *SignalDiodeDevice) Eval(v, cur, jac []float64) {
	i, g := d.Current(v[0] - v[1])
	cur[0], cur[1] = i, -i
	jac[0], jac[1], jac[2], jac[3] = g, -g, -g, g
}

// Current returns the plate current (amps) and dI/dV (siemens) at a
// plate-to-cathode voltage vak (volts).
func (d *SignalDiodeDevice) Current(vak float64) (i, g float64) {
	i, g = gminSiemens*vak, gminSiemens
	if x := vak + d.Contact; x > 0 && d.Perveance > 0 && d.Scale > 0 {
		sq := math.Sqrt(x)
		i += d.Scale * d.Perveance * x * sq
		g += 1.5 * d.Scale * d.Perveance * sq
	}
	return i, g
}
