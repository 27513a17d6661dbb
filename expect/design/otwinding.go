package design

import (
	"fmt"

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

// otDCR reads an output transformer primary's dcr. Three spellings:
//
//	dcr: {whole: 200R}          the whole primary, end to end (plate to
//	                            plate on a push-pull primary: split equally)
//	dcr: {halves: [95R, 105R]}  push-pull, centre to the first end and
//	                            centre to the second
//	dcr: 200R / [95R, 105R]     the bare forms: one figure is the whole
//	                            primary (a note says so on a push-pull
//	                            one), a list is per half
func (l *loader) otDCR(p *Part, dn *yaml.Node, df string) {
	ot := p.OT
	pp := ot.Centre != ""
	ohms := func(n *yaml.Node, field string) (float64, bool) {
		v, ok := l.value(n, field, units.Ohms, p)
		if ok && (v <= 0 || v > 1e4) {
			l.errf(n, field, "%s is out of range: expected a primary DCR of tens to hundreds of ohms", units.Format(v, units.Ohms))
			return 0, false
		}
		return v, ok
	}
	whole := func(n *yaml.Node, field string, said bool) {
		v, ok := ohms(n, field)
		if !ok {
			return
		}
		if !pp {
			ot.DCR = [2]float64{v, 0}
			return
		}
		ot.DCR = [2]float64{v / 2, v / 2}
		ot.DCRWhole, ot.DCRSaid = true, said
		if !said {
			h := units.FormatRKM(v/2, units.Ohms)
			l.add(posOf(n), Note, field, "", "%s taken as the whole primary, plate to plate: %s per half (say so with dcr: {whole: %s}; for figures per half write dcr: {halves: [%s, %s]})",
				units.Format(v, units.Ohms), units.Format(v/2, units.Ohms), units.FormatRKM(v, units.Ohms), h, h)
		}
	}
	halves := func(n *yaml.Node, field string, said bool) {
		if !pp {
			l.errf(n, field, "DCRs per half given but the primary has no centre: expected one DCR for a single-ended primary (dcr: 230R)")
			return
		}
		if n.Kind != yaml.SequenceNode || len(n.Content) != 2 {
			l.errf(n, field, "expected two DCRs, one per half: centre to %s, then centre to %s ([95R, 105R]); for the whole primary write dcr: {whole: 200R}", ot.Ends[0], ot.Ends[1])
			return
		}
		var h [2]float64
		for i := range 2 {
			v, ok := ohms(n.Content[i], field)
			if !ok {
				return
			}
			h[i] = v
		}
		ot.DCR, ot.DCRSaid = h, said
	}
	switch dn.Kind {
	case yaml.MappingNode:
		got := map[string]*yaml.Node{}
		for _, kv := range l.pairs(dn, df, []string{"whole", "halves"}) {
			got[kv[0].Value] = kv[1]
		}
		w, hasW := got["whole"]
		hv, hasH := got["halves"]
		switch {
		case hasW && hasH:
			l.errf(dn, df, "both whole and halves given: expected one of them (dcr: {whole: 200R} or dcr: {halves: [95R, 105R]})")
		case hasW:
			whole(w, df+".whole", true)
		case hasH:
			halves(hv, df+".halves", true)
		default:
			l.errf(dn, df, "expected whole or halves: dcr: {whole: 200R} for the primary end to end, dcr: {halves: [95R, 105R]} per half")
		}
	case yaml.SequenceNode:
		if !pp {
			l.errf(dn, df, "two DCRs given but the primary has no centre: expected one DCR for a single-ended primary")
			return
		}
		if len(dn.Content) != 2 {
			l.errf(dn, df, "%d DCRs given: expected one per half, [95R, 105R], or one figure for the whole primary end to end, 200R", len(dn.Content))
			return
		}
		halves(dn, df, false)
	default:
		whole(dn, df, false)
	}
}

// TransformerSummary is one output transformer in a design summary.
type TransformerSummary struct {
	Ref, Part string
	Windings  string // "primary PA–PB, centre B1; screen taps …; secondary …"
}

// otWindingWords names an output transformer's windings by their nets.
func otWindingWords(ot *OutputTransformerPart) string {
	w := "primary " + ot.Ends[0] + "–" + ot.Ends[1]
	if ot.Centre != "" {
		w += ", centre " + ot.Centre
	}
	if ot.Taps[0] != "" {
		w += fmt.Sprintf("; screen taps %s (half to %s), %s (half to %s) at %s of each half from the centre",
			ot.Taps[0], ot.Ends[0], ot.Taps[1], ot.Ends[1], units.Format(100*ot.TapFrac, units.Percent))
	}
	if ot.SecHot != "" {
		w += fmt.Sprintf("; secondary %s–%s, %s load", ot.SecHot, ot.SecCold, units.Format(ot.Load, units.Ohms))
	} else {
		w += fmt.Sprintf("; secondary not wired in the design (%s load)", units.Format(ot.Load, units.Ohms))
	}
	if ot.SecDCR > 0 {
		w += ", DCR " + units.Format(ot.SecDCR, units.Ohms)
	}
	return w
}
