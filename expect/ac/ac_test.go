package ac

import (
	"math"
	"math/cmplx"
	"math/rand/v2"

	"pinwalk/expect/amp"
	"pinwalk/expect/design"
	"strings"
	"testing"
)

// triodeParams returns mu and ra of section 0 from the same Koren model,
// at the same operating point, that the AC analysis linearises.
func triodeParams(s solved) (mu, ra float64) {
	so := s.op.Sections[0]
	_, gm, gp := s.v.Koren[0].TriodePlate(so.Vg-so.Vk, so.Va-so.Vk)
	ra = 1 / gp
	return gm * ra, ra
}

// Voltage gain of a common-cathode triode stage, plate load RL, cathode
// resistor Rk (Radiotron Designer's Handbook, 4th ed., ch. 12, resistance-
// coupled triode stage; Millman & Halkias, "Electronic Devices and
// Circuits", grounded-cathode amplifier; both from memory):
//
//	unbypassed: A = mu·RL / (RL + ra + (mu+1)·Rk)
//	bypassed:   A = mu·RL / (RL + ra)
func TestCommonCathodeGain(t *testing.T) {
	const rl, rk = 100e3, 1.5e3 // R2 and R3 of testdata/designs/bench-12ax7.yaml
	src := demoText(t, "bench-12ax7")
	bypassed := solveText(t, src)
	unbypassed := solveText(t, withoutLine(t, src, "C2:"))

	mu, ra := triodeParams(bypassed)
	if mu < 80 || mu > 120 || ra < 40e3 || ra > 100e3 {
		// 12AX7: mu 100, ra 62.5 kΩ at 250 V, −2 V (RCA data, from memory).
		t.Fatalf("linearised 12AX7: mu %.1f, ra %.0f Ω: not a 12AX7", mu, ra)
	}
	wantBy := mu * rl / (rl + ra)
	muU, raU := triodeParams(unbypassed)
	wantUn := muU * rl / (rl + raU + (muU+1)*rk)

	cases := []struct {
		name string
		s    solved
		opt  Options
		want float64
	}{
		{"bypassed", bypassed, Options{}, wantBy},
		{"unbypassed", unbypassed, Options{}, wantUn},
		{"open bypass C2", bypassed, Options{Open: map[string]bool{"C2": true}}, wantUn},
	}
	for _, c := range cases {
		pts, err := c.s.an.Tone(c.s.op, c.s.v, c.opt, nil)
		if err != nil {
			t.Fatal(c.name, err)
		}
		in := find(t, pts, "V1.7")  // grid A
		out := find(t, pts, "V1.6") // plate A
		if math.Abs(in.Volts-DefaultVolts) > 1e-12 {
			t.Errorf("%s: tone at the input grid %g V, want %g V", c.name, in.Volts, DefaultVolts)
		}
		got := out.Volts / in.Volts
		if rel := math.Abs(got-c.want) / c.want; rel > 0.02 {
			t.Errorf("%s: gain %.3f, textbook %.3f (mu %.1f, ra %.0f Ω): off by %.2f %%", c.name, got, c.want, mu, ra, 100*rel)
		} else {
			t.Logf("%s: gain %.3f, textbook %.3f, off by %.3f %%", c.name, got, c.want, 100*rel)
		}
		// A common-cathode stage inverts.
		if math.Abs(math.Abs(out.Phase)-180) > 5 {
			t.Errorf("%s: plate phase %.1f°, want about ±180°", c.name, out.Phase)
		}
	}
	// With Rk = 1k5 the feedback factor (RL+ra+(mu+1)Rk)/(RL+ra) is
	// about 1.9 for a 12AX7 on a 100k load.
	if wantBy/wantUn < 1.5 {
		t.Errorf("cathode feedback should cut the gain: bypassed %.1f, unbypassed %.1f", wantBy, wantUn)
	}
}

