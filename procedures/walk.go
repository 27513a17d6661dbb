package procedures

import (
	"errors"
	"fmt"
	"math"
	"path/filepath"
	"pinwalk/expect/ac"
	"regexp"
	"strings"
	"time"

	"pinwalk/expect/design"
	"pinwalk/expect/units"
)

// Walk is one running procedure: the runner over its session, the bench
// model that gives the bands, and for fault-finding and practice the loop
// that adds steps as readings come in.
type Walk struct {
	R *Runner
	B *BenchModel
	// Loop is nil for bring-up and training.
	Loop Loop
	opt  WalkOptions
}

// Loop is the dynamic part of a procedure: it adds steps as the
// session goes and understands commands of its mode.
type Loop interface {
	// Advance adds the next steps when the current ones are done. It is
	// called before every prompt; it adds nothing when a step is open.
	Advance() error
	// Command handles a mode-specific command line ("measure", "next",
	// "name R7:open", "symptoms hum, crackle"). handled is false for a
	// line the loop does not know; out are lines to show.
	Command(line string) (handled bool, out []string, err error)
	// Hint is what the loop wants shown with the current step (the
	// ranking of suspects, the simulated amp's answer), one line each.
	Hint() []string
}

// WalkOptions configure Open.
type WalkOptions struct {
	Samples int    // bands samples per variac setting (0: bands.DefaultSamples)
	Seed    uint64 // bands seed; a practice session's fault is picked by it
	// AcceptChanged continues a session whose design file changed since
	// it started.
	AcceptChanged bool
	Now           func() time.Time
	// Tone is the test tone of a signal-tracing session (zero: 1 kHz,
	// 100 mV at the first input grid).
	Tone ac.Options
}

// DesignChangedError reports a session taken against another version of
// the design file.
type DesignChangedError struct {
	File           string
	Was, Now       string // sha256 (hex)
	SessionStarted time.Time
}

func (e *DesignChangedError) Error() string {
	return fmt.Sprintf("the design %s changed since this session started on %s (sha256 %.12s… then, %.12s… now): its bands may not match the readings taken; continue only with --accept-changed-design",
		e.File, e.SessionStarted.Format("2006-01-02 15:04"), e.Was, e.Now)
}

// NewSession starts a session for a design.
func NewSession(d *design.Design, mode Mode, seed uint64, now time.Time) *Session {
	return &Session{Pinwalk: SessionVersion, Mode: mode, Started: now, Updated: now, Seed: seed,
		Design: DesignRef{File: d.File, Title: d.Title, Hash: d.Hash}}
}

// CheckDesign reports a *DesignChangedError when the design's hash is not
// the session's.
func CheckDesign(s *Session, d *design.Design) error {
	if s.Design.Hash != d.Hash {
		return &DesignChangedError{File: d.File, Was: s.Design.Hash, Now: d.Hash, SessionStarted: s.Started}
	}
	return nil
}

var unsafeName = regexp.MustCompile(`[^A-Za-z0-9._-]+`)

// DefaultSessionPath is the session file used when none is given: in
// the current directory, named after the design file (or title), the
// mode and the date: "se-6v6-stereo-bringup-2025-03-01.pinwalk.yaml".
func DefaultSessionPath(d *design.Design, mode Mode, now time.Time) string {
	base := strings.TrimSuffix(filepath.Base(d.File), filepath.Ext(d.File))
	base = strings.TrimPrefix(base, "demo:")
	if base == "" || base == "." {
		base = d.Title
	}
	base = strings.Trim(unsafeName.ReplaceAllString(base, "-"), "-")
	if base == "" {
		base = "design"
	}
	return fmt.Sprintf("%s-%s-%s.pinwalk.yaml", base, mode, now.Format("2006-01-02"))
}

// ErrDesignChanged is wrapped by Open's error on a changed design.
var ErrDesignChanged = errors.New("design changed")

