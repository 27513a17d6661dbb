package cold

import (
	"math"
	"strings"
	"testing"

	"pinwalk/expect/amp"
	"pinwalk/expect/design"
)

// doublerDesign is an invented full-wave doubler off a 120 V winding,
// with the given parts after the two diodes and two 100 µF capacitors.
func doublerDesign(t *testing.T, extra string) (*design.Design, *amp.Model) {
	t.Helper()
	src := `pinwalk: 1
title: doubler discharge
mains: {volts: 230, hz: 50, tolerance: 6%}
ground: 0V
parts:
  J1: {mains-inlet: iec, live: L, neutral: N, earth: 0V}
  F1: {fuse: 1A, slow: true, between: [L, L1]}
  T1:
    power-transformer:
      primary: {volts: 230, dcr: 14R, ends: [L1, N]}
      secondaries:
        HT: {volts: 120, rated: 150mA, dcr: 6R, ends: [HW, DM]}
  D1: {rectifier: silicon, anodes: [HW], cathode: B1}
  D2: {rectifier: silicon, anodes: [0V], cathode: HW}
  C1: {capacitor: 100u, volts: 250, kind: electrolytic, between: [B1, DM]}
  C2: {capacitor: 100u, volts: 250, kind: electrolytic, between: [DM, 0V]}
` + extra
	d, probs := design.Parse("doubler.yaml", []byte(src))
	if len(probs.Errors()) > 0 {
		t.Fatal(probs.Errors())
	}
	m, err := amp.Build(d)
	if err != nil {
		t.Fatal(err)
	}
	if m.HT == nil || m.HT.Doubler == nil {
		t.Fatal("no doubler found")
	}
	return d, m
}

// Each doubler capacitor with its own bleeder and a load across the
// stack: by symmetry both hold the same volts V, and each obeys
// C·dV/dt = −V/R − 2V/RL (Ohm's law, the load seeing both in series),
// an RC discharge with τ = C·(R ∥ RL/2): t = τ·ln(V0/V).
func TestDoublerDischargeHandCheck(t *testing.T) {
	const c, r, rl = 100e-6, 100e3, 100e3
	for _, tc := range []struct {
		name, extra string
		tau         float64
	}{
		{"bleeders only", "  R1: {resistor: 100k, between: [B1, DM]}\n  R2: {resistor: 100k, between: [DM, 0V]}\n", c * r},
		{"bleeders and a load", "  R1: {resistor: 100k, between: [B1, DM]}\n  R2: {resistor: 100k, between: [DM, 0V]}\n  R3: {resistor: 100k, between: [B1, 0V]}\n",
			c * (r * rl / 2) / (r + rl/2)},
	} {
		d, m := doublerDesign(t, tc.extra)
		rows, err := DischargeTimes(d, m, 0)
		if err != nil {
			t.Fatal(err)
		}
		if len(rows) != 2 || rows[0].Ref != "C1" || rows[1].Ref != "C2" {
			t.Fatalf("%s: rows %+v, want C1 and C2", tc.name, rows)
		}
		if rows[0].Other != "DM" || rows[1].Other != "" {
			t.Errorf("%s: C1 read %s, C2 %s: want B1–DM and DM", tc.name, rows[0].Across(), rows[1].Across())
		}
		for _, row := range rows {
			v0 := math.Abs(row.PeakVolts)
			// Each one peak of the winding at high mains, less a diode.
			if v0 < 150 || v0 > 200 {
				t.Errorf("%s: %s peak %.1f V, want about one winding peak", tc.name, row.Ref, v0)
			}
			for _, x := range []struct {
				got, level float64
			}{{row.To60, HazardVolts}, {row.To10, TouchVolts}} {
				if want := tc.tau * math.Log(v0/x.level); math.Abs(x.got-want) > 0.01*want {
					t.Errorf("%s: %s below %g V in %.2f s, want τ·ln(V0/V) = %.2f s", tc.name, row.Ref, x.level, x.got, want)
				}
			}
		}
	}
}

// A doubler capacitor with no bleeder across it and nothing else on its
// top net keeps its charge: no bleed path, the loud warning.
func TestDoublerCapacitorNoBleeder(t *testing.T) {
	d, m := doublerDesign(t, "  R2: {resistor: 100k, between: [DM, 0V]}\n")
	rows, err := DischargeTimes(d, m, 0)
	if err != nil {
		t.Fatal(err)
	}
	for _, row := range rows {
		if row.Ref == "C1" && (!row.NoPath || !strings.Contains(row.Warning, "NO BLEED PATH") || !math.IsInf(row.To10, 1)) {
			t.Errorf("C1 with nothing across it: %+v, want no bleed path", row)
		}
		if row.Ref == "C2" && row.NoPath {
			t.Errorf("C2 has R2 across it: %+v", row)
		}
	}
}

// A half-wave doubler's pump capacitor sits between the diodes' junction
// and the winding, which reaches chassis only through its resistance: it
// discharges through the bleeder across it, τ = R·C (Ohm's law, the
// winding's 6 Ω beside 100 kΩ), read across its own two nets.
func TestHalfWaveDoublerPumpDischarge(t *testing.T) {
	src := `pinwalk: 1
title: half-wave doubler discharge
mains: {volts: 230, hz: 50, tolerance: 6%}
ground: 0V
parts:
  J1: {mains-inlet: iec, live: L, neutral: N, earth: 0V}
  F1: {fuse: 1A, slow: true, between: [L, L1]}
  T1:
    power-transformer:
      primary: {volts: 230, dcr: 14R, ends: [L1, N]}
      secondaries:
        HT: {volts: 120, rated: 150mA, dcr: 6R, ends: [HW, 0V]}
  C1: {capacitor: 100u, volts: 250, kind: electrolytic, between: [DM, HW]}
  D1: {rectifier: silicon, anodes: [0V], cathode: DM}
  D2: {rectifier: silicon, anodes: [DM], cathode: B1}
  C2: {capacitor: 100u, volts: 450, kind: electrolytic, between: [B1, 0V]}
  R1: {resistor: 100k, between: [DM, HW]}
  R2: {resistor: 220k, between: [B1, 0V]}
`
	d, probs := design.Parse("half.yaml", []byte(src))
	if len(probs.Errors()) > 0 {
		t.Fatal(probs.Errors())
	}
	m, err := amp.Build(d)
	if err != nil {
		t.Fatal(err)
	}
	rows, err := DischargeTimes(d, m, 0)
	if err != nil {
		t.Fatal(err)
	}
	for _, row := range rows {
		tau := 100e-6 * 100e3
		if row.Ref == "C2" {
			tau = 100e-6 * 220e3
		}
		if row.Ref == "C1" && row.Across() != "DM–HW" {
			t.Errorf("C1 read across %s, want DM–HW", row.Across())
		}
		v0 := math.Abs(row.PeakVolts)
		if want := tau * math.Log(v0/TouchVolts); math.Abs(row.To10-want) > 0.01*want {
			t.Errorf("%s (%.0f V) below 10 V in %.2f s, want τ·ln(V0/10 V) = %.2f s", row.Ref, v0, row.To10, want)
		}
	}
}