// A first-order high-pass RC network, series C into shunt R, has its
// −3 dB point at f = 1/(2πRC) with the output leading by 45° there
// (closed form of H = jωRC/(1 + jωRC)).
func TestCouplingCorner(t *testing.T) {
	const r, c = 100e3, 100e-9
	src := demoText(t, "bench-12ax7") + `
  C9: {capacitor: 100n, volts: 400, kind: film, between: [IN, OUT]}
  R8: {resistor: 100k, between: [OUT, 0V]}
  R7: {resistor: 1M, between: [IN, 0V]}
`
	s := solveText(t, src)
	mag := func(hz float64) float64 {
		g, err := s.an.Gain(s.op, s.v, "IN", "OUT", Options{Hz: hz})
		if err != nil {
			t.Fatal(err)
		}
		return cmplx.Abs(g)
	}
	lo, hi := 0.1, 1e4
	target := 1 / math.Sqrt2
	for range 80 {
		mid := math.Sqrt(lo * hi)
		if mag(mid) < target {
			lo = mid
		} else {
			hi = mid
		}
	}
	got := math.Sqrt(lo * hi)
	want := 1 / (2 * math.Pi * r * c)
	if rel := math.Abs(got-want) / want; rel > 0.01 {
		t.Errorf("corner %.4f Hz, 1/(2πRC) = %.4f Hz: off by %.2f %%", got, want, 100*rel)
	} else {
		t.Logf("corner %.4f Hz, 1/(2πRC) = %.4f Hz", got, want)
	}
	g, _ := s.an.Gain(s.op, s.v, "IN", "OUT", Options{Hz: want})
	if ph := cmplx.Phase(g) * 180 / math.Pi; math.Abs(ph-45) > 0.5 {
		t.Errorf("phase at the corner %.2f°, want +45°", ph)
	}
	// Far above the corner the capacitor passes everything.
	if m := mag(100 * want); math.Abs(m-1) > 1e-3 {
		t.Errorf("|H| at 100× the corner %.5f, want ≈ 1", m)
	}
}

// filterDesign is a capacitor-input supply with one RC section (R5, C5)
// loaded only by a 10 MΩ bleeder; the valve stage hangs on the reservoir.
const filterDesign = `pinwalk: 1
title: RC filter section test (invented)
mains: {volts: 230, hz: 50, tolerance: 6%}
ground: 0V
parts:
  T1:
    power-transformer:
      primary: {volts: 230, dcr: 20R}
      secondaries:
        HT: {volts: 250-0-250, rated: 50mA, dcr: 200R, ends: [HTA, HTB], centre: 0V}
        HEATER: {volts: 6.3, rated: 1A, dcr: 0R2, ends: [H1, H2], centre: 0V}
  D1: {rectifier: silicon, anodes: [HTA, HTB], cathode: B1}
  C1: {capacitor: 47u, volts: 450, kind: electrolytic, between: [B1, 0V]}
  R5: {resistor: 2k2, between: [B1, B2]}
  C5: {capacitor: 1u, volts: 450, kind: film, between: [B2, 0V]}
  R6: {resistor: 10M, between: [B2, 0V]}
  V1:
    valve: 12AX7
    A: {plate: P1, grid: G1, cathode: K1}
    B: unused
    heater: [H1, H2]
  R1: {resistor: 1M, between: [G1, 0V]}
  R2: {resistor: 100k, watts: 0.5, between: [B1, P1]}
  R3: {resistor: 1k5, between: [K1, 0V]}
  C2: {capacitor: 22u, volts: 25, kind: electrolytic, between: [K1, 0V]}
`

// An RC filter section passes ripple at ω in the ratio 1/√(1+(ωRC)²)
// (Radiotron Designer's Handbook, 4th ed., filter chapter, from memory;
// closed form of a first-order low-pass), ω at twice the mains for a
// full-wave rectifier.
func TestRippleAttenuation(t *testing.T) {
	const r, c = 2.2e3, 1e-6
	s := solveText(t, filterDesign)
	hz := RippleHz(s.m, s.v)
	if hz != 100 {
		t.Fatalf("ripple at %g Hz, want 100 Hz (full wave on 50 Hz mains)", hz)
	}
	pts, err := s.an.Hum(s.op, s.v, Options{}, nil)
	if err != nil {
		t.Fatal(err)
	}
	b1, b2 := find(t, pts, "B1"), find(t, pts, "B2")
	if b1.Volts != s.op.Supply.Nets[0].RippleFund || b1.Volts <= 0 {
		t.Fatalf("reservoir ripple %g V, supply fundamental %g V", b1.Volts, s.op.Supply.Nets[0].RippleFund)
	}
	w := 2 * math.Pi * hz
	want := 1 / math.Sqrt(1+(w*r*c)*(w*r*c))
	got := b2.Volts / b1.Volts
	if rel := math.Abs(got-want) / want; rel > 0.02 {
		t.Errorf("RC section passes %.4f of the ripple, 1/√(1+(ωRC)²) = %.4f: off by %.2f %%", got, want, 100*rel)
	} else {
		t.Logf("RC section passes %.4f, formula %.4f", got, want)
	}
	// Cross-check against the supply package's time-stepped simulation of
	// the same filter (an independent computation of the same quantity).
	sim := s.op.Supply.Nets[1].RippleFund
	if rel := math.Abs(b2.Volts-sim) / sim; rel > 0.02 {
		t.Errorf("B2 ripple %.4g V, supply simulation %.4g V: off by %.2f %%", b2.Volts, sim, 100*rel)
	}
}

