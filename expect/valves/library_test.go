package valves

import (
	"errors"
	"os"
	"path/filepath"
	"reflect"
	"sort"
	"strings"
	"testing"
)

func TestNamesAndLookup(t *testing.T) {
	want := []string{"0D3", "12AT7", "12AU7", "12AV6", "12AX7", "12AY7", "2A3", "300B", "35W4", "50C5", "5751", "5AR4", "5R4GY", "5U4GB", "5V4G", "5Y3GT",
		"6550", "6973", "6AQ5", "6AU6", "6AV6", "6BA6", "6BE6", "6C4", "6CG7", "6DJ8", "6J5", "6L6GC", "6SL7GT", "6SN7GTB", "6V6GT", "6X4", "7591",
		"ECL82", "ECL86", "EF86", "EL34", "EL84", "EZ81", "GZ37", "KT66", "KT88", "OA2", "OB2"}
	if got := Names(); !reflect.DeepEqual(got, want) {
		t.Errorf("Names() = %v, want %v", got, want)
	}
	if !sort.StringsAreSorted(Names()) || len(All()) != len(want) {
		t.Errorf("All() has %d types", len(All()))
	}
	for alias, canon := range map[string]string{
		"ecc83": "12AX7", "ECC82": "12AU7", "Ecc81": "12AT7", "6sn7": "6SN7GTB", "6BQ5": "EL84",
		"6V6": "6V6GT", "6l6": "6L6GC", "6CA7": "EL34", "gz34": "5AR4", "6CA4": "EZ81", " 12ax7 ": "12AX7",
		"6BM8": "ECL82", "VR150": "0D3", "EBC91": "6AV6", "EK90": "6BE6", "EC90": "6C4", "ECC88": "6DJ8", "6922": "6DJ8", "EF94": "6AU6", "EZ90": "6X4", "6SL7": "6SL7GT", "EL90": "6AQ5", "6267": "EF86",
		"6GW8": "ECL86", "7591A": "7591",
	} {
		ty, ok := Lookup(alias)
		if !ok || ty.Name != canon {
			t.Errorf("Lookup(%q) = %v, %v; want %s", alias, ty, ok, canon)
		}
	}
	if _, ok := Lookup("6DJ8X"); ok {
		t.Error("unknown name found")
	}
	// Copies: changing one does not change the library.
	a, _ := Lookup("EL84")
	a.Pins[0].Electrode = "plate"
	a.Model.Mu = 1
	b, _ := Lookup("EL84")
	if b.Pins[0].Electrode != "nc" || b.Model.Mu == 1 {
		t.Error("Lookup returned shared storage")
	}
}

