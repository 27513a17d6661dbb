package amp

import (
	"fmt"
	"math"
	"path/filepath"
	"strings"
	"testing"

	"pinwalk/expect/design"
	"pinwalk/expect/supply"
	"pinwalk/expect/valves"
)

func loadDemo(t testing.TB, name string) *design.Design {
	t.Helper()
	d, probs := design.Load(filepath.Join("..", "..", "testdata", "designs", name+".yaml"))
	if len(probs.Errors()) > 0 {
		t.Fatalf("%s: %v", name, probs.Errors())
	}
	return d
}

func parse(t testing.TB, src string) *design.Design {
	t.Helper()
	d, probs := design.Parse("test.yaml", []byte(src))
	if len(probs.Errors()) > 0 {
		t.Fatalf("design: %v", probs.Errors())
	}
	return d
}

func solve(t testing.TB, d *design.Design, c Conditions) (*Model, *OP) {
	t.Helper()
	m, err := Build(d)
	if err != nil {
		t.Fatal(err)
	}
	var op OP
	if err := NewSolver(m).Solve(c, m.NominalValues(), false, &op); err != nil {
		t.Fatal(err)
	}
	return m, &op
}

func netV(t testing.TB, m *Model, op *OP, net string) float64 {
	t.Helper()
	v, ok := m.NetVolts(op, net)
	if !ok {
		t.Fatalf("net %s not in the network", net)
	}
	return v
}

// stageDesign is a valve section with its plate held by a stiff supply at
// va, its grid held at vg by a bias supply and its cathode grounded: the
// conditions of a datasheet's typical-operation row.
func rowDesign(vt *valves.Type, section string, va, vg2, vg float64) string {
	heater := "6.3"
	if vt.Heater.AltVolts != 6.3 && vt.Heater.Volts != 6.3 {
		heater = fmt.Sprint(vt.Heater.Volts) // series-string types (50C5), filaments: a winding at their rating
	}
	st := vt.SectionType(section, nil)
	wire := "{plate: P, grid: G, cathode: 0V}"
	extra := ""
	if st.Kind == valves.Pentode {
		wire = "{plate: P, screen: S, grid: G, cathode: 0V}"
		extra = fmt.Sprintf("  U3: {dc-supply: %gV, dcr: 0R001, between: [S, 0V]}\n", vg2)
	}
	var elec string
	if len(vt.Sections) == 1 {
		// A directly heated triode's cathode is the filament winding's
		// centre tap, 0V here.
		elec = "    " + strings.ReplaceAll(strings.Trim(wire, "{}"), ", ", "\n    ") + "\n"
	} else {
		for _, s := range vt.Sections {
			if s == section {
				elec += fmt.Sprintf("    %s: %s\n", s, wire)
			} else {
				elec += fmt.Sprintf("    %s: unused\n", s)
			}
		}
	}
	valve := vt.Name
	if vg == 0 {
		vg = -1e-9
	}
	return fmt.Sprintf(`pinwalk: 1
title: datasheet row rig
mains: {volts: 230, hz: 50}
parts:
  T1:
    power-transformer:
      primary: {volts: 230, dcr: 10R}
      secondaries:
        H: {volts: %s, rated: 5A, dcr: 0R01, ends: [H1, H2], centre: 0V}
  U1: {dc-supply: %gV, dcr: 0R001, between: [P, 0V]}
  U2: {bias-supply: %gV, dcr: 0R001, between: [G, 0V]}
%s  V1:
    valve: %s
%s    heater: [H1, H2]
`, heater, va, vg, extra, valve, elec)
}

