package valves

import (
	"math"
	"testing"
)

// TestGasLaw: the OA2's modelled burning voltage is its maintaining 150 V
// at mid-range and rises by its 2 V regulation from 5 to 30 mA (RCA OA2
// data, from memory); the device's current at those volts returns the
// current, and its conductance matches a finite difference.
func TestGasLaw(t *testing.T) {
	ty, ok := Lookup("OA2")
	if !ok {
		t.Fatal("no OA2")
	}
	g := ty.Gas
	law := GasLawOf(g)
	if v := law.Volts((g.MinAmps + g.MaxAmps) / 2); math.Abs(v-150) > 1e-9 {
		t.Errorf("mid-range %g V, want the maintaining 150 V", v)
	}
	rise := law.Volts(g.MaxAmps) - law.Volts(g.MinAmps)
	// The junction adds n·Vt·ln(6) ≈ 0.09 V to the resistor's 2 V.
	if rise < 2 || rise > 2.2 {
		t.Errorf("rise from 5 to 30 mA %.3f V, want the 2 V regulation", rise)
	}
	dev := &GasDevice{Offset: law.Offset, Diode: law.Junction}
	cur, jac := make([]float64, 2), make([]float64, 4)
	for _, i := range []float64{g.MinAmps, 0.012, g.MaxAmps} {
		v := law.Volts(i) - law.R*i // across the device: the resistor is apart
		dev.Eval([]float64{v, 0}, cur, jac)
		if math.Abs(cur[0]-i) > 1e-6*i || cur[1] != -cur[0] {
			t.Errorf("at %.4g V: %g A, want %g A", v, cur[0], i)
		}
		h := 1e-6
		dev.Eval([]float64{v + h, 0}, cur, make([]float64, 4))
		hi := cur[0]
		dev.Eval([]float64{v - h, 0}, cur, make([]float64, 4))
		if fd := (hi - cur[0]) / (2 * h); math.Abs(fd-jac[0]) > 1e-4*jac[0] {
			t.Errorf("at %.4g V: conductance %g S, finite difference %g S", v, jac[0], fd)
		}
	}
	// Below its burning voltage it passes nothing worth a meter.
	dev.Eval([]float64{140, 0}, cur, jac)
	if cur[0] > 1e-9 {
		t.Errorf("at 140 V: %g A, want none", cur[0])
	}
}