// Open builds the procedure of the session's mode for a design and a
// runner over the session (new or loaded), saving to path after every
// change. A session taken against another version of the design is
// refused with a *DesignChangedError unless opt.AcceptChanged; then a
// note records the change.
func Open(d *design.Design, s *Session, path string, opt WalkOptions) (*Walk, error) {
	if err := CheckDesign(s, d); err != nil {
		if !opt.AcceptChanged {
			return nil, err
		}
		var dc *DesignChangedError
		errors.As(err, &dc)
		s.Notes = append(s.Notes, Note{Text: "design changed since the session started (accepted): sha256 " + dc.Was + " then, " + dc.Now + " now", At: now(opt)})
		s.Design.Hash = d.Hash
	}
	seed := opt.Seed
	if s.Seed != 0 {
		seed = s.Seed
	}
	s.Seed = seed
	b, err := NewBenchModel(d, BenchOptions{Samples: opt.Samples, Seed: seed})
	if err != nil {
		return nil, err
	}
	return openWith(b, s, path, opt)
}

// openWith builds the procedure of the session's mode over a bench model
// already made (a walk that changes mode keeps its bands).
func openWith(b *BenchModel, s *Session, path string, opt WalkOptions) (*Walk, error) {
	var err error
	w := &Walk{B: b, opt: opt}
	var p *Procedure
	var ex Expecter = b
	switch s.Mode {
	case BringUp, Training:
		p, err = BringUpProcedure(b)
		if err == nil && s.Mode == Training {
			p.Mode, p.Title = Training, "Training: "+p.Title
		}
	case FaultFind, Practise:
		p, err = FaultFindProcedure(b, s.Mode)
	case Signal:
		var tb *ToneBench
		if tb, err = NewToneBench(b, opt.Tone); err == nil {
			p, err = SignalProcedureWith(tb)
			ex = tb
		}
		if p != nil {
			p.Mode = Signal
		}
	default:
		err = fmt.Errorf("unknown mode %q", s.Mode)
	}
	if err != nil {
		return nil, err
	}
	// Steps added by an earlier run of the session go back in, before the
	// summary, in the order they were added.
	if len(s.Added) > 0 {
		sum := p.Steps[len(p.Steps)-1]
		p.Steps = append(append(p.Steps[:len(p.Steps)-1], s.Added...), sum)
	}
	if hot, why := b.D.HotChassis(); hot {
		p.HotChassis = why
		placeIsolation(p)
		markHotChassis(p, p.Steps...)
	}
	r := NewRunner(p, s, path, ex)
	if opt.Now != nil {
		r.Now = opt.Now
	}
	w.R = r
	if s.Mode == FaultFind || s.Mode == Practise {
		if w.Loop, err = newFaultLoop(w); err != nil {
			return nil, err
		}
	}
	return w, r.SaveNow()
}

func now(opt WalkOptions) time.Time {
	if opt.Now != nil {
		return opt.Now()
	}
	return time.Now()
}

// placeIsolation moves the isolation-transformer step just before the
// first live step (before the summary when there is none yet: the
// measuring loop adds its live steps after it).
func placeIsolation(p *Procedure) {
	i := p.Index(StepIsolation)
	if i < 0 {
		return
	}
	iso := p.Steps[i]
	rest := append(append([]*Step(nil), p.Steps[:i]...), p.Steps[i+1:]...)
	at := len(rest) - 1
	for j, st := range rest {
		if st.Live {
			at = j
			break
		}
	}
	p.Steps = append(append(append([]*Step(nil), rest[:at]...), iso), rest[at:]...)
}

// AddStep inserts a step before the summary and records it in the
// session so that a resumed session rebuilds it.
func (w *Walk) AddStep(st *Step) {
	p := w.R.Proc
	markHotChassis(p, st)
	n := len(p.Steps)
	p.Steps = append(p.Steps[:n-1], st, p.Steps[n-1])
	w.R.Sess.Added = append(w.R.Sess.Added, st)
}

// FormatValue formats a value in a measure's unit ("312 V", "4.7 kΩ",
// "open").
func FormatValue(v float64, unit string) string { return fmtBand(v, unit) }

