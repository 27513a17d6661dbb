package spice

import (
	"context"
	"math"
	"strings"
	"testing"
	"time"

	"pinwalk/expect/amp"
	"pinwalk/expect/design"
	"pinwalk/expect/faults"
)

// The voltage-doubler template against ngspice (real diodes, the two
// capacitors and their bleeders as parts): every net, the capacitors'
// junction among them, within 1 %, at nominal mains and on a variac.
func TestDoublerAgreesWithNgspice(t *testing.T) {
	needSimulator(t)
	var ds []*design.Design
	for _, d := range allDesigns(t) {
		if d.File == "template:practice-doubler" {
			ds = append(ds, d)
		}
	}
	if len(ds) != 1 {
		t.Fatalf("found %d templates practice-doubler", len(ds))
	}
	runComparisons(t, ds, amp.Conditions{}, simCycles)
	runComparisons(t, ds, amp.Conditions{Variac: 0.6}, variacCycles)
}

// One doubler diode open, against ngspice with that diode taken out of the
// netlist: the HT pinwalk's faulted solve gives (the capacitor whose
// diode is open uncharged, the load's return through the other's
// bleeder) agrees with the simulator's within 1 % (of at least 10 V).
func TestDoublerDiodeOpenAgreesWithNgspice(t *testing.T) {
	needSimulator(t)
	tp, err := design.TemplateByName("practice-doubler")
	if err != nil {
		t.Fatal(err)
	}
	d, probs := design.Parse("template:practice-doubler", tp.Text)
	if len(probs.Errors()) > 0 {
		t.Fatal(probs.Errors())
	}
	for _, diode := range []string{"D1", "D2"} {
		m, err := amp.Build(d)
		if err != nil {
			t.Fatal(err)
		}
		f, err := faults.Parse(diode + ":open")
		if err != nil {
			t.Fatal(err)
		}
		v := m.NominalValues()
		if err := faults.Apply(m, v, f); err != nil {
			t.Fatal(err)
		}
		var op amp.OP
		if err := amp.NewSolver(m).Solve(amp.Conditions{}, v, false, &op); err != nil {
			t.Fatal(err)
		}
		nl, err := Export(d)
		if err != nil {
			t.Fatal(err)
		}
		body := nl.body.String()
		line := "D_" + diode + " "
		i := strings.Index(body, line)
		if i < 0 {
			t.Fatalf("no %s in the netlist", line)
		}
		j := strings.Index(body[i:], "\n")
		body = body[:i] + "* " + diode + " open: taken out" + body[i+j:]
		nl.body.Reset()
		nl.body.WriteString(body)
		ctx, cancel := context.WithTimeout(context.Background(), 5*time.Minute)
		res, err := Simulate(ctx, nl, DeckOptions{Cycles: 2 * simCycles, Average: avgCycles, StepsPerCycle: stepsPerCycle, Initial: Reservoirs(m, &op)})
		cancel()
		if err != nil {
			t.Fatal(err)
		}
		for _, net := range []string{"B1", "DM"} {
			want, ok := res.Mean("v_" + strings.ToLower(nl.Nodes[net]))
			if !ok {
				t.Fatalf("no probe on %s", net)
			}
			got, _ := m.NetVolts(&op, net)
			if math.Abs(got-want) > 0.01*math.Max(math.Abs(want), 10) {
				t.Errorf("%s open: %s pinwalk %.2f V, ngspice %.2f V", diode, net, got, want)
			}
			t.Logf("%s open: %s pinwalk %.2f V, ngspice %.2f V", diode, net, got, want)
		}
	}
}

// halfWaveDoubler is the practice-doubler template rewired as a half-wave
// (Greinacher) doubler: the winding from chassis, C1 the pump from HW to
// the diodes' junction DM, D1 from chassis up to DM, D2 from DM up to
// B1, C2 the reservoir.
func halfWaveDoubler(t *testing.T) *design.Design {
	t.Helper()
	tp, err := design.TemplateByName("practice-doubler")
	if err != nil {
		t.Fatal(err)
	}
	src := string(tp.Text)
	for _, r := range [][2]string{
		{"ends: [HW, DM]}", "ends: [HW, 0V]}"},
		{"D1: {rectifier: silicon, anodes: [HW], cathode: B1}", "D1: {rectifier: silicon, anodes: [0V], cathode: DM}"},
		{"D2: {rectifier: silicon, anodes: [0V], cathode: HW}", "D2: {rectifier: silicon, anodes: [DM], cathode: B1}"},
		{"between: [B1, DM]}", "between: [DM, HW]}"},
		{"C2: {capacitor: 100u?, volts: 250?, kind: electrolytic, between: [DM, 0V]}", "C2: {capacitor: 100u?, volts: 450?, kind: electrolytic, between: [B1, 0V]}"},
		{"between: [B1, DM], note: bleeder across C1}", "between: [DM, HW], note: bleeder across C1}"},
		{"R2: {resistor: 100k?, watts: 1?, between: [DM, 0V]", "R2: {resistor: 220k?, watts: 1?, between: [B1, 0V]"},
	} {
		if !strings.Contains(src, r[0]) {
			t.Fatalf("template has no %q", r[0])
		}
		src = strings.Replace(src, r[0], r[1], 1)
	}
	d, probs := design.Parse("template:practice-doubler-half-wave", []byte(src))
	if len(probs.Errors()) > 0 {
		t.Fatal(probs.Errors())
	}
	return d
}

