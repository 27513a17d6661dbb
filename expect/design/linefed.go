package design

import (
	"fmt"
	"sort"
	"strings"

	"pinwalk/expect/units"
)

// Transformerless (AC/DC) sets: the HT rectifier fed straight from the
// mains, the heaters in one series string with a dropper across the mains,
// the chassis on one side of the mains and a two-pin inlet. This file is
// the one place that recognises them.

// Inlet returns the mains inlet part, or nil.
func (d *Design) Inlet() *Part {
	if ps := d.PartsOfKind(MainsInlet); len(ps) > 0 {
		return ps[0]
	}
	return nil
}

// TwoPin reports a mains inlet with no earth: nothing in the set is tied
// to the protective earth, so there is no earth bond to test.
func (d *Design) TwoPin() bool {
	in := d.Inlet()
	if in == nil {
		return false
	}
	_, ok := in.Net("earth")
	return !ok
}

// mainsPoles returns the inlet's live and neutral nets ("" when absent).
func (d *Design) mainsPoles() (live, neutral string) {
	in := d.Inlet()
	if in == nil {
		return "", ""
	}
	live, _ = in.Net("live")
	neutral, _ = in.Net("neutral")
	return live, neutral
}

// LineFeed is the path from the mains to a rectifier anode with no
// transformer between: fuses and series (surge-limiting) resistors.
type LineFeed struct {
	Anode    string   // the rectifier anode net
	From     string   // the mains net the path starts from (the inlet's live, or its neutral)
	Fuses    []string // fuse refs on the path, mains end first
	Series   []string // resistor refs on the path, mains end first
	Ohms     float64  // the resistors' total
	PathNets []string // every net on the path, mains end first, the anode last
}

// linePath finds a path from the mains net from to net to through fuses
// and resistors only (a mains switch is drawn as nothing: the nets are one),
// never through the ground net. Parts in skip are not used.
func (d *Design) linePath(from, to string, skip map[string]bool) ([]*Part, []string, bool) {
	type hop struct {
		part *Part
		prev string
	}
	seen := map[string]hop{from: {}}
	queue := []string{from}
	for len(queue) > 0 {
		n := queue[0]
		queue = queue[1:]
		if n == to {
			var parts []*Part
			nets := []string{n}
			for n != from {
				h := seen[n]
				parts = append([]*Part{h.part}, parts...)
				n = h.prev
				nets = append([]string{n}, nets...)
			}
			return parts, nets, true
		}
		if n == d.Ground && n != from {
			continue
		}
		for _, u := range d.Nets[n] {
			p := d.ByRef[u.Ref]
			if p == nil || skip[p.Ref] || (p.Kind != Fuse && p.Kind != Resistor) || len(p.Terminals) != 2 {
				continue
			}
			o := p.Terminals[0].Net
			if o == n {
				o = p.Terminals[1].Net
			}
			if _, ok := seen[o]; ok {
				continue
			}
			seen[o] = hop{part: p, prev: n}
			queue = append(queue, o)
		}
	}
	return nil, nil, false
}

// LineFeedTo returns the path from the mains inlet's live (or, failing
// that, its neutral) to the rectifier anode net anode, when there is one
// through fuses and resistors only.
func (d *Design) LineFeedTo(anode string) (LineFeed, bool) {
	live, neutral := d.mainsPoles()
	for _, from := range []string{live, neutral} {
		if from == "" || from == d.Ground {
			continue
		}
		parts, nets, ok := d.linePath(from, anode, nil)
		if !ok {
			continue
		}
		lf := LineFeed{Anode: anode, From: from, PathNets: nets}
		for _, p := range parts {
			if p.Kind == Fuse {
				lf.Fuses = append(lf.Fuses, p.Ref)
			} else {
				lf.Series = append(lf.Series, p.Ref)
				lf.Ohms += p.Value
			}
		}
		return lf, true
	}
	return LineFeed{}, false
}

