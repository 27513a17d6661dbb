package jobsheet

import (
	"fmt"
	"regexp"
	"strings"

	"pinwalk/expect/amp"
	"pinwalk/expect/cold"
	"pinwalk/expect/design"
	"pinwalk/expect/point"
)

// Labeller turns a point key as sessions spell it today into words a
// person reads: "cold:GR1 ohms" → "GR1 to chassis, unplugged",
// "V3.8 dc_volts" → "V3 pin 8 cathode, DC volts". It is the one place in
// the job sheet that knows the key spellings (see Label).
type Labeller struct {
	pins     map[string]string // model point key → label ("V3 pin 8 cathode")
	windings map[string]bool   // cold-check ids read across a winding
	supply   map[string]string // net → "B+ supply", "bias supply"
}

// NewLabeller builds a labeller for a design (nil: no design; keys are
// then labelled from their spelling alone).
func NewLabeller(d *design.Design) *Labeller {
	l := &Labeller{pins: map[string]string{}, windings: map[string]bool{}, supply: map[string]string{}}
	if d == nil {
		return l
	}
	if m, err := amp.Build(d); err == nil {
		for _, pd := range m.Points() {
			l.pins[pd.Key()] = pd.Label
		}
	}
	if cc, err := cold.Checks(d); err == nil {
		for _, c := range cc {
			switch c.Kind {
			case "winding":
				l.windings[c.ID] = true
			case "b+":
				l.supply[c.ID] = "B+ supply"
			case "bias":
				l.supply[c.ID] = "bias supply"
			}
		}
	}
	return l
}

// pinID matches a socket pin id: "V3.8".
var pinID = regexp.MustCompile(`^([A-Za-z]+[0-9]+[A-Za-z]?)\.([0-9]+)$`)

// windingID guesses, without a design, that a cold-check id is a winding:
// a transformer's named winding ("T1 HT half a", "OT1 primary") or a
// choke ("L1").
var windingID = regexp.MustCompile(`^(L[0-9]+|(T|OT)[0-9]+ .+)$`)

// quantityWords names a point quantity for a person.
var quantityWords = map[string]string{
	amp.DCVolts:     "DC volts",
	amp.ACVolts:     "AC volts",
	amp.DCAmps:      "DC current",
	amp.ACAmps:      "AC current",
	amp.RippleVolts: "ripple",
	amp.Ohms:        "resistance",
	point.ToneVolts: "test tone",
}

// Label describes a point key in plain words. It knows today's
// spellings: socket pins ("V3.8 dc_volts"), nets ("B1 dc_volts",
// "B1 ripple_volts"), "earth ohms", "mains ac_volts", cold checks
// ("cold:GR1 ohms" to chassis, "cold:T1 HT half a ohms" across a
// winding), discharge checks ("discharge:C2 dc_volts"), bias settings
// ("bias:V3 dc_volts" across the cathode sense resistor, "bias:V3
// dc_amps"), parts out of circuit ("part:R7 ohms") and test-tone levels
// ("V2.5 tone"). A key it does not know is returned with its
// punctuation turned into words, never as it is.
func (l *Labeller) Label(k point.Key) string {
	if l == nil {
		l = &Labeller{}
	}
	id, q, key := k.ID, k.Quantity, k.String()
	qw := quantityWords[q]
	withQ := func(s string) string {
		if qw == "" {
			return s
		}
		return s + ", " + qw
	}
	what := id
	switch k.Domain {
	case point.Earth:
		return "mains earth pin to chassis, unplugged"
	case point.Insulation:
		return "mains pins to exposed metal, insulation tester, unplugged"
	case point.Mains:
		return "mains volts at the wall"
	case point.Cold:
		switch {
		case strings.Contains(what, "live–neutral") || strings.Contains(what, "live-neutral"):
			ref, _, _ := strings.Cut(what, " ")
			return ref + " live to neutral at the mains plug, power switch on, unplugged"
		case strings.HasSuffix(what, " fuse"):
			return what + " out of its holder, across it, unplugged"
		case l.windings[what] || (len(l.windings) == 0 && windingID.MatchString(what)):
			return what + ", across the winding, unplugged"
		}
		return l.net(what) + " to chassis, unplugged"
	case point.Discharge:
		if what == "supply" {
			return "supply nets after discharge"
		}
		return what + " after discharge"
	case point.Bias:
		if q == point.DCAmps {
			return what + " idle current, bias set"
		}
		return what + " bias, volts across its cathode sense resistor"
	case point.Part:
		return what + " out of circuit, " + withOr(qw, "resistance")
	case point.Look:
		return "a look at " + what + ", power off"
	}
	if q == point.ToneVolts {
		if lb := l.pins[id+" "+amp.ACVolts]; lb != "" {
			return trimBelow(lb) + ", test tone"
		}
	}
	if lb := l.pins[key]; lb != "" {
		lb = trimBelow(lb)
		if net, ok := strings.CutPrefix(lb, "net "); ok {
			lb = "net " + l.net(strings.TrimSuffix(net, " ripple"))
			if q == amp.RippleVolts {
				lb += ", ripple"
			}
		}
		if q == amp.RippleVolts || strings.Contains(lb, "heater") && q == amp.ACVolts {
			return lb
		}
		return withQ(lb)
	}
	if ref, pin, ok := k.Valve(); ok {
		return withQ(fmt.Sprintf("%s pin %d", ref, pin))
	}
	if q == amp.RippleVolts {
		return "net " + id + " ripple"
	}
	if qw != "" {
		return withQ("net " + id)
	}
	return strings.NewReplacer("_", " ", ":", " ").Replace(key)
}

// net names a net, with what it is when it is a supply net:
// "B1 (B+ supply)".
func (l *Labeller) net(id string) string {
	if w := l.supply[id]; w != "" {
		return id + " (" + w + ")"
	}
	return id
}

func withOr(s, alt string) string {
	if s == "" {
		return alt
	}
	return s
}

// trimBelow drops the "(from below)" of a socket label: a person reading
// a job sheet is not holding probes.
func trimBelow(s string) string { return strings.TrimSuffix(s, " (from below)") }
