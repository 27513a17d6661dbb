package amp

import (
	"math"
	"strings"
	"testing"

	"pinwalk/expect/design"
)

func regulatedText(t *testing.T) string {
	t.Helper()
	tp, err := design.TemplateByName("preamp-regulated")
	if err != nil {
		t.Fatal(err)
	}
	return strings.ReplaceAll(string(tp.Text), "?", "")
}

// TestRegulatorHoldsItsRail: the preamp-regulated template's OA2 sits at
// its maintaining volts (150 V, RCA OA2 data, from memory) within its
// stated regulation, and a change of the HT moves the regulated rail by
// the closed form of a shunt regulator: ΔV_reg = ΔV_B2 · r/(R_feed + r)
// with r the regulator's incremental resistance (regulation 2 V over
// 5–30 mA: 80 Ω) in parallel with the load it feeds (much larger, left
// in the closed form as a parallel term).
func TestRegulatorHoldsItsRail(t *testing.T) {
	src := regulatedText(t)
	var reg, b2 [2]float64
	for i, ht := range []string{"300V", "320V"} {
		d := parse(t, strings.Replace(src, "dc-supply: 300V", "dc-supply: "+ht, 1))
		m, op := solve(t, d, Conditions{})
		if len(m.Regulators) != 1 {
			t.Fatalf("%d regulators in the network, want 1", len(m.Regulators))
		}
		reg[i], b2[i] = netV(t, m, op, "REG"), netV(t, m, op, "B2")
		cur := m.RegulatorCurrent(op, m.Regulators[0])
		g := m.Regulators[0].Type.Gas
		t.Logf("HT %s: B2 %.2f V, REG %.3f V, OA2 %.2f mA", ht, b2[i], reg[i], 1e3*cur)
		if cur < g.MinAmps || cur > g.MaxAmps {
			t.Errorf("HT %s: OA2 current %.2f mA outside its 5–30 mA range", ht, 1e3*cur)
		}
		if math.Abs(reg[i]-g.MaintainVolts) > g.RegulationVolts {
			t.Errorf("HT %s: REG %.2f V, more than the %g V regulation from %g V", ht, reg[i], g.RegulationVolts, g.MaintainVolts)
		}
	}
	// Closed form: r ∥ R_load, with R_load = REG / (the load current).
	d := parse(t, src)
	m, op := solve(t, d, Conditions{})
	rg := m.Regulators[0]
	iFeed := (netV(t, m, op, "B2") - netV(t, m, op, "REG")) / 6800
	iLoad := iFeed - m.RegulatorCurrent(op, rg)
	rLoad := netV(t, m, op, "REG") / iLoad
	i := m.RegulatorCurrent(op, rg)
	r := rg.Law.R + rg.Law.Junction.N*0.025852/(i+rg.Law.Junction.Is) // incremental: resistance plus the knee's n·Vt/I
	rp := r * rLoad / (r + rLoad)
	want := (b2[1] - b2[0]) * rp / (6800 + rp)
	got := reg[1] - reg[0]
	t.Logf("ΔB2 %.2f V: ΔREG %.4f V, closed form %.4f V (r %.1f Ω)", b2[1]-b2[0], got, want, r)
	if math.Abs(got-want) > 0.1*want {
		t.Errorf("ΔREG %.4f V, closed form %.4f V: off by more than 10 %%", got, want)
	}
}

// TestRegulatorRatings: the rating checks a technician relies on before
// power-up, each from a changed template: too little feed resistance (over
// the maximum current), too much (under the minimum), an HT that cannot
// reach the striking volts at switch-on, and too much capacitance across.
func TestRegulatorRatings(t *testing.T) {
	src := regulatedText(t)
	for _, c := range []struct{ old, new, want string }{
		{"", "", ""},
		{"resistor: 6k8", "resistor: 2k2", "over its 30 mA maximum"},
		{"resistor: 6k8", "resistor: 47k", "under its 5 mA minimum"},
		{"dc-supply: 300V", "dc-supply: 175V", "will not strike"},
		{"capacitor: 100n, volts: 400, kind: film, between: [REG, 0V]", "capacitor: 1u, volts: 400, kind: film, between: [REG, 0V]", "can oscillate"},
	} {
		s := src
		if c.old != "" {
			if !strings.Contains(s, c.old) {
				t.Fatalf("no %q in the template", c.old)
			}
			s = strings.Replace(s, c.old, c.new, 1)
		}
		d := parse(t, s)
		m, op := solve(t, d, Conditions{})
		var cold OP
		if err := NewSolver(m).ColdStart(0, &cold); err != nil {
			t.Fatal(err)
		}
		var msgs []string
		for _, f := range m.RatingChecks(op, &cold) {
			if f.Ref == "V3" {
				msgs = append(msgs, f.Msg)
			}
		}
		all := strings.Join(msgs, "; ")
		switch {
		case c.want == "" && len(msgs) > 0:
			t.Errorf("template as shipped: %s", all)
		case c.want != "" && !strings.Contains(all, c.want):
			t.Errorf("%s → %s: findings %q, want %q", c.old, c.new, all, c.want)
		}
	}
}
