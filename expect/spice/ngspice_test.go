package spice

import (
	"context"
	"errors"
	"fmt"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"sync"
	"testing"
	"time"

	"pinwalk/expect/amp"
	"pinwalk/expect/bands"
	"pinwalk/expect/design"
	"pinwalk/expect/valves"
)

// needSimulator skips the test when ngspice is not installed, except in CI
// (CI=true), where a missing simulator is a failure: the check must run
// there.
func needSimulator(t *testing.T) {
	t.Helper()
	if _, err := exec.LookPath("ngspice"); err != nil {
		if os.Getenv("CI") == "true" {
			t.Fatalf("ngspice is not installed and CI=true: .ci/run installs it (apt-get install ngspice); %v", err)
		}
		t.Skip("ngspice is not installed (apt-get install ngspice); this check runs in CI")
	}
}

// allDesigns returns every demo design and every template, loaded.
func allDesigns(t *testing.T) []*design.Design {
	t.Helper()
	files, err := filepath.Glob(filepath.Join("..", "..", "testdata", "designs", "*.yaml"))
	if err != nil || len(files) == 0 {
		t.Fatalf("no demo designs found: %v", err)
	}
	var out []*design.Design
	for _, f := range files {
		d, probs := design.Load(f)
		if len(probs.Errors()) > 0 {
			t.Fatalf("%s: %v", f, probs.Errors())
		}
		out = append(out, d)
	}
	for _, tp := range design.Templates() {
		d, probs := design.Parse("template:"+tp.Name, tp.Text)
		if len(probs.Errors()) > 0 {
			t.Fatalf("template %s: %v", tp.Name, probs.Errors())
		}
		out = append(out, d)
	}
	return out
}

// The comparison: every DC point pinwalk predicts (each net's volts, each
// valve pin's volts and electrode current) against the simulator's mean
// over the last whole mains cycles.
const (
	// agreeFrac is the agreement asked for: 1 % of the pinwalk value.
	agreeFrac = 0.01
	// Near zero, 1 % of the value means nothing a meter could show: the
	// percentage is taken of at least voltFloor volts or ampFloor amps
	// (so a grid at 0 V agrees within 10 mV, a grid current within 10 nA).
	voltFloor = 1.0
	ampFloor  = 1e-6
	// settleFrac bounds how far a probe may still be from its periodic
	// steady state (last change plus its extrapolated remainder), as a
	// fraction of the same scale: a tenth of the agreement asked for.
	settleFrac = 0.001
	// cycles simulated; averaged over the last avgCycles, which must be
	// even (three pairs judge the settling). A design not settled after
	// its cycles runs once more for moreCycles times as many: the slow
	// modes of some designs (a long RC ladder in the supply feeding a
	// self-biased long-tailed pair, whose grid returns the tail
	// bootstraps) take longer than most to die away.
	moreCycles   = 2
	simCycles    = 100
	variacCycles = 40
	avgCycles    = 6
	// stepsPerCycle bounds the simulator's time step (a 50 Hz cycle in
	// 100 steps or more: 200 µs).
	stepsPerCycle = 100
)

// comparison is one design's result.
type comparison struct {
	name         string
	points       int
	worstPct     float64
	worstAt      string
	worstDesc    string
	settle       float64 // largest remaining drift estimate, fraction of scale
	settleAt     string
	settleCycles []float64
	cycles       int // mains cycles simulated
	elapsed      time.Duration
	failures     []string
}

// TestAgreesWithNgspice runs every demo design and every template through
// ngspice (a transient to periodic steady state, averaged over the last
// whole mains cycles; it starts with the reservoir at pinwalk's volts and
// every capacitor charged to the simulator's own DC solution there, which
// spares the seconds a self-biased phase inverter takes to settle from
// power-on; the settling check decides whether the run got there) and
// compares every net and valve pin with
// pinwalk's nominal solution (`pinwalk expect --samples 0` at nominal
// mains): the independent check of the supply simulation, the supply-to-
// network coupling and the nodal solve. The simulator, not pinwalk, is the
// reference here; the device laws are the same on both sides
// (TestDeviceLawsMatchGo), so what is checked is everything built on them.
func TestAgreesWithNgspice(t *testing.T) {
	needSimulator(t)
	ds := allDesigns(t)
	runComparisons(t, ds, amp.Conditions{}, simCycles)
}