// TestStageAgainstDatasheetRows solves each valve type at the conditions
// of its datasheet rows (fixed bias rows; the 12AT7 row is cathode-biased
// and is checked in the valves package) and checks Ia within ±10 %.
func TestStageAgainstDatasheetRows(t *testing.T) {
	for _, vt := range valves.All() {
		if vt.Kind == valves.Rectifier || !(vt.Kind.Modelled() || vt.Kind == valves.Multi) {
			continue
		}
		for _, sec := range vt.Sections {
			st := vt.SectionType(sec, nil)
			if !st.Kind.Modelled() || (vt.Kind != valves.Multi && sec != vt.Sections[0]) {
				continue
			}
			for _, r := range st.Rows {
				if r.Vg1 == 0 && r.Ia == 0 {
					continue
				}
				if vt.Name == "12AT7" {
					continue // row is given with a 200 Ω cathode resistor, not a grid voltage
				}
				src := rowDesign(vt, sec, r.Va, r.Vg2, r.Vg1)
				d := parse(t, src)
				m, op := solve(t, d, Conditions{})
				ia := op.Sections[0].Ia
				err := (ia - r.Ia) / r.Ia
				t.Logf("%-8s Va %3.0f Vg1 %6.2f: Ia %.3g A, datasheet %.3g A (%+.1f%%)  [%s]", vt.Name, r.Va, r.Vg1, ia, r.Ia, 100*err, r.Source)
				if math.Abs(err) > 0.10 {
					t.Errorf("%s row Va %.0f: Ia %.4g, datasheet %.4g (%s): off by %.1f%%", vt.Name, r.Va, ia, r.Ia, r.Source, 100*err)
				}
				_ = m
			}
		}
	}
}

// TestCathodeDivider: a divider from B+ into a small cathode resistor
// sets a low cathode voltage (common practice: 150 kΩ from 255 V into
// 820 Ω gives about 1.4 V before valve current); with a 12AX7 conducting
// the cathode sits somewhat higher.
func TestCathodeDivider(t *testing.T) {
	src := func(valve string) string {
		return fmt.Sprintf(`pinwalk: 1
title: cathode divider
mains: {volts: 230, hz: 50}
parts:
  T1:
    power-transformer:
      primary: {volts: 230, dcr: 10R}
      secondaries:
        H: {volts: 6.3, rated: 2A, ends: [H1, H2], centre: 0V}
  U1: {dc-supply: 255V, dcr: 0R001, between: [HT, 0V]}
  R1: {resistor: 150k, between: [HT, K]}
  R2: {resistor: 820R, between: [K, 0V]}
  R3: {resistor: 100k, between: [HT, P]}
  R4: {resistor: 1M, between: [G, 0V]}
  V1:
    valve: 12AX7
    A: {plate: P, grid: G, cathode: K}
    B: unused
    heater: [H1, H2]
%s`, valve)
	}
	// Without valve current (cold valve): the divider alone.
	d := parse(t, src(""))
	m, op := solve(t, d, Conditions{ColdValves: true})
	vk := netV(t, m, op, "K")
	want := 255 * 820 / (150e3 + 820) // 1.386 V, closed form
	if math.Abs(vk-want) > 1e-3 {
		t.Errorf("cold cathode %.4f V, divider closed form %.4f V", vk, want)
	}
	if math.Abs(vk-1.4) > 0.05 {
		t.Errorf("cold cathode %.3f V, common practice says about 1.4 V", vk)
	}
	_, op2 := solve(t, d, Conditions{})
	vk2 := netV(t, m, op2, "K")
	t.Logf("cathode: %.3f V cold, %.3f V with the 12AX7 conducting (Ia %.3g A)", vk, vk2, op2.Sections[0].Ia)
	if !(vk2 > vk+0.1 && vk2 < 3) {
		t.Errorf("with valve current the cathode should sit somewhat higher than %.3f V, got %.3f V", vk, vk2)
	}
	// Identity: cathode current through R2 = divider current + valve current.
	ir2 := vk2 / 820
	ir1 := (255 - vk2) / 150e3
	if math.Abs(ir2-ir1-op2.Sections[0].Ik) > 1e-9 {
		t.Errorf("KCL at the cathode: R2 %.6g A, R1 %.6g A, Ik %.6g A", ir2, ir1, op2.Sections[0].Ik)
	}
}

