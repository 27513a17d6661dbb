package procedures

import (
	"fmt"
	"math"
	"sort"
	"strconv"
	"strings"

	"pinwalk/expect/amp"
	"pinwalk/expect/bands"
	"pinwalk/expect/cold"
	"pinwalk/expect/design"
	"pinwalk/expect/point"
	"pinwalk/expect/units"
	"pinwalk/expect/valves"
)

// Step ids of the fixed steps.
const (
	StepBriefing = "briefing"
	StepMeter    = "meter-proof"
	StepEarth    = "earth"
	StepHeaters  = "heaters"
	StepMains    = "mains"
	StepSupply   = "supply"
	StepSummary  = "summary"
	StepIntake   = "intake"
	StepVisual   = "visual"
	// StepIsolation: the isolation transformer of a hot-chassis set.
	StepIsolation = "isolation-transformer"
)

// meterRatings are common meter voltage ratings, volts.
var meterRatings = []float64{600, 1000, 1500}

// MeterRating returns the smallest common meter voltage rating above the
// highest voltage in the amp, with 10 % margin (common practice).
func MeterRating(highest float64) float64 {
	for _, r := range meterRatings {
		if r >= 1.1*highest {
			return r
		}
	}
	return math.Ceil(1.1*highest/500) * 500
}