// Pin maps as in the standard base diagrams quoted in REFERENCES.md (from
// memory), and for EZ81 and 5AR4 the cathode from memory.
func TestPinMaps(t *testing.T) {
	type pm = map[string][]int // "section/electrode" -> pins
	dt := pm{"A/plate": {6}, "A/grid": {7}, "A/cathode": {8}, "B/plate": {1}, "B/grid": {2}, "B/cathode": {3}, "A/heater": {4, 5}, "B/heater-ct": {9}}
	beam := pm{"/heater": {2, 7}, "/plate": {3}, "/screen": {4}, "/grid": {5}, "/cathode": {8}, "/nc": {1, 6}}
	el34 := pm{"/heater": {2, 7}, "/plate": {3}, "/screen": {4}, "/grid": {5}, "/cathode": {8}, "/suppressor": {1}, "/nc": {6}}
	rectDH := pm{"/heater": {2, 8}, "/plates": {4, 6}, "/cathode": {2, 8}}
	want := map[string]pm{
		"12AX7": dt, "12AU7": dt, "12AT7": dt,
		"6SN7GTB": {"B/grid": {1}, "B/plate": {2}, "B/cathode": {3}, "A/grid": {4}, "A/plate": {5}, "A/cathode": {6}, "A/heater": {7, 8}},
		"EL84":    {"/grid": {2}, "/cathode": {3}, "/heater": {4, 5}, "/plate": {7}, "/screen": {9}, "/nc": {1, 6, 8}},
		"6V6GT":   beam, "6L6GC": beam, "EL34": el34,
		"5Y3GT": rectDH, "5U4GB": rectDH,
		"5AR4": {"/heater": {2, 8}, "/plates": {4, 6}, "/cathode": {8}},
		"EZ81": {"/plates": {1, 7}, "/cathode": {3}, "/heater": {4, 5}},
	}
	for name, m := range want {
		ty, ok := Lookup(name)
		if !ok {
			t.Fatalf("%s missing", name)
		}
		for key, pins := range m {
			sec, el, _ := strings.Cut(key, "/")
			if got := ty.PinsOf(sec, el); !reflect.DeepEqual(got, pins) {
				t.Errorf("%s PinsOf(%q, %q) = %v, want %v", name, sec, el, got, pins)
			}
		}
		wantBase := Noval
		if name == "6SN7GTB" || strings.HasPrefix(name, "6") || strings.HasPrefix(name, "5") || name == "EL34" {
			wantBase = Octal
		}
		if ty.Base != wantBase {
			t.Errorf("%s base %s, want %s", name, ty.Base, wantBase)
		}
	}
	// Pins must not repeat an electrode assignment, and no socket pin carries two signal
	// electrodes except a filament/heater pin that is also the cathode.
	for _, ty := range All() {
		seen := map[int]string{}
		for _, p := range ty.Pins {
			if prev, ok := seen[p.Number]; ok && !(prev == Heater && p.Electrode == Cathode) {
				t.Errorf("%s pin %d is both %s and %s", ty.Name, p.Number, prev, p.Electrode)
			}
			seen[p.Number] = p.Electrode
		}
	}
}

func TestElectrodes(t *testing.T) {
	for name, want := range map[string][]string{
		"12AX7": {Plate, Grid, Cathode},
		"EL84":  {Plate, Screen, Grid, Cathode},
		"6L6GC": {Plate, Screen, Grid, Cathode},
		"EL34":  {Plate, Screen, Grid, Grid3, Cathode},
		"5Y3GT": {Plates, Cathode},
	} {
		ty, _ := Lookup(name)
		sec := ty.Sections[0]
		if got := ty.Electrodes(sec); !reflect.DeepEqual(got, want) {
			t.Errorf("%s Electrodes(%q) = %v, want %v", name, sec, got, want)
		}
	}
	ty, _ := Lookup("12AU7")
	if got := ty.Electrodes("B"); !reflect.DeepEqual(got, []string{Plate, Grid, Cathode}) {
		t.Errorf("12AU7 section B: %v", got)
	}
	if got := ty.Electrodes("C"); got != nil {
		t.Errorf("unknown section gave %v", got)
	}
}

