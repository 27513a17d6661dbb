package procedures

import (
	"fmt"

	"pinwalk/expect/point"
)

// Exception is one thing the summary must show: a reading out of its
// band, a stop or a switch-off, a stop let through by an override, a
// step skipped.
type Exception struct {
	// Kind: "out of band", "stop", "switch off", "override", "skipped",
	// "safety step skipped".
	Kind string
	// Step is the title of the step it happened on.
	Step string
	// Text says it in words (labels, not point keys).
	Text string
}

// Exceptions lists, in the order they happened within each kind, every
// stop and switch-off, every out-of-band reading, every override and
// every skipped step of the session: the summary's list of what needs a
// look, none left out.
func Exceptions(r *Runner) []Exception {
	s := r.Sess
	var out []Exception
	title := func(id string) string {
		if st := r.Proc.Step(id); st != nil {
			return st.Title
		}
		return id
	}
	// titleFor: the title of the step a reading was taken on, when that
	// step still measures the point (a fault-finding step's id is reused
	// for the next suggestion: its title would name the wrong point).
	titleFor := func(id string, k point.Key) string {
		if st := r.Proc.Step(id); st != nil {
			for _, m := range st.Measures {
				if m.Point == k {
					return st.Title
				}
			}
		}
		return "a fault-finding measurement"
	}
	for _, k := range s.Skips {
		kind := "skipped"
		if k.Safety {
			kind = "safety step skipped"
		}
		out = append(out, Exception{Kind: kind, Step: title(k.Step), Text: "why: " + k.Reason})
	}
	for _, rd := range s.Readings {
		if rd.Status == Corrected || rd.Status == Retry {
			continue
		}
		kind := ""
		switch {
		case rd.Consequence == Stop:
			kind = "stop"
		case rd.Consequence == SwitchOff:
			kind = "switch off"
		case rd.Status == OutOfBand:
			kind = "out of band"
		default:
			continue
		}
		text := fmt.Sprintf("%s read %s", r.LabelOf(rd.Point), fmtBand(rd.Value, rd.Unit))
		if rd.High > rd.Low {
			text += fmt.Sprintf(", expected %s to %s", fmtBand(rd.Low, rd.Unit), fmtBand(rd.High, rd.Unit))
		}
		if rd.Variac > 0 && rd.Variac < 1 {
			text += fmt.Sprintf(" at %.0f %% mains", 100*rd.Variac)
		}
		out = append(out, Exception{Kind: kind, Step: titleFor(rd.Step, rd.Point), Text: text})
	}
	for _, o := range s.Overrides {
		out = append(out, Exception{Kind: "override", Step: titleFor(o.Step, o.Point), Text: fmt.Sprintf("%s let through: %s", r.LabelOf(o.Point), o.Reason)})
	}
	return out
}

// LabelOf is the words for a point as the procedure's measures label it
// (the model's words, then the point's own text, where no step measures it).
func (r *Runner) LabelOf(k point.Key) string { return r.labelOf("", k) }
