// Package point is the one owner of measurement-point keys: which point
// a reading belongs to, as a comparable value with Parse and String.
//
// A key has a domain (a live point of the amplifier model, a cold
// resistance, a part out of circuit, a bias-setting reading, a discharge
// check, the earth bond, the mains), an id and a quantity. Its text form
// is what session files and readings files store:
//
//	V2.3 dc_volts            live: socket pin 3 of V2, DC volts
//	B1 dc_volts              live: net B1
//	cold:B1 ohms             cold: B1 to chassis, unplugged
//	part:R7 ohms             part: R7 out of circuit
//	bias:V3 dc_volts         bias: volts across V3's cathode sense resistor
//	discharge:C1 dc_volts    discharge: C1 after discharging
//	earth ohms               earth pin to chassis
//	mains ac_volts           the mains at the outlet (or the variac)
//	insulation ohms          mains pins joined to exposed metal (a two-pin set)
//	look:R7 seen             a look at R7 with the power off: 1 a sign seen, 0 none
//
// Nothing outside this package builds or takes apart that text.
package point

import (
	"errors"
	"fmt"
	"regexp"
	"strings"
)

// Domain says what kind of point a key names.
type Domain uint8

// Domains.
const (
	Live       Domain = iota // a point of the powered amplifier model: a socket pin or a net
	Cold                     // a resistance measured unplugged, valves out
	Part                     // a part measured out of circuit (one end lifted)
	Bias                     // a fixed-bias output valve's idle reading
	Discharge                // a capacitor's volts after discharging
	Earth                    // mains earth pin to chassis
	Mains                    // the mains volts at the outlet or variac
	Insulation               // mains pins joined to exposed metal, on an insulation tester (a set with no mains earth)
	Look                     // a look at a part with the power off (a sign seen or not)
)

// prefixes of the text form; Live, Earth and Mains have none.
var prefixes = map[Domain]string{Cold: "cold:", Part: "part:", Bias: "bias:", Discharge: "discharge:", Look: "look:"}

var domainNames = map[Domain]string{Live: "live", Cold: "cold", Part: "part", Bias: "bias", Discharge: "discharge", Earth: "earth", Mains: "mains", Insulation: "insulation", Look: "look"}

func (d Domain) String() string { return domainNames[d] }

// Quantities (stable: session and readings files carry them).
const (
	DCVolts     = "dc_volts"
	DCAmps      = "dc_amps"
	ACVolts     = "ac_volts"
	ACAmps      = "ac_amps"
	RippleVolts = "ripple_volts" // AC on a DC net
	ToneVolts   = "tone_volts"   // test-tone level, AC
	Ohms        = "ohms"
	Seen        = "seen" // a look: 1 the sign is seen, 0 it is not
)

var quantities = []string{DCVolts, DCAmps, ACVolts, ACAmps, RippleVolts, ToneVolts, Ohms, Seen}

// Key names one measurement point. The zero Key is not valid.
type Key struct {
	Domain   Domain
	ID       string // "V2.3", "B1", "OT1 primary", "C1"; empty for Earth and Mains
	Quantity string
}

// Constructors for the domains.
func LiveKey(id, quantity string) Key { return Key{Live, id, quantity} }
func ColdKey(id string) Key           { return Key{Cold, id, Ohms} }
func PartKey(ref string) Key          { return Key{Part, ref, Ohms} }
func DischargeKey(ref string) Key     { return Key{Discharge, ref, DCVolts} }
func LookKey(ref string) Key          { return Key{Look, ref, Seen} }
func BiasKey(ref, quantity string) Key {
	return Key{Bias, ref, quantity}
}

// EarthKey, MainsKey and InsulationKey are the fixed points.
var (
	EarthKey      = Key{Domain: Earth, Quantity: Ohms}
	MainsKey      = Key{Domain: Mains, Quantity: ACVolts}
	InsulationKey = Key{Domain: Insulation, Quantity: Ohms}
)

// String is the text form (see the package comment).
func (k Key) String() string {
	switch k.Domain {
	case Earth:
		return "earth " + k.Quantity
	case Mains:
		return "mains " + k.Quantity
	case Insulation:
		return "insulation " + k.Quantity
	}
	if k.ID == "" && k.Quantity == "" {
		return ""
	}
	return prefixes[k.Domain] + k.ID + " " + k.Quantity
}

// IsZero reports the zero key.
func (k Key) IsZero() bool { return k == Key{} }

// Unit is the unit symbol of the key's quantity ("V", "A", "Ω").
func (k Key) Unit() string { return UnitOf(k.Quantity) }

// UnitOf returns the unit symbol of a quantity.
func UnitOf(q string) string {
	switch q {
	case DCVolts, ACVolts, RippleVolts, ToneVolts:
		return "V"
	case DCAmps, ACAmps:
		return "A"
	case Ohms:
		return "Ω"
	}
	return ""
}

// Powered reports whether the point is read with the amp powered (live
// and bias points; the mains at the outlet counts as powered too).
func (k Key) Powered() bool { return k.Domain == Live || k.Domain == Bias || k.Domain == Mains }

// ErrSyntax is wrapped by Parse's errors.
var ErrSyntax = errors.New("not a point key")

