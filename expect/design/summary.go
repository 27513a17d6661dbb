package design

import (
	"fmt"
	"io"
	"sort"
	"strings"

	"pinwalk/expect/units"
	"pinwalk/expect/valves"
)

// Finding kinds reported by Summarize.
const (
	FindOneConnection       = "one-connection"        // a net with a single connection
	FindGridNoDC            = "grid-no-dc-path"       // a control grid with no DC path to ground
	FindCathodeNoDC         = "cathode-no-dc-path"    // a cathode with no DC path to ground
	FindHeaterOverload      = "heater-overload"       // valve heaters draw more than the winding's rating
	FindScreenNoStopper     = "screen-no-stopper"     // a screen straight on a B+ filter net
	FindElectrolyticNoVolts = "electrolytic-no-volts" // an electrolytic with no voltage rating
)

// SummaryFinding is one unusual thing Summarize noticed about a design.
type SummaryFinding struct {
	Kind     string // one of the Find* constants
	Severity Severity
	Ref      string // the part concerned, "" when it is a net
	Net      string // the net concerned, "" when none
	Pos      Pos
	Msg      string
}

// Conn is one connection to a net, as a summary shows it: the part, its
// terminal on the net, what the part is and the nets its other ends go to.
type Conn struct {
	Ref      string
	Terminal string   // "a", "pin 3", "HT.centre"
	Label    string   // "plate (pin 3)" for valves, else the terminal name
	Part     string   // "resistor 100 kΩ 0.5 W"
	Far      []string // the part's other nets (two-terminal parts only)
}

func (c Conn) String() string {
	s := c.Ref + " " + c.Label
	if c.Part != "" {
		s = c.Ref + " " + c.Part
		if len(c.Far) > 0 {
			s += " → " + strings.Join(c.Far, ", ")
		}
	}
	return s
}

// SupplyStage is one filter net of a supply, from the rectifier outwards.
type SupplyStage struct {
	Net    string
	Depth  int    // 0 for the rectifier (or supply) output
	From   string // the net feeding it, "" at the output
	Series *Part  // the resistor or choke from From, nil at the output
	Caps   []*Part
	On     []Conn // every other connection: loads, bleeders, valve electrodes, next series parts
}

// SupplyChain is one supply drawn from its source outwards.
type SupplyChain struct {
	Name   string // "HT", "bias", "bench HT"
	Source string // one line: winding and rectifier, or the DC source
	Stages []SupplyStage
}

// PinSummary is one valve pin with its net and the other parts on that net.
type PinSummary struct {
	Pin       int
	Electrode string // "plate", "heater"...
	Section   string // "A"/"B" for double triodes
	Net       string
	Others    []Conn
}

// ValveSummary is one valve and its pins.
type ValveSummary struct {
	Ref  string
	Type *valves.Type
	Pins []PinSummary
}

// NetSummary is one net and everything on it.
type NetSummary struct {
	Net   string
	Conns []Conn
}

// Summary is a readable account of a design, to check it against its
// schematic: the supply chains, every valve pin, the parts on each net and
// the unusual things found.
type Summary struct {
	Title, File string
	Supplies    []SupplyChain
	Valves      []ValveSummary
	// Transformers are the output transformers: the part described (the
	// primary DCR and which way the file gave it) and its windings' nets.
	Transformers []TransformerSummary
	Nets         []NetSummary
	Findings     []SummaryFinding
	// Mains says, for a transformerless set, that the chassis may be at
	// mains potential and how the heaters are strung ("" lines omitted).
	Mains  []string
	ground string
}

