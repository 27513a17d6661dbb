package procedures

import (
	"fmt"
	"math"
	"strings"
	"sync"

	"pinwalk/expect/amp"
	"pinwalk/expect/bands"
	"pinwalk/expect/cold"
	"pinwalk/expect/design"
	"pinwalk/expect/faults"
	"pinwalk/expect/point"
	"pinwalk/expect/units"
)

// EarthKey and MainsKey are the two fixed points outside the amplifier
// model: mains earth pin to chassis (ohms) and the mains as measured.
var (
	EarthKey      = point.EarthKey
	MainsKey      = point.MainsKey
	InsulationKey = point.InsulationKey
)

// Earth continuity band, ohms: a multimeter reading well under 0.5 Ω
// after nulling the leads (common practice; EarthStopOhms stops the walk;
// see EarthCaution for the proper earth-bond test).
const EarthMaxOhms = EarthStopOhms

// Bias targets as fractions of the output valve's rated plate dissipation
// at idle (common practice for class AB push-pull: 60–70 %, aiming at 65 %).
const (
	BiasTarget = 0.65
	BiasLow    = 0.60
	BiasHigh   = 0.70
)

// openOhms: a cold reading above this counts as open (beyond the top
// range of most handheld meters; common practice).
const openOhms = 20e6

// BenchOptions configure a BenchModel.
type BenchOptions struct {
	Samples int    // Monte Carlo samples per variac setting (0: bands.DefaultSamples)
	Seed    uint64 // the same seed gives the same bands
	Workers int
	Meter   bands.Meter // zero: bands.DefaultMeter
}

// BenchModel is what a design should read on the bench: it implements
// Expecter for every point a procedure asks about — the model's live
// points at each variac setting (Monte Carlo bands, computed lazily per
// setting and mains and conditioned on the readings already taken), cold
// resistances, discharge verification, earth continuity, the mains and
// bias-setting targets. It is safe for concurrent use.
type BenchModel struct {
	D     *design.Design
	M     *amp.Model
	Cold  []cold.Check
	Drain []cold.Discharge
	// Peaks are the switch-on (cold-start) peaks of the HT filter nets.
	Peaks []bands.ColdPeak
	opt   BenchOptions

	mu   sync.Mutex
	nom  *amp.OP // the nominal operating point, solved once
	sets map[setKey]*bands.Set
	cond map[string]*bands.Set // conditioned sets, by variac, mains and readings
}

type setKey struct{ variac, mains float64 }

// Label is a point's description in the model's words ("V3 pin 8
// cathode"), or "" for a point the model does not define.
func (b *BenchModel) Label(k point.Key) string {
	if k.Domain != point.Live {
		return ""
	}
	for _, pd := range b.M.Points() {
		if pd.ID == k.ID && pd.Quantity == k.Quantity {
			return pd.Label
		}
	}
	return ""
}

// DescribeFault says a fault (REF:MODE, or several joined by " or ") in
// words ("R25 (330 Ω) open circuit"); an unknown one is returned as is.
func (b *BenchModel) DescribeFault(name string) string {
	var out []string
	for _, one := range strings.Split(name, " or ") {
		f, err := faults.Parse(one)
		if err != nil {
			out = append(out, one)
			continue
		}
		out = append(out, faults.Describe(f, b.M))
	}
	return strings.Join(out, " or ")
}

// NewBenchModel computes the cold and discharge expectations of a design
// at once; the live bands are computed when first asked for.
func NewBenchModel(d *design.Design, opt BenchOptions) (*BenchModel, error) {
	if opt.Samples <= 0 {
		opt.Samples = bands.DefaultSamples
	}
	m, err := amp.Build(d)
	if err != nil {
		return nil, err
	}
	cc, err := cold.Checks(d)
	if err != nil {
		return nil, fmt.Errorf("cold checks: %w", err)
	}
	dr, err := cold.DischargeTimes(d, m, 0)
	if err != nil {
		return nil, err
	}
	pk, err := bands.ColdPeaks(d, amp.Conditions{})
	if err != nil {
		return nil, err
	}
	return &BenchModel{D: d, M: m, Cold: cc, Drain: dr, Peaks: pk, opt: opt,
		sets: map[setKey]*bands.Set{}, cond: map[string]*bands.Set{}}, nil
}

// ColdKey returns the point key of a cold check.
func ColdKey(c cold.Check) point.Key { return point.ColdKey(c.ID) }