// The half-wave doubler against ngspice: every net within 1 %.
func TestHalfWaveDoublerAgreesWithNgspice(t *testing.T) {
	needSimulator(t)
	d := halfWaveDoubler(t)
	m, err := amp.Build(d)
	if err != nil {
		t.Fatal(err)
	}
	if m.HT == nil || m.HT.Doubler == nil || m.HT.Doubler.Full {
		t.Fatalf("not taken as a half-wave doubler")
	}
	runComparisons(t, []*design.Design{d}, amp.Conditions{}, simCycles)
}

// lineFedDoubler is the acdc-phono template with its valve rectifier
// replaced by a half-wave silicon doubler straight off the mains through
// the surge resistor (C5 the pump from HTA to DM, D1 from chassis up to
// DM, D2 from DM up to the reservoir B1) and the heater string's dropper
// retaken for the two heaters left: (120 − 62.6 V)/150 mA ≈ 390 Ω.
func lineFedDoubler(t *testing.T) *design.Design {
	t.Helper()
	tp, err := design.TemplateByName("acdc-phono")
	if err != nil {
		t.Fatal(err)
	}
	src := string(tp.Text)
	i := strings.Index(src, "  V3:\n    valve: 35W4")
	j := strings.Index(src, "  C1: {capacitor")
	if i < 0 || j < i {
		t.Fatal("acdc-phono: no 35W4 block")
	}
	src = src[:i] + `  C5: {capacitor: 47u, volts: 250, kind: electrolytic, between: [DM, HTA], note: doubler pump}
  D1: {rectifier: silicon, anodes: [0V], cathode: DM}
  D2: {rectifier: silicon, anodes: [DM], cathode: B1}
  R5: {resistor: 220k, watts: 0.5, between: [DM, HTA], note: bleeder across C5}
` + src[j:]
	for _, r := range [][2]string{
		{"R9: {resistor: 150R?, watts: 7?", "R9: {resistor: 390R, watts: 10"},
		{"C1: {capacitor: 50u?, volts: 200?", "C1: {capacitor: 50u?, volts: 350?"},
	} {
		if !strings.Contains(src, r[0]) {
			t.Fatalf("acdc-phono has no %q", r[0])
		}
	}
	src = strings.Replace(src, "R9: {resistor: 150R?, watts: 7?", "R9: {resistor: 390R, watts: 10", 1)
	src = strings.Replace(src, "C1: {capacitor: 50u?, volts: 200?", "C1: {capacitor: 50u?, volts: 350?", 1)
	src = strings.ReplaceAll(src, "X2", "X3") // the 50C5's string end now meets the 12AV6's
	d, probs := design.Parse("template:acdc-phono-doubler", []byte(src))
	if len(probs.Errors()) > 0 {
		t.Fatal(probs.Errors())
	}
	return d
}

// A transformerless half-wave doubler against ngspice: the mains at
// ratio 1 behind the surge resistor, every net within 1 %; the chassis is
// hot because of it.
func TestLineFedDoublerAgreesWithNgspice(t *testing.T) {
	d := lineFedDoubler(t)
	m, err := amp.Build(d)
	if err != nil {
		t.Fatal(err)
	}
	if m.HT == nil || m.HT.Doubler == nil || m.HT.Line == nil {
		t.Fatalf("not taken as a doubler off the mains: %+v", m.HT)
	}
	if hot, why := d.HotChassis(); !hot || !strings.Contains(why, "voltage doubler D1/D2 is fed straight from the mains") {
		t.Errorf("hot chassis %v (%s), want the doubler named", hot, why)
	}
	needSimulator(t)
	runComparisons(t, []*design.Design{d}, amp.Conditions{}, simCycles)
}
