package procedures

import (
	"fmt"
	"math"

	"pinwalk/expect/amp"
	"pinwalk/expect/bands"
	"pinwalk/expect/cold"
	"pinwalk/expect/point"
	"pinwalk/expect/units"
	"pinwalk/expect/valves"
)

// The thresholds behind the stop rules.
const (
	// EarthStopOhms: an earth pin to chassis reading above this stops
	// every live step (a multimeter field check after nulling the leads:
	// the protective-conductor limit for in-service testing is 0.1 Ω plus
	// the cord, about 0.2 Ω for a 2 m cord (IET Code of Practice for
	// In-service Inspection and Testing, 5th ed., from memory); 0.5 Ω
	// leaves room for a multimeter's lead and contact error).
	EarthStopOhms = 0.5
	// NearShortShare: a cold B+ reading below this share of its band's
	// low end is a near-short (common practice: a healthy B+ net reads its
	// bleeder, tens to hundreds of kΩ; a shorted reservoir reads ohms).
	NearShortShare = 0.2
	// HeaterTol: heater volts within ±10 % of rated (common practice;
	// M. J. Darby, The Radio Constructor, April 1962, from memory).
	HeaterTol = 0.10
	// HighSupplyShare: B+ above its band's top by more than this share
	// with every valve fitted means the valves are not drawing current.
	HighSupplyShare = 0.03
	// LowSupplyShare: B+ below this share of its band's low end at a
	// variac step means a short or a heavy load.
	LowSupplyShare = 0.5
	// GridLeakyVolts: a grid that should sit at 0 V reading more than
	// this positive points to a leaky coupling capacitor or grid current
	// (common practice).
	GridLeakyVolts = 0.5
	// InsulationStopOhms: mains pins joined to exposed metal on a set
	// with no protective earth below this stops the walk (the class II
	// in-service limit, 2 MΩ at 500 V DC: IET Code of Practice for
	// In-service Inspection and Testing, 5th ed., from memory).
	InsulationStopOhms = 2e6
	// InsulationGoodOhms: what a sound set reads, at or past the top of an
	// insulation tester's range (common practice).
	InsulationGoodOhms = 200e6
)

// judgement is what a reading means beyond its band.
type judgement struct {
	Consequence Consequence
	Said        string
	// Overridable: a stop that an override with a reason may let through.
	Overridable bool
	// HandOff: a stop that sends a bring-up to fault-finding from this
	// reading (a near-short found cold).
	HandOff bool
}