// Heaters and limits as listed in REFERENCES.md (from memory of the makers' data).
func TestHeatersAndLimits(t *testing.T) {
	heaters := map[string][4]float64{ // volts, amps, alt volts, alt amps
		"12AX7": {12.6, 0.15, 6.3, 0.3}, "12AU7": {12.6, 0.15, 6.3, 0.3}, "12AT7": {12.6, 0.15, 6.3, 0.3},
		"EL84": {6.3, 0.76}, "6V6GT": {6.3, 0.45}, "6L6GC": {6.3, 0.9}, "EL34": {6.3, 1.5},
		"6SN7GTB": {6.3, 0.6}, "5Y3GT": {5, 2}, "5U4GB": {5, 3}, "5AR4": {5, 1.9}, "EZ81": {6.3, 1.0},
	}
	for name, h := range heaters {
		ty, _ := Lookup(name)
		got := [4]float64{ty.Heater.Volts, ty.Heater.Amps, ty.Heater.AltVolts, ty.Heater.AltAmps}
		if got != h {
			t.Errorf("%s heater %v, want %v", name, got, h)
		}
	}
	for _, n := range []string{"5Y3GT", "5U4GB"} {
		if ty, _ := Lookup(n); !ty.Heater.DirectlyHeated {
			t.Errorf("%s should be directly heated", n)
		}
	}
	limits := map[string][2]float64{ // plate W, screen W
		"EL84": {12, 2}, "6V6GT": {12, 2}, "6L6GC": {30, 5}, "EL34": {25, 8}, "12AX7": {1, 0}, "12AU7": {2.75, 0},
	}
	for name, l := range limits {
		ty, _ := Lookup(name)
		if got := [2]float64{ty.Limits.PlateWatts, ty.Limits.ScreenWatts}; got != l {
			t.Errorf("%s plate/screen watts %v, want %v", name, got, l)
		}
	}
	el84, _ := Lookup("EL84")
	if el84.Limits.GridOhmsCathode != 1e6 || el84.Limits.GridOhmsFixed != 0.3e6 {
		t.Errorf("EL84 grid resistance limits %+v, want 1 MΩ / 0.3 MΩ", el84.Limits)
	}
	u4, _ := Lookup("5U4GB")
	if u4.Limits.PeakPlateAmps != 1 || u4.Limits.MaxReservoirFarads != 40e-6 {
		t.Errorf("5U4GB peak %g A, reservoir %g F; want 1 A, 40 µF (GE data, as quoted)", u4.Limits.PeakPlateAmps, u4.Limits.MaxReservoirFarads)
	}
	for _, ty := range Fitted() {
		if ty.Limits.PlateVolts <= 0 || len(ty.Rows) == 0 {
			t.Errorf("%s lacks plate volts or rows", ty.Name)
		}
		if ty.Kind != Rectifier && (ty.Limits.PlateWatts <= 0 || ty.Limits.GridOhmsCathode <= 0 || ty.Limits.GridOhmsFixed <= 0) {
			t.Errorf("%s lacks plate watts or grid resistance limits", ty.Name)
		}
		for _, r := range ty.Rows {
			if r.Source == "" {
				t.Errorf("%s row %+v has no source", ty.Name, r)
			}
		}
	}
	at7, _ := Lookup("12AT7")
	// RCA 12AT7 row: cathode resistor 200 Ω at 10 mA gives Vg1 = −2 V (Ohm's law).
	if at7.Rows[0].Vg1 != -2 {
		t.Errorf("12AT7 row Vg1 = %g, want −2 V from Rk 200 Ω × 10 mA", at7.Rows[0].Vg1)
	}
}

func TestSideFileErrors(t *testing.T) {
	dir := t.TempDir()
	base := `valves:
  - name: QX-1
    kind: triode
    base: noval
    heater: {volts: 6.3, amps: 0.3}
    limits: {plate_w: 1, plate_v: 300}
    rows:
      - {va: 200, vg1: -2, ia_ma: 2, gm_ma_v: 2, mu: 50}
`
	cases := []struct {
		name, src, want string
	}{
		{"unknown field", strings.Replace(base, "    base: noval\n", "    base: noval\n    colour: red\n", 1), ":5:5: valves[0].colour: unknown field"},
		{"bad kind", strings.Replace(base, "kind: triode", "kind: klystron", 1), ":3:11: valves[0].kind"},
		{"not a number", strings.Replace(base, "volts: 6.3", "volts: six", 1), ":5:21: valves[0].heater.volts"},
		{"bad pin", strings.Replace(base, "    heater:", "    pins: [{pin: 12, electrode: plate}]\n    heater:", 1), ":5:12: valves[0].pins[0].pin"},
		{"bad row", strings.Replace(base, "ia_ma: 2,", "ia_ma: 0,", 1), ":8:9: valves[0].rows[0]"},
		{"duplicate", base + strings.Replace(base, "valves:\n", "", 1), ":9:11: valves[1].name"},
	}
	for _, c := range cases {
		p := filepath.Join(dir, strings.ReplaceAll(c.name, " ", "_")+".yaml")
		if err := os.WriteFile(p, []byte(c.src), 0o644); err != nil {
			t.Fatal(err)
		}
		_, err := LoadSideFile(p)
		var le *LoadError
		if err == nil || !errors.As(err, &le) || !strings.Contains(err.Error(), p+c.want) {
			t.Errorf("%s: err = %v, want it to contain %q", c.name, err, p+c.want)
		}
	}
	if _, err := LoadSideFile(filepath.Join(dir, "absent.yaml")); !errors.Is(err, os.ErrNotExist) {
		t.Errorf("missing file: %v", err)
	}
}

