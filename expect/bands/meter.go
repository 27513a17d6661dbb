package bands

import (
	"fmt"
	"math"
	"strings"

	"pinwalk/expect/amp"
	"pinwalk/expect/design"
	"pinwalk/expect/units"
)

// Meter is the voltmeter a reading is taken with: its input resistance
// (which loads the net it touches) and its accuracy.
type Meter struct {
	Name string
	// InputOhms is a digital meter's input resistance. An analogue meter
	// gives OhmsPerVolt and the RangeVolts in use instead: its input
	// resistance is their product.
	InputOhms               float64
	OhmsPerVolt, RangeVolts float64
	// AccuracyPct is a digital meter's accuracy in percent of reading, or
	// an analogue meter's in percent of full scale (RangeVolts). Digits
	// adds that many counts of the last digit of a display with Counts
	// counts, autoranging in decades.
	AccuracyPct, Digits float64
	Counts              int
	// Accuracy on the other functions, each ± % of reading + digits on the
	// range in use; a zero Spec takes the typical figure (TypicalSpecs).
	// DC volts are AccuracyPct and Digits above.
	ACVolts, DCAmps, ACAmps, Resistance Spec
}

// Typical meters (common practice; the figures of a typical handheld
// multimeter and a typical moving-coil multimeter, not of any one model).
var (
	// DigitalMeter: 10 MΩ input, DC volts ±(0.5 % + 2 digits), a
	// 6000-count display (ranges 600 mV, 6 V, 60 V, 600 V and 1000 V on DC
	// volts); the other functions at TypicalSpecs.
	DigitalMeter = Meter{Name: "10 MΩ digital", InputOhms: 10e6, AccuracyPct: 0.5, Digits: 2, Counts: 6000}
	// analogueAccuracyPct: ±3 % of full scale on DC volts.
	analogueAccuracyPct = 3.0
)

// DefaultMeter returns DigitalMeter.
func DefaultMeter() Meter { return DigitalMeter }

// ParseMeter reads a meter description: an input resistance for a
// digital meter ("10M", "11MΩ", "1M"; accuracy as DigitalMeter), or an
// analogue meter's sensitivity and range ("20k/V:500V", "1000/V:250V";
// ±3 % of full scale). The empty string gives DefaultMeter.
func ParseMeter(s string) (Meter, error) {
	s = strings.TrimSpace(s)
	if s == "" {
		return DefaultMeter(), nil
	}
	if i := strings.Index(strings.ToLower(s), "/v"); i >= 0 {
		rest := s[i+2:]
		if !strings.HasPrefix(rest, ":") {
			return Meter{}, fmt.Errorf("meter %q: an analogue meter needs the range in use, like 20k/V:500V", s)
		}
		opv, err := units.Parse(s[:i], units.Ohms)
		if err != nil || opv < 100 || opv > 1e7 {
			return Meter{}, fmt.Errorf("meter %q: expected a sensitivity in ohms per volt, like 20k/V", s)
		}
		rng, err := units.Parse(rest[1:], units.Volts)
		if err != nil || rng <= 0 || rng > 10000 {
			return Meter{}, fmt.Errorf("meter %q: expected a range in volts after the colon, like :500V", s)
		}
		return Meter{Name: fmt.Sprintf("%s/V analogue on the %s range", units.Format(opv, units.Ohms), units.Format(rng, units.Volts)),
			OhmsPerVolt: opv, RangeVolts: rng, AccuracyPct: analogueAccuracyPct}, nil
	}
	r, err := units.Parse(s, units.Ohms)
	if err != nil || r < 1e3 || r > 1e13 {
		return Meter{}, fmt.Errorf("meter %q: expected a digital meter's input resistance like 10M, or an analogue meter like 20k/V:500V", s)
	}
	m := DigitalMeter
	m.InputOhms = r
	m.Name = units.Format(r, units.Ohms) + " digital"
	return m, nil
}

// Ohms returns the meter's input resistance.
func (mt Meter) Ohms() float64 {
	if mt.OhmsPerVolt > 0 {
		return mt.OhmsPerVolt * mt.RangeVolts
	}
	return mt.InputOhms
}

// Accuracy returns the meter's error limit, in volts, for a DC-volts
// reading x (ErrorLimit on DC volts).
func (mt Meter) Accuracy(x float64) float64 {
	e, _ := mt.ErrorLimit(amp.DCVolts, x)
	return e
}

// isZero reports whether the meter was left unset.
func (mt Meter) isZero() bool { return mt.InputOhms == 0 && mt.OhmsPerVolt == 0 }

// Loading is the effect of a meter on one DC-volts point.
type Loading struct {
	Key              string
	Net              string
	Unloaded, Loaded float64 // volts: nominal, and as read through the meter
	// Change is (Loaded − Unloaded)/|Unloaded| (0 when Unloaded is 0).
	Change float64
	// Significant: the meter moves the reading by more than 1 % (and by
	// more than a millivolt).
	Significant bool
}

// Loading re-solves the nominal amplifier, at the set's conditions, with
// the meter's input resistance from each DC-volts point's net to chassis
// in turn, and returns every DC-volts point's loaded reading. The meter
// is placed in the model's meter slot of the net (amp.Model.MeterSlot).
func (s *Set) Loading(mt Meter) ([]Loading, error) {
	var keys []string
	for _, pd := range s.Points {
		if pd.Quantity == amp.DCVolts {
			keys = append(keys, pd.Key())
		}
	}
	return s.loadingOf(mt, keys)
}

// loadingOf computes the loading for the given DC-volts point keys.
func (s *Set) loadingOf(mt Meter, keys []string) ([]Loading, error) {
	return meterLoading(s.d, s.opt, s.NominalOP, s.Points, s.index, mt, keys)
}

func meterLoading(d *design.Design, opt Options, nom *amp.OP, points []amp.PointDef, index map[string]int, mt Meter, keys []string) ([]Loading, error) {
	if mt.isZero() {
		mt = DefaultMeter()
	}
	w, err := newBlockSolver(d, opt, nom)
	if err != nil {
		return nil, err
	}
	base := w.pris.Clone()
	if opt.Values != nil {
		if err := opt.Values(w.m, base); err != nil {
			return nil, err
		}
	}
	byNet := map[string]float64{}
	var out []Loading
	for _, key := range keys {
		i, ok := index[key]
		if !ok {
			return nil, fmt.Errorf("bands: no point %q", key)
		}
		pd := points[i]
		if pd.Quantity != amp.DCVolts {
			continue
		}
		unloaded := w.m.Value(nom, pd)
		loaded, done := byNet[pd.Net]
		if !done {
			slot, ok := w.m.MeterSlot(pd.Net)
			if !ok {
				continue
			}
			v := base.Clone()
			v.Slot[slot] = mt.Ohms()
			w.s.SetWarm(nom.V)
			var op amp.OP
			if err := w.s.Solve(opt.Cond, v, true, &op); err != nil {
				return nil, fmt.Errorf("meter on %s: %w", pd.Net, err)
			}
			loaded, _ = w.m.NetVolts(&op, pd.Net)
			byNet[pd.Net] = loaded
		}
		l := Loading{Key: key, Net: pd.Net, Unloaded: unloaded, Loaded: loaded}
		if unloaded != 0 {
			l.Change = (loaded - unloaded) / math.Abs(unloaded)
		}
		l.Significant = math.Abs(loaded-unloaded) > 0.01*math.Abs(unloaded) && math.Abs(loaded-unloaded) > 1e-3
		out = append(out, l)
	}
	return out, nil
}
