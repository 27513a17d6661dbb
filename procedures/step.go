// Package procedures is what to measure, in what order, and what a
// reading means: safety gates, bring-up, fault-finding, training and
// practice procedures, sessions and inference over faults. It holds no
// terminal code.
package procedures

import (
	"fmt"
	"strings"

	"pinwalk/expect/point"
)

// Kind classifies a step.
type Kind string

// Step kinds.
const (
	KindBriefing  Kind = "briefing"
	KindMeter     Kind = "meter-proof"
	KindDischarge Kind = "discharge"
	KindEarth     Kind = "earth"
	KindCold      Kind = "cold"
	KindSymptoms  Kind = "symptoms"
	KindHeaters   Kind = "heaters"
	KindVariac    Kind = "variac"
	KindLive      Kind = "live"
	KindBias      Kind = "bias"
	KindPowerUp   Kind = "power-up"
	KindPowerDown Kind = "power-down"
	KindConfirm   Kind = "confirm"
	KindTone      Kind = "tone"
	KindSummary   Kind = "summary"
	KindIntake    Kind = "intake"
	KindVisual    Kind = "visual"
	// KindIsolation: the technician confirms that a hot-chassis set is
	// fed through an isolation transformer; no live step before it.
	KindIsolation Kind = "isolation"
)

// Function is the meter function a step needs.
type Function string

// Meter functions.
const (
	FuncDCV  Function = "DC volts"
	FuncACV  Function = "AC volts"
	FuncOhms Function = "resistance"
	FuncDCA  Function = "DC current"
	FuncNone Function = ""
	// FuncLook: no meter, a look with the power off (seen or not seen).
	FuncLook Function = "look"
)

// Measure is one reading a step asks for.
type Measure struct {
	Point    point.Key // which point
	Label    string    // what it is: "V2 pin 3 plate"
	Function Function  // meter function
	Range    string    // suggested meter range ("1000 V DC", "200 Ω")
	Probes   string    // where the probes go
	Unit     string    // "V", "A", "Ω"
}

// Band is an expected value with its tolerance band (SI units).
type Band struct {
	Nominal, Low, High float64
	// Note qualifies the band ("emission-limited: valves barely conduct
	// at this variac setting", "reading climbs as C1 charges").
	Note string
	// Why says in words what the band rests on: tolerances, the meter's
	// accuracy on its range, the model error, and the readings that
	// narrowed it ("narrowed by your B2 reading, 289 V") — from the one
	// band function, bands.Set.Expect.
	Why []string
	// PP is a ripple reading's peak-to-peak band (on a scope), nil else.
	PP *Band
}

// Contains says whether v lies in the band.
func (b Band) Contains(v float64) bool { return v >= b.Low && v <= b.High }

// Step is one step of a procedure.
type Step struct {
	ID          string
	Kind        Kind
	Title       string
	Instruction string
	Cautions    []string
	// Live: mains or B+ is present on the amplifier during this step.
	Live bool
	// Safety: a safety step; skipping it is recorded and shown in every
	// later summary.
	Safety bool
	// Measures are the readings the step asks for (none for a step that
	// is only confirmed).
	Measures []Measure
	// Gate lists the steps that must be done (passed, or skipped with a
	// reason) before this one may start.
	Gate []string
	// Variac is the fraction of mains applied during the step (0 = unplugged).
	Variac float64
	// Why explains the step (training mode shows it).
	Why string
	// StopIf lists the conditions that mean: switch off now.
	StopIf []string
	// Pulled lists the valves that must be out of their sockets during
	// the step (readings taken then are not evidence of the whole amp).
	Pulled []string `yaml:"valves-out,omitempty"`
	// Asks are questions answered in words for the job's paperwork.
	Asks []Ask `yaml:"asks,omitempty"`
}

// Procedure is an ordered list of steps.
type Procedure struct {
	Mode  Mode
	Title string
	Steps []*Step
	// HotChassis says why the chassis may be at mains potential (the
	// design's words, design.Design.HotChassis), "" when it is not: then
	// no live step starts before the isolation-transformer step is done,
	// and every live step carries HotChassisCaution.
	HotChassis string `yaml:"-"`
}

