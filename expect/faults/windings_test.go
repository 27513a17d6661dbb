package faults

import (
	"math"
	"slices"
	"testing"

	"pinwalk/expect/amp"
	"pinwalk/expect/design"
)

// TestOutputTransformerWindingFaults on the pp-ultralinear template: every
// fault solves; the wired secondary is a fault reference of its own; with
// it open the feedback resistor no longer shunts R13 at DC, so K1's
// current flows in R13 alone (Ohm's law: KF = Ik·100 Ω); with half a
// open (both its segments, centre to screen tap and tap to plate) the
// valve on that half has neither plate nor screen supply and stops
// conducting, while the other keeps its current.
func TestOutputTransformerWindingFaults(t *testing.T) {
	tp, err := design.TemplateByName("pp-ultralinear")
	if err != nil {
		t.Fatal(err)
	}
	d, probs := design.Parse(tp.Name, tp.Text)
	if len(probs.Errors()) > 0 {
		t.Fatal(probs.Errors())
	}
	m, err := amp.Build(d)
	if err != nil {
		t.Fatal(err)
	}
	if r := refs(m); !slices.Contains(r, "OT1.sec") || !slices.Contains(r, "OT1.a") {
		t.Fatalf("fault references %v: want OT1.a and OT1.sec", r)
	}
	_, res := solveAll(t, m)
	sec := func(op *amp.OP, ref string) amp.SectionOP {
		for i, s := range m.Sections {
			if s.Ref == ref {
				return op.Sections[i]
			}
		}
		t.Fatalf("no section %s", ref)
		return amp.SectionOP{}
	}
	r := res[Fault{"OT1.sec", Open}]
	if r == nil || r.err != nil {
		t.Fatalf("OT1.sec:open: %v", r)
	}
	kf, _ := m.NetVolts(&r.op, "KF")
	if want := sec(&r.op, "V1").Ik * 100; math.Abs(kf-want) > 1e-9 {
		t.Errorf("OT1.sec:open: KF %.6g V, Ik·R13 %.6g V", kf, want)
	}
	r = res[Fault{"OT1.a", Open}]
	if r == nil || r.err != nil {
		t.Fatalf("OT1.a:open: %v", r)
	}
	// Half a runs from the centre to PB, V4's plate, through tap UB.
	if v4, v3 := sec(&r.op, "V4"), sec(&r.op, "V3"); v4.Ia > 1e-4 || v4.Ig2 > 1e-4 || v3.Ia < 20e-3 {
		t.Errorf("OT1.a:open: V4 Ia %.3g A, Ig2 %.3g A (want about 0), V3 Ia %.3g A", v4.Ia, v4.Ig2, v3.Ia)
	}
	if got := Describe(Fault{"OT1.sec", Open}, m); got != "OT1 secondary SPK–0V open (no sound; feedback taken from the speaker is lost)" {
		t.Errorf("description %q", got)
	}
}
