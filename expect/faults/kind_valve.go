package faults

import (
	"fmt"
	"math"
	"strings"

	"pinwalk/expect/amp"
	"pinwalk/expect/design"
	"pinwalk/expect/supply"
	"pinwalk/expect/units"
	"pinwalk/expect/valves"
)

// Valve faults. Valves fail most of all, output valves most among them
// (common practice for the weights). An amplifying valve (every section
// at once):
//
//	weak         worn: Koren's KG1 (and KG2 for pentodes) × WeakFactor
//	dead         no emission: no plate current
//	heater-open  the heater open: no emission, the valve does not light
//	gassy        air leaked in: ions flow to the negative grid, a grid
//	             current out of the valve that drives the grid positive
//	             through its grid leak, so the valve draws more, heats and
//	             gets gassier (a runaway). Modelled as the plate-to-grid
//	             slot (amp.GasRole) set to GassyOhms. Output valves most
//	             (common practice for the weight).
//	hk-short     the heater broken down to the cathode: the cathode tied
//	             through HKShortOhms to the heater circuit's reference
//	             (its centre tap or grounded end): a cathode-biased stage
//	             loses its bias and draws heavy current, a cathode
//	             follower's cathode is pulled to the heaters, and hum
//	             rises. Only where the heater winding has a DC reference
//	             (the slot amp gives it). A classic cause of hum, about a
//	             third as often as a valve wears weak (common practice).
//	short        an internal short, plate to cathode (a sagging plate or
//	             grid, a flake of cathode coating, an arc after
//	             red-plating). An output valve's puts its half of the
//	             output transformer straight across the HT: powered, the
//	             fuse blows (blowFuse), as with a valve rectifier's
//	             flash-over. A preamp valve's is held by its plate
//	             resistor: the plate sits at the cathode's volts
//	             (the plate-to-cathode slot, amp.PKRole, at
//	             InternalShortOhms), the stage passes no signal. Output
//	             valves short about a fifth as often as they wear weak,
//	             small-signal valves seldom (common practice). No cold
//	             effect: the valves are out of their sockets for the cold
//	             checks; a valve tester's shorts test finds it.
//
// A valve rectifier (only the HT rectifier is modelled):
//
//	weak         worn: its perveance × WeakRectScale (more drop, low B+)
//	dead         no B+ (RectDead)
//	heater-open  RectDead; its heater load stays on its winding
//	half-open    one plate of a full-wave rectifier open
//	short        flash-over (an arc from a plate to the cathode: an
//	             overloaded or gassy rectifier, a reservoir over its
//	             rating): powered, it joins the HT winding to the
//	             reservoir both ways, as a shorted silicon diode does, and
//	             the mains fuse blows (blowFuse). It has no cold effect:
//	             the valve is out of its socket for the cold checks. It
//	             fails this way about half as often as it wears weak
//	             (common practice).
//
// A diode-triode's wired signal diodes (subpart D, "V1.D"):
//
//	open         the diode section open inside the valve (a broken plate
//	             lead or weld): its plates collect nothing, so a detector
//	             gives no audio and an AGC line no control volts; at rest
//	             the detector plate reads 0 V instead of a few tenths
//	             negative. Signal diodes seldom fail on their own: a
//	             tenth of the valve's weak weight (common practice). The
//	             valve's dead and heater-open modes stop the diodes too
//	             (no emission).
//
// A gas regulator:
//
//	dead         will not strike (gas gone, an electrode open): dark, it
//	             passes nothing, and the rail it held rises to what its
//	             feed resistor gives. Regulators last long; its weight is
//	             a weak valve's half (common practice).
const (
	// WeakFactor divides a worn valve's perveance: Koren's KG1 (and KG2
	// for pentodes) multiplied by it, so plate current at a given bias
	// falls well under normal (common practice for a valve that tests
	// "weak" on an emission tester).
	WeakFactor = 2.5
	// WeakRectScale is a worn valve rectifier's perveance scale (common
	// practice: a worn rectifier drops noticeably more volts).
	WeakRectScale = 0.3
	// rectWeakPrior is a valve rectifier's "weak" weight; its "short"
	// is rectShortShare of it.
	rectWeakPrior  = 4
	rectShortShare = 0.5
	// HKShortOhms is a heater-to-cathode breakdown powered: a few ohms
	// of hot, arced insulation (our choice; the bench sees a cathode at
	// the heater's volts whatever the exact figure).
	HKShortOhms = 5.0
	// GassyOhms is the plate-to-grid resistance standing in for a gassy
	// valve's reverse grid current: 3 µA at a 300 V plate (from memory:
	// valve testers and service notes call an output valve gassy at
	// about 1 µA of reverse grid current; a plainly gassy one shows
	// several).
	GassyOhms = 100e6
	// InternalShortOhms is a small-signal valve's plate touching its
	// cathode inside the glass, powered (our choice: a few ohms of
	// contact; the plate resistor sets the current whatever the figure).
	InternalShortOhms = 10.0
)

