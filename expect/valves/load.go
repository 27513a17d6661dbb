package valves

import (
	_ "embed"
	"errors"
	"fmt"
	"math"
	"os"
	"reflect"
	"sort"
	"strings"
	"sync"

	"gopkg.in/yaml.v3"
)

//go:embed library.yaml
var libraryYAML []byte

// The YAML schema of library.yaml and of user side files.
type fileDoc struct {
	Valves []valveDoc `yaml:"valves"`
	Diodes []diodeDoc `yaml:"diodes"`
}

type valveDoc struct {
	Name        string            `yaml:"name"`
	Aliases     []string          `yaml:"aliases"`
	Kind        string            `yaml:"kind"`
	Base        string            `yaml:"base"`
	Sections    []string          `yaml:"sections"`
	Pins        []Pin             `yaml:"pins"`
	Heater      HeaterRating      `yaml:"heater"`
	Limits      Limits            `yaml:"limits"`
	Start       *Koren            `yaml:"start"`
	Model       *Koren            `yaml:"model"`
	PerveanceMA float64           `yaml:"perveance_ma"` // mA/V^1.5
	ContactV    float64           `yaml:"contact_v"`    // diode units: contact potential, volts
	Rows        []rowDoc          `yaml:"rows"`
	Units       map[string]string `yaml:"units"`
	Unit        bool              `yaml:"unit"`
	Gas         *GasRating        `yaml:"gas"`
}

type rowDoc struct {
	Va     float64 `yaml:"va"`
	Vg2    float64 `yaml:"vg2"`
	Vg1    float64 `yaml:"vg1"`
	RkOhms float64 `yaml:"rk_ohms"`
	IaMA   float64 `yaml:"ia_ma"`
	Ig2MA  float64 `yaml:"ig2_ma"`
	GmMAV  float64 `yaml:"gm_ma_v"`
	Mu     float64 `yaml:"mu"`
	RaKOhm float64 `yaml:"ra_kohm"`
	Source string  `yaml:"source"`
}

type diodeDoc struct {
	Name string  `yaml:"name"`
	Is   float64 `yaml:"is"`
	N    float64 `yaml:"n"`
	Rs   float64 `yaml:"rs"`
	PIV  float64 `yaml:"piv"`
	Amps float64 `yaml:"amps"`
}

// LoadError is a problem in a library or side file, with its position.
type LoadError struct {
	File      string
	Line, Col int
	Field     string // dotted path, e.g. "valves[2].heater.volts"
	Err       error
}

func (e *LoadError) Error() string {
	return fmt.Sprintf("%s:%d:%d: %s: %v", e.File, e.Line, e.Col, e.Field, e.Err)
}

func (e *LoadError) Unwrap() error { return e.Err }

// decoder walks a yaml.Node tree into the schema structs, rejecting unknown
// keys and reporting every problem with file, line, column and field path.
type decoder struct{ file string }

func (d decoder) errAt(n *yaml.Node, field string, err error) error {
	return &LoadError{File: d.file, Line: n.Line, Col: n.Column, Field: field, Err: err}
}

func (d decoder) decode(n *yaml.Node, dst reflect.Value, path string) error {
	if n.Kind == yaml.AliasNode {
		n = n.Alias
	}
	switch dst.Kind() {
	case reflect.Pointer:
		if n.Tag == "!!null" {
			return nil
		}
		v := reflect.New(dst.Type().Elem())
		if err := d.decode(n, v.Elem(), path); err != nil {
			return err
		}
		dst.Set(v)
		return nil
	case reflect.Struct:
		if n.Kind != yaml.MappingNode {
			return d.errAt(n, path, errors.New("expected a mapping"))
		}
		t := dst.Type()
		seen := map[string]bool{}
		for i := 0; i+1 < len(n.Content); i += 2 {
			k, v := n.Content[i], n.Content[i+1]
			fp := k.Value
			if path != "" {
				fp = path + "." + k.Value
			}
			if seen[k.Value] {
				return d.errAt(k, fp, errors.New("duplicate key"))
			}
			seen[k.Value] = true
			fi := -1
			for j := 0; j < t.NumField(); j++ {
				tag, _, _ := strings.Cut(t.Field(j).Tag.Get("yaml"), ",")
				if tag == k.Value && tag != "" && tag != "-" {
					fi = j
					break
				}
			}
			if fi < 0 {
				return d.errAt(k, fp, errors.New("unknown field"))
			}
			if err := d.decode(v, dst.Field(fi), fp); err != nil {
				return err
			}
		}
		return nil
	case reflect.Slice:
		if dst.Type().Elem().Kind() == reflect.Struct {
			if n.Kind != yaml.SequenceNode {
				return d.errAt(n, path, errors.New("expected a list"))
			}
			s := reflect.MakeSlice(dst.Type(), len(n.Content), len(n.Content))
			for i, c := range n.Content {
				if err := d.decode(c, s.Index(i), fmt.Sprintf("%s[%d]", path, i)); err != nil {
					return err
				}
			}
			dst.Set(s)
			return nil
		}
	}
	if err := n.Decode(dst.Addr().Interface()); err != nil {
		var te *yaml.TypeError
		if errors.As(err, &te) && len(te.Errors) > 0 {
			msg := te.Errors[0]
			if _, rest, ok := strings.Cut(msg, ": "); ok && strings.HasPrefix(msg, "line ") {
				msg = rest
			}
			err = errors.New(msg)
		}
		return d.errAt(n, path, err)
	}
	if dst.Kind() == reflect.Float64 && (math.IsNaN(dst.Float()) || math.IsInf(dst.Float(), 0)) {
		return d.errAt(n, path, errors.New("not a finite number"))
	}
	return nil
}