// DescribePart says what a part is in a few words with its main values:
// "resistor 4.7 kΩ 2 W", "capacitor 47 µF 450 V electrolytic".
func DescribePart(p *Part) string {
	var b []string
	b = append(b, string(p.Kind))
	switch p.Kind {
	case Resistor:
		b = append(b, units.Format(p.Value, units.Ohms))
		if p.Watts > 0 {
			b = append(b, units.Format(p.Watts, units.Watts))
		}
	case Pot:
		b = append(b, units.Format(p.Value, units.Ohms), fmt.Sprintf("at %.0f%%", 100*p.Setting))
	case Capacitor:
		b = append(b, units.Format(p.Value, units.Farads))
		if p.Volts > 0 {
			b = append(b, units.Format(p.Volts, units.Volts))
		}
		b = append(b, p.Material)
	case Choke:
		b = append(b, units.Format(p.Value, units.Henries), units.Format(p.DCR, units.Ohms))
	case Fuse:
		b = append(b, units.Format(p.Value, units.Amps))
	case BiasSupply, DCSupply:
		b = append(b, units.Format(p.Value, units.Volts))
		if p.DCR > 0 {
			b = append(b, units.Format(p.DCR, units.Ohms))
		}
	case Valve:
		b = append(b, p.Valve.Type.Name)
	case Rectifier:
		if p.Rect.Bridge {
			b = append(b, "silicon bridge")
		} else {
			b = append(b, "silicon")
		}
	case OutputTransformer:
		ot := p.OT
		b = append(b, units.Format(ot.Impedance, units.Ohms))
		switch {
		case ot.Centre == "":
			b = append(b, "primary DCR "+units.Format(ot.DCR[0], units.Ohms))
		case ot.DCRWhole:
			given := "given as the whole primary"
			if !ot.DCRSaid {
				given = "one figure, taken as the whole primary"
			}
			b = append(b, fmt.Sprintf("primary DCR %s plate to plate (%s; %s per half)",
				units.Format(ot.DCR[0]+ot.DCR[1], units.Ohms), given, units.Format(ot.DCR[0], units.Ohms)))
		default:
			given := "given per half"
			if !ot.DCRSaid {
				given = "a list, taken per half"
			}
			b = append(b, fmt.Sprintf("primary DCR %s + %s per half (%s; %s plate to plate)",
				units.Format(ot.DCR[0], units.Ohms), units.Format(ot.DCR[1], units.Ohms), given, units.Format(ot.DCR[0]+ot.DCR[1], units.Ohms)))
		}
	}
	if p.Note != "" {
		b = append(b, "("+p.Note+")")
	}
	return strings.Join(b, " ")
}

// twoTerminal reports whether a part joins exactly two nets (so its far
// end is worth showing).
func twoTerminal(p *Part) bool {
	switch p.Kind {
	case Resistor, Capacitor, Choke, Fuse, BiasSupply, DCSupply:
		return len(p.Terminals) == 2
	}
	return false
}

// conn describes the connection u.
func conn(d *Design, u NetUse, net string) Conn {
	c := Conn{Ref: u.Ref, Terminal: u.Terminal, Label: u.Terminal}
	p := d.ByRef[u.Ref]
	if p == nil {
		return c
	}
	if p.Kind == Valve {
		c.Label = pinLabel(p, u.Terminal)
		return c
	}
	if twoTerminal(p) {
		c.Part = DescribePart(p)
		for _, t := range p.Terminals {
			if t.Name != u.Terminal {
				c.Far = append(c.Far, t.Net)
			}
		}
	}
	return c
}

// pinLabel turns "pin 3" into "plate (pin 3)" or "A grid (pin 2)".
func pinLabel(p *Part, terminal string) string {
	var n int
	if _, err := fmt.Sscanf(terminal, "pin %d", &n); err != nil {
		return terminal
	}
	var names []string
	for _, pin := range p.Valve.Type.Pins {
		if pin.Number == n {
			e := pin.Electrode
			if pin.Section != "" {
				e = pin.Section + " " + e
			}
			names = append(names, e)
		}
	}
	return strings.Join(names, "/") + " (" + terminal + ")"
}

// Summarize reads a design into a Summary. It works on any design the
// loader returned (even one with errors), and does not solve it.
func Summarize(d *Design) *Summary {
	s := &Summary{Title: d.Title, File: d.File, ground: d.Ground}
	s.Supplies = supplyChains(d)
	for _, p := range d.Valves() {
		s.Valves = append(s.Valves, valveSummary(d, p))
	}
	for _, p := range d.PartsOfKind(OutputTransformer) {
		s.Transformers = append(s.Transformers, TransformerSummary{Ref: p.Ref, Part: DescribePart(p), Windings: otWindingWords(p.OT)})
	}
	for _, net := range d.NetNames() {
		ns := NetSummary{Net: net}
		for _, u := range d.Nets[net] {
			ns.Conns = append(ns.Conns, conn(d, u, net))
		}
		s.Nets = append(s.Nets, ns)
	}
	s.Findings = findings(d, s)
	s.Mains = mainsWords(d)
	return s
}