// Hum at every filter net of the demo amplifiers agrees with the supply
// simulation's ripple fundamental; a push-pull output transformer cancels
// the hum its centre tap feeds to both plates (Radiotron Designer's
// Handbook, 4th ed., push-pull amplifiers, from memory).
func TestHumDemos(t *testing.T) {
	for _, name := range []string{"se-6v6-stereo", "pp-el34-fixed"} {
		s := solveText(t, demoText(t, name))
		pts, err := s.an.Hum(s.op, s.v, Options{}, nil)
		if err != nil {
			t.Fatal(name, err)
		}
		for _, fn := range s.op.Supply.Nets {
			got := find(t, pts, fn.Net).Volts
			// 3 %: the small-signal analysis sees the valves' incremental
			// loads (a screen's current now falls as its plate voltage
			// rises, so plate ripple on B2 moves the screen current drawn
			// from B3), which the supply simulation's constant-current
			// loads do not; with the screen-division model this is 2.3 %
			// at B3 of the SE-6V6 demo.
			if fn.RippleFund > 1e-5 && math.Abs(got-fn.RippleFund) > 0.03*fn.RippleFund {
				t.Errorf("%s: %s ripple %.4g V, simulation %.4g V", name, fn.Net, got, fn.RippleFund)
			}
		}
		if name == "pp-el34-fixed" {
			pa := find(t, pts, "V3.3").Volts
			spk := find(t, pts, "OT1"+SpeakerSuffix).Volts
			ratio := math.Sqrt(8.0 / 3400) // OT1: 3k4 plate to plate, 8 Ω
			// Balanced halves: each plate follows the centre tap, which
			// sits on the reservoir B1 (ideal centre tap, V(a)+V(b) = 2·V(ct)).
			b1 := find(t, pts, "B1").Volts
			if pb := find(t, pts, "V4.3").Volts; math.Abs(pa-b1) > 0.01*b1 || math.Abs(pb-b1) > 0.01*b1 {
				t.Errorf("push-pull plate hum %.4g V and %.4g V, centre-tap ripple %.4g V", pa, pb, b1)
			}
			if spk > 0.01*pa*ratio {
				t.Errorf("push-pull speaker hum %.3g V, plate hum %.3g V (×ratio %.3g V): no cancellation", spk, pa, pa*ratio)
			}
		}
		for _, p := range pts {
			if p.Quantity != HumVolts || math.IsNaN(p.Volts) {
				t.Errorf("%s: bad point %+v", name, p)
			}
		}
	}
}

// An open coupling capacitor leaves the next grid with no signal: only its
// grid leak to ground remains (no interelectrode capacitance is modelled).
func TestOpenCouplingCap(t *testing.T) {
	s := solveText(t, demoText(t, "se-6v6-stereo"))
	nom, err := s.an.Tone(s.op, s.v, Options{}, nil)
	if err != nil {
		t.Fatal(err)
	}
	g := find(t, nom, "V2.5").Volts // GL2, behind C11
	if g < 0.5 {
		t.Fatalf("nominal tone at V2 grid %.3g V: the driver stage should give gain", g)
	}
	open, err := s.an.Tone(s.op, s.v, Options{Open: map[string]bool{"C11": true}}, nil)
	if err != nil {
		t.Fatal(err)
	}
	if go2 := find(t, open, "V2.5").Volts; go2 > 1e-4*g {
		t.Errorf("C11 open: V2 grid %.3g V, nominal %.3g V: want orders of magnitude less", go2, g)
	}
	if sp, spn := find(t, open, "OT1"+SpeakerSuffix).Volts, find(t, nom, "OT1"+SpeakerSuffix).Volts; sp > 1e-4*spn {
		t.Errorf("C11 open: speaker %.3g V, nominal %.3g V", sp, spn)
	}
	// The driver's plate, before the capacitor, keeps its signal (a little
	// more, with the 6V6 grid leak no longer loading it).
	pl, pln := find(t, open, "V1.6").Volts, find(t, nom, "V1.6").Volts
	if pl < pln || pl > 1.1*pln {
		t.Errorf("C11 open: driver plate %.4g V, nominal %.4g V", pl, pln)
	}
}

