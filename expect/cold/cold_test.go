package cold

import (
	"math"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"

	"pinwalk/expect/amp"
	"pinwalk/expect/design"
)

func near(got, want, rel float64) bool {
	return math.Abs(got-want) <= rel*math.Abs(want)
}

func findCheck(t *testing.T, cs []Check, id string) Check {
	t.Helper()
	for _, c := range cs {
		if c.ID == id {
			return c
		}
	}
	t.Fatalf("no check %q", id)
	return Check{}
}

// TestColdResistanceHand checks in-circuit cold readings against hand
// calculation (series and parallel resistances, Ohm's law).
func TestColdResistanceHand(t *testing.T) {
	d, _ := loadDemo(t, "pp-el34-fixed")
	cs, err := Checks(d)
	if err != nil {
		t.Fatal(err)
	}
	cases := []struct {
		id      string
		want    float64
		lo, hi  float64
		comment string
	}{
		// NB: R4 10k + VR1 10k track + R6 15k limiter, in parallel with
		// R5 + VR2 + R7 (the grid leaks end on cold grids): 35k ∥ 35k;
		// 5 % resistors, 20 % pot track.
		{"NB", 17.5e3, 0.5 * (9.5e3 + 8e3 + 14.25e3), 0.5 * (10.5e3 + 12e3 + 15.75e3), "hand: two dividers in parallel"},
		// PIG1: R20 1M to the tail, R23 10k to chassis (the tail's other
		// branches end on a cold cathode and an open capacitor).
		{"PIG1", 1.01e6, 0.95 * 1.01e6, 1.05 * 1.01e6, "hand: series"},
		{"K1", 1500, 1425, 1575, "hand: R12"},
		// Cathode sense resistors, 1 % parts.
		{"KA", 1, 0.99, 1.01, "hand: R34"},
		// Output transformer: each half its DCR, the whole primary both.
		{"OT1 half a", 95, 85.5, 104.5, "design DCR, ±10 % winding tolerance"},
		{"OT1 half b", 105, 94.5, 115.5, "design DCR"},
		{"OT1 primary", 200, 180, 220, "95 + 105"},
		{"T1 HT half a", 80, 72, 88, "half of 160 Ω"},
		// A fuse is 0 Ω, which the solver holds at 1 µΩ (hence 1e-6 relative).
		{"J1 live–neutral", 6, 5.4, 6.6, "fuse (0 Ω) + primary 6 Ω"},
	}
	for _, c := range cases {
		got := findCheck(t, cs, c.id)
		if got.Open || !near(got.Ohms, c.want, 1e-6) || !near(got.Tol[0], c.lo, 1e-6) || !near(got.Tol[1], c.hi, 1e-6) {
			t.Errorf("%s: %g [%g %g], want %g [%g %g] (%s)", c.id, got.Ohms, got.Tol[0], got.Tol[1], c.want, c.lo, c.hi, c.comment)
		}
	}

	// A net joined through a choke's DCR: B2 reads L1 110 Ω + bleeder
	// R1 220k (every other branch ends on a cold valve).
	d, _ = loadDemo(t, "se-6v6-stereo")
	cs, err = Checks(d)
	if err != nil {
		t.Fatal(err)
	}
	b2 := findCheck(t, cs, "B2")
	if !near(b2.Ohms, 220e3+110, 1e-9) || !near(b2.Tol[0], 0.95*220e3+0.9*110, 1e-9) || !near(b2.Tol[1], 1.05*220e3+1.1*110, 1e-9) {
		t.Errorf("B2: %g [%g %g], want 220110 (hand)", b2.Ohms, b2.Tol[0], b2.Tol[1])
	}
	if !strings.Contains(b2.Note, "climbs") || b2.Kind != "b+" {
		t.Errorf("B2 note/kind: %q %q: want a climbing-reading note (216 µF behind 220k)", b2.Note, b2.Kind)
	}
	b1 := findCheck(t, cs, "B1")
	if !strings.Contains(b1.Note, "D1") {
		t.Errorf("B1 note %q: want the diode polarity note", b1.Note)
	}
	if g := findCheck(t, cs, "GL1"); g.Ohms != 1e6 || g.Note != "" || g.Kind != "grid" {
		t.Errorf("GL1: %+v, want 1 MΩ with no note", g)
	}
}

