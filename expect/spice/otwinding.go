package spice

import (
	"strings"

	"pinwalk/expect/design"
)

// outputTransformer writes an output transformer's windings as the DC
// resistances pinwalk's network has (design.OutputTransformerPart.Segments):
// the primary, each push-pull half split at its screen tap, and the
// secondary when its speaker nets are wired.
func (n *Netlist) outputTransformer(p *design.Part, slot func(ref, role string) (float64, bool)) {
	for _, sg := range p.OT.Segments() {
		r, _ := slot(p.Ref, sg.Role)
		name := p.Ref + "_" + strings.NewReplacer("half-", "", ".", "_").Replace(sg.Role)
		n.resistor(name, n.node(sg.A), n.node(sg.B), r, p.Ref+" output transformer "+sg.Role+" "+sg.A+" to "+sg.B+", its DCR (DC model)")
	}
}