// judge applies the stop rules of a step to one reading. readings are
// the session's readings before this one (for the other electrodes of a
// valve already read).
func (b *BenchModel) judge(st *Step, m *Measure, v float64, band Band, has bool, readings []Reading) judgement {
	k := m.Point
	switch k.Domain {
	case point.Discharge:
		return judgeDischarge(k.ID, v)
	case point.Earth:
		if v > EarthStopOhms || math.IsInf(v, 1) {
			what := fmt.Sprintf("reads %s", FormatValue(v, "Ω"))
			if math.IsInf(v, 1) {
				what = "reads open"
			}
			return judgement{Consequence: Stop, Overridable: true, Said: fmt.Sprintf(
				"STOP: the earth pin to chassis %s (over %g Ω): this amp has no sound protective earth. Do not power it. "+
					"Check the earth lug (bare metal under it, its own fixing, tight), the cord's earth core and the plug, flexing the cord and lug while you measure, then measure again. "+
					"If the set has no mains earth by design (double insulated, two-pin inlet), override with that reason.", what, EarthStopOhms)}
		}
	case point.Insulation:
		if v < InsulationStopOhms {
			return judgement{Consequence: Stop, Said: fmt.Sprintf(
				"STOP: the mains pins to exposed metal read %s, under %s: on a set with no mains earth a knob, screw or panel a user can touch is joined to the mains side, or its insulation is breaking down. "+
					"Do not power it and do not return it. Find the path (a knob's grub screw touching the shaft, a cabinet screw into the chassis, a failed capacitor from the chassis to a metal part), mend it, then test again. "+
					"This stop cannot be overridden.", FormatValue(v, "Ω"), FormatValue(InsulationStopOhms, "Ω"))}
		}
	case point.Cold:
		if c := b.coldCheck(k.ID); c != nil && c.Kind == "b+" && has && !c.Open && v < NearShortShare*band.Low {
			return judgement{Consequence: Stop, Overridable: true, HandOff: true, Said: fmt.Sprintf(
				"STOP: %s reads %s, far below %s: a near-short on a B+ net (a shorted filter capacitor, a shorted rectifier or a wiring fault). "+
					"Do not power up. Re-check the probes and let the reading settle; if it stays low, find the short (fault-finding starts from this reading).",
				c.ID, FormatValue(v, "Ω"), FormatBand(band, "Ω"))}
		}
	case point.Mains:
		d := b.D.Mains
		if (st.Variac == 0 || st.Variac == 1) && d.Volts > 0 && v > d.Volts*(1+d.Tol.Hi+0.05) {
			return judgement{Consequence: Stop, Said: fmt.Sprintf(
				"STOP: the outlet gives %s; this amp is built for %s (%+.0f %%): on this mains its heaters, B+ and capacitors would be overstressed. Do not plug it in here: check the mains selector or the transformer tapping, or feed it through a step-down transformer or the variac set to %s.",
				FormatValue(v, "V"), FormatValue(d.Volts, "V"), 100*d.Tol.Hi, FormatValue(d.Volts, "V"))}
		}
	case point.Part:
		// The confirm step: the suspect part, one end lifted, reads within
		// its own tolerance. It has not failed as ranked; replacing it on
		// the ranking alone would leave the fault in the amp.
		if st.ID == StepConfirm && has && band.Contains(v) {
			return judgement{Consequence: Stop, Overridable: true, Said: fmt.Sprintf(
				"STOP: %s reads %s out of circuit, within its tolerance (%s): it is not confirmed as the fault. Do not replace it on the ranking alone. "+
					"Check its solder joints, the socket pin and the wiring to it (a dry joint or a broken track reads like an open part in circuit), then measure again; "+
					"override with the reason if you replace it anyway (an intermittent part).",
				k.ID, FormatValue(v, "Ω"), FormatBand(band, "Ω"))}
		}
	case point.Bias:
		if st.Live {
			if j, ok := b.judgeBias(k, v, readings); ok {
				return j
			}
		}
	case point.Live:
		if st.Live {
			return b.judgeLive(st, k, v, band, has, readings)
		}
	}
	return judgement{}
}

func judgeDischarge(ref string, v float64) judgement {
	a := math.Abs(v)
	switch {
	case a >= cold.HazardVolts:
		return judgement{Consequence: Stop, Said: fmt.Sprintf(
			"DO NOT TOUCH: %s still holds %s, at or above the %g V DC hazardous-live level (IEC 62368-1 ES1 limit; IEC 60065 for older equipment). "+
				"Discharge it again through the resistor tool and measure again. If it will not fall, your tool is not on the capacitor or its bleeder is open: keep your hands out.",
			ref, units.Format(a, units.Volts), cold.HazardVolts)}
	case a >= cold.TouchVolts:
		return judgement{Consequence: Stop, Said: fmt.Sprintf(
			"NOT YET SAFE: %s holds %s: below the %g V DC hazardous-live level but not under %g V (common practice before touching). Discharge again and measure again.",
			ref, units.Format(a, units.Volts), cold.HazardVolts, cold.TouchVolts)}
	}
	return judgement{}
}

func (b *BenchModel) coldCheck(id string) *cold.Check {
	for i := range b.Cold {
		if b.Cold[i].ID == id {
			return &b.Cold[i]
		}
	}
	return nil
}

// nominalOP is the healthy operating point at full mains.
func (b *BenchModel) nominalOP() *amp.OP {
	s, err := b.Set(1, nil)
	if err != nil {
		return nil
	}
	return s.NominalOP
}

// latest returns the newest accepted reading of a point, if any.
func latest(readings []Reading, k point.Key) (float64, bool) {
	for i := len(readings) - 1; i >= 0; i-- {
		r := readings[i]
		if r.Point == k && r.Status != Retry && r.Status != Corrected && !math.IsNaN(r.Value) {
			return r.Value, true
		}
	}
	return 0, false
}

// sectionOfPin finds the amplifying section a socket pin belongs to.
func (b *BenchModel) sectionOfPin(ref string, pin int) (int, string) {
	p := b.D.ByRef[ref]
	if p == nil || p.Valve == nil {
		return -1, ""
	}
	for _, vp := range p.Valve.Type.Pins {
		if vp.Number != pin {
			continue
		}
		for i, s := range b.M.Sections {
			if s.Ref == ref && s.Section == vp.Section {
				return i, vp.Electrode
			}
		}
		return -1, vp.Electrode
	}
	return -1, ""
}