func TestColdOpenNet(t *testing.T) {
	d, _ := loadDemo(t, "bench-12ax7")
	cs, err := Checks(d)
	if err != nil {
		t.Fatal(err)
	}
	for _, id := range []string{"HT", "P1"} {
		c := findCheck(t, cs, id)
		if !c.Open || !math.IsInf(c.Ohms, 1) || !strings.Contains(c.Note, "open") {
			t.Errorf("%s: %+v: want open (+Inf): the bench supply is disconnected, the valve out", id, c)
		}
	}
}

const rcDesign = `pinwalk: 1
title: one capacitor and its bleeder (test)
mains: {volts: 230, hz: 50, tolerance: 6%}
ground: 0V
parts:
  T1:
    power-transformer:
      primary: {volts: 230, dcr: 40R}
      secondaries:
        HEATER: {volts: 6.3, rated: 1A, dcr: 0R2, ends: [H1, H2], centre: 0V}
  U1: {dc-supply: 250V, dcr: 100R, between: [HT, 0V]}
  C1: {capacitor: 47u, volts: 450, kind: electrolytic, between: [HT, 0V]}
  R9: {resistor: 100k, watts: 1, between: [HT, 0V]}
  V1:
    valve: 12AX7
    A: {plate: P1, grid: G1, cathode: K1}
    B: unused
    heater: [H1, H2]
  R1: {resistor: 1M, between: [G1, 0V]}
  R2: {resistor: 100k, watts: 0.5, between: [HT, P1]}
  R3: {resistor: 1k5, between: [K1, 0V]}
`

// TestDischargeSingleRC: one capacitor through one bleeder against the
// closed form t = R·C·ln(V0/V1) (exponential decay of an RC circuit).
func TestDischargeSingleRC(t *testing.T) {
	d, probs := design.Parse("rc.yaml", []byte(rcDesign))
	if errs := probs.Errors(); len(errs) > 0 {
		t.Fatal(errs)
	}
	m, err := amp.Build(d)
	if err != nil {
		t.Fatal(err)
	}
	ds, err := DischargeTimes(d, m, 0)
	if err != nil {
		t.Fatal(err)
	}
	if len(ds) != 1 || ds[0].Ref != "C1" {
		t.Fatalf("rows %+v", ds)
	}
	x := ds[0]
	// Peak: 250 V through 100 Ω into 100k (valve cold), Ohm's law.
	v0 := 250 * 100e3 / (100e3 + 100)
	if !near(x.PeakVolts, v0, 1e-6) {
		t.Errorf("peak %g, want %g", x.PeakVolts, v0)
	}
	rc := 100e3 * 47e-6
	if w := rc * math.Log(v0/60); !near(x.To60, w, 0.01) {
		t.Errorf("To60 %g, want %g (RC ln(V0/60))", x.To60, w)
	}
	if w := rc * math.Log(v0/10); !near(x.To10, w, 0.01) {
		t.Errorf("To10 %g, want %g (RC ln(V0/10))", x.To10, w)
	}
	if !near(x.BleedOhms, 100e3, 1e-9) || x.NoPath || x.Warning != "" {
		t.Errorf("%+v", x)
	}
	t.Logf("To60 %.4f s (closed form %.4f), To10 %.4f s (closed form %.4f)", x.To60, rc*math.Log(v0/60), x.To10, rc*math.Log(v0/10))
}

// TestDischargeNoBleeder: the bench demo's HT capacitor has no resistive
// path to chassis once the valve is cold.
func TestDischargeNoBleeder(t *testing.T) {
	d, m := loadDemo(t, "bench-12ax7")
	ds, err := DischargeTimes(d, m, 0)
	if err != nil {
		t.Fatal(err)
	}
	if len(ds) != 1 {
		t.Fatalf("rows %+v", ds)
	}
	x := ds[0]
	if !x.NoPath || !math.IsInf(x.To60, 1) || !math.IsInf(x.To10, 1) || !math.IsInf(x.BleedOhms, 1) {
		t.Errorf("%+v: want no path, +Inf times", x)
	}
	for _, w := range []string{"NO BLEED PATH", "resistor tool", "meter"} {
		if !strings.Contains(x.Warning, w) {
			t.Errorf("warning %q lacks %q", x.Warning, w)
		}
	}
}