// Step returns the step with the given id, or nil.
func (p *Procedure) Step(id string) *Step {
	for _, s := range p.Steps {
		if s.ID == id {
			return s
		}
	}
	return nil
}

// Index returns the position of a step, or -1.
func (p *Procedure) Index(id string) int {
	for i, s := range p.Steps {
		if s.ID == id {
			return i
		}
	}
	return -1
}

// Cautions used by steps. Every live step carries LiveCaution.
const (
	LiveCaution = "LETHAL VOLTAGES: B+ and mains are present and filter capacitors keep their charge after power-off. " +
		"Work one-handed (other hand away from the chassis), with insulated, shrouded probes (IEC/EN 61010-031; GS38 tips) " +
		"and a meter rated above the highest voltage in this amp (CAT II or better). Follow local codes and licensed practice."
	UnpluggedCaution = "Unplug the amp from the mains (plug out, not just switched off) before touching anything inside. " +
		"Filter capacitors may still be charged: treat every node as live until you have measured it."
	DischargeCaution = "Discharge through a resistor (a few kΩ, 5 W or more, on insulated leads), never with a screwdriver; " +
		"then verify with the meter. Below 60 V DC is no longer hazardous-live (IEC 62368-1 ES1; IEC 60065 for older sets); go on to under 10 V before touching (common practice). A discharge check cannot be skipped."
	VariacCaution = "Bring the amp up on a variac, ideally through a series lamp limiter, with a dummy load (or speaker) on the output. " +
		"Watch the lamp and the meter; switch off at once on smoke, a red-glowing plate, arcing or a reading far outside its band."
	InsulationCaution = "Insulation test voltages are hazardous: keep your hands off the plug pins and the set while the tester is pressing, and discharge the set afterwards (the tester's own discharge, then the discharge checks). " +
		"An insulation tester (IEC 61557-2) proves insulation; a multimeter's resistance range is only an indication. Local codes and licensed practice rule."
	EarthCaution = "A multimeter continuity reading is only an indication, not a substitute for an earth-bond tester (IEC 61557-4) " +
		"and an insulation test at 500 V DC (IEC 61557-2); in-service limits: 0.1 Ω plus the cord, at least 1 MΩ (IET Code of Practice, 5th ed.). Local codes and licensed practice rule."
)

// HotChassisCaution is the caution every live step of a hot-chassis set
// carries, with the design's reason.
func HotChassisCaution(why string) string {
	return "LIVE CHASSIS: the chassis may be at mains potential: " + why + ". " +
		"Power this set only through an isolation transformer (a variac alone is an autotransformer and does NOT isolate: put the variac after the isolation transformer). " +
		"Treat the chassis, the 0 V bus and every point referred to it as live; never touch the chassis and anything earthed (the bench, a scope's ground clip) together. " +
		"Follow local codes and licensed practice."
}

// hotChassisMark finds HotChassisCaution among a step's cautions.
const hotChassisMark = "LIVE CHASSIS: the chassis may be at mains potential"

// markHotChassis gives every live step of a hot-chassis procedure its
// caution (once).
func markHotChassis(p *Procedure, steps ...*Step) {
	if p.HotChassis == "" {
		return
	}
	for _, st := range steps {
		if st.Live && !st.HasCaution(hotChassisMark) {
			st.Cautions = append([]string{HotChassisCaution(p.HotChassis)}, st.Cautions...)
		}
	}
}

// Summary line for a step, used in lists.
func (s *Step) String() string {
	live := ""
	if s.Live {
		live = " [LIVE]"
	}
	return fmt.Sprintf("%s%s", s.Title, live)
}

// HasCaution reports whether the step carries a caution containing text.
func (s *Step) HasCaution(text string) bool {
	for _, c := range s.Cautions {
		if strings.Contains(c, text) {
			return true
		}
	}
	return false
}