// Every pentode and beam valve carries its maximum screen volts; every pin
// number fits its base; series-string heaters as in the makers' data (RCA
// 50C5 50 V 0.15 A, 35W4 35 V 0.15 A, from memory).
func TestScreenVoltsBasesAndSeriesHeaters(t *testing.T) {
	for _, ty := range Fitted() {
		if ty.Kind == Pentode && !(ty.Limits.ScreenVolts > 0) {
			t.Errorf("%s: no screen_v limit", ty.Name)
		}
	}
	for _, ty := range All() {
		n := ty.Base.PinCount()
		if n == 0 {
			t.Errorf("%s: unknown base %q", ty.Name, ty.Base)
		}
		for _, p := range ty.Pins {
			if p.Number < 1 || p.Number > n {
				t.Errorf("%s: pin %d outside its %s base", ty.Name, p.Number, ty.Base)
			}
		}
	}
	for name, h := range map[string][2]float64{"50C5": {50, 0.15}, "35W4": {35, 0.15}, "6X4": {6.3, 0.6}, "6AU6": {6.3, 0.3}} {
		ty, _ := Lookup(name)
		if got := [2]float64{ty.Heater.Volts, ty.Heater.Amps}; got != h {
			t.Errorf("%s heater %v, want %v", name, got, h)
		}
		if ty.Base != B7G {
			t.Errorf("%s base %s, want b7g", name, ty.Base)
		}
	}
	if ty, _ := Lookup("6AU6"); !reflect.DeepEqual(ty.PinsOf("", Screen), []int{6}) || !reflect.DeepEqual(ty.PinsOf("", Plate), []int{5}) {
		t.Errorf("6AU6 pins %v", ty.Pins)
	}
}

// Multi-function valves name their sections; each section is modelled by
// its unit type (Mullard ECL82 base diagram and data, from memory). Unit
// types are not valve types of their own.
func TestMultiFunctionSections(t *testing.T) {
	ty, ok := Lookup("6BM8")
	if !ok || ty.Kind != Multi || !reflect.DeepEqual(ty.Sections, []string{"T", "P"}) {
		t.Fatalf("6BM8: %+v", ty)
	}
	tri, pen := ty.SectionType("T", nil), ty.SectionType("P", nil)
	if tri == nil || pen == nil || tri.Kind != Triode || pen.Kind != Pentode || tri.Name != "ECL82" {
		t.Fatalf("sections: %+v %+v", tri, pen)
	}
	if pen.Limits.PlateWatts != 7 || pen.Limits.ScreenVolts != 250 || tri.Model.Mu < 50 {
		t.Errorf("section data: pentode %+v, triode mu %g", pen.Limits, tri.Model.Mu)
	}
	for sec, want := range map[string][]string{"T": {Plate, Grid, Cathode}, "P": {Plate, Screen, Grid, Cathode}} {
		if got := ty.Electrodes(sec); !reflect.DeepEqual(got, want) {
			t.Errorf("ECL82 section %s electrodes %v, want %v", sec, got, want)
		}
	}
	if !reflect.DeepEqual(ty.PinsOf("T", Plate), []int{9}) || !reflect.DeepEqual(ty.PinsOf("P", Plate), []int{6}) {
		t.Errorf("ECL82 plates: T %v, P %v", ty.PinsOf("T", Plate), ty.PinsOf("P", Plate))
	}
	if _, ok := Lookup("ECL82-T"); ok {
		t.Error("a unit type is found by Lookup")
	}
	av6, _ := Lookup("6AV6")
	if d := av6.SectionType("D", nil); d == nil || d.Kind != Diode || d.Kind.Modelled() {
		t.Errorf("6AV6 diode section: %+v", d)
	}
	if twelve, _ := Lookup("12AV6"); twelve.Heater.Volts != 12.6 || twelve.SectionType("T", nil).Model != av6.SectionType("T", nil).Model {
		t.Errorf("12AV6: heater %g V, or a model unlike the 6AV6's", twelve.Heater.Volts)
	}
}

