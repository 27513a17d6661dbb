package design

import (
	"gopkg.in/yaml.v3"

	"pinwalk/expect/units"
)

// Output transformer windings beyond the plain primary: screen taps on a
// push-pull primary (ultralinear) and the secondary's speaker-side nets,
// so a feedback network can be wired from the speaker to a cathode.
//
//	primary: {ends: [PA, PB], centre: B1, dcr: 240R, impedance: 6k6}
//	taps: {ul: [UA, UB], percent: 40}
//	secondary: {load: 8R, dcr: 0R4, hot: SPK}
//
// percent is the share of each half's turns from the centre tap to its
// tap; at DC a tap is that point of the half's DCR.

// otSecondaryNet reads secondary.hot or secondary.cold.
func (l *loader) otSecondaryNet(p *Part, which string, n *yaml.Node, field string) {
	s, ok := l.netName(n, field)
	if !ok {
		return
	}
	if which == "hot" {
		p.OT.SecHot = s
	} else {
		p.OT.SecCold = s
	}
	p.markField(field, posOf(n))
	p.Terminals = append(p.Terminals, Terminal{Name: "secondary." + which, Net: s, Pos: posOf(n)})
}

// otFinish reads the taps and completes the secondary once the primary
// has been read.
func (l *loader) otFinish(p *Part, taps, sec *yaml.Node, f string) {
	ot := p.OT
	if ot.SecCold != "" && ot.SecHot == "" {
		l.errAt(p.FieldPos("output-transformer.secondary.cold"), f+".secondary.hot",
			"missing hot: a secondary with a cold end needs its hot end's net too (secondary: {hot: SPK, cold: 0V})")
	}
	if ot.SecHot != "" && ot.SecCold == "" && sec != nil {
		// The usual case: the cold end goes to chassis. The loader adds
		// it with the design's ground once that is known (otGround).
		ot.SecCold = groundPending
		p.Terminals = append(p.Terminals, Terminal{Name: "secondary.cold", Net: groundPending, Pos: posOf(sec)})
	}
	if ot.SecHot != "" && ot.SecHot == ot.SecCold {
		l.errAt(p.FieldPos("output-transformer.secondary.hot"), f+".secondary", "both secondary ends on net %s: the secondary is shorted", ot.SecHot)
	}
	if taps == nil {
		return
	}
	tf := f + ".taps"
	got := map[string]*yaml.Node{}
	for _, kv := range l.pairs(taps, tf, []string{"ul", "percent"}) {
		got[kv[0].Value] = kv[1]
	}
	if taps.Kind != yaml.MappingNode {
		return
	}
	if ot.Centre == "" {
		l.errf(taps, tf, "screen taps on a single-ended primary are not modelled: expected taps only on a push-pull primary (ends: [PA, PB], centre: B1)")
		return
	}
	un, ok := got["ul"]
	if !ok {
		l.errf(taps, tf+".ul", "missing ul: expected the two screen-tap nets, the tap on the half to %s first (ul: [UA, UB])", ot.Ends[0])
		return
	}
	nets, ok := l.netList(un, tf+".ul", 2)
	if !ok {
		return
	}
	for i, nn := range nets {
		for _, other := range []string{ot.Centre, ot.Ends[0], ot.Ends[1], nets[1-i]} {
			if nn == other {
				l.errf(un.Content[i], tf+".ul", "tap net %s is also a primary end, the centre or the other tap: expected a net of its own (the screen's)", nn)
				return
			}
		}
	}
	pn, ok := got["percent"]
	if !ok {
		l.errf(taps, tf+".percent", "missing percent: expected the tap's share of each half's turns from the centre tap (percent: 43)")
		return
	}
	v, ok := l.value(pn, tf+".percent", units.Percent, p)
	if !ok {
		return
	}
	if v <= 0 || v >= 100 {
		l.errf(pn, tf+".percent", "%s: expected a share of each half's turns between 0 %% and 100 %% (ultralinear taps are usually 20 %% to 50 %%)", units.Format(v, units.Percent))
		return
	}
	ot.TapFrac = v / 100
	ot.Taps = [2]string{nets[0], nets[1]}
	p.markField(tf, posOf(taps))
	for i, nn := range nets {
		p.Terminals = append(p.Terminals, Terminal{Name: "tap." + string(rune('a'+i)), Net: nn, Pos: posOf(un.Content[i])})
	}
}

// groundPending stands for the design's ground net while parts are read
// before the top-level ground is known; resolveGroundPending replaces it.
const groundPending = "\x00ground"

// resolveGroundPending puts the design's ground net where a part took
// chassis by default (an output transformer's secondary cold end).
func resolveGroundPending(d *Design) {
	for _, p := range d.Parts {
		if p.OT != nil && p.OT.SecCold == groundPending {
			p.OT.SecCold = d.Ground
		}
		for i := range p.Terminals {
			if p.Terminals[i].Net == groundPending {
				p.Terminals[i].Net = d.Ground
			}
		}
	}
}

// WindingSegment is one resistive piece of an output transformer winding
// at DC: between two nets, with its DCR, named by its role ("primary",
// "half-a", "half-a.outer", "secondary").
type WindingSegment struct {
	A, B string
	Ohms float64
	Role string
}

// Segments returns the output transformer's windings as DC resistances.
// A push-pull half with a screen tap is two segments: centre to tap
// ("half-a", TapFrac of the half's DCR) and tap to plate ("half-a.outer",
// the rest). The secondary is a segment of its own (isolated from the
// primary) when its speaker nets are wired.
func (ot *OutputTransformerPart) Segments() []WindingSegment {
	var out []WindingSegment
	switch {
	case ot.Centre == "":
		out = append(out, WindingSegment{ot.Ends[0], ot.Ends[1], ot.DCR[0], "primary"})
	case ot.Taps[0] == "":
		out = append(out, WindingSegment{ot.Centre, ot.Ends[0], ot.DCR[0], "half-a"},
			WindingSegment{ot.Centre, ot.Ends[1], ot.DCR[1], "half-b"})
	default:
		t := ot.TapFrac
		for i, h := range []string{"a", "b"} {
			out = append(out, WindingSegment{ot.Centre, ot.Taps[i], t * ot.DCR[i], "half-" + h},
				WindingSegment{ot.Taps[i], ot.Ends[i], (1 - t) * ot.DCR[i], "half-" + h + ".outer"})
		}
	}
	if ot.SecHot != "" {
		out = append(out, WindingSegment{ot.SecHot, ot.SecCold, ot.SecDCR, "secondary"})
	}
	return out
}

// HalfRoles are the segment roles of a push-pull half ("a" or "b"): an
// open half opens all of them.
func HalfRoles(half string) []string {
	return []string{"half-" + half, "half-" + half + ".outer"}
}

// otJoins are the groups of nets an output transformer joins at DC: the
// primary with its taps, and the secondary apart from it.
func otJoins(ot *OutputTransformerPart) [][]string {
	pri := []string{ot.Ends[0], ot.Ends[1]}
	if ot.Centre != "" {
		pri = append(pri, ot.Centre)
	}
	for _, t := range ot.Taps {
		if t != "" {
			pri = append(pri, t)
		}
	}
	out := [][]string{pri}
	if ot.SecHot != "" {
		out = append(out, []string{ot.SecHot, ot.SecCold})
	}
	return out
}

// speakerOnly: the use is an output transformer's secondary hot end, the
// speaker jack, which needs nothing else wired to it in the design.
func speakerOnly(d *Design, u NetUse) bool {
	p := d.ByRef[u.Ref]
	return p != nil && p.Kind == OutputTransformer && u.Terminal == "secondary.hot"
}