// TestDemosSolve checks every demo design for physical sense: plates lie
// below their B+ net, cathodes of cathode-biased stages sit at a few to
// tens of volts, no valve is over its dissipation limit, and the filter
// nets fall from the rectifier outwards.
func TestDemosSolve(t *testing.T) {
	for _, name := range []string{"se-6v6-stereo", "pp-el34-fixed", "bench-12ax7"} {
		t.Run(name, func(t *testing.T) {
			d := loadDemo(t, name)
			m, op := solve(t, d, Conditions{})
			top := 0.0
			if op.Supply != nil {
				for i, n := range op.Supply.Nets {
					if i > 0 && n.Vdc >= op.Supply.Nets[m.HT.Parent[i]].Vdc {
						t.Errorf("filter net %s %.1f V is not below its parent", n.Net, n.Vdc)
					}
					top = math.Max(top, n.Vdc)
				}
			} else {
				for _, s := range m.Sections {
					_ = s
				}
				top = 250
			}
			for i, s := range m.Sections {
				so := op.Sections[i]
				t.Logf("%-4s %-6s Va %6.1f Vg2 %6.1f Vg %6.2f Vk %6.2f Ia %7.2f mA Pa %5.2f W (%3.0f%%)", s.Name(), s.Type.Name,
					so.Va, so.Vg2, so.Vg, so.Vk, so.Ia*1e3, so.Pa, 100*so.Pa/s.Type.Limits.PlateWatts)
				if so.Va >= top {
					t.Errorf("%s plate %.1f V not below B+ %.1f V", s.Name(), so.Va, top)
				}
				if so.Pa > s.Type.Limits.PlateWatts {
					t.Errorf("%s dissipates %.2f W, over %.2f W", s.Name(), so.Pa, s.Type.Limits.PlateWatts)
				}
				cathodeBiased := so.Vk > 0.5
				if cathodeBiased && (so.Vk < 1 || so.Vk > 60) {
					t.Errorf("%s cathode %.2f V: expected a few to tens of volts", s.Name(), so.Vk)
				}
				if so.Ia <= 0 {
					t.Errorf("%s conducts nothing", s.Name())
				}
			}
		})
	}
}

// TestHeaterEmission checks the heater-emission law against the figures
// quoted for an oxide cathode (REFERENCES.md, Richardson–Dushman, from
// memory): well under 1 % at half heater volts, roughly a fifth at 80 %.
func TestHeaterEmission(t *testing.T) {
	if f := EmissionFraction(0.5); f >= 0.01 {
		t.Errorf("emission at half heater volts %.4f, want well under 1%%", f)
	}
	if f := EmissionFraction(0.8); f < 0.12 || f > 0.3 {
		t.Errorf("emission at 80%% heater volts %.3f, want roughly a fifth", f)
	}
	if f := EmissionFraction(1); math.Abs(f-1) > 1e-12 {
		t.Errorf("emission at rated heat %.6f, want 1", f)
	}
}

// TestVariacRaisesBPlusRatio: at 25 % mains the valves barely conduct, so
// B+ sits closer to its no-load peak than at full mains.
func TestVariacRaisesBPlusRatio(t *testing.T) {
	d := loadDemo(t, "se-6v6-stereo")
	m, _ := solve(t, d, Conditions{})
	s := NewSolver(m)
	ratio := func(variac float64) float64 {
		var hot, cold OP
		if err := s.Solve(Conditions{Variac: variac}, m.NominalValues(), false, &hot); err != nil {
			t.Fatal(err)
		}
		if err := s.Solve(Conditions{Variac: variac, ColdValves: true}, m.NominalValues(), false, &cold); err != nil {
			t.Fatal(err)
		}
		return hot.Supply.Nets[0].Vdc / cold.Supply.Nets[0].Vdc
	}
	r25, r100 := ratio(0.25), ratio(1)
	t.Logf("B1 / cold peak: %.3f at 25%%, %.3f at 100%%", r25, r100)
	if r25 <= r100 {
		t.Errorf("at 25%% variac B1 is %.3f of its cold peak, at 100%% %.3f: expected closer to the peak at 25%%", r25, r100)
	}
}

