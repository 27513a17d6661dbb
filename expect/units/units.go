// Package units reads and writes the values found on design files, parts
// lists and meter readings: SI-prefixed numbers with units ("4.7 kΩ",
// "150mA"), the IEC 60062 RKM code ("4K7", "470R", "R47", "4n7"), tolerance
// codes ("5%", "J", "-10%/+50%") and the IEC 60063 E-series of preferred
// numbers.
//
// All values are plain float64 in the base unit of their quantity: ohms,
// farads, henries, volts, amperes, watts, hertz, percent, seconds.
package units

import (
	"fmt"
	"math"
	"strconv"
	"strings"
	"unicode"
	"unicode/utf8"
)

// Quantity names the physical quantity a value measures; its unit is the
// SI base or derived unit (or percent).
type Quantity int

// The quantities. None is a plain number with no unit.
const (
	None Quantity = iota
	Ohms
	Farads
	Henries
	Volts
	Amps
	Watts
	Hertz
	Percent
	Seconds
)

var quantityNames = [...]string{
	None:    "number",
	Ohms:    "resistance",
	Farads:  "capacitance",
	Henries: "inductance",
	Volts:   "voltage",
	Amps:    "current",
	Watts:   "power",
	Hertz:   "frequency",
	Percent: "percentage",
	Seconds: "time",
}

var quantitySymbols = [...]string{
	None:    "",
	Ohms:    "Ω", // U+03A9 GREEK CAPITAL LETTER OMEGA
	Farads:  "F",
	Henries: "H",
	Volts:   "V",
	Amps:    "A",
	Watts:   "W",
	Hertz:   "Hz",
	Percent: "%",
	Seconds: "s",
}

func (q Quantity) valid() bool { return q >= None && q <= Seconds }

// String returns the name of the quantity: "resistance", "capacitance",
// "inductance", "voltage", "current", "power", "frequency", "percentage",
// "time", or "number" for None.
func (q Quantity) String() string {
	if !q.valid() {
		return "Quantity(" + strconv.Itoa(int(q)) + ")"
	}
	return quantityNames[q]
}

// Symbol returns the unit symbol: "Ω", "F", "H", "V", "A", "W", "Hz", "%",
// "s", or "" for None.
func (q Quantity) Symbol() string {
	if !q.valid() {
		return ""
	}
	return quantitySymbols[q]
}

// BySymbol returns the quantity whose unit symbol is sym ("V", "A", "Ω",
// "F", "H", "W", "Hz", "%", "s"), or None.
func BySymbol(sym string) Quantity {
	for q, s := range quantitySymbols {
		if s == sym && s != "" {
			return Quantity(q)
		}
	}
	return None
}

// withArticle returns "a resistance", "an inductance", ...
func (q Quantity) withArticle() string {
	name := q.String()
	if name != "" && strings.ContainsRune("aeiou", rune(name[0])) {
		return "an " + name
	}
	return "a " + name
}

// MismatchError reports a value whose unit (or RKM letter) belongs to another
// quantity than the one asked for.
type MismatchError struct {
	Input     string
	Got, Want Quantity
}

// Error reads like "4K7 is a resistance, expected a capacitance".
func (e *MismatchError) Error() string {
	return fmt.Sprintf("%s is %s, expected %s", e.Input, e.Got.withArticle(), e.Want.withArticle())
}

// SyntaxError reports input that is not a value at all. Msg says what was
// expected.
type SyntaxError struct {
	Input string
	Want  Quantity
	Msg   string
}

// Error reads like `"4x7": expected a number with an optional SI prefix or
// RKM code (4K7, 470R, 100n)`.
func (e *SyntaxError) Error() string {
	return fmt.Sprintf("%q: %s", e.Input, e.Msg)
}

// NotAValue reports whether the input is no value at all (empty, not a
// number, an unknown unit), as opposed to a value written wrongly (a
// comma, an RKM code with a prefix, out of range), whose message says
// what to change. A caller that knows what is being read can then say
// what such a value looks like there.
func (e *SyntaxError) NotAValue() bool {
	return strings.HasSuffix(e.Msg, msgExpected) || strings.HasPrefix(e.Msg, "unknown unit")
}

const msgExpected = "expected a number with an optional SI prefix or RKM code (4K7, 470R, 100n)"