// mainsWords describes a transformerless set's mains side: the hot
// chassis (design.HotChassis) and the series heater string.
func mainsWords(d *Design) []string {
	var out []string
	if hot, why := d.HotChassis(); hot {
		out = append(out, fmt.Sprintf("HOT CHASSIS: the chassis may be at mains potential (%s): power the set only through an isolation transformer (a variac alone is an autotransformer and does not isolate); the walk will not do a live step without one", why))
	}
	if hs, err := d.SeriesHeaters(); err == nil && hs != nil {
		amps := d.Mains.Volts / hs.RatedOhms(d)
		drop := "no dropper"
		if len(hs.Droppers) > 0 {
			drop = "the dropper " + strings.Join(hs.Droppers, ", ") + " (" + units.Format(hs.DropOhms, units.Ohms) + ")"
		}
		out = append(out, fmt.Sprintf("series heater string across the mains: %s and the heaters of %s, %s at %s mains (rated %s); one open heater and no valve lights",
			drop, strings.Join(hs.Valves, ", "), units.Format(amps, units.Amps), units.Format(d.Mains.Volts, units.Volts), units.Format(hs.Amps, units.Amps)))
	}
	return out
}

func valveSummary(d *Design, p *Part) ValveSummary {
	vs := ValveSummary{Ref: p.Ref, Type: p.Valve.Type}
	seen := map[int]bool{}
	for _, pin := range p.Valve.Type.Pins {
		if seen[pin.Number] {
			continue
		}
		seen[pin.Number] = true
		net, ok := p.Valve.PinNets[pin.Number]
		if !ok {
			continue
		}
		ps := PinSummary{Pin: pin.Number, Electrode: pin.Electrode, Section: pin.Section, Net: net}
		for _, q := range p.Valve.Type.Pins {
			if q.Number == pin.Number && q.Electrode != pin.Electrode {
				ps.Electrode += "/" + q.Electrode
			}
		}
		for _, u := range d.Nets[net] {
			if u.Ref == p.Ref {
				continue
			}
			ps.Others = append(ps.Others, conn(d, u, net))
		}
		vs.Pins = append(vs.Pins, ps)
	}
	return vs
}

// isFilterCap reports whether p is a capacitor from net to ground of at
// least 0.5 µF (a filter or reservoir capacitor, not a coupling or bypass
// film).
func isFilterCap(d *Design, p *Part, net string) bool {
	if p.Kind != Capacitor || p.Value < 0.5e-6 || len(p.Terminals) != 2 {
		return false
	}
	a, b := p.Terminals[0].Net, p.Terminals[1].Net
	return (a == net && b == d.Ground) || (b == net && a == d.Ground)
}

func filterCaps(d *Design, net string) []*Part {
	var out []*Part
	for _, u := range d.Nets[net] {
		if p := d.ByRef[u.Ref]; p != nil && isFilterCap(d, p, net) {
			out = append(out, p)
		}
	}
	return out
}