// Gain and Tone agree, and the tone scales linearly with its level.
func TestGainMatchesTone(t *testing.T) {
	s := solveText(t, demoText(t, "se-6v6-stereo"))
	pts, err := s.an.Tone(s.op, s.v, Options{Volts: 0.25, Hz: 400}, nil)
	if err != nil {
		t.Fatal(err)
	}
	g, err := Gain(s.m, s.op, s.v, "GL1", "OT1.speaker", 400)
	if err != nil {
		t.Fatal(err)
	}
	spk := find(t, pts, "OT1.speaker")
	if math.Abs(cmplx.Abs(g)*0.25-spk.Volts) > 1e-9*spk.Volts {
		t.Errorf("Gain %.6g × 0.25 V ≠ tone %.6g V", cmplx.Abs(g), spk.Volts)
	}
	if _, err := s.an.Gain(s.op, s.v, "GL1", "GLX", Options{}); err == nil || !strings.Contains(err.Error(), "GL") {
		t.Errorf("unknown net: err %v", err)
	}
}

// luSolve's answer satisfies the system it was given (residual check).
func TestLUResidual(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	const n = 30
	a := make([]complex128, n*n)
	for i := range a {
		if rng.Float64() < 0.3 {
			a[i] = complex(rng.NormFloat64(), rng.NormFloat64())
		}
	}
	for i := 0; i < n; i++ {
		a[i*n+i] += complex(0.1, 0)
	}
	b := make([]complex128, n)
	for i := range b {
		b[i] = complex(rng.NormFloat64(), rng.NormFloat64())
	}
	a0, b0 := append([]complex128(nil), a...), append([]complex128(nil), b...)
	if err := luSolve(a, b, n); err != nil {
		t.Fatal(err)
	}
	for i := 0; i < n; i++ {
		var s complex128
		for j := 0; j < n; j++ {
			s += a0[i*n+j] * b[j]
		}
		if cmplx.Abs(s-b0[i]) > 1e-9 {
			t.Fatalf("row %d residual %g", i, cmplx.Abs(s-b0[i]))
		}
	}
	if err := luSolve(make([]complex128, 4), make([]complex128, 2), 2); err == nil {
		t.Error("zero matrix: want a singular error")
	}
}

// Output transformers as reflected loads, driven straight at a plate with
// the valves taken out. Single-ended: speaker volts = n·V·Zp/(R + Zp),
// with Zp = Z ∥ jωL, R the primary DCR and n = √(Load/Z) the turns
// ratio. Push-pull, one half driven and the other idle: an ideal
// centre-tapped primary reflects Z/4 into the driven half (Radiotron
// Designer's Handbook, 4th ed., push-pull class A, from memory), and the
// whole primary carries twice the half's volts, so speaker volts =
// 2·n·V·(Zp/4)/(R + Zp/4).
func TestOutputTransformerLoad(t *testing.T) {
	const hz = 1000.0
	w := 2 * math.Pi * hz
	zp := func(z, l float64) complex128 { return 1 / (complex(1/z, 0) + 1/complex(0, w*l)) }
	cases := []struct {
		design, from, ot, valve string
		z, load, dcr, henries   float64
		pushPull                bool
	}{
		// se-6v6-stereo.yaml OT1: 5k to 8 Ω, 250 Ω primary.
		{"se-6v6-stereo", "OPL", "OT1", "V2", 5e3, 8, 250, SEPrimaryHenries, false},
		// pp-el34-fixed.yaml OT1: 3k4 plate to plate, 8 Ω, 95 Ω half a.
		{"pp-el34-fixed", "PA", "OT1", "V3", 3.4e3, 8, 95, PPPrimaryHenries, true},
	}
	for _, c := range cases {
		s := solveText(t, demoText(t, c.design))
		g, err := s.an.Gain(s.op, s.v, c.from, c.ot+SpeakerSuffix,
			Options{Hz: hz, Open: map[string]bool{"V2": true, "V3": true, "V4": true}})
		if err != nil {
			t.Fatal(err)
		}
		n := math.Sqrt(c.load / c.z)
		var want complex128
		if c.pushPull {
			q := zp(c.z, c.henries) / 4
			want = complex(2*n, 0) * q / (complex(c.dcr, 0) + q)
		} else {
			q := zp(c.z, c.henries)
			want = complex(n, 0) * q / (complex(c.dcr, 0) + q)
		}
		// The SE primary's B+ end sits on a 100 µF filter capacitor
		// (1.6 Ω at 1 kHz), not on true ground: allow 0.5 %.
		if rel := math.Abs(cmplx.Abs(g)-cmplx.Abs(want)) / cmplx.Abs(want); rel > 0.005 {
			t.Errorf("%s %s: speaker/plate %.5f, closed form %.5f: off by %.2f %%", c.design, c.ot, cmplx.Abs(g), cmplx.Abs(want), 100*rel)
		}
	}
}

