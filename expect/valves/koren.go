package valves

import "math"

// Default series resistances of the grid-current diode (common practice for
// Koren-style models: about 2 kΩ for small-signal triodes, 1 kΩ for power
// valves).
const (
	GridOhmsSmall = 2000.0
	GridOhmsPower = 1000.0
)

// Grid-current knee: the grid diode is modelled as a softened ideal diode,
// Ig = (gridSoftVolts/R)·ln(1+exp((Vgk−gridOnsetVolts)/gridSoftVolts)), which
// is linear (1/R) well above the onset and falls off exponentially below it;
// at Vgk = 0 it gives well under a microamp. The constants are our own
// choice, not from a datasheet.
const (
	gridSoftVolts  = 0.05
	gridOnsetVolts = 0.2
)

// screenSoftVolts is the width over which the plate voltage in the screen
// division factor is smoothed towards 0 (our choice: it removes the kink at
// Vpk = 0 and changes nothing above a volt).
const screenSoftVolts = 2.0

// emissionExp is the exponent n of the smooth emission cap
// Ik_eff = Ik/(1+(Ik/Imax)^n)^(1/n).
const emissionExp = 4.0

// softplus returns ln(1+e^x) and its derivative, the logistic function,
// without overflow for large |x|.
func softplus(x float64) (l, sig float64) {
	if x > 0 {
		e := math.Exp(-x) // ≤ 1, never overflows
		return x + math.Log1p(e), 1 / (1 + e)
	}
	e := math.Exp(x)
	return math.Log1p(e), e / (1 + e)
}

// TriodePlate evaluates Koren's triode plate current (N. Koren, "Improved
// vacuum-tube models for SPICE simulations", Glass Audio 8(5), 1996) with a
// contact-potential offset VCT added to the grid voltage:
//
//	E1 = (Vpk/kp)·ln(1 + exp(kp·(1/mu + (Vgk + vct)/√(kvb + Vpk²))))
//	Ip = 2·E1^ex/kg1 for E1 > 0, else 0
//
// The offset stands for the contact potential between grid and cathode
// (a few tenths of a volt to about 1 V in small oxide-cathode triodes:
// K. R. Spangenberg, "Vacuum Tubes", McGraw-Hill 1948, from memory); the
// name VCT follows the offset term of public Koren-style model files. With
// vct = 0 this is Koren's equation unchanged.
//
// vgk and vpk are in volts relative to the cathode; ip in amps, dIdVg (the
// mutual conductance gm) and dIdVp (1/ra) in siemens. The derivatives are
// analytic. It does not allocate.
func (k Koren) TriodePlate(vgk, vpk float64) (ip, dIdVg, dIdVp float64) {
	if !(vpk > 0) || k.KG1 <= 0 || k.Mu <= 0 || k.KP <= 0 {
		return 0, 0, 0
	}
	vg := vgk + k.VCT
	s := math.Sqrt(k.KVB + vpk*vpk)
	a := k.KP * (1/k.Mu + vg/s)
	l, sig := softplus(a)
	e1 := vpk / k.KP * l
	if !(e1 > 0) {
		return 0, 0, 0
	}
	dE1dVg := vpk * sig / s
	dE1dVp := l/k.KP - vpk*vpk*sig*vg/(s*s*s)
	pw := math.Pow(e1, k.Ex-1) // E1^(ex-1)
	ip = 2 * pw * e1 / k.KG1
	d := 2 * k.Ex * pw / k.KG1
	return ip, d * dE1dVg, d * dE1dVp
}