// keyNode returns the value node of key in mapping m, or m itself.
func keyNode(m *yaml.Node, key string) *yaml.Node {
	if m.Kind == yaml.MappingNode {
		for i := 0; i+1 < len(m.Content); i += 2 {
			if m.Content[i].Value == key {
				return m.Content[i+1]
			}
		}
	}
	return m
}

var validElectrodes = map[string]bool{
	Plate: true, Grid: true, Screen: true, Cathode: true, Heater: true,
	HeaterCT: true, Grid3: true, Plates: true, "nc": true, Anode: true, Jumper: true, OscGrid: true,
}

// parsed is the result of reading one YAML document.
type parsed struct {
	types  []*Type
	diodes []SiliconDiode
}

// parseDoc reads and validates a library or side file. fit says whether
// types with rows but no model are fitted.
func parseDoc(file string, src []byte, fit bool) (*parsed, error) {
	var root yaml.Node
	if err := yaml.Unmarshal(src, &root); err != nil {
		return nil, fmt.Errorf("%s: %w", file, err)
	}
	if root.Kind != yaml.DocumentNode || len(root.Content) == 0 {
		return nil, &LoadError{File: file, Line: 1, Col: 1, Field: "valves", Err: errors.New("empty document")}
	}
	d := decoder{file: file}
	var doc fileDoc
	top := root.Content[0]
	if err := d.decode(top, reflect.ValueOf(&doc).Elem(), ""); err != nil {
		return nil, err
	}
	valvesNode := keyNode(top, "valves")
	out := &parsed{}
	names := map[string]string{}
	for i := range doc.Valves {
		vn := valvesNode.Content[i]
		t, err := d.buildType(&doc.Valves[i], vn, fmt.Sprintf("valves[%d]", i), fit)
		if err != nil {
			return nil, err
		}
		for _, nm := range append([]string{t.Name}, t.Aliases...) {
			key := strings.ToUpper(nm)
			if prev, dup := names[key]; dup {
				return nil, d.errAt(keyNode(vn, "name"), fmt.Sprintf("valves[%d].name", i),
					fmt.Errorf("name %q already used by %s", nm, prev))
			}
			names[key] = t.Name
		}
		out.types = append(out.types, t)
	}
	byName := map[string]*Type{}
	for _, t := range out.types {
		byName[strings.ToUpper(t.Name)] = t
	}
	for i, t := range out.types {
		for _, sec := range t.Sections {
			if t.Kind != Multi {
				break
			}
			u := byName[strings.ToUpper(t.Units[sec])]
			if u == nil || !u.Unit {
				return nil, d.errAt(keyNode(valvesNode.Content[i], "units"), fmt.Sprintf("valves[%d].units.%s", i, sec),
					fmt.Errorf("%q is not a unit type in this file (unit: true)", t.Units[sec]))
			}
		}
	}
	diodesNode := keyNode(top, "diodes")
	for i, dd := range doc.Diodes {
		p := fmt.Sprintf("diodes[%d]", i)
		n := diodesNode.Content[i]
		if dd.Name == "" {
			return nil, d.errAt(n, p+".name", errors.New("missing"))
		}
		if !(dd.Is > 0) || !(dd.N > 0) || dd.Rs < 0 {
			return nil, d.errAt(n, p, errors.New("is and n must be positive, rs not negative"))
		}
		out.diodes = append(out.diodes, SiliconDiode{Name: dd.Name, Is: dd.Is, N: dd.N, Rs: dd.Rs, PIV: dd.PIV, Amps: dd.Amps})
	}
	return out, nil
}

