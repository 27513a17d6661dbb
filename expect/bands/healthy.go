package bands

import (
	"fmt"
	"math"
	"math/rand/v2"

	"pinwalk/expect/amp"
	"pinwalk/expect/design"
)

// HealthyReadings draws n healthy amplifiers built to the design from the
// tolerance model (parts, transformer, valve-to-valve spread and the mains
// within tolerance: the distributions of Run, on generator streams seeded
// by seed, which Run never uses with the same seed), solves each in full
// (the supply simulated, no fast path) at the bench conditions cond, and
// returns what meter mt shows at every point of the model: the value,
// plus a model error drawn as a normal at its stated 95 % limit
// (ModelErrorOf), plus the meter's error drawn uniform within its limit
// on the range in use (GUM 4.3.7), rounded to the range's resolution, a
// one-way quantity (a current, an AC reading) shown as 0 below 0. The
// meter's input resistance is not applied: give a meter whose loading is
// negligible, or allow for it.
//
// They are the reference readings of calibration checks: a healthy amp
// should land in each 95 % band about 95 % of the time, and should not
// set off a "does not fit a healthy amplifier" alarm.
func HealthyReadings(d *design.Design, cond amp.Conditions, mt Meter, seed uint64, n int) ([]map[string]float64, error) {
	if mt.isZero() {
		mt = DefaultMeter()
	}
	m, err := amp.Build(d)
	if err != nil {
		return nil, err
	}
	sv := amp.NewSolver(m)
	pl := newPlan(m)
	netElectrode := map[string]string{}
	for _, pd := range m.Points() {
		if pd.Valve != "" && pd.Quantity == amp.DCVolts && pd.Electrode != "" {
			if _, ok := netElectrode[pd.Net]; !ok || pd.Electrode == "cathode" {
				netElectrode[pd.Net] = pd.Electrode
			}
		}
	}
	mains := cond.MainsVolts
	if mains <= 0 {
		mains = d.Mains.Volts
	}
	noise := rand.New(rand.NewPCG(seed, 0xa5a5a5a5))
	var out []map[string]float64
	for k := 0; k < n; k++ {
		v := m.NominalValues()
		r := rand.New(rand.NewPCG(seed^0x9e3779b97f4a7c15, uint64(k)))
		mf := pl.sample(r, m, v, cond.MainsVolts > 0)
		c := cond
		c.MainsVolts = mains * mf
		var op amp.OP
		if err := sv.Solve(c, v, false, &op); err != nil {
			return nil, fmt.Errorf("bands: healthy amp %d: %w", k, err)
		}
		rd := map[string]float64{}
		for _, pd := range m.Points() {
			x := m.Value(&op, pd)
			if math.IsNaN(x) || math.IsInf(x, 0) {
				continue
			}
			me := ModelErrorOf(pd, netElectrode[pd.Net])
			x += me.Limit(x) / 1.96 * noise.NormFloat64()
			lim, rg := mt.ErrorLimit(pd.Quantity, x)
			x += lim * (2*noise.Float64() - 1)
			x = math.Round(x/rg.Res) * rg.Res
			if nonNegative(pd.Quantity) && x < 0 {
				x = 0
			}
			rd[pd.Key()] = x
		}
		out = append(out, rd)
	}
	return out, nil
}
