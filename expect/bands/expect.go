package bands

import (
	"fmt"
	"math"

	"pinwalk/expect/amp"
	"pinwalk/expect/design"
	"pinwalk/expect/units"
	"pinwalk/expect/valves"
)

// Expect returns the band a reading of the point key ("V3.3 dc_volts")
// should fall in on a healthy amplifier, read with meter mt (zero: the
// set's Options.Meter, else DefaultMeter):
//
//  1. the model's spread: the 2.5th and 97.5th percentiles of the
//     samples (weighted, when the set is conditioned on readings, about
//     the weighted median), or the nominal value alone without samples;
//  2. for DC volts, the meter's loading of the net (its input resistance
//     re-solved at nominal) when it moves the reading by over 1 %;
//  3. the model error of the kind of point (ModelErrorOf) and the meter's
//     error limit on the range in use, combined in quadrature
//     (readingBand);
//  4. the low end of a current, an AC reading or a resistance held at 0,
//     the ends rounded outwards to the display's resolution, a nominal
//     below one count flagged BelowResolution;
//  5. for ripple, the peak-to-peak band (PP) beside the rms one;
//  6. a cathode pin whose current returns through resistors to chassis
//     capped at the volts of the valve's rated plate dissipation (capCathode).
//
// Band.Why says each of these in words. It is safe for concurrent use.
func (s *Set) Expect(key string, mt Meter) (Band, error) {
	i, ok := s.Index(key)
	if !ok {
		return Band{}, fmt.Errorf("bands: no point %q", key)
	}
	if mt.isZero() {
		mt = s.opt.Meter
	}
	if mt.isZero() {
		mt = DefaultMeter()
	}
	pd := s.Points[i]
	var why []string
	nom := s.Nominal[i]
	lo, hi := nom, nom
	conditioned := len(s.Readings) > 0
	switch {
	case len(s.Values) == 0:
		why = append(why, "nominal solve only (no Monte Carlo samples): tolerances not included")
	default:
		lo, hi = s.Percentiles(i, 0.025, 0.975)
		if conditioned {
			nom, _ = s.Percentiles(i, 0.5, 0.5)
		}
		why = append(why, fmt.Sprintf("tolerances: 95 %% of %d Monte Carlo samples (parts, transformer, mains, valve spread)", len(s.Values)))
	}
	lo, hi = math.Min(lo, nom), math.Max(hi, nom)
	why = append(why, s.conditionWords()...)
	if conditioned {
		last := map[string]int{} // each point once, at its latest reading
		for n, r := range s.Readings {
			last[r.Key] = n
		}
		for n, r := range s.Readings {
			j, ok := s.Index(r.Key)
			if !ok || last[r.Key] != n {
				continue
			}
			q := s.Points[j].Quantity
			rr := mt.RangeFor(q, r.Value)
			why = append(why, fmt.Sprintf("narrowed by your %s reading, %s", s.Points[j].ID, FormatReading(r.Value, q, rr.Res)))
		}
		switch {
		case s.Misfit:
			why = append(why, "the readings do not fit a healthy amplifier: "+s.Reason)
		case s.Degenerate:
			why = append(why, fmt.Sprintf("%s: the readings' weight is eased so that about %d samples still carry the band", s.Reason, MinESS))
		}
	}
	if pd.Quantity == amp.DCVolts {
		if ls, err := s.loadingOf(mt, []string{key}); err == nil && len(ls) == 1 && ls[0].Significant {
			l := ls[0]
			shift := func(x float64) float64 { return x + (l.Loaded - l.Unloaded) }
			if math.Abs(l.Unloaded) > 0.5 {
				f := l.Loaded / l.Unloaded
				shift = func(x float64) float64 { return x * f }
			}
			nom, lo, hi = shift(nom), shift(lo), shift(hi)
			lo, hi = math.Min(lo, hi), math.Max(lo, hi)
			why = append(why, fmt.Sprintf("the meter's %s input pulls net %s from %s to %s", amp.FormatValue(mt.Ohms(), amp.Ohms),
				l.Net, amp.FormatValue(l.Unloaded, amp.DCVolts), amp.FormatValue(l.Loaded, amp.DCVolts)))
		}
	}
	me := ModelErrorOf(pd, s.netElectrode[pd.Net])
	b := readingBand(pd.Quantity, nom, lo, hi, me, mt)
	b.Why = append(why, b.Why...)
	if pd.Quantity == amp.RippleVolts {
		s.addPP(&b, pd)
	}
	s.capCathode(pd, &b)
	if conditioned {
		s.holdToReadings(i, &b)
	}
	return b, nil
}