// safetySteps returns the briefing, meter proof, discharge and earth steps
// shared by every procedure, and the ids a live step must wait for.
func safetySteps(b *BenchModel) (steps []*Step, gate []string) {
	hi := b.HighestVolts()
	rating := MeterRating(hi)
	brief := &Step{ID: StepBriefing, Kind: KindBriefing, Safety: true,
		Title: "Safety briefing",
		Instruction: fmt.Sprintf("This amplifier holds lethal voltages: up to %s at switch-on (the cold-start peak at high mains), and its filter capacitors keep their charge after power-off. "+
			"Work with one hand (the other away from the chassis), with insulated, shrouded probes (IEC/EN 61010-031; GS38 tips) and a meter rated CAT II or better for at least %s (above %s, including the cold-start peak). "+
			"These steps do not replace training: defer to local codes and licensed practice. Confirm when you have read this.",
			units.Format(hi, units.Volts), units.Format(rating, units.Volts), units.Format(hi, units.Volts)),
		Cautions: []string{LiveCaution},
		Why:      "Most bench accidents happen on the first touch of a charged capacitor or a live chassis; the meter and probes must outrate the highest voltage present, which is the switch-on peak before the valves warm up, not the running B+.",
	}
	if hot, why := b.D.HotChassis(); hot {
		// Said first, before anything else is touched: the walk enforces
		// it at the first live step (the isolation-transformer step).
		brief.Instruction = "THIS SET HAS A LIVE CHASSIS: " + why + ". Its chassis, and anything screwed to it, may be at mains potential whenever it is plugged in, even switched off. " +
			"Power it only through an isolation transformer (a variac alone does not isolate); the walk takes no live reading until you confirm one. " + brief.Instruction
		brief.Cautions = append(brief.Cautions, HotChassisCaution(why))
	}
	meter := &Step{ID: StepMeter, Kind: KindMeter, Safety: true, Gate: []string{StepBriefing},
		Title:       "Prove the meter",
		Instruction: "Check the meter on a known source (a proving unit, or a known live supply) on the DC volts range, and check the leads for continuity. Confirm when it reads correctly.",
		Why:         "A meter with a blown fuse or a broken lead reads 0 V on a charged capacitor: prove it works before trusting a reading of \"safe\" (prove–test–prove, common practice).",
	}
	steps = append(steps, brief, meter)
	gate = []string{StepBriefing, StepMeter}
	for _, dr := range b.Drain {
		// A voltage doubler's floating capacitor is read across its
		// own two nets, not to chassis.
		to := "chassis"
		if dr.Other != "" {
			to = dr.Other
		}
		st := &Step{ID: "discharge-" + dr.Ref, Kind: KindDischarge, Safety: true, Gate: []string{StepMeter},
			Title: fmt.Sprintf("Discharge and verify %s (%s on %s)", dr.Ref, units.Format(dr.Farads, units.Farads), dr.Across()),
			Instruction: fmt.Sprintf("Unplugged: discharge %s through a resistor tool, then measure DC volts across it (%s to %s). It must read below %g V before you touch anything; %g V DC is the hazardous-live level (IEC 62368-1; IEC 60065 for older sets). %s",
				dr.Ref, dr.Net, to, cold.TouchVolts, cold.HazardVolts, dischargeNote(dr)),
			Cautions: []string{UnpluggedCaution, DischargeCaution},
			Measures: []Measure{{Point: point.DischargeKey(dr.Ref), Label: dr.Ref + " volts after discharge", Function: FuncDCV,
				Range: rangeFor(math.Abs(dr.PeakVolts), "V DC"), Probes: fmt.Sprintf("red on %s (%s), black on %s", dr.Net, dr.Ref, to), Unit: "V"}},
			Why: fmt.Sprintf("%s can hold %s after power-off; its bleed path takes %s to fall below %g V, and a bleeder can fail open: only a meter reading proves it is safe.",
				dr.Ref, units.Format(math.Abs(dr.PeakVolts), units.Volts), cold.FormatDuration(dr.To10), cold.TouchVolts),
		}
		if dr.NoPath || dr.Warning != "" {
			st.Cautions = append([]string{strings.ToUpper(dr.Warning[:1]) + dr.Warning[1:]}, st.Cautions...)
		}
		steps = append(steps, st)
		gate = append(gate, st.ID)
	}
	// Other large capacitors to chassis that may hold B+ (a supply's
	// decoupling after a resistor): verified too, without a bleed time.
	inDrain := map[string]bool{}
	for _, dr := range b.Drain {
		inDrain[dr.Ref] = true
	}
	for _, c := range b.D.PartsOfKind(design.Capacitor) {
		a, z := c.Terminals[0].Net, c.Terminals[1].Net
		if inDrain[c.Ref] || c.Value < 1e-6 || (c.Volts > 0 && c.Volts < 100) || (a != b.D.Ground && z != b.D.Ground) {
			continue
		}
		net := a
		if a == b.D.Ground {
			net = z
		}
		st := &Step{ID: "discharge-" + c.Ref, Kind: KindDischarge, Safety: true, Gate: []string{StepMeter},
			Title: fmt.Sprintf("Discharge and verify %s (%s on %s)", c.Ref, units.Format(c.Value, units.Farads), net),
			Instruction: fmt.Sprintf("Unplugged: discharge %s through a resistor tool, then measure DC volts across it (%s to chassis). It must read below %g V before you touch anything; %g V DC is the hazardous-live level (IEC 62368-1; IEC 60065 for older sets).",
				c.Ref, net, cold.TouchVolts, cold.HazardVolts),
			Cautions: []string{UnpluggedCaution, DischargeCaution},
			Measures: []Measure{{Point: point.DischargeKey(c.Ref), Label: c.Ref + " volts after discharge", Function: FuncDCV,
				Range: rangeFor(c.Volts, "V DC"), Probes: fmt.Sprintf("red on %s (%s), black on chassis", net, c.Ref), Unit: "V"}},
			Why: fmt.Sprintf("%s is rated %s and can hold a charge after power-off; only a meter reading proves it is safe.", c.Ref, units.Format(c.Volts, units.Volts)),
		}
		steps = append(steps, st)
		gate = append(gate, st.ID)
	}
	if len(gate) == 2 {
		// No capacitor to discharge: verify the supply nets are dead.
		st := &Step{ID: "discharge-verify", Kind: KindDischarge, Safety: true, Gate: []string{StepMeter},
			Title:       "Verify the amp is dead",
			Instruction: fmt.Sprintf("Unplugged: measure DC volts from each supply net to chassis; every one must read below %g V before you touch anything. Enter the highest reading.", cold.TouchVolts),
			Cautions:    []string{UnpluggedCaution, DischargeCaution},
			Measures:    []Measure{{Point: point.DischargeKey("supply"), Label: "highest supply net volts", Function: FuncDCV, Range: "1000 V DC", Probes: "red on each supply net in turn, black on chassis", Unit: "V"}},
			Why:         "Any stored charge or a supply left connected shows here; prove it dead before touching.",
		}
		steps = append(steps, st)
		gate = append(gate, st.ID)
	}
	// The earth check puts hands on the chassis: it waits for every
	// discharge check.
	earth := &Step{ID: StepEarth, Kind: KindEarth, Safety: true, Gate: append([]string(nil), gate...),
		Title: "Mains earth to chassis continuity",
		Instruction: fmt.Sprintf("Unplugged, power switch on: null the meter leads, then measure from the mains plug's earth pin to bare chassis metal (and to any exposed metal part), flexing the mains cord along its length and at the inlet, and pressing on the earth lug, while you watch the meter. Expect well under %g Ω; over %g Ω stops the walk. "+
			"If the amp has no mains earth (a bench-supplied stage), measure the bench supply's earth to the chassis, or skip with that reason.", EarthMaxOhms, EarthStopOhms),
		Cautions: []string{UnpluggedCaution, EarthCaution},
		Measures: []Measure{{Point: EarthKey, Label: "earth pin to chassis", Function: FuncOhms, Range: "200 Ω", Probes: "one lead on the plug's earth pin, the other on bare chassis metal", Unit: "Ω"}},
		Why:      "The earth bond is what blows the fuse instead of electrifying the chassis when a live wire touches it. A poor bond (paint under the lug, a loose nut) reads ohms, not milliohms.",
	}
	if b.D.TwoPin() {
		// No protective earth to bond to: what keeps a user safe is the
		// insulation between the mains and every metal part they touch.
		earth.Title = "Insulation: mains pins to exposed metal"
		earth.Instruction = fmt.Sprintf("This set has a two-pin mains inlet: there is no earth pin to test. Unplugged, the set's power switch ON: join the plug's live and neutral pins and, with an insulation tester at its test voltage (500 V DC for mains equipment, common practice), "+
			"measure from them to every metal part a user can touch: knobs' grub screws, cabinet and back-panel screws, socket shells, any exposed bracket. Enter the lowest reading. Expect the tester's top range; under %s stops the walk and cannot be overridden.", FormatValue(InsulationStopOhms, "Ω"))
		if hot, why := b.D.HotChassis(); hot {
			earth.Instruction += " The chassis itself is tied to the mains on this set (" + why + "): it must not be one of the parts a user can touch; if it is (a missing back, a chassis screw through the cabinet), mend that before anything else."
		}
		earth.Cautions = []string{UnpluggedCaution, InsulationCaution}
		earth.Measures = []Measure{{Point: InsulationKey, Label: "mains pins to exposed metal", Function: FuncOhms, Range: "insulation tester, 500 V DC",
			Probes: "one lead on the plug's live and neutral pins joined, the other on each exposed metal part in turn", Unit: "Ω"}}
		earth.Why = "A set with no mains earth relies on insulation alone: the knobs, screws and panels a user can touch must be insulated from everything on the mains side. A grub screw touching a live shaft, or a cabinet screw into a live chassis, reads low here."
	}
	steps = append(steps, earth)
	gate = append(gate, StepEarth)
	if hot, why := b.D.HotChassis(); hot {
		iso := &Step{ID: StepIsolation, Kind: KindIsolation, Safety: true, Gate: append([]string(nil), gate...),
			Title: "Feed the set through an isolation transformer",
			Instruction: "The chassis of this set may be at mains potential: " + why + ". Before any live step, plug the set (through the variac and lamp limiter, if you use them) into the output of an isolation transformer rated for its load, and plug the isolation transformer into the mains. " +
				"A variac alone is an autotransformer and does NOT isolate: its output is still tied to the mains. Confirm (y) only when the set is fed through the isolation transformer; no live step can start until you do, and this step cannot be skipped or overridden.",
			Cautions: []string{UnpluggedCaution, HotChassisCaution(why)},
			Why:      "An isolation transformer floats the set's mains side, so that touching the live chassis and earth together no longer passes current through you; the scope's and meter's earths no longer short the mains through the chassis.",
		}
		// Not in the gate: the unplugged work goes on without it. The
		// runner holds every live step until it is done, and the walk
		// puts it just before the first live step (placeIsolation).
		steps = append(steps, iso)
	}
	return steps, gate
}

