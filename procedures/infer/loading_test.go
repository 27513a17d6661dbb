package infer

import (
	"math"
	"path/filepath"
	"testing"

	"pinwalk/expect/amp"
	"pinwalk/expect/bands"
	"pinwalk/expect/design"
	"pinwalk/expect/faults"
	"pinwalk/expect/valves"
)

// gridReturns lists the resistors with one end on a valve's control grid
// (the grid leak or grid return of that stage), in design order.
func gridReturns(d *design.Design) []string {
	grids := map[string]bool{}
	for _, v := range d.Valves() {
		for name, sec := range v.Valve.Sections {
			if n := sec[valves.Grid]; n != "" && !v.Valve.Unused[name] && n != d.Ground {
				grids[n] = true
			}
		}
	}
	var out []string
	for _, p := range d.PartsOfKind(design.Resistor) {
		for _, t := range p.Terminals {
			if grids[t.Net] {
				out = append(out, p.Ref)
				break
			}
		}
	}
	return out
}

// TestGridReturnHighThroughTheMeter: a grid return drifted high shows only
// through the meter's own loading (10 MΩ from the grid to chassis pulls a
// grid fed through 2 MΩ further than one fed through 1 MΩ: the divider
// Rm/(Rm+R), Ohm's law). For every grid return and grid leak of every demo
// drifted high, the live DC readings of one fresh tolerance sample, each
// net solved with the 10 MΩ meter on it, plus meter error, must rank that
// fault first, or in the first group of suspects that no reading
// separates from it (those are reported).
func TestGridReturnHighThroughTheMeter(t *testing.T) {
	names, err := filepath.Glob("../../testdata/designs/*.yaml")
	if err != nil || len(names) == 0 {
		t.Fatal("no demo designs", err)
	}
	for _, path := range names {
		name := filepath.Base(path)
		e := demo(t, name)
		for _, ref := range gridReturns(e.d) {
			f := ref + ":" + string(faults.High)
			if _, ok := e.byName[f]; !ok {
				t.Errorf("%s: no hypothesis %s", name, f)
				continue
			}
			for seed := uint64(1); seed <= 3; seed++ {
				sim, err := e.Simulate(f, 700+seed)
				if err != nil {
					t.Fatalf("%s: simulate %s: %v", name, f, err)
				}
				r := e.Rank(dcObs(e, sim), func(string) bool { return false })
				top := r.Suspects[0]
				switch {
				case top.Fault == f:
					t.Logf("%s %s seed %d: first (%.2f)", name, f, seed, top.Probability)
				case same(e, top.Fault, f, false):
					t.Logf("%s %s seed %d: tied first with %s (%.2f): no live reading separates them", name, f, seed, top.Fault, top.Probability)
				default:
					t.Errorf("%s %s seed %d: ranked %d, first %s (%.2f); %v", name, f, seed, exactRank(r, f), top.Fault, top.Probability, top.Why)
				}
			}
		}
	}
}

// TestMeterLoadingPerHypothesis: on the push-pull demo, R21 (1 MΩ from the
// phase inverter's second grid to the tail) drifted high: every DC-volts
// point read as `expect --fault R21:high` gives it (the nominal with the
// fault, and the meter's loaded reading where the meter moves it) must
// rank R21:high first, and its predicted band at V2.2 must hold the
// loaded reading and lie below the healthy band's (a 10 MΩ meter on a
// grid fed through 2 MΩ instead of 1 MΩ reads lower: Rm/(Rm+R)).
func TestMeterLoadingPerHypothesis(t *testing.T) {
	e := demo(t, "pp-el34-fixed.yaml")
	const f = "R21:high"
	set, err := bands.Run(e.d, e.bandsOptions([]faults.Fault{{Ref: "R21", Mode: faults.High}}, 0, 1, 1))
	if err != nil {
		t.Fatal(err)
	}
	loading, err := set.Loading(bands.DefaultMeter())
	if err != nil {
		t.Fatal(err)
	}
	read := map[string]float64{}
	for _, l := range loading {
		read[l.Key] = l.Loaded
	}
	var obs []Observation
	for i, pd := range set.Points {
		if pd.Quantity != amp.DCVolts {
			continue
		}
		x, ok := read[pd.Key()]
		if !ok {
			x = set.Nominal[i]
		}
		obs = append(obs, Observation{pd.Key(), x})
	}
	r := e.Rank(obs, func(string) bool { return false })
	if r.Suspects[0].Fault != f {
		t.Errorf("first %s (%.2f), R21:high ranked %d", r.Suspects[0].Fault, r.Suspects[0].Probability, exactRank(r, f))
	}
	v22 := read["V2.2 dc_volts"]
	lo, _, hi, ok := e.Band(f, "V2.2 dc_volts")
	hlo, _, _, _ := e.Band(Healthy, "V2.2 dc_volts")
	t.Logf("V2.2 through the meter %.2f V; R21:high predicts %.2f–%.2f V; healthy from %.2f V", v22, lo, hi, hlo)
	if !ok || v22 < lo || v22 > hi || hi > hlo+1 {
		t.Errorf("V2.2 read %.2f V: R21:high band %.2f–%.2f V, healthy from %.2f V", v22, lo, hi, hlo)
	}
	// The unloaded grid sits at the tail's volts either way: without the
	// meter the two could not be told apart at all.
	if math.Abs(set.Nominal[mustIndex(t, set, "V2.2 dc_volts")]-set.Nominal[mustIndex(t, set, "V2.7 dc_volts")]) > 1 {
		t.Errorf("unloaded grids differ: the fault should not move an unloaded grid")
	}
}

func mustIndex(t *testing.T, set *bands.Set, key string) int {
	t.Helper()
	i, ok := set.Index(key)
	if !ok {
		t.Fatalf("no point %s", key)
	}
	return i
}
