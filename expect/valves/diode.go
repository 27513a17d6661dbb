package valves

import "math"

// SiliconDiode is a semiconductor rectifier diode (not a valve): Shockley's
// law with ideality factor and series resistance.
type SiliconDiode struct {
	Name string
	Is   float64 // saturation current, amps
	N    float64 // ideality (emission) coefficient
	Rs   float64 // series resistance, ohms
	PIV  float64 // peak inverse voltage rating, volts
	Amps float64 // average forward current rating, amps
}

// thermalVolts is kT/q at 300 K (volts).
const thermalVolts = 0.025852

// diodeLinVolts is the junction voltage above which the exponential is
// continued linearly (its value and slope there), so Newton steps cannot
// overflow.
const diodeLinVolts = 1.2

// DefaultDiode returns the generic 1N4007-class "silicon" diode of the
// library (Is ≈ 7 nA, n ≈ 1.9, Rs ≈ 0.04 Ω, 1000 V, 1 A; from memory of
// public fits). It panics only if the embedded library is corrupt.
func DefaultDiode() SiliconDiode {
	d, ok := LookupDiode("silicon")
	if !ok {
		panic("valves: embedded library has no \"silicon\" diode")
	}
	return d
}

// junction returns Id(vj) = Is·(exp(vj/(n·Vt)) − 1), continued linearly
// above diodeLinVolts, and dId/dvj.
func (d SiliconDiode) junction(vj float64) (i, g float64) {
	nvt := d.N * thermalVolts
	if vj > diodeLinVolts {
		e := math.Exp(diodeLinVolts / nvt)
		g = d.Is * e / nvt
		return d.Is*(e-1) + g*(vj-diodeLinVolts), g
	}
	e := math.Exp(vj / nvt)
	return d.Is * (e - 1), d.Is * e / nvt
}

// Current returns the diode current (amps, anode to cathode) and dI/dV
// (siemens) at a terminal voltage vak, solving vak = vj + Rs·Id(vj) for the
// junction voltage by Newton's method from the right of the root (the
// function is convex and increasing, so the iteration is monotone). A
// 1e-12 S leakage is added. It does not allocate.
func (d SiliconDiode) Current(vak float64) (i, g float64) {
	if d.Is <= 0 || d.N <= 0 {
		return gminSiemens * vak, gminSiemens
	}
	vj := vak
	if d.Rs > 0 {
		if vak <= 0 {
			vj = vak + d.Rs*d.Is // g(vj) ≥ 0 here
		}
		for it := 0; it < 200; it++ {
			id, gd := d.junction(vj)
			f := vj + d.Rs*id - vak
			step := f / (1 + d.Rs*gd)
			vj -= step
			if math.Abs(step) <= 1e-13*(1+math.Abs(vj)) {
				break
			}
		}
	}
	id, gd := d.junction(vj)
	return id + gminSiemens*vak, gd/(1+d.Rs*gd) + gminSiemens
}

// DiodeDevice is a silicon diode between nodes A (anode) and K (cathode),
// satisfying the solver's nonlinear-device contract.
type DiodeDevice struct {
	A, K  int
	Diode SiliconDiode
}

// Terminals returns the node indices in the order anode, cathode.
func (d *DiodeDevice) Terminals() []int { return []int{d.A, d.K} }

// Eval writes terminal currents and their Jacobian for voltages v = (Va, Vk).
func (d *DiodeDevice) Eval(v, cur, jac []float64) {
	i, g := d.Diode.Current(v[0] - v[1])
	cur[0], cur[1] = i, -i
	jac[0], jac[1], jac[2], jac[3] = g, -g, -g, g
}