// pinKey is the live DC-volts key of a section's electrode pin.
func (b *BenchModel) pinKey(sec int, electrode string) (point.Key, bool) {
	s := b.M.Sections[sec]
	for _, vp := range s.Type.Pins {
		if vp.Section == s.Section && vp.Electrode == electrode {
			return point.LiveKey(fmt.Sprintf("%s.%d", s.Ref, vp.Number), point.DCVolts), true
		}
	}
	return point.Key{}, false
}

// cathodeLoad is the resistance from a section's cathode net straight to
// chassis and how many valve cathodes share that net (bands.CathodeLoad).
func (b *BenchModel) cathodeLoad(sec int) (ohms float64, sharing int) {
	s := b.M.Sections[sec]
	return bands.CathodeLoad(b.D, s.Ref, s.Section)
}

// dissipation estimates a section's plate dissipation from its cathode
// current: Ia = Ik · Ia/(Ia+Ig2) (the model's share at idle), Pa = (Va −
// Vk)·Ia, with the plate and cathode volts measured where read and the
// model's otherwise. src says which readings it rests on.
func (b *BenchModel) dissipation(sec int, ik, vk float64, readings []Reading) (pa float64, src string) {
	op := b.nominalOP()
	if op == nil || sec >= len(op.Sections) {
		return 0, ""
	}
	so := op.Sections[sec]
	va, vsrc := so.Va, "the model's plate volts"
	if pk, ok := b.pinKey(sec, valves.Plate); ok {
		if v, ok := latest(readings, pk); ok {
			va, vsrc = v, "your plate reading"
		}
	}
	share := 1.0
	if so.Ia+so.Ig2 > 0 {
		share = so.Ia / (so.Ia + so.Ig2)
	}
	return math.Max(0, va-vk) * ik * share, vsrc
}

// overDissipationVia: viaCathode when the current is inferred from the
// cathode volts across the cathode resistor (Ohm's law). Those volts are
// also what an open cathode resistor gives with no current at all (the
// cathode floats up until the valve cuts itself off), and the walk
// cannot tell the two apart powered; it switches off either way (the
// safe call) and says both.
func (b *BenchModel) overDissipationVia(sec int, pa float64, from string, viaCathode bool) (judgement, bool) {
	s := b.M.Sections[sec]
	rated := s.Type.Limits.PlateWatts
	if rated <= 0 || pa <= rated {
		return judgement{}, false
	}
	if viaCathode {
		return judgement{Consequence: SwitchOff, Said: fmt.Sprintf(
			"SWITCH OFF NOW: if its cathode resistor is whole, %s (%s) is dissipating about %s, %.0f %% of its %s plate rating (%s), and it is being damaged (a red-plating valve: "+
				"a leaky coupling capacitor, a lost bias or a failing valve). An open cathode resistor reads the same with no current at all: the cold check of that resistor tells them apart. "+
				"Variac to zero, switch off, unplug; the walk goes on unpowered.",
			s.Ref, s.Type.Name, units.Format(pa, units.Watts), 100*pa/rated, units.Format(rated, units.Watts), from)}, true
	}
	return judgement{Consequence: SwitchOff, Said: fmt.Sprintf(
		"SWITCH OFF NOW: %s (%s) is dissipating about %s, %.0f %% of its %s plate rating (%s). It is being damaged (a red-plating valve): "+
			"a leaky coupling capacitor, a lost bias supply or a failing valve. Variac to zero, switch off, unplug; the walk goes on unpowered.",
		s.Ref, s.Type.Name, units.Format(pa, units.Watts), 100*pa/rated, units.Format(rated, units.Watts), from)}, true
}

// judgeBias: the idle reading of a fixed-bias output valve implies its
// plate dissipation.
func (b *BenchModel) judgeBias(k point.Key, v float64, readings []Reading) (judgement, bool) {
	for _, bs := range b.BiasStages() {
		if bs.Ref != k.ID {
			continue
		}
		ik := v
		if k.Quantity == point.DCVolts {
			if bs.SenseOhms <= 0 {
				return judgement{}, false
			}
			ik = v / bs.SenseOhms
		}
		pa, src := b.dissipation(bs.Section, ik, v*boolF(k.Quantity == point.DCVolts), readings)
		return b.overDissipationVia(bs.Section, pa, fmt.Sprintf("from %s through %s and %s", FormatValue(v, k.Unit()), senseName(bs), src), false)
	}
	return judgement{}, false
}

