package units

import (
	"errors"
	"math"
	"strings"
	"testing"
)

// relClose reports whether got is within rel (relative) of want.
func relClose(got, want, rel float64) bool {
	if want == 0 {
		return got == 0
	}
	return math.Abs(got-want) <= rel*math.Abs(want)
}

func TestParse(t *testing.T) {
	tests := []struct {
		in   string
		q    Quantity
		want float64
		src  string
	}{
		// RKM code, IEC 60062 (examples in /work/shared/REFERENCES.md, from memory).
		{"4K7", Ohms, 4700, "IEC 60062: 4K7 = 4.7 kΩ"},
		{"470R", Ohms, 470, "IEC 60062: 470R = 470 Ω"},
		{"R47", Ohms, 0.47, "IEC 60062: R47 = 0.47 Ω"},
		{"2M2", Ohms, 2.2e6, "IEC 60062: 2M2 = 2.2 MΩ"},
		{"4n7", Farads, 4.7e-9, "IEC 60062: 4n7 = 4.7 nF"},
		{"100p", Farads, 100e-12, "IEC 60062: 100p = 100 pF"},
		{"2u2", Farads, 2.2e-6, "IEC 60062 with u for µ (common practice)"},
		{"2µ2", Farads, 2.2e-6, "IEC 60062: µ as decimal marker"},
		{"1R0", Ohms, 1, "IEC 60062: R as decimal marker"},
		{"0R", Ohms, 0, "zero-ohm link marking (common practice)"},
		{"1K0", Ohms, 1000, "common practice"},
		{"4k7", Ohms, 4700, "lower-case k in RKM (common practice)"},
		{"1m5", Farads, 1.5e-3, "IEC 60062: m as decimal marker"},
		{"4V7", Volts, 4.7, "zener voltage marking (common practice)"},
		// SI prefixes (SI Brochure, 9th ed., prefix table; from memory).
		{"4.7k", Ohms, 4700, "SI prefix k = 1e3"},
		{"4.7kΩ", Ohms, 4700, "SI"},
		{"4.7 kΩ", Ohms, 4700, "SI, space before unit"},
		{"4.7 k\u2126", Ohms, 4700, "OHM SIGN U+2126"},
		{"4.7 kohm", Ohms, 4700, "unit written out"},
		{"4.7Kohms", Ohms, 4700, "K for kilo, plural unit"},
		{"2.2 MΩ", Ohms, 2.2e6, "SI prefix M = 1e6"},
		{"1 mΩ", Ohms, 1e-3, "SI prefix m = 1e-3"},
		{"47uF", Farads, 47e-6, "SI prefix µ as u"},
		{"47µ", Farads, 47e-6, "SI prefix µ (MICRO SIGN), no unit"},
		{"47\u03bcF", Farads, 47e-6, "SI prefix µ (GREEK SMALL MU)"},
		{"100nF", Farads, 100e-9, "SI prefix n = 1e-9"},
		{"100 nf", Farads, 100e-9, "unit case-insensitive"},
		{"6.3V", Volts, 6.3, "heater voltage"},
		{"6.3", Volts, 6.3, "bare number is in q's unit"},
		{"250 V", Volts, 250, "SI"},
		{"150mA", Amps, 0.150, "SI prefix m = 1e-3"},
		{"150 ma", Amps, 0.150, "unit case-insensitive"},
		{"1.5MA", Amps, 1.5e6, "M is mega even before A"},
		{"50Hz", Hertz, 50, "SI"},
		{"50 hz", Hertz, 50, "unit case-insensitive"},
		{"1kHz", Hertz, 1000, "SI"},
		{"5%", Percent, 5, "percent value in percent"},
		{"10 H", Henries, 10, "SI"},
		{"12 W", Watts, 12, "SI"},
		{"30 s", Seconds, 30, "SI"},
		{"100ms", Seconds, 0.1, "SI"},
		{"-12V", Volts, -12, "leading sign"},
		{"+12", Volts, 12, "leading plus"},
		{"\u22122.5 V", Volts, -2.5, "MINUS SIGN U+2212"},
		{"1e-6", Farads, 1e-6, "exponent"},
		{"2.2E+3", Ohms, 2200, "exponent with sign"},
		{"1e3k", Ohms, 1e6, "exponent and prefix"},
		{".5", Volts, 0.5, "no integer digits"},
		{"5.", Volts, 5, "no fraction digits"},
		{"  4K7  ", Ohms, 4700, "surrounding space"},
		{"0", Volts, 0, "zero"},
		// Letters act as prefixes of q where they are not resistor codes.
		{"4n7", Henries, 4.7e-9, "p/n/u RKM letters are prefixes of q"},
		{"4K7", Volts, 4700, "K/M/G RKM letters are prefixes of q other than F, H"},
		{"4.7k", Farads, 4700, "an SI prefix is never a mismatch"},
		{"12", None, 12, "plain number"},
		{"4.7k", None, 4700, "plain number with prefix"},
	}
	for _, tt := range tests {
		got, err := Parse(tt.in, tt.q)
		if err != nil {
			t.Errorf("Parse(%q, %v): error %v; want %g (%s)", tt.in, tt.q, err, tt.want, tt.src)
			continue
		}
		// The parser builds the decimal text and converts once, so results
		// are the nearest float64: compare exactly.
		if got != tt.want {
			t.Errorf("Parse(%q, %v) = %g; want %g (%s)", tt.in, tt.q, got, tt.want, tt.src)
		}
	}
}