// rangeFor suggests a meter range for a value.
func rangeFor(v float64, unit string) string {
	for _, r := range []float64{2, 20, 200, 600, 1000} {
		if v <= 0.9*r {
			return fmt.Sprintf("%g %s", r, unit)
		}
	}
	return "1000 " + unit + " (or above: check the meter's rating)"
}

// coldSteps groups the cold checks by kind.
func coldSteps(b *BenchModel, gate []string) []*Step {
	groups := []struct{ kind, title, why string }{
		{"heaters", "the series heater string (valves in)", "The heaters of a transformerless set are one series string across the mains: one open heater, or an open dropper, and no valve lights. Read end to end at the plug, it is the first cold check of such a set, done before the valves come out."},
		{"b+", "B+ nets", "A short or a leaky capacitor on a B+ net shows as a low resistance now, before power can burn anything; the bleeder sets the expected value."},
		{"bias", "bias supply", "The bias network must be intact before power: an open bias pot or resistor leaves the output valves with no negative grid volts, and they run away."},
		{"plate", "plates", "Each plate should see its load resistor or transformer winding to B+ and on through the bleeder: an open load reads high."},
		{"screen", "screens", "Screens see their stopper to B+; an open stopper reads high."},
		{"grid", "grids", "Each grid should see its grid leak; an open leak reads very high and the valve would run away when powered."},
		{"cathode", "cathodes", "Cathode resistors and sense resistors read directly: a shorted bypass capacitor reads near 0 Ω."},
		{"net", "other nets", "Every other DC net, for completeness."},
		{"winding", "windings", "Transformer and choke windings: an open winding reads OL, a shorted turn barely shows here (compare the halves of a centre-tapped winding)."},
	}
	var out []*Step
	for _, g := range groups {
		var ms []Measure
		for _, c := range b.Cold {
			if c.Kind != g.kind {
				continue
			}
			probes := fmt.Sprintf("red on %s, black on %s", b.probeAt(c.From), b.probeAt(c.To))
			if c.Kind == "heaters" {
				probes = "one lead on the mains plug's live pin, the other on its neutral pin (the set's power switch on)"
			}
			ms = append(ms, Measure{Point: ColdKey(c), Label: c.ID + " resistance", Function: FuncOhms,
				Range: ohmsRange(c), Probes: probes, Unit: "Ω"})
		}
		if len(ms) == 0 {
			continue
		}
		instr := "Unplugged and discharged, valves out of their sockets (a valve rectifier too): measure each resistance. Readings may climb while the meter charges the filter capacitors: wait for them to settle."
		if g.kind == "heaters" {
			instr = "Unplugged and discharged, every valve IN its socket, the power switch on: measure from the plug's live pin to its neutral pin. An open reading means a heater or the dropper is open: find it by measuring across each heater's pins in turn."
		}
		out = append(out, &Step{ID: "cold-" + g.kind, Kind: KindCold, Gate: gate,
			Title:       "Cold resistance: " + g.title,
			Instruction: instr,
			Cautions:    []string{UnpluggedCaution},
			Measures:    ms, Why: g.why})
	}
	return out
}

// probeAt names where a probe goes on a net (amp.Model.ProbeAt).
func (b *BenchModel) probeAt(net string) string { return b.M.ProbeAt(net) }

func ohmsRange(c cold.Check) string {
	if c.Open {
		return "top resistance range"
	}
	for _, r := range []float64{200, 2e3, 20e3, 200e3, 2e6, 20e6} {
		if c.Tol[1] <= 0.9*r {
			return units.Format(r, units.Ohms)
		}
	}
	return "top resistance range"
}

// pointMeasure builds a measure for a model point.
func pointMeasure(pd amp.PointDef, bandHigh float64) Measure {
	label := pd.Label
	probe := "red on net " + pd.Net
	if pd.Valve != "" {
		label += " (from below)"
		probe = fmt.Sprintf("red on %s pin %d (socket viewed from below)", pd.Valve, pd.Pin)
	}
	m := Measure{Point: pd.PointKey(), Label: label, Probes: probe + ", black on chassis"}
	switch pd.Quantity {
	case amp.DCVolts:
		m.Function, m.Unit, m.Range = FuncDCV, "V", rangeFor(math.Abs(bandHigh), "V DC")
	case amp.ACVolts:
		m.Function, m.Unit, m.Range = FuncACV, "V", rangeFor(math.Abs(bandHigh), "V AC")
		if pd.Electrode == valves.Heater {
			m.Probes = fmt.Sprintf("across the heater pins of %s (from below): %s", pd.Valve, strings.TrimPrefix(pd.Label, pd.Valve+" heater, "))
		}
	case amp.DCAmps:
		m.Function, m.Unit, m.Range = FuncDCA, "A", "200 mA DC"
	}
	return m
}

