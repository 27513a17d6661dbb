package amp

import (
	"math"
	"strings"
	"testing"

	"pinwalk/expect/design"
)

func diodeBiasModel(t *testing.T) *design.Design {
	t.Helper()
	tp, err := design.TemplateByName("pp-diode-bias")
	if err != nil {
		t.Fatal(err)
	}
	d, probs := design.Parse("pp-diode-bias.yaml", tp.Text)
	if len(probs.Errors()) > 0 {
		t.Fatal(probs.Errors())
	}
	return d
}

// The template's bias diode is not the HT rectifier: D1 (the full-wave
// one on the 320-0-320 winding) feeds the plates and D2 is an auxiliary
// negative supply.
func TestDiodeBiasIsAuxiliary(t *testing.T) {
	m, err := Build(diodeBiasModel(t))
	if err != nil {
		t.Fatal(err)
	}
	if m.HT == nil || m.HT.Rectifier.Ref != "D1" {
		t.Fatalf("HT rectifier %v, want D1", m.HT)
	}
	a := m.AuxRectOf("D2")
	if a == nil || a.Sign != -1 || a.Out != "NBR" || a.Return != "0V" {
		t.Fatalf("D2 as auxiliary: %+v", a)
	}
}

// A half-wave peak rectifier into a large reservoir (ω·C·RL ≫ 1) conducts
// over an angle 2θ with tan θ − θ = π·Rs/RL, and its output is
// (Vpk − Vd)·cos θ (Schade 1943; Radiotron Designer's Handbook 4th ed.
// ch. 30, from memory). The ripple droop of I/(f·C)/2 on top is a small
// correction here (100 µF, a few mA), so the closed form without it must
// agree within 1 %.
func TestDiodeBiasAgainstSchade(t *testing.T) {
	m, op := solve(t, diodeBiasModel(t), Conditions{})
	a := m.AuxRectOf("D2")
	vr := netV(t, m, op, "NBR")
	vn := netV(t, m, op, "NB")
	i := (vn - vr) / 10e3 // through R3 (10k) into the filter
	if vr >= 0 || i <= 0 {
		t.Fatalf("NBR %.2f V, NB %.2f V: the bias supply is not negative", vr, vn)
	}
	rl := -vr / i
	k := math.Pi * a.Rs / rl
	lo, hi := 0.0, 1.5
	for range 60 {
		th := (lo + hi) / 2
		if math.Tan(th)-th < k {
			lo = th
		} else {
			hi = th
		}
	}
	vpk := math.Sqrt2 * a.VrmsOC
	want := -(vpk - a.Rect.Vf) * math.Cos(lo)
	droop := i / (50 * 100e-6) / 2
	t.Logf("NBR %.2f V at %.2f mA (RL %.0f Ω, Rs %.1f Ω, θ %.1f°): closed form %.2f V, ripple droop %.2f V", vr, i*1e3, rl, a.Rs, lo*180/math.Pi, want, droop)
	if math.Abs(vr-want) > 0.01*math.Abs(want) {
		t.Errorf("NBR %.2f V, closed form %.2f V", vr, want)
	}
}

// On a variac the bias winding's peak scales with the primary, the diode's
// drop does not: at 50 % the reservoir reads about (0.5·(V+Vd) − Vd)
// of its full-mains volts (the closed form of a peak rectifier, common
// practice), in the full and in the fast solve; the conduction-angle loss
// scales with it, so within 2 %.
func TestDiodeBiasFollowsVariac(t *testing.T) {
	m, full := solve(t, diodeBiasModel(t), Conditions{})
	v100 := netV(t, m, full, "NBR")
	s := NewSolver(m)
	var op, fast OP
	if err := s.Solve(Conditions{}, m.NominalValues(), false, &op); err != nil {
		t.Fatal(err)
	}
	if err := s.Solve(Conditions{Variac: 0.5}, m.NominalValues(), true, &fast); err != nil {
		t.Fatal(err)
	}
	if err := s.Solve(Conditions{Variac: 0.5}, m.NominalValues(), false, &op); err != nil {
		t.Fatal(err)
	}
	v50 := netV(t, m, &op, "NBR")
	vFast := netV(t, m, &fast, "NBR")
	vd := m.AuxRectOf("D2").Rect.Vf
	want := -(0.5*(-v100+vd) - vd)
	t.Logf("NBR %.2f V at 100 %%, %.2f V (full) and %.2f V (fast) at 50 %%, closed form %.2f V", v100, v50, vFast, want)
	for _, got := range []float64{v50, vFast} {
		if math.Abs(got-want) > 0.02*math.Abs(want) {
			t.Errorf("NBR at 50 %% variac %.2f V, want %.2f V", got, want)
		}
	}
}