func init() {
	amplifier := func(m *amp.Model, p *design.Part) bool {
		return p.Valve.Type.Kind != valves.Rectifier && len(sectionsOf(m, p.Ref)) > 0
	}
	rect := func(m *amp.Model, p *design.Part) bool {
		return p.Valve.Type.Kind == valves.Rectifier && m.HT != nil && m.HT.Rectifier == p
	}
	sections := func(t Target) []int { return sectionsOf(t.M, t.Part.Ref) }
	regulator := func(m *amp.Model, p *design.Part) bool { return regulatorOf(m, p.Ref) != nil }
	outPrior := func(w float64) []RolePrior { return []RolePrior{{RoleOutput, w}} }
	register(Kind{
		Kind:     design.Valve,
		Subparts: diodeSections,
		Value:    func(p *design.Part) string { return p.Valve.Type.Name },
		Healthy: func(p *design.Part) OutReading {
			return OutReading{Ohms: math.NaN(), Words: "good on a valve tester, its heater continuous"}
		},
		Modes: []ModeSpec{
			// Amplifying valves.
			{Mode: Weak, Applies: amplifier, Prior: 2, ByRole: outPrior(5),
				Live: func(v *amp.Values, t Target) {
					for _, i := range sections(t) {
						v.Koren[i].KG1 *= WeakFactor
						if v.Koren[i].KG2 > 0 {
							v.Koren[i].KG2 *= WeakFactor
						}
					}
				},
				Describe:     said("weak (low emission: plate current well under normal)"),
				OutOfCircuit: testerReads("low emission on a valve tester"),
				Confirm:      confirmValve, Replace: replaceValve},
			{Mode: Dead, Applies: amplifier, Prior: 0.6, ByRole: outPrior(1.5),
				Live: func(v *amp.Values, t Target) {
					for _, i := range sections(t) {
						v.Emission[i] = 0
					}
				},
				Describe:     said("dead (no emission: no plate current)"),
				OutOfCircuit: testerReads("no emission on a valve tester"),
				Confirm:      confirmValve, Replace: replaceValve},
			{Mode: HeaterOpen, Applies: amplifier, Prior: 0.6, ByRole: outPrior(1),
				Live:         func(v *amp.Values, t Target) { heaterOff(v, sections(t)); breakString(v, t) },
				Describe:     heaterOpenWords,
				OutOfCircuit: heaterOpenReads,
				Confirm:      confirmValve, Replace: replaceValve},
			{Mode: Gassy, Prior: 0.3, ByRole: outPrior(1.2),
				Applies: func(m *amp.Model, p *design.Part) bool {
					return amplifier(m, p) && len(gasSlots(m, p.Ref)) > 0
				},
				Live:         func(v *amp.Values, t Target) { setSlots(v, gasSlots(t.M, t.Part.Ref), GassyOhms) },
				Describe:     said("gassy (reverse grid current: the grid drifts positive, the valve runs hot)"),
				OutOfCircuit: testerReads("gas (reverse grid current) on a valve tester's gas test; often a blue-violet glow inside the glass, not the harmless blue on the glass"),
				Confirm: func(t Target) string {
					p := t.Part
					return fmt.Sprintf("Swap %s for a known-good %s: the grid should come back to its band. With the amp powered, a grid that creeps positive across a high grid leak and a plate current that keeps rising point at gas; a valve tester's gas test confirms it."+confirmed, p.Ref, p.Valve.Type.Name)
				},
				Replace: replaceValve},
			{Mode: HKShort, Prior: 0.7, ByRole: outPrior(1.5),
				Applies: func(m *amp.Model, p *design.Part) bool {
					return amplifier(m, p) && len(slotsWithRole(m, p.Ref, amp.HKRole)) > 0
				},
				Live:         func(v *amp.Values, t Target) { setSlots(v, slotsWithRole(t.M, t.Part.Ref, amp.HKRole), HKShortOhms) },
				Describe:     said("heater shorted to its cathode (bias lost on a cathode-biased stage; hum)"),
				OutOfCircuit: testerReads("a heater-to-cathode short on a valve tester's shorts test, often only once hot (tap the glass)"),
				Confirm: func(t Target) string {
					p := t.Part
					return fmt.Sprintf("Swap %s for a known-good %s: the cathode should come back to its band. Or test it on a valve tester's shorts test with the heater hot, tapping the glass: a heater-to-cathode short often shows only warm."+confirmed, p.Ref, p.Valve.Type.Name)
				},
				Replace: replaceValve},
			{Mode: Short, Prior: 1, PoweredShort: true,
				Applies: func(m *amp.Model, p *design.Part) bool { return amplifier(m, p) && outputValve(m, p.Ref) },
				Live:    func(v *amp.Values, t Target) { blowFuse(t.M, v) },
				Describe: said("shorted inside, plate to cathode (its half of the output transformer straight across the HT: " +
					"the fuse blows)"),
				OutOfCircuit: testerReads(internalShortReads),
				Confirm:      confirmInternalShort, Replace: replaceShortedOutput},
			{Mode: Short, Prior: 0.1,
				Applies: func(m *amp.Model, p *design.Part) bool {
					return amplifier(m, p) && !outputValve(m, p.Ref) && len(pkSlots(m, p.Ref)) > 0
				},
				Live:         func(v *amp.Values, t Target) { setSlots(v, pkSlots(t.M, t.Part.Ref), InternalShortOhms) },
				Describe:     said("shorted inside, plate to cathode (the plate sits at the cathode's volts; no signal through it)"),
				OutOfCircuit: testerReads(internalShortReads),
				Confirm:      confirmInternalShort, Replace: replaceValve},
			// Valve rectifiers.
			{Mode: Weak, Applies: rect, Prior: rectWeakPrior,
				Live:         func(v *amp.Values, t Target) { v.RectScale *= WeakRectScale },
				Describe:     said("weak (low emission: extra drop, low B+)"),
				OutOfCircuit: testerReads("low emission on a valve tester"),
				Confirm:      confirmValve, Replace: replaceRectValve},
			{Mode: Dead, Applies: rect, Prior: 1,
				Live:         func(v *amp.Values, t Target) { v.RectDead = true },
				Describe:     said("dead (no B+)"),
				OutOfCircuit: testerReads("no emission on a valve tester"),
				Confirm:      confirmValve, Replace: replaceRectValve},
			{Mode: HeaterOpen, Applies: rect, Prior: 0.5,
				Live:         func(v *amp.Values, t Target) { v.RectDead = true; breakString(v, t) },
				Describe:     heaterOpenWords,
				OutOfCircuit: heaterOpenReads,
				Confirm:      confirmValve, Replace: replaceRectValve},
			{Mode: HalfOpen, Prior: 1,
				Applies: func(m *amp.Model, p *design.Part) bool {
					return rect(m, p) && m.HT.Topology == supply.CentreTap
				},
				Live:         func(v *amp.Values, t Target) { v.HalfOpen = true },
				Describe:     said("one plate open (half-wave operation, more ripple)"),
				OutOfCircuit: testerReads("one plate with no emission on a valve tester"),
				Confirm:      confirmValve, Replace: replaceRectValve},
			{Mode: Short, Applies: rect, Prior: rectShortShare * rectWeakPrior, PoweredShort: true,
				Live:     func(v *amp.Values, t Target) { blowFuse(t.M, v) },
				Describe: said("arcing between plate and cathode (flash-over: the mains fuse blows)"),
				OutOfCircuit: testerReads("a short between a plate and the filament on a valve tester's short test; often a blackened or " +
					"silvered patch inside the glass"),
				Confirm: func(t Target) string {
					p := t.Part
					return fmt.Sprintf(unplugged+"take %s out and look at it: a flash-over leaves a blue-white burn or a black or silvered patch inside the glass, or a cracked or melted base. Test it on a valve tester's short test (plate to filament); look at the socket for a carbon track between the plate and filament pins. Check the reservoir capacitor's value against the %s's maximum and the fuse's rating."+confirmed,
						p.Ref, p.Valve.Type.Name)
				},
				Replace: func(t Target) string {
					p := t.Part
					return fmt.Sprintf("Fit a new %s in %s; if the socket shows a carbon track between pins, replace the socket too. Keep the reservoir capacitor within the valve's rated maximum and fit a new fuse of the rated value, no larger; a rectifier that arced may have taken the reservoir capacitor with it: check it for a short first."+lampFirst,
						p.Valve.Type.Name, p.Ref)
				}},
			// Signal-diode sections.
			{Mode: Open, Subparts: []string{"D"}, Prior: 0.2,
				Applies: func(m *amp.Model, p *design.Part) bool { return len(diodesOf(m, p.Ref)) > 0 },
				Live: func(v *amp.Values, t Target) {
					for _, d := range diodesOf(t.M, t.Part.Ref) {
						v.Slot[d.Slot] = math.Inf(1)
					}
				},
				Describe: func(t Target) string {
					return fmt.Sprintf("%s (%s) diode section open: its plates collect nothing (no detected audio, no AGC volts)", t.Ref(), t.Part.Valve.Type.Name)
				},
				OutOfCircuit: testerReads("no emission on the diode test of a valve tester"),
				Confirm: func(t Target) string {
					p := t.Part
					return fmt.Sprintf(unplugged+"test %s on a valve tester's diode test, each diode plate in turn, or swap it for a known-good %s: with no signal a working detector's plate reads a few tenths of a volt negative on a 10 MΩ meter, an open one 0 V."+confirmed,
						p.Ref, p.Valve.Type.Name)
				},
				Replace: replaceValve},
			// Gas regulators.
			{Mode: Dead, Applies: regulator, Prior: 1,
				Live: func(v *amp.Values, t Target) {
					if rg := regulatorOf(t.M, t.Part.Ref); rg != nil {
						v.Slot[rg.Slot] = math.Inf(1)
					}
				},
				Describe:     said("will not strike (dark: the rail it holds rises to what its feed gives)"),
				OutOfCircuit: testerReads("no glow when fed at its striking volts through a current-limiting resistor"),
				Confirm: func(t Target) string {
					p := t.Part
					return fmt.Sprintf("Swap %s for a known-good %s: a struck regulator glows (violet or blue) inside and holds its anode near its maintaining volts; one that stays dark with its anode above its striking volts is dead. Check its feed resistor first: an open feed resistor also leaves it dark."+confirmed,
						p.Ref, p.Valve.Type.Name)
				},
				Replace: func(t Target) string {
					p := t.Part
					g := p.Valve.Type.Gas
					return fmt.Sprintf("Fit a known-good %s in %s; check that its current stays within %s–%s and that no more than about 100 nF sits straight across it.",
						p.Valve.Type.Name, p.Ref, fmtAmps(g.MinAmps), fmtAmps(g.MaxAmps))
				}},
		},
	})
}

