package procedures

import (
	"bytes"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"time"

	"gopkg.in/yaml.v3"

	"pinwalk/expect/point"
)

// SessionVersion is the session-file version this build writes and reads.
const SessionVersion = 1

// MaxSessionBytes is the largest session file the loader reads.
const MaxSessionBytes = 8 << 20

// Session is everything a bench session has recorded: the design it was
// taken against, the conditions, every reading with its time, skipped
// steps with reasons, notes and the outcome. It is saved after every
// change (see Save) so nothing typed is ever lost.
type Session struct {
	Pinwalk  int       `yaml:"pinwalk-session"`
	Design   DesignRef `yaml:"design"`
	Mode     Mode      `yaml:"mode"`
	Started  time.Time `yaml:"started"`
	Updated  time.Time `yaml:"updated"`
	Bench    Bench     `yaml:"bench"`
	Job      Job       `yaml:"job,omitempty"` // intake and close-out of a repair
	Symptoms []string  `yaml:"symptoms,omitempty"`
	Readings []Reading `yaml:"readings"`
	Skips    []Skip    `yaml:"skipped,omitempty"`
	Passes   []Pass    `yaml:"confirmed,omitempty"`
	Notes    []Note    `yaml:"notes,omitempty"`
	Attempts []Attempt `yaml:"out-of-order,omitempty"` // training: attempts to go out of order
	Guesses  []Guess   `yaml:"predictions,omitempty"`  // training: the trainee's predictions
	Practice *Practice `yaml:"practice,omitempty"`
	Outcome  *Outcome  `yaml:"outcome,omitempty"`
	Cursor   string    `yaml:"at-step,omitempty"` // the step the user was on
	// Added are the steps a fault-finding or practice session added as it
	// went (the procedure grows); kept so a resumed session rebuilds the
	// same procedure.
	Added []*Step `yaml:"added-steps,omitempty"`
	// Seed of the bands (and of a practice session's simulated amp).
	Seed uint64 `yaml:"seed,omitempty"`
	// Answers to the steps' questions (intake, inspection, close-out).
	Answers []Answer `yaml:"answers,omitempty"`
	// Overrides are stops let through with a reason; Halts the switch-offs.
	Overrides []Override `yaml:"overrides,omitempty"`
	Halts     []Halt     `yaml:"switch-offs,omitempty"`
	// Cycle is the current power cycle (see Reading.Cycle).
	Cycle int `yaml:"power-cycle,omitempty"`
	// Pulled lists the valves the walk has asked to be out of their
	// sockets now.
	Pulled []string `yaml:"valves-out,omitempty"`

	cleaned bool // stale temp files beside the file removed (first Save)
}

// DesignRef names the design a session was taken against.
type DesignRef struct {
	File  string `yaml:"file"`
	Title string `yaml:"title"`
	Hash  string `yaml:"sha256"`
}

// Bench holds the bench conditions the user stated: the amp on the
// bench, who works on it, with what meter, on what mains.
type Bench struct {
	Mains  float64 `yaml:"mains-volts,omitempty"` // bench mains as measured, volts rms
	Meter  string  `yaml:"meter,omitempty"`       // make, model and accuracy, as typed
	Who    string  `yaml:"technician,omitempty"`
	AmpID  string  `yaml:"amp,omitempty"` // make and model, as typed
	Serial string  `yaml:"serial,omitempty"`
}

// Job is the paperwork of a repair: the intake (customer, complaint,
// what a visual inspection found) and the close-out (parts replaced,
// the checks after the repair, the sign-off). Every field is optional;
// sessions from before these fields load with them empty.
type Job struct {
	Customer  string `yaml:"customer,omitempty"`
	Complaint string `yaml:"complaint,omitempty"` // in the customer's words
	// Channel is the channel with the complaint on a multi-channel amp,
	// as answered ("right", "both").
	Channel string `yaml:"channel,omitempty"`
	// Swap is the swap test: the matching valves of two channels
	// swapped, and whether the fault followed the valve.
	Swap    *SwapTest    `yaml:"swap-test,omitempty"`
	Visual  []string     `yaml:"visual-inspection,omitempty"`
	Parts   []PartChange `yaml:"parts-replaced,omitempty"`
	After   AfterRepair  `yaml:"after-repair,omitempty"`
	SignOff *SignOff     `yaml:"sign-off,omitempty"`
}

