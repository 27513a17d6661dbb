package amp

import (
	"math"
	"strings"
	"testing"

	"pinwalk/expect/design"
)

func detectorText(t *testing.T) string {
	t.Helper()
	tp, err := design.TemplateByName("diode-triode-detector")
	if err != nil {
		t.Fatal(err)
	}
	return strings.ReplaceAll(string(tp.Text), "?", "")
}

// diodeBalance solves G·(V+c)^1.5 = −V/R for the plate volts V of a diode
// returned to its cathode through R (bisection on the closed form, an
// independent check of the network solve).
func diodeBalance(g, c, r float64) float64 {
	lo, hi := -c, 0.0
	for range 200 {
		mid := (lo + hi) / 2
		if g*math.Pow(mid+c, 1.5) > -mid/r {
			hi = mid
		} else {
			lo = mid
		}
	}
	return (lo + hi) / 2
}

// TestDetectorDiodeAtRest: the template's 12AV6 detector, returned to the
// cathode (chassis) through R3 and the volume pot (547 kΩ), reads a few
// tenths of a volt negative with no signal (common practice: a detector
// reads about 0 V, slightly negative from the contact potential), at the
// balance of the Child–Langmuir law and the load; with its plates open
// inside the valve it reads 0 V; with the valves cold, 0 V.
func TestDetectorDiodeAtRest(t *testing.T) {
	d := parse(t, detectorText(t))
	m, op := solve(t, d, Conditions{})
	if len(m.Diodes) != 2 {
		t.Fatalf("%d diode plates in the network, want 2", len(m.Diodes))
	}
	dp := m.Diodes[0]
	want := diodeBalance(2*dp.Type.Perveance, dp.Type.ContactVolts, 47e3+500e3) // both plates on DET
	got := netV(t, m, op, "DET")
	t.Logf("DET %.4f V, closed form %.4f V; diode current %.3g A", got, want, m.DiodeCurrent(op, dp))
	if got > 0 || got < -1 {
		t.Errorf("detector at rest %.3f V: want 0 to -1 V", got)
	}
	if math.Abs(got-want) > 1e-3 {
		t.Errorf("detector %.4f V against the closed form %.4f V", got, want)
	}
	// Plates open inside the valve.
	s := NewSolver(m)
	v := m.NominalValues()
	for _, dd := range m.Diodes {
		v.Slot[dd.Slot] = math.Inf(1)
	}
	var op2, op3 OP
	if err := s.Solve(Conditions{}, v, false, &op2); err != nil {
		t.Fatal(err)
	}
	if x := netV(t, m, &op2, "DET"); math.Abs(x) > 1e-3 {
		t.Errorf("diode open: DET %.4f V, want 0", x)
	}
	if err := s.Solve(Conditions{ColdValves: true}, m.NominalValues(), false, &op3); err != nil {
		t.Fatal(err)
	}
	if x := netV(t, m, &op3, "DET"); math.Abs(x) > 1e-3 {
		t.Errorf("valves cold: DET %.4f V, want 0", x)
	}
}

// TestDiodeForward: a diode plate fed from B2 through 1 MΩ conducts: the
// plate sits where the Child–Langmuir current meets the feed's line,
// G·(V+c)^1.5 = (B2 − V)/R (bisection on the closed form).
func TestDiodeForward(t *testing.T) {
	src := strings.Replace(detectorText(t), "D: {plates: [DET, DET]}", "D: {plates: [DET, DF]}", 1)
	src = strings.Replace(src, "  C2:", "  R9: {resistor: 1M, between: [B2, DF]}\n  C2:", 1)
	d := parse(t, src)
	m, op := solve(t, d, Conditions{})
	b2 := netV(t, m, op, "B2")
	dp := m.Diodes[1]
	g, c, r := dp.Type.Perveance, dp.Type.ContactVolts, 1e6
	lo, hi := -c, b2
	for range 200 {
		mid := (lo + hi) / 2
		if g*math.Pow(mid+c, 1.5) > (b2-mid)/r {
			hi = mid
		} else {
			lo = mid
		}
	}
	want := (lo + hi) / 2
	got := netV(t, m, op, "DF")
	t.Logf("DF %.4f V, closed form %.4f V (B2 %.2f V)", got, want, b2)
	if math.Abs(got-want) > 2e-3 {
		t.Errorf("forward diode %.4f V against the closed form %.4f V", got, want)
	}
	// The diodes share the triode's cathode pin (pin 2): its current is
	// the triode's and the diodes' (Kirchhoff's current law); the diode
	// current is the feed's, (B2 − V)/R.
	for _, pd := range m.Points() {
		if pd.ID == "V1.2" && pd.Quantity == DCAmps {
			ik := m.Value(op, pd)
			tri := op.Sections[pd.Section].Ik
			feed := (b2 - got) / r
			if math.Abs(ik-tri-feed-m.DiodeCurrent(op, m.Diodes[0])) > 1e-3*ik {
				t.Errorf("cathode pin %.4g A: triode %.4g A, feed %.4g A", ik, tri, feed)
			}
			return
		}
	}
	t.Error("no cathode current point V1.2")
}