// BringUpProcedure generates the bring-up procedure of a design: briefing, meter
// proof, discharge and earth checks, cold resistances, heaters, the
// variac ramp, live DC checks from the supply outwards, bias setting for
// fixed-bias output valves, summary.
func BringUpProcedure(b *BenchModel) (*Procedure, error) {
	p := &Procedure{Mode: BringUp, Title: "Bring-up: " + b.D.Title}
	safe, gate := safetySteps(b)
	p.Steps = append(p.Steps, safe...)
	in, vis := intakeStep(), visualStep(gate)
	in.Gate = append([]string(nil), gate...)
	p.Steps = append(p.Steps, in, vis)
	gate = append(gate, vis.ID)
	cs := coldSteps(b, gate)
	p.Steps = append(p.Steps, cs...)
	liveGate := append([]string(nil), gate...)
	for _, c := range cs {
		liveGate = append(liveGate, c.ID)
	}
	live, err := liveSteps(b, liveGate, true)
	if err != nil {
		return nil, err
	}
	p.Steps = append(p.Steps, live...)
	p.Steps = append(p.Steps, summaryStep())
	return p, nil
}

func summaryStep() *Step {
	return &Step{ID: StepSummary, Kind: KindSummary, Title: "Summary",
		Instruction: "Switch off, unplug and let the capacitors bleed down. Review the readings below; confirm to finish.",
		Why:         "The summary is the record: every reading against its band, and every safety step skipped with its reason."}
}

// heaterPoints returns the heater AC-volts points, one per valve.
func heaterPoints(pts []amp.PointDef) []amp.PointDef {
	var out []amp.PointDef
	for _, pd := range pts {
		if pd.Quantity == amp.ACVolts && pd.Electrode == valves.Heater {
			out = append(out, pd)
		}
	}
	return out
}

// supplyNets returns the B+ nets in order: HT filter nets, then bias and
// bench supply outputs.
func supplyNets(b *BenchModel) []string {
	var out []string
	if b.M.HT != nil {
		out = append(out, b.M.HT.Nets...)
		if db := b.M.HT.Doubler; db != nil {
			out = append(out, db.Mid) // a voltage doubler's capacitors' junction: its own supply net
		}
	}
	for _, p := range b.D.Parts {
		if p.Kind == design.BiasSupply || p.Kind == design.DCSupply {
			out = append(out, p.Terminals[0].Net)
		}
	}
	for _, a := range b.M.AuxRects() {
		out = append(out, a.Out)
	}
	return out
}

// valveRectifier returns the HT valve rectifier, or nil.
func (b *BenchModel) valveRectifier() *design.Part {
	if b.M.HT != nil && b.M.HT.Rectifier != nil && b.M.HT.Rectifier.Kind == design.Valve {
		return b.M.HT.Rectifier
	}
	return nil
}