// supplyChains finds every supply (rectifier, dc-supply, bias-supply) and
// walks its filter nets outwards through resistors and chokes to nets that
// carry a filter capacitor.
func supplyChains(d *Design) []SupplyChain {
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
	winding := func(anodes []string) string {
		if len(anodes) == 0 {
			return "?"
		}
		t, w := windingOf(anodes[0])
		if w == nil {
			if lf, ok := d.LineFeedTo(anodes[0]); ok {
				via := append(append([]string(nil), lf.Fuses...), lf.Series...)
				s := fmt.Sprintf("the mains %s %s, no transformer", d.poleWord(lf.From), lf.From)
				if len(via) > 0 {
					s += ", through " + strings.Join(via, ", ")
				}
				if lf.Ohms > 0 {
					s += " (" + units.Format(lf.Ohms, units.Ohms) + ")"
				}
				return s + " to " + anodes[0]
			}
			return "no winding (anode net " + anodes[0] + ")"
		}
		v := units.Format(w.Volts, units.Volts)
		if w.CentreTap {
			v = strings.TrimSuffix(units.Format(w.Volts, units.Volts), " V")
			v = v + "-0-" + v + " V"
		}
		s := fmt.Sprintf("%s winding %s (%s", t.Ref, w.Name, v)
		if w.RatedAmps > 0 {
			s += ", " + units.Format(w.RatedAmps, units.Amps)
		}
		if w.Centre != "" {
			s += ", centre " + w.Centre
		}
		return s + ")"
	}
	var out []SupplyChain
	dbl, _ := d.VoltageDoubler()
	for _, p := range d.Parts {
		var ch SupplyChain
		var outNet string
		switch {
		case dbl.IsDiode(p):
			if p != dbl.Diodes[0] {
				continue // one chain for the doubler
			}
			ch, outNet = SupplyChain{Name: "HT", Source: dbl.doublerSource(winding)}, dbl.Out
		case p.Kind == Rectifier:
			outNet = p.Rect.Plus
			topo := "full-wave centre tap"
			anodes := p.Rect.Anodes
			name := "HT"
			switch {
			case p.Rect.Bridge && p.Rect.Plus == d.Ground:
				// A negative supply: plus to chassis, the output at minus.
				topo, anodes, outNet, name = "bridge, plus to "+p.Rect.Plus+", negative", p.Rect.AC[:], p.Rect.Minus, "bias"
			case p.Rect.Bridge:
				topo, anodes = "bridge, minus to "+p.Rect.Minus, p.Rect.AC[:]
			case len(anodes) == 1:
				topo = "half-wave"
				if _, w := windingOf(anodes[0]); w == nil {
					if _, w := windingOf(p.Rect.Plus); w != nil {
						// A negative supply: the diode's cathode on the
						// winding, the reservoir on its anode.
						topo, anodes, outNet, name = "half-wave, negative", []string{p.Rect.Plus}, p.Rect.Anodes[0], "bias"
					}
				}
			}
			ch = SupplyChain{Name: name, Source: fmt.Sprintf("%s → %s silicon rectifier, %s → %s", winding(anodes), p.Ref, topo, outNet)}
		case p.Kind == Valve && p.Valve.Type.Kind == valves.Rectifier:
			outNet = p.Valve.Sections[""][valves.Cathode]
			anodes := strings.Split(p.Valve.Sections[""][valves.Plates], ",")
			topo := "full-wave"
			if len(anodes) == 1 {
				topo = "half-wave"
			}
			ch = SupplyChain{Name: "HT", Source: fmt.Sprintf("%s → %s %s valve rectifier, %s, heater %s/%s → %s",
				winding(anodes), p.Ref, p.Valve.Type.Name, topo, p.Valve.HeaterNets[0], p.Valve.HeaterNets[1], outNet)}
		case p.Kind == DCSupply || p.Kind == BiasSupply:
			outNet, _ = p.Net("out")
			name := "bench HT"
			if p.Kind == BiasSupply {
				name = "bias"
			}
			ch = SupplyChain{Name: name, Source: fmt.Sprintf("%s %s %s, %s source resistance → %s", p.Ref, p.Kind,
				units.Format(p.Value, units.Volts), units.Format(p.DCR, units.Ohms), outNet)}
		default:
			continue
		}
		if outNet == "" {
			continue
		}
		ch.Stages = walkSupply(d, p, outNet)
		out = append(out, ch)
	}
	return out
}

func walkSupply(d *Design, src *Part, outNet string) []SupplyStage {
	stages := []SupplyStage{{Net: outNet}}
	visited := map[string]bool{outNet: true, d.Ground: true}
	if dbl, _ := d.VoltageDoubler(); dbl.IsDiode(src) {
		visited[dbl.Mid] = true // the doubler's own junction, not a filter stage
	}
	series := map[string]bool{}
	for i := 0; i < len(stages); i++ {
		net := stages[i].Net
		for _, u := range d.Nets[net] {
			p := d.ByRef[u.Ref]
			if p == nil || (p.Kind != Resistor && p.Kind != Choke) || len(p.Terminals) != 2 {
				continue
			}
			other := p.Terminals[0].Net
			if other == net {
				other = p.Terminals[1].Net
			}
			if visited[other] || len(filterCaps(d, other)) == 0 {
				continue
			}
			visited[other] = true
			series[p.Ref] = true
			stages = append(stages, SupplyStage{Net: other, Depth: stages[i].Depth + 1, From: net, Series: p})
		}
	}
	for i := range stages {
		st := &stages[i]
		st.Caps = filterCaps(d, st.Net)
		skip := map[string]bool{src.Ref: true}
		for _, c := range st.Caps {
			skip[c.Ref] = true
		}
		if st.Series != nil {
			skip[st.Series.Ref] = true
		}
		for _, next := range stages {
			if next.From == st.Net && next.Series != nil {
				skip[next.Series.Ref] = true // drawn as the next stage
			}
		}
		for _, u := range d.Nets[st.Net] {
			if skip[u.Ref] {
				continue
			}
			st.On = append(st.On, conn(d, u, st.Net))
		}
	}
	// Depth-first order, so each stage follows the one feeding it.
	var ordered []SupplyStage
	var visit func(net string)
	visit = func(net string) {
		for _, st := range stages {
			if st.From == net && st.Series != nil {
				ordered = append(ordered, st)
				visit(st.Net)
			}
		}
	}
	ordered = append(ordered, stages[0])
	visit(outNet)
	return ordered
}