func TestParseMismatch(t *testing.T) {
	tests := []struct {
		in        string
		q         Quantity
		got       Quantity
		wantInMsg string
	}{
		{"4K7", Farads, Ohms, "4K7 is a resistance, expected a capacitance"},
		{"2M2", Henries, Ohms, "2M2 is a resistance, expected an inductance"},
		{"470R", Farads, Ohms, "470R is a resistance"},
		{"R47", Volts, Ohms, "R47 is a resistance, expected a voltage"},
		{"1R0", Farads, Ohms, "is a resistance"},
		{"12V", Amps, Volts, "12V is a voltage, expected a current"},
		{"100nF", Ohms, Farads, "100nF is a capacitance, expected a resistance"},
		{"150mA", Volts, Amps, "is a current"},
		{"50Hz", Seconds, Hertz, "is a frequency, expected a time"},
		{"5%", Volts, Percent, "is a percentage"},
		{"10 H", Farads, Henries, "is an inductance"},
		{"4V7", Ohms, Volts, "4V7 is a voltage"},
		{"12 W", None, Watts, "12 W is a power, expected a number"},
	}
	for _, tt := range tests {
		_, err := Parse(tt.in, tt.q)
		var me *MismatchError
		if !errors.As(err, &me) {
			t.Errorf("Parse(%q, %v): error %v; want *MismatchError", tt.in, tt.q, err)
			continue
		}
		if me.Got != tt.got || me.Want != tt.q {
			t.Errorf("Parse(%q, %v): Got %v Want %v; want Got %v Want %v", tt.in, tt.q, me.Got, me.Want, tt.got, tt.q)
		}
		if !strings.Contains(err.Error(), tt.wantInMsg) {
			t.Errorf("Parse(%q, %v): error %q does not contain %q", tt.in, tt.q, err, tt.wantInMsg)
		}
	}
}