// prefixExp maps the accepted SI prefixes to their power of ten. Prefixes are
// case-sensitive (m is milli, M is mega); K is accepted for kilo as it is
// common on parts lists.
func prefixExp(r rune) (int, bool) {
	switch r {
	case 'p':
		return -12, true
	case 'n':
		return -9, true
	case 'u', 'µ', 'μ': // ASCII u, MICRO SIGN U+00B5, GREEK SMALL MU U+03BC
		return -6, true
	case 'm':
		return -3, true
	case 'k', 'K':
		return 3, true
	case 'M':
		return 6, true
	case 'G':
		return 9, true
	}
	return 0, false
}

// unitOf returns the quantity named by a unit suffix, or false. Units are
// case-insensitive except "s" (seconds), where "S" would be siemens.
func unitOf(u string) (Quantity, bool) {
	switch u {
	case "\u03a9", "\u2126": // GREEK CAPITAL OMEGA, OHM SIGN
		return Ohms, true
	case "%":
		return Percent, true
	case "s":
		return Seconds, true
	}
	switch strings.ToLower(u) {
	case "ohm", "ohms", "r":
		return Ohms, true
	case "f":
		return Farads, true
	case "h":
		return Henries, true
	case "v":
		return Volts, true
	case "a":
		return Amps, true
	case "w":
		return Watts, true
	case "hz":
		return Hertz, true
	}
	return None, false
}

// rkmKind says what the letter standing for the decimal point in an RKM
// code (4K7, R47, 4n7, 4V7) implies.
type rkmKind int

const (
	rkmNone     rkmKind = iota
	rkmR                // R: ohms, always
	rkmResistor         // K, k, M, G: the resistor multipliers of IEC 60062
	rkmPrefix           // p, n, u, µ, m: prefix of the quantity asked for
	rkmUnit             // V, A, W, F, H: unit letter as decimal point (zener 4V7)
)

// scanned is the result of reading one value.
type scanned struct {
	value float64
	unit  Quantity // from an explicit unit suffix or inline unit letter; None if absent
	rkm   rkmKind
}

func isDigit(b byte) bool { return b >= '0' && b <= '9' }

// scan reads s into a value. The error, if any, is the message for a
// SyntaxError.
func scan(s string) (scanned, string) {
	var out scanned
	if s == "" {
		return out, "empty value: " + msgExpected
	}
	if strings.ContainsRune(s, ',') {
		return out, "commas are not accepted: write 4.7 or 4700, not 4,7 or 4,700"
	}
	i := 0
	neg := false
	switch {
	case s[0] == '+':
		i = 1
	case s[0] == '-':
		neg, i = true, 1
	case strings.HasPrefix(s, "−"): // U+2212 MINUS SIGN
		neg, i = true, len("−")
	}

	// Mantissa: integer digits, optional point, fraction digits.
	var mant strings.Builder
	intStart := i
	for i < len(s) && isDigit(s[i]) {
		i++
	}
	intDigits := s[intStart:i]
	mant.WriteString(intDigits)
	hasPoint := false
	var fracDigits string
	if i < len(s) && s[i] == '.' {
		hasPoint = true
		i++
		fs := i
		for i < len(s) && isDigit(s[i]) {
			i++
		}
		fracDigits = s[fs:i]
	}

	exp := 0
	// Inline RKM letter: a letter standing for the decimal point, followed
	// by a digit (4K7, R47, 4n7, 1R0).
	if i < len(s) {
		r, size := utf8.DecodeRuneInString(s[i:])
		if kind, e, u, ok := rkmLetter(r); ok && i+size < len(s) && isDigit(s[i+size]) {
			if hasPoint {
				return out, "a value has either a decimal point or an RKM letter (4.7k or 4K7), not both"
			}
			i += size
			fs := i
			for i < len(s) && isDigit(s[i]) {
				i++
			}
			fracDigits = s[fs:i]
			out.rkm, out.unit, exp = kind, u, e
		}
	}
	if intDigits == "" && fracDigits == "" {
		return out, msgExpected
	}
	if fracDigits != "" {
		mant.WriteByte('.')
		mant.WriteString(fracDigits)
	}

	// Exponent, only on a plain decimal number.
	if out.rkm == rkmNone && i < len(s) && (s[i] == 'e' || s[i] == 'E') {
		j := i + 1
		if j < len(s) && (s[j] == '+' || s[j] == '-') {
			j++
		}
		if j < len(s) && isDigit(s[j]) {
			es := i + 1
			for j < len(s) && isDigit(s[j]) {
				j++
			}
			n, err := strconv.Atoi(s[es:j])
			if err != nil { // more digits than an int holds: certainly out of range
				n = 1 << 20
				if s[es] == '-' {
					n = -n
				}
			}
			exp, i = n, j
		}
	}

	// Suffix: optional space, then [prefix][unit].
	rest := strings.TrimLeftFunc(s[i:], unicode.IsSpace)
	if rest != "" {
		if strings.IndexFunc(rest, unicode.IsDigit) >= 0 {
			return out, msgExpected
		}
		u := rest
		if _, ok := unitOf(rest); !ok {
			r, size := utf8.DecodeRuneInString(rest)
			if !isPrefix(r) {
				return out, fmt.Sprintf("unknown unit %q: expected one of Ω (ohm, R), F, H, V, A, W, Hz, %%, s, "+
					"optionally after an SI prefix p n u µ m k M G", rest)
			}
			if out.rkm != rkmNone {
				return out, "an RKM code already carries its multiplier: write 4K7 or 4.7k, not 4K7k"
			}
			pe, _ := prefixExp(r)
			exp += pe
			u = rest[size:]
		}
		if u != "" {
			q, ok := unitOf(u)
			if !ok {
				return out, fmt.Sprintf("unknown unit %q: expected one of Ω (ohm, R), F, H, V, A, W, Hz, %%, s", u)
			}
			if msg := out.setUnit(q); msg != "" {
				return out, msg
			}
		}
	}

	if exp > 1<<20 {
		exp = 1 << 20
	} else if exp < -(1 << 20) {
		exp = -(1 << 20)
	}
	text := mant.String()
	if text[0] == '.' {
		text = "0" + text
	}
	v, err := strconv.ParseFloat(text+"e"+strconv.Itoa(exp), 64)
	if err != nil || math.IsInf(v, 0) {
		return out, "value out of range: the largest magnitude is about 1.8e308"
	}
	if neg {
		v = -v
	}
	out.value = v
	return out, ""
}