// findings runs the unusual-net checks.
func findings(d *Design, s *Summary) []SummaryFinding {
	var out []SummaryFinding
	add := func(kind string, sev Severity, ref, net string, pos Pos, format string, args ...any) {
		out = append(out, SummaryFinding{Kind: kind, Severity: sev, Ref: ref, Net: net, Pos: pos, Msg: fmt.Sprintf(format, args...)})
	}
	for _, net := range d.NetNames() {
		uses := d.Nets[net]
		if net == d.Ground || len(uses) != 1 || speakerOnly(d, uses[0]) {
			continue
		}
		u := uses[0]
		add(FindOneConnection, Warning, u.Ref, net, u.Pos,
			"net %s has only one connection (%s %s): a net joins at least two parts; is a part missing or the name misspelled?",
			net, u.Ref, u.Terminal)
	}
	groups := d.DCGroups()
	ground := groups[d.Ground]
	through := newValvePaths(d, groups)
	supplyNets := map[string]bool{}
	for _, ch := range s.Supplies {
		if ch.Name == "bias" {
			continue
		}
		for _, st := range ch.Stages {
			supplyNets[st.Net] = true
		}
	}
	for _, p := range d.Valves() {
		vp := p.Valve
		if vp.Type.Kind == valves.Rectifier {
			continue
		}
		for _, sec := range vp.Type.Sections {
			if vp.Unused[sec] {
				continue
			}
			m := vp.Sections[sec]
			name := p.Ref + sec
			if g := m[valves.Grid]; g != "" && groups[g] != ground && !through.reaches(g, d.Ground, p.Ref, sec) {
				add(FindGridNoDC, Error, p.Ref, g, p.FieldPos(gridField(sec)),
					"%s grid net %s has no DC path to ground: the grid floats and the bias is undefined; add a grid leak to ground or to the bias supply",
					name, g)
			}
			if k := m[valves.Cathode]; k != "" && groups[k] != ground && !through.reaches(k, d.Ground, p.Ref, sec) {
				add(FindCathodeNoDC, Error, p.Ref, k, p.FieldPos(cathodeField(sec)),
					"%s cathode net %s has no DC path to ground: the valve cannot conduct; add the cathode resistor or tie it to ground",
					name, k)
			}
			if sc := m[valves.Screen]; sc != "" && supplyNets[sc] {
				plateSupply := ""
				for _, ot := range d.PartsOfKind(OutputTransformer) {
					if ot.OT.Centre == sc || (ot.OT.Centre == "" && (ot.OT.Ends[0] == sc || ot.OT.Ends[1] == sc)) {
						plateSupply = " (the plate supply)"
					}
				}
				add(FindScreenNoStopper, Note, p.Ref, sc, p.FieldPos("screen"),
					"%s screen is fed straight from B+ net %s%s with no stopper resistor: common practice is a few hundred ohms to 1 kΩ in series",
					name, sc, plateSupply)
			}
		}
	}
	// Heater windings.
	for _, t := range d.PartsOfKind(PowerTransformer) {
		for _, w := range t.PT.Windings {
			amps := 0.0
			var refs []string
			for _, p := range d.Valves() {
				h := p.Valve.HeaterNets
				if h[0] == "" {
					continue
				}
				if (h[0] == w.Ends[0] && h[1] == w.Ends[1]) || (h[0] == w.Ends[1] && h[1] == w.Ends[0]) {
					amps += p.Valve.HeaterAmps
					refs = append(refs, p.Ref)
				}
			}
			if w.RatedAmps > 0 && amps > w.RatedAmps*1.0001 {
				add(FindHeaterOverload, Warning, t.Ref, "", w.Pos,
					"heater winding %s is rated %s but %s draw %s", w.Name, units.Format(w.RatedAmps, units.Amps),
					strings.Join(refs, ", "), units.Format(amps, units.Amps))
			}
		}
	}
	for _, p := range d.PartsOfKind(Capacitor) {
		if p.Material == "electrolytic" && p.Volts == 0 {
			add(FindElectrolyticNoVolts, Warning, p.Ref, "", p.Pos,
				"%s is an electrolytic with no voltage rating: add volts: (from the can) so pinwalk can check it against the switch-on peak", p.Ref)
		}
	}
	sort.SliceStable(out, func(i, j int) bool {
		if out[i].Severity != out[j].Severity {
			return out[i].Severity < out[j].Severity
		}
		return out[i].Pos.Line < out[j].Pos.Line
	})
	return out
}

