// Package valves is the device library: bases and pin maps, heaters,
// ratings and fitted Koren model parameters for each valve type, with the
// datasheet rows the parameters were fitted to.
package valves

// Kind says which model a section uses.
type Kind string

const (
	Triode    Kind = "triode"
	Pentode   Kind = "pentode" // pentodes and beam tetrodes share the Koren pentode model
	Rectifier Kind = "rectifier"
	// Multi is a valve whose sections are of different kinds (triode-pentode,
	// diode-triode): each section names a unit type (Type.Units) that holds
	// its kind, model, limits and rows.
	Multi Kind = "multi"
	// Diode is a signal-diode section of a multi-function valve (the
	// detector diodes of a diode-triode): Child–Langmuir with the
	// unit's perveance and contact potential (SignalDiodeDevice); a
	// design may wire it when its unit has a perveance (Wireable).
	Diode Kind = "diode"
	// Regulator is a cold-cathode gas voltage regulator (OA2, OB2, 0D3):
	// library data (Type.Gas) and its DC law (GasLaw, gas.go); not yet a
	// part a design can wire.
	Regulator Kind = "regulator"
	// Heptode is a pentagrid converter (6BE6): library data only, not yet a
	// network device.
	Heptode Kind = "heptode"
)

// Modelled reports whether pinwalk can put a section of this kind in the
// network (triodes, pentodes, rectifier valves).
func (k Kind) Modelled() bool { return k == Triode || k == Pentode || k == Rectifier }

// Wireable reports whether a design may wire a section of this type:
// a modelled kind, or a signal-diode unit with a perveance.
func (t *Type) Wireable() bool {
	return t.Kind.Modelled() || (t.Kind == Diode && t.Perveance > 0)
}

// Base is the socket a valve plugs into.
type Base string

const (
	Noval  Base = "noval"  // B9A, 9 pins
	Octal  Base = "octal"  // 8 pins
	B7G    Base = "b7g"    // 7-pin miniature
	UX4    Base = "ux4"    // 4-pin UX (directly heated triodes, old rectifiers)
	UX5    Base = "ux5"    // 5-pin UX
	Loctal Base = "loctal" // B8G, 8 pins
)

// PinCount returns the number of pins of a base (0 for an unknown base).
func (b Base) PinCount() int {
	switch b {
	case Noval:
		return 9
	case Octal, Loctal:
		return 8
	case B7G:
		return 7
	case UX4:
		return 4
	case UX5:
		return 5
	}
	return 0
}

// Electrode names used in pin maps and design files.
const (
	Plate    = "plate"
	Grid     = "grid"   // control grid (grid 1)
	Screen   = "screen" // grid 2
	Cathode  = "cathode"
	Heater   = "heater"     // both heater pins carry this name
	HeaterCT = "heater-ct"  // heater centre tap (noval double triodes, pin 9)
	Anode    = "anode"      // gas regulator anode
	Jumper   = "jumper"     // gas regulator internal link (pins tied inside, used to break B+ when the valve is out)
	OscGrid  = "osc-grid"   // oscillator grid (grid 1) of a pentagrid converter
	Grid3    = "suppressor" // grid 3 when brought out on its own pin
	Plates   = "plates"     // rectifier anodes (two pins)
)

// Pin is one socket pin.
type Pin struct {
	Number    int    `yaml:"pin"`
	Section   string `yaml:"section,omitempty"` // "A" or "B" on double triodes, "" otherwise
	Electrode string `yaml:"electrode"`         // one of the electrode names above, or "nc"
}

// HeaterRating describes the heater (or filament) ratings. (The type is not
// called Heater because that name is the electrode constant above.)
type HeaterRating struct {
	Volts float64 `yaml:"volts"`
	Amps  float64 `yaml:"amps"`
	// AltVolts/AltAmps: the series-parallel alternative (12.6 V / 0.15 A
	// double triodes wired for 6.3 V / 0.3 A); zero when there is none.
	AltVolts       float64 `yaml:"alt_volts,omitempty"`
	AltAmps        float64 `yaml:"alt_amps,omitempty"`
	DirectlyHeated bool    `yaml:"directly_heated,omitempty"` // filament is the cathode (5U4GB, 5Y3GT)
	WarmUpSeconds  float64 `yaml:"warm_up_s,omitempty"`
}