// TestFastMatchesFull: the fast (linearised supply) solve agrees with the
// full simulation at the nominal point, and closely for a 1 % mains change.
func TestFastMatchesFull(t *testing.T) {
	d := loadDemo(t, "se-6v6-stereo")
	m, err := Build(d)
	if err != nil {
		t.Fatal(err)
	}
	s := NewSolver(m)
	var full, fast OP
	v := m.NominalValues()
	if err := s.Solve(Conditions{}, v, false, &full); err != nil {
		t.Fatal(err)
	}
	if err := s.Solve(Conditions{}, v, true, &fast); err != nil {
		t.Fatal(err)
	}
	for i := range full.V {
		if math.Abs(full.V[i]-fast.V[i]) > 1e-6*math.Max(1, math.Abs(full.V[i])) {
			t.Errorf("node %d: full %.6f, fast %.6f", i, full.V[i], fast.V[i])
		}
	}
	if err := s.Solve(Conditions{MainsVolts: 232.3}, v, false, &full); err != nil {
		t.Fatal(err)
	}
	if err := s.Solve(Conditions{MainsVolts: 232.3}, v, true, &fast); err != nil {
		t.Fatal(err)
	}
	b1f, b1l := full.Supply.Nets[0].Vdc, fast.Supply.Nets[0].Vdc
	if math.Abs(b1f-b1l)/b1f > 0.003 {
		t.Errorf("B1 at +1%% mains: full %.2f V, linearised %.2f V", b1f, b1l)
	}
}

// TestPointsCover: every valve pin that is wired appears in Points, ids
// follow "<ref>.<pin>", and heater pins carry AC volts.
func TestPointsCover(t *testing.T) {
	d := loadDemo(t, "se-6v6-stereo")
	m, op := solve(t, d, Conditions{})
	pts := m.Points()
	seen := map[string]bool{}
	for _, p := range pts {
		if seen[p.Key()] {
			t.Errorf("duplicate point %s", p.Key())
		}
		seen[p.Key()] = true
		v := m.Value(op, p)
		if math.IsNaN(v) {
			t.Errorf("%s has no value", p.Key())
		}
		if p.Valve != "" && !strings.HasPrefix(p.ID, p.Valve+".") {
			t.Errorf("pin id %s does not start with %s.", p.ID, p.Valve)
		}
	}
	for _, k := range []string{"V2.3 dc_volts", "V2.3 dc_amps", "V2.8 dc_volts", "V2.2 ac_volts", "V1.6 dc_volts", "B1 dc_volts", "B1 ripple_volts"} {
		if !seen[k] {
			t.Errorf("missing point %s", k)
		}
	}
}

// benchDemoA builds demo (a) with a solver and its nominal values.
func benchDemoA(b *testing.B) (*Model, *Solver, *Values) {
	b.Helper()
	m, err := Build(loadDemo(b, "se-6v6-stereo"))
	if err != nil {
		b.Fatal(err)
	}
	return m, NewSolver(m), m.NominalValues()
}

func BenchmarkDCSolveDemoA(b *testing.B) {
	m, s, v := benchDemoA(b)
	var op OP
	if err := s.Solve(Conditions{}, v, false, &op); err != nil {
		b.Fatal(err)
	}
	// Each iteration changes a resistor by ±1 % so the solve is real work.
	r := m.SlotsOf("R15")[0]
	base := v.Slot[r]
	b.ReportAllocs()
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		v.Slot[r] = base * (1 + 0.01*float64(i%2*2-1))
		if err := s.Solve(Conditions{}, v, true, &op); err != nil {
			b.Fatal(err)
		}
	}
}

func BenchmarkSupplySteadyStateDemoA(b *testing.B) {
	_, s, v := benchDemoA(b)
	var op OP
	if err := s.Solve(Conditions{}, v, false, &op); err != nil {
		b.Fatal(err)
	}
	p := s.supplyParams(Conditions{}, v, nil)
	s.stageLoads(&p, nil)
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		if _, err := supply.Simulate(p, s.sopt); err != nil {
			b.Fatal(err)
		}
	}
}

func BenchmarkFullSolveDemoA(b *testing.B) {
	_, s, v := benchDemoA(b)
	var op OP
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		if err := s.Solve(Conditions{}, v, false, &op); err != nil {
			b.Fatal(err)
		}
	}
}