func isPrefix(r rune) bool { _, ok := prefixExp(r); return ok }

// rkmLetter classifies a letter that may stand for the decimal point in an
// RKM code: its kind, power of ten and (for unit letters) quantity.
func rkmLetter(r rune) (rkmKind, int, Quantity, bool) {
	switch r {
	case 'R', 'r':
		return rkmR, 0, Ohms, true
	case 'k', 'K', 'M', 'G':
		e, _ := prefixExp(r)
		return rkmResistor, e, None, true
	case 'p', 'n', 'u', 'µ', 'μ', 'm':
		e, _ := prefixExp(r)
		return rkmPrefix, e, None, true
	case 'V':
		return rkmUnit, 0, Volts, true
	case 'A':
		return rkmUnit, 0, Amps, true
	case 'W':
		return rkmUnit, 0, Watts, true
	case 'F':
		return rkmUnit, 0, Farads, true
	case 'H':
		return rkmUnit, 0, Henries, true
	}
	return rkmNone, 0, None, false
}

// setUnit records an explicit unit suffix, checking it against an inline
// unit letter (4R7 is ohms, so 4R7F is contradictory).
func (sc *scanned) setUnit(q Quantity) string {
	if sc.unit != None && sc.unit != q {
		return fmt.Sprintf("the RKM letter marks %s but the unit %s marks %s", sc.unit.withArticle(), q.Symbol(), q.withArticle())
	}
	sc.unit = q
	return ""
}

// implied returns the quantity that s itself states, or None: an explicit
// unit, the R of an RKM code, a unit letter used as decimal point (4V7), or
// a resistor multiplier K, M, G used as decimal point (4K7, 2M2).
func (sc scanned) implied() Quantity {
	if sc.unit != None {
		return sc.unit
	}
	if sc.rkm == rkmResistor {
		return Ohms
	}
	return None
}

