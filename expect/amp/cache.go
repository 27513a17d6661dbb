package amp

// CacheSupplyAt caches the HT supply's Thevenin line from op, a full
// (fast = false) solve at conditions c with values v, for later fast
// solves on this solver. Solve caches the line by itself only at nominal
// conditions; this takes it at any (a variac setting, measured mains), so
// that fast solves linearise around the conditions actually on the bench.
// op may come from another solver of an identical model (the same design
// built twice). It returns ErrNoSupply when op carries no simulated
// supply; a model without an HT supply needs no line and gets nil.
func (s *Solver) CacheSupplyAt(c Conditions, v *Values, op *OP) error {
	s.cacheAux(op)
	if s.m.HT == nil {
		return nil
	}
	if op.Supply != nil && op.Supply.Dead {
		// A dead supply has no line: every solve with these values is
		// dead too and needs none.
		return nil
	}
	if op.Supply == nil || !op.Supply.Simulated {
		return ErrNoSupply
	}
	s.lastVth, s.lastRth = op.Supply.Vth, op.Supply.Rth
	s.nomF = s.mainsFactor(c) * v.HTVolts
	s.lastSec = op.Supply.SecondaryRms
	s.dbl.cached, s.dbl.cachedR = op.Supply.DoublerV, op.Supply.DoublerR
	s.haveTh = true
	return nil
}

// SetWarm sets the node volts (indexed by Model node, as OP.V) that the
// next solve's Newton iteration starts from; nil clears the warm start.
// Fixing the start makes a solve's last bits independent of what the
// solver solved before.
func (s *Solver) SetWarm(v []float64) {
	s.warm = append(s.warm[:0], v...)
}
