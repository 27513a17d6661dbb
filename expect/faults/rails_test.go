package faults

import (
	"math"
	"sort"
	"testing"

	"pinwalk/expect/amp"
	"pinwalk/expect/bands"
	"pinwalk/expect/design"
	"pinwalk/expect/supply"
	"pinwalk/expect/valves"
)

// everyDesign loads every demo design and every template, keyed
// "demo:NAME" and "template:NAME".
func everyDesign(t *testing.T) map[string]*amp.Model {
	t.Helper()
	out := map[string]*amp.Model{}
	for _, name := range demos {
		out["demo:"+name] = load(t, name)
	}
	for _, tp := range design.Templates() {
		d, probs := design.Parse(tp.Name+".yaml", tp.Text)
		if errs := probs.Errors(); d == nil || len(errs) > 0 {
			t.Fatalf("template %s: %v", tp.Name, probs)
		}
		m, err := amp.Build(d)
		if err != nil {
			t.Fatalf("template %s: %v", tp.Name, err)
		}
		out["template:"+tp.Name] = m
	}
	return out
}

// rails are the DC limits no node of a solved amplifier can pass.
type rails struct {
	lo, hi float64
	why    string
}

// contactPotential is how far below its most negative source a node can
// be pulled by a hot cathode's fastest electrons landing on a grid with
// no other path (the contact potential of an oxide cathode, under 1 V;
// from memory: RCA Receiving Tube Manual, grid-leak bias). Koren's vct
// offsets in the library are fitted within 0–1 V for the same reason.
const contactPotential = 1.0

// supplyRails returns the rails of a model at the design's mains: below,
// the most negative source (chassis at 0 V, or a negative bias supply)
// less the contact potential; above, the most positive source: the HT
// winding's cold-start peak (√2 times its open-circuit rms less the
// rectifier's drop at no current, supply.ColdPeak) or a DC supply. A
// passive network cannot take a node outside the sources that drive it
// (Kirchhoff's laws with positive resistances: the maximum principle of
// a resistive network), valves only pass current from plate to cathode,
// and a rectifier only conducts forwards, so it can charge the reservoir
// to the winding's peak and no further.
func supplyRails(t *testing.T, m *amp.Model) rails {
	t.Helper()
	lo, hi := 0.0, 0.0
	for i, sl := range m.Slots {
		if sl.Kind == amp.ElemSource {
			x := m.Nominal[i]
			lo, hi = math.Min(lo, x), math.Max(hi, x)
		}
	}
	if m.HT != nil {
		s := amp.NewSolver(m)
		p, ok := s.SupplyParams(amp.Conditions{}, m.NominalValues())
		if !ok {
			t.Fatalf("no supply parameters")
		}
		hi = math.Max(hi, supply.ColdPeak(p))
		if m.HT.Doubler != nil {
			// A voltage doubler's middle net is the output less the top
			// capacitor's volts (at most one winding peak) with the output
			// at or above chassis: with its lower diode open the load's
			// return pulls it down to as far as one peak below chassis
			// (ngspice agrees: spice.TestDoublerDiodeOpenAgreesWithNgspice).
			lo = math.Min(lo, -math.Sqrt2*p.Vrms)
		}
	}
	// A rectifier off its own winding charges its reservoir to the
	// winding's peak less the diodes' drop, either way.
	for _, a := range m.AuxRects() {
		pk := math.Sqrt2*a.VrmsOC - a.Rect.Vf
		lo, hi = math.Min(lo, a.Sign*pk), math.Max(hi, a.Sign*pk)
	}
	return rails{lo: lo - contactPotential, hi: hi}
}

// deadSupply reports whether a fault leaves the HT supply with no output.
func deadSupply(m *amp.Model, f Fault) bool {
	v := m.NominalValues()
	if err := Apply(m, v, f); err != nil {
		return false
	}
	return m.HT != nil && (v.RectDead || v.HTVolts == 0)
}

