package bands

import (
	"math"
	"math/rand/v2"

	"pinwalk/expect/amp"
	"pinwalk/expect/design"
	"pinwalk/expect/valves"
)

// Distributions (our choices, stated here once):
//
//   - A part tolerance ({Lo, Hi} on resistors, pots, chokes' DCR, output
//     and heater windings, capacitors, bias and bench supplies) is a
//     guaranteed limit, not a standard deviation. Nothing says how parts
//     spread inside it: tight parts are often sorted out of a wide grade,
//     leaving a flat or even two-humped spread. So each value is drawn
//     uniformly between its limits, the least-informed choice inside known
//     bounds (and a little wider than a normal with σ = tol/2 truncated at
//     the limits, which would claim most parts sit near nominal). It also
//     handles an electrolytic's −20 %/+50 % without a skewed bell.
//   - The power transformer's ratio is drawn uniformly within ±3 %
//     (common practice for small mains transformers), the HT open-circuit
//     volts and the heater winding volts each on their own; the HT source
//     resistance uniformly within the design's winding tolerance.
//   - The mains is not a part: it wanders about its nominal, near it most
//     of the time. It is drawn from a normal with σ = half the tolerance
//     on each side (a split normal for an asymmetric tolerance), truncated
//     at the tolerance limits.
//   - Valves: see SpreadKoren.
//
// Not sampled, because the fast solve holds the supply simulation fixed
// apart from mains, ratio and winding resistance: a valve rectifier's
// perveance and the filter inductances; capacitor leakage (open unless a
// fault says otherwise); the source resistance (dcr) of bias and bench
// supplies.

// TransformerRatioTol is the ratio tolerance of a small mains transformer,
// a fraction (common practice: ±3 %).
const TransformerRatioTol = 0.03

// Valve-to-valve spread of Koren parameters (common practice: new valves of
// one type differ by roughly ±20–30 % in plate current at the same
// electrode voltages, 95 % of them).
const (
	// SigmaKG is the σ of ln(KG1) and, for pentodes, of ln(KG2): plate
	// (and screen) current at fixed voltages scale as 1/KG, so this alone
	// gives about ±23 % (95 %).
	SigmaKG = 0.12
	// SigmaMu is the relative σ of the amplification factor. Current near
	// cutoff is very sensitive to mu (for a 12AX7 at 250 V, −2 V, a 1 %
	// change in mu changes Ia by about 6 %), so mu varies only slightly.
	SigmaMu = 0.01
)

// SpreadKoren returns the Koren parameters of one valve drawn at random
// from the population of new valves of the type whose typical parameters
// are k: KG1 (and KG2 for pentodes) scaled by independent lognormal
// factors with σ = SigmaKG, Mu by a normal factor with σ = SigmaMu, both
// truncated at 3σ. The spread is sized so that plate current at a
// datasheet operating point has a 95 % interval of about ±20–30 % (common
// practice); TestKorenSpread measures it.
func SpreadKoren(r *rand.Rand, k valves.Koren, pentode bool) valves.Koren {
	k.KG1 *= math.Exp(SigmaKG * truncNorm(r, 3))
	if pentode && k.KG2 > 0 {
		k.KG2 *= math.Exp(SigmaKG * truncNorm(r, 3))
	}
	k.Mu *= 1 + SigmaMu*truncNorm(r, 3)
	return k
}

// truncNorm draws a standard normal truncated at ±lim by rejection.
func truncNorm(r *rand.Rand, lim float64) float64 {
	for {
		z := r.NormFloat64()
		if math.Abs(z) <= lim {
			return z
		}
	}
}

// uniformTol draws a factor 1+x with x uniform in [t.Lo, t.Hi].
func uniformTol(r *rand.Rand, t design.Tolerance) float64 {
	if t.Lo == 0 && t.Hi == 0 {
		return 1
	}
	return 1 + t.Lo + (t.Hi-t.Lo)*r.Float64()
}

