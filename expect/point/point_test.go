package point

import (
	"errors"
	"testing"

	"gopkg.in/yaml.v3"
)

func TestRoundTrip(t *testing.T) {
	for _, tc := range []struct {
		text string
		want Key
	}{
		{"V2.3 dc_volts", Key{Live, "V2.3", DCVolts}},
		{"B1 dc_volts", Key{Live, "B1", DCVolts}},
		{"B1 ripple_volts", Key{Live, "B1", RippleVolts}},
		{"cold:B1 ohms", Key{Cold, "B1", Ohms}},
		{"cold:OT1 primary ohms", Key{Cold, "OT1 primary", Ohms}},
		{"part:R7 ohms", Key{Part, "R7", Ohms}},
		{"bias:V3 dc_volts", Key{Bias, "V3", DCVolts}},
		{"bias:V3 dc_amps", Key{Bias, "V3", DCAmps}},
		{"discharge:C1 dc_volts", Key{Discharge, "C1", DCVolts}},
		{"earth ohms", EarthKey},
		{"mains ac_volts", MainsKey},
		{"insulation ohms", InsulationKey},
		{"V2.5 tone_volts", Key{Live, "V2.5", ToneVolts}},
	} {
		got, err := Parse(tc.text)
		if err != nil || got != tc.want {
			t.Errorf("Parse(%q) = %+v, %v; want %+v", tc.text, got, err, tc.want)
		}
		if s := got.String(); s != tc.text {
			t.Errorf("String() of %q = %q", tc.text, s)
		}
	}
}

func TestParseErrors(t *testing.T) {
	for _, s := range []string{"", "V2.3", "V2.3 volts", "cold: ohms", "foo:B1 ohms"} {
		if _, err := Parse(s); !errors.Is(err, ErrSyntax) {
			t.Errorf("Parse(%q) err = %v, want ErrSyntax", s, err)
		}
	}
}

func TestValve(t *testing.T) {
	ref, pin, ok := MustParse("V12.8 dc_volts").Valve()
	if !ok || ref != "V12" || pin != 8 {
		t.Errorf("Valve() = %q %d %v", ref, pin, ok)
	}
	if _, _, ok := MustParse("B1 dc_volts").Valve(); ok {
		t.Errorf("a net is not a socket pin")
	}
	if _, _, ok := MustParse("cold:V1.2 ohms").Valve(); ok {
		t.Errorf("a cold key is not a live socket pin")
	}
}

func TestYAML(t *testing.T) {
	type rec struct {
		Point Key `yaml:"point"`
	}
	out, err := yaml.Marshal(rec{ColdKey("B1")})
	if err != nil || string(out) != "point: cold:B1 ohms\n" {
		t.Fatalf("marshal: %q %v", out, err)
	}
	var r rec
	if err := yaml.Unmarshal(out, &r); err != nil || r.Point != ColdKey("B1") {
		t.Fatalf("unmarshal: %+v %v", r, err)
	}
	if err := yaml.Unmarshal([]byte("point: nonsense\n"), &r); err == nil {
		t.Fatalf("a bad key must not load")
	}
}

func TestOpenWords(t *testing.T) {
	for _, s := range []string{"OL", "ol", "O.L.", "open", " Inf "} {
		if !IsOpenWord(s) {
			t.Errorf("%q should read as open", s)
		}
	}
	if IsOpenWord("0L") {
		t.Errorf("0L is not an open word")
	}
}

func TestParseShort(t *testing.T) {
	for in, want := range map[string]string{
		"V2.3":         "V2.3 dc_volts",
		"B1":           "B1 dc_volts",
		"V2.3 dc_amps": "V2.3 dc_amps",
		"cold:B1":      "cold:B1 ohms",
		"cold:B1 ohms": "cold:B1 ohms",
		"V2.5 tone":    "V2.5 tone_volts",
		"B1 ripple":    "B1 ripple_volts",
		"discharge:C1": "discharge:C1 dc_volts",
		"earth ohms":   "earth ohms",
	} {
		k, err := ParseShort(in)
		if err != nil || k.String() != want {
			t.Errorf("ParseShort(%q) = %q, %v; want %q", in, k, err, want)
		}
	}
}

// InText finds every text form of String in prose and leaves ordinary
// words alone.
func TestInText(t *testing.T) {
	for _, k := range []Key{
		{Domain: Live, ID: "V2.3", Quantity: DCVolts}, {Domain: Live, ID: "B1", Quantity: DCVolts},
		{Domain: Cold, ID: "B1", Quantity: Ohms}, {Domain: Part, ID: "R7", Quantity: Ohms},
		{Domain: Bias, ID: "V3", Quantity: DCVolts}, {Domain: Discharge, ID: "C1", Quantity: DCVolts},
		{Domain: Earth, Quantity: Ohms}, {Domain: Mains, Quantity: ACVolts}, {Domain: Insulation, Quantity: Ohms},
	} {
		if s := "the reading " + k.String() + " was high"; !InText.MatchString(s) {
			t.Errorf("InText misses %q", s)
		}
	}
	for _, s := range []string{"V3 pin 8 cathode reads 19 V", "470 ohms", "C1 volts after discharge: 0 V", "hum when cold: yes", "6.3 V heater", "B1 to chassis, 4.7 kΩ"} {
		if InText.MatchString(s) {
			t.Errorf("InText matches plain words %q: %q", s, InText.FindString(s))
		}
	}
}