func TestParseSyntax(t *testing.T) {
	tests := []struct {
		in        string
		wantInMsg string
	}{
		{"", "empty"},
		{"   ", "empty"},
		{"4x7", "expected a number with an optional SI prefix or RKM code (4K7, 470R, 100n)"},
		{"NaN", "expected a number"},
		{"Inf", "expected a number"},
		{"-Inf", "expected a number"},
		{"+", "expected a number"},
		{".", "expected a number"},
		{"R", "expected a number"},
		{"k", "expected a number"},
		{"abc", "expected a number"},
		{"4.7 kx", "unknown unit"},
		{"4.7 X", "unknown unit"},
		{"4,7k", "commas"},
		{"4,700", "commas"},
		{"4.7K7", "decimal point or an RKM letter"},
		{"4K7k", "RKM code already carries its multiplier"},
		{"4R7F", "RKM letter marks a resistance"},
		{"1e999", "out of range"},
		{"1e99999999999999999999", "out of range"},
		{"1e", "unknown unit"},
		{"1e+", "expected"},
		{"4 7", "expected a number"},
		{"--5", "expected a number"},
		{"4.7 S", "unknown unit"}, // S would be siemens: seconds only as s
		{"4.7 k ohm", "unknown unit"},
		{"4.7 PF", "unknown unit"}, // P is not an accepted prefix
	}
	for _, tt := range tests {
		v, err := Parse(tt.in, Ohms)
		var se *SyntaxError
		if !errors.As(err, &se) {
			t.Errorf("Parse(%q, Ohms) = %g, %v; want *SyntaxError", tt.in, v, err)
			continue
		}
		if se.Want != Ohms {
			t.Errorf("Parse(%q, Ohms): SyntaxError.Want = %v", tt.in, se.Want)
		}
		if !strings.Contains(err.Error(), tt.wantInMsg) {
			t.Errorf("Parse(%q, Ohms): error %q does not contain %q", tt.in, err, tt.wantInMsg)
		}
	}
	// The message shape promised in the package contract.
	_, err := Parse("4x7", Ohms)
	if want := `"4x7": expected a number with an optional SI prefix or RKM code (4K7, 470R, 100n)`; err == nil || err.Error() != want {
		t.Errorf("Parse(4x7) error = %v; want %s", err, want)
	}
}

func TestParseAny(t *testing.T) {
	tests := []struct {
		in    string
		want  float64
		wantQ Quantity
	}{
		{"12V", 12, Volts},
		{"4K7", 4700, Ohms}, // IEC 60062 resistor code
		{"2M2", 2.2e6, Ohms},
		{"470R", 470, Ohms},
		{"R47", 0.47, Ohms},
		{"1.5mA", 1.5e-3, Amps},
		{"4.7 kΩ", 4700, Ohms},
		{"47 µF", 47e-6, Farads},
		{"10H", 10, Henries},
		{"50 Hz", 50, Hertz},
		{"5%", 5, Percent},
		{"3 W", 3, Watts},
		{"20ms", 0.02, Seconds},
		{"4V7", 4.7, Volts},
		// No unit states the quantity: a bare capacitor code is ambiguous.
		{"100n", 100e-9, None},
		{"4n7", 4.7e-9, None},
		{"100k", 1e5, None},
		{"42", 42, None},
	}
	for _, tt := range tests {
		v, q, err := ParseAny(tt.in)
		if err != nil || v != tt.want || q != tt.wantQ {
			t.Errorf("ParseAny(%q) = %g, %v, %v; want %g, %v", tt.in, v, q, err, tt.want, tt.wantQ)
		}
	}
	_, _, err := ParseAny("4x7")
	var se *SyntaxError
	if !errors.As(err, &se) || se.Want != None {
		t.Errorf("ParseAny(4x7) error = %v; want *SyntaxError with Want None", err)
	}
}

func TestQuantityNames(t *testing.T) {
	want := []struct{ name, sym string }{
		{"number", ""}, {"resistance", "Ω"}, {"capacitance", "F"}, {"inductance", "H"},
		{"voltage", "V"}, {"current", "A"}, {"power", "W"}, {"frequency", "Hz"},
		{"percentage", "%"}, {"time", "s"},
	}
	for i, w := range want {
		q := Quantity(i)
		if q.String() != w.name || q.Symbol() != w.sym {
			t.Errorf("Quantity(%d) = %q %q; want %q %q", i, q.String(), q.Symbol(), w.name, w.sym)
		}
	}
	if s := Quantity(99).String(); s != "Quantity(99)" {
		t.Errorf("Quantity(99).String() = %q", s)
	}
}