func boolF(b bool) float64 {
	if b {
		return 1
	}
	return 0
}

func senseName(bs BiasStage) string {
	if bs.SenseRef == "" {
		return "the meter in series"
	}
	return fmt.Sprintf("%s (%s)", bs.SenseRef, units.Format(bs.SenseOhms, units.Ohms))
}

// judgeLive applies the switch-off rules to a live reading.
func (b *BenchModel) judgeLive(st *Step, k point.Key, v float64, band Band, has bool, readings []Reading) judgement {
	if ref, pin, ok := k.Valve(); ok {
		sec, electrode := b.sectionOfPin(ref, pin)
		if contains(st.Pulled, ref) {
			// The valve is out: its grid pin shows the bias supply alone.
			if electrode == valves.Grid && k.Quantity == point.DCVolts && has && band.Nominal < -1 && v > -1 {
				return judgement{Consequence: Stop, Said: fmt.Sprintf(
					"STOP: %s's grid reads %s where about %s is expected: no bias reaches it. Do not fit the output valves: check the bias supply, its rectifier and filter, the bias control and the grid resistors (unplugged and discharged).",
					ref, FormatValue(v, "V"), FormatValue(band.Nominal, "V"))}
			}
			return judgement{}
		}
		switch {
		case electrode == valves.Heater && k.Quantity == point.ACVolts:
			return b.judgeHeater(st, ref, v, band, has)
		case sec >= 0 && k.Quantity == point.DCVolts:
			return b.judgeElectrode(sec, electrode, k, v, readings)
		}
		return judgement{}
	}
	// A bias supply's output (a bias-supply part or a bias rectifier's
	// reservoir) at a small share of its expected negative volts: the
	// output valves have no bias (an open bias diode, a dead supply).
	if k.Quantity == point.DCVolts && has && band.High < -1 && v > LowSupplyShare*band.High && contains(b.M.BiasNets(), k.ID) {
		if len(st.Pulled) == 0 && len(b.BiasStages()) > 0 {
			return judgement{Consequence: SwitchOff, Said: fmt.Sprintf(
				"SWITCH OFF NOW: the bias supply %s reads %s where %s is expected: the output valves have no bias and will red-plate. Variac to zero, switch off, unplug; check the bias diode, its reservoir and filter and the bias winding (unplugged and discharged).",
				k.ID, FormatValue(v, "V"), FormatBand(band, "V"))}
		}
		return judgement{Consequence: Stop, Said: fmt.Sprintf(
			"STOP: the bias supply %s reads %s where %s is expected: no bias. Do not fit the output valves: check the bias diode, its reservoir and filter and the bias winding (unplugged and discharged).",
			k.ID, FormatValue(v, "V"), FormatBand(band, "V"))}
	}
	// A supply net.
	if k.Quantity != point.DCVolts || !has || !b.isSupplyNet(k.ID) {
		return judgement{}
	}
	switch {
	case len(st.Pulled) == 0 && band.High > 0 && v > band.High*(1+HighSupplyShare):
		return judgement{Consequence: SwitchOff, Said: fmt.Sprintf(
			"SWITCH OFF NOW: %s reads %s, above its band (%s) with every valve fitted: the valves are not drawing current (no heaters, an open cathode or plate circuit, a missing rectifier load) and the filter capacitors may be over their voltage rating. Variac to zero, switch off, unplug.",
			k.ID, FormatValue(v, "V"), FormatBand(band, "V"))}
	case st.Kind == KindVariac && band.Low > 0 && v < LowSupplyShare*band.Low:
		return judgement{Consequence: SwitchOff, Said: fmt.Sprintf(
			"SWITCH OFF NOW: %s reads %s, far below its band (%s): a short or a heavy load on the supply (a shorted capacitor, a valve drawing far too much). Variac to zero, switch off, unplug.",
			k.ID, FormatValue(v, "V"), FormatBand(band, "V"))}
	}
	return judgement{}
}

func (b *BenchModel) isSupplyNet(net string) bool {
	if b.M.HT == nil {
		return false
	}
	for _, n := range b.M.HT.Nets {
		if n == net {
			return true
		}
	}
	return false
}