// SwapTest is the result of swapping the matching valves of two
// channels and listening: the fault followed the valve (the valve is
// bad), stayed with its channel (the valve is cleared; the fault is in
// the channel's parts), or the test was not tried.
type SwapTest struct {
	Valves string    `yaml:"valves"` // "V2/V3"
	Result string    `yaml:"result"` // SwapFollows, SwapStays or SwapNotTried
	Said   string    `yaml:"said,omitempty"`
	At     time.Time `yaml:"at"`
}

// Swap test results.
const (
	SwapFollows  = "follows the valve"
	SwapStays    = "stays with the channel"
	SwapNotTried = "not tried"
)

// PartChange is one part replaced: its schematic reference, the new
// part's value and rating as written on it, and why it was replaced.
type PartChange struct {
	Ref    string    `yaml:"ref"`
	Value  string    `yaml:"value,omitempty"`  // "47µF", "220k"
	Rating string    `yaml:"rating,omitempty"` // "450 V", "2 W metal film"
	Reason string    `yaml:"reason,omitempty"`
	At     time.Time `yaml:"at,omitempty"`
}

// AfterRepair holds the checks made after a repair.
type AfterRepair struct {
	EarthBond  *SafetyTest `yaml:"earth-bond,omitempty"` // mains earth pin to chassis, ohms
	Insulation *SafetyTest `yaml:"insulation,omitempty"` // mains conductors to earth at 500 V DC, ohms
	PowerOut   []PowerOut  `yaml:"power-out,omitempty"`
	Soak       *Soak       `yaml:"soak,omitempty"`
}

// Instrument kinds of a safety test.
const (
	EarthBondTester  = "earth-bond-tester" // IEC 61557-4
	InsulationTester = "insulation-tester" // IEC 61557-2
	Multimeter       = "multimeter"        // an indication only
)

// SafetyTest is one electrical-safety test: the reading in ohms, what
// was typed, the instrument kind (EarthBondTester, InsulationTester or
// Multimeter), its test voltage or current where it has one, and when.
type SafetyTest struct {
	Ohms       float64   `yaml:"ohms"`
	Raw        string    `yaml:"typed,omitempty"`
	Instrument string    `yaml:"instrument"`
	TestVolts  float64   `yaml:"test-volts,omitempty"` // insulation: 500 V DC
	TestAmps   float64   `yaml:"test-amps,omitempty"`  // earth bond
	At         time.Time `yaml:"at,omitempty"`
}

// PowerOut is the output power of one channel into a dummy load.
type PowerOut struct {
	Channel  string    `yaml:"channel"`
	Watts    float64   `yaml:"watts"`
	LoadOhms float64   `yaml:"load-ohms"`
	Hz       float64   `yaml:"hz,omitempty"`
	Note     string    `yaml:"note,omitempty"` // "at onset of clipping"
	At       time.Time `yaml:"at,omitempty"`
}

// Soak is the soak test: how long the amp ran, and how it ended.
type Soak struct {
	Duration time.Duration `yaml:"duration"`
	Note     string        `yaml:"note,omitempty"`
	At       time.Time     `yaml:"at,omitempty"` // when it ended
}

// SignOff is the technician's sign-off of the job.
type SignOff struct {
	Name string    `yaml:"name"`
	At   time.Time `yaml:"at"`
}

