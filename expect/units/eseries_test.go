package units

import (
	"math"
	"testing"
)

func TestSeriesE12(t *testing.T) {
	// IEC 60063 E12 (as listed in /work/shared/REFERENCES.md, from memory).
	want := []float64{1.0, 1.2, 1.5, 1.8, 2.2, 2.7, 3.3, 3.9, 4.7, 5.6, 6.8, 8.2}
	got, err := Series(12)
	if err != nil {
		t.Fatal(err)
	}
	if len(got) != len(want) {
		t.Fatalf("Series(12) has %d values; want %d", len(got), len(want))
	}
	for i := range want {
		if got[i] != want[i] {
			t.Errorf("Series(12)[%d] = %g; want %g (IEC 60063)", i, got[i], want[i])
		}
	}
}

func TestSeriesShort(t *testing.T) {
	// IEC 60063 (from memory).
	tests := map[int][]float64{
		3: {1.0, 2.2, 4.7},
		6: {1.0, 1.5, 2.2, 3.3, 4.7, 6.8},
		24: {1.0, 1.1, 1.2, 1.3, 1.5, 1.6, 1.8, 2.0, 2.2, 2.4, 2.7, 3.0,
			3.3, 3.6, 3.9, 4.3, 4.7, 5.1, 5.6, 6.2, 6.8, 7.5, 8.2, 9.1},
	}
	for n, want := range tests {
		got, err := Series(n)
		if err != nil || len(got) != len(want) {
			t.Fatalf("Series(%d) = %v, %v; want %v", n, got, err, want)
		}
		for i := range want {
			if got[i] != want[i] {
				t.Errorf("Series(%d)[%d] = %g; want %g (IEC 60063)", n, i, got[i], want[i])
			}
		}
	}
}

// TestSeriesE24Historical checks that the E24 values which differ from the
// rounded geometric series 10^(i/24) are exactly the historical ones listed
// in IEC 60063 (from memory): 2.7 3.0 3.3 3.6 3.9 4.3 4.7 8.2.
func TestSeriesE24Historical(t *testing.T) {
	s, _ := Series(24)
	var differ []float64
	for i, v := range s {
		if math.Round(math.Pow(10, float64(i)/24)*10)/10 != v {
			differ = append(differ, v)
		}
	}
	want := []float64{2.7, 3.0, 3.3, 3.6, 3.9, 4.3, 4.7, 8.2}
	if len(differ) != len(want) {
		t.Fatalf("E24 values off the formula: %v; want %v", differ, want)
	}
	for i := range want {
		if differ[i] != want[i] {
			t.Errorf("E24 values off the formula: %v; want %v", differ, want)
			break
		}
	}
}

func TestSeriesE96(t *testing.T) {
	// IEC 60063 E96, as printed in resistor catalogues (from memory).
	want := []float64{
		1.00, 1.02, 1.05, 1.07, 1.10, 1.13, 1.15, 1.18, 1.21, 1.24, 1.27, 1.30,
		1.33, 1.37, 1.40, 1.43, 1.47, 1.50, 1.54, 1.58, 1.62, 1.65, 1.69, 1.74,
		1.78, 1.82, 1.87, 1.91, 1.96, 2.00, 2.05, 2.10, 2.15, 2.21, 2.26, 2.32,
		2.37, 2.43, 2.49, 2.55, 2.61, 2.67, 2.74, 2.80, 2.87, 2.94, 3.01, 3.09,
		3.16, 3.24, 3.32, 3.40, 3.48, 3.57, 3.65, 3.74, 3.83, 3.92, 4.02, 4.12,
		4.22, 4.32, 4.42, 4.53, 4.64, 4.75, 4.87, 4.99, 5.11, 5.23, 5.36, 5.49,
		5.62, 5.76, 5.90, 6.04, 6.19, 6.34, 6.49, 6.65, 6.81, 6.98, 7.15, 7.32,
		7.50, 7.68, 7.87, 8.06, 8.25, 8.45, 8.66, 8.87, 9.09, 9.31, 9.53, 9.76,
	}
	got, err := Series(96)
	if err != nil || len(got) != 96 {
		t.Fatalf("Series(96) = %d values, %v", len(got), err)
	}
	for i := range want {
		if got[i] != want[i] {
			t.Errorf("Series(96)[%d] = %g; want %g (IEC 60063)", i, got[i], want[i])
		}
	}
	// E48 is every second E96 value (IEC 60063).
	e48, _ := Series(48)
	for i, v := range e48 {
		if v != want[2*i] {
			t.Errorf("Series(48)[%d] = %g; want %g", i, v, want[2*i])
		}
	}
}