// TestValveRectifierCoolFilament: on a low variac setting a valve
// rectifier's filament runs cool and its emission caps the current
// (Richardson–Dushman, as for every cathode), so a valve-rectified B+ stays
// low where a silicon-rectified one rises to its peak; at full mains the
// cap is far above the load and changes nothing.
func TestValveRectifierCoolFilament(t *testing.T) {
	d := loadDemo(t, "pp-el34-fixed")
	m, full := solve(t, d, Conditions{})
	s := NewSolver(m)
	var low OP
	if err := s.Solve(Conditions{Variac: 0.25}, m.NominalValues(), false, &low); err != nil {
		t.Fatal(err)
	}
	b1Low, b1Full := low.Supply.Nets[0].Vdc, full.Supply.Nets[0].Vdc
	peak25 := 0.25 * math.Sqrt2 * m.HT.VrmsOC * d.Mains.Volts / m.HT.Transformer.PT.PrimaryVolts
	t.Logf("B1: %.2f V at 25 %% variac (silicon would give about %.0f V), %.1f V at full mains", b1Low, peak25, b1Full)
	if b1Low > 0.1*peak25 {
		t.Errorf("B1 at 25%% variac with a 5U4GB: %.1f V, want far below the %.0f V a warm rectifier would give", b1Low, peak25)
	}
	if b1Full < 300 {
		t.Errorf("B1 at full mains %.1f V: the emission cap should not bite when the filament is at its rated volts", b1Full)
	}
}

// TestSolvesAtEveryVariacSetting: every demo design and every template
// solves from 10 % to 110 % of the mains, with valves warm and cold (the
// conditions a bring-up walks through).
func TestSolvesAtEveryVariacSetting(t *testing.T) {
	var ds []*design.Design
	for _, n := range []string{"se-6v6-stereo", "pp-el34-fixed", "bench-12ax7"} {
		ds = append(ds, loadDemo(t, n))
	}
	for _, tp := range design.Templates() {
		d, probs := design.Parse(tp.Name, tp.Text)
		if len(probs.Errors()) > 0 {
			t.Fatalf("template %s: %v", tp.Name, probs.Errors())
		}
		ds = append(ds, d)
	}
	for _, d := range ds {
		m, err := Build(d)
		if err != nil {
			t.Fatal(err)
		}
		s := NewSolver(m)
		for _, va := range []float64{0.1, 0.25, 0.5, 0.75, 1, 1.1} {
			for _, cold := range []bool{false, true} {
				var op OP
				if err := s.Solve(Conditions{Variac: va, ColdValves: cold}, m.NominalValues(), false, &op); err != nil {
					t.Errorf("%s at %.0f %% mains (valves cold: %v): %v", d.File, 100*va, cold, err)
				}
			}
		}
	}
}

// TestSlotCurrentIsThePointsOwn: a resistor's current read from an
// operating point is that point's (Ohm's law on its own volts and the
// value it was solved with), whatever the model solved afterwards: the
// plate resistor of the bench demo opened and solved again leaves the
// healthy point's current as it was.
func TestSlotCurrentIsThePointsOwn(t *testing.T) {
	d := loadDemo(t, "bench-12ax7")
	m, err := Build(d)
	if err != nil {
		t.Fatal(err)
	}
	s := NewSolver(m)
	v := m.NominalValues()
	var healthy OP
	if err := s.Solve(Conditions{}, v, false, &healthy); err != nil {
		t.Fatal(err)
	}
	before := m.Resistors(&healthy)
	w := v.Clone()
	for i, sl := range m.Slots {
		if sl.Kind == ElemResistance && sl.Role == "" && m.D.ByRef[sl.Ref].Kind == design.Resistor {
			w.Slot[i] = math.Inf(1) // every resistor open: the next point is dead
		}
	}
	var dead OP
	_ = s.Solve(Conditions{}, w, false, &dead)
	after := m.Resistors(&healthy)
	for i := range before {
		if before[i].Amps != after[i].Amps {
			t.Errorf("%s: %g A before the second solve, %g A after", before[i].Ref, before[i].Amps, after[i].Amps)
		}
		if before[i].Amps == 0 && before[i].Volts != 0 {
			t.Errorf("%s: %g V across it and no current", before[i].Ref, before[i].Volts)
		}
	}
}