// A fast solve on a solver given another's full solve (CacheSupplyAt, as
// the tolerance sampling does) takes the bias supply's line from it and
// lands on the full solve's bias: the line is the same supply's, so the
// two agree to the network's own convergence.
func TestDiodeBiasLineCached(t *testing.T) {
	d := diodeBiasModel(t)
	m, err := Build(d)
	if err != nil {
		t.Fatal(err)
	}
	c := Conditions{Variac: 0.75}
	var full, fast OP
	if err := NewSolver(m).Solve(c, m.NominalValues(), false, &full); err != nil {
		t.Fatal(err)
	}
	if len(full.Aux) != 1 || !full.Aux[0].Simulated {
		t.Fatalf("full solve's auxiliary lines %+v", full.Aux)
	}
	s := NewSolver(m)
	if err := s.CacheSupplyAt(c, m.NominalValues(), &full); err != nil {
		t.Fatal(err)
	}
	if err := s.Solve(c, m.NominalValues(), true, &fast); err != nil {
		t.Fatal(err)
	}
	if fast.Aux[0].Simulated {
		t.Errorf("the fast solve simulated the bias supply instead of taking the cached line")
	}
	a, b := netV(t, m, &full, "NB"), netV(t, m, &fast, "NB")
	t.Logf("NB %.3f V (full), %.3f V (fast)", a, b)
	if math.Abs(a-b) > 1e-3*math.Abs(a) {
		t.Errorf("NB %.4f V (full), %.4f V (fast from the cached line)", a, b)
	}
}

// The same bias from a bridge on a floating 50 V winding, plus to
// chassis: full-wave, each half-cycle through two diodes, so tan θ − θ =
// π·Rs/(2·RL) and Vdc = (Vpk − 2·Vd)·cos θ (Schade 1943; Radiotron
// Designer's Handbook 4th ed. ch. 30, from memory), within 1 %. The
// floating winding's ends offer no DC reading.
func TestDiodeBiasBridge(t *testing.T) {
	tp, err := design.TemplateByName("pp-diode-bias")
	if err != nil {
		t.Fatal(err)
	}
	src := strings.Replace(string(tp.Text), "ends: [BW, 0V]}", "ends: [BW, BW2]}", 1)
	src = strings.Replace(src, "D2: {rectifier: silicon, anodes: [NBR], cathode: BW}", "D2: {rectifier: silicon-bridge, ac: [BW, BW2], plus: 0V, minus: NBR}", 1)
	d, probs := design.Parse("bridge-bias.yaml", []byte(src))
	if len(probs.Errors()) > 0 {
		t.Fatal(probs.Errors())
	}
	m, op := solve(t, d, Conditions{})
	a := m.AuxRectOf("D2")
	if a == nil || a.Sign != -1 || a.Out != "NBR" {
		t.Fatalf("D2 as a negative bridge: %+v", a)
	}
	vr := netV(t, m, op, "NBR")
	i := (netV(t, m, op, "NB") - vr) / 10e3
	rl := -vr / i
	k := math.Pi * a.Rs / (2 * rl)
	lo, hi := 0.0, 1.5
	for range 60 {
		th := (lo + hi) / 2
		if math.Tan(th)-th < k {
			lo = th
		} else {
			hi = th
		}
	}
	want := -(math.Sqrt2*a.VrmsOC - 2*a.Rect.Vf) * math.Cos(lo)
	t.Logf("NBR %.2f V at %.2f mA (θ %.1f°): closed form %.2f V", vr, i*1e3, lo*180/math.Pi, want)
	if math.Abs(vr-want) > 0.01*math.Abs(want) {
		t.Errorf("NBR %.2f V, closed form %.2f V", vr, want)
	}
	if _, ok := m.MeterSlot("BW"); ok {
		t.Errorf("the floating winding end BW offers a DC reading")
	}
}

