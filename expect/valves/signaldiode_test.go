package valves

import (
	"math"
	"testing"
)

// The 6AV6's detector diodes: the stored perveance is the fit to the
// unit's row (RCA 6AV6 data, diode units, about 2 mA at 5 V, from memory)
// with the contact potential taken in, and the row is met within ±10 %.
func TestSignalDiodeUnit(t *testing.T) {
	av6, ok := Lookup("6AV6")
	if !ok {
		t.Fatal("no 6AV6")
	}
	d := av6.SectionType("D", nil)
	if d == nil || d.Kind != Diode || !d.Wireable() || d.Perveance <= 0 {
		t.Fatalf("6AV6 diode unit: %+v", d)
	}
	// Contact potential of an oxide cathode: some tenths of a volt to
	// about 1 V (from memory).
	if d.ContactVolts < 0.1 || d.ContactVolts > 1 {
		t.Errorf("contact potential %g V", d.ContactVolts)
	}
	g, err := FitDiodePerveance(d.Rows, d.ContactVolts)
	if err != nil || math.Abs(g/d.Perveance-1) > 1e-4 {
		t.Errorf("stored perveance %g, fresh fit %g (%v)", d.Perveance, g, err)
	}
	dev := SignalDiodeDevice{Perveance: d.Perveance, Contact: d.ContactVolts, Scale: 1}
	for _, r := range d.Rows {
		i, _ := dev.Current(r.Va)
		if math.Abs(i/r.Ia-1) > 0.10 {
			t.Errorf("%g V: %.3g A against the row's %.3g A (%s)", r.Va, i, r.Ia, r.Source)
		}
	}
	// A unit with no perveance is library data only.
	if (&Type{Kind: Diode}).Wireable() {
		t.Error("a diode unit with no perveance is wireable")
	}
}

// The diode law: no current once the plate is the contact potential below
// the cathode, the initial-velocity current at 0 V, no current with the
// cathode cold, and dI/dV against a central difference.
func TestSignalDiodeDevice(t *testing.T) {
	dev := SignalDiodeDevice{Perveance: 1.5e-4, Contact: 0.5, Scale: 1}
	if i, _ := dev.Current(-0.6); math.Abs(i) > 1e-12 {
		t.Errorf("below the contact potential: %g A", i)
	}
	if i, _ := dev.Current(0); math.Abs(i-1.5e-4*math.Pow(0.5, 1.5)) > 1e-15 {
		t.Errorf("at 0 V: %g A", i)
	}
	cold := dev
	cold.Scale = 0
	if i, _ := cold.Current(10); math.Abs(i) > 1e-10 {
		t.Errorf("cold cathode at 10 V: %g A", i)
	}
	for _, v := range []float64{-0.45, -0.2, 0, 1, 5, 40} {
		_, g := dev.Current(v)
		h := 1e-6
		ip, _ := dev.Current(v + h)
		im, _ := dev.Current(v - h)
		fd := (ip - im) / (2 * h)
		if math.Abs(g-fd) > 1e-6*math.Abs(fd)+1e-11 {
			t.Errorf("at %g V: dI/dV %g, difference %g", v, g, fd)
		}
	}
}