// Gas regulators and directly heated triodes (RCA OA2/OB2/0D3, RCA 2A3,
// Western Electric 300B data, from memory; REFERENCES.md).
func TestRegulatorsAndDirectlyHeatedTriodes(t *testing.T) {
	for name, g := range map[string]GasRating{
		"OA2": {StrikeVolts: 185, MaintainVolts: 150, MinAmps: 0.005, MaxAmps: 0.030, RegulationVolts: 2},
		"OB2": {StrikeVolts: 133, MaintainVolts: 108, MinAmps: 0.005, MaxAmps: 0.030, RegulationVolts: 1},
		"0D3": {StrikeVolts: 185, MaintainVolts: 150, MinAmps: 0.005, MaxAmps: 0.040, RegulationVolts: 4},
	} {
		ty, _ := Lookup(name)
		if ty.Kind != Regulator || ty.Gas != g || ty.Kind.Modelled() || len(ty.PinsOf("", Anode)) != 1 {
			t.Errorf("%s: kind %s gas %+v", name, ty.Kind, ty.Gas)
		}
	}
	for name, h := range map[string][2]float64{"2A3": {2.5, 2.5}, "300B": {5, 1.2}} {
		ty, _ := Lookup(name)
		if ty.Base != UX4 || !ty.Heater.DirectlyHeated || [2]float64{ty.Heater.Volts, ty.Heater.Amps} != h ||
			!reflect.DeepEqual(ty.PinsOf("", Cathode), []int{1, 4}) || !reflect.DeepEqual(ty.PinsOf("", Plate), []int{2}) {
			t.Errorf("%s: %+v", name, ty)
		}
	}
}

// The 7591 is an octal beam valve whose socket is not wired like a 6L6
// (RCA 7591A base diagram, from memory): cathode on 5, grid on 6. The 6973
// is a noval beam valve (GE 6973, from memory); the ECL86 a triode-pentode
// (Mullard ECL86, from memory).
func TestBeamAndTriodePentodeAdditions(t *testing.T) {
	type pm = map[string][]int
	for name, c := range map[string]struct {
		base Base
		pins pm
		hv   [2]float64
		sv   map[string]float64 // section → screen_v
	}{
		"7591":  {Octal, pm{"/heater": {2, 7}, "/plate": {3}, "/screen": {4}, "/cathode": {5}, "/grid": {6}}, [2]float64{6.3, 0.8}, map[string]float64{"": 440}},
		"6973":  {Noval, pm{"/grid": {1}, "/cathode": {3}, "/heater": {4, 5}, "/plate": {7}, "/screen": {9}}, [2]float64{6.3, 0.45}, map[string]float64{"": 330}},
		"ECL86": {Noval, pm{"T/grid": {1}, "T/cathode": {2}, "P/screen": {3}, "/heater": {4, 5}, "P/plate": {6}, "P/grid": {7}, "P/cathode": {8}, "T/plate": {9}}, [2]float64{6.3, 0.7}, map[string]float64{"P": 300}},
	} {
		ty, ok := Lookup(name)
		if !ok {
			t.Fatalf("%s missing", name)
		}
		if ty.Base != c.base || ty.Heater.Volts != c.hv[0] || ty.Heater.Amps != c.hv[1] {
			t.Errorf("%s: base %s heater %g V %g A", name, ty.Base, ty.Heater.Volts, ty.Heater.Amps)
		}
		for key, pins := range c.pins {
			sec, el, _ := strings.Cut(key, "/")
			if got := ty.PinsOf(sec, el); !reflect.DeepEqual(got, pins) {
				t.Errorf("%s PinsOf(%q, %q) = %v, want %v", name, sec, el, got, pins)
			}
		}
		for sec, v := range c.sv {
			st := ty
			if sec != "" {
				st = ty.SectionType(sec, nil)
			}
			if st == nil || st.Limits.ScreenVolts != v {
				t.Errorf("%s section %q: screen_v %v, want %g", name, sec, st, v)
			}
		}
	}
}