// TestFaultPredictionsArePhysical solves every fault of every demo and
// template and checks what any real amplifier must show:
//
//   - no node beyond the supply's rails (supplyRails: Kirchhoff's laws
//     with passive parts, one-way valves and rectifiers);
//   - no current backwards through the HT rectifier (a rectifier only
//     conducts forwards): its mean current and the current it feeds the
//     first filter net are ≥ 0, and no valve passes plate current out of
//     its plate (a valve only conducts from a hot cathode to the plate);
//   - a dead supply (an open HT winding, fuse or rectifier, a dead valve
//     rectifier) reads 0 V within the meter's resolution at every HT net,
//     plate and screen (nothing charges the filter: Kirchhoff's current
//     law at the reservoir with no source);
//   - every prediction whose nominal is below one count of the meter's
//     range has a band at least one count wide: the meter cannot resolve
//     less, so a narrower band would fail a good reading of "0".
func TestFaultPredictionsArePhysical(t *testing.T) {
	if testing.Short() {
		t.Skip("solves every fault of every design")
	}
	mt := bands.DefaultMeter()
	names := []string{}
	models := everyDesign(t)
	for n := range models {
		names = append(names, n)
	}
	sort.Strings(names)
	total, dead, near := 0, 0, 0
	for _, name := range names {
		m := models[name]
		r := supplyRails(t, m)
		s := amp.NewSolver(m)
		for _, f := range All(m) {
			total++
			v := m.NominalValues()
			if err := Apply(m, v, f); err != nil {
				t.Fatalf("%s %s: %v", name, f, err)
			}
			var op amp.OP
			if err := s.Solve(amp.Conditions{}, v, false, &op); err != nil {
				t.Errorf("%s %s: %v", name, f, err)
				continue
			}
			tol := 1e-3 + 1e-6*r.hi
			for net := range m.D.Nets {
				x, ok := m.NetVolts(&op, net)
				if !ok {
					continue
				}
				if x < r.lo-tol || x > r.hi+tol {
					t.Errorf("%s %s: net %s at %.4g V, outside the supply's rails %.4g V to %.4g V", name, f, net, x, r.lo, r.hi)
				}
			}
			for i, so := range op.Sections {
				if so.Ia < -1e-9 {
					t.Errorf("%s %s: %s passes %.3g A out of its plate", name, f, m.Sections[i].Name(), -so.Ia)
				}
			}
			if sp := op.Supply; sp != nil {
				if sp.TotalAmps < -1e-9 {
					t.Errorf("%s %s: mean rectifier current %.3g A, backwards", name, f, sp.TotalAmps)
				}
				if len(sp.Nets) > 0 && sp.Nets[0].FeedAmps < -1e-6 {
					t.Errorf("%s %s: the rectifier takes %.3g A back out of %s", name, f, -sp.Nets[0].FeedAmps, sp.Nets[0].Net)
				}
			}
			isDead := deadSupply(m, f)
			if isDead {
				dead++
			}
			ff := f
			set, err := bands.Run(m.D, bands.Options{Samples: 8, Seed: 1, Workers: 1, Meter: mt,
				Values: func(m *amp.Model, v *amp.Values) error { return Apply(m, v, ff) }})
			if err != nil {
				t.Errorf("%s %s: bands: %v", name, f, err)
				continue
			}
			for i, pd := range set.Points {
				nom := set.Nominal[i]
				hvNet := isDead && pd.Quantity == amp.DCVolts && (htNet(m, pd.Net) || pd.Electrode == "plate" || pd.Electrode == "screen")
				res := mt.RangeFor(pd.Quantity, nom).Res
				b, err := set.Expect(pd.Key(), mt)
				if err != nil {
					t.Errorf("%s %s: %s: %v", name, f, pd.Key(), err)
					continue
				}
				// Every band holds its own prediction: a band whose ends
				// cross, or that leaves out its nominal, says nothing true
				// (a healthy-amp rule such as the cathode's dissipation cap
				// applied to a fault it does not fit).
				if tol := b.Range.Res; b.Low > b.High+tol || b.Nominal < b.Low-tol || b.Nominal > b.High+tol {
					t.Errorf("%s %s: %s predicts %.4g with a band %.4g to %.4g: the band does not hold its own prediction", name, f, pd.Key(), b.Nominal, b.Low, b.High)
				}
				if !hvNet && math.Abs(nom) >= res {
					continue
				}
				if hvNet && (!b.BelowResolution || !b.Contains(0)) {
					t.Errorf("%s %s: dead supply, but %s predicts %.4g V (band %.4g to %.4g V, resolution %g V): want 0 V",
						name, f, pd.Key(), b.Nominal, b.Low, b.High, b.Range.Res)
				}
				if b.BelowResolution {
					near++
					if b.Width() < b.Range.Res*(1-1e-9) {
						t.Errorf("%s %s: %s predicts %.3g (below one count, %g) with a band %.3g to %.3g: narrower than the meter can show",
							name, f, pd.Key(), b.Nominal, b.Range.Res, b.Low, b.High)
					}
				}
			}
		}
	}
	if dead == 0 || near == 0 {
		t.Errorf("%d dead-supply faults and %d near-zero predictions: the checks saw nothing", dead, near)
	}
	t.Logf("%d faults over %d designs; %d leave the supply dead; %d near-zero predictions checked", total, len(names), dead, near)
}

