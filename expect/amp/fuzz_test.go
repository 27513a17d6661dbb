package amp

import (
	"fmt"
	"math"
	"testing"

	"pinwalk/expect/design"
)

// FuzzSolveStage builds small valid amplifiers from fuzzed values — a
// supply (bench supply or silicon CLC), one triode or pentode stage with
// random loads, cathode resistors, grid leaks, bias — and solves them.
// The solve must converge or fail with an error naming nets; it must never
// panic or return NaN, and the result must satisfy KCL at the cathode.
func FuzzSolveStage(f *testing.F) {
	f.Add(uint8(0), 250.0, 100e3, 1500.0, 1e6, 0.0) // 12AX7 stage on a bench supply
	f.Add(uint8(1), 300.0, 5e3, 330.0, 470e3, 0.0)  // 6V6GT with an OT-like load
	f.Add(uint8(2), 450.0, 3e3, 1.0, 220e3, -45.0)  // EL34, fixed bias
	f.Add(uint8(3), 20.0, 1e9, 1e-3, 10.0, 0.0)     // extremes
	f.Add(uint8(4), 800.0, 1.0, 1e7, 1e10, -300.0)  // extremes the other way
	f.Fuzz(func(t *testing.T, kind uint8, volts, load, rk, rg, bias float64) {
		clampPos := func(x, lo, hi float64) float64 {
			if math.IsNaN(x) || math.IsInf(x, 0) {
				return lo
			}
			return math.Min(hi, math.Max(lo, math.Abs(x)))
		}
		volts = clampPos(volts, 10, 900)
		load = clampPos(load, 1, 1e8)
		rk = clampPos(rk, 0.01, 1e7)
		rg = clampPos(rg, 1e3, 1e9)
		if math.IsNaN(bias) || math.IsInf(bias, 0) {
			bias = 0
		}
		bias = -clampPos(bias, 0, 400)
		valve := []string{"12AX7", "12AU7", "6V6GT", "EL34", "6L6GC"}[int(kind)%5]
		pent := valve == "6V6GT" || valve == "EL34" || valve == "6L6GC"
		elec := "    A: {plate: P, grid: G, cathode: K}\n    B: unused\n"
		screen := ""
		if pent {
			elec = "    plate: P\n    screen: S\n    grid: G\n    cathode: K\n"
			screen = "  R5: {resistor: 1k, between: [HT, S]}\n"
		}
		biasPart := ""
		gridRef := "0V"
		if bias < -0.5 {
			biasPart = fmt.Sprintf("  U2: {bias-supply: %gV, dcr: 1k, between: [NB, 0V]}\n", bias)
			gridRef = "NB"
		}
		src := fmt.Sprintf(`pinwalk: 1
title: fuzzed stage
mains: {volts: 230, hz: 50}
parts:
  T1:
    power-transformer:
      primary: {volts: 230, dcr: 10R}
      secondaries:
        H: {volts: 6.3, rated: 5A, dcr: 0R1, ends: [H1, H2], centre: 0V}
  U1: {dc-supply: %gV, dcr: 50R, between: [HT, 0V]}
%s%s  R1: {resistor: %g, between: [HT, P]}
  R2: {resistor: %g, between: [K, 0V]}
  R3: {resistor: %g, between: [G, %s]}
  V1:
    valve: %s
%s    heater: [H1, H2]
`, volts, biasPart, screen, load, rk, rg, gridRef, valve, elec)
		d, probs := design.Parse("fuzz.yaml", []byte(src))
		if len(probs.Errors()) > 0 {
			t.Skip() // a value the loader refuses is not the solver's concern
		}
		m, err := Build(d)
		if err != nil {
			t.Fatalf("build: %v", err)
		}
		var op OP
		err = NewSolver(m).Solve(Conditions{}, m.NominalValues(), false, &op)
		if err != nil {
			if err.Error() == "" {
				t.Fatal("empty error")
			}
			return
		}
		for i, v := range op.V {
			if math.IsNaN(v) || math.IsInf(v, 0) {
				t.Fatalf("node %d is %v", i, v)
			}
		}
		so := op.Sections[0]
		vk, _ := m.NetVolts(&op, "K")
		if ir := vk / rk; math.Abs(ir-so.Ik) > 1e-6*math.Max(1e-3, math.Abs(so.Ik))+1e-9 {
			t.Fatalf("KCL at the cathode: %g A in %g Ω, valve gives %g A", ir, rk, so.Ik)
		}
	})
}