func (d decoder) buildType(v *valveDoc, vn *yaml.Node, p string, fit bool) (*Type, error) {
	at := func(key string, err error) error {
		return d.errAt(keyNode(vn, key), p+"."+key, err)
	}
	if strings.TrimSpace(v.Name) == "" {
		return nil, at("name", errors.New("missing"))
	}
	t := &Type{Name: v.Name, Aliases: v.Aliases, Kind: Kind(v.Kind), Base: Base(v.Base),
		Sections: v.Sections, Pins: v.Pins, Heater: v.Heater, Limits: v.Limits, Units: v.Units, Unit: v.Unit}
	switch t.Kind {
	case Triode, Pentode, Rectifier, Multi, Diode, Regulator, Heptode:
	default:
		return nil, at("kind", fmt.Errorf("%q is not triode, pentode, rectifier, multi, diode, regulator or heptode", v.Kind))
	}
	if t.Unit {
		return d.buildUnit(t, v, vn, p, fit)
	}
	if t.Kind == Diode {
		return nil, at("kind", errors.New("diode is a section kind of a multi-function valve: give it unit: true"))
	}
	if t.Kind == Multi {
		if len(v.Sections) < 2 || len(v.Units) != len(v.Sections) {
			return nil, at("units", errors.New("a multi valve names a unit type for each of its sections"))
		}
		for _, sec := range v.Sections {
			if v.Units[sec] == "" {
				return nil, at("units", fmt.Errorf("section %q has no unit type", sec))
			}
		}
	} else if len(v.Units) > 0 {
		return nil, at("units", errors.New("only multi valves name unit types"))
	}
	if t.Kind == Regulator {
		if v.Gas == nil || !(v.Gas.MaintainVolts > 0) || !(v.Gas.StrikeVolts >= v.Gas.MaintainVolts) || !(v.Gas.MaxAmps > v.Gas.MinAmps) || v.Gas.MinAmps < 0 {
			return nil, at("gas", errors.New("a regulator needs gas: {strike_v, maintain_v, min_a, max_a} with strike ≥ maintain and max > min"))
		}
		t.Gas = *v.Gas
	} else if v.Gas != nil {
		return nil, at("gas", errors.New("only regulators take gas ratings"))
	}
	maxPin := t.Base.PinCount()
	if maxPin == 0 {
		return nil, at("base", fmt.Errorf("%q is not noval, octal, loctal, b7g, ux4 or ux5", v.Base))
	}
	if len(t.Sections) == 0 {
		t.Sections = []string{""}
	}
	pinsNode := keyNode(vn, "pins")
	for i, pin := range t.Pins {
		pp := fmt.Sprintf("%s.pins[%d]", p, i)
		pn := pinsNode.Content[i]
		if pin.Number < 1 || pin.Number > maxPin {
			return nil, d.errAt(pn, pp+".pin", fmt.Errorf("pin %d outside 1..%d for a %s base", pin.Number, maxPin, t.Base))
		}
		if !validElectrodes[pin.Electrode] {
			return nil, d.errAt(pn, pp+".electrode", fmt.Errorf("unknown electrode %q", pin.Electrode))
		}
		if pin.Section != "" && !containsStr(t.Sections, pin.Section) {
			return nil, d.errAt(pn, pp+".section", fmt.Errorf("section %q not in sections %v", pin.Section, t.Sections))
		}
	}
	if t.Kind == Regulator {
		if t.Heater != (HeaterRating{}) {
			return nil, at("heater", errors.New("a gas regulator has a cold cathode and no heater"))
		}
	} else if !(t.Heater.Volts > 0) || !(t.Heater.Amps > 0) {
		return nil, at("heater", errors.New("volts and amps must be positive"))
	}
	if !t.Kind.Modelled() {
		if v.Model != nil || v.Start != nil || v.PerveanceMA != 0 || len(v.Rows) > 0 {
			return nil, at("kind", fmt.Errorf("a %s type takes no model, perveance or rows", t.Kind))
		}
		return t, nil
	}
	rowsNode := keyNode(vn, "rows")
	for i, r := range v.Rows {
		rp := fmt.Sprintf("%s.rows[%d]", p, i)
		rn := rowsNode.Content[i]
		row := Row{Va: r.Va, Vg2: r.Vg2, Vg1: r.Vg1, Ia: r.IaMA * 1e-3, Ig2: r.Ig2MA * 1e-3,
			Gm: r.GmMAV * 1e-3, Mu: r.Mu, Ra: r.RaKOhm * 1e3, Source: r.Source}
		if !(row.Va > 0) || !(row.Ia > 0) {
			return nil, d.errAt(rn, rp, errors.New("va and ia_ma must be positive"))
		}
		if r.RkOhms != 0 {
			if r.Vg1 != 0 {
				return nil, d.errAt(keyNode(rn, "rk_ohms"), rp+".rk_ohms", errors.New("give vg1 or rk_ohms, not both"))
			}
			row.Vg1 = -row.Ia * r.RkOhms
		}
		if t.Kind == Pentode && !(row.Vg2 > 0) {
			return nil, d.errAt(rn, rp+".vg2", errors.New("pentode rows need a positive vg2"))
		}
		if row.Gm < 0 || row.Mu < 0 || row.Ra < 0 || row.Ig2 < 0 {
			return nil, d.errAt(rn, rp, errors.New("gm, mu, ra and ig2 must not be negative"))
		}
		t.Rows = append(t.Rows, row)
	}
	if t.Kind == Rectifier {
		if v.Model != nil || v.Start != nil {
			return nil, at("model", errors.New("rectifiers take perveance_ma, not a Koren model"))
		}
		t.Perveance = v.PerveanceMA * 1e-3
		if t.Perveance < 0 {
			return nil, at("perveance_ma", errors.New("must be positive"))
		}
		if t.Perveance == 0 {
			if !fit || len(t.Rows) == 0 {
				return nil, at("perveance_ma", errors.New("missing (and no rows to fit it from)"))
			}
			g, err := FitPerveance(t.Rows)
			if err != nil {
				return nil, at("rows", err)
			}
			t.Perveance = g
		}
		return t, nil
	}
	if v.PerveanceMA != 0 {
		return nil, at("perveance_ma", errors.New("only rectifiers take a perveance"))
	}
	defGrid := GridOhmsSmall
	if t.Kind == Pentode || t.Limits.PlateWatts >= 10 {
		defGrid = GridOhmsPower
	}
	for _, kk := range []struct {
		key string
		k   *Koren
	}{{"start", v.Start}, {"model", v.Model}} {
		if kk.k == nil {
			continue
		}
		if err := checkKoren(t.Kind, *kk.k); err != nil {
			return nil, at(kk.key, err)
		}
		if kk.k.GridOhms == 0 {
			kk.k.GridOhms = defGrid
		}
	}
	if v.Start != nil {
		t.Start = *v.Start
	} else if len(t.Rows) > 0 {
		t.Start = DeriveStart(t.Kind, t.Rows)
		t.Start.GridOhms = defGrid
	}
	if v.Model != nil {
		t.Model = *v.Model
		return t, nil
	}
	if !fit || len(t.Rows) == 0 {
		return nil, at("model", errors.New("missing (and no rows to fit it from)"))
	}
	m, rep, err := Fit(t.Kind, t.Rows, t.Start)
	if err != nil {
		return nil, at("rows", fmt.Errorf("fitting %s: %w", t.Name, err))
	}
	_ = rep
	t.Model = m
	return t, nil
}