// htNet reports whether a net is one of the HT filter's nets.
func htNet(m *amp.Model, net string) bool {
	if m.HT == nil {
		return false
	}
	for _, n := range m.HT.Nets {
		if n == net {
			return true
		}
	}
	return net == m.HT.RectNet
}

// TestBlownFuseLightsNothing: with the mains fuse gone (an open mains
// fuse, or a fault whose kind declares it a powered short, which blows
// it at switch-on) no winding of the power transformer has volts, so
// every heater, a valve rectifier's filament too, reads 0 V and no
// cathode emits (a transformer passes nothing with its primary open:
// Faraday's law, no primary current, no changing flux). The designs with
// a valve rectifier (demo pp-el34-fixed's 5U4GB, the supply-valve-rect
// template's 5Y3GT) are the ones whose filament a partial fix leaves lit.
func TestBlownFuseLightsNothing(t *testing.T) {
	models := everyDesign(t)
	names := []string{}
	for n := range models {
		names = append(names, n)
	}
	sort.Strings(names)
	seen, rectHeaters := 0, 0
	for _, name := range names {
		m := models[name]
		s := amp.NewSolver(m)
		for _, f := range All(m) {
			p, _ := splitRef(m, f.Ref)
			if !(p.Kind == design.Fuse && f.Mode == Open) && !PoweredShort(m, f) {
				continue
			}
			seen++
			v := m.NominalValues()
			if err := Apply(m, v, f); err != nil {
				t.Fatalf("%s %s: %v", name, f, err)
			}
			var op amp.OP
			if err := s.Solve(amp.Conditions{}, v, false, &op); err != nil {
				t.Errorf("%s %s: %v", name, f, err)
				continue
			}
			for _, h := range op.Heaters {
				if m.D.ByRef[h.Ref].Valve.Type.Kind == valves.Rectifier {
					rectHeaters++
				}
				if math.Abs(h.Volts) > 1e-9 {
					t.Errorf("%s %s: the fuse is gone but %s's heater reads %.3g V", name, f, h.Ref, h.Volts)
				}
			}
			for i, so := range op.Sections {
				if so.HeaterVolts > 1e-9 || so.Ia > 1e-9 {
					t.Errorf("%s %s: the fuse is gone but %s has %.3g V on its heater and passes %.3g A", name, f, m.Sections[i].Name(), so.HeaterVolts, so.Ia)
				}
			}
		}
	}
	if seen == 0 || rectHeaters == 0 {
		t.Errorf("%d fuse-blowing faults, %d valve-rectifier filaments checked: the check saw nothing", seen, rectHeaters)
	}
	t.Logf("%d fuse-blowing faults checked; %d valve-rectifier filaments among their heaters", seen, rectHeaters)
}
