package design

import (
	"fmt"
	"sort"
	"strings"

	"pinwalk/expect/units"
	"pinwalk/expect/valves"
)

// validate runs the whole-design checks once every part has parsed.
func (l *loader) validate(d *Design) {
	if len(d.Parts) == 0 {
		l.errAt(Pos{1, 1}, "parts", "no parts: expected at least a power supply and one valve")
		return
	}
	if len(d.Nets[d.Ground]) == 0 {
		l.add(l.groundPos, Error, "ground", "name the chassis net with `ground: 0V` and connect the HT centre tap, cathode resistors and grid leaks to it",
			"nothing connects to the ground net %q", d.Ground)
	}
	names := d.NetNames()
	for _, net := range names {
		uses := d.Nets[net]
		if len(uses) != 1 || net == d.Ground || speakerOnly(d, uses[0]) {
			continue
		}
		u := uses[0]
		others := make([]string, 0, len(names))
		for _, n := range names {
			if n != net {
				others = append(others, n)
			}
		}
		msg := fmt.Sprintf("net %s has only one connection (%s %s)", net, u.Ref, u.Terminal)
		if dym := didYouMean(net, others); dym != "" {
			msg += ": " + dym
		} else {
			msg += ": a net joins at least two parts; is a part missing or a name misspelled?"
		}
		hint := ""
		if p := d.ByRef[u.Ref]; p != nil && p.Kind == OutputTransformer && p.OT.Centre != "" {
			hint = "a push-pull primary needs both ends wired to plates: is an output transformer half missing?"
		}
		l.add(u.Pos, Error, u.Ref+"."+u.Terminal, hint, "%s", msg)
	}
	l.checkSupply(d)
	l.checkDCPaths(d)
	l.checkHeaters(d)
	l.checkFilamentCathodes(d)
	l.checkRectifierHeaters(d)
	l.checkSwappedElectrodes(d)
	l.checkBiasPots(d)
	for _, p := range d.Parts {
		for _, f := range p.Placeholder {
			l.add(p.FieldPos(strings.TrimPrefix(f, p.Ref+".")), Note, f, "", "placeholder value: replace it with the value on your amp's schematic or part (then drop the ?)")
		}
	}
}

// checkSupply checks that rectifiers are fed from transformer windings and
// that a centre-tapped HT winding has its centre tap grounded.
func (l *loader) checkSupply(d *Design) {
	winding := map[string]*Winding{} // end net → winding
	for _, p := range d.PartsOfKind(PowerTransformer) {
		for _, w := range p.PT.Windings {
			winding[w.Ends[0]] = w
			winding[w.Ends[1]] = w
		}
	}
	pts := d.PartsOfKind(PowerTransformer)
	if len(pts) > 1 {
		l.errAt(pts[1].Pos, pts[1].Ref, "more than one power transformer: expected one (describe extra windings as secondaries of it)")
	}
	supplies := len(d.PartsOfKind(DCSupply)) + len(d.PartsOfKind(BiasSupply))
	rects := 0
	dbl, _ := d.VoltageDoubler()
	for _, p := range d.Parts {
		anodes := p.RectifierAnodes()
		if anodes == nil {
			continue
		}
		if dbl.IsDiode(p) {
			rects++ // a voltage doubler's diode: fed through the doubler, not a winding end
			continue
		}
		if p.Kind == Rectifier && !p.Rect.Bridge && len(anodes) == 1 && winding[anodes[0]] == nil && winding[p.Rect.Plus] != nil {
			// A negative supply (grid bias): the half-wave diode's
			// cathode on the winding, its anode on the reservoir.
			anodes = []string{p.Rect.Plus}
		}
		rects++
		var w *Winding
		for _, a := range anodes {
			ww := winding[a]
			if ww == nil && len(pts) == 0 && len(anodes) == 1 {
				if _, ok := d.LineFeedTo(a); ok {
					continue // a transformerless set: half-wave off the mains
				}
			}
			if ww == nil {
				l.add(p.Pos, Error, p.Ref, "wire the rectifier to the HT winding's ends (ends: [HTA, HTB] on the transformer)",
					"rectifier anode net %s is not an end of any power-transformer secondary", a)
				return
			}
			w = ww
		}
		if w == nil {
			continue
		}
		if len(anodes) == 2 && p.Kind != Rectifier || (p.Kind == Rectifier && !p.Rect.Bridge && len(anodes) == 2) {
			if !w.CentreTap || w.Centre == "" {
				l.add(p.Pos, Error, p.Ref, "write the winding as volts: 250-0-250 with centre: 0V",
					"a full-wave rectifier with two anodes needs a centre-tapped winding; %s has none", w.Name)
			} else if w.Centre != d.Ground {
				l.add(w.Pos, Error, windingField(d, w)+".centre", "centre tap not grounded: the HT centre tap normally goes to chassis (centre: "+d.Ground+")",
					"the centre tap of %s is on net %s, not ground, so the full-wave rectifier has no return path", w.Name, w.Centre)
			}
		}
	}
	if rects == 0 && supplies == 0 {
		l.errAt(Pos{1, 1}, "parts", "no supply: expected a power transformer with a rectifier, or a dc-supply part for a bench supply")
	}
}

