package spice

import (
	"fmt"
	"strings"

	"pinwalk/expect/valves"
)

// This file is the one place where the device laws of expect/valves are
// written in SPICE: the Koren triode and pentode plate and screen currents,
// the grid-current diode, the smooth emission cap and the Child–Langmuir
// rectifier anode. Each is a .func of the netlist (so a behavioural source
// reads as koren_tri_ip(V(g,k), V(p,k), mu, ex, kg1, kp, kvb)) and each
// mirrors the Go function named beside it exactly, branch for branch. When
// a law changes in expect/valves, change it here and only here;
// TestDeviceLawsMatchGo evaluates every law in ngspice against the Go
// function and fails when the two part.

// Grid-diode knee constants, as in expect/valves/koren.go (gridSoftVolts,
// gridOnsetVolts).
const (
	gridSoftVolts  = 0.05
	gridOnsetVolts = 0.2
)

// gminSiemens is the leakage expect/valves puts across a rectifier anode.
const gminSiemens = 1e-12

// funcs returns the .func lines that define the device laws.
func funcs() string {
	var b strings.Builder
	w := func(comment, def string) {
		fmt.Fprintf(&b, "* %s\n.func %s\n", comment, def)
	}
	w("ln(1+exp(x)) without overflow (valves.softplus)",
		"pw_softplus(x) {max(x,0) + ln(1 + exp(-abs(x)))}")
	// valves.Koren.TriodePlate (the callers pass Vgk + vct, the
	// contact-potential offset):
	//   E1 = (Vpk/kp)·ln(1+exp(kp·(1/mu + (Vgk+vct)/√(kvb+Vpk²))))
	//   Ip = 2·E1^ex/kg1 for Vpk > 0 and E1 > 0, else 0
	w("Koren triode E1 (valves.Koren.TriodePlate)",
		"koren_tri_e1(vgk, vpk, mu, kp, kvb) {vpk/kp * pw_softplus(kp*(1/mu + vgk/sqrt(kvb + vpk*vpk)))}")
	w("Koren triode plate current, amps: 2*E1^ex/kg1, 0 for Vpk <= 0",
		"koren_tri_ip(vgk, vpk, mu, ex, kg1, kp, kvb) {vpk > 0 ? 2*pwr(max(koren_tri_e1(vgk, vpk, mu, kp, kvb), 0), ex)/kg1 : 0}")
	// valves.Koren.Pentode:
	//   E1  = (Vg2k/kp)·ln(1+exp(kp·(1/mu + Vg1k/Vg2k)))
	//   Ip  = 2·E1^ex/kg1 · atan(Vpk/kvb)   (Vg2k > 0, Vpk > 0)
	//   Ig2 = E1^ex/kg2 · (1 + αs·Vg2k/(Vg2k + βs·Vp)), Vp = 2·ln(1+exp(Vpk/2))
	//   (Vg1k carries + vct as for the triode)
	w("Koren pentode E1 (valves.Koren.Pentode); the max() only keeps the unused branch finite",
		"koren_pen_e1(vg1k, vg2k, mu, kp) {vg2k/kp * pw_softplus(kp*(1/mu + vg1k/max(vg2k, 1e-30)))}")
	w("Koren pentode plate current, amps: 2*E1^ex/kg1*atan(Vpk/kvb), 0 for Vg2k <= 0 or Vpk <= 0",
		"koren_pen_ip(vg1k, vg2k, vpk, mu, ex, kg1, kp, kvb) {vg2k > 0 ? (vpk > 0 ? 2*pwr(max(koren_pen_e1(vg1k, vg2k, mu, kp), 0), ex)/kg1*atan(vpk/kvb) : 0) : 0}")
	w("pentode screen current, amps: E1^ex/kg2 times the plate-dependent division factor (valves.Koren.Pentode), 0 for Vg2k <= 0",
		"koren_pen_ig2(vg1k, vg2k, vpk, mu, ex, kp, kg2, as, bs) {vg2k > 0 ? pwr(max(koren_pen_e1(vg1k, vg2k, mu, kp), 0), ex)/kg2*(1 + as*vg2k/(vg2k + bs*2*pw_softplus(vpk/2))) : 0}")
	// valves.Koren.GridCurrent: Ig = (soft/R)·ln(1+exp((Vgk−onset)/soft)).
	w(fmt.Sprintf("grid-current diode, amps (valves.Koren.GridCurrent): knee %g V wide at %g V, then 1/r", gridSoftVolts, gridOnsetVolts),
		fmt.Sprintf("pw_grid(vgk, r) {%g/r * pw_softplus((vgk - %g)/%g)}", gridSoftVolts, gridOnsetVolts, gridSoftVolts))
	// valves.EmissionCap: r = (1+(Ik/Imax)^4)^(−1/4) for Ik > 0.
	w("smooth emission cap factor (valves.EmissionCap): (1+(ik/imax)^4)^(-1/4), 1 for ik <= 0",
		"pw_emcap(ik, imax) {ik > 0 ? 1/pwr(1 + pwr(ik/imax, 4), 0.25) : 1}")
	// valves.RectifierDevice.Current: I = G·V^1.5 for V > 0 plus gmin·V.
	w("Child-Langmuir rectifier anode, amps (valves.RectifierDevice): g*V^1.5 for V > 0",
		"pw_child(vak, g) {vak > 0 ? g*pwr(vak, 1.5) : 0}")
	// valves.SignalDiodeDevice.Current: I = s·G·(V+c)^1.5 for V+c > 0 plus gmin·V.
	w("Child-Langmuir signal diode plate, amps (valves.SignalDiodeDevice): s*g*(V+c)^1.5 for V+c > 0, c the contact potential",
		"pw_sdiode(vak, g, c, s) {vak + c > 0 ? s*g*pwr(vak + c, 1.5) : 0}")
	return b.String()
}