// The default input is the first grid with only a grid leak to ground; the
// ripple frequency follows the rectifier.
func TestInputAndRippleHz(t *testing.T) {
	for _, c := range []struct{ design, input string }{
		{"bench-12ax7", "G1"},    // R1 1M to 0V
		{"se-6v6-stereo", "GL1"}, // R10 1M to 0V; GL2 is driven through C11
		{"pp-el34-fixed", "G1"},  // R10 1M to 0V; PIG2 has C20 and R21 to TAIL
	} {
		s := solveText(t, demoText(t, c.design))
		if got := s.an.InputNet(); got != c.input {
			t.Errorf("%s: input %q, want %q", c.design, got, c.input)
		}
		if _, err := s.an.Tone(s.op, s.v, Options{InputNet: "NOPE"}, nil); err == nil {
			t.Errorf("%s: unknown input net accepted", c.design)
		}
	}
	// A long-tailed pair as the first stage with its input grid leak
	// returned to the tail (R10 1M PIG1 to TAIL): the input is that grid,
	// not PIG2 (C10 to ground: AC ground) nor the output grids (driven
	// through C11, C12).
	for _, c := range []struct{ template, input string }{{"pp-fixed", "PIG1"}, {"pp-cathode", ""}} {
		tp, err := design.TemplateByName(c.template)
		if err != nil {
			t.Fatal(err)
		}
		s := solveText(t, string(tp.Text))
		got := s.an.InputNet()
		if c.input != "" && got != c.input {
			t.Errorf("%s: input %q, want %q", c.template, got, c.input)
		}
		if got == "" {
			t.Errorf("%s: no input grid found", c.template)
		}
	}
	s := solveText(t, filterDesign)
	v := s.v.Clone()
	v.HalfOpen = true
	// Full wave on 50 Hz mains ripples at 100 Hz; half wave at 50 Hz
	// (Radiotron Designer's Handbook, 4th ed., rectifier chapter, from memory).
	if a, b := RippleHz(s.m, s.v), RippleHz(s.m, v); a != 100 || b != 50 {
		t.Errorf("ripple %g Hz full wave, %g Hz half open; want 100 and 50", a, b)
	}
}

// A valve with no emission (Values.Emission 0, a dead valve) passes no
// signal: its linearised gm and 1/ra are those of a cut-off device.
func TestDeadValveNoGain(t *testing.T) {
	s := solveText(t, demoText(t, "bench-12ax7"))
	v := s.v.Clone()
	v.Emission[0] = 0
	var op amp.OP
	if err := amp.NewSolver(s.m).Solve(amp.Conditions{}, v, false, &op); err != nil {
		t.Fatal(err)
	}
	pts, err := s.an.Tone(&op, v, Options{}, nil)
	if err != nil {
		t.Fatal(err)
	}
	if g := find(t, pts, "V1.6").Volts / DefaultVolts; g > 0.01 {
		t.Errorf("dead 12AX7: stage gain %.3g, want about 0", g)
	}
}
