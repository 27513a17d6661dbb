package amp

import (
	"math"
	"strings"
	"testing"

	"pinwalk/expect/design"
)

// acdcBare is a transformerless supply with nothing on it but its
// bleeder: a 35W4 half-wave straight off 120 V mains behind a 33 Ω surge
// resistor, the chassis on the neutral, the rectifier's heater alone in a
// series string with its dropper.
const acdcBare = `pinwalk: 1
title: bare AC/DC supply
mains: {volts: 120, hz: 60, tolerance: 6%}
ground: 0V
parts:
  J1: {mains-inlet: two-pin, live: L, neutral: 0V}
  F1: {fuse: 0.5A, between: [L, L1]}
  R1: {resistor: 33R, watts: 2, between: [L1, HTA]}
  R9: {resistor: 560R, watts: 15, between: [L1, X1]}
  V3:
    valve: 35W4
    plates: [HTA]
    cathode: B1
    heater: [X1, 0V]
  C1: {capacitor: 50u, volts: 200, between: [B1, 0V]}
  R4: {resistor: 220k, watts: 1, between: [B1, 0V]}
`

// TestHalfWaveOffTheMains: with no power transformer the source is the
// mains itself at ratio 1: lightly loaded, the reservoir charges to the
// mains peak, √2 × 120 V = 169.7 V, less the rectifier's drop at the
// small peak current (closed form; a few volts at most for a 35W4 at a
// few mA, from its 15 V at 100 mA data sheet point, Child's law). B+
// follows the mains in proportion.
func TestHalfWaveOffTheMains(t *testing.T) {
	d := parse(t, acdcBare)
	m, op := solve(t, d, Conditions{})
	if m.HT == nil || m.HT.Line == nil || m.HT.Transformer != nil {
		t.Fatalf("HT supply %+v: want one fed from the mains", m.HT)
	}
	if m.HT.Rs != 33 {
		t.Errorf("series resistance %g Ω, want the 33 Ω surge resistor", m.HT.Rs)
	}
	b1 := netV(t, m, op, "B1")
	peak := 120 * math.Sqrt2
	if b1 > peak || b1 < peak-5 {
		t.Errorf("B1 %.2f V, want just under the mains peak %.2f V", b1, peak)
	}
	_, op110 := solve(t, d, Conditions{MainsVolts: 110})
	b110 := netV(t, m, op110, "B1")
	if r := (b110 + 2) / (b1 + 2); math.Abs(r-110.0/120) > 0.01 {
		t.Errorf("B1 at 110 V mains %.2f V: ratio %.4f to 120 V, want %.4f (ratio 1 to the mains)", b110, r, 110.0/120)
	}
	if hot, why := d.HotChassis(); !hot || !strings.Contains(why, "mains inlet has no earth") {
		t.Errorf("HotChassis = %v, %q", hot, why)
	}
}

// TestSeriesHeaterString: the template's string (dropper 150 Ω, 50C5 50 V
// 150 mA, 35W4 35 V 150 mA, 12AV6 12.6 V 150 mA, rated resistance V/I
// each) across 120 V carries I = 120 / (150 + 333.3 + 233.3 + 84) =
// 149.9 mA (Ohm's law), and each heater its share; at 50 % variac half of
// each. One heater open anywhere in the string, or the dropper, and no
// heater lights.
func TestSeriesHeaterString(t *testing.T) {
	tp, err := design.TemplateByName("acdc-phono")
	if err != nil {
		t.Fatal(err)
	}
	d, probs := design.Parse("acdc-phono.yaml", tp.Text)
	if len(probs.Errors()) > 0 {
		t.Fatal(probs)
	}
	m, err := Build(d)
	if err != nil {
		t.Fatal(err)
	}
	if m.String == nil || len(m.String.Valves) != 3 || m.String.DropOhms != 150 {
		t.Fatalf("series string %+v", m.String)
	}
	amps := 120 / (150 + 50/0.15 + 35/0.15 + 12.6/0.15)
	rated := map[string]float64{"V1": 12.6, "V2": 50, "V3": 35}
	heaters := func(c Conditions, v *Values) map[string]float64 {
		var op OP
		if err := NewSolver(m).Solve(c, v, false, &op); err != nil {
			t.Fatal(err)
		}
		out := map[string]float64{}
		for _, h := range op.Heaters {
			out[h.Ref] = h.Volts
		}
		return out
	}
	got := heaters(Conditions{}, m.NominalValues())
	for ref, vr := range rated {
		if want := amps * vr / 0.15; math.Abs(got[ref]-want) > 1e-6*want {
			t.Errorf("%s heater %.4f V, want %.4f V", ref, got[ref], want)
		}
	}
	// The dropper's heat, Joule's law: I² × 150 Ω (its rating checked
	// like any resistor's).
	var op OP
	if err := NewSolver(m).Solve(Conditions{}, m.NominalValues(), false, &op); err != nil {
		t.Fatal(err)
	}
	found := false
	for _, r := range m.Resistors(&op) {
		if r.Ref == "R9" {
			found = true
			if want := amps * amps * 150; math.Abs(r.Watts-want) > 1e-6*want {
				t.Errorf("dropper R9 dissipates %.4f W, want %.4f W", r.Watts, want)
			}
		}
	}
	if !found {
		t.Errorf("the dropper is not among the resistors")
	}
	half := heaters(Conditions{Variac: 0.5}, m.NominalValues())
	for ref := range rated {
		if math.Abs(half[ref]-got[ref]/2) > 1e-6*got[ref] {
			t.Errorf("%s heater at 50 %% variac %.4f V, want %.4f V", ref, half[ref], got[ref]/2)
		}
	}
	// The dropper open: its slot at +Inf.
	v := m.NominalValues()
	for _, i := range m.DropSlots {
		v.Slot[i] = math.Inf(1)
	}
	for ref, volts := range heaters(Conditions{}, v) {
		if volts != 0 {
			t.Errorf("dropper open: %s heater at %.3g V, want 0", ref, volts)
		}
	}
	// The 12AV6's heater open (its section's emission below 0).
	v = m.NominalValues()
	for i, s := range m.Sections {
		if s.Ref == "V1" {
			v.Emission[i] = -1
		}
	}
	for ref, volts := range heaters(Conditions{}, v) {
		if volts != 0 {
			t.Errorf("V1 heater open: %s heater at %.3g V, want 0", ref, volts)
		}
	}
}