// dcJoins lists, for DC connectivity, the groups of nets each part joins
// with a DC path (resistors, windings, chokes, rectifiers; not capacitors
// or the plate–cathode path of an amplifying valve).
func dcJoins(p *Part) [][]string {
	nets := func() []string {
		var out []string
		for _, t := range p.Terminals {
			out = append(out, t.Net)
		}
		return out
	}
	switch p.Kind {
	case Resistor, Choke, Pot, Fuse, BiasSupply, DCSupply:
		return [][]string{nets()}
	case Capacitor:
		if p.Leakage > 0 {
			return [][]string{nets()}
		}
	case PowerTransformer:
		var g [][]string
		for _, w := range p.PT.Windings {
			grp := []string{w.Ends[0], w.Ends[1]}
			if w.Centre != "" {
				grp = append(grp, w.Centre)
			}
			g = append(g, grp)
		}
		return g
	case OutputTransformer:
		return otJoins(p.OT)
	case Rectifier:
		return [][]string{nets()}
	case Valve:
		if p.Valve.Type.Kind == valves.Rectifier {
			return [][]string{nets()}
		}
		return [][]string{p.Valve.HeaterNets[:]}
	}
	return nil
}

// DCGroups returns a map from net to a representative: nets with the same
// representative are joined by a DC path through parts other than
// capacitors and amplifying valves.
func (d *Design) DCGroups() map[string]string {
	parent := map[string]string{}
	var find func(string) string
	find = func(n string) string {
		if parent[n] == "" || parent[n] == n {
			parent[n] = n
			return n
		}
		r := find(parent[n])
		parent[n] = r
		return r
	}
	for n := range d.Nets {
		find(n)
	}
	for _, p := range d.Parts {
		for _, grp := range dcJoins(p) {
			for _, n := range grp[1:] {
				if n == "" || grp[0] == "" {
					continue
				}
				a, b := find(grp[0]), find(n)
				if a != b {
					parent[a] = b
				}
			}
		}
	}
	out := map[string]string{}
	for n := range d.Nets {
		out[n] = find(n)
	}
	return out
}

// checkDCPaths reports grids and cathodes with no DC path to ground.
func (l *loader) checkDCPaths(d *Design) {
	g := d.DCGroups()
	ground := g[d.Ground]
	through := newValvePaths(d, g)
	for _, p := range d.Valves() {
		vt := p.Valve.Type
		if vt.Kind == valves.Rectifier {
			continue
		}
		secs := make([]string, 0, len(p.Valve.Sections))
		for s := range p.Valve.Sections {
			secs = append(secs, s)
		}
		sort.Strings(secs)
		for _, s := range secs {
			if p.Valve.Unused[s] {
				continue
			}
			m := p.Valve.Sections[s]
			for _, e := range []string{valves.Grid, valves.Cathode, valves.Screen, valves.Plate} {
				net, ok := m[e]
				if !ok || net == "" || g[net] == ground || through.reaches(net, d.Ground, p.Ref, s) {
					continue
				}
				field := join(join(p.Ref, s), e)
				pos := p.FieldPos(join(s, e))
				switch e {
				case valves.Grid:
					l.add(pos, Error, field, "grid left floating: add a grid leak resistor to ground or to the bias supply",
						"grid net %s has no DC path to ground: the valve's bias is undefined", net)
				case valves.Cathode:
					l.add(pos, Error, field, "add the cathode resistor, or tie the cathode to ground",
						"cathode net %s has no DC path to ground: the valve cannot conduct", net)
				default:
					l.add(pos, Error, field, "wire the "+e+" to B+ through its load or stopper",
						"%s net %s has no DC path to the supply", e, net)
				}
			}
		}
	}
}