// Parse reads a key's text form. The quantity is the last word; an id
// may hold spaces ("cold:OT1 primary ohms").
func Parse(s string) (Key, error) {
	s = strings.TrimSpace(s)
	i := strings.LastIndexByte(s, ' ')
	if i <= 0 {
		return Key{}, fmt.Errorf("%w: %q: expected a point and a quantity, like \"V2.3 dc_volts\" or \"cold:B1 ohms\"", ErrSyntax, s)
	}
	id, q := strings.TrimSpace(s[:i]), s[i+1:]
	known := false
	for _, k := range quantities {
		known = known || k == q
	}
	if !known {
		return Key{}, fmt.Errorf("%w: %q: unknown quantity %q, expected one of %s", ErrSyntax, s, q, strings.Join(quantities, ", "))
	}
	switch id {
	case "earth":
		return Key{Domain: Earth, Quantity: q}, nil
	case "mains":
		return Key{Domain: Mains, Quantity: q}, nil
	case "insulation":
		return Key{Domain: Insulation, Quantity: q}, nil
	}
	for d, p := range prefixes {
		if strings.HasPrefix(id, p) {
			rest := strings.TrimSpace(id[len(p):])
			if rest == "" {
				return Key{}, fmt.Errorf("%w: %q: nothing after %q", ErrSyntax, s, p)
			}
			return Key{Domain: d, ID: rest, Quantity: q}, nil
		}
	}
	if strings.Contains(id, ":") {
		return Key{}, fmt.Errorf("%w: %q: unknown kind of point before ':' (expected cold:, part:, bias:, discharge: or look:)", ErrSyntax, s)
	}
	return Key{Domain: Live, ID: id, Quantity: q}, nil
}

// MustParse is Parse for keys written in code and tests; it panics on a
// bad key.
func MustParse(s string) Key {
	k, err := Parse(s)
	if err != nil {
		panic(err)
	}
	return k
}

// MarshalText implements encoding.TextMarshaler.
func (k Key) MarshalText() ([]byte, error) { return []byte(k.String()), nil }

// UnmarshalText implements encoding.TextUnmarshaler.
func (k *Key) UnmarshalText(b []byte) error {
	v, err := Parse(string(b))
	if err != nil {
		return err
	}
	*k = v
	return nil
}

// MarshalYAML writes the text form.
func (k Key) MarshalYAML() (any, error) { return k.String(), nil }

// UnmarshalYAML reads the text form.
func (k *Key) UnmarshalYAML(unmarshal func(any) error) error {
	var s string
	if err := unmarshal(&s); err != nil {
		return err
	}
	return k.UnmarshalText([]byte(s))
}

// Valve splits a live socket-pin id "V2.3" into the valve reference and
// pin number; ok is false for a net.
func (k Key) Valve() (ref string, pin int, ok bool) {
	if k.Domain != Live {
		return "", 0, false
	}
	i := strings.LastIndexByte(k.ID, '.')
	if i <= 0 {
		return "", 0, false
	}
	n := 0
	for _, c := range k.ID[i+1:] {
		if c < '0' || c > '9' {
			return "", 0, false
		}
		n = n*10 + int(c-'0')
	}
	if n == 0 {
		return "", 0, false
	}
	return k.ID[:i], n, true
}

// OpenWords are the words a technician types for a meter showing over
// range on resistance ("OL" on most meters). The one list.
var OpenWords = []string{"ol", "o.l", "o.l.", "open", "inf", "oc", "over"}

// IsOpenWord reports whether s (any case) says the meter reads open.
func IsOpenWord(s string) bool {
	s = strings.ToLower(strings.TrimSpace(s))
	for _, w := range OpenWords {
		if s == w {
			return true
		}
	}
	return false
}

// ParseShort reads a point as a readings file or a technician writes it:
// a full key ("V2.3 dc_amps", "cold:B1 ohms"), or a short form — a pin or
// net alone is DC volts ("V2.3", "B1"), a cold point alone is ohms
// ("cold:B1"), "tone" and "ripple" stand for the AC quantities ("V2.5
// tone", "B1 ripple").
func ParseShort(s string) (Key, error) {
	s = strings.TrimSpace(s)
	if k, err := Parse(s); err == nil {
		return k, nil
	}
	if base, q, ok := strings.Cut(s, " "); ok {
		switch strings.TrimSpace(q) {
		case "tone":
			return Parse(base + " " + ToneVolts)
		case "ripple":
			return Parse(base + " " + RippleVolts)
		}
		return Parse(s)
	}
	for d, p := range prefixes {
		if strings.HasPrefix(s, p) {
			q := Ohms
			if d == Discharge || d == Bias {
				q = DCVolts
			}
			return Parse(s + " " + q)
		}
	}
	return Parse(s + " " + DCVolts)
}

// InText matches the text form of a key, or a telling piece of one,
// anywhere in a text meant for a person (a screen, a job sheet), for the
// tests that no key reaches one: a prefixed id (cold:B1), a quantity word
// (dc_volts), ohms after an id (B1 ohms, earth ohms) and a socket pin in
// key form (V3.8).
var InText = regexp.MustCompile(`\b(?:cold|part|bias|discharge):[A-Za-z0-9]` +
	`|\b(?:dc_volts|dc_amps|ac_volts|ac_amps|ripple_volts|tone_volts)\b` +
	`|\b(?:[A-Z][A-Za-z0-9_+.-]*[0-9][A-Za-z0-9_.]*|earth|mains|insulation) ohms\b` +
	`|\bV[0-9]+\.[0-9]+\b`)