// holdToReadings keeps a conditioned DC-volts band on the right side of
// the readings it was conditioned on: when point i's net is fed from a
// read net through a resistor or a choke (seriesFed) and lies below it in
// every sample (and at nominal) — a screen fed from B3 through its
// stopper — its band ends at that reading at most, and when it lies above
// in every sample (the net that feeds B3), it starts at the reading at
// least. A reading outside the band it would hold (a fault's) holds
// nothing: the misfit says so instead. The same meter on the same function reads both
// points, so its gain error moves them alike: a point the circuit holds
// below a net reads below it (the counts' last digit aside). Without the
// hold, the model error and the meter's, added in quadrature to a spread
// already narrowed by the reading, would reach past the reading itself.
func (s *Set) holdToReadings(i int, b *Band) {
	pd := s.Points[i]
	if pd.Quantity != amp.DCVolts {
		return
	}
	for _, r := range s.Readings {
		j, ok := s.Index(r.Key)
		if !ok || j == i || s.Points[j].Quantity != amp.DCVolts {
			continue
		}
		if !s.seriesFed(pd.Net, s.Points[j].Net) {
			continue
		}
		below, above := s.Nominal[i] <= s.Nominal[j], s.Nominal[i] >= s.Nominal[j]
		for k, row := range s.Values {
			if s.Weights[k] <= 0 {
				continue
			}
			below = below && row[i] <= row[j]
			above = above && row[i] >= row[j]
		}
		if below == above { // neither, or the same net
			continue
		}
		q := s.Points[j].Quantity
		v := FormatReading(r.Value, q, b.Range.Res)
		switch {
		case below && b.High > r.Value && r.Value > b.Low:
			b.High = math.Max(b.Low, math.Floor(r.Value/b.Range.Res+1e-9)*b.Range.Res)
			b.Nominal = math.Min(b.Nominal, b.High)
			b.Why = append(b.Why, fmt.Sprintf("held at or below your %s reading, %s: the circuit keeps %s below %s", s.Points[j].ID, v, pd.ID, s.Points[j].ID))
		case above && b.Low < r.Value && r.Value < b.High:
			b.Low = math.Min(b.High, math.Ceil(r.Value/b.Range.Res-1e-9)*b.Range.Res)
			b.Nominal = math.Max(b.Nominal, b.Low)
			b.Why = append(b.Why, fmt.Sprintf("held at or above your %s reading, %s: the circuit keeps %s above %s", s.Points[j].ID, v, pd.ID, s.Points[j].ID))
		}
	}
}

// capCathode caps the band of a cathode pin whose current returns through
// resistors to chassis at the volts the rated plate dissipation allows at
// the set's operating point (a wider band would accept a red-plating
// valve as in band), and never lets it go below 0 V.
func (s *Set) capCathode(pd amp.PointDef, b *Band) {
	if pd.Quantity != amp.DCVolts || pd.Electrode != valves.Cathode || pd.Section < 0 || s.d == nil || s.NominalOP == nil || pd.Section >= len(s.NominalOP.Sections) {
		return
	}
	p := s.d.ByRef[pd.Valve]
	if p == nil || p.Valve == nil {
		return
	}
	sec := ""
	for _, vp := range p.Valve.Type.Pins {
		if vp.Number == pd.Pin {
			sec = vp.Section
		}
	}
	rk, n := CathodeLoad(s.d, pd.Valve, sec)
	st := p.Valve.Type
	if u := st.SectionType(sec, s.d.SideValves); u != nil {
		st = u
	}
	rated := st.Limits.PlateWatts
	so := s.NominalOP.Sections[pd.Section]
	va := so.Va - so.Vk
	if rk <= 0 || rated <= 0 || va <= 0 {
		return
	}
	// The cap holds only where the cathode volts are the section's current
	// through the design's cathode load (Ohm's law). Where they are not (a
	// cathode resistor open and the cathode floating, a fault model), the
	// cap would contradict the prediction, so it is left off.
	if want := (so.Ia + so.Ig2) * rk * float64(n); math.Abs(so.Vk-want) > 0.2*math.Max(math.Abs(so.Vk), want)+0.1 {
		return
	}
	share := 1.0
	if so.Ia > 0 {
		share = (so.Ia + so.Ig2) / so.Ia
	}
	vmax := rated / va * share * rk * float64(n)
	if r := b.Range.Res; r > 0 {
		vmax = math.Floor(vmax/r+1e-9) * r // a whole count: the meter shows no finer
	}
	b.Low = math.Max(0, b.Low)
	if b.High > vmax && b.Low <= vmax {
		b.High = vmax
		b.Why = append(b.Why, fmt.Sprintf("capped at %s: the cathode volts of the rated %s plate dissipation",
			amp.FormatValue(vmax, amp.DCVolts), units.Format(rated, units.Watts)))
		if b.Nominal > vmax {
			b.Nominal = vmax
		}
	}
}

// seriesFed reports whether nets a and b are different nets joined by a
// resistor or a choke.
func (s *Set) seriesFed(a, b string) bool {
	if s.d == nil || a == "" || b == "" || a == b {
		return false
	}
	for _, u := range s.d.Nets[a] {
		p := s.d.ByRef[u.Ref]
		if p == nil || (p.Kind != design.Resistor && p.Kind != design.Choke) || len(p.Terminals) < 2 {
			continue
		}
		x, y := p.Terminals[0].Net, p.Terminals[1].Net
		if (x == a && y == b) || (x == b && y == a) {
			return true
		}
	}
	return false
}