// Reading is one meter reading.
type Reading struct {
	Step    string    `yaml:"step"`
	Point   point.Key `yaml:"point"`
	Raw     string    `yaml:"typed"` // exactly what the user typed
	Value   float64   `yaml:"value"` // SI units
	Unit    string    `yaml:"unit"`
	At      time.Time `yaml:"at"`
	Variac  float64   `yaml:"variac,omitempty"` // fraction of mains applied: 0 unpowered (cold checks), 1 full mains
	Mains   float64   `yaml:"mains-volts,omitempty"`
	Status  Status    `yaml:"status"`
	Low     float64   `yaml:"expected-low"`
	High    float64   `yaml:"expected-high"`
	Nominal float64   `yaml:"expected"`
	// Consequence of the reading for the walk: "" (go on), Stop or
	// SwitchOff; Said is what the screen told the technician.
	Consequence Consequence `yaml:"consequence,omitempty"`
	Said        string      `yaml:"said,omitempty"`
	// Reason is why a reading was corrected (on the correcting reading)
	// or kept against a question.
	Reason string `yaml:"reason,omitempty"`
	// Pulled lists the valves out of their sockets when it was taken.
	Pulled []string `yaml:"valves-out,omitempty"`
	// Cycle is the power cycle the reading belongs to: it goes up each
	// time the amp is switched off after being powered (a discharge is
	// proved again in every cycle).
	Cycle int `yaml:"power-cycle,omitempty"`
}

// Consequence is what a reading means for the walk beyond its band.
type Consequence string

// Consequences.
const (
	GoOn Consequence = ""
	// Stop: the walk does not advance past this step until a retake
	// clears it (or, where the rule allows, an override with a reason).
	Stop Consequence = "stop"
	// SwitchOff: harm is in progress on a live step; the walk says switch
	// off now and goes to unpowered fault-finding with the evidence.
	SwitchOff Consequence = "switch-off"
)

// Override records a stop let through with a stated reason (allowed only
// where the rule says so: never for a discharge check).
type Override struct {
	Step   string    `yaml:"step"`
	Point  point.Key `yaml:"point"`
	Reason string    `yaml:"reason"`
	At     time.Time `yaml:"at"`
}

// Halt records a switch-off: which reading fired it and why.
type Halt struct {
	Step  string    `yaml:"step"`
	Point point.Key `yaml:"point"`
	Value float64   `yaml:"value"`
	Why   string    `yaml:"why"`
	At    time.Time `yaml:"at"`
	// Done is set when the technician confirmed the amp is off.
	Done bool `yaml:"switched-off,omitempty"`
	// Stop: the amp was switched off because a stop held on a live step
	// (not for harm in progress): the measuring goes on cold.
	Stop bool `yaml:"for-stop,omitempty"`
	// Cold: the amp was switched off because only cold readings were
	// left to tell the suspects apart.
	Cold bool `yaml:"for-cold,omitempty"`
}

// Status is the verdict on a reading or step.
type Status string

// Statuses.
const (
	InBand    Status = "in-band"
	OutOfBand Status = "out-of-band"
	Retry     Status = "retry" // questionable: re-measure
	Done      Status = "done"  // a step without a reading, confirmed done
	Skipped   Status = "skipped"
	Corrected Status = "corrected" // replaced by a correction; kept in the history
)

// Skip records a skipped step and why.
type Skip struct {
	Step   string    `yaml:"step"`
	Reason string    `yaml:"reason"`
	Safety bool      `yaml:"safety-step"`
	At     time.Time `yaml:"at"`
}

// Pass records a step confirmed done without a numeric reading
// (briefing read, probes checked).
type Pass struct {
	Step  string    `yaml:"step"`
	At    time.Time `yaml:"at"`
	Cycle int       `yaml:"power-cycle,omitempty"`
}

// Note is a free-text note.
type Note struct {
	Text string    `yaml:"text"`
	At   time.Time `yaml:"at"`
	Step string    `yaml:"step,omitempty"`
}

// Attempt is a training-mode attempt to start a step before its gate.
type Attempt struct {
	Step    string    `yaml:"step"`
	Blocked string    `yaml:"blocked-by"`
	At      time.Time `yaml:"at"`
}

// Guess is a trainee's prediction before the band is shown.
type Guess struct {
	Point point.Key `yaml:"point"`
	Raw   string    `yaml:"typed"`
	Value float64   `yaml:"value"`
	Low   float64   `yaml:"expected-low"`
	High  float64   `yaml:"expected-high"`
	Good  bool      `yaml:"within-band"`
	At    time.Time `yaml:"at"`
}