func TestFormat(t *testing.T) {
	tests := []struct {
		v    float64
		q    Quantity
		want string
	}{
		{4700, Ohms, "4.7 kΩ"},
		{0.000047, Farads, "47 µF"},
		{250, Volts, "250 V"},
		{0.0012, Amps, "1.2 mA"},
		{0, Volts, "0 V"},
		{math.Copysign(0, -1), Volts, "0 V"},
		{-12.6, Volts, "-12.6 V"},
		{-0.0012, Amps, "-1.2 mA"},
		{1, Ohms, "1 Ω"},
		{220e3, Ohms, "220 kΩ"},
		{2.2e6, Ohms, "2.2 MΩ"},
		{1e9, Hertz, "1 GHz"},
		{100e-12, Farads, "100 pF"},
		{4.7e-9, Farads, "4.7 nF"},
		{12345, Ohms, "12.3 kΩ"},    // 3 significant figures
		{999.6, Ohms, "1 kΩ"},       // rounds up into the next prefix
		{0.0015, Seconds, "1.5 ms"}, // seconds take prefixes too
		{4.7e-15, Farads, "4.7e-15 F"},
		{3.3e12, Ohms, "3.3e12 Ω"},
		{5, Percent, "5 %"},
		{0.05, Percent, "0.05 %"},
		{1234, Percent, "1230 %"},
		{1.23e-5, Percent, "1.23e-5 %"},
		{4700, None, "4.7k"},
		{12, None, "12"},
		{math.MaxFloat64, Volts, "179e306 V"},
	}
	for _, tt := range tests {
		if got := Format(tt.v, tt.q); got != tt.want {
			t.Errorf("Format(%g, %v) = %q; want %q", tt.v, tt.q, got, tt.want)
		}
	}
}

func TestFormatRKM(t *testing.T) {
	tests := []struct {
		v    float64
		q    Quantity
		want string
		src  string
	}{
		{4700, Ohms, "4K7", "IEC 60062"},
		{470, Ohms, "470R", "IEC 60062"},
		{0.47, Ohms, "R47", "IEC 60062"},
		{2.2e6, Ohms, "2M2", "IEC 60062"},
		{4.7e-9, Farads, "4n7", "IEC 60062"},
		{100e-12, Farads, "100p", "IEC 60062"},
		{1, Ohms, "1R0", "IEC 60062"},
		{1000, Ohms, "1K0", "common practice"},
		{100e3, Ohms, "100K", "IEC 60062"},
		{0, Ohms, "0R", "zero-ohm link (common practice)"},
		{0.047, Ohms, "R047", "IEC 60062"},
		{1e-6, Farads, "1µ0", "IEC 60062"},
		{22e-6, Farads, "22µ", "IEC 60062"},
		{4.7, Volts, "4V7", "zener marking (common practice)"},
		{2200, Volts, "2k2", "prefix letter as decimal marker"},
		{12345, Ohms, "12K3", "3 significant figures"},
		{-4700, Ohms, "-4K7", "sign kept"},
		{1.5, Seconds, "1.5s", "no one-letter upper-case unit: plain form"},
		{2200, Farads, "2.2kF", "K would read as a resistor code: plain form"},
		{5, Percent, "5%", "plain form"},
	}
	for _, tt := range tests {
		if got := FormatRKM(tt.v, tt.q); got != tt.want {
			t.Errorf("FormatRKM(%g, %v) = %q; want %q (%s)", tt.v, tt.q, got, tt.want, tt.src)
		}
	}
}

// TestRoundTrip checks Format -> Parse and FormatRKM -> Parse over many
// decades: three significant figures keep the value within 0.5 %
// (half a unit in the third figure over a mantissa of at least 1.00).
func TestRoundTrip(t *testing.T) {
	quantities := []Quantity{None, Ohms, Farads, Henries, Volts, Amps, Watts, Hertz, Percent, Seconds}
	for _, q := range quantities {
		for e := -16.0; e <= 14; e += 0.0137 {
			for _, sign := range []float64{1, -1} {
				v := sign * math.Pow(10, e)
				for _, s := range []string{Format(v, q), FormatRKM(v, q)} {
					got, err := Parse(s, q)
					if err != nil {
						t.Fatalf("Parse(%q, %v) from %g: %v", s, q, v, err)
					}
					if !relClose(got, v, 0.005) {
						t.Fatalf("Parse(%q, %v) = %g; want %g within 0.5 %%", s, q, got, v)
					}
				}
			}
		}
	}
}