// BiasKey returns the point key of an output valve's bias setting: volts
// across its cathode sense resistor, or amps when it has none.
func BiasKey(ref string, sense bool) point.Key {
	if sense {
		return point.BiasKey(ref, point.DCVolts)
	}
	return point.BiasKey(ref, point.DCAmps)
}

// HighestVolts is the highest voltage present in the amplifier: the
// largest switch-on peak of an HT net at the top of the mains tolerance,
// the mains peak, and any bias or bench supply — what the meter must be
// rated for.
func (b *BenchModel) HighestVolts() float64 {
	v := b.D.Mains.Volts * (1 + b.D.Mains.Tol.Hi) * math.Sqrt2
	for _, p := range b.Peaks {
		v = math.Max(v, math.Abs(p.HighMains))
	}
	for _, dr := range b.Drain {
		v = math.Max(v, math.Abs(dr.PeakVolts))
	}
	for _, p := range b.D.Parts {
		if p.Kind == design.BiasSupply || p.Kind == design.DCSupply {
			v = math.Max(v, math.Abs(p.Value))
		}
	}
	return v
}

// Nominal is the design's nominal operating point at its own mains (full
// supply simulation), solved once: what the amp overview shows.
func (b *BenchModel) Nominal() (*amp.OP, error) {
	b.mu.Lock()
	op := b.nom
	b.mu.Unlock()
	if op != nil {
		return op, nil
	}
	var o amp.OP
	if err := amp.NewSolver(b.M).Solve(amp.Conditions{}, b.M.NominalValues(), false, &o); err != nil {
		return nil, err
	}
	b.mu.Lock()
	b.nom = &o
	b.mu.Unlock()
	return &o, nil
}

// set returns the unconditioned bands at a variac setting and mains.
func (b *BenchModel) set(variac, mains float64) (*bands.Set, error) {
	if variac <= 0 {
		variac = 1
	}
	k := setKey{variac, mains}
	b.mu.Lock()
	s, ok := b.sets[k]
	b.mu.Unlock()
	if ok {
		return s, nil
	}
	opt := bands.Options{Samples: b.opt.Samples, Seed: b.opt.Seed, Workers: b.opt.Workers,
		Cond: amp.Conditions{MainsVolts: mains, Variac: variac}, FixedMains: mains > 0}
	s, err := bands.Run(b.D, opt)
	if err != nil {
		return nil, err
	}
	b.mu.Lock()
	b.sets[k] = s
	b.mu.Unlock()
	return s, nil
}

// Set returns the bands at a variac setting, conditioned on the readings
// (those of model points at every variac setting: samples with the same
// index share their part values across settings, so a reading at 25 %
// informs the bands at 100 %), under the mains the readings measured
// (MainsKey, the latest) or the session stated.
func (b *BenchModel) Set(variac float64, readings []Reading) (*bands.Set, error) {
	if variac <= 0 {
		variac = 1
	}
	mains := MeasuredMains(readings)
	if mains == 0 {
		for _, r := range readings {
			if r.Mains > 0 {
				mains = r.Mains
			}
		}
	}
	base, err := b.set(variac, mains)
	if err != nil {
		return nil, err
	}
	// Group usable readings by variac setting.
	by := map[float64][]bands.Reading{}
	var sig strings.Builder
	for _, r := range readings {
		// A reading that fired a stop or a switch-off is a fault, not a
		// healthy amp's spread: it narrows nothing.
		if r.Status == Retry || r.Status == Corrected || r.Point.Domain != point.Live || r.Consequence != GoOn || len(r.Pulled) > 0 {
			continue
		}
		if math.IsNaN(r.Value) || math.IsInf(r.Value, 0) {
			continue
		}
		if _, ok := base.Index(r.Point.String()); !ok {
			continue
		}
		v := r.Variac
		if v <= 0 {
			v = 1
		}
		by[v] = append(by[v], bands.Reading{Key: r.Point.String(), Value: r.Value, Meter: b.opt.Meter})
		fmt.Fprintf(&sig, "%s=%g@%g;", r.Point, r.Value, v)
	}
	if len(by) == 0 {
		return base, nil
	}
	ck := fmt.Sprintf("%g|%g|%s", variac, mains, sig.String())
	b.mu.Lock()
	c, ok := b.cond[ck]
	b.mu.Unlock()
	if ok {
		return c, nil
	}
	// Weights from readings at other settings, carried over by sample index.
	prior := map[int]float64{}
	for _, s := range base.Sample {
		prior[s] = 1
	}
	for v, rs := range by {
		if v == variac {
			continue
		}
		other, err := b.set(v, mains)
		if err != nil {
			continue
		}
		oc, err := other.Condition(rs)
		if err != nil {
			continue
		}
		w := map[int]float64{}
		for j, s := range oc.Sample {
			w[s] = oc.Weights[j]
		}
		for s := range prior {
			prior[s] *= w[s] // a sample that failed there counts as unlikely
		}
	}
	cs := *base
	cs.Weights = make([]float64, len(base.Weights))
	total := 0.0
	for j, s := range base.Sample {
		cs.Weights[j] = prior[s]
		total += prior[s]
	}
	if !(total > 0) {
		copy(cs.Weights, base.Weights)
	}
	out := &cs
	if rs := by[variac]; len(rs) > 0 {
		if out, err = cs.Condition(rs); err != nil {
			return nil, err
		}
	}
	b.mu.Lock()
	b.cond[ck] = out
	b.mu.Unlock()
	return out, nil
}

