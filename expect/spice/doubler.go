package spice

import (
	"pinwalk/expect/amp"
	"pinwalk/expect/supply"
)

// doublerWinding writes a voltage doubler's HT winding: one source from
// the capacitors' junction (full-wave) or chassis (half-wave) to the end
// the diodes take, as pinwalk's supply model has it.
func (n *Netlist) doublerWinding(ht *amp.HTSupply, p supply.Params, src func(ref, from, to string, phase float64, what string)) {
	db := ht.Doubler
	from := "0"
	if db.Full {
		from = n.node(db.Mid)
	}
	src(ht.Transformer.Ref+"_"+ht.Winding.Name, from, n.node(db.Live), 0, "whole winding, to the diodes' end")
}

// doublerDiodes writes a voltage doubler's two diodes (its capacitors and
// bleeders are parts like any other), each the library's diode law.
func (n *Netlist) doublerDiodes(ht *amp.HTSupply) {
	db := ht.Doubler
	n.comment("voltage doubler (%s): %s and %s, each capacitor charged by its own diode", ht.Topology, db.Diodes[0].Ref, db.Diodes[1].Ref)
	for _, rp := range db.Diodes {
		dd := rp.Rect.Diode
		model := n.elem("DM", rp.Ref)
		n.comment("%s: silicon diode %q, Shockley's law with series resistance (the library's diode); CJO %s as the HT rectifier's", rp.Ref, dd.Name, num(diodeCJO))
		n.line(".model %s D(IS=%s N=%s RS=%s CJO=%s)", model, num(dd.Is), num(dd.N), num(dd.Rs), num(diodeCJO))
		n.line("%s %s %s %s", n.elem("D", rp.Ref), n.node(rp.Rect.Anodes[0]), n.node(rp.Rect.Plus), model)
	}
}
