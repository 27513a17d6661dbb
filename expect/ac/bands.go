package ac

import (
	"pinwalk/expect/amp"
	"pinwalk/expect/bands"
)

// ToneExtra returns the tone points of a model as extra points for a
// Monte Carlo run, so their bands come from the same tolerance samples as
// the DC points. The point list is taken from the nominal model; every
// worker's model gets its own Analyzer.
func ToneExtra(m *amp.Model, op *amp.OP, v *amp.Values, opt Options) (*bands.Extra, error) {
	an, err := New(m)
	if err != nil {
		return nil, err
	}
	pts, err := an.Tone(op, v, opt, nil)
	if err != nil {
		return nil, err
	}
	defs := make([]amp.PointDef, len(pts))
	for i, p := range pts {
		defs[i] = amp.PointDef{ID: p.ID, Quantity: p.Quantity, Label: p.Label, Net: p.Net, Section: -1}
	}
	return &bands.Extra{
		Points: defs,
		New: func(m *amp.Model) (func(op *amp.OP, v *amp.Values, dst []float64) error, error) {
			an, err := New(m)
			if err != nil {
				return nil, err
			}
			var buf []Point
			return func(op *amp.OP, v *amp.Values, dst []float64) error {
				var err error
				buf, err = an.Tone(op, v, opt, buf)
				if err != nil {
					return err
				}
				for i := range dst {
					if i < len(buf) {
						dst[i] = buf[i].Volts
					}
				}
				return nil
			}, nil
		},
	}, nil
}