// checkHeaters checks valve heaters against the winding they hang on.
func (l *loader) checkHeaters(d *Design) {
	type load struct {
		amps  float64
		refs  []string
		volts float64
	}
	var windings []*Winding
	for _, p := range d.PartsOfKind(PowerTransformer) {
		windings = append(windings, p.PT.Windings...)
	}
	loads := map[*Winding]*load{}
	inString := l.checkHeaterString(d)
	for _, p := range d.Valves() {
		vp := p.Valve
		if vp.HeaterNets[0] == "" {
			continue
		}
		var w *Winding
		for _, ww := range windings {
			e := map[string]bool{ww.Ends[0]: true, ww.Ends[1]: true}
			if e[vp.HeaterNets[0]] && e[vp.HeaterNets[1]] {
				w = ww
			}
		}
		if w == nil {
			if _, ok := inString[p.Ref]; ok {
				continue
			}
			if len(windings) > 0 {
				l.add(p.FieldPos("heater"), Warning, p.Ref+".heater", "",
					"heater nets %s, %s are not the two ends of one transformer winding: heater volts cannot be predicted", vp.HeaterNets[0], vp.HeaterNets[1])
			}
			continue
		}
		if ld := loads[w]; ld == nil {
			loads[w] = &load{}
		}
		loads[w].amps += vp.HeaterAmps
		loads[w].refs = append(loads[w].refs, p.Ref)
		if w.Volts > 0 && (w.Volts/vp.HeaterVolts > 1.15 || w.Volts/vp.HeaterVolts < 0.87) {
			l.add(p.FieldPos("heater"), Error, p.Ref+".heater", "",
				"a %s heater wired for %s is on the %s winding: expected a winding near the heater rating",
				vp.Type.Name, units.Format(vp.HeaterVolts, units.Volts), units.Format(w.Volts, units.Volts))
		}
	}
	for _, w := range windings {
		ld := loads[w]
		if ld == nil || w.RatedAmps == 0 {
			continue
		}
		if ld.amps > w.RatedAmps*1.0001 {
			l.add(w.Pos, Warning, windingField(d, w), "",
				"heater winding %s is loaded with %s by %s, over its %s rating",
				w.Name, units.Format(ld.amps, units.Amps), strings.Join(ld.refs, ", "), units.Format(w.RatedAmps, units.Amps))
		}
	}
}

// windingField is the dotted field path of a secondary winding, as the
// loader names it ("T1.power-transformer.secondaries.HT").
func windingField(d *Design, w *Winding) string {
	for _, p := range d.PartsOfKind(PowerTransformer) {
		for _, x := range p.PT.Windings {
			if x == w {
				return p.Ref + "." + string(PowerTransformer) + ".secondaries." + w.Name
			}
		}
	}
	return "secondaries." + w.Name
}

// checkFilamentCathodes checks directly heated triodes (2A3, 300B): the
// filament is the cathode, so the cathode net must be one filament end, the
// centre tap of the filament winding, or the wiper of a hum-balance pot
// across the filament (common practice).
func (l *loader) checkFilamentCathodes(d *Design) {
	for _, p := range d.Valves() {
		vp := p.Valve
		vt := vp.Type
		if !vt.Heater.DirectlyHeated || vt.Kind == valves.Rectifier || vp.HeaterNets[0] == "" {
			continue
		}
		cat := vp.Sections[""][valves.Cathode]
		if cat == "" {
			continue
		}
		h := vp.HeaterNets
		ok := cat == h[0] || cat == h[1]
		for _, pt := range d.PartsOfKind(PowerTransformer) {
			for _, w := range pt.PT.Windings {
				e := map[string]bool{w.Ends[0]: true, w.Ends[1]: true}
				if e[h[0]] && e[h[1]] && w.Centre != "" && w.Centre == cat {
					ok = true
				}
			}
		}
		for _, pot := range d.PartsOfKind(Pot) {
			var a, b, wiper string
			for _, t := range pot.Terminals {
				switch t.Name {
				case "a":
					a = t.Net
				case "b":
					b = t.Net
				case "wiper":
					wiper = t.Net
				}
			}
			if wiper == cat && ((a == h[0] && b == h[1]) || (a == h[1] && b == h[0])) {
				ok = true
			}
		}
		if !ok {
			l.add(p.FieldPos("cathode"), Error, p.Ref+".cathode",
				"take the cathode from the filament winding's centre tap (centre: NET), a hum-balance pot across the filament (wiper), or one filament end",
				"a %s is directly heated: its filament is the cathode, so the cathode net %s must be a filament net (%s, %s), the filament winding's centre tap or a hum-balance pot's wiper",
				vt.Name, cat, h[0], h[1])
		}
	}
}
