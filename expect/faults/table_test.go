package faults

import (
	"fmt"
	"testing"
)

// TestEveryFaultSolves applies every single fault of every demo design and
// solves the whole amplifier (full supply simulation): each must give a
// finite operating point or a clear error, never a panic or NaN. The table
// of fault → first filter net volts and first plate volts is logged for a
// sanity read.
func TestEveryFaultSolves(t *testing.T) {
	for _, name := range demos {
		t.Run(name, func(t *testing.T) {
			m := load(t, name)
			nom, res := solveAll(t, m)
			first := ""
			if m.HT != nil {
				first = m.HT.Nets[0]
			}
			line := func(label string, r *solved) string {
				if r.err != nil {
					return fmt.Sprintf("%-14s ERROR %v", label, r.err)
				}
				b := 0.0
				if first != "" {
					b, _ = m.NetVolts(&r.op, first)
				}
				return fmt.Sprintf("%-14s %s %7.1f V  %s plate %7.1f V  Ia %6.2f mA", label, first, b,
					m.Sections[0].Name(), r.op.Sections[0].Va, 1e3*r.op.Sections[0].Ia)
			}
			t.Log(line("nominal", &solved{op: nom}))
			failed := 0
			for _, f := range All(m) {
				r := res[f]
				if r.err != nil {
					failed++
				}
				t.Log(line(f.String(), r))
			}
			t.Logf("%s: %d faults, %d did not solve", name, len(res), failed)
		})
	}
}