// liveSteps: heaters, variac ramp, supply, valves, bias. With ramp false
// (fault-finding) the heater step is left out and the ramp is one step.
func liveSteps(b *BenchModel, gate []string, ramp bool) ([]*Step, error) {
	set, err := b.Set(1, nil)
	if err != nil {
		return nil, err
	}
	has := func(key string) (float64, bool) {
		i, ok := set.Index(key)
		if !ok {
			return 0, false
		}
		return set.Band(i).High, true
	}
	pts := b.M.Points()
	byKey := map[string]amp.PointDef{}
	for _, pd := range pts {
		byKey[pd.Key()] = pd
	}
	liveC := []string{LiveCaution, VariacCaution}
	var out []*Step
	heaters := heaterPoints(pts)
	firstNet := ""
	if nets := supplyNets(b); len(nets) > 0 {
		firstNet = nets[0] + " " + amp.DCVolts
	}
	prev := ""
	after := func(st *Step) {
		if prev != "" {
			st.Gate = append(st.Gate, prev)
		}
		out = append(out, st)
		prev = st.ID
	}
	biasStages := b.BiasStages()
	var outputs []string
	for _, bs := range biasStages {
		outputs = append(outputs, bs.Ref)
	}
	lamp := lampWatts(b)
	if ramp {
		after(&Step{ID: StepMains, Kind: KindLive, Live: true, Variac: 1, Gate: append([]string(nil), gate...), Cautions: liveC,
			Title:       "Mains at the bench",
			Instruction: "Before the amp is plugged in: measure the mains at the outlet you will use (AC volts, probes into the outlet's live and neutral with shrouded probes, or at the variac's output set to 100 %). Every band after this is worked out at the mains you read.",
			Measures: []Measure{{Point: MainsKey, Label: "mains at the outlet", Function: FuncACV, Unit: "V",
				Range: rangeFor(b.D.Mains.Volts*1.1, "V AC"), Probes: "live and neutral of the outlet (or the variac output at 100 %)"}},
			Why: "Mains is rarely the design's figure: 5 % high mains is 5 % more B+ and heater volts; the bands follow what you read, not what the design assumed."})
	}
	if ramp && len(heaters) > 0 {
		// Heaters with no HT: at a low setting first, then at full mains.
		var how, back string
		if r := b.valveRectifier(); r != nil && b.inString(r.Ref) {
			// In a series heater string the rectifier's heater carries
			// every other heater's current: pulled, no valve lights.
			lead := fmt.Sprintf("the lead to the rectifier %s's plate pin", r.Ref)
			if lf := b.M.HT.Line; lf != nil && len(lf.Series) > 0 {
				lead = fmt.Sprintf("%s's lead from the rectifier %s's plate pin (net %s)", lf.Series[len(lf.Series)-1], r.Ref, lf.Anode)
			}
			how = fmt.Sprintf("Unplugged and discharged: keep every valve in its socket (the heaters are one series string: pulling any valve, the rectifier %s too, leaves every heater cold). Unsolder %s and insulate its end, so that no HT can come up.", r.Ref, lead)
			back = "resolder " + strings.Replace(lead, " from the rectifier", " to the rectifier", 1)
		} else if r != nil {
			how = fmt.Sprintf("Pull the rectifier valve %s (%s) so that no HT can come up; fit every other valve.", r.Ref, r.Valve.Type.Name)
			back = fmt.Sprintf("refit the rectifier valve %s", r.Ref)
		} else if b.M.HT != nil && b.M.HT.Doubler != nil {
			how, back = doublerHeatersFirst(b.M.HT, b.M.HT.Doubler)
		} else if b.M.HT != nil {
			how = "Unplugged and discharged: lift the HT winding's centre-tap lead (or the rectifier's output lead) and insulate its end, so that no HT can come up; fit every valve. If you cannot lift it, skip this step with that reason: the heaters are then read at every variac step instead."
			back = "reconnect the lifted centre-tap (or rectifier output) lead"
		} else {
			how = "Leave the bench HT supply off."
		}
		for _, f := range []float64{0.5, 1} {
			st := &Step{ID: StepHeaters, Kind: KindHeaters, Live: true, Variac: f, Gate: append([]string(nil), gate...), Cautions: liveC,
				Title:  "Heaters first, no HT: variac to 100 %",
				Why:    "Heaters are checked before B+ so that a wiring error on the heater winding shows before any HT flows; a cathode heated before B+ is applied also avoids stripping it (common practice).",
				StopIf: []string{"the series lamp stays bright", "a heater reads far outside its band", "smoke, a smell of hot varnish, or the fuse blows"}}
			if f < 1 {
				st.ID, st.Title = StepHeaters+"-low", "Heaters first, no HT: variac to 50 %"
				st.Instruction = how + fmt.Sprintf(" Plug in through the variac and a series lamp limiter (about %.0f W for this amp, common practice), bring the variac up to 50 %% and measure each heater's AC volts at the socket: about half their rating.", lamp)
			} else {
				st.Instruction = "Still with no HT: bring the variac up to 100 % and measure each heater's AC volts at the socket. Heater volts within ±10 % of rated are normal (common practice); with no HT load they read a little high."
			}
			for _, pd := range heaters {
				if bd, ok := b.Expect(pd.PointKey(), f, nil); ok {
					st.Measures = append(st.Measures, pointMeasure(pd, bd.High))
				}
			}
			if len(st.Measures) == 0 {
				continue
			}
			after(st)
		}
		if back != "" && prev != "" {
			after(b.handsIn("ht-back", "Unplug and restore the HT", "Variac to zero, switch off and unplug. Measure B+ to chassis: it must read below 10 V before you touch anything (discharge it if not). Then "+back+".",
				"The HT was kept off to check the heaters alone; the ramp that follows brings it up slowly.", gate))
		}
	}
	settings := bands.VariacSettings
	if !ramp {
		settings = []float64{1}
	}
	// Fixed bias: a first ramp with the output valves out of their
	// sockets proves the bias reaches every output grid before any
	// output valve can draw current (common practice).
	if ramp && len(biasStages) > 0 {
		for _, f := range settings {
			st := &Step{ID: fmt.Sprintf("bias-ramp-%.0f", 100*f), Kind: KindVariac, Live: true, Variac: f, Gate: append([]string(nil), gate...), Cautions: liveC,
				Pulled: outputs,
				Title:  fmt.Sprintf("Bias supply, output valves out: variac to %.0f %%", 100*f),
				Instruction: fmt.Sprintf("With %s out of their sockets and the bias controls at their most negative end (least current), set the variac to %.0f %% and measure the bias at each output socket's grid pin. It must be clearly negative at every step; near 0 V means the output valves would have no bias.",
					strings.Join(outputs, ", "), 100*f),
				StopIf: []string{"a grid reads near 0 V or positive (no bias)", "smoke, arcing, a smell of hot varnish, or the fuse blows"},
				Why:    "A fixed-bias output valve with no bias conducts without limit and can be destroyed in seconds; the bias supply is proved first, with the valves out."}
			if f == settings[0] {
				st.Instruction = fmt.Sprintf("Plug in through the variac and a series lamp limiter (about %.0f W, common practice), with a dummy load on the output. ", lamp) + st.Instruction
			}
			for _, bs := range biasStages {
				if pd, ok := b.gridPoint(bs); ok {
					if bd, ok := b.Expect(pd.PointKey(), f, nil); ok {
						m := pointMeasure(pd, bd.Low)
						m.Label = fmt.Sprintf("%s grid (pin %d, valve out)", bs.Ref, pd.Pin)
						st.Measures = append(st.Measures, m)
					}
				}
			}
			if len(st.Measures) > 0 {
				after(st)
			}
		}
		after(b.handsIn("fit-outputs", "Fit the output valves",
			fmt.Sprintf("Variac to zero, switch off and unplug. Measure B+ to chassis: it must read below 10 V before you touch anything (discharge it if not). Then fit %s and leave the bias controls at their most negative end (least current).", strings.Join(outputs, ", ")),
			"With the bias proved, the output valves go in at the least current; the next ramp watches their cathode current at every step.", gate))
	}
	for _, f := range settings {
		st := &Step{ID: fmt.Sprintf("variac-%.0f", 100*f), Kind: KindVariac, Live: true, Variac: f, Gate: append([]string(nil), gate...), Cautions: liveC,
			Title: fmt.Sprintf("Variac to %.0f %%", 100*f),
			StopIf: []string{"B+ above its band (the valves are not conducting, or the bleeder is open)", "B+ far below its band, or the series lamp glows bright and stays bright (a short or a heavy load)",
				"a plate glows red", "smoke, arcing, a smell of hot varnish, or the fuse blows"},
			Why: "Raising the mains in steps limits the damage a fault can do and lets electrolytics that have stood a long time re-form; the expected B+ at each step tells a healthy supply from a shorted or open one."}
		if f == 1 && !ramp {
			st.ID, st.Kind, st.Title = "power-up", KindPowerUp, "Power up on the variac"
		}
		if ramp && f == settings[0] && len(biasStages) == 0 {
			st.Instruction = fmt.Sprintf("Plug in through the variac and a series lamp limiter (about %.0f W for this amp, common practice), with a dummy load (or speaker) on the output. ", lamp)
		}
		st.Instruction += fmt.Sprintf("Set the variac to %.0f %% of the mains, wait a minute for the heaters, watch the series lamp, and measure:", 100*f)
		if ramp && f < 1 {
			// The variac's real output at this setting: the bands of the
			// step follow it.
			st.Measures = append(st.Measures, Measure{Point: MainsKey, Label: fmt.Sprintf("variac output at %.0f %%", 100*f), Function: FuncACV, Unit: "V",
				Range: rangeFor(b.D.Mains.Volts*f*1.1, "V AC"), Probes: "the variac's output terminals (or the socket the amp plugs into)"})
		}
		if !ramp {
			st.Instruction = "Plug in through the variac and series lamp and bring it up slowly (25 %, 50 %, 75 %, 100 %), watching the lamp and B+. At 100 % measure:"
		}
		if firstNet != "" {
			if hi, ok := has(firstNet); ok {
				st.Measures = append(st.Measures, pointMeasure(byKey[firstNet], hi))
			}
		}
		st.Measures = append(st.Measures, doublerMeasures(b, has, byKey)...)
		if len(heaters) > 0 {
			if hi, ok := has(heaters[0].Key()); ok {
				st.Measures = append(st.Measures, pointMeasure(heaters[0], hi))
			}
		}
		// Fixed bias: the negative bias must be there before the output
		// valves draw current, at every step of the ramp (common practice).
		for _, net := range b.M.BiasNets() {
			key := net + " " + amp.DCVolts
			if pd, ok := byKey[key]; ok {
				if hi, ok := has(key); ok {
					st.Measures = append(st.Measures, pointMeasure(pd, hi))
					st.StopIf = append(st.StopIf, "the bias supply "+net+" reads near 0 V or positive: the output valves have no bias and will run away")
				}
			}
		}
		// ...and each output valve's cathode current is watched as it
		// comes up (the switch-off rule reads its dissipation).
		if ramp {
			for _, bs := range biasStages {
				if pd, ok := b.cathodePoint(bs); ok {
					if bd, ok := b.Expect(pd.PointKey(), f, nil); ok {
						m := pointMeasure(pd, bd.High)
						m.Label += " (cathode current)"
						st.Measures = append(st.Measures, m)
					}
				}
			}
		}
		if len(st.Measures) == 0 {
			continue
		}
		after(st)
	}
	if !ramp {
		return out, nil
	}
	// The lamp limiter drops the mains under load: out before the final
	// readings and the bias (common practice).
	after(&Step{ID: "lamp-out", Kind: KindConfirm, Live: true, Variac: 1, Gate: append([]string(nil), gate...), Cautions: liveC,
		Title:       "Take out the series lamp limiter",
		Instruction: "Variac to zero and switch off. Take the series lamp limiter out of the mains feed (the amp plugs into the variac directly), then bring the variac back up to 100 % in steps, watching B+. Confirm at 100 %.",
		Why:         "A lamp limiter protects the first power-up but drops the mains as the amp draws current: the final readings and the bias must be taken at the real mains."})
	// Fixed bias is set first at full mains, before any other reading.
	for _, bs := range biasStages {
		if st := b.biasStep(bs, "bias-"+bs.Ref, "Set the bias of "+bs.Ref, gate, liveC); st != nil {
			after(st)
		}
	}
	if !ramp {
		return out, nil
	}
	g := append(append([]string(nil), gate...), prev)
	sup := &Step{ID: StepSupply, Kind: KindLive, Live: true, Variac: 1, Gate: g, Cautions: liveC,
		Title:       "Supply nets at full mains",
		Instruction: "At 100 % mains, measure each B+ and supply net from the rectifier outwards.",
		Why:         "Each filter stage drops a little more B+; the drop across each series part is its current times its resistance, so a wrong step points at the stage that draws too much or too little.",
		StopIf:      []string{"a net far outside its band", "a resistor or the choke running hot"}}
	for _, n := range supplyNets(b) {
		k := n + " " + amp.DCVolts
		if hi, ok := has(k); ok {
			sup.Measures = append(sup.Measures, pointMeasure(byKey[k], hi))
		}
	}
	if len(sup.Measures) > 0 {
		out = append(out, sup)
		prev = sup.ID
	}
	valveGate := append(append([]string(nil), gate...), prev)
	stepOf := map[string]string{}
	for _, v := range valveOrder(b) {
		st := &Step{ID: "valve-" + v.Ref, Kind: KindLive, Live: true, Variac: 1, Gate: valveGate, Cautions: liveC,
			Title:       fmt.Sprintf("%s (%s): DC volts", v.Ref, v.Valve.Type.Name),
			Instruction: fmt.Sprintf("At 100 %% mains, measure %s's electrodes to chassis, one pin at a time (pins counted clockwise from the key, socket viewed from below).", v.Ref),
			Why:         "Plate, screen, cathode and grid volts together give the valve's operating point: a low plate with a high cathode means heavy current, a high plate with 0 V cathode means no current (an open cathode path, a dead valve, or no heater).",
			StopIf:      []string{"a plate glows red", "a positive grid on a valve whose grid should sit at 0 V (a leaky coupling capacitor)"}}
		if v.Valve.Type.Kind == valves.Regulator {
			g := v.Valve.Type.Gas
			st.Title = fmt.Sprintf("%s (%s regulator): anode volts", v.Ref, v.Valve.Type.Name)
			st.Instruction = fmt.Sprintf("At 100 %% mains, measure %s's anode to chassis (socket viewed from below), and look at it: a struck regulator glows inside.", v.Ref)
			st.Why = fmt.Sprintf("A struck %s holds its anode near %s whatever the supply does; an anode well above that with the valve dark means it has not struck (a dead regulator, or a supply that never reaches its %s striking volts), well under it means its feed resistor is high or the stage it feeds draws too much.",
				v.Valve.Type.Name, units.Format(g.MaintainVolts, units.Volts), units.Format(g.StrikeVolts, units.Volts))
			st.StopIf = []string{"the regulator flickers or its glow jumps about (it is oscillating: too much capacitance across it or too little current)"}
		}
		if dp := diodePins(b, v.Ref); dp != "" {
			st.Why += fmt.Sprintf(" The diode plates (%s) are a detector's: with no signal they read about 0 V, a few tenths of a volt negative on a 10 MΩ meter (the diodes collect a little current on their own); a volt or more positive means B+ is reaching the detector (a leaky capacitor), and 0 V exactly with the triode working can mean an open diode.", dp)
		}
		for _, pd := range pts {
			if pd.Valve != v.Ref || pd.Quantity != amp.DCVolts || pd.Net == b.D.Ground {
				continue
			}
			switch pd.Electrode {
			case valves.Plate, valves.Screen, valves.Cathode, valves.Grid, valves.Anode, valves.Plates:
			default:
				continue
			}
			if hi, ok := has(pd.Key()); ok {
				st.Measures = append(st.Measures, pointMeasure(pd, hi))
			}
		}
		if len(st.Measures) > 0 {
			out = append(out, st)
			stepOf[v.Ref] = st.ID
		}
	}
	// The bias drifts as the valves and the bias supply warm: check it
	// again at the end (common practice).
	for _, bs := range biasStages {
		g := append([]string(nil), valveGate...)
		if id := stepOf[bs.Ref]; id != "" {
			g = append(g, id)
		}
		if st := b.biasStep(bs, "bias-check-"+bs.Ref, "Bias of "+bs.Ref+" again, warm", g, liveC); st != nil {
			st.Instruction = "After at least 15 minutes at full mains: measure the idle reading again and trim the bias control if it has drifted. " + st.Instruction
			out = append(out, st)
		}
	}
	return out, nil
}