// gasSlots are a valve's plate-to-grid slots, one per section.
func gasSlots(m *amp.Model, ref string) []int { return slotsWithPrefix(m, ref, amp.GasRole) }

// pkSlots are a valve's plate-to-cathode slots, one per section.
func pkSlots(m *amp.Model, ref string) []int { return slotsWithPrefix(m, ref, amp.PKRole) }

// slotsWithPrefix are a part's slots whose role starts with prefix (a
// per-section role: "gas-currentA", "pkB").
func slotsWithPrefix(m *amp.Model, ref, prefix string) []int {
	var out []int
	for _, i := range m.SlotsOf(ref) {
		if strings.HasPrefix(m.Slots[i].Role, prefix) {
			out = append(out, i)
		}
	}
	return out
}

func regulatorOf(m *amp.Model, ref string) *amp.Regulator {
	for _, rg := range m.Regulators {
		if rg.Ref == ref {
			return rg
		}
	}
	return nil
}

func fmtAmps(a float64) string { return units.Format(a, units.Amps) }

func sectionsOf(m *amp.Model, ref string) []int {
	var out []int
	for i, s := range m.Sections {
		if s.Ref == ref {
			out = append(out, i)
		}
	}
	return out
}

// heaterOpenWords says a heater open; in a series heater string it darkens
// every valve in the string (one current through them all).
func heaterOpenWords(t Target) string {
	if inString(t) {
		return partName(t) + " heater open (the series heater string is broken: no valve in it lights)"
	}
	return partName(t) + " heater open (valve does not light)"
}