func TestSeriesE192(t *testing.T) {
	s, err := Series(192)
	if err != nil || len(s) != 192 {
		t.Fatalf("Series(192) = %d values, %v", len(s), err)
	}
	// IEC 60063 E192 has 9.20 where the rounded formula gives 9.19 (from memory).
	if s[185] != 9.20 {
		t.Errorf("Series(192)[185] = %g; want 9.20 (IEC 60063)", s[185])
	}
	// Every second E192 value is the E96 value (IEC 60063).
	e96, _ := Series(96)
	for i, v := range e96 {
		if s[2*i] != v {
			t.Errorf("Series(192)[%d] = %g; want E96 %g", 2*i, s[2*i], v)
		}
	}
	// Spot values (from memory of E192 tables): 1.01 4.70 4.81 9.88.
	for i, want := range map[int]float64{1: 1.01, 129: 4.70, 131: 4.81, 191: 9.88} {
		if s[i] != want {
			t.Errorf("Series(192)[%d] = %g; want %g", i, s[i], want)
		}
	}
}

func TestSeriesProperties(t *testing.T) {
	for _, n := range []int{3, 6, 12, 24, 48, 96, 192} {
		s, err := Series(n)
		if err != nil || len(s) != n {
			t.Fatalf("Series(%d): %d values, %v", n, len(s), err)
		}
		if s[0] != 1 {
			t.Errorf("Series(%d)[0] = %g; want 1", n, s[0])
		}
		for i, v := range s {
			if v < 1 || v >= 10 || (i > 0 && v <= s[i-1]) {
				t.Errorf("Series(%d)[%d] = %g: not ascending in [1, 10)", n, i, v)
			}
			// Each value lies within 5 % of the geometric ideal 10^(i/n)
			// (the largest historical deviation, 3.0 vs 2.87 in E24, is about 4.5 %).
			if ideal := math.Pow(10, float64(i)/float64(n)); math.Abs(v/ideal-1) > 0.05 {
				t.Errorf("Series(%d)[%d] = %g; ideal %g", n, i, v, ideal)
			}
		}
	}
	// A fresh copy each call.
	a, _ := Series(12)
	a[0] = 99
	if b, _ := Series(12); b[0] != 1 {
		t.Error("Series returns shared storage")
	}
	for _, n := range []int{0, 1, 5, 10, 100, -6} {
		if _, err := Series(n); err == nil {
			t.Errorf("Series(%d): no error", n)
		}
	}
}

func TestNearest(t *testing.T) {
	tests := []struct {
		v    float64
		n    int
		want float64
	}{
		{4600, 12, 4700}, // brief: 4.6k in E12 -> 4.7k
		{1.04, 24, 1.0},  // 1.04/1.0 = 1.040 < 1.1/1.04 = 1.058
		{5000, 6, 4700},  // 5.0/4.7 = 1.064 < 6.8/5.0 = 1.36
		{9.6, 12, 10},    // 10/9.6 = 1.042 < 9.6/8.2 = 1.171: next decade
		{0.0096, 12, 0.01},
		{1.1, 12, 1.2},  // geometric midpoint of 1.0 and 1.2 is 1.095
		{1.09, 12, 1.0}, // just below it
		{220e3, 12, 220e3},
		{1e-9, 6, 1e-9},
		{3.0e-6, 6, 3.3e-6}, // 3.3/3.0 = 1.10 < 3.0/2.2 = 1.36
		{150, 96, 150},
		{9.21, 192, 9.20},
		{0.95, 3, 1.0},
	}
	for _, tt := range tests {
		got, err := Nearest(tt.v, tt.n)
		if err != nil || got != tt.want {
			t.Errorf("Nearest(%g, E%d) = %g, %v; want %g", tt.v, tt.n, got, err, tt.want)
		}
	}
	for _, v := range []float64{0, -1, math.NaN(), math.Inf(1)} {
		if _, err := Nearest(v, 12); err == nil {
			t.Errorf("Nearest(%g): no error", v)
		}
	}
	if _, err := Nearest(1, 7); err == nil {
		t.Error("Nearest(1, E7): no error")
	}
}

// TestNearestIsNearest compares Nearest against a brute-force search over
// all E24 values in a wide range of decades.
func TestNearestIsNearest(t *testing.T) {
	s, _ := Series(24)
	for v := 1e-3; v < 1e4; v *= 1.0173 {
		got, err := Nearest(v, 24)
		if err != nil {
			t.Fatal(err)
		}
		best := math.Inf(1)
		for d := -4; d <= 4; d++ {
			for _, m := range s {
				best = math.Min(best, math.Abs(math.Log(m*math.Pow(10, float64(d))/v)))
			}
		}
		if dist := math.Abs(math.Log(got / v)); dist > best+1e-12 {
			t.Fatalf("Nearest(%g, E24) = %g at log distance %g; brute force finds %g", v, got, dist, best)
		}
	}
}

func BenchmarkNearest(b *testing.B) {
	for i := 0; b.Loop(); i++ {
		if _, err := Nearest(float64(i%997+1)*13.7, 96); err != nil {
			b.Fatal(err)
		}
	}
}