// biasStep is the step that sets (or re-checks) a fixed-bias output
// valve's idle current.
func (b *BenchModel) biasStep(bs BiasStage, id, title string, gate []string, cautions []string) *Step {
	sense := bs.SenseRef != ""
	key := BiasKey(bs.Ref, sense)
	bd, ok := b.Expect(key, 1, nil)
	if !ok {
		return nil
	}
	m := Measure{Point: key, Label: bs.Ref + " idle current", Function: FuncDCA, Unit: "A", Range: "200 mA DC",
		Probes: fmt.Sprintf("meter in series with %s's plate feed (or the transformer-shunt method)", bs.Ref)}
	instr := fmt.Sprintf("Set %s's idle current with its bias control%s", bs.Ref, potName(bs.Pot))
	if sense {
		m = Measure{Point: key, Label: fmt.Sprintf("volts across %s (%s cathode sense)", bs.SenseRef, units.Format(bs.SenseOhms, units.Ohms)),
			Function: FuncDCV, Unit: "V", Range: "2 V DC",
			Probes: fmt.Sprintf("red on %s pin %d cathode (from below), black on chassis: across %s", bs.Ref, bs.CathodePin, bs.SenseRef)}
		instr += fmt.Sprintf(": the cathode sense resistor %s (%s) turns the cathode current into volts, %g mV per mA", bs.SenseRef, units.Format(bs.SenseOhms, units.Ohms), bs.SenseOhms)
	}
	instr += fmt.Sprintf(". Target %s (%.0f %% of the plate rating), within %s – %s. Start from the most negative grid bias (least current), adjust slowly, let it settle for a few minutes, then enter the final reading.",
		fmtBand(bd.Nominal, m.Unit), 100*BiasTarget, fmtBand(bd.Low, m.Unit), fmtBand(bd.High, m.Unit))
	return &Step{ID: id, Kind: KindBias, Live: true, Variac: 1, Gate: append([]string(nil), gate...), Cautions: cautions,
		Title: title, Instruction: instr, Measures: []Measure{m},
		StopIf: []string{"the current keeps climbing (thermal runaway)", "a plate glows red", "the bias control has no effect (an open bias path)"},
		Why:    "A fixed-bias output valve's idle current is set, not self-regulated: too little gives crossover distortion, too much overheats the plate. 60–70 % of the rated plate dissipation at idle is the usual class AB setting (common practice)."}
}