// TestAgreesWithNgspiceOnAVariac: the same check at 60 % variac for the
// two demos with power valves, where the cool heaters make pinwalk cap the
// cathode emission of every valve (the 6V6GTs of the single-ended demo
// hard against their cap) and clip the push-pull demo's 5U4GB anode
// current at its cool filament's emission: the caps are in the netlist
// too. Fewer cycles: the runs start close to their steady state, and the
// settling check still applies.
func TestAgreesWithNgspiceOnAVariac(t *testing.T) {
	needSimulator(t)
	var ds []*design.Design
	for _, d := range allDesigns(t) {
		if strings.HasSuffix(d.File, "pp-el34-fixed.yaml") || strings.HasSuffix(d.File, "se-6v6-stereo.yaml") {
			ds = append(ds, d)
		}
	}
	if len(ds) != 2 {
		t.Fatalf("found %d of the two demos", len(ds))
	}
	runComparisons(t, ds, amp.Conditions{Variac: 0.6}, variacCycles)
}

// TestAuxRectifierAgreesWithNgspice: the template whose grid bias comes
// from its own winding through a silicon diode, at nominal mains and at
// 60 % variac (where the bias falls with the winding's peak), against the
// simulator with the diode, the winding and the reservoir written out.
func TestAuxRectifierAgreesWithNgspice(t *testing.T) {
	needSimulator(t)
	var ds []*design.Design
	for _, d := range allDesigns(t) {
		if d.File == "template:pp-diode-bias" {
			ds = append(ds, d)
		}
	}
	if len(ds) != 1 {
		t.Fatalf("found %d templates pp-diode-bias", len(ds))
	}
	runComparisons(t, ds, amp.Conditions{}, simCycles)
	runComparisons(t, ds, amp.Conditions{Variac: 0.6}, variacCycles)
}

// runComparisons compares each design under conditions c, two simulations
// at a time, logs the table and reports every failure.
func runComparisons(t *testing.T, ds []*design.Design, c amp.Conditions, cycles int) {
	t.Helper()
	results := make([]*comparison, len(ds))
	// Two simulations at a time: the CI machine has two cores.
	sem := make(chan struct{}, 2)
	var wg sync.WaitGroup
	for i, d := range ds {
		wg.Add(1)
		go func() {
			defer wg.Done()
			sem <- struct{}{}
			defer func() { <-sem }()
			r := compareDesign(d, c, cycles)
			if r.settle > settleFrac {
				r = compareDesign(d, c, moreCycles*cycles)
			}
			results[i] = r
		}()
	}
	wg.Wait()
	var b strings.Builder
	cond := "nominal mains"
	if c.Variac > 0 {
		cond = fmt.Sprintf("%.0f %% variac", 100*c.Variac)
	}
	fmt.Fprintf(&b, "pinwalk against ngspice at %s (%d cycles from pinwalk's reservoir volts, %d times as many where not settled by then,\nmean of the last %d; |Δ| as %% of max(|pinwalk|, %g V or %g A)):\n",
		cond, cycles, moreCycles, avgCycles, voltFloor, ampFloor)
	fmt.Fprintf(&b, "%-28s %6s %8s  %-16s %9s %6s  %s\n", "design", "points", "worst %", "at", "settle %", "cycles", "time")
	for _, r := range results {
		fmt.Fprintf(&b, "%-28s %6d %8.3f  %-16s %9.4f %6d  %v\n", r.name, r.points, r.worstPct, r.worstAt, 100*r.settle, r.cycles, r.elapsed.Round(10*time.Millisecond))
	}
	b.WriteString("worst point of each design:\n")
	for _, r := range results {
		fmt.Fprintf(&b, "  %-28s %s\n", r.name, r.worstDesc)
	}
	t.Log("\n" + b.String())
	for _, r := range results {
		for _, f := range r.failures {
			t.Errorf("%s: %s", r.name, f)
		}
	}
}