// A bias diode off an end of the HT winding shares the winding with the HT
// rectifier, which the model does not couple: Build refuses it at the
// diode's line, naming the winding.
func TestDiodeBiasOffHTWindingRefused(t *testing.T) {
	tp, err := design.TemplateByName("pp-diode-bias")
	if err != nil {
		t.Fatal(err)
	}
	src := strings.Replace(string(tp.Text), "cathode: BW}", "cathode: HTA}", 1)
	src = strings.Replace(src, "        BIAS: {volts: 50?, rated: 50mA?, dcr: 40R?, ends: [BW, 0V]}\n", "", 1)
	d, probs := design.Parse("tap-bias.yaml", []byte(src))
	if len(probs.Errors()) > 0 {
		t.Fatal(probs.Errors())
	}
	_, err = Build(d)
	if err == nil || !strings.Contains(err.Error(), "tap-bias.yaml:46:3: D2:") || !strings.Contains(err.Error(), "off the HT winding (HT)") {
		t.Errorf("Build: %v, want the refusal at D2's line naming the HT winding", err)
	}
}

// A bridge and CRC feeding a directly heated triode's filament is a DC
// filament supply, which is not yet modelled (the filament would be no
// load in the DC network): Build refuses it at the bridge's line rather
// than predict an unloaded supply.
func TestDCFilamentSupplyRefused(t *testing.T) {
	src := `pinwalk: 1
title: DC filament (invented)
mains: {volts: 230, hz: 50, tolerance: 6%}
ground: 0V
parts:
  J1: {mains-inlet: iec, live: L, neutral: N, earth: 0V}
  F1: {fuse: 1A, slow: true, between: [L, L1]}
  T1:
    power-transformer:
      primary: {volts: 230, dcr: 8R, ends: [L1, N]}
      secondaries:
        HT: {volts: 300-0-300, rated: 100mA, dcr: 160R, ends: [HTA, HTB], centre: 0V}
        FIL: {volts: 6.3, rated: 3A, dcr: 0R1, ends: [FA, FB]}
  D1: {rectifier: silicon, anodes: [HTA, HTB], cathode: B1}
  C1: {capacitor: 100u, volts: 600, between: [B1, 0V]}
  R1: {resistor: 220k, watts: 2, between: [B1, 0V]}
  D2: {rectifier: silicon-bridge, ac: [FA, FB], plus: FR, minus: FM}
  C4: {capacitor: 10000u, volts: 16, between: [FR, FM]}
  R3: {resistor: 1R5, watts: 10, between: [FR, FP]}
  C5: {capacitor: 10000u, volts: 16, between: [FP, FM]}
  V1: {valve: 2A3, plate: PA, grid: G, cathode: FP, heater: [FP, FM]}
  R4: {resistor: 680R, watts: 10, between: [FM, 0V]}
  R5: {resistor: 100k, between: [G, 0V]}
  OT1:
    output-transformer:
      primary: {ends: [B1, PA], dcr: 150R, impedance: 2k5}
      secondary: {load: 8R}
`
	d, probs := design.Parse("dc-filament.yaml", []byte(src))
	if len(probs.Errors()) > 0 {
		t.Fatal(probs.Errors())
	}
	_, err := Build(d)
	if err == nil || !strings.Contains(err.Error(), "dc-filament.yaml:17:3: D2:") || !strings.Contains(err.Error(), "V1's heater") {
		t.Errorf("Build: %v, want the refusal at D2's line naming V1", err)
	}
}