func inString(t Target) bool {
	if t.M.String == nil {
		return false
	}
	for _, ref := range t.M.String.Valves {
		if ref == t.Part.Ref {
			return true
		}
	}
	return false
}

func testerReads(words string) func(Target) OutReading {
	return func(Target) OutReading { return OutReading{Ohms: math.NaN(), Words: words} }
}

func heaterOpenReads(Target) OutReading {
	return OutReading{Ohms: math.Inf(1), OK: true, Words: "open across its heater pins"}
}

// internalShortReads is what a valve tester shows of an internal short.
const internalShortReads = "a short between plate and cathode on a valve tester's shorts test, sometimes only hot (tap the glass)"

func confirmInternalShort(t Target) string {
	p := t.Part
	return fmt.Sprintf(unplugged+"take %s out: an ohmmeter across its plate and cathode pins reads a few ohms where a good valve reads open; "+
		"a valve tester's shorts test, heater hot and the glass tapped, finds one that shorts only warm. Look for a sagging, "+
		"red-marked or blistered plate."+confirmed, p.Ref)
}

func replaceShortedOutput(t Target) string {
	p := t.Part
	return fmt.Sprintf("Fit a known-good %s in %s (a matched pair for a push-pull pair) and a new fuse of the rated value, no larger. "+
		"Before powering again, check what a shorted output valve takes with it: its screen resistor and grid stopper (burnt, open), "+
		"the output transformer's primary half (open or leaking to chassis), and the cathode resistor or bias; then bring it up on "+
		"the variac or a lamp limiter and re-set the bias.", p.Valve.Type.Name, p.Ref)
}