// signalDiode returns the behavioural expression of one signal-diode
// plate: perveance g, contact potential c, emission share s, plus the
// leakage valves.SignalDiodeDevice adds.
func signalDiode(vak string, g, c, s float64) string {
	return fmt.Sprintf("pw_sdiode(%s, %s, %s, %s) + %s*%s", vak, num(g), num(c), num(s), num(gminSiemens), vak)
}

// num formats a model parameter.
func num(x float64) string { return fmt.Sprintf("%.10g", x) }

// gridOhms is the series resistance of a model's grid diode, with the
// default valves.Koren.GridCurrent uses when it is zero.
func gridOhms(k valves.Koren) float64 {
	if k.GridOhms > 0 {
		return k.GridOhms
	}
	return valves.GridOhmsSmall
}

// korenValid mirrors the guards of valves.Koren.TriodePlate and Pentode:
// a model with a non-positive mu, kp or kg1 gives no plate current.
func korenValid(k valves.Koren) bool { return k.Mu > 0 && k.KP > 0 && k.KG1 > 0 }

// triodeIp returns the behavioural expression of a triode section's plate
// current, vgk and vpk being SPICE voltage expressions. imax > 0 applies
// the emission cap to it (valves.TriodeDevice caps the plate current only).
func triodeIp(k valves.Koren, vgk, vpk string, imax float64) string {
	if !korenValid(k) {
		return "0"
	}
	ip := fmt.Sprintf("koren_tri_ip(%s, %s, %s, %s, %s, %s, %s)", withVCT(vgk, k), vpk, num(k.Mu), num(k.Ex), num(k.KG1), num(k.KP), num(k.KVB))
	if imax > 0 {
		return fmt.Sprintf("%s*pw_emcap(%s, %s)", ip, ip, num(imax))
	}
	return ip
}

// pentodeCurrents returns the behavioural expressions of a pentode's plate
// and screen currents. imax > 0 caps both by the factor of their sum, as
// valves.PentodeDevice does.
func pentodeCurrents(k valves.Koren, vg1k, vg2k, vpk string, imax float64) (ip, ig2 string) {
	ip, ig2 = "0", "0"
	if k.Mu > 0 && k.KP > 0 {
		if k.KG1 > 0 && k.KVB > 0 {
			ip = fmt.Sprintf("koren_pen_ip(%s, %s, %s, %s, %s, %s, %s, %s)", withVCT(vg1k, k), vg2k, vpk, num(k.Mu), num(k.Ex), num(k.KG1), num(k.KP), num(k.KVB))
		}
		if k.KG2 > 0 {
			ig2 = fmt.Sprintf("koren_pen_ig2(%s, %s, %s, %s, %s, %s, %s, %s, %s)", withVCT(vg1k, k), vg2k, vpk, num(k.Mu), num(k.Ex), num(k.KP), num(k.KG2), num(k.AlphaS), num(k.BetaS))
		}
	}
	if imax > 0 {
		r := fmt.Sprintf("pw_emcap(%s + %s, %s)", ip, ig2, num(imax))
		if ip != "0" {
			ip += "*" + r
		}
		if ig2 != "0" {
			ig2 += "*" + r
		}
	}
	return ip, ig2
}

// withVCT adds a model's contact-potential offset to a grid voltage
// expression (valves.Koren.VCT).
func withVCT(vg string, k valves.Koren) string {
	if k.VCT == 0 {
		return vg
	}
	return fmt.Sprintf("(%s + %s)", vg, num(k.VCT))
}

// gridIg returns the behavioural expression of the grid-current diode.
func gridIg(k valves.Koren, vgk string) string {
	return fmt.Sprintf("pw_grid(%s, %s)", vgk, num(gridOhms(k)))
}

// rectifierAnode returns the behavioural expression of one valve
// rectifier anode: Child–Langmuir with perveance g (A/V^1.5), limited to
// maxAmps when that is positive (the supply simulation clips the current
// of a cool filament there), plus the leakage valves.RectifierDevice adds.
func rectifierAnode(vak string, g, maxAmps float64) string {
	i := fmt.Sprintf("pw_child(%s, %s)", vak, num(g))
	if maxAmps > 0 {
		i = fmt.Sprintf("min(%s, %s)", i, num(maxAmps))
	}
	return fmt.Sprintf("%s + %s*%s", i, num(gminSiemens), vak)
}