func TestParseTolerance(t *testing.T) {
	tests := []struct {
		in     string
		lo, hi float64
		src    string
	}{
		{"5%", -0.05, 0.05, "symmetric"},
		{"±5%", -0.05, 0.05, "symmetric"},
		{"± 5 %", -0.05, 0.05, "spaces"},
		{"+/-10%", -0.10, 0.10, "ASCII ±"},
		{"+-1%", -0.01, 0.01, "ASCII ±"},
		{"0.1%", -0.001, 0.001, "decimal"},
		{"-10%/+50%", -0.10, 0.50, "asymmetric (electrolytic)"},
		{"-10/+50%", -0.10, 0.50, "asymmetric, one % sign"},
		{"+50%/-10%", -0.10, 0.50, "asymmetric, either order"},
		{"-20 % / +80 %", -0.20, 0.80, "asymmetric with spaces"},
		{"0%", 0, 0, "zero"},
		// Tolerance letters, IEC 60062 (from memory; F G J K M as in /work/shared/REFERENCES.md).
		{"F", -0.01, 0.01, "IEC 60062: F = ±1 %"},
		{"G", -0.02, 0.02, "IEC 60062: G = ±2 %"},
		{"J", -0.05, 0.05, "IEC 60062: J = ±5 %"},
		{"K", -0.10, 0.10, "IEC 60062: K = ±10 %"},
		{"M", -0.20, 0.20, "IEC 60062: M = ±20 %"},
		{"k", -0.10, 0.10, "letter case-insensitive"},
		{"B", -0.001, 0.001, "IEC 60062: B = ±0.1 % (from memory)"},
		{"C", -0.0025, 0.0025, "IEC 60062: C = ±0.25 % (from memory)"},
		{"D", -0.005, 0.005, "IEC 60062: D = ±0.5 % (from memory)"},
		{"Z", -0.20, 0.80, "IEC 60062: Z = -20/+80 % (from memory)"},
	}
	for _, tt := range tests {
		lo, hi, err := ParseTolerance(tt.in)
		if err != nil || !relClose(lo, tt.lo, 1e-12) || !relClose(hi, tt.hi, 1e-12) {
			t.Errorf("ParseTolerance(%q) = %g, %g, %v; want %g, %g (%s)", tt.in, lo, hi, err, tt.lo, tt.hi, tt.src)
		}
		if lo > 0 || hi < 0 {
			t.Errorf("ParseTolerance(%q): lo %g hi %g do not bracket 0", tt.in, lo, hi)
		}
	}
	for _, bad := range []string{"", "5", "X", "JJ", "+5%", "-5%", "±-5%", "-10%/-50%", "+10/+50%",
		"-150%/+10%", "±200%", "5%%", "abc%", "-10/+50", "NaN%", "1e3%"} {
		lo, hi, err := ParseTolerance(bad)
		var se *SyntaxError
		if !errors.As(err, &se) {
			t.Errorf("ParseTolerance(%q) = %g, %g, %v; want *SyntaxError", bad, lo, hi, err)
		}
	}
}

func BenchmarkParse(b *testing.B) {
	in := []string{"4K7", "4.7 kΩ", "100nF", "150mA", "2.2e6", "R47"}
	for i := 0; b.Loop(); i++ {
		if _, err := Parse(in[i%len(in)], Ohms); err != nil {
			var me *MismatchError
			if !errors.As(err, &me) {
				b.Fatal(err)
			}
		}
	}
}

func BenchmarkFormat(b *testing.B) {
	for i := 0; b.Loop(); i++ {
		_ = Format(float64(i%1000+1)*4.7e-9, Farads)
	}
}

// NotAValue tells text that is no value from a value written wrongly,
// whose own message says what to change.
func TestSyntaxErrorNotAValue(t *testing.T) {
	for s, want := range map[string]bool{"abc": true, "": true, "4.7 X": true, "3..1": true, "4,7": false, "4K7k": false, "4.7K7": false} {
		_, err := Parse(s, Volts)
		var se *SyntaxError
		if !errors.As(err, &se) {
			t.Errorf("%q: %v is no syntax error", s, err)
			continue
		}
		if se.NotAValue() != want {
			t.Errorf("%q (%s): NotAValue %v, want %v", s, se.Msg, se.NotAValue(), want)
		}
	}
}