func compareDesign(d *design.Design, c amp.Conditions, cycles int) *comparison {
	name := d.File
	if !strings.HasPrefix(name, "template:") {
		name = "demo:" + strings.TrimSuffix(filepath.Base(name), ".yaml")
	}
	r := &comparison{name: name, cycles: cycles}
	fail := func(format string, a ...any) *comparison {
		r.failures = append(r.failures, fmt.Sprintf(format, a...))
		return r
	}
	t0 := time.Now()
	set, err := bands.Run(d, bands.Options{Samples: 0, Cond: c})
	if err != nil {
		return fail("pinwalk: %v", err)
	}
	m, err := amp.Build(d)
	if err != nil {
		return fail("pinwalk: %v", err)
	}
	nl, err := ExportAt(d, c)
	if err != nil {
		return fail("export: %v", err)
	}
	opt := DeckOptions{Cycles: cycles, Average: avgCycles, StepsPerCycle: stepsPerCycle}
	if m.HT != nil || len(m.AuxRects()) > 0 {
		// Start with the reservoirs at pinwalk's volts (see DeckOptions.Initial);
		// the settling check below judges whether the run then reached its own
		// periodic steady state.
		opt.Initial = Reservoirs(m, set.NominalOP)
	}
	ctx, cancel := context.WithTimeout(context.Background(), 5*time.Minute)
	defer cancel()
	res, err := Simulate(ctx, nl, opt)
	r.elapsed = time.Since(t0)
	if err != nil {
		return fail("%v", err)
	}
	// perCycle returns a probe's means, last cycle first.
	perCycle := func(name string) ([]float64, error) {
		c, ok := res.Cycles[name]
		if !ok {
			return nil, fmt.Errorf("no probe %s in the simulation", name)
		}
		return c, nil
	}
	probeOf := func(section, electrode string) (string, bool) {
		for _, p := range nl.Probes {
			if p.Section == section && p.Electrode == electrode {
				return p.Name, true
			}
		}
		return "", false
	}
	for i, pd := range set.Points {
		var names []string // probes summed for this point
		floor := voltFloor
		switch pd.Quantity {
		case amp.DCVolts:
			node, ok := nl.Node(pd.Net)
			if !ok {
				return fail("%s: net %s is not in the netlist", pd.Label, pd.Net)
			}
			if node != "0" { // a pin on chassis (an unused section) reads 0 on both sides
				names = []string{"v_" + strings.ToLower(node)}
			}
		case amp.DCAmps:
			floor = ampFloor
			if pd.Section < 0 {
				continue
			}
			sec := m.Sections[pd.Section].Name()
			electrodes := []string{pd.Electrode}
			if pd.Electrode == valves.Cathode {
				electrodes = []string{valves.Plate, valves.Screen, valves.Grid}
			}
			for _, e := range electrodes {
				if name, ok := probeOf(sec, e); ok {
					names = append(names, name)
				}
			}
			if pd.Electrode == valves.Cathode {
				// Signal-diode plates return through the shared cathode pin.
				for _, p := range nl.Probes {
					if p.Section == sec && p.Electrode == valves.Plates {
						names = append(names, p.Name)
					}
				}
			}
			if len(names) == 0 {
				return fail("%s: no current probe for %s %s", pd.Label, sec, pd.Electrode)
			}
		default:
			continue // AC quantities and ripple are not DC checks
		}
		cyc := make([]float64, avgCycles)
		for _, name := range names {
			c, err := perCycle(name)
			if err != nil {
				return fail("%s: %v", pd.Label, err)
			}
			for k := range cyc {
				cyc[k] += c[k]
			}
		}
		r.points++
		want := set.Nominal[i]
		scale := math.Max(math.Abs(want), floor)
		var mean float64
		for _, c := range cyc {
			mean += c
		}
		mean /= avgCycles
		if s := remainingDrift(cyc) / scale; s > r.settle {
			r.settle, r.settleAt = s, pd.Key()
			r.settleCycles = cyc
		}
		pct := 100 * math.Abs(mean-want) / scale
		if pct > r.worstPct || r.worstAt == "" {
			r.worstPct, r.worstAt = pct, pd.Key()
			u := amp.UnitOf(pd.Quantity)
			r.worstDesc = fmt.Sprintf("%s: pinwalk %.6g %s, ngspice %.6g %s", pd.Label, want, u, mean, u)
		}
		if pct > 100*agreeFrac {
			r.failures = append(r.failures, fmt.Sprintf("%s (%s): pinwalk %.6g, ngspice %.6g: %.3f %% apart, want within %g %%",
				pd.Label, pd.Key(), want, mean, pct, 100*agreeFrac))
		}
	}
	if r.points == 0 {
		return fail("no DC points compared")
	}
	if r.settle > settleFrac {
		fail("not settled to periodic steady state after %d cycles: %s may still move by %.3f %% (want under %g %%); its last cycles, last first: %.7g",
			cycles, r.settleAt, 100*r.settle, 100*settleFrac, r.settleCycles)
	}
	return r
}

