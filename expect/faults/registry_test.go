package faults

import (
	"math"
	"sort"
	"strings"
	"testing"

	"pinwalk/expect/amp"
	"pinwalk/expect/design"
	"pinwalk/expect/valves"
)

// TestEveryKindDeclared: every part kind a design can hold either declares
// its faults in the registry (with at least one mode, each mode with its
// live effect and words, register refuses one without) or is listed in
// noFaults with why; and every declared kind has a fault on some demo or
// template, so no declaration goes untested.
func TestEveryKindDeclared(t *testing.T) {
	used := map[design.Kind]bool{}
	for _, m := range everyDesign(t) {
		for _, f := range All(m) {
			p, _ := splitRef(m, f.Ref)
			used[p.Kind] = true
		}
	}
	for _, k := range design.Kinds {
		decl, why := registry[k], noFaults[k]
		switch {
		case decl != nil && why != "":
			t.Errorf("%s declares faults and is listed as having none", k)
		case decl == nil && why == "":
			t.Errorf("%s: no fault declaration and no word on why it has none", k)
		case decl != nil && len(decl.Modes) == 0:
			t.Errorf("%s: declared with no modes", k)
		case decl != nil && !used[k]:
			t.Errorf("%s: declared, but no demo or template has one of its faults", k)
		}
	}
	for k := range registry {
		if !containsKind(design.Kinds, k) {
			t.Errorf("%s is declared but is no design kind", k)
		}
	}
}

func containsKind(ks []design.Kind, k design.Kind) bool {
	for _, x := range ks {
		if x == k {
			return true
		}
	}
	return false
}

// TestEveryFaultHasItsWords: every fault of every demo and template has a
// description of its own that names its part (not the part and the bare
// mode), confirm
// words that start unplugged (or a valve swap) and name the part, and
// replace words that name it. Each kind has its own confirm words: no
// two kinds share a text, and only an electrolytic is checked for
// leaking electrolyte (a film, mica or paper part has none).
func TestEveryFaultHasItsWords(t *testing.T) {
	confirmKind := map[string]design.Kind{}
	for name, m := range everyDesign(t) {
		for _, f := range All(m) {
			p, _ := splitRef(m, f.Ref)
			desc, conf, rep := Describe(f, m), Confirm(m, f), Replace(m, f)
			if s, _ := specOf(m, f); s == nil || !strings.HasPrefix(desc, p.Ref) || desc == partName(Target{M: m, Part: p})+" "+string(f.Mode) {
				t.Errorf("%s %s: description %q", name, f, desc)
			}
			if !strings.Contains(conf, p.Ref) || !(strings.HasPrefix(conf, unplugged) || strings.HasPrefix(conf, "Swap ")) {
				t.Errorf("%s %s: confirm words %q", name, f, conf)
			}
			if !strings.Contains(rep, p.Ref) || strings.Contains(rep, "same value and ratings") {
				t.Errorf("%s %s: replace words %q", name, f, rep)
			}
			if p.Kind == design.Capacitor && p.Material != "electrolytic" && strings.Contains(conf, "electrolyte") {
				t.Errorf("%s %s (%s): %q", name, f, p.Material, conf)
			}
			// The same words on two kinds would be a generic text: the
			// part's reference is taken out before comparing.
			key := strings.ReplaceAll(conf, p.Ref, "REF")
			if p.Valve != nil {
				key = strings.ReplaceAll(key, p.Valve.Type.Name, "TYPE")
			}
			if k, ok := confirmKind[key]; ok && k != p.Kind {
				t.Errorf("%s %s: the %s and the %s share the confirm words %q", name, f, k, p.Kind, conf)
			}
			confirmKind[key] = p.Kind
		}
	}
}