// HeaterString is a series heater string: the valves' heaters end to end
// with a dropper resistor, the whole string across the mains.
type HeaterString struct {
	Valves   []string // valve refs from the live end
	Droppers []string // resistor refs between the mains and the string
	DropOhms float64  // the droppers' total, ohms
	LiveEnd  string   // the net of the string's live end (the mains side of the droppers)
	Top      string   // the heater net at the string's live end (the droppers' heater side)
	Return   string   // the net of the string's other end (neutral or chassis)
	Amps     float64  // the rated heater current (every heater's, when they agree)
	// Mismatch names a heater whose rated current differs from the
	// string's ("" when all agree).
	Mismatch string
}

// RatedOhms is the string's hot resistance: every heater at its rated
// volts over rated amps, plus the droppers.
func (h *HeaterString) RatedOhms(d *Design) float64 {
	r := h.DropOhms
	for _, ref := range h.Valves {
		vp := d.ByRef[ref].Valve
		r += vp.HeaterVolts / vp.HeaterAmps
	}
	return r
}

// onWinding reports whether a valve's heater nets are the two ends of one
// power-transformer winding.
func (d *Design) onWinding(vp *ValvePart) bool {
	for _, p := range d.PartsOfKind(PowerTransformer) {
		for _, w := range p.PT.Windings {
			e := map[string]bool{w.Ends[0]: true, w.Ends[1]: true}
			if e[vp.HeaterNets[0]] && e[vp.HeaterNets[1]] {
				return true
			}
		}
	}
	return false
}

// SeriesHeaters finds the series heater string: the heaters not on a
// transformer winding, chained end to end, one end on the mains neutral
// or the chassis, the other reaching the mains live through resistors
// (the dropper) and fuses. ok is false when the design has no such
// string; err says why a chain of heaters is not a string pinwalk can
// solve.
func (d *Design) SeriesHeaters() (hs *HeaterString, err error) {
	live, neutral := d.mainsPoles()
	if live == "" {
		return nil, nil
	}
	edges := map[string][]string{} // net → valve refs with a heater end on it
	var refs []string
	for _, p := range d.Valves() {
		vp := p.Valve
		if vp.HeaterNets[0] == "" || d.onWinding(vp) {
			continue
		}
		refs = append(refs, p.Ref)
		edges[vp.HeaterNets[0]] = append(edges[vp.HeaterNets[0]], p.Ref)
		edges[vp.HeaterNets[1]] = append(edges[vp.HeaterNets[1]], p.Ref)
	}
	if len(refs) == 0 {
		return nil, nil
	}
	isReturn := func(n string) bool { return n == d.Ground || (n != "" && n == neutral) }
	// Walk from the return end.
	start := ""
	for _, n := range d.NetNames() {
		if isReturn(n) && len(edges[n]) == 1 {
			start = n
			break
		}
	}
	if start == "" {
		return nil, fmt.Errorf("the heaters of %s are not on a transformer winding and no heater ends on the mains neutral or chassis: expected a series heater string from the dropper to %s", strings.Join(refs, ", "), d.Ground)
	}
	used := map[string]bool{}
	var chain []string
	n := start
	for {
		var next string
		for _, ref := range edges[n] {
			if !used[ref] {
				next = ref
			}
		}
		if next == "" {
			break
		}
		used[next] = true
		chain = append(chain, next)
		h := d.ByRef[next].Valve.HeaterNets
		if h[0] == n {
			n = h[1]
		} else {
			n = h[0]
		}
		if len(edges[n]) > 2 {
			return nil, fmt.Errorf("heater net %s joins %d heaters: a series string joins two at each point", n, len(edges[n]))
		}
	}
	if len(chain) != len(refs) {
		var left []string
		for _, r := range refs {
			if !used[r] {
				left = append(left, r)
			}
		}
		sort.Strings(left)
		return nil, fmt.Errorf("the heaters of %s are not in the string from %s: expected every heater off a winding in one series string", strings.Join(left, ", "), start)
	}
	top := n
	hs = &HeaterString{Return: start}
	for i := len(chain) - 1; i >= 0; i-- {
		hs.Valves = append(hs.Valves, chain[i])
	}
	parts, _, ok := d.linePath(live, top, nil)
	if !ok {
		return nil, fmt.Errorf("the series heater string's end %s does not reach the mains live %s through a dropper resistor or fuse", top, live)
	}
	hs.LiveEnd, hs.Top = top, top
	for _, p := range parts {
		if p.Kind == Resistor {
			hs.Droppers = append(hs.Droppers, p.Ref)
			hs.DropOhms += p.Value
		}
	}
	if len(hs.Droppers) > 0 {
		// The mains side of the droppers: where the path leaves the live
		// side (the net after the fuses).
		first := d.ByRef[hs.Droppers[0]]
		a, b := first.Terminals[0].Net, first.Terminals[1].Net
		_, nets, _ := d.linePath(live, top, nil)
		for _, x := range nets {
			if x == a || x == b {
				hs.LiveEnd = x
				break
			}
		}
	}
	hs.Amps = d.ByRef[hs.Valves[0]].Valve.HeaterAmps
	for _, ref := range hs.Valves {
		if a := d.ByRef[ref].Valve.HeaterAmps; a < hs.Amps*0.97 || a > hs.Amps*1.03 {
			hs.Mismatch = ref
		}
	}
	return hs, nil
}