// Parse reads s as a value of quantity q and returns it in q's unit (ohms,
// farads, henries, volts, amperes, watts, hertz, percent, seconds).
//
// Accepted forms, with optional leading sign and surrounding space:
//   - decimal numbers with optional exponent: 47, 0.47, .5, 1e-6 (no commas);
//   - SI prefixes p n u µ m k M G (K also kilo); m and M are case-sensitive;
//   - the IEC 60062 RKM code, where a letter stands for the decimal point:
//     4K7, 470R, R47, 2M2, 1R0 (resistance), 4n7, 100p, 2u2 (prefix letters),
//     and unit letters 4V7 (4.7 V);
//   - an optional unit suffix, with or without a space: Ω, ohm, ohms, R, F,
//     H, V, A, W, Hz, %, s; units are case-insensitive except s.
//
// A bare number is in q's unit. An explicit unit for another quantity, or an
// RKM code with R, gives a *MismatchError. An RKM code with K, M or G and no
// unit is a resistor code: it is a *MismatchError when q is Farads or
// Henries, and otherwise K, M, G act as prefixes of q. The letters p, n, u,
// m act as prefixes of q. Anything else (empty, NaN, Inf, out of float64
// range, garbage) gives a *SyntaxError saying what was expected.
func Parse(s string, q Quantity) (float64, error) {
	in := strings.TrimSpace(s)
	sc, msg := scan(in)
	if msg != "" {
		return 0, &SyntaxError{Input: in, Want: q, Msg: msg}
	}
	got := sc.unit
	if got == None && sc.rkm == rkmResistor && (q == Farads || q == Henries) {
		got = Ohms
	}
	if got != None && got != q {
		return 0, &MismatchError{Input: in, Got: got, Want: q}
	}
	return sc.value, nil
}

// ParseAny reads a value whose own notation says its quantity: a unit
// ("12V", "1.5mA", "4.7 kΩ") or a resistor RKM code ("4K7", "470R", "R47").
// When nothing in s states the quantity (a bare number, "100n", "4n7"),
// the quantity is None and the value is the plain number with its prefix
// applied. Errors are *SyntaxError with Want None.
func ParseAny(s string) (float64, Quantity, error) {
	in := strings.TrimSpace(s)
	sc, msg := scan(in)
	if msg != "" {
		return 0, None, &SyntaxError{Input: in, Want: None, Msg: msg}
	}
	return sc.value, sc.implied(), nil
}

// sig3 rounds |v| (finite, non-zero) to three significant figures and
// returns the three digits and the decimal exponent of the first one, so
// that |v| ≈ 0.d1d2d3 × 10^(e+1). A result that would round past the
// largest float64 is truncated instead, so that it still parses.
func sig3(v float64) (digits string, e int) { return sigN(v, 3) }

// sigN is sig3 with n (1 to 15) significant figures.
func sigN(v float64, n int) (digits string, e int) {
	t := strconv.FormatFloat(math.Abs(v), 'e', n-1, 64) // "4.70e+03"
	mant, exp, _ := strings.Cut(t, "e")
	digits = strings.Replace(mant, ".", "", 1)
	e, _ = strconv.Atoi(exp)
	if e == 308 && digits[:min(3, len(digits))] > "179" {
		digits = "179" // 1.79e308 is within 0.5 % of anything up to MaxFloat64
	}
	return digits, e
}

// placeDigits puts the decimal point after the first n digits of d (n may
// exceed len(d), adding zeros) and drops trailing fractional zeros.
func placeDigits(d string, n int) (intPart, frac string) {
	for len(d) < n {
		d += "0"
	}
	return d[:n], strings.TrimRight(d[n:], "0")
}

var engPrefix = map[int]string{-12: "p", -9: "n", -6: "µ", -3: "m", 0: "", 3: "k", 6: "M", 9: "G"}

func floorDiv3(e int) int {
	if e >= 0 {
		return e / 3 * 3
	}
	return -((-e + 2) / 3 * 3)
}

// Format prints v in engineering notation, rounded to 3 significant
// figures, with an SI prefix (p to G) and the unit symbol after a space:
// 4700 Ω → "4.7 kΩ", 47e-6 F → "47 µF", 250 V → "250 V", 0.0012 A →
// "1.2 mA", 0 → "0 V". Negative values keep the sign. Percentages take no
// prefix ("0.05 %", "120 %"). Magnitudes outside the prefix range use an
// exponent ("4.7e-15 F"). None prints the number with its prefix and no
// space ("4.7k"). Parse reads every finite result back to within 0.5 %.
func Format(v float64, q Quantity) string { return formatSig(v, q, 3) }