// TestPriorsFollowRoles: the failure weights put the parts that fail most
// first by the role they play (common practice: HT filter electrolytics
// dry out more than coupling capacitors; coupling capacitors go leaky;
// screen resistors burn open; carbon resistors drift high; output valves
// wear before small-signal ones; a valve rectifier wears weak before it
// arcs).
func TestPriorsFollowRoles(t *testing.T) {
	m := load(t, "pp-el34-fixed")
	var op amp.OP
	if err := amp.NewSolver(m).Solve(amp.Conditions{}, m.NominalValues(), false, &op); err != nil {
		t.Fatal(err)
	}
	roles := Roles(m, &op)
	// One part of each role, found by role (not by reference).
	first := func(kind design.Kind, with Role, without ...Role) string {
		refs := []string{}
		for ref, r := range roles {
			p := m.D.ByRef[ref]
			if p == nil || p.Kind != kind || !r[with] {
				continue
			}
			ok := true
			for _, w := range without {
				ok = ok && !r[w]
			}
			if ok {
				refs = append(refs, ref)
			}
		}
		sort.Strings(refs)
		if len(refs) == 0 {
			t.Fatalf("pp-el34-fixed has no %s with role %s", kind, with)
		}
		return refs[0]
	}
	prior := func(ref string, md Mode) float64 { return Prior(m, roles, Fault{ref, md}) }
	filter := first(design.Capacitor, RoleFilterCap)
	coupling := first(design.Capacitor, RoleCoupling)
	screen := first(design.Resistor, RoleScreenR, RoleHot)
	output := first(design.Valve, RoleOutput)
	preamp := first(design.Valve, RolePreamp)
	rect := first(design.Valve, RoleRectValve)
	plain := ""
	for _, p := range m.D.PartsOfKind(design.Resistor) {
		r := roles[p.Ref]
		if !r[RoleScreenR] && !r[RoleHot] {
			plain = p.Ref
			break
		}
	}
	checks := []struct {
		what     string
		more     float64
		less     float64
		atLeastX float64
	}{
		{"a filter cap dries out more than a coupling cap opens", prior(filter, Open), prior(coupling, Open), 2},
		{"a coupling cap goes leaky more than it opens", prior(coupling, Leaky), prior(coupling, Open), 2},
		{"a screen resistor burns open more than a plain one", prior(screen, Open), prior(plain, Open), burnOpenFactor},
		{"an output valve wears more than a preamp valve", prior(output, Weak), prior(preamp, Weak), 2},
		{"a valve rectifier wears weak before it arcs", prior(rect, Weak), prior(rect, Short), 1 / rectShortShare},
	}
	for _, c := range checks {
		if !(c.more > 0 && c.less > 0 && c.more >= c.atLeastX*c.less*(1-1e-12)) {
			t.Errorf("%s: %g against %g, want at least ×%g", c.what, c.more, c.less, c.atLeastX)
		}
	}
	if got := prior(rect, Short) / prior(rect, Weak); math.Abs(got-rectShortShare) > 1e-12 {
		t.Errorf("valve rectifier short/weak = %g, want %g", got, rectShortShare)
	}
	for _, f := range All(m) {
		if w := Prior(m, roles, f); !(w > 0) || math.IsInf(w, 0) {
			t.Errorf("%s: prior %g", f, w)
		}
	}
	// A carbon resistor drifts high more than a metal-film one: the role,
	// not the reference, decides.
	carbon := RoleSet{RoleCarbon: true}
	r := plain
	hi := Prior(m, map[string]RoleSet{r: carbon}, Fault{r, High})
	lo := Prior(m, map[string]RoleSet{r: {}}, Fault{r, High})
	if hi <= 2*lo {
		t.Errorf("carbon high %g, metal-film high %g: want carbon well above", hi, lo)
	}
}

