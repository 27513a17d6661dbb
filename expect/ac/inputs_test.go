package ac

import (
	"math"
	"testing"
)

// TestAllInputs: with one generator on every input grid, both channels of
// the stereo demo carry the tone to their speakers equally (the channels
// are identical by design); with the default single input the right
// channel's speaker gets only crosstalk through the shared supply.
func TestAllInputs(t *testing.T) {
	s := solveText(t, demoText(t, "se-6v6-stereo"))
	one, err := s.an.Tone(s.op, s.v, Options{}, nil)
	if err != nil {
		t.Fatal(err)
	}
	both, err := s.an.Tone(s.op, s.v, Options{AllInputs: true}, nil)
	if err != nil {
		t.Fatal(err)
	}
	left, right := find(t, both, "OT1.speaker").Volts, find(t, both, "OT2.speaker").Volts
	if math.Abs(left-right) > 1e-6*left {
		t.Errorf("both inputs driven: speakers %.6g V and %.6g V, want equal", left, right)
	}
	if r1 := find(t, one, "OT2.speaker").Volts; r1 > 0.01*left {
		t.Errorf("left input only: right speaker %.3g V, want crosstalk far below %.3g V", r1, left)
	}
}