// formatSig is Format with n significant figures (trailing fractional
// zeros dropped).
func formatSig(v float64, q Quantity, n int) string {
	sym := q.Symbol()
	join := func(num, prefix string) string {
		if sym == "" {
			return num + prefix
		}
		return num + " " + prefix + sym
	}
	switch {
	case math.IsNaN(v):
		return join("NaN", "")
	case math.IsInf(v, 1):
		return join("+Inf", "")
	case math.IsInf(v, -1):
		return join("-Inf", "")
	case v == 0:
		return join("0", "")
	}
	sign := ""
	if v < 0 {
		sign = "-"
	}
	digits, e := sigN(v, n)
	e3 := floorDiv3(e)
	if q == Percent {
		if e >= -3 && e < 6 {
			e3 = 0
		} else {
			e3 = e
		}
	}
	prefix, ok := engPrefix[e3]
	if q == Percent || !ok {
		prefix = ""
	}
	var num string
	if e-e3 >= 0 {
		ip, fp := placeDigits(digits, e-e3+1)
		num = ip
		if fp != "" {
			num += "." + fp
		}
	} else { // percent below 1: leading zeros
		num = "0." + strings.Repeat("0", -e-1) + strings.TrimRight(digits, "0")
	}
	if (q == Percent && e3 != 0) || (q != Percent && !ok) {
		num += "e" + strconv.Itoa(e3)
	}
	return join(sign+num, prefix)
}

// rkmLetters are the letters FormatRKM uses for each power of ten.
var (
	rkmOhmLetters   = map[int]string{0: "R", 3: "K", 6: "M", 9: "G"}
	rkmOtherLetters = map[int]string{-12: "p", -9: "n", -6: "µ", -3: "m", 3: "k", 6: "M", 9: "G"}
)

// FormatRKM prints v in the IEC 60062 RKM code, 3 significant figures, the
// letter standing for the decimal point: 4700 Ω → "4K7", 470 → "470R",
// 0.47 → "R47", 2.2e6 → "2M2", 1 → "1R0", 4.7e-9 F → "4n7", 100e-12 F →
// "100p", 1e-6 F → "1µ0". Resistances use R K M G (and R047 style down to
// 1 mΩ); other quantities use p n µ m k M G, and for 1 to 999 their unit
// letter if it is one letter (4V7). A single-digit value with no fraction
// gets a trailing zero (1K0), as is common practice. Values the code cannot
// express fall back to Format without the space ("4.7e-15F"). Parse reads
// every finite result back (as q) to within 0.5 %.
func FormatRKM(v float64, q Quantity) string {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return strings.ReplaceAll(Format(v, q), " ", "")
	}
	if v == 0 {
		if q == Ohms {
			return "0R"
		}
		return "0"
	}
	sign := ""
	if v < 0 {
		sign = "-"
	}
	digits, e := sig3(v)
	e3 := floorDiv3(e)
	var letter string
	ok := false
	if q == Ohms {
		if e < 0 && e >= -3 {
			return sign + "R" + strings.Repeat("0", -e-1) + strings.TrimRight(digits, "0")
		}
		letter, ok = rkmOhmLetters[e3]
	} else if e3 == 0 {
		if sym := q.Symbol(); len(sym) == 1 && sym[0] >= 'A' && sym[0] <= 'Z' {
			letter, ok = sym, true
		}
	} else if e3 < 0 || (q != Farads && q != Henries) {
		// K, M, G with no unit read as a resistor code, so kF and kH fall back.
		letter, ok = rkmOtherLetters[e3]
	}
	if !ok || q == Percent {
		return strings.ReplaceAll(Format(v, q), " ", "")
	}
	ip, fp := placeDigits(digits, e-e3+1)
	if fp == "" && len(ip) == 1 {
		fp = "0"
	}
	return sign + ip + letter + fp
}

// toleranceLetters are the IEC 60062 tolerance code letters, as fractions
// (lo, hi). F, G, J, K, M: ±1, 2, 5, 10, 20 %; B, C, D: ±0.1, 0.25, 0.5 %;
// Z: −20/+80 % (IEC 60062, from memory).
var toleranceLetters = map[byte][2]float64{
	'B': {-0.001, 0.001},
	'C': {-0.0025, 0.0025},
	'D': {-0.005, 0.005},
	'F': {-0.01, 0.01},
	'G': {-0.02, 0.02},
	'J': {-0.05, 0.05},
	'K': {-0.10, 0.10},
	'M': {-0.20, 0.20},
	'Z': {-0.20, 0.80},
}

const msgTolerance = "expected a tolerance: 5%, ±5%, -10%/+50%, -10/+50% or an IEC 60062 letter (B C D F G J K M Z)"