func (b *BenchModel) judgeHeater(st *Step, ref string, v float64, band Band, has bool) judgement {
	p := b.D.ByRef[ref]
	if p == nil || p.Valve == nil {
		return judgement{}
	}
	rated := p.Valve.HeaterVolts
	if rated <= 0 {
		rated = p.Valve.Type.Heater.Volts
	}
	if rated <= 0 {
		return judgement{}
	}
	if st.Variac >= 0.9 || st.Variac == 0 {
		// Outside ±10 % of rated and outside what this design's own
		// heater winding gives (a design running its heaters at 6.9 V is
		// a rating finding of check, not a fault on the bench).
		if (v < rated*(1-HeaterTol) || v > rated*(1+HeaterTol)) && !(has && band.Contains(v)) {
			return judgement{Consequence: SwitchOff, Said: fmt.Sprintf(
				"SWITCH OFF NOW: %s's heater reads %s, outside ±%.0f %% of its %s rating (common practice): an underheated cathode strips under B+, an overheated one shortens its life; a heater near 0 V is an open heater or a wiring fault. Variac to zero, switch off, unplug.",
				ref, FormatValue(v, "V"), 100*HeaterTol, FormatValue(rated, "V"))}
		}
		return judgement{}
	}
	if has && band.Low > 0 && v < 0.5*band.Low {
		return judgement{Consequence: SwitchOff, Said: fmt.Sprintf(
			"SWITCH OFF NOW: %s's heater reads %s where about %s is expected at %.0f %% mains: an open heater or a wiring fault. Variac to zero, switch off, unplug.",
			ref, FormatValue(v, "V"), FormatValue(band.Nominal, "V"), 100*st.Variac)}
	}
	return judgement{}
}

func (b *BenchModel) judgeElectrode(sec int, electrode string, k point.Key, v float64, readings []Reading) judgement {
	op := b.nominalOP()
	if op == nil || sec >= len(op.Sections) {
		return judgement{}
	}
	so := op.Sections[sec]
	s := b.M.Sections[sec]
	switch electrode {
	case valves.Cathode:
		if rk, n := b.cathodeLoad(sec); rk > 0 {
			pa, src := b.dissipation(sec, v/rk/float64(n), v, readings)
			if j, ok := b.overDissipationVia(sec, pa, fmt.Sprintf("cathode %s across %s, %s", FormatValue(v, "V"), FormatValue(rk, "Ω"), src), true); ok {
				return j
			}
		}
	case valves.Plate:
		if ck, ok := b.pinKey(sec, valves.Cathode); ok {
			if vk, ok := latest(readings, ck); ok {
				if rk, n := b.cathodeLoad(sec); rk > 0 {
					pa := math.Max(0, v-vk) * vk / rk / float64(n)
					if so.Ia+so.Ig2 > 0 {
						pa *= so.Ia / (so.Ia + so.Ig2)
					}
					if j, ok := b.overDissipationVia(sec, pa, fmt.Sprintf("plate %s, cathode %s across %s", FormatValue(v, "V"), FormatValue(vk, "V"), FormatValue(rk, "Ω")), true); ok {
						return j
					}
				}
			}
		}
	case valves.Grid:
		vk, from := so.Vk, "the model's cathode volts"
		if ck, ok := b.pinKey(sec, valves.Cathode); ok {
			if r, ok := latest(readings, ck); ok {
				vk, from = r, "your cathode reading"
			}
		}
		if so.Vg-so.Vk < -0.5 && v-vk > 0.1 {
			return judgement{Consequence: SwitchOff, Said: fmt.Sprintf(
				"SWITCH OFF NOW: %s's grid reads %s, positive of its cathode (%s, %s) where it should sit %s negative: the valve is conducting hard with no bias (a lost bias supply, a leaky coupling capacitor). Variac to zero, switch off, unplug.",
				s.Ref, FormatValue(v, "V"), FormatValue(vk, "V"), from, FormatValue(so.Vk-so.Vg, "V"))}
		}
		if math.Abs(so.Vg) < 0.1 && v > GridLeakyVolts {
			return judgement{Said: fmt.Sprintf("note: %s's grid reads %s where it should sit at 0 V: positive DC on a grid points to a leaky coupling capacitor or grid current (common practice); watch the cathode reading.", s.Ref, FormatValue(v, "V"))}
		}
	}
	return judgement{}
}