// Pentode evaluates Koren's pentode / beam-tetrode plate current (Glass
// Audio 8(5), 1996) and a screen current drawn from the same E1 with a
// division factor that rises as the plate voltage falls:
//
//	E1  = (Vg2k/kp)·ln(1 + exp(kp·(1/mu + (Vg1k + vct)/Vg2k)))
//	Ip  = 2·E1^ex/kg1 · atan(Vpk/kvb)
//	Ig2 = E1^ex/kg2 · (1 + alpha_s/(1 + beta_s·Vp/Vg2k))
//	Vp  = w·ln(1 + exp(Vpk/w)), w = 2 V (the positive part of Vpk, smoothed)
//
// The screen equation is the one of D. Reefman's "Derk" pentode model
// ("Spice models for vacuum tubes using the uTracer", 2016; from memory of
// public copies), Ig2 = E1^ex/kg2·(1 + αs/(1 + β·Va)), with β·Va replaced by
// beta_s·Vpk/Vg2k: our change, from the similarity of space-charge flow
// (scaling every electrode voltage by the same factor scales every current
// by the same power and leaves the current division unchanged). Koren's own
// screen formula, (Vg2k/mu + Vg1k)^ex/kg2, goes to zero where its bracket
// does and so gives a power valve at a normal idle almost no screen
// current. Here Ig2/Ip depends on Vpk/Vg2k only (and on the plate knee),
// not on the grid voltage. With alpha_s = 0 the screen takes a fixed share
// E1^ex/kg2. vct is the contact-potential offset of TriodePlate.
//
// Voltages in volts relative to the cathode, currents in amps. dIp and dIg2
// are the derivatives with respect to (vg1k, vg2k, vpk) in siemens. Plate
// current is taken as 0 for Vpk ≤ 0 (no reverse emission) and both currents
// are 0 for Vg2k ≤ 0. With KG2 = 0 the screen current is 0. It does not
// allocate.
func (k Koren) Pentode(vg1k, vg2k, vpk float64) (ip, ig2 float64, dIp [3]float64, dIg2 [3]float64) {
	if !(vg2k > 0) || k.Mu <= 0 || k.KP <= 0 {
		return
	}
	vg := vg1k + k.VCT
	a := k.KP * (1/k.Mu + vg/vg2k)
	l, sig := softplus(a)
	e1 := vg2k / k.KP * l
	if !(e1 > 0) {
		return
	}
	pw := math.Pow(e1, k.Ex-1)
	e1x := pw * e1    // E1^ex
	dE1x := k.Ex * pw // d(E1^ex)/dE1
	dE1dG1 := sig     // dE1/dVg1k
	dE1dG2 := l/k.KP - sig*vg/vg2k
	if k.KG1 > 0 && k.KVB > 0 && vpk > 0 {
		base := 2 * e1x / k.KG1 // 2·E1^ex/kg1
		dBase := 2 * dE1x / k.KG1
		x := vpk / k.KVB
		at := math.Atan(x)
		ip = base * at
		dIp[0] = dBase * dE1dG1 * at
		dIp[1] = dBase * dE1dG2 * at
		dIp[2] = base / (k.KVB * (1 + x*x))
	}
	if k.KG2 > 0 {
		p := e1x / k.KG2
		dp := dE1x / k.KG2
		// div = 1 + αs/(1 + βs·Vpk/Vg2k) = 1 + αs·Vg2k/(Vg2k + βs·Vpk),
		// written so that no ratio overflows at tiny Vg2k.
		div, dDivdG2, dDivdP := 1.0, 0.0, 0.0
		if k.AlphaS > 0 {
			// Vpk enters through its smoothed positive part
			// vp = w·ln(1+exp(Vpk/w)), w = screenSoftVolts, so that the
			// division factor has no kink at Vpk = 0.
			sp, sg := softplus(vpk / screenSoftVolts)
			vp := screenSoftVolts * sp
			den := vg2k + k.BetaS*vp
			div = 1 + k.AlphaS*vg2k/den
			r := 1 / den
			c := k.AlphaS * k.BetaS
			dDivdG2 = c * (vp * r) * r
			dDivdP = -c * (vg2k * r) * r * sg
		}
		ig2 = p * div
		dIg2[0] = dp * dE1dG1 * div
		dIg2[1] = dp*dE1dG2*div + p*dDivdG2
		dIg2[2] = p * dDivdP
	}
	return
}

// GridCurrent returns the grid-1 current (amps, flowing into the grid and
// out of the cathode) and its derivative with respect to vgk (siemens): a
// grid-to-cathode diode behind GridOhms (GridOhmsSmall when GridOhms is 0),
// smooth, about 1/GridOhms above a few tenths of a volt and ~0 below 0 V.
// This is the grid-current addition commonly made to Koren's models; the
// knee constants are our own.
func (k Koren) GridCurrent(vgk float64) (ig, dIg float64) {
	r := k.GridOhms
	if r <= 0 {
		r = GridOhmsSmall
	}
	l, sig := softplus((vgk - gridOnsetVolts) / gridSoftVolts)
	return gridSoftVolts / r * l, sig / r
}

// emissionScale returns r = (1+(ik/imax)^n)^(-1/n) and dr/dik, so that
// ik·r is the smoothly emission-capped cathode current. imax ≤ 0 means no cap.
func emissionScale(ik, imax float64) (r, dr float64) {
	if imax <= 0 || !(ik > 0) {
		return 1, 0
	}
	x := ik / imax
	x2 := x * x
	u := x2 * x2 // x^4, emissionExp = 4
	r = 1 / math.Sqrt(math.Sqrt(1+u))
	// d/dik (1+u)^(-1/4) = -(1+u)^(-5/4) · x^3/imax
	dr = -r / (1 + u) * x2 * x / imax
	return r, dr
}

// EmissionCap applies the smooth emission limit Ik_eff = Ik/(1+(Ik/Imax)^4)^(1/4)
// to a cathode current ik (amps): it returns the factor r = Ik_eff/Ik by which
// plate and screen currents are both scaled, and dr/dIk. imax ≤ 0 gives r = 1.
// The form is our own smooth saturation; the physics (Richardson–Dushman
// emission falling steeply with heater voltage) is why a cap is needed.
func EmissionCap(ik, imax float64) (r, drdIk float64) { return emissionScale(ik, imax) }
