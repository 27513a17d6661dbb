package design

import (
	"fmt"
	"strings"

	"pinwalk/expect/units"
)

// Doubler is a voltage doubler written out as its parts: two one-anode
// silicon rectifiers and two capacitors off one transformer winding. This
// is the one place that recognises one (the supply model, the summary and
// everything after them ask here).
//
// Full-wave (Delon): the winding from Mid (the capacitors' junction) to
// Live; Diodes[0] from Live up to Out, Diodes[1] from chassis up to Live;
// Caps[0] from Out to Mid, Caps[1] from Mid to chassis.
//
// Half-wave (Greinacher): the winding from chassis to Live; Caps[0] the
// pump capacitor from Live to Mid, Diodes[0] from chassis up to Mid,
// Diodes[1] from Mid up to Out; Caps[1] the reservoir from Out to chassis.
type Doubler struct {
	Full           bool
	Diodes         [2]*Part
	Caps           [2]*Part
	Out, Mid, Live string
	Transformer    *Part
	Winding        *Winding
	// Line is the path from the mains to a transformerless half-wave
	// doubler's pump capacitor (nil with a transformer): the winding is
	// then the mains itself, from chassis (its neutral) to Live.
	Line *LineFeed
	// Bleeders are the resistors straight across each capacitor (nil
	// for none; a half-wave doubler's reservoir bleeder is an ordinary
	// load on its output and is not one of these).
	Bleeders [2]*Part
}

// IsDiode reports whether p is one of the doubler's diodes.
func (db *Doubler) IsDiode(p *Part) bool {
	return db != nil && (db.Diodes[0] == p || db.Diodes[1] == p)
}

// Kind names the doubler's form.
func (db *Doubler) Kind() string {
	if db.Full {
		return "full-wave voltage doubler"
	}
	return "half-wave voltage doubler"
}

// VoltageDoubler returns the design's voltage doubler, nil when it has
// none; an error for a half-wave doubler with no reservoir.
func (d *Design) VoltageDoubler() (*Doubler, error) {
	g := d.Ground
	windingOf := func(net string) (*Part, *Winding) {
		for _, p := range d.PartsOfKind(PowerTransformer) {
			for _, w := range p.PT.Windings {
				if w.Ends[0] == net || w.Ends[1] == net {
					return p, w
				}
			}
		}
		return nil, nil
	}
	between := func(kind Kind, minValue float64, a, b string) *Part {
		for _, u := range d.Nets[a] {
			c := d.ByRef[u.Ref]
			if c == nil || c.Kind != kind || c.Value < minValue || len(c.Terminals) != 2 {
				continue
			}
			x, y := c.Terminals[0].Net, c.Terminals[1].Net
			if (x == a && y == b) || (x == b && y == a) {
				return c
			}
		}
		return nil
	}
	var diodes []*Part
	for _, p := range d.PartsOfKind(Rectifier) {
		if !p.Rect.Bridge && len(p.Rect.Anodes) == 1 {
			diodes = append(diodes, p)
		}
	}
	for _, up := range diodes {
		for _, lo := range diodes {
			if up == lo || lo.Rect.Anodes[0] != g {
				continue
			}
			// Full-wave: lo from chassis up to the winding end up takes;
			// the winding's other end is the capacitors' junction.
			live := up.Rect.Anodes[0]
			if t, w := windingOf(live); w != nil && lo.Rect.Plus == live && w.Centre == "" {
				mid := w.Ends[0]
				if mid == live {
					mid = w.Ends[1]
				}
				out := up.Rect.Plus
				c1, c2 := between(Capacitor, 0.5e-6, out, mid), between(Capacitor, 0.5e-6, mid, g)
				if mid != g && c1 != nil && c2 != nil {
					return &Doubler{Full: true, Diodes: [2]*Part{up, lo}, Caps: [2]*Part{c1, c2}, Out: out, Mid: mid, Live: live,
						Transformer: t, Winding: w, Bleeders: [2]*Part{between(Resistor, 0, out, mid), between(Resistor, 0, mid, g)}}, nil
				}
			}
			// Half-wave: lo from chassis up to the junction, up from there
			// on; the pump capacitor from the junction to a winding end
			// whose other end is chassis.
			mid := up.Rect.Anodes[0]
			if lo.Rect.Plus != mid {
				continue
			}
			for _, u := range d.Nets[mid] {
				c := d.ByRef[u.Ref]
				if c == nil || c.Kind != Capacitor || c.Value < 0.5e-6 {
					continue
				}
				live := c.Terminals[0].Net
				if live == mid {
					live = c.Terminals[1].Net
				}
				t, w := windingOf(live)
				var line *LineFeed
				if lf, ok := d.LineFeedTo(live); ok && w == nil && len(d.PartsOfKind(PowerTransformer)) == 0 {
					line = &lf // a transformerless set: the pump off the mains
				} else if w == nil || w.Centre != "" || (w.Ends[0] != g && w.Ends[1] != g) {
					continue
				}
				out := up.Rect.Plus
				c2 := between(Capacitor, 0.5e-6, out, g)
				if c2 == nil {
					return nil, fmt.Errorf("%s:%d:%d: %s: a half-wave voltage doubler with no reservoir: expected a capacitor of 0.5 µF or more from %s to %s",
						d.File, up.Pos.Line, up.Pos.Col, up.Ref, out, g)
				}
				return &Doubler{Diodes: [2]*Part{lo, up}, Caps: [2]*Part{c, c2}, Out: out, Mid: mid, Live: live,
					Transformer: t, Winding: w, Line: line, Bleeders: [2]*Part{between(Resistor, 0, mid, live), nil}}, nil
			}
		}
	}
	return nil, nil
}

// doublerSource is the summary's source line of a voltage doubler.
func (db *Doubler) doublerSource(winding func([]string) string) string {
	var caps []string
	for _, c := range db.Caps {
		caps = append(caps, fmt.Sprintf("%s %s (%s–%s)", c.Ref, units.Format(c.Value, units.Farads), c.Terminals[0].Net, c.Terminals[1].Net))
	}
	return fmt.Sprintf("%s → %s and %s silicon diodes, %s with %s, each capacitor charged to the winding's peak → %s",
		winding([]string{db.Live}), db.Diodes[0].Ref, db.Diodes[1].Ref, db.Kind(), strings.Join(caps, " and "), db.Out)
}