// TestValveRectifierArcs: a valve rectifier that flashes over (plate to
// cathode) is a fault of its own: powered, it blows the mains fuse, so
// nothing has volts, the rectifier's own filament neither (common
// practice: an arcing rectifier takes the fuse); it is a powered short
// whatever the cold readings show; cold it changes nothing (the valve is
// out of its socket for the cold checks); its confirm words look for the
// burn and test for the short, unlike a silicon diode's diode-range test.
// Demo pp-el34-fixed's 5U4GB and the supply-valve-rect template's 5Y3GT.
func TestValveRectifierArcs(t *testing.T) {
	models := everyDesign(t)
	n := 0
	for name, m := range models {
		if m.HT == nil || m.HT.Rectifier == nil || m.HT.Rectifier.Kind != design.Valve {
			continue
		}
		p := m.HT.Rectifier
		if p.Valve.Type.Kind != valves.Rectifier {
			t.Fatalf("%s: %s is no rectifier valve", name, p.Ref)
		}
		n++
		f := Fault{p.Ref, Short}
		if err := Check(m, f); err != nil {
			t.Errorf("%s: %v", name, err)
			continue
		}
		if !PoweredShort(m, f) {
			t.Errorf("%s %s: not a powered short", name, f)
		}
		v := m.NominalValues()
		if err := Apply(m, v, f); err != nil {
			t.Fatal(err)
		}
		if v.HTVolts != 0 || v.HeaterVolts != 0 {
			t.Errorf("%s %s: HT volts ×%g, heater volts ×%g: want the fuse gone (0, 0)", name, f, v.HTVolts, v.HeaterVolts)
		}
		var op amp.OP
		if err := amp.NewSolver(m).Solve(amp.Conditions{}, v, false, &op); err != nil {
			t.Fatalf("%s %s: %v", name, f, err)
		}
		for _, net := range m.HT.Nets {
			if x, _ := m.NetVolts(&op, net); math.Abs(x) > 0.05 {
				t.Errorf("%s %s: %s at %.3g V, want 0 (the fuse blew)", name, f, net, x)
			}
		}
		if ApplyCold(m, nopNet{t}, f) {
			t.Errorf("%s %s: changes the cold network", name, f)
		}
		if d := Describe(f, m); !strings.Contains(d, "arcing") || !strings.Contains(d, "fuse") {
			t.Errorf("%s %s: %q", name, f, d)
		}
		if c := Confirm(m, f); !strings.Contains(c, "flash-over") || strings.Contains(c, "diode range") {
			t.Errorf("%s %s: confirm %q", name, f, c)
		}
		if !containsMode(Modes(m, p.Ref), Weak) || Modes(m, p.Ref)[len(Modes(m, p.Ref))-1] != Short {
			t.Errorf("%s %s: modes %v, want short after the others", name, p.Ref, Modes(m, p.Ref))
		}
	}
	if n < 2 {
		t.Errorf("%d designs with a valve rectifier, want the demo and the template", n)
	}
	// An amplifying valve's short is its own (an internal short, plate
	// to cathode), not a rectifier's arc.
	m := load(t, "pp-el34-fixed")
	for _, s := range m.Sections {
		f := Fault{Ref: s.Ref, Mode: Short}
		if !containsMode(Modes(m, s.Ref), Short) {
			t.Errorf("%s has no short mode", s.Ref)
			continue
		}
		if d := Describe(f, m); strings.Contains(d, "arcing") || !strings.Contains(d, "plate to cathode") {
			t.Errorf("%s: %q", f, d)
		}
	}
}

func containsMode(ms []Mode, x Mode) bool {
	for _, m := range ms {
		if m == x {
			return true
		}
	}
	return false
}

// nopNet fails the test on any change.
type nopNet struct{ t *testing.T }

func (n nopNet) Drop(func(ColdEdge) bool)  { n.t.Error("Drop called") }
func (n nopNet) Edit(func(*ColdEdge) bool) { n.t.Error("Edit called") }
func (n nopNet) Add(ColdEdge)              { n.t.Error("Add called") }

// TestOutOfCircuit: what the fault-finding practice's meter reads on a
// part out of circuit: a healthy resistor its value, the failed one open,
// near 0 Ω or drifted by HighFactor; a shorted capacitor ShortedCapOhms
// (Ohm's law on the part alone).
func TestOutOfCircuit(t *testing.T) {
	m := load(t, "se-6v6-stereo")
	r := m.D.PartsOfKind(design.Resistor)[0]
	cases := []struct {
		f    *Fault
		want float64
	}{
		{nil, r.Value},
		{&Fault{r.Ref, Open}, math.Inf(1)},
		{&Fault{r.Ref, Short}, OutShortOhms},
		{&Fault{r.Ref, High}, HighFactor * r.Value},
	}
	for _, c := range cases {
		got, ok := OutOfCircuit(m, r.Ref, c.f)
		if !ok || !got.OK || got.Ohms != c.want {
			t.Errorf("%s with %v: %+v, want %g Ω", r.Ref, c.f, got, c.want)
		}
	}
	for _, p := range m.D.PartsOfKind(design.Capacitor) {
		got, _ := OutOfCircuit(m, p.Ref, &Fault{p.Ref, Short})
		if !got.OK || got.Ohms != ShortedCapOhms {
			t.Errorf("%s shorted reads %+v", p.Ref, got)
		}
		break
	}
	if _, ok := OutOfCircuit(m, "NOPE", nil); ok {
		t.Error("an unknown part reads something")
	}
}