// Limits are the absolute or design-centre maximum ratings per section.
type Limits struct {
	PlateWatts         float64 `yaml:"plate_w"`
	ScreenWatts        float64 `yaml:"screen_w,omitempty"`
	ScreenVolts        float64 `yaml:"screen_v,omitempty"` // pentodes and beam valves: maximum screen volts
	PlateVolts         float64 `yaml:"plate_v"`
	CathodeAmps        float64 `yaml:"cathode_a,omitempty"`
	GridOhmsCathode    float64 `yaml:"grid_ohms_cathode_bias,omitempty"` // max grid-1 resistance, cathode bias
	GridOhmsFixed      float64 `yaml:"grid_ohms_fixed_bias,omitempty"`   // max grid-1 resistance, fixed bias
	PeakPlateAmps      float64 `yaml:"peak_plate_a,omitempty"`           // rectifiers, per plate
	MaxReservoirFarads float64 `yaml:"max_reservoir_f,omitempty"`        // rectifiers
	HeaterCathodeVolts float64 `yaml:"heater_cathode_v,omitempty"`
}

// Koren holds the parameters of Koren's triode or pentode model
// (N. Koren, Glass Audio 8(5), 1996) with two additions: the screen-current
// division factor of pentodes (KG2, AlphaS, BetaS; see Pentode) and a
// contact-potential offset VCT added to the control-grid voltage (see
// TriodePlate). KG2, AlphaS and BetaS are zero for triodes; VCT defaults to
// 0. GridOhms is the series resistance of the grid-current diode.
type Koren struct {
	Mu       float64 `yaml:"mu"`
	Ex       float64 `yaml:"ex"`
	KG1      float64 `yaml:"kg1"`
	KG2      float64 `yaml:"kg2,omitempty"`
	KP       float64 `yaml:"kp"`
	KVB      float64 `yaml:"kvb"`
	AlphaS   float64 `yaml:"alpha_s,omitempty"` // screen share rise as Va falls (dimensionless)
	BetaS    float64 `yaml:"beta_s,omitempty"`  // per unit of Va/Vg2 (dimensionless)
	VCT      float64 `yaml:"vct,omitempty"`     // contact-potential offset added to Vg1k, volts
	GridOhms float64 `yaml:"grid_ohms,omitempty"`
}

// Row is one published typical-operation row that a model is fitted to
// and tested against. Zero means "not given".
type Row struct {
	Va, Vg2, Vg1 float64 // volts, Vg1 relative to cathode
	Ia, Ig2      float64 // amps
	Gm           float64 // siemens
	Mu, Ra       float64 // plate resistance in ohms
	Source       string  // named source, with "(from memory)" where it is
}

// Type is one valve type in the library.
type Type struct {
	Name     string
	Aliases  []string // e.g. ECC83 for 12AX7
	Kind     Kind
	Base     Base
	Sections []string // {"A","B"} for double triodes, {""} for single-section valves
	Pins     []Pin
	Heater   HeaterRating
	Limits   Limits
	Model    Koren // Koren parameters (triodes, pentodes)
	// Perveance is the Child–Langmuir constant per anode for rectifiers:
	// I = Perveance · V^1.5 (A/V^1.5).
	Perveance float64
	// ContactVolts is a signal-diode unit's contact potential (volts):
	// its plate conducts from this far below its cathode.
	ContactVolts float64
	Rows         []Row // datasheet rows the model is fitted to
	// Units maps each section of a Multi valve to the name of its unit
	// type; nil otherwise.
	Units map[string]string
	// Unit marks a section type of a multi-function valve (named in another
	// type's Units): Lookup, Names and All leave it out.
	Unit bool
	// Gas holds the ratings of a gas regulator; zero otherwise.
	Gas GasRating
	// Start is the parameter set the fit is pulled towards: a published
	// Koren set where one is known, otherwise derived from the rows.
	Start Koren
}

// GasRating describes a cold-cathode gas voltage regulator.
type GasRating struct {
	StrikeVolts   float64 `yaml:"strike_v"`   // DC supply volts needed to start the discharge
	MaintainVolts float64 `yaml:"maintain_v"` // operating (burning) voltage across it
	MinAmps       float64 `yaml:"min_a"`      // smallest current for a stable discharge
	MaxAmps       float64 `yaml:"max_a"`      // largest continuous current
	// RegulationVolts is the rise of the burning voltage from MinAmps to
	// MaxAmps (the datasheet's "regulation"); 0 when not given.
	RegulationVolts float64 `yaml:"regulation_v"`
}
