package ac

import (
	"math"
	"math/cmplx"
	"strings"
	"testing"

	"pinwalk/expect/design"
)

func ultralinearText(t *testing.T) string {
	t.Helper()
	tp, err := design.TemplateByName("pp-ultralinear")
	if err != nil {
		t.Fatal(err)
	}
	return string(tp.Text)
}

func replaceOnce(t *testing.T, src, old, new string) string {
	t.Helper()
	if !strings.Contains(src, old) {
		t.Fatalf("no %q in the design", old)
	}
	return strings.Replace(src, old, new, 1)
}

// TestScreenTapAndSecondaryClosedForm drives one plate of the
// pp-ultralinear template with every valve out and compares the speaker
// and the screen tap with an ideal centre-tapped autotransformer
// (Radiotron Designer's Handbook, 4th ed., output transformers, from
// memory): the wired secondary's load ZL = 8 Ω ∥ (R14 + R13) behind its
// DCR Rs reflects into the whole primary as (Rs + ZL)/n², n = √(8/8000),
// in parallel with the primary inductance; a lone driven half sees a
// quarter of that behind its own DCR (135 Ω). The whole primary carries
// twice the half's volts, the speaker n times that less the drop in Rs,
// and the tap (no screen current with the valve out) 40 % of the half's.
func TestScreenTapAndSecondaryClosedForm(t *testing.T) {
	const hz = 1000.0
	s := solveText(t, ultralinearText(t))
	opt := Options{Hz: hz, Open: map[string]bool{"V1": true, "V2": true, "V3": true, "V4": true}}
	spk, err := s.an.Gain(s.op, s.v, "PA", "OT1"+SpeakerSuffix, opt)
	if err != nil {
		t.Fatal(err)
	}
	tap, err := s.an.Gain(s.op, s.v, "PA", "UA", opt)
	if err != nil {
		t.Fatal(err)
	}
	n := math.Sqrt(8.0 / 8000)
	zl := 1 / (1/8.0 + 1/(4700.0+100))
	const rs, rh, frac = 0.4, 135.0, 0.4
	w := 2 * math.Pi * hz
	zw := 1 / (complex(n*n/(rs+zl), 0) + 1/complex(0, w*PPPrimaryHenries))
	half := (zw / 4) / (complex(rh, 0) + zw/4)
	wantSpk := cmplx.Abs(half) * 2 * n * zl / (rs + zl)
	wantTap := frac * cmplx.Abs(half)
	for _, c := range []struct {
		what      string
		got, want float64
	}{{"speaker", cmplx.Abs(spk), wantSpk}, {"tap UA", cmplx.Abs(tap), wantTap}} {
		if rel := math.Abs(c.got-c.want) / c.want; rel > 1e-3 {
			t.Errorf("%s per volt at PA: %.6f, ideal autotransformer %.6f: off by %.3f %%", c.what, c.got, c.want, 100*rel)
		}
	}
	// The tap is in phase with its plate; the hot end is in phase with the
	// first primary end (PB), so against PA it is inverted.
	if math.Abs(cmplx.Phase(tap)) > 0.05 || math.Abs(math.Abs(cmplx.Phase(spk))-math.Pi) > 0.05 {
		t.Errorf("phases: tap %.1f°, speaker %.1f° against PA", cmplx.Phase(tap)*180/math.Pi, cmplx.Phase(spk)*180/math.Pi)
	}
}

// TestFeedbackFromTheSpeaker: the template's R14 from the speaker net to
// the input stage's feedback resistor closes a loop whose gain obeys
// Black's feedback formula (H. S. Black, "Stabilized feedback
// amplifiers", 1934, from memory), G = A/(1 − B): A is the gain from the
// input grid to the speaker with R14's speaker end on chassis (the loop
// open, the cathode circuit loaded as before), B the gain around the loop
// from R14's speaker end driven alone back to the speaker. The loop is
// negative (B's real part below 0 at 1 kHz) and cuts the gain several
// times, as the feedback network's divider R13/(R13 + R14) times the
// open-loop gain says.
func TestFeedbackFromTheSpeaker(t *testing.T) {
	const hz = 1000.0
	const r14 = "  R14: {resistor: 4k7?, between: [SPK, KF], note: global feedback from the speaker}"
	base := ultralinearText(t)
	closed := solveText(t, base)
	open := solveText(t, replaceOnce(t, base, r14, strings.Replace(r14, "[SPK, KF]", "[0V, KF]", 1)))
	loop := solveText(t, replaceOnce(t, base, r14, strings.Replace(r14, "[SPK, KF]", "[FBX, KF]", 1)+
		"\n  R19: {resistor: 1M, between: [FBX, 0V]}"))
	spk := "OT1" + SpeakerSuffix
	gain := func(s solved, from string) complex128 {
		g, err := s.an.Gain(s.op, s.v, from, spk, Options{Hz: hz})
		if err != nil {
			t.Fatal(err)
		}
		return g
	}
	g, a, b := gain(closed, "G1"), gain(open, "G1"), gain(loop, "FBX")
	want := a / (1 - b)
	if rel := cmplx.Abs(g-want) / cmplx.Abs(want); rel > 0.005 {
		t.Errorf("closed-loop gain %.3f∠%.1f°, Black's formula A/(1−B) = %.3f∠%.1f° (A %.1f, B %.2f): off by %.2f %%",
			cmplx.Abs(g), cmplx.Phase(g)*180/math.Pi, cmplx.Abs(want), cmplx.Phase(want)*180/math.Pi, cmplx.Abs(a), b, 100*rel)
	}
	if real(b) >= 0 || cmplx.Abs(1-b) < 5 {
		t.Errorf("loop gain B = %.2f: want negative feedback cutting the gain at least 5 times", b)
	}
	// Open-loop gain times the divider is the loop gain, roughly (the
	// cathode's own impedance shunts R13 a little).
	if beta := 100.0 / (100 + 4700); math.Abs(cmplx.Abs(b)/(cmplx.Abs(a)*beta)-1) > 0.15 {
		t.Errorf("|B| %.2f against |A|·R13/(R13+R14) = %.2f", cmplx.Abs(b), cmplx.Abs(a)*beta)
	}
	t.Logf("open loop %.1f, loop gain %.2f, closed loop %.2f (Black %.2f)", cmplx.Abs(a), b, cmplx.Abs(g), cmplx.Abs(want))
}