// handsIn is an unplugged step between two power-ups: B+ is measured
// first, under the discharge rule (a reading of 10 V or more stops it;
// it cannot be skipped).
func (b *BenchModel) handsIn(id, title, instruction, why string, gate []string) *Step {
	st := &Step{ID: id, Kind: KindDischarge, Safety: true, Gate: append([]string(nil), gate...),
		Cautions: []string{UnpluggedCaution, DischargeCaution}, Title: title, Instruction: instruction, Why: why}
	ref, net, peak := "", "", 0.0
	if len(b.Drain) > 0 {
		ref, net, peak = b.Drain[0].Ref, b.Drain[0].Net, math.Abs(b.Drain[0].PeakVolts)
	}
	if ref != "" {
		st.Measures = []Measure{{Point: point.DischargeKey(ref), Label: ref + " volts before hands-in", Function: FuncDCV,
			Range: rangeFor(peak, "V DC"), Probes: fmt.Sprintf("red on %s (%s), black on chassis", net, ref), Unit: "V"}}
	}
	return st
}

// gridPoint and cathodePoint are a bias stage's grid-1 and cathode pins
// (DC volts).
func (b *BenchModel) gridPoint(bs BiasStage) (amp.PointDef, bool) {
	return b.electrodePoint(bs, valves.Grid)
}