// outputValve reports whether any section of a valve is an output one
// (outputSection).
func outputValve(m *amp.Model, ref string) bool {
	ends := otEndNets(m.D)
	for _, s := range m.Sections {
		if s.Ref == ref && outputSection(m.D, s, ends) {
			return true
		}
	}
	return false
}

func confirmValve(t Target) string {
	p := t.Part
	return fmt.Sprintf("Swap %s for a known-good %s (or test it on a valve tester); the fault should follow the valve."+confirmed, p.Ref, p.Valve.Type.Name)
}

func replaceValve(t Target) string {
	p := t.Part
	return fmt.Sprintf("Fit a known-good %s in %s; for a push-pull output pair, fit a matched pair and re-set the bias.", p.Valve.Type.Name, p.Ref)
}

func replaceRectValve(t Target) string {
	p := t.Part
	return fmt.Sprintf("Fit a known-good %s in %s; keep the reservoir capacitor within the valve's rated maximum.", p.Valve.Type.Name, p.Ref)
}

// diodeSections names a valve's wired signal-diode sections ("D").
func diodeSections(p *design.Part) []string {
	vp := p.Valve
	if vp == nil {
		return nil
	}
	var out []string
	for sec, e := range vp.Sections {
		if vp.Unused[sec] || e[valves.Plates] == "" {
			continue
		}
		if st := vp.Type.SectionType(sec, nil); st != nil && st.Kind == valves.Diode {
			out = append(out, sec)
		}
	}
	return out
}

func diodesOf(m *amp.Model, ref string) []*amp.DiodePlate {
	var out []*amp.DiodePlate
	for _, d := range m.Diodes {
		if d.Ref == ref {
			out = append(out, d)
		}
	}
	return out
}