// buildDiodeUnit reads a signal-diode unit: its rows (plate volts and
// current), its Child–Langmuir perveance (perveance_ma, or fitted from the
// rows) and its contact potential (contact_v, 0–1 V). A unit with none of
// them is library data only: a design cannot wire it.
func (d decoder) buildDiodeUnit(t *Type, v *valveDoc, vn *yaml.Node, p string, fit bool) (*Type, error) {
	at := func(key string, err error) error {
		return d.errAt(keyNode(vn, key), p+"."+key, err)
	}
	if v.Model != nil || v.Start != nil {
		return nil, at("model", errors.New("diode units take perveance_ma, not a Koren model"))
	}
	if !(v.ContactV >= 0 && v.ContactV <= 1) {
		return nil, at("contact_v", errors.New("must be within 0..1 V"))
	}
	t.ContactVolts = v.ContactV
	rowsNode := keyNode(vn, "rows")
	for i, r := range v.Rows {
		if !(r.Va > 0) || !(r.IaMA > 0) {
			return nil, d.errAt(rowsNode.Content[i], fmt.Sprintf("%s.rows[%d]", p, i), errors.New("va and ia_ma must be positive"))
		}
		t.Rows = append(t.Rows, Row{Va: r.Va, Ia: r.IaMA * 1e-3, Source: r.Source})
	}
	t.Perveance = v.PerveanceMA * 1e-3
	if !(t.Perveance >= 0) {
		return nil, at("perveance_ma", errors.New("must be positive"))
	}
	if t.Perveance == 0 && len(t.Rows) > 0 {
		if !fit {
			return nil, at("perveance_ma", errors.New("missing (and no fit on this load)"))
		}
		g, err := FitDiodePerveance(t.Rows, t.ContactVolts)
		if err != nil {
			return nil, at("rows", err)
		}
		t.Perveance = g
	}
	return t, nil
}