// TestTwoCapacitorNetwork: C1 with bleeder R1 to chassis, R2 to C2
// (nothing else). The eigenvalues of C⁻¹G are the roots of
// λ² − tr·λ + det = 0 (hand solution of the 2×2 system), and the time
// for v1 to fall below 60 V matches a fine fourth-order Runge–Kutta
// integration of C·dv/dt = −G·v.
func TestTwoCapacitorNetwork(t *testing.T) {
	const c1, c2, r1, r2, v0 = 47e-6, 100e-6, 220e3, 10e3, 400.0
	g := mat.NewDense(2, 2, []float64{1/r1 + 1/r2, -1 / r2, -1 / r2, 1 / r2})
	rc, err := newRC(g, []float64{c1, c2})
	if err != nil {
		t.Fatal(err)
	}
	a, b, c, dd := (1/r1+1/r2)/c1, -1/(r2*c1), -1/(r2*c2), 1/(r2*c2)
	tr, det := a+dd, a*dd-b*c
	l1 := (tr - math.Sqrt(tr*tr-4*det)) / 2
	l2 := (tr + math.Sqrt(tr*tr-4*det)) / 2
	if !near(rc.lambda[0], l1, 1e-9) || !near(rc.lambda[1], l2, 1e-9) {
		t.Errorf("eigenvalues %v, want %g %g", rc.lambda, l1, l2)
	}
	for node := 0; node < 2; node++ {
		coef := rc.coeffs(rc.observe(node), []float64{v0, v0})
		got := lastAbove(coef, rc.lambda, 60)
		// RK4 reference.
		v := [2]float64{v0, v0}
		f := func(v [2]float64) [2]float64 {
			return [2]float64{-(a*v[0] + b*v[1]), -(c*v[0] + dd*v[1])}
		}
		h := 1e-4
		tt := 0.0
		for v[node] >= 60 {
			k1 := f(v)
			k2 := f([2]float64{v[0] + h/2*k1[0], v[1] + h/2*k1[1]})
			k3 := f([2]float64{v[0] + h/2*k2[0], v[1] + h/2*k2[1]})
			k4 := f([2]float64{v[0] + h*k3[0], v[1] + h*k3[1]})
			prev := v[node]
			for i := range v {
				v[i] += h / 6 * (k1[i] + 2*k2[i] + 2*k3[i] + k4[i])
			}
			tt += h
			if v[node] < 60 { // interpolate within the step
				tt -= h * (60 - v[node]) / (prev - v[node])
			}
		}
		if !near(got, tt, 1e-4) {
			t.Errorf("node %d: t60 %g, RK4 %g", node, got, tt)
		}
	}
}

// TestDemoDischarge: the demos' filter capacitors all bleed through the
// 220k bleeder on B1; the slowest mode is near (R_bleed + series)·ΣC, so
// the times lie near 220k·ΣC·ln(V0/V1) (single-RC estimate, within 5 %).
func TestDemoDischarge(t *testing.T) {
	d, m := loadDemo(t, "se-6v6-stereo")
	ds, err := DischargeTimes(d, m, 0)
	if err != nil {
		t.Fatal(err)
	}
	if len(ds) != 4 {
		t.Fatalf("rows %d", len(ds))
	}
	sumC := 0.0
	for _, x := range ds {
		sumC += x.Farads
	}
	for _, x := range ds {
		w := 220e3 * sumC * math.Log(x.PeakVolts/60)
		if x.NoPath || !near(x.To60, w, 0.05) || x.To10 <= x.To60 {
			t.Errorf("%s: To60 %g To10 %g, estimate %g", x.Ref, x.To60, x.To10, w)
		}
	}
}