// remainingDrift estimates how far the mean of a probe's last cycles may
// still be from its periodic steady state, from its per-cycle means (last
// cycle first, an even number of them, at least six): the spread of those
// means (which bounds what is left of a slow oscillation, such as an LC
// filter ringing down), plus, when the means of successive pairs of
// cycles move the same way, the rest of that movement: its geometric
// remainder d·ρ/(1−ρ) when it is slowing down, ten times the last change
// when it is not.
func remainingDrift(cyc []float64) float64 {
	lo, hi := math.Inf(1), math.Inf(-1)
	for _, c := range cyc {
		lo, hi = math.Min(lo, c), math.Max(hi, c)
	}
	spread := hi - lo
	pair := func(k int) float64 { return (cyc[2*k] + cyc[2*k+1]) / 2 }
	d1 := pair(0) - pair(1)
	d2 := pair(1) - pair(2)
	a1, a2 := math.Abs(d1), math.Abs(d2)
	switch {
	case d1*d2 <= 0:
		return spread // turning (or still): no drift to extrapolate
	case a1 < a2:
		rho := a1 / a2
		return spread + a1*rho/(1-rho)
	default:
		return spread + 10*a1
	}
}

func TestRemainingDrift(t *testing.T) {
	// A geometric decay by 0.9 a cycle towards 1: the estimate must cover
	// the true distance of the last cycles' mean from 1.
	var cyc []float64
	for k := 0; k < 6; k++ {
		cyc = append(cyc, 1+math.Pow(0.9, float64(30-k)))
	}
	last := 0.0
	for _, c := range cyc {
		last += c / 6
	}
	if got := remainingDrift(cyc); got < last-1 {
		t.Errorf("remainingDrift of a decay by 0.9 a cycle: %.3g, want at least the true remainder %.3g", got, last-1)
	}
	if d := remainingDrift([]float64{1, 1, 1, 1, 1, 1}); d != 0 {
		t.Errorf("settled probe: remaining drift %g, want 0", d)
	}
	// A ringing: the spread bounds it.
	if d := remainingDrift([]float64{1.01, 0.99, 1.01, 0.99, 1.01, 0.99}); math.Abs(d-0.02) > 1e-12 {
		t.Errorf("ringing by ±0.01: remaining drift %g, want the spread 0.02", d)
	}
	// A drift that is not slowing down.
	if d := remainingDrift([]float64{1.06, 1.05, 1.04, 1.03, 1.02, 1.01}); d < 0.2 {
		t.Errorf("steady ramp of 0.01 a cycle: remaining drift %g, want well above the spread", d)
	}
}