// buildUnit reads a section type of a multi-function valve: name, kind,
// limits, rows and model; no base, pins or heater (those are the valve's).
func (d decoder) buildUnit(t *Type, v *valveDoc, vn *yaml.Node, p string, fit bool) (*Type, error) {
	at := func(key string, err error) error {
		return d.errAt(keyNode(vn, key), p+"."+key, err)
	}
	if v.Base != "" || len(v.Pins) > 0 || v.Heater != (HeaterRating{}) || len(v.Aliases) > 0 || len(v.Sections) > 0 {
		return nil, at("unit", errors.New("a unit type has no base, pins, heater, aliases or sections: they belong to its valve"))
	}
	switch t.Kind {
	case Triode, Pentode:
	case Diode:
		return d.buildDiodeUnit(t, v, vn, p, fit)
	default:
		return nil, at("kind", fmt.Errorf("a unit is a triode, pentode or diode section, not %s", t.Kind))
	}
	t.Sections = []string{""}
	tmp := *v
	tmp.Unit = false
	tmp.Base = string(Noval)
	tmp.Heater = HeaterRating{Volts: 1, Amps: 1}
	u, err := d.buildType(&tmp, vn, p, fit)
	if err != nil {
		return nil, err
	}
	u.Unit, u.Base, u.Heater = true, "", HeaterRating{}
	return u, nil
}

func checkKoren(kind Kind, k Koren) error {
	if !(k.Mu > 0) || !(k.KG1 > 0) || !(k.KP > 0) || !(k.KVB > 0) {
		return errors.New("mu, kg1, kp and kvb must be positive")
	}
	if !(k.Ex > 0.5 && k.Ex < 3) {
		return fmt.Errorf("ex %g outside 0.5..3", k.Ex)
	}
	if kind == Pentode && !(k.KG2 > 0) {
		return errors.New("pentodes need a positive kg2")
	}
	if k.GridOhms < 0 {
		return errors.New("grid_ohms must not be negative")
	}
	if k.AlphaS < 0 || k.BetaS < 0 || (k.AlphaS > 0 && !(k.BetaS > 0)) {
		return errors.New("alpha_s and beta_s must not be negative, and alpha_s needs a positive beta_s")
	}
	if kind == Triode && (k.AlphaS != 0 || k.KG2 != 0) {
		return errors.New("kg2, alpha_s and beta_s are for pentodes only")
	}
	if !(math.Abs(k.VCT) <= 2) {
		return fmt.Errorf("vct %g V outside -2..2 V", k.VCT)
	}
	return nil
}

func containsStr(s []string, x string) bool {
	for _, e := range s {
		if e == x {
			return true
		}
	}
	return false
}

// library is the parsed embedded library; it is never modified after load.
var library = sync.OnceValue(func() *parsed {
	p, err := parseDoc("library.yaml", libraryYAML, false)
	if err != nil {
		panic("valves: embedded library: " + err.Error())
	}
	return p
})

func (t *Type) clone() *Type {
	c := *t
	c.Aliases = append([]string(nil), t.Aliases...)
	c.Sections = append([]string(nil), t.Sections...)
	c.Pins = append([]Pin(nil), t.Pins...)
	c.Rows = append([]Row(nil), t.Rows...)
	if t.Units != nil {
		c.Units = map[string]string{}
		for k, v := range t.Units {
			c.Units[k] = v
		}
	}
	return &c
}

