package procedures

import (
	"fmt"

	"pinwalk/expect/amp"
)

// doublerHeatersFirst says how to keep the HT of a voltage doubler off
// for the heaters-first step, and how to restore it: the winding's lead to
// the diodes lifted (no centre tap to lift), which leaves both capacitors
// uncharged.
func doublerHeatersFirst(ht *amp.HTSupply, db *amp.Doubler) (how, back string) {
	if lf := ht.Line; lf != nil && len(lf.Series) > 0 {
		// Off the mains: the lead from the last series resistor to the
		// pump capacitor.
		r := lf.Series[len(lf.Series)-1]
		how = fmt.Sprintf("Unplugged and discharged: unsolder %s's lead to the doubler's pump capacitor (net %s) and insulate its end, so that neither doubler capacitor can charge; fit every valve. If you cannot lift it, skip this step with that reason: the heaters are then read at every variac step instead.", r, db.Live)
		return how, fmt.Sprintf("resolder %s's lead to the pump capacitor (net %s)", r, db.Live)
	}
	how = fmt.Sprintf("Unplugged and discharged: lift the HT winding's lead to the doubler's diodes (net %s, at %s and %s) and insulate its end, so that neither doubler capacitor can charge; fit every valve. If you cannot lift it, skip this step with that reason: the heaters are then read at every variac step instead.",
		db.Live, db.Diodes[0].Ref, db.Diodes[1].Ref)
	back = fmt.Sprintf("reconnect the HT winding's lead to the doubler's diodes (net %s)", db.Live)
	return how, back
}

// doublerMeasures is a voltage doubler's middle net at a variac step,
// beside the first B+ net: each of its capacitors comes up with its own
// half, and one diode open shows there first (its capacitor stays at 0 V,
// or the middle goes negative).
func doublerMeasures(b *BenchModel, has func(string) (float64, bool), byKey map[string]amp.PointDef) []Measure {
	if b.M.HT == nil || b.M.HT.Doubler == nil {
		return nil
	}
	key := b.M.HT.Doubler.Mid + " " + amp.DCVolts
	pd, ok := byKey[key]
	if !ok {
		return nil
	}
	hi, ok := has(key)
	if !ok {
		return nil
	}
	return []Measure{pointMeasure(pd, hi)}
}