// MeasuredMains is the mains at the outlet as last read (a mains reading
// taken at full mains), or 0.
func MeasuredMains(readings []Reading) float64 {
	mains := 0.0
	for _, r := range readings {
		if r.Point == MainsKey && r.Status != Retry && r.Status != Corrected && r.Value > 50 && (r.Variac == 0 || r.Variac == 1) {
			mains = r.Value
		}
	}
	return mains
}

// effectiveVariac is the share of the mains the amp really gets at a
// variac setting: the variac's output as read at that setting over the
// mains (as measured, else the design's), or the setting itself.
func (b *BenchModel) effectiveVariac(variac float64, readings []Reading) float64 {
	if variac <= 0 || variac >= 1 {
		return variac
	}
	mains := MeasuredMains(readings)
	if mains == 0 {
		mains = b.D.Mains.Volts
	}
	for i := len(readings) - 1; i >= 0; i-- {
		r := readings[i]
		if r.Point == MainsKey && r.Variac == variac && r.Status != Retry && r.Status != Corrected && r.Value > 0 && mains > 0 {
			if f := r.Value / mains; f > 0.05 && f < 1.3 {
				return math.Round(f*1000) / 1000
			}
		}
	}
	return variac
}

// Expect implements Expecter.
func (b *BenchModel) Expect(k point.Key, variac float64, readings []Reading) (Band, bool) {
	switch k.Domain {
	case point.Insulation:
		return Band{Nominal: InsulationGoodOhms, Low: InsulationStopOhms, High: math.Inf(1),
			Note: "an insulation tester at its test voltage (500 V DC for mains equipment, common practice); a sound set reads at the top of its range"}, true
	case point.Earth:
		return Band{Nominal: 0.1, Low: 0, High: EarthMaxOhms,
			Note: "after nulling the meter leads; a multimeter reading is only an indication, no substitute for an earth-bond tester (IEC 61557-4): in-service limit 0.1 Ω plus the cord (IET Code of Practice)"}, true
	case point.Mains:
		v := b.D.Mains.Volts
		note := "the design's mains and its tolerance"
		if m := MeasuredMains(readings); m > 0 && variac > 0 && variac < 1 {
			v, note = m, "your mains reading times the variac setting, ±5 % for the variac's scale (common practice)"
			v *= variac
			return Band{Nominal: v, Low: 0.95 * v, High: 1.05 * v, Note: note}, true
		}
		if variac > 0 && variac != 1 {
			v *= variac
		}
		return Band{Nominal: v, Low: v * (1 + b.D.Mains.Tol.Lo), High: v * (1 + b.D.Mains.Tol.Hi), Note: note}, true
	case point.Discharge:
		ref := k.ID
		for _, dr := range b.Drain {
			if dr.Ref == ref {
				return Band{Nominal: 0, Low: -cold.TouchVolts, High: cold.TouchVolts, Note: dischargeNote(dr)}, true
			}
		}
		return Band{Nominal: 0, Low: -cold.TouchVolts, High: cold.TouchVolts,
			Note: fmt.Sprintf("below %g V before touching (common practice); %g V DC is the hazardous-live level (IEC 62368-1; IEC 60065 for older sets)", cold.TouchVolts, cold.HazardVolts)}, true
	case point.Cold:
		for _, c := range b.Cold {
			if c.ID == k.ID {
				return b.coldBand(c), true
			}
		}
		return Band{}, false
	case point.Bias:
		return b.biasBand(k, readings)
	case point.Part:
		return b.partBand(k)
	case point.Look:
		return Band{}, false // a sign seen or not: no band
	}
	s, err := b.Set(b.effectiveVariac(variac, readings), readings)
	if err != nil {
		return Band{}, false
	}
	// The one band function: the model's spread, the meter's loading,
	// accuracy on the range in use and resolution, the model error.
	bb, err := s.Expect(k.String(), b.opt.Meter)
	if err != nil {
		return Band{}, false
	}
	out := Band{Nominal: bb.Nominal, Low: bb.Low, High: bb.High, Why: bb.Why}
	if bb.PP != nil {
		out.PP = &Band{Nominal: bb.PP.Nominal, Low: bb.PP.Low, High: bb.PP.High, Why: bb.PP.Why}
	}
	if v := variac; v > 0 && v < 0.9 && b.M.HT != nil {
		if b.valveRectifier() != nil {
			out.Note = join(out.Note, fmt.Sprintf("at %.0f %% mains every heater runs cool, the rectifier's too: its emission limits B+, which stays low until the filament warms (emission-limited estimate)", 100*v))
		} else {
			out.Note = join(out.Note, fmt.Sprintf("at %.0f %% mains the heaters run cool and the valves barely conduct (emission-limited): B+ sits near the no-load peak", 100*v))
		}
	}
	return out, true
}