// Lookup finds a library valve type by name or alias, ignoring case and
// surrounding space. It returns a copy that the caller may modify.
func Lookup(name string) (*Type, bool) {
	key := strings.ToUpper(strings.TrimSpace(name))
	for _, t := range library().types {
		if t.Unit {
			continue
		}
		if strings.ToUpper(t.Name) == key {
			return t.clone(), true
		}
		for _, a := range t.Aliases {
			if strings.ToUpper(a) == key {
				return t.clone(), true
			}
		}
	}
	return nil, false
}

// Names returns the canonical names of the library types, sorted.
func Names() []string {
	var n []string
	for _, t := range library().types {
		if !t.Unit {
			n = append(n, t.Name)
		}
	}
	sort.Strings(n)
	return n
}

// All returns copies of all library types, in library order, without the
// unit (section) types of multi-function valves.
func All() []*Type {
	var out []*Type
	for _, t := range library().types {
		if !t.Unit {
			out = append(out, t.clone())
		}
	}
	return out
}

// Fitted returns copies of every library type that has a fitted model or
// perveance: triodes, pentodes and rectifiers, the unit (section) types of
// multi-function valves included, in library order.
func Fitted() []*Type {
	var out []*Type
	for _, t := range library().types {
		if t.Kind.Modelled() {
			out = append(out, t.clone())
		}
	}
	return out
}

// SectionType returns the type that models one section: for a Multi valve
// a copy of the valve with the kind, model, start, limits and rows of the
// section's unit type (name, pins, base and heater stay the valve's); for
// every other type the type itself. side holds the user's side-file types,
// searched before the library for unit names. It returns nil when a unit
// cannot be found.
func (t *Type) SectionType(section string, side []*Type) *Type {
	if t.Kind != Multi {
		return t
	}
	name := t.Units[section]
	var u *Type
	for _, s := range side {
		if s.Unit && strings.EqualFold(s.Name, name) {
			u = s
			break
		}
	}
	if u == nil {
		for _, s := range library().types {
			if s.Unit && strings.EqualFold(s.Name, name) {
				u = s
				break
			}
		}
	}
	if u == nil {
		return nil
	}
	c := t.clone()
	c.Kind, c.Model, c.Start, c.Limits, c.Perveance, c.ContactVolts = u.Kind, u.Model, u.Start, u.Limits, u.Perveance, u.ContactVolts
	c.Rows = append([]Row(nil), u.Rows...)
	return c
}

// LookupDiode finds a silicon diode entry of the library by name (case-insensitive).
func LookupDiode(name string) (SiliconDiode, bool) {
	for _, d := range library().diodes {
		if strings.EqualFold(d.Name, strings.TrimSpace(name)) {
			return d, true
		}
	}
	return SiliconDiode{}, false
}

// LoadSideFile reads user valve types from a YAML file in the library's
// schema (a top-level "valves:" list). Types that have rows but no model (or
// no perveance_ma for rectifiers) are fitted to their rows, pulled towards
// their "start" set or, without one, a set derived from the rows. Errors are
// *LoadError values naming file:line:col and the field; a read error is
// returned wrapped. Names must not repeat within the file; they may shadow
// library names (the caller decides precedence).
func LoadSideFile(path string) ([]*Type, error) {
	src, err := os.ReadFile(path)
	if err != nil {
		return nil, fmt.Errorf("valves: %w", err)
	}
	p, err := parseDoc(path, src, true)
	if err != nil {
		return nil, err
	}
	return p.types, nil
}

// PinsOf returns the socket pins of an electrode in a section, in ascending
// order. Pins with no section (heater, heater-ct, single-section valves)
// belong to every section. It returns nil when there are none.
func (t *Type) PinsOf(section, electrode string) []int {
	var out []int
	for _, p := range t.Pins {
		if p.Electrode == electrode && (p.Section == section || p.Section == "") {
			out = append(out, p.Number)
		}
	}
	sort.Ints(out)
	return out
}

// electrodeOrder is the order Electrodes reports signal electrodes in.
var electrodeOrder = []string{Plate, Plates, Anode, Screen, Grid, Grid3, Cathode}

// Electrodes returns the signal electrodes that a design may map for a
// section (plate, grid, cathode; screen on pentodes; suppressor where grid 3
// has its own pin; plates and cathode on rectifiers). Heater pins are not
// included. It returns nil for an unknown section.
func (t *Type) Electrodes(section string) []string {
	if !containsStr(t.Sections, section) {
		return nil
	}
	var out []string
	for _, e := range electrodeOrder {
		if len(t.PinsOf(section, e)) > 0 {
			out = append(out, e)
		}
	}
	return out
}