// splitNormalTol draws a factor 1+x, x from a normal with σ = |Lo|/2
// below zero and Hi/2 above (each side taken with probability in
// proportion to its σ, so the density is continuous at zero), truncated
// at the limits.
func splitNormalTol(r *rand.Rand, t design.Tolerance) float64 {
	lo, hi := -t.Lo, t.Hi
	if lo <= 0 && hi <= 0 {
		return 1
	}
	z := math.Abs(truncNorm(r, 2))
	if r.Float64()*(lo+hi) < lo {
		return 1 - z*lo/2
	}
	return 1 + z*hi/2
}

// plan says how each sample is drawn from the nominal values of a model.
type plan struct {
	slotTol   []design.Tolerance // per slot; zero: not sampled
	potOf     []string           // per slot: pot reference sharing one factor, or ""
	stageCaps [][]capTol         // per HT stage
	winding   design.Tolerance
	mains     design.Tolerance
}

type capTol struct {
	farads float64
	tol    design.Tolerance
}

// GasSpreadFrac is the valve-to-valve spread of a gas regulator's burning
// volts, uniform within ± this share of its maintaining volts (from
// memory: regulator data give the operating voltage of a type as a range
// about ±3 % wide, e.g. roughly 145–160 V for a 150 V type).
const GasSpreadFrac = 0.03

func newPlan(m *amp.Model) *plan {
	d := m.D
	p := &plan{slotTol: make([]design.Tolerance, len(m.Slots)), potOf: make([]string, len(m.Slots)),
		winding: d.Defaults.Winding, mains: d.Mains.Tol}
	for i, sl := range m.Slots {
		part := d.ByRef[sl.Ref]
		if part == nil {
			continue // meter slots
		}
		switch part.Kind {
		case design.Resistor, design.Choke:
			p.slotTol[i] = part.Tol
		case design.Pot:
			p.slotTol[i] = part.Tol
			p.potOf[i] = part.Ref
		case design.BiasSupply, design.DCSupply:
			if sl.Role == "volts" {
				p.slotTol[i] = part.Tol
			}
		case design.OutputTransformer, design.PowerTransformer:
			p.slotTol[i] = d.Defaults.Winding
		}
	}
	if m.HT != nil {
		for _, refs := range m.HT.CapRefs {
			var cs []capTol
			for _, ref := range refs {
				c := d.ByRef[ref]
				cs = append(cs, capTol{farads: c.Value, tol: c.Tol})
			}
			p.stageCaps = append(p.stageCaps, cs)
		}
	}
	return p
}

// sample draws one sample into v, which must hold the model's nominal
// values on entry, and returns the sample's mains factor (1 + deviation;
// 1 when the mains is fixed). Draws happen in a fixed order, so a given
// generator state always gives the same sample.
func (p *plan) sample(r *rand.Rand, m *amp.Model, v *amp.Values, fixedMains bool) float64 {
	potF := map[string]float64{}
	for i, t := range p.slotTol {
		if t.Lo == 0 && t.Hi == 0 {
			continue
		}
		var f float64
		if ref := p.potOf[i]; ref != "" {
			var ok bool
			if f, ok = potF[ref]; !ok {
				f = uniformTol(r, t)
				potF[ref] = f
			}
		} else {
			f = uniformTol(r, t)
		}
		v.Slot[i] *= f
	}
	for s, cs := range p.stageCaps {
		var sum, nom float64
		for _, c := range cs {
			sum += c.farads * uniformTol(r, c.tol)
			nom += c.farads
		}
		if nom > 0 {
			v.StageC[s] *= sum / nom
		}
	}
	ratio := design.Tolerance{Lo: -TransformerRatioTol, Hi: TransformerRatioTol}
	v.HTVolts *= uniformTol(r, ratio)
	v.HeaterVolts *= uniformTol(r, ratio)
	v.HTOhms *= uniformTol(r, p.winding)
	for i, sec := range m.Sections {
		v.Koren[i] = SpreadKoren(r, v.Koren[i], sec.Pentode)
	}
	for i, rg := range m.Regulators {
		v.GasVolts[i] = (2*r.Float64() - 1) * GasSpreadFrac * rg.Type.Gas.MaintainVolts
	}
	if fixedMains {
		return 1
	}
	return splitNormalTol(r, p.mains)
}