// FormatBand formats a band: "280 V – 320 V (nominal 300 V)".
func FormatBand(b Band, unit string) string {
	if math.IsInf(b.High, 1) && b.Low > 0 && math.IsInf(b.Nominal, 1) {
		return fmt.Sprintf("open (above %s)", fmtBand(b.Low, unit))
	}
	return fmt.Sprintf("%s – %s (nominal %s)", fmtBand(b.Low, unit), fmtBand(b.High, unit), fmtBand(b.Nominal, unit))
}

// Summary returns the summary of a session, one line each: every
// skipped safety step with its reason first, then everything that needs
// a look (Exceptions), then every reading by its label against its band,
// out-of-band readings marked, notes and the outcome.
func Summary(r *Runner) []string {
	var out []string
	s := r.Sess
	out = append(out, fmt.Sprintf("Session: %s, %s, design %s (sha256 %.12s…)", s.Mode, s.Design.Title, s.Design.File, s.Design.Hash))
	if sk := r.SkippedSafety(); len(sk) > 0 {
		out = append(out, "SKIPPED SAFETY STEPS:")
		for _, k := range sk {
			title := k.Step
			if st := r.Proc.Step(k.Step); st != nil {
				title = st.Title
			}
			out = append(out, fmt.Sprintf("  ! %s: skipped, reason: %s", title, k.Reason))
		}
	}
	ex := Exceptions(r)
	out = append(out, fmt.Sprintf("Needs a look (%d): every stop, reading out of band, override and skipped step", len(ex)))
	for _, e := range ex {
		out = append(out, fmt.Sprintf("  %s: %s (%s)", e.Kind, e.Text, e.Step))
	}
	out = append(out, fmt.Sprintf("Readings (%d):", len(s.Readings)))
	bad := 0
	for _, rd := range s.Readings {
		mark := "  "
		if rd.Status == OutOfBand {
			mark, bad = "X ", bad+1
		} else if rd.Status == Retry {
			mark = "? "
		}
		band := ""
		if rd.Status != Done {
			band = fmt.Sprintf(" expected %s – %s", fmtBand(rd.Low, rd.Unit), fmtBand(rd.High, rd.Unit))
		}
		variac := ""
		if rd.Variac > 0 && rd.Variac < 1 {
			variac = fmt.Sprintf(" at %.0f %% mains", 100*rd.Variac)
		}
		out = append(out, fmt.Sprintf("  %s%s: %s [%s]%s%s", mark, r.LabelOf(rd.Point), fmtBand(rd.Value, rd.Unit), rd.Status, band, variac))
	}
	out = append(out, fmt.Sprintf("Out of band: %d", bad))
	if len(s.Guesses) > 0 {
		good := 0
		for _, g := range s.Guesses {
			if g.Good {
				good++
			}
		}
		out = append(out, fmt.Sprintf("Predictions within the band: %d of %d", good, len(s.Guesses)))
	}
	if len(s.Attempts) > 0 {
		out = append(out, fmt.Sprintf("Attempts to go out of order: %d", len(s.Attempts)))
		for _, a := range s.Attempts {
			out = append(out, fmt.Sprintf("  %s blocked by %s", a.Step, a.Blocked))
		}
	}
	for _, n := range s.Notes {
		out = append(out, "Note: "+n.Text)
	}
	if s.Outcome != nil {
		if s.Outcome.Found != "" && s.Outcome.Summary == "" {
			found := s.Outcome.Found
			if d, ok := r.Expect.(interface{ DescribeFault(string) string }); ok {
				found = d.DescribeFault(found)
			}
			out = append(out, "Found: "+found)
		}
		if s.Outcome.Summary != "" {
			out = append(out, s.Outcome.Summary)
		}
	}
	if p := s.Practice; p != nil && p.Revealed {
		out = append(out, fmt.Sprintf("Practice: the fault was %s; you named %s; score %d", p.Fault, p.Named, p.Score))
	}
	return out
}

// formatSI is units.Format for a unit symbol.
func formatSI(v float64, unit string) string {
	switch unit {
	case "A":
		return units.Format(v, units.Amps)
	case "Ω":
		return units.Format(v, units.Ohms)
	}
	return units.Format(v, units.Volts)
}
