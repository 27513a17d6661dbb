package amp

import (
	"math"
	"os"
	"strings"
	"testing"

	"pinwalk/expect/design"
)

// A bias supply rectified from a winding of the power transformer follows
// the mains: the winding's peak scales linearly with its primary volts,
// the diode's drop does not (closed form of a peak rectifier, Vout =
// f·(|V0| + Vd) − Vd with Vd = 0.7 V for silicon, common practice). The
// demo PP-EL34's bias (−80 V at 230 V mains, feeding its bias dividers
// through 2.2 kΩ: a linear network) then reads at 25 % variac
// (0.25·80.7 − 0.7)/80 = 0.2434 of its full-mains value, in the full and
// in the fast solve; a regulated one (mains-fed: false) does not move.
func TestBiasSupplyFollowsVariac(t *testing.T) {
	raw, err := os.ReadFile("../../testdata/designs/pp-el34-fixed.yaml")
	if err != nil {
		t.Fatal(err)
	}
	for _, fed := range []bool{true, false} {
		src := string(raw) // the demo's bias supply is mains-fed by default
		if !fed {
			src = strings.Replace(src, "bias-supply: -80V, dcr: 2k2,", "bias-supply: -80V, dcr: 2k2, mains-fed: false,", 1)
		}
		d, probs := design.Parse("pp-el34-fixed.yaml", []byte(src))
		if len(probs.Errors()) > 0 {
			t.Fatal(probs.Errors())
		}
		if d.ByRef["U1"].MainsFed != fed {
			t.Fatalf("mains-fed %v not read", fed)
		}
		m, full := solve(t, d, Conditions{})
		nb100, _ := m.NetVolts(full, "NB")
		s := NewSolver(m)
		var op, fast OP
		if err := s.Solve(Conditions{Variac: 0.25}, m.NominalValues(), false, &op); err != nil {
			t.Fatal(err)
		}
		nb25, _ := m.NetVolts(&op, "NB")
		if err := s.CacheSupplyAt(Conditions{}, m.NominalValues(), full); err != nil {
			t.Fatal(err)
		}
		if err := s.Solve(Conditions{Variac: 0.25}, m.NominalValues(), true, &fast); err != nil {
			t.Fatal(err)
		}
		nbFast, _ := m.NetVolts(&fast, "NB")
		want := nb100
		if fed {
			want = nb100 * (0.25*80.7 - 0.7) / 80
		}
		t.Logf("mains-fed %v: NB %.2f V at 100 %%, %.2f V (full) and %.2f V (fast) at 25 %%, want %.2f V", fed, nb100, nb25, nbFast, want)
		if math.Abs(nb25-want) > 0.005*math.Abs(want) || math.Abs(nbFast-want) > 0.005*math.Abs(want) {
			t.Errorf("mains-fed %v: NB at 25 %% variac %.3f V (full), %.3f V (fast), want %.3f V", fed, nb25, nbFast, want)
		}
	}
	if got := RectifiedVolts(-80, 0); got != 0 {
		t.Errorf("no mains: %g V", got)
	}
}