// Practice holds a practice session's hidden fault.
type Practice struct {
	Seed  uint64 `yaml:"seed"`
	Fault string `yaml:"fault"` // hidden from the trainee until revealed
	// Complaint is what the customer says, in their words: the trainee's
	// starting point.
	Complaint string `yaml:"complaint,omitempty"`
	// Symptom is the complaint's symptom (one of infer.Symptoms), which
	// the session starts with.
	Symptom string `yaml:"symptom,omitempty"`
	Named   string `yaml:"named,omitempty"`
	// Guesses are the wrong names given before the right one (or before
	// the trainee asked to see the fault).
	Guesses  []string `yaml:"guesses,omitempty"`
	Revealed bool     `yaml:"revealed,omitempty"`
	Score    int      `yaml:"score,omitempty"`
}

// Outcome is how a session ended.
type Outcome struct {
	Found    string    `yaml:"found,omitempty"`    // confirmed fault, "R7:open"
	Replaced []string  `yaml:"replaced,omitempty"` // parts replaced
	Summary  string    `yaml:"summary,omitempty"`
	At       time.Time `yaml:"at"`
}

// Mode is the kind of procedure a session runs.
type Mode string

// Modes.
const (
	BringUp   Mode = "bringup"
	FaultFind Mode = "faultfind"
	Training  Mode = "training"
	Practise  Mode = "practice"
	Signal    Mode = "signal" // signal tracing with a test tone
)

// Modes lists the modes.
var Modes = []Mode{BringUp, FaultFind, Training, Practise, Signal}

// ParseMode reads a mode name.
func ParseMode(s string) (Mode, error) {
	for _, m := range Modes {
		if string(m) == s {
			return m, nil
		}
	}
	return "", fmt.Errorf("unknown mode %q: expected one of bringup, faultfind, training, practice, signal", s)
}

// SessionError is a problem in a session file, with its place.
type SessionError struct {
	File       string
	Line, Col  int
	Field, Msg string
	damaged    bool // the file is not a readable session at all (truncated, not YAML)
}

func (e *SessionError) Error() string {
	return fmt.Sprintf("%s:%d:%d: %s: %s", e.File, e.Line, e.Col, e.Field, e.Msg)
}

// LoadSession reads a session file. A truncated or damaged file gives a
// *SessionError naming the place and what was expected, and saying
// whether the previous save (FILE.bak) exists and loads. Opening a session
// also removes stale temporary files left beside it by a save that was
// interrupted (see CleanStaleTemps).
func LoadSession(path string) (*Session, error) {
	CleanStaleTemps(path, time.Now())
	s, err := readSession(path)
	var se *SessionError
	if err != nil && errors.As(err, &se) && se.damaged {
		se.Msg += "; " + backupState(path)
	}
	return s, err
}

func readSession(path string) (*Session, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	data, err := io.ReadAll(io.LimitReader(f, MaxSessionBytes+1))
	if err != nil {
		return nil, err
	}
	return ParseSession(path, data)
}

// backupState says, truthfully, what the previous save of path holds.
func backupState(path string) string {
	bak := path + ".bak"
	name := filepath.Base(bak)
	b, err := readSession(bak)
	switch {
	case errors.Is(err, fs.ErrNotExist):
		return "there is no previous save (" + name + ") to fall back on"
	case err != nil:
		return "the previous save (" + name + ") cannot be used either (" + err.Error() + ")"
	}
	last := "no readings"
	if n := len(b.Readings); n > 0 {
		last = fmt.Sprintf("%d readings, the last taken %s", n, b.Readings[n-1].At.Local().Format("2006-01-02 15:04:05 MST"))
	}
	return "the previous save (" + name + ") loads cleanly and holds " + last +
		"; it lacks whatever the last save added: to resume from it, copy " + name + " over " + filepath.Base(path)
}