func (b *BenchModel) cathodePoint(bs BiasStage) (amp.PointDef, bool) {
	return b.electrodePoint(bs, valves.Cathode)
}

func (b *BenchModel) electrodePoint(bs BiasStage, electrode string) (amp.PointDef, bool) {
	for _, pd := range b.M.Points() {
		if pd.Section == bs.Section && pd.Electrode == electrode && pd.Quantity == amp.DCVolts {
			return pd, true
		}
	}
	return amp.PointDef{}, false
}

// lampWatts suggests a series lamp limiter for the amp: about 60 W for a
// small amp, 100 W for one of 30–50 W output (common practice), judged
// by the rated plate dissipation of its output valves.
func lampWatts(b *BenchModel) float64 {
	plate := 0.0
	for _, s := range b.M.Sections {
		if s.Pentode {
			plate += s.Type.Limits.PlateWatts
		}
	}
	if plate > 40 {
		return 100
	}
	return 60
}

func potName(pot string) string {
	if pot == "" {
		return ""
	}
	return " (" + pot + ")"
}

func fmtBand(v float64, unit string) string {
	if math.Abs(v) < 1e-9 {
		v = 0 // numerical dust: no meter shows it
	}
	switch unit {
	case point.Seen: // a look: 1 the sign seen, 0 not
		if v >= 0.5 {
			return "seen"
		}
		return "not seen"
	case "A":
		return units.Format(v, units.Amps)
	case "Ω":
		if math.IsInf(v, 1) {
			return "open"
		}
		return units.Format(v, units.Ohms)
	}
	return units.Format(v, units.Volts)
}

// valveOrder returns the amplifying valves from the supply outwards: by
// the stage of the HT filter nearest to their plates (through resistors,
// chokes and transformer windings), then in design order.
func valveOrder(b *BenchModel) []*design.Part {
	stage := map[string]int{}
	for i, n := range supplyNets(b) {
		if _, ok := stage[n]; !ok {
			stage[n] = i
		}
	}
	d := b.D
	nearest := func(from string) int {
		seen := map[string]bool{from: true}
		q := []string{from}
		for len(q) > 0 {
			n := q[0]
			q = q[1:]
			if s, ok := stage[n]; ok {
				return s
			}
			for _, u := range d.Nets[n] {
				p := d.ByRef[u.Ref]
				if p == nil {
					continue
				}
				switch p.Kind {
				case design.Resistor, design.Choke, design.OutputTransformer, design.Pot:
				default:
					continue
				}
				for _, t := range p.Terminals {
					if t.Net != d.Ground && !seen[t.Net] {
						seen[t.Net] = true
						q = append(q, t.Net)
					}
				}
			}
		}
		return 1 << 20
	}
	type vo struct {
		p     *design.Part
		stage int
		i     int
	}
	var vs []vo
	for i, p := range d.Valves() {
		if p.Valve.Type.Kind == valves.Rectifier {
			continue
		}
		best := 1 << 20
		for sec, e := range p.Valve.Sections {
			// An unused section's plate is tied to chassis: it says
			// nothing about where the valve sits in the supply.
			if n := e[valves.Plate]; n != "" && n != d.Ground && !p.Valve.Unused[sec] {
				best = min(best, nearest(n))
			}
		}
		vs = append(vs, vo{p, best, i})
	}
	sort.SliceStable(vs, func(a, c int) bool { return vs[a].stage < vs[c].stage })
	out := make([]*design.Part, len(vs))
	for i, v := range vs {
		out[i] = v.p
	}
	return out
}

// inString reports whether a valve's heater is in the series heater
// string of a transformerless set.
func (b *BenchModel) inString(ref string) bool {
	if b.M.String == nil {
		return false
	}
	for _, r := range b.M.String.Valves {
		if r == ref {
			return true
		}
	}
	return false
}

// diodePins names the pins of a valve's wired signal-diode plates ("pins
// 5 and 6"), "" when it has none in the network.
func diodePins(b *BenchModel, ref string) string {
	var pins []string
	for _, d := range b.M.Diodes {
		if d.Ref != ref {
			continue
		}
		p := b.D.ByRef[ref]
		for i, pn := range p.Valve.Type.PinsOf(d.Section, valves.Plates) {
			if i == d.Index {
				pins = append(pins, strconv.Itoa(pn))
			}
		}
	}
	switch len(pins) {
	case 0:
		return ""
	case 1:
		return "pin " + pins[0]
	}
	return "pins " + strings.Join(pins[:len(pins)-1], ", ") + " and " + pins[len(pins)-1]
}
