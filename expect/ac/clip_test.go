package ac

import (
	"math"
	"strings"
	"testing"
)

// The bench demo's 12AX7 stage (HT 250 V, 100 kΩ plate load, 1k5
// bypassed cathode) driven with 5 V rms, far past its bias. By hand: the
// stage idles at about 1 mA, so its cathode sits near +1.5 V and its grid
// about 1.5 V below it; with µ ≈ 100 (RCA 12AX7 data, from memory) it
// cuts off at about −(250 V − 1.5 V)/100 ≈ −2.5 V, so the grid can swing
// about 1.0 V peak downwards and 1.5 V upwards before grid current: the
// stage clips at its grid at about 1 V peak, the smaller of the two (the
// limits of clip.go, common practice). The linear prediction at the plate,
// gain about 60 × 5 V, is over 250 V rms: more than the supply. Limited,
// the plate carries the linear gain times the clip level, and stays
// within the swing its supply and cathode allow.
func TestClipSingleStage(t *testing.T) {
	s := solveText(t, demoText(t, "bench-12ax7"))
	lin, err := s.an.Tone(s.op, s.v, Options{Volts: 5, Linear: true}, nil)
	if err != nil {
		t.Fatal(err)
	}
	if len(s.an.Clips()) != 0 {
		t.Errorf("Linear: clips reported: %v", s.an.Clips())
	}
	linPlate := find(t, lin, "V1.6").Volts
	if linPlate < 250 {
		t.Fatalf("linear plate %g V rms: the drive should ask for more than the 250 V supply", linPlate)
	}
	pts, err := s.an.Tone(s.op, s.v, Options{Volts: 5}, nil)
	if err != nil {
		t.Fatal(err)
	}
	clips := s.an.Clips()
	if len(clips) != 1 {
		t.Fatalf("clips %v: want one (V1A)", clips)
	}
	c := clips[0]
	t.Log(c.String())
	if c.Section != "V1A" || c.At != "grid" || !strings.Contains(c.Why, "cutoff") {
		t.Errorf("clip %+v: want V1A at its grid, by cutoff", c)
	}
	if c.Peak < 0.8 || c.Peak > 1.2 {
		t.Errorf("clip level %g V peak, by hand about 1.0 V", c.Peak)
	}
	if math.Abs(c.Wanted-5*math.Sqrt2) > 0.05*5*math.Sqrt2 {
		t.Errorf("linear grid-cathode swing %g V peak, want about 5 V × √2 (cathode bypassed)", c.Wanted)
	}
	so := s.op.Sections[0]
	plate := find(t, pts, "V1.6").Volts
	if want := linPlate * c.Peak / c.Wanted; math.Abs(plate-want) > 1e-6*want {
		t.Errorf("limited plate %g V rms, linear gain × clip level %g V rms", plate, want)
	}
	if pk := plate * math.Sqrt2; pk > 250-so.Va || pk > so.Va-so.Vk {
		t.Errorf("limited plate %g V peak: beyond its supply (%g V up) or its cathode (%g V down)", pk, 250-so.Va, so.Va-so.Vk)
	}
	if g := find(t, pts, "V1.7").Volts; math.Abs(g-5) > 1e-9 {
		t.Errorf("the generator's own grid reads %g V, want the 5 V it drives", g)
	}
	// At 100 mV the stage is linear.
	if _, err := s.an.Tone(s.op, s.v, Options{Volts: 0.1}, nil); err != nil {
		t.Fatal(err)
	}
	if len(s.an.Clips()) != 0 {
		t.Errorf("100 mV: clips %v", s.an.Clips())
	}
}

// The push-pull EL34 demo at 1 V rms in: linearly its plates would carry
// kilovolts and its speaker hundreds of volts. Limited, the speaker can
// carry at most what the plates can swing through the turns ratio: each
// plate from its idle volts down to about its cathode, both ends in
// opposite phase, so 2·Va peak plate to plate, times √(8 Ω / 3k4) (the
// demo's OT), / √2 for rms: about 30 V rms at 440 V. A clip note names
// the stage.
func TestClipPushPullSpeaker(t *testing.T) {
	s := solveText(t, demoText(t, "pp-el34-fixed"))
	lin, err := s.an.Tone(s.op, s.v, Options{Volts: 1, AllInputs: true, Linear: true}, nil)
	if err != nil {
		t.Fatal(err)
	}
	if v := find(t, lin, "V3.3").Volts; v < 1000 {
		t.Fatalf("linear V3 plate %g V rms: want the kilovolts the linear model gives", v)
	}
	pts, err := s.an.Tone(s.op, s.v, Options{Volts: 1, AllInputs: true}, nil)
	if err != nil {
		t.Fatal(err)
	}
	spk := find(t, pts, "OT1"+SpeakerSuffix).Volts
	va := 0.0
	for i, sec := range s.m.Sections {
		if sec.Ref == "V3" || sec.Ref == "V4" {
			va = math.Max(va, s.op.Sections[i].Va)
		}
	}
	bound := 2 * va * math.Sqrt(8.0/3400) / math.Sqrt2
	t.Logf("speaker %.1f V rms, bound %.1f V rms (Va %.0f V); linear %.0f V", spk, bound, va, find(t, lin, "OT1"+SpeakerSuffix).Volts)
	if !(spk > 0) || spk > bound {
		t.Errorf("speaker %g V rms: want finite, above 0 and at most %g V rms", spk, bound)
	}
	for _, p := range pts {
		if math.IsNaN(p.Volts) || p.Volts > 2*va {
			t.Errorf("%s: %g V rms, beyond anything the supply can give", p.ID, p.Volts)
		}
	}
	clips := s.an.Clips()
	if len(clips) == 0 {
		t.Fatal("no clip reported")
	}
	for _, c := range clips {
		t.Log(c.String())
		if !strings.Contains(c.String(), "clips at about") || !strings.Contains(c.String(), "the signal beyond it is limited") {
			t.Errorf("note %q", c.String())
		}
	}
}