// HotChassis says whether the chassis may sit at mains potential, and why
// in words: a transformerless set whose rectifier is fed from the mains,
// or whose chassis is tied to a mains pole (directly, or through a
// resistor or capacitor) with no protective earth on the inlet. A chassis
// tied straight to a mains pole is hot even with an earth pin.
func (d *Design) HotChassis() (bool, string) {
	live, neutral := d.mainsPoles()
	if live == "" && neutral == "" {
		return false, ""
	}
	var why []string
	if len(d.PartsOfKind(PowerTransformer)) == 0 {
		if db, _ := d.VoltageDoubler(); db != nil && db.Line != nil {
			why = append(why, fmt.Sprintf("there is no power transformer: the voltage doubler %s/%s is fed straight from the mains %s (%s)",
				db.Diodes[0].Ref, db.Diodes[1].Ref, d.poleWord(db.Line.From), db.Line.From))
		}
		for _, p := range d.Parts {
			for _, a := range p.RectifierAnodes() {
				if lf, ok := d.LineFeedTo(a); ok {
					why = append(why, fmt.Sprintf("there is no power transformer: the rectifier %s is fed straight from the mains %s (%s)", p.Ref, d.poleWord(lf.From), lf.From))
					break
				}
			}
		}
	}
	for _, pole := range []string{live, neutral} {
		if pole == "" {
			continue
		}
		word := "neutral"
		if pole == live {
			word = "live"
		}
		if pole == d.Ground {
			why = append(why, fmt.Sprintf("the chassis net %s is the mains %s", d.Ground, word))
			continue
		}
		if by := d.tieTo(pole); by != "" {
			if !d.TwoPin() && by != "direct" {
				continue
			}
			why = append(why, fmt.Sprintf("the chassis is tied to the mains %s %s", word, map[string]string{"direct": "through a fuse", "resistor": "through a resistor", "capacitor": "through a capacitor"}[by]))
		}
	}
	if len(why) == 0 {
		return false, ""
	}
	if d.TwoPin() {
		why = append(why, "the mains inlet has no earth")
	}
	return true, strings.Join(why, "; ")
}

// poleWord names a mains net: "live" or "neutral".
func (d *Design) poleWord(net string) string {
	if _, n := d.mainsPoles(); net == n {
		return "neutral"
	}
	return "live"
}

// tieTo says how the ground net is joined to the net pole by one part:
// "direct" (a fuse), "resistor", "capacitor", or "".
func (d *Design) tieTo(pole string) string {
	best := ""
	for _, u := range d.Nets[pole] {
		p := d.ByRef[u.Ref]
		if p == nil || len(p.Terminals) != 2 {
			continue
		}
		a, b := p.Terminals[0].Net, p.Terminals[1].Net
		if !(a == pole && b == d.Ground || b == pole && a == d.Ground) {
			continue
		}
		switch p.Kind {
		case Fuse:
			return "direct"
		case Resistor:
			best = "resistor"
		case Capacitor:
			if best == "" {
				best = "capacitor"
			}
		}
	}
	return best
}