// ParseSession reads a session from bytes; name is used in messages.
func ParseSession(name string, data []byte) (*Session, error) {
	if len(data) > MaxSessionBytes {
		return nil, &SessionError{File: name, Line: 1, Col: 1, Field: "file", Msg: fmt.Sprintf("larger than %d MiB: expected a pinwalk session file", MaxSessionBytes>>20)}
	}
	if bytes.IndexByte(data, 0) >= 0 {
		return nil, &SessionError{File: name, Line: 1, Col: 1, Field: "file", Msg: "not a text file: expected a pinwalk session (YAML)", damaged: true}
	}
	var root yaml.Node
	if err := yaml.Unmarshal(data, &root); err != nil {
		line := 1
		if i := strings.Index(err.Error(), "line "); i >= 0 {
			fmt.Sscanf(err.Error()[i+5:], "%d", &line)
		}
		return nil, &SessionError{File: name, Line: line, Col: 1, Field: "file",
			Msg: "not valid YAML (" + strings.TrimPrefix(err.Error(), "yaml: ") + "): the session may be truncated", damaged: true}
	}
	if len(root.Content) == 0 {
		return nil, &SessionError{File: name, Line: 1, Col: 1, Field: "file", Msg: "empty: expected a pinwalk session", damaged: true}
	}
	var s Session
	dec := root.Content[0]
	if err := dec.Decode(&s); err != nil {
		var te *yaml.TypeError
		msg := err.Error()
		line := dec.Line
		if errors.As(err, &te) && len(te.Errors) > 0 {
			msg = te.Errors[0]
			if i := strings.Index(msg, "line "); i >= 0 {
				fmt.Sscanf(msg[i+5:], "%d", &line)
			}
		}
		return nil, &SessionError{File: name, Line: line, Col: 1, Field: "session",
			Msg: "damaged session (" + strings.TrimPrefix(msg, fmt.Sprintf("line %d: ", line)) + "): the file may be truncated or edited by hand; expected a pinwalk session file", damaged: true}
	}
	if s.Pinwalk != SessionVersion {
		return nil, &SessionError{File: name, Line: 1, Col: 1, Field: "pinwalk-session",
			Msg: fmt.Sprintf("version %d: expected a pinwalk session file, version %d", s.Pinwalk, SessionVersion)}
	}
	if _, err := ParseMode(string(s.Mode)); err != nil {
		return nil, &SessionError{File: name, Line: fieldLine(dec, "mode"), Col: 1, Field: "mode", Msg: err.Error()}
	}
	if s.Design.Hash == "" {
		return nil, &SessionError{File: name, Line: fieldLine(dec, "design"), Col: 1, Field: "design.sha256", Msg: "missing: expected the design file's hash"}
	}
	for _, t := range []struct {
		field string
		test  *SafetyTest
	}{{"job.after-repair.earth-bond", s.Job.After.EarthBond}, {"job.after-repair.insulation", s.Job.After.Insulation}} {
		if t.test != nil && t.test.Instrument != EarthBondTester && t.test.Instrument != InsulationTester && t.test.Instrument != Multimeter {
			return nil, &SessionError{File: name, Line: fieldLine(dec, "job"), Col: 1, Field: t.field + ".instrument",
				Msg: fmt.Sprintf("%q: expected %s, %s or %s", t.test.Instrument, EarthBondTester, InsulationTester, Multimeter)}
		}
	}
	for i, r := range s.Readings {
		if r.Point.IsZero() || r.Step == "" {
			return nil, &SessionError{File: name, Line: fieldLine(dec, "readings"), Col: 1, Field: fmt.Sprintf("readings[%d]", i), Msg: "expected step and point"}
		}
	}
	return &s, nil
}

func fieldLine(n *yaml.Node, key string) int {
	for i := 0; i+1 < len(n.Content); i += 2 {
		if n.Content[i].Value == key {
			return n.Content[i].Line
		}
	}
	return n.Line
}

// Save writes the session atomically: to a temporary file in the same
// directory, fsync, rename over the target, fsync the directory. A crash at
// any moment leaves either the old or the new file, never a mix. The
// previous version is kept as FILE.bak, written the same way, so the .bak
// too is always a whole session. The first save of a Session value also
// removes stale temporary files of earlier interrupted saves.
func (s *Session) Save(path string) error {
	s.Pinwalk = SessionVersion
	data, err := yaml.Marshal(s)
	if err != nil {
		return fmt.Errorf("saving session: %w", err)
	}
	if !s.cleaned {
		CleanStaleTemps(path, time.Now())
		s.cleaned = true
	}
	return saveWithBackup(path, data)
}

