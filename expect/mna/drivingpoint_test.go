package mna

import (
	"math"
	"testing"
)

// TestDrivingPoint: resistance to ground of a ladder, against the closed
// form (series and parallel combination, Ohm's law).
func TestDrivingPoint(t *testing.T) {
	c := New()
	a, b := c.Node("a"), c.Node("b")
	c.AddResistor(a, 0, 1000) // a–ground 1 kΩ
	c.AddResistor(a, b, 2000) // a–b 2 kΩ
	c.AddResistor(b, 0, 3000) // b–ground 3 kΩ
	got, err := c.DrivingPoint([]int{a, b})
	if err != nil {
		t.Fatal(err)
	}
	// From a: 1k ∥ (2k + 3k) = 833.33 Ω; from b: 3k ∥ (2k + 1k) = 1.5 kΩ.
	for i, want := range []float64{1000 * 5000 / 6000.0, 1500} {
		if math.Abs(got[i]-want) > 1e-9*want {
			t.Errorf("node %d: %.6f Ω, want %.6f Ω", i, got[i], want)
		}
	}
	c2 := New()
	f := c2.Node("float")
	c2.AddResistor(f, c2.Node("other"), 100)
	if _, err := c2.DrivingPoint([]int{f}); err == nil {
		t.Error("a node with no path to ground: no error")
	}
}
