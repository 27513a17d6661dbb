package faults

import (
	"fmt"
	"strings"
	"sync"

	"pinwalk/expect/amp"
	"pinwalk/expect/design"
)

// What a fault looks like with the power off: the one place that says,
// for each fault, what a technician would see on a look inside the
// chassis, where to look, and how often it shows (common practice).

// Sign is one thing a fault may show on a look with the power off.
type Sign struct {
	// At is the reference of the part to look at (the fault's own part,
	// or the mains fuse for a short that blows it).
	At string
	// Words say what is seen ("R7 scorched: …").
	Words string
	// Share is how often a fault of this kind shows the sign (common
	// practice).
	Share float64
}

// How often a fault shows (common practice; bench experience, not a
// published rate).
const (
	// BurntOpenShare of the opens, and BurntHighShare of the drifts high,
	// of a resistor dissipating more than BurnRisk of its rating show a
	// scorched body.
	BurntOpenShare = 0.6
	BurntHighShare = 0.4
	BurnRisk       = 0.25
	// BulgeShortShare of shorted electrolytics and DriedShare of dried-out
	// (open) ones show a domed top, a vented seal or leaked electrolyte.
	BulgeShortShare = 0.5
	DriedShare      = 0.3
	// WhiteGetterShare of dead valves have let air in: the silvery getter
	// patch inside the glass has turned milky white.
	WhiteGetterShare = 0.5
	// BlackFuseShare of the mains fuses blown by a short downstream have
	// a blackened or silvered glass (a fuse that fails of age breaks
	// cleanly, with clear glass).
	BlackFuseShare = 0.8
	// FalseSignShare: a part that has not failed looks as if it had (an
	// old resistor discoloured, a sleeve shrunk, a getter thin) this often.
	FalseSignShare = 0.03
)

// Signs returns what a fault may show on a look with the power off, for
// each place to look; nil when nothing shows. nearShort says the fault
// puts a near-short on a B+ net (the mains fuse blows at switch-on); the
// caller knows it from the fault's cold readings.
func Signs(m *amp.Model, f Fault, nearShort bool) []Sign {
	var out []Sign
	p, half := splitRef(m, f.Ref)
	if p != nil && half == "" {
		switch p.Kind {
		case design.Resistor:
			if (f.Mode == Open || f.Mode == High) && burnRisk(m, p.Ref) {
				share := BurntOpenShare
				if f.Mode == High {
					share = BurntHighShare
				}
				out = append(out, Sign{At: p.Ref, Share: share,
					Words: fmt.Sprintf("%s scorched: a brown or blackened body, cracked or bubbled paint, the board dark under it", p.Ref)})
			}
		case design.Capacitor:
			if p.Material == "electrolytic" {
				switch f.Mode {
				case Short:
					out = append(out, Sign{At: p.Ref, Share: BulgeShortShare,
						Words: fmt.Sprintf("%s bulging: a domed top or base, a vented seal, electrolyte leaked round it", p.Ref)})
				case Open:
					out = append(out, Sign{At: p.Ref, Share: DriedShare,
						Words: fmt.Sprintf("%s dried out: a domed top, or a crusty brown ring of old electrolyte at its seal", p.Ref)})
				}
			}
		case design.Valve:
			if f.Mode == Dead {
				out = append(out, Sign{At: p.Ref, Share: WhiteGetterShare,
					Words: fmt.Sprintf("%s's getter turned milky white (air has got in; a good getter is silvery or black)", p.Ref)})
			}
		}
	}
	if nearShort {
		if fu := MainsFuse(m.D); fu != nil {
			out = append(out, Sign{At: fu.Ref, Share: BlackFuseShare,
				Words: fmt.Sprintf("%s blown with its glass blackened or silvered inside (a short downstream blew it)", fu.Ref)})
		}
	}
	return out
}

// Visible says what a fault shows on a look with the power off, in
// words, and whether it can show at all (see Signs; a near-short's
// blackened fuse is not included: it needs the fault's cold readings).
func Visible(m *amp.Model, f Fault) (sign string, ok bool) {
	ss := Signs(m, f, false)
	if len(ss) == 0 {
		return "", false
	}
	w := make([]string, len(ss))
	for i, s := range ss {
		w[i] = s.Words
	}
	return strings.Join(w, "; "), true
}

// LookAt returns the parts a look may find a sign on: resistors at burn
// risk, electrolytics, valves and the mains fuse, in design order.
func LookAt(m *amp.Model) []*design.Part {
	var out []*design.Part
	fuse := MainsFuse(m.D)
	for _, p := range m.D.Parts {
		switch {
		case p.Kind == design.Resistor && burnRisk(m, p.Ref),
			p.Kind == design.Capacitor && p.Material == "electrolytic",
			p.Kind == design.Valve,
			p == fuse:
			out = append(out, p)
		}
	}
	return out
}

// MainsFuse returns the fuse in the mains feed, or nil.
func MainsFuse(d *design.Design) *design.Part {
	for _, p := range d.PartsOfKind(design.Fuse) {
		if mainsFuse(d, p) {
			return p
		}
	}
	return nil
}

// burnRisk reports whether a resistor dissipates more than BurnRisk of
// its rating (0.5 W assumed where none is given) in the healthy
// amplifier at full mains.
func burnRisk(m *amp.Model, ref string) bool {
	r, ok := healthyPower(m)[ref]
	return ok && r.RatedWatts > 0 && r.Watts > BurnRisk*r.RatedWatts
}

var powerCache sync.Map // *amp.Model → map[string]amp.ResistorOP

// healthyPower is each resistor's dissipation in the healthy amplifier
// at full mains (solved once per model; empty if it does not solve).
func healthyPower(m *amp.Model) map[string]amp.ResistorOP {
	if v, ok := powerCache.Load(m); ok {
		return v.(map[string]amp.ResistorOP)
	}
	out := map[string]amp.ResistorOP{}
	var op amp.OP
	if amp.NewSolver(m).Solve(amp.Conditions{}, m.NominalValues(), false, &op) == nil {
		for _, r := range m.Resistors(&op) {
			out[r.Ref] = r
		}
	}
	powerCache.Store(m, out)
	return out
}