// checkHeaterString checks a series heater string: one current through
// every heater (a heater of another rated current in the string runs hot
// or cold), and the mains over the string's hot resistance near that
// current. It returns the refs of the valves in the string.
func (l *loader) checkHeaterString(d *Design) map[string]bool {
	in := map[string]bool{}
	hs, err := d.SeriesHeaters()
	if err != nil {
		if len(d.PartsOfKind(PowerTransformer)) == 0 {
			for _, p := range d.Valves() {
				if p.Valve.HeaterNets[0] != "" {
					l.add(p.FieldPos("heater"), Error, p.Ref+".heater", "wire the heaters end to end: dropper from the live after the fuse, the last heater to the neutral or chassis",
						"%s", err.Error())
					break
				}
			}
		}
		return in
	}
	if hs == nil {
		return in
	}
	for _, ref := range hs.Valves {
		in[ref] = true
	}
	if hs.Mismatch != "" {
		p := d.ByRef[hs.Mismatch]
		l.add(p.FieldPos("heater"), Warning, p.Ref+".heater", "every heater in a series string must have the same rated current",
			"the %s's heater is rated %s, the string's %s: in one series string it runs at the string's current, not its own",
			p.Valve.Type.Name, units.Format(p.Valve.HeaterAmps, units.Amps), units.Format(hs.Amps, units.Amps))
	}
	amps := d.Mains.Volts / hs.RatedOhms(d)
	for _, ref := range hs.Valves {
		p := d.ByRef[ref]
		vp := p.Valve
		v := amps * vp.HeaterVolts / vp.HeaterAmps
		if v > vp.HeaterVolts*1.1 || v < vp.HeaterVolts*0.9 {
			l.add(p.FieldPos("heater"), Warning, p.Ref+".heater", "choose the dropper so the mains over the string's hot resistance gives the rated heater current",
				"the series string draws %s at %s mains, so the %s's heater gets %s against its %s rating (outside ±10 %%)",
				units.Format(amps, units.Amps), units.Format(d.Mains.Volts, units.Volts), vp.Type.Name,
				units.Format(v, units.Volts), units.Format(vp.HeaterVolts, units.Volts))
		}
	}
	return in
}

// MainsSideNets returns the nets on the mains side of a transformerless
// set: the path from the inlet's live to the rectifier anode and the
// heater string's nets (the chassis excluded). They carry mains AC, not
// DC worth a reading to chassis.
func (d *Design) MainsSideNets() map[string]bool {
	out := map[string]bool{}
	if len(d.PartsOfKind(PowerTransformer)) > 0 {
		return out
	}
	live, neutral := d.mainsPoles()
	for _, p := range d.Parts {
		if p.Kind == Rectifier && p.Rect.Bridge {
			continue
		}
		for _, a := range p.RectifierAnodes() {
			if lf, ok := d.LineFeedTo(a); ok {
				for _, n := range lf.PathNets {
					out[n] = true
				}
			}
		}
	}
	if hs, err := d.SeriesHeaters(); err == nil && hs != nil {
		if _, nets, ok := d.linePath(live, hs.LiveEnd, nil); ok {
			for _, n := range nets {
				out[n] = true
			}
		}
		for _, ref := range hs.Valves {
			for _, n := range d.ByRef[ref].Valve.HeaterNets {
				out[n] = true
			}
		}
		for _, ref := range hs.Droppers {
			for _, t := range d.ByRef[ref].Terminals {
				out[t.Net] = true
			}
		}
	}
	if live != "" {
		out[live] = true
	}
	if neutral != "" {
		out[neutral] = true
	}
	delete(out, d.Ground)
	return out
}
