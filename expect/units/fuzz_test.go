package units

import (
	"math"
	"testing"
)

// FuzzParse checks that Parse, ParseAny and ParseTolerance never panic, that
// any value Parse returns is finite, and that it survives Format -> Parse
// and FormatRKM -> Parse to within 0.5 % (three significant figures).
func FuzzParse(f *testing.F) {
	seeds := []struct {
		s string
		q uint8
	}{
		{"4K7", uint8(Ohms)},           // IEC 60062 resistor code
		{"470R", uint8(Ohms)},          // R as unit/decimal marker
		{"R47", uint8(Ohms)},           // leading R
		{"2M2", uint8(Ohms)},           // mega resistor code
		{"4n7", uint8(Farads)},         // capacitor code
		{"100p", uint8(Farads)},        // trailing prefix
		{"2µ2", uint8(Farads)},         // multi-byte decimal marker
		{"4.7 kΩ", uint8(Ohms)},        // SI with space and omega
		{"150mA", uint8(Amps)},         // milli prefix + unit
		{"1.5MHz", uint8(Hertz)},       // mega prefix + two-letter unit
		{"-1e-6", uint8(Seconds)},      // sign and exponent
		{"1e308", uint8(Volts)},        // near the top of float64
		{"1.79e308", uint8(Volts)},     // rounds past MaxFloat64 at 3 figures
		{"5e-324", uint8(Volts)},       // smallest subnormal
		{"4,7", uint8(Ohms)},           // comma: syntax error
		{"4K7F", uint8(Farads)},        // RKM with explicit unit
		{"4R7F", uint8(Farads)},        // contradictory
		{"5 %", uint8(Percent)},        // percent
		{"0.000123", uint8(Percent)},   // small percent
		{"\u22120.5V", uint8(Volts)},   // MINUS SIGN
		{"", uint8(None)},              // empty
		{"4V7", uint8(Volts)},          // unit letter as decimal marker
		{"999.6", uint8(Ohms)},         // rounds into the next prefix
		{"1e99999999999", uint8(Ohms)}, // huge exponent
	}
	for _, s := range seeds {
		f.Add(s.s, s.q)
	}
	f.Fuzz(func(t *testing.T, s string, qi uint8) {
		q := Quantity(qi % 10)
		_, _, _ = ParseAny(s)
		lo, hi, err := ParseTolerance(s)
		if err == nil && (lo > 0 || hi < 0 || lo < -1 || math.IsNaN(lo) || math.IsNaN(hi)) {
			t.Fatalf("ParseTolerance(%q) = %g, %g", s, lo, hi)
		}
		v, err := Parse(s, q)
		if err != nil {
			return
		}
		if math.IsNaN(v) || math.IsInf(v, 0) {
			t.Fatalf("Parse(%q, %v) = %g", s, q, v)
		}
		// Subnormals are spaced 4.9e-324 apart, which is more than 0.5 % of
		// values below about 1e-321: allow that spacing as absolute slack.
		const slack = 2 * 4.9406564584124654e-324
		for _, out := range []string{Format(v, q), FormatRKM(v, q)} {
			back, err := Parse(out, q)
			if err != nil {
				t.Fatalf("Parse(%q, %v) = %g; Parse of its format %q: %v", s, q, v, out, err)
			}
			if math.Abs(back-v) > 0.005*math.Abs(v)+slack {
				t.Fatalf("Parse(%q, %v) = %g; format %q parses to %g, off by more than 0.5 %%", s, q, v, out, back)
			}
		}
	})
}