func gridField(sec string) string {
	if sec == "" {
		return valves.Grid
	}
	return sec
}

func cathodeField(sec string) string {
	if sec == "" {
		return valves.Cathode
	}
	return sec
}

// joinConns joins connections, folding several pins of one valve into
// one entry: "V1 heater (pin 4, 5)".
func joinConns(cs []Conn, sep string) string {
	var out []string
	at := map[string]int{} // valve ref+electrode → index in out
	for _, c := range cs {
		if c.Part == "" && strings.HasPrefix(c.Terminal, "pin ") {
			el, _, _ := strings.Cut(c.Label, " (pin ")
			key := c.Ref + " " + el
			if i, ok := at[key]; ok {
				out[i] = strings.TrimSuffix(out[i], ")") + ", " + strings.TrimPrefix(c.Terminal, "pin ") + ")"
				continue
			}
			at[key] = len(out)
		}
		out = append(out, c.String())
	}
	return strings.Join(out, sep)
}

// WriteText renders the summary as plain text, at most about 100 columns
// wide, with no terminal control codes.
func (s *Summary) WriteText(w io.Writer) error {
	var b strings.Builder
	title := s.Title
	if title == "" {
		title = "(no title)"
	}
	fmt.Fprintf(&b, "%s\n%s\n", title, s.File)
	if len(s.Mains) > 0 {
		b.WriteString("\nMains side\n")
		for _, l := range s.Mains {
			fmt.Fprintf(&b, "  %s\n", l)
		}
	}
	for _, ch := range s.Supplies {
		fmt.Fprintf(&b, "\n%s supply, from the source outwards\n  %s\n", ch.Name, ch.Source)
		for _, st := range ch.Stages {
			ind := strings.Repeat("   ", st.Depth)
			head := "  " + ind
			if st.Series != nil {
				head += "└─ " + st.Series.Ref + " " + DescribePart(st.Series) + " → "
			}
			fmt.Fprintf(&b, "%s%s", head, st.Net)
			if len(st.Caps) == 0 {
				fmt.Fprintf(&b, "   (no filter capacitor)")
			}
			for i, c := range st.Caps {
				sep := ", "
				if i == 0 {
					sep = "   "
				}
				fmt.Fprintf(&b, "%s%s %s", sep, c.Ref, strings.TrimPrefix(DescribePart(c), "capacitor "))
			}
			b.WriteString("\n")
			pad := "  " + ind
			if st.Series != nil {
				pad += "   "
			}
			for _, c := range st.On {
				fmt.Fprintf(&b, "%s   · %s\n", pad, c)
			}
		}
	}
	for _, v := range s.Valves {
		fmt.Fprintf(&b, "\n%s %s (%s, %s base)\n", v.Ref, v.Type.Name, v.Type.Kind, v.Type.Base)
		for _, p := range v.Pins {
			e := p.Electrode
			if p.Section != "" {
				e = p.Section + " " + e
			}
			o := joinConns(p.Others, "; ")
			switch {
			case p.Net == s.ground:
				o = "chassis ground"
			case o == "":
				o = "(nothing else)"
			}
			fmt.Fprintf(&b, "  pin %-2d %-18s %-6s %s\n", p.Pin, e, p.Net, o)
		}
	}
	if len(s.Transformers) > 0 {
		b.WriteString("\nOutput transformers\n")
	}
	for _, t := range s.Transformers {
		fmt.Fprintf(&b, "  %s %s\n      %s\n", t.Ref, t.Part, t.Windings)
	}
	b.WriteString("\nParts by net\n")
	for _, n := range s.Nets {
		short := make([]Conn, len(n.Conns))
		for i, c := range n.Conns {
			short[i] = Conn{Ref: c.Ref, Terminal: c.Terminal, Label: c.Label}
		}
		fmt.Fprintf(&b, "  %-6s %s\n", n.Net, joinConns(short, ", "))
	}
	b.WriteString("\nUnusual\n")
	if len(s.Findings) == 0 {
		b.WriteString("  nothing unusual found\n")
	}
	for _, f := range s.Findings {
		fmt.Fprintf(&b, "  %s: %s (line %d)\n", f.Severity, f.Msg, f.Pos.Line)
	}
	_, err := io.WriteString(w, b.String())
	return err
}