// CathodeLoad is the resistance from a valve section's cathode net
// straight to chassis and how many valve cathodes share that net, or 0
// when the cathode does not return to chassis through resistors alone
// (then its volts do not give its current).
func CathodeLoad(d *design.Design, ref, section string) (ohms float64, sharing int) {
	p := d.ByRef[ref]
	if p == nil || p.Valve == nil {
		return 0, 0
	}
	net := p.Valve.Sections[section][valves.Cathode]
	if net == "" || net == d.Ground {
		return 0, 0
	}
	g := 0.0
	for _, u := range d.Nets[net] {
		q := d.ByRef[u.Ref]
		if q == nil {
			continue
		}
		switch q.Kind {
		case design.Resistor:
			a, c := q.Terminals[0].Net, q.Terminals[1].Net
			if (a == net && c == d.Ground) || (c == net && a == d.Ground) {
				if q.Value > 0 {
					g += 1 / q.Value
				}
			} else if a != c {
				return 0, 0 // a cathode fed from elsewhere too
			}
		case design.Capacitor, design.Valve:
		default:
			return 0, 0
		}
	}
	for _, v := range d.Valves() {
		for _, secNets := range v.Valve.Sections {
			if secNets[valves.Cathode] == net {
				sharing++
			}
		}
	}
	if g == 0 || sharing == 0 {
		return 0, 0
	}
	return 1 / g, sharing
}

// conditionWords describe the bench conditions of the set.
func (s *Set) conditionWords() []string {
	var out []string
	c := s.Cond
	if v := c.Variac; v > 0 && v != 1 {
		out = append(out, fmt.Sprintf("variac at %.0f %% of the mains", 100*v))
		if v < 0.9 {
			out = append(out, "heaters cool: valve currents are emission-limited estimates")
		}
	}
	if s.opt.FixedMains && c.MainsVolts > 0 {
		out = append(out, "mains as measured, "+amp.FormatValue(c.MainsVolts, amp.ACVolts))
	} else if s.d != nil {
		out = append(out, fmt.Sprintf("mains %s sampled within %+.0f/%+.0f %%", amp.FormatValue(s.d.Mains.Volts, amp.ACVolts),
			100*s.d.Mains.Tol.Lo, 100*s.d.Mains.Tol.Hi))
	}
	return out
}

// addPP sets the peak-to-peak band of a ripple reading: the rms band
// scaled by the nominal waveform's ratio of peak-to-peak to rms (the full
// simulation's; a sawtooth has 2√3 ≈ 3.46).
func (s *Set) addPP(b *Band, pd amp.PointDef) {
	op := s.NominalOP
	if op == nil || op.Supply == nil {
		return
	}
	for _, n := range op.Supply.Nets {
		if n.Net != pd.Net || !(n.RippleRms > 0) || !(n.RipplePP > 0) {
			continue
		}
		k := n.RipplePP / n.RippleRms
		pp := &Band{Nominal: b.Nominal * k, Low: b.Low * k, High: b.High * k, Quantity: amp.RippleVolts, Function: "peak to peak (oscilloscope)"}
		b.PP = pp
		b.Why = append(b.Why, fmt.Sprintf("peak to peak on a scope %s – %s: the rms band times the simulated waveform's pp/rms ratio, %.2f",
			amp.FormatValue(pp.Low, amp.RippleVolts), amp.FormatValue(pp.High, amp.RippleVolts), k))
	}
}

// FromSpread returns the band of a reading of quantity whose model value
// is nominal, lying within lo…hi by the parts' tolerances (a cold
// resistance's tolerance corners, say), read with meter mt (zero:
// DefaultMeter), with the model error of the quantity (ModelErrorOf with
// no electrode) — the same widening, clamping and rounding as Set.Expect.
// why is put first in Band.Why.
func FromSpread(quantity string, nominal, lo, hi float64, mt Meter, why ...string) Band {
	lo, hi = math.Min(lo, nominal), math.Max(hi, nominal)
	b := readingBand(quantity, nominal, lo, hi, ModelErrorOf(amp.PointDef{Quantity: quantity}, ""), mt)
	b.Why = append(append([]string(nil), why...), b.Why...)
	return b
}

// Format prints the band as the meter shows it: "415 V – 467 V", "under
// 0.4 Ω" when the nominal is below the meter's resolution and the band
// starts at 0.
func (b Band) Format() string {
	res := b.Range.Res
	if b.BelowResolution && b.Low == 0 {
		return "under " + FormatReading(b.High, b.Quantity, res)
	}
	return FormatReading(b.Low, b.Quantity, res) + " – " + FormatReading(b.High, b.Quantity, res)
}

// FormatNominal prints the nominal value as the meter shows it: 0 when it
// is below one count of the range.
func (b Band) FormatNominal() string {
	if b.BelowResolution {
		return FormatReading(0, b.Quantity, b.Range.Res)
	}
	return FormatReading(b.Nominal, b.Quantity, b.Range.Res)
}