// coldBand is a cold check's band: its exact tolerance corners, read
// with the meter (accuracy on the range in use, resolution, model error:
// bands.FromSpread, the same widening as every live band).
func (b *BenchModel) coldBand(c cold.Check) Band {
	if c.Open {
		return Band{Nominal: math.Inf(1), Low: openOhms, High: math.Inf(1), Note: join("reads open (OL)", c.Note)}
	}
	bb := bands.FromSpread(point.Ohms, c.Ohms, c.Tol[0], c.Tol[1], b.opt.Meter, "tolerance corners of the parts in the path")
	return Band{Nominal: bb.Nominal, Low: bb.Low, High: bb.High, Note: c.Note, Why: bb.Why}
}

func dischargeNote(dr cold.Discharge) string {
	if dr.NoPath {
		return dr.Warning
	}
	s := fmt.Sprintf("%s (%s on %s) can hold %s; its bleed path (%s) takes it below %g V DC (hazardous-live level, IEC 62368-1) in %s and below %g V in %s",
		dr.Ref, units.Format(dr.Farads, units.Farads), dr.Across(), units.Format(math.Abs(dr.PeakVolts), units.Volts),
		units.Format(dr.BleedOhms, units.Ohms), cold.HazardVolts, cold.FormatDuration(dr.To60), cold.TouchVolts, cold.FormatDuration(dr.To10))
	if dr.Warning != "" {
		s += "; " + dr.Warning
	}
	return s
}

func join(a, b string) string {
	if a == "" {
		return b
	}
	if b == "" {
		return a
	}
	return a + "; " + b
}

// BiasStage is a fixed-bias output valve and how its idle current is read.
type BiasStage struct {
	Ref, Pot string // valve and the bias control that sets it ("" when none found)
	Section  int    // index in Model.Sections
	// SenseRef is the cathode sense resistor (≤ 10 Ω from cathode to
	// chassis), "" when there is none; SenseOhms its value.
	SenseRef             string
	SenseOhms            float64
	CathodePin, PlatePin int
	MaxWatts             float64 // rated plate dissipation
}

// BiasStages finds the fixed-bias output valves: pentodes whose grid
// returns through resistors and pots to a bias supply without passing
// through chassis.
func (b *BenchModel) BiasStages() []BiasStage {
	d := b.D
	supplies := b.M.BiasNets()
	if len(supplies) == 0 {
		return nil
	}
	var out []BiasStage
	for i, s := range b.M.Sections {
		if !s.Pentode {
			continue
		}
		p := d.ByRef[s.Ref]
		e := p.Valve.Sections[s.Section]
		reach, pot := resistiveReach(d, e["grid"])
		found := false
		for _, n := range supplies {
			found = found || reach[n]
		}
		if !found {
			continue
		}
		bs := BiasStage{Ref: s.Ref, Pot: pot, Section: i, MaxWatts: s.Type.Limits.PlateWatts}
		for _, pin := range s.Type.Pins {
			if pin.Section != s.Section {
				continue
			}
			switch pin.Electrode {
			case "cathode":
				if bs.CathodePin == 0 {
					bs.CathodePin = pin.Number
				}
			case "plate":
				bs.PlatePin = pin.Number
			}
		}
		for _, r := range d.PartsOfKind(design.Resistor) {
			a, c := r.Terminals[0].Net, r.Terminals[1].Net
			if r.Value <= 10 && ((a == e["cathode"] && c == d.Ground) || (c == e["cathode"] && a == d.Ground)) {
				bs.SenseRef, bs.SenseOhms = r.Ref, r.Value
			}
		}
		out = append(out, bs)
	}
	return out
}

