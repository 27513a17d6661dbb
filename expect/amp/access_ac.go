package amp

// SectionEmissionLimit returns the emission limit (amps of cathode
// current, 0 = none) that the solve behind op applied to section i, from
// the emission fraction recorded in op: the same rule Solve uses, so a
// small-signal linearisation sees the device the DC solve saw.
func (m *Model) SectionEmissionLimit(op *OP, i int) float64 {
	ef := op.Sections[i].EmissionFraction
	if ef < 0.999 {
		return max(saturationAmps(m.Sections[i].Type)*ef, 1e-9)
	}
	return 0
}
