package faults

import (
	"testing"
)

func sectionIndex(t *testing.T, name string, names func(int) string, n int) int {
	t.Helper()
	for i := 0; i < n; i++ {
		if names(i) == name {
			return i
		}
	}
	t.Fatalf("no section %s", name)
	return -1
}

// TestFaultDirections asserts physically expected directions of a few
// faults (common practice: what a technician expects to see).
func TestFaultDirections(t *testing.T) {
	t.Run("se-6v6-stereo", func(t *testing.T) {
		m := load(t, "se-6v6-stereo")
		nom, res := solveAll(t, m)
		v2 := sectionIndex(t, "V2", func(i int) string { return m.Sections[i].Name() }, len(m.Sections))
		ia := func(f Fault) float64 {
			r := res[f]
			if r.err != nil {
				t.Fatalf("%s: %v", f, r.err)
			}
			return r.op.Sections[v2].Ia
		}
		nomIa := nom.Sections[v2].Ia
		// A screen resistor open: a beam tetrode without screen volts
		// passes almost no plate current (common practice).
		if got := ia(Fault{"R14", Open}); got > 0.1*nomIa {
			t.Errorf("R14 open: V2 Ia %.2f mA, nominal %.2f mA: want it to collapse", 1e3*got, 1e3*nomIa)
		}
		// A cathode resistor open stops the stage (common practice).
		if got := ia(Fault{"R15", Open}); got > 0.01*nomIa {
			t.Errorf("R15 open: V2 Ia %.3f mA, want about 0", 1e3*got)
		}
		// A heater broken down to its cathode ties the cathode to the
		// heater winding's centre tap (chassis) through HKShortOhms: the
		// cathode sits at Ik·(R15 ∥ HKShortOhms) (Ohm's law) and the
		// valve, its bias gone, draws far more current (common practice).
		hk := res[Fault{"V2", HKShort}]
		if hk.err != nil {
			t.Fatal(hk.err)
		}
		so := hk.op.Sections[v2]
		if want := so.Ik * parallel(330, HKShortOhms); so.Vk < 0.98*want || so.Vk > 1.02*want {
			t.Errorf("V2 hk-short: cathode %.3f V, want Ik·(330 Ω ∥ %g Ω) = %.3f V", so.Vk, HKShortOhms, want)
		}
		if so.Ia < 1.5*nomIa {
			t.Errorf("V2 hk-short: Ia %.1f mA, nominal %.1f mA: want the bias lost", 1e3*so.Ia, 1e3*nomIa)
		}
		// V1 (a 12AU7 driver) shorted inside, plate to cathode: each
		// section's plate joins its cathode through InternalShortOhms, so
		// one current flows from B4 through the 33 kΩ plate resistor,
		// the short and the 1.2 kΩ cathode resistor (Ohm's law on each),
		// and the plate pin passes it.
		pk := res[Fault{"V1", Short}]
		if pk.err != nil {
			t.Fatal(pk.err)
		}
		v1a := sectionIndex(t, "V1A", func(i int) string { return m.Sections[i].Name() }, len(m.Sections))
		so1 := pk.op.Sections[v1a]
		b4, _ := m.NetVolts(&pk.op, "B4")
		want := (b4 - so1.Va) / 33e3
		for _, c := range []struct {
			what      string
			got, want float64
		}{
			{"plate current", so1.Ia, want},
			{"cathode volts", so1.Vk, want * 1.2e3},
			{"plate-to-cathode volts", so1.Va - so1.Vk, want * InternalShortOhms},
		} {
			if c.got < 0.98*c.want || c.got > 1.02*c.want {
				t.Errorf("V1 short: %s %.4g, Ohm's law gives %.4g", c.what, c.got, c.want)
			}
		}
		if want < 3e-3 {
			t.Errorf("V1 short: %.2f mA through the short, want B4/(33k+1k2), several mA", 1e3*want)
		}
		// An output valve shorted inside blows the fuse: no B+.
		if r := res[Fault{"V2", Short}]; r.err != nil || r.op.Sections[v2].Va > 1 {
			t.Errorf("V2 short: plate %.1f V (err %v), want 0 V (fuse blown)", r.op.Sections[v2].Va, r.err)
		}
		// A dead valve: no current, plate rises to its B+ node (common practice).
		if got := ia(Fault{"V2", Dead}); got > 1e-6 {
			t.Errorf("V2 dead: Ia %g", got)
		}
		// A weak valve passes less current (common practice).
		if got := ia(Fault{"V2", Weak}); got >= 0.9*nomIa {
			t.Errorf("V2 weak: Ia %.2f mA, nominal %.2f mA", 1e3*got, 1e3*nomIa)
		}
		// A leaky coupling capacitor puts positive volts on the next grid
		// and the valve draws more current (common practice).
		r := res[Fault{"C11", Leaky}]
		if r.err != nil {
			t.Fatal(r.err)
		}
		if g := r.op.Sections[v2].Vg; g < 1 || nom.Sections[v2].Vg > 0.1 {
			t.Errorf("C11 leaky: V2 grid %.2f V (nominal %.3f V): want clearly positive", g, nom.Sections[v2].Vg)
		}
		if r.op.Sections[v2].Ia <= nomIa {
			t.Errorf("C11 leaky: V2 Ia %.2f mA not above nominal %.2f mA", 1e3*r.op.Sections[v2].Ia, 1e3*nomIa)
		}
		// An open HT winding leaves no B+; an open reservoir raises ripple.
		b1 := func(f Fault) float64 { v, _ := m.NetVolts(&res[f].op, "B1"); return v }
		if b := b1(Fault{"T1", Open}); b > 5 {
			t.Errorf("T1 open: B1 %.1f V", b)
		}
		if rr := res[Fault{"C1", Open}].op.Supply.Nets[0].RippleRms; rr < 3*nom.Supply.Nets[0].RippleRms {
			t.Errorf("C1 open: B1 ripple %.2f V vs nominal %.2f V: want several times more", rr, nom.Supply.Nets[0].RippleRms)
		}
		// A half-open rectifier: lower B+, more ripple (half-wave).
		if rr := res[Fault{"D1", HalfOpen}].op.Supply.Nets[0].RippleRms; rr < 1.5*nom.Supply.Nets[0].RippleRms {
			t.Errorf("D1 half-open: ripple %.2f V vs nominal %.2f V", rr, nom.Supply.Nets[0].RippleRms)
		}
		// A shorted diode blows the mains fuse at switch-on (common
		// practice), modelled as nothing powered: no B+, no heaters.
		if b := b1(Fault{"D1", Short}); b > 0.5 {
			t.Errorf("D1 short: B1 %.2f V, want 0 V (the fuse blown)", b)
		}
		if ia := res[Fault{"D1", Short}].op.Sections[v2].Ia; ia > 1e-6 {
			t.Errorf("D1 short: V2 Ia %g A, want none", ia)
		}
		// A shorted reservoir capacitor collapses B1: under a tenth of
		// its nominal volts (Ohm's law: the 190 Ω winding into a short).
		nb1, _ := m.NetVolts(&nom, "B1")
		if b := b1(Fault{"C1", Short}); b > 0.1*nb1 {
			t.Errorf("C1 short: B1 %.1f V vs nominal %.1f V: want it collapsed", b, nb1)
		}
	})
	t.Run("pp-el34-fixed", func(t *testing.T) {
		m := load(t, "pp-el34-fixed")
		nom, res := solveAll(t, m)
		v3 := sectionIndex(t, "V3", func(i int) string { return m.Sections[i].Name() }, len(m.Sections))
		// Bias supply dead: grids go to 0 V and the output valves run hot
		// (common practice: the reason fixed-bias amps fail dangerously).
		r := res[Fault{"U1", Dead}]
		if r.err != nil {
			t.Fatal(r.err)
		}
		if r.op.Sections[v3].Ia < 2*nom.Sections[v3].Ia {
			t.Errorf("U1 dead: V3 Ia %.1f mA vs nominal %.1f mA: want far more", 1e3*r.op.Sections[v3].Ia, 1e3*nom.Sections[v3].Ia)
		}
		// One OT half open: that valve's plate loses its volts.
		r = res[Fault{"OT1.a", Open}]
		if r.op.Sections[v3].Va > 5 {
			t.Errorf("OT1.a open: V3 plate %.1f V", r.op.Sections[v3].Va)
		}
		// A weak valve rectifier drops more volts.
		b1 := func(f Fault) float64 { v, _ := m.NetVolts(&res[f].op, "B1"); return v }
		nb1, _ := m.NetVolts(&nom, "B1")
		if b := b1(Fault{"V9", Weak}); b > nb1-5 {
			t.Errorf("V9 weak: B1 %.1f V vs nominal %.1f V", b, nb1)
		}
	})
	t.Run("bench-12ax7", func(t *testing.T) {
		m := load(t, "bench-12ax7")
		nom, res := solveAll(t, m)
		// Plate load drifted high: plate volts fall (Ohm's law with less current).
		if va := res[Fault{"R2", High}].op.Sections[0].Va; va >= nom.Sections[0].Va {
			t.Errorf("R2 high: plate %.1f V not below nominal %.1f V", va, nom.Sections[0].Va)
		}
		// Cathode resistor open: no current, plate at the supply (250 V).
		if va := res[Fault{"R3", Open}].op.Sections[0].Va; va < 249 {
			t.Errorf("R3 open: plate %.1f V, want the 250 V supply", va)
		}
	})
}
