package procedures

import (
	"bytes"
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
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
	// Overrides are stops let through with a reason; Halts the switch-offs.
	Overrides []Override `yaml:"overrides,omitempty"`
	Halts     []Halt     `yaml:"switch-offs,omitempty"`
	// Cycle is the current power cycle (see Reading.Cycle).
	Cycle int `yaml:"power-cycle,omitempty"`
	// Pulled lists the valves the walk has asked to be out of their
	// sockets now.
	Pulled []string `yaml:"valves-out,omitempty"`
}

// DesignRef names the design a session was taken against.
type DesignRef struct {
	File  string `yaml:"file"`
	Title string `yaml:"title"`
	Hash  string `yaml:"sha256"`
}

// Bench holds the bench conditions the user stated.
type Bench struct {
	Mains float64 `yaml:"mains-volts,omitempty"`
	Meter string  `yaml:"meter,omitempty"`
	Who   string  `yaml:"technician,omitempty"`
	AmpID string  `yaml:"amp,omitempty"`
}

// Reading is one meter reading.
type Reading struct {
	Step    string    `yaml:"step"`
	Point   point.Key `yaml:"point"`
	Raw     string    `yaml:"typed"` // exactly what the user typed
	Value   float64   `yaml:"value"` // SI units
	Unit    string    `yaml:"unit"`
	At      time.Time `yaml:"at"`
	Variac  float64   `yaml:"variac,omitempty"` // fraction of mains applied, 0 = not on a variac
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
	Seed     uint64 `yaml:"seed"`
	Fault    string `yaml:"fault"` // hidden from the trainee until revealed
	Named    string `yaml:"named,omitempty"`
	Revealed bool   `yaml:"revealed,omitempty"`
	Score    int    `yaml:"score,omitempty"`
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
}

func (e *SessionError) Error() string {
	return fmt.Sprintf("%s:%d:%d: %s: %s", e.File, e.Line, e.Col, e.Field, e.Msg)
}

// LoadSession reads a session file. A truncated or damaged file gives a
// *SessionError naming the place and what was expected.
func LoadSession(path string) (*Session, error) {
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

// ParseSession reads a session from bytes; name is used in messages.
func ParseSession(name string, data []byte) (*Session, error) {
	if len(data) > MaxSessionBytes {
		return nil, &SessionError{File: name, Line: 1, Col: 1, Field: "file", Msg: fmt.Sprintf("larger than %d MiB: expected a pinwalk session file", MaxSessionBytes>>20)}
	}
	if bytes.IndexByte(data, 0) >= 0 {
		return nil, &SessionError{File: name, Line: 1, Col: 1, Field: "file", Msg: "not a text file: expected a pinwalk session (YAML)"}
	}
	var root yaml.Node
	if err := yaml.Unmarshal(data, &root); err != nil {
		line := 1
		if i := strings.Index(err.Error(), "line "); i >= 0 {
			fmt.Sscanf(err.Error()[i+5:], "%d", &line)
		}
		return nil, &SessionError{File: name, Line: line, Col: 1, Field: "file",
			Msg: "not valid YAML (" + strings.TrimPrefix(err.Error(), "yaml: ") + "): the session may be truncated; earlier readings are in the last good copy (" + filepath.Base(name) + ".bak) if it exists"}
	}
	if len(root.Content) == 0 {
		return nil, &SessionError{File: name, Line: 1, Col: 1, Field: "file", Msg: "empty: expected a pinwalk session"}
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
			Msg: "damaged session (" + strings.TrimPrefix(msg, fmt.Sprintf("line %d: ", line)) + "): the file may be truncated or edited by hand; expected a pinwalk session file"}
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
// previous version is kept as FILE.bak.
func (s *Session) Save(path string) error {
	s.Pinwalk = SessionVersion
	data, err := yaml.Marshal(s)
	if err != nil {
		return fmt.Errorf("saving session: %w", err)
	}
	return writeAtomic(path, data)
}

func writeAtomic(path string, data []byte) error {
	dir := filepath.Dir(path)
	tmp, err := os.CreateTemp(dir, "."+filepath.Base(path)+".tmp-*")
	if err != nil {
		return fmt.Errorf("saving session: %w", err)
	}
	name := tmp.Name()
	clean := func(e error) error {
		tmp.Close()
		os.Remove(name)
		return fmt.Errorf("saving session %s: %w", path, e)
	}
	if _, err := tmp.Write(data); err != nil {
		return clean(err)
	}
	if err := tmp.Sync(); err != nil {
		return clean(err)
	}
	if err := tmp.Close(); err != nil {
		os.Remove(name)
		return fmt.Errorf("saving session %s: %w", path, err)
	}
	if _, err := os.Stat(path); err == nil {
		// Keep the last good copy; a failure here is not fatal.
		if old, err := os.ReadFile(path); err == nil {
			_ = os.WriteFile(path+".bak", old, 0o644)
		}
	}
	if err := os.Rename(name, path); err != nil {
		os.Remove(name)
		return fmt.Errorf("saving session %s: %w", path, err)
	}
	if d, err := os.Open(dir); err == nil {
		_ = d.Sync()
		d.Close()
	}
	return nil
}