// ParseTolerance reads a component tolerance and returns it as fractions
// lo <= 0 <= hi of the nominal value: "5%", "±5%", "+/-5%" → (−0.05, 0.05);
// "-10%/+50%" or "-10/+50%" (either order) → (−0.10, 0.50); an IEC 60062
// letter ("J" → ±5 %, see toleranceLetters). The % sign is required (on the
// last part at least); a single signed value ("+5%") is refused as
// ambiguous, as is a lower side below −100 %. Errors are *SyntaxError with
// Want Percent.
func ParseTolerance(s string) (lo, hi float64, err error) {
	in := strings.TrimSpace(s)
	fail := func(msg string) (float64, float64, error) {
		return 0, 0, &SyntaxError{Input: in, Want: Percent, Msg: msg}
	}
	if len(in) == 1 {
		if t, ok := toleranceLetters[byte(unicode.ToUpper(rune(in[0])))]; ok {
			return t[0], t[1], nil
		}
		return fail("unknown tolerance letter: " + msgTolerance)
	}
	if in == "" {
		return fail("empty: " + msgTolerance)
	}
	parts := strings.Split(in, "/")
	if len(parts) == 2 && strings.HasSuffix(strings.TrimSpace(parts[0]), "+") {
		parts = []string{in} // "+/-5%"
	}
	switch len(parts) {
	case 1:
		body := in
		symmetric := false
		for _, p := range []string{"±", "+/-", "+-"} {
			if strings.HasPrefix(body, p) {
				body, symmetric = strings.TrimSpace(body[len(p):]), true
				break
			}
		}
		sign, x, pct, ok := scanPercent(body)
		if !ok || !pct {
			return fail(msgTolerance)
		}
		if sign != 0 {
			if symmetric {
				return fail(msgTolerance)
			}
			return fail("a signed tolerance needs both sides, such as -10%/+50%; " + msgTolerance)
		}
		if x > 100 {
			return fail("a tolerance above ±100% leaves a negative lower value; " + msgTolerance)
		}
		return -x / 100, x / 100, nil
	case 2:
		s1, x1, _, ok1 := scanPercent(strings.TrimSpace(parts[0]))
		s2, x2, pct2, ok2 := scanPercent(strings.TrimSpace(parts[1]))
		if !ok1 || !ok2 || !pct2 || s1*s2 != -1 {
			return fail("an asymmetric tolerance has one - and one + side: " + msgTolerance)
		}
		if s1 < 0 {
			lo, hi = -x1/100, x2/100
		} else {
			lo, hi = -x2/100, x1/100
		}
		if lo < -1 {
			return fail("the lower side cannot be below -100%; " + msgTolerance)
		}
		return lo, hi, nil
	}
	return fail(msgTolerance)
}

// scanPercent reads "[sign]digits[.digits][ ][%]" and returns the sign
// (−1, 0 for none, +1), the unsigned number, whether % was present and
// whether the whole string matched.
func scanPercent(s string) (sign int, x float64, pct, ok bool) {
	switch {
	case strings.HasPrefix(s, "+"):
		sign, s = 1, s[1:]
	case strings.HasPrefix(s, "-"):
		sign, s = -1, s[1:]
	case strings.HasPrefix(s, "−"): // U+2212 MINUS SIGN
		sign, s = -1, s[len("−"):]
	}
	s = strings.TrimSpace(s)
	if rest, found := strings.CutSuffix(s, "%"); found {
		pct, s = true, strings.TrimSpace(rest)
	}
	digits, point := 0, 0
	for i := 0; i < len(s); i++ {
		switch {
		case isDigit(s[i]):
			digits++
		case s[i] == '.':
			point++
		default:
			return 0, 0, false, false
		}
	}
	if digits == 0 || point > 1 {
		return 0, 0, false, false
	}
	x, err := strconv.ParseFloat(s, 64)
	if err != nil || math.IsInf(x, 0) {
		return 0, 0, false, false
	}
	return sign, x, pct, true
}

// FormatMeasured prints v as a display with resolution res shows it:
// rounded to a whole number of res, and 0 when |v| is below half of res
// ("0 V" rather than "81.4e-15 V"), then in engineering notation with as
// many significant figures as the display has down to res (at least 3,
// at most 5: 271.5 V on a 0.1 V resolution, not 272 V), trailing
// fractional zeros dropped. res ≤ 0 is Format.
func FormatMeasured(v float64, q Quantity, res float64) string {
	if !(res > 0) || math.IsInf(v, 0) || math.IsNaN(v) {
		return Format(v, q)
	}
	v = math.Round(v/res) * res
	if math.Abs(v) < res/2 {
		return Format(0, q)
	}
	n := int(math.Floor(math.Log10(math.Abs(v))+1e-9)) - int(math.Round(math.Log10(res))) + 1
	return formatSig(v, q, max(3, min(5, n)))
}