// TestDeviceLawsMatchGo evaluates each device law of the netlist in ngspice
// at fixed electrode voltages and compares it with the expect/valves
// function it mirrors. It fails when either side changes alone.
func TestDeviceLawsMatchGo(t *testing.T) {
	needSimulator(t)
	tri, ok := valves.Lookup("12AX7")
	if !ok {
		t.Fatal("no 12AX7 in the library")
	}
	pen, ok := valves.Lookup("EL34")
	if !ok {
		t.Fatal("no EL34 in the library")
	}
	type check struct {
		name    string
		expr    string // in terms of V(a), V(b), V(c)
		a, b, c float64
		want    float64
	}
	var cs []check
	add := func(expr string, a, b, c, want float64) {
		cs = append(cs, check{name: fmt.Sprintf("law%d", len(cs)), expr: expr, a: a, b: b, c: c, want: want})
	}
	kt := tri.Model
	for _, vg := range []float64{-30, -4, -1, 0, 0.4, 2} {
		for _, vp := range []float64{-10, 0, 0.5, 40, 250, 450} {
			ip, _, _ := kt.TriodePlate(vg, vp)
			add(triodeIp(kt, "V(a)", "V(b)", 0), vg, vp, 0, ip)
			// With an emission cap near the current itself.
			if ip > 0 {
				imax := 1.3 * ip
				r, _ := valves.EmissionCap(ip, imax)
				add(triodeIp(kt, "V(a)", "V(b)", imax), vg, vp, 0, ip*r)
			}
		}
		ig, _ := kt.GridCurrent(vg)
		add(gridIg(kt, "V(a)"), vg, 0, 0, ig)
	}
	kp := pen.Model
	for _, vg1 := range []float64{-40, -13.5, -2, 0, 1} {
		for _, vg2 := range []float64{-5, 0, 100, 250} {
			for _, va := range []float64{-5, 0, 20, 250, 600} {
				ip, ig2, _, _ := kp.Pentode(vg1, vg2, va)
				eip, eig2 := pentodeCurrents(kp, "V(a)", "V(b)", "V(c)", 0)
				add(eip, vg1, vg2, va, ip)
				add(eig2, vg1, vg2, va, ig2)
				if ik := ip + ig2; ik > 0 {
					imax := 0.8 * ik
					r, _ := valves.EmissionCap(ik, imax)
					cip, cig2 := pentodeCurrents(kp, "V(a)", "V(b)", "V(c)", imax)
					add(cip, vg1, vg2, va, ip*r)
					add(cig2, vg1, vg2, va, ig2*r)
				}
			}
		}
		ig, _ := kp.GridCurrent(vg1)
		add(gridIg(kp, "V(a)"), vg1, 0, 0, ig)
	}
	rect, ok := valves.Lookup("5U4GB")
	if !ok {
		t.Fatal("no 5U4GB in the library")
	}
	for _, v := range []float64{-500, 0, 1, 25, 60} {
		dev := valves.RectifierDevice{Perveance: rect.Perveance}
		i, _ := dev.Current(v)
		add(rectifierAnode("V(a)", rect.Perveance, 0), v, 0, 0, i)
		// The supply simulation clips a cool filament's current.
		lim := 0.05
		add(rectifierAnode("V(a)", rect.Perveance, lim), v, 0, 0, math.Min(i-1e-12*v, lim)+1e-12*v)
	}
	// The 6AV6's detector diodes: through the contact potential (the
	// plate a little negative), across the knee and forward.
	av6, ok := valves.Lookup("6AV6")
	if !ok {
		t.Fatal("no 6AV6 in the library")
	}
	du := av6.SectionType("D", nil)
	for _, v := range []float64{-20, -0.6, -0.4, 0, 0.3, 5, 40} {
		for _, sc := range []float64{1, 0.3} {
			dev := valves.SignalDiodeDevice{Perveance: du.Perveance, Contact: du.ContactVolts, Scale: sc}
			i, _ := dev.Current(v)
			add(signalDiode("V(a)", du.Perveance, du.ContactVolts, sc), v, 0, 0, i)
		}
	}
	var b strings.Builder
	b.WriteString("* device laws against expect/valves\n")
	b.WriteString(funcs())
	for i, c := range cs {
		fmt.Fprintf(&b, "V%da a%d 0 dc %s\nV%db b%d 0 dc %s\nV%dc c%d 0 dc %s\n", i, i, num(c.a), i, i, num(c.b), i, i, num(c.c))
		e := strings.NewReplacer("V(a)", fmt.Sprintf("V(a%d)", i), "V(b)", fmt.Sprintf("V(b%d)", i), "V(c)", fmt.Sprintf("V(c%d)", i)).Replace(c.expr)
		// A current law as a voltage across 1 Ω keeps 1e-15 A resolvable.
		fmt.Fprintf(&b, "B%d o%d 0 V = 1e6*(%s)\n", i, i, e)
	}
	b.WriteString(".tran 1n 2n\n")
	for i, c := range cs {
		fmt.Fprintf(&b, ".meas tran %s find v(o%d) at=1n\n", c.name, i)
	}
	b.WriteString(".end\n")
	res, err := Run(context.Background(), b.String())
	if err != nil {
		t.Fatal(err)
	}
	for i, c := range cs {
		got, ok := res[c.name]
		if !ok {
			t.Fatalf("%s (%s): no result", c.name, c.expr)
		}
		got /= 1e6
		if math.Abs(got-c.want) > 1e-5*math.Abs(c.want)+1e-15 {
			t.Errorf("law %d at (%g, %g, %g): ngspice %.7g, expect/valves %.7g\n  %s", i, c.a, c.b, c.c, got, c.want, c.expr)
		}
	}
	t.Logf("%d device-law points agree with expect/valves", len(cs))
}

// TestMissingSimulator: Run reports a missing ngspice as ErrNoSimulator.
func TestMissingSimulator(t *testing.T) {
	t.Setenv("PATH", t.TempDir())
	if _, err := Run(context.Background(), "* empty\n.end\n"); !errors.Is(err, ErrNoSimulator) {
		t.Errorf("Run with no ngspice on the PATH: %v, want ErrNoSimulator", err)
	}
}
