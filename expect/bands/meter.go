package bands

import (
	"fmt"
	"math"
	"strings"
	"sync"

	"pinwalk/expect/amp"
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

// loadingOf computes the loading for the given DC-volts point keys. The
// loaded volts of each net are solved once per meter input resistance and
// kept (meterCache): a report asks for every point's band, each of which
// wants its net's loading.
func (s *Set) loadingOf(mt Meter, keys []string) ([]Loading, error) {
	if mt.isZero() {
		mt = DefaultMeter()
	}
	c := s.meters
	if c == nil {
		c = &meterCache{}
	}
	c.mu.Lock()
	defer c.mu.Unlock()
	ml, err := c.get(s, mt.Ohms())
	if err != nil {
		return nil, err
	}
	var out []Loading
	var prog *progress
	if len(keys) > 1 {
		prog = &progress{total: len(keys), stage: "meter loading", f: s.opt.Progress}
	}
	for _, key := range keys {
		prog.step()
		i, ok := s.index[key]
		if !ok {
			return nil, fmt.Errorf("bands: no point %q", key)
		}
		pd := s.Points[i]
		if pd.Quantity != amp.DCVolts {
			continue
		}
		unloaded := ml.w.m.Value(s.NominalOP, pd)
		loaded, ok, err := ml.loaded(s, pd.Net)
		if err != nil {
			return nil, err
		}
		if !ok {
			continue
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

// meterCache keeps, per meter input resistance, one solver for the
// nominal amplifier and the loaded volts of every net solved so far. A
// conditioned copy of a Set shares it: the loading depends only on the
// design, the options and the nominal point, which conditioning keeps.
type meterCache struct {
	mu     sync.Mutex
	byOhms map[float64]*meterLoads
}

type meterLoads struct {
	ohms  float64
	w     *blockSolver
	base  *amp.Values
	byNet map[string]float64
}

func (c *meterCache) get(s *Set, ohms float64) (*meterLoads, error) {
	if ml, ok := c.byOhms[ohms]; ok {
		return ml, nil
	}
	w, err := newBlockSolver(s.d, s.opt, s.NominalOP)
	if err != nil {
		return nil, err
	}
	base := w.pris.Clone()
	if s.opt.Values != nil {
		if err := s.opt.Values(w.m, base); err != nil {
			return nil, err
		}
	}
	ml := &meterLoads{ohms: ohms, w: w, base: base, byNet: map[string]float64{}}
	if c.byOhms == nil {
		c.byOhms = map[float64]*meterLoads{}
	}
	c.byOhms[ohms] = ml
	return ml, nil
}

// loaded solves the nominal amplifier with the meter from net to chassis
// (its meter slot, amp.Model.MeterSlot); ok is false for a net with no
// meter slot.
func (ml *meterLoads) loaded(s *Set, net string) (v float64, ok bool, err error) {
	if v, ok := ml.byNet[net]; ok {
		return v, true, nil
	}
	slot, ok := ml.w.m.MeterSlot(net)
	if !ok {
		return 0, false, nil
	}
	old := ml.base.Slot[slot]
	ml.base.Slot[slot] = ml.ohms
	defer func() { ml.base.Slot[slot] = old }()
	ml.w.s.SetWarm(s.NominalOP.V)
	var op amp.OP
	if err := ml.w.s.Solve(s.opt.Cond, ml.base, true, &op); err != nil {
		return 0, false, fmt.Errorf("meter on %s: %w", net, err)
	}
	v, _ = ml.w.m.NetVolts(&op, net)
	ml.byNet[net] = v
	return v, true, nil
}
