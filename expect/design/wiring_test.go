package design

import (
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// rectBase is a small valve-rectifier amp (invented): a 5U4GB with its
// filament winding on B+, one 6V6GT single-ended.
const rectBase = `pinwalk: 1
title: Small valve-rectifier test amp (invented)
mains: {volts: 230, hz: 50, tolerance: 6%}
ground: 0V
parts:
  T1:
    power-transformer:
      primary: {volts: 230, dcr: 11R}
      secondaries:
        HT: {volts: 250-0-250, rated: 120mA, dcr: 220R, ends: [HTA, HTB], centre: 0V}
        RECT: {volts: 5, rated: 3A, dcr: 0R05, ends: [B1, RF]}
        HEATER: {volts: 6.3, rated: 3A, dcr: 0R05, ends: [H1, H2], centre: 0V}
  V9:
    valve: 5U4GB
    plates: [HTA, HTB]
    cathode: B1
    heater: [B1, RF]
  C1: {capacitor: 47u, volts: 500, kind: electrolytic, between: [B1, 0V]}
  R1: {resistor: 1k, watts: 2, between: [B1, B2]}
  C2: {capacitor: 47u, volts: 500, kind: electrolytic, between: [B2, 0V]}
  V1:
    valve: 6V6GT
    plate: OP
    screen: B2
    grid: G1
    cathode: K1
    heater: [H1, H2]
  R2: {resistor: 470k, between: [G1, 0V]}
  R3: {resistor: 470R, watts: 3, between: [K1, 0V]}
  OT1:
    output-transformer:
      primary: {ends: [B1, OP], dcr: 250R, impedance: 5k}
      secondary: {load: 8R}
`

func problemsOf(t *testing.T, src string, sev Severity, field string) Problems {
	t.Helper()
	_, ps := Parse("w.yaml", []byte(src))
	var out Problems
	for _, p := range ps {
		if p.Severity == sev && p.Field == field {
			out = append(out, p)
		}
	}
	return out
}

// An indirectly heated rectifier with its own cathode pin (EZ81, Mullard
// data from memory: heater–cathode 500 V) has its cathode at B+: its heater
// tied to the cathode is fine; on the amp's grounded heater winding, or on a
// winding tied to nothing, the heater–cathode insulation sees B+ (common
// practice: tie the rectifier's own heater winding to its cathode).
func TestRectifierHeaterOnCathode(t *testing.T) {
	ez := strings.Replace(strings.Replace(rectBase, "valve: 5U4GB", "valve: EZ81", 1), "RECT: {volts: 5,", "RECT: {volts: 6.3,", 1)
	for _, c := range []struct {
		name, heater, want string
	}{
		{"tied to the cathode", "heater: [B1, RF]", ""},
		{"on the grounded heater winding", "heater: [H1, H2]", "tied to ground while its cathode B1 is at B+"},
		{"on a floating winding", "heater: [RF, FX]", "is not tied to its cathode net B1"},
	} {
		src := strings.Replace(ez, "heater: [B1, RF]", c.heater, 1)
		switch c.heater {
		case "heater: [RF, FX]":
			src = strings.Replace(src, "ends: [B1, RF]", "ends: [RF, FX]", 1)
		case "heater: [H1, H2]":
			src = strings.Replace(src, "        RECT: {volts: 6.3, rated: 3A, dcr: 0R05, ends: [B1, RF]}\n", "", 1)
		}
		if errs := func() Problems { _, ps := Parse("w.yaml", []byte(src)); return ps.Errors() }(); len(errs) > 0 {
			t.Fatalf("%s: errors %v", c.name, errs)
		}
		ws := problemsOf(t, src, Warning, "V9.heater")
		switch {
		case c.want == "" && len(ws) > 0:
			t.Errorf("%s: unexpected warning %v", c.name, ws)
		case c.want != "" && (len(ws) != 1 || !strings.Contains(ws[0].Msg, c.want) || !strings.Contains(ws[0].Msg, "500 V heater–cathode rating")):
			t.Errorf("%s: got %v, want one warning saying %q and the 500 V rating", c.name, ws, c.want)
		case c.want != "" && ws[0].Pos.Line != 1+strings.Count(src[:strings.Index(src, c.heater)], "\n"):
			t.Errorf("%s: warning at line %d, want the heater field's line", c.name, ws[0].Pos.Line)
		}
	}
}

// A 5AR4's cathode is pin 8, joined inside to one end of its heater (RCA
// 5AR4/GZ34 base diagram, from memory): whichever order the heater nets
// are written in, pin 8 carries the cathode net.
func TestCathodeHeaterPinCarriesB(t *testing.T) {
	for _, h := range []string{"heater: [B1, RF]", "heater: [RF, B1]"} {
		src := strings.Replace(strings.Replace(rectBase, "valve: 5U4GB", "valve: 5AR4", 1), "heater: [B1, RF]", h, 1)
		d, ps := Parse("w.yaml", []byte(src))
		if len(ps.Errors()) > 0 {
			t.Fatalf("%s: %v", h, ps.Errors())
		}
		pins := d.ByRef["V9"].Valve.PinNets
		if pins[8] != "B1" || pins[2] != "RF" {
			t.Errorf("%s: pin 8 on %s, pin 2 on %s; want B1 and RF", h, pins[8], pins[2])
		}
	}
}

// Plate and cathode swapped on a valve is found from the wiring alone; the
// usual stages, including a cathode follower (plate straight on B+), are not
// flagged.
func TestSwappedPlateCathode(t *testing.T) {
	if errs := problemsOf(t, rectBase, Error, "V1.cathode"); len(errs) > 0 {
		t.Fatalf("sound amp flagged: %v", errs)
	}
	follower := strings.Replace(strings.Replace(rectBase, "plate: OP", "plate: B2", 1), "screen: B2", "screen: B2\n  R9: {resistor: 1k, between: [B1, OP]}", 1)
	if errs := problemsOf(t, follower, Error, "V1.cathode"); len(errs) > 0 {
		t.Errorf("plate on B+ flagged: %v", errs)
	}
	swapped := strings.Replace(strings.Replace(rectBase, "plate: OP", "plate: KX", 1), "cathode: K1", "cathode: OP", 1)
	swapped = strings.Replace(swapped, "between: [K1, 0V]", "between: [KX, 0V]", 1)
	errs := problemsOf(t, swapped, Error, "V1.cathode")
	if len(errs) != 1 || !strings.Contains(errs[0].Msg, "upside down") || errs[0].Pos.Line != 26 {
		t.Errorf("swapped: got %v, want one error at V1.cathode (line 26) saying it is wired upside down", errs)
	}
}

// A bias pot whose end goes straight to ground takes the output grid to
// 0 V at that end of its travel (common practice: a limiting resistor keeps
// every setting safely negative). The pp-fixed template has the limiting
// resistors; without them, or with one too small to matter, check warns.
func TestBiasPotTravel(t *testing.T) {
	data, err := os.ReadFile(filepath.Join("templates", "pp-fixed.yaml"))
	if err != nil {
		t.Fatal(err)
	}
	src := string(data)
	if ws := problemsOf(t, src, Warning, "VR1.ends"); len(ws) > 0 {
		t.Fatalf("template with limiting resistors warned: %v", ws)
	}
	for _, c := range []struct {
		name, from, to string
		want           string
	}{
		{"pot end on ground", "ends: [BA, BLA]", "ends: [BA, 0V]", "0 V of bias"},
		{"limiting resistor too small", "resistor: 15k?, watts: 0.5?, between: [BLA, 0V]", "resistor: 100R?, watts: 0.5?, between: [BLA, 0V]", "of bias"},
	} {
		bad := strings.Replace(src, c.from, c.to, 1)
		if c.name == "pot end on ground" {
			bad = strings.Replace(bad, "  R6: {resistor: 15k?, watts: 0.5?, between: [BLA, 0V], note: limits the bias pot's travel}\n", "", 1)
		}
		ws := problemsOf(t, bad, Warning, "VR1.ends")
		if len(ws) != 1 || !strings.Contains(ws[0].Msg, c.want) || !strings.Contains(ws[0].Msg, "grid of V3") ||
			!strings.Contains(ws[0].Msg, "red-plates") || !strings.Contains(ws[0].Hint, "limiting resistor") {
			t.Errorf("%s: got %v, want one warning on VR1.ends naming V3's grid", c.name, ws)
		}
	}
}