// resistiveReach returns the nets reached from a net through resistors
// and pots without passing through chassis, and the first pot met.
func resistiveReach(d *design.Design, from string) (map[string]bool, string) {
	seen := map[string]bool{from: true}
	queue := []string{from}
	pot := ""
	for len(queue) > 0 {
		n := queue[0]
		queue = queue[1:]
		for _, u := range d.Nets[n] {
			p := d.ByRef[u.Ref]
			if p == nil || (p.Kind != design.Resistor && p.Kind != design.Pot) {
				continue
			}
			if p.Kind == design.Pot && pot == "" {
				pot = p.Ref
			}
			for _, t := range p.Terminals {
				if t.Net != d.Ground && !seen[t.Net] {
					seen[t.Net] = true
					queue = append(queue, t.Net)
				}
			}
		}
	}
	return seen, pot
}

// biasBand is the target idle reading of a fixed-bias output valve: the
// cathode current for BiasLow…BiasHigh of its rated plate dissipation at
// its plate-to-cathode volts (measured when the plate has been read,
// else the model's), the screen current added in the model's ratio
// Ig2/Ia, times the sense resistance for a volts reading.
func (b *BenchModel) biasBand(k point.Key, readings []Reading) (Band, bool) {
	ref, q := k.ID, k.Quantity
	var bs *BiasStage
	for _, s := range b.BiasStages() {
		if s.Ref == ref {
			bs = &s
			break
		}
	}
	if bs == nil || bs.MaxWatts <= 0 {
		return Band{}, false
	}
	s, err := b.Set(1, readings)
	if err != nil {
		return Band{}, false
	}
	op := s.NominalOP.Sections[bs.Section]
	va := op.Va - op.Vk
	src := "the model's plate volts"
	plateKey := point.LiveKey(fmt.Sprintf("%s.%d", ref, bs.PlatePin), point.DCVolts)
	for _, r := range readings {
		if r.Point == plateKey && r.Status != Retry && r.Value > 50 {
			va = r.Value - op.Vk
			src = "the plate volts you measured"
		}
	}
	if va <= 0 {
		return Band{}, false
	}
	ratio := 1.0
	if op.Ia > 0 {
		ratio += op.Ig2 / op.Ia
	}
	scale := ratio
	if q == point.DCVolts {
		if bs.SenseOhms <= 0 {
			return Band{}, false
		}
		scale *= bs.SenseOhms
	}
	at := func(f float64) float64 { return f * bs.MaxWatts / va * scale }
	note := fmt.Sprintf("idle plate current for %.0f %% of the %s plate rating (%.0f W) at %s (%s), screen current added (common practice: %.0f–%.0f %% for class AB push-pull)",
		100*BiasTarget, b.M.Sections[bs.Section].Type.Name, bs.MaxWatts, units.Format(va, units.Volts), src, 100*BiasLow, 100*BiasHigh)
	return Band{Nominal: at(BiasTarget), Low: at(BiasLow), High: at(BiasHigh), Note: note}, true
}

// partBand is the band of a part measured out of circuit (one end
// lifted, the confirm step of fault-finding): its value within its
// tolerance.
func (b *BenchModel) partBand(k point.Key) (Band, bool) {
	p := b.D.ByRef[k.ID]
	if p == nil || p.Kind != design.Resistor || p.Value <= 0 {
		return Band{}, false
	}
	return Band{Nominal: p.Value, Low: p.Value * (1 - math.Abs(p.Tol.Lo)), High: p.Value * (1 + math.Abs(p.Tol.Hi)),
		Note: "out of circuit (one end lifted): the part's own value within its tolerance"}, true
}