// saveWithBackup writes data to path, keeping the file it replaces as
// path.bak. Order: new data to a synced temp file; the old file copied to
// path.bak atomically; the temp renamed over path; the directory synced.
func saveWithBackup(path string, data []byte) error {
	tmp, err := writeTemp(path, data)
	if err != nil {
		return fmt.Errorf("saving session %s: %w", path, err)
	}
	if old, err := os.ReadFile(path); err == nil {
		// Keep the last good copy; a failure here is not fatal, and
		// leaves the previous .bak whole.
		if bak, err := writeTemp(path+".bak", old); err == nil {
			if err := os.Rename(bak, path+".bak"); err != nil {
				os.Remove(bak)
			} else {
				syncDir(filepath.Dir(path))
			}
		}
	}
	if err := os.Rename(tmp, path); err != nil {
		os.Remove(tmp)
		return fmt.Errorf("saving session %s: %w", path, err)
	}
	if err := syncDir(filepath.Dir(path)); err != nil {
		return fmt.Errorf("saving session %s: syncing the directory: %w", path, err)
	}
	return nil
}

// tempPrefix is the start of the names of path's temporary files:
// ".NAME.tmp-". Each temp file is ".NAME.tmp-PID-RANDOM", PID being the
// writing process, so a later run can tell a dead writer's leftovers from
// a live one's file in progress.
func tempPrefix(path string) string { return "." + filepath.Base(path) + ".tmp-" }

// writeTemp writes data to a new temporary file beside path, synced and
// closed, and returns its name. On failure nothing is left behind.
func writeTemp(path string, data []byte) (string, error) {
	f, err := os.CreateTemp(filepath.Dir(path), tempPrefix(path)+strconv.Itoa(os.Getpid())+"-*")
	if err != nil {
		return "", err
	}
	name := f.Name()
	if _, err := f.Write(data); err != nil {
		f.Close()
		os.Remove(name)
		return "", err
	}
	if err := f.Sync(); err != nil {
		f.Close()
		os.Remove(name)
		return "", err
	}
	if err := f.Close(); err != nil {
		os.Remove(name)
		return "", err
	}
	return name, nil
}

func syncDir(dir string) error {
	d, err := os.Open(dir)
	if err != nil {
		return err
	}
	defer d.Close()
	return d.Sync()
}

// StaleTempAge is the age after which a temporary file whose writer
// cannot be told dead (an older build's name without a process id, or a
// process id in use again) counts as stale. No save takes this long.
const StaleTempAge = 10 * time.Minute

// CleanStaleTemps removes the temporary files that interrupted saves of
// the session at path (and of its .bak) left in its directory, and
// returns their names. Only regular files named ".NAME.tmp-PID-RANDOM" or
// ".NAME.bak.tmp-PID-RANDOM" (or an older build's ".NAME.tmp-RANDOM") are
// touched, and only stale ones: the writing process is gone, or the file
// is older than StaleTempAge. Another session's files, and a save in
// progress by a running pinwalk, are left alone. Errors are ignored:
// cleaning is a courtesy, never a reason to refuse a session.
func CleanStaleTemps(path string, now time.Time) []string {
	dir := filepath.Dir(path)
	entries, err := os.ReadDir(dir)
	if err != nil {
		return nil
	}
	var removed []string
	for _, e := range entries {
		rest, ok := strings.CutPrefix(e.Name(), tempPrefix(path))
		if !ok {
			rest, ok = strings.CutPrefix(e.Name(), tempPrefix(path+".bak"))
		}
		if !ok || !e.Type().IsRegular() {
			continue
		}
		pid, random, hasPID := strings.Cut(rest, "-")
		if !hasPID {
			random, pid = pid, ""
		}
		if !allDigits(random) || (hasPID && !allDigits(pid)) {
			continue
		}
		info, err := e.Info()
		if err != nil {
			continue
		}
		stale := now.Sub(info.ModTime()) > StaleTempAge
		if hasPID && !stale {
			n, err := strconv.Atoi(pid)
			stale = err == nil && n != os.Getpid() && !processAlive(n)
		}
		if stale && os.Remove(filepath.Join(dir, e.Name())) == nil {
			removed = append(removed, e.Name())
		}
	}
	return removed
}

func allDigits(s string) bool {
	if s == "" {
		return false
	}
	for _, c := range s {
		if c < '0' || c > '9' {
			return false
		}
	}
	return true
}
