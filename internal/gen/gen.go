// Package gen writes invented multi-channel designs of a chosen size for
// the scaling benchmarks and tests: n single-ended 6V6GT channels, each
// driven by one section of a 12AU7 (one double triode per two channels),
// all fed by one silicon centre-tap supply whose winding, filter and
// heater winding are scaled with the number of channels. Two channels is
// the stereo demo's circuit (testdata/designs/se-6v6-stereo.yaml).
package gen

import (
	"fmt"
	"strings"

	"pinwalk/expect/design"
	"pinwalk/expect/units"
)

// Channels returns the YAML of an n-channel design (n ≥ 1).
func Channels(n int) []byte {
	if n < 1 {
		n = 1
	}
	f := float64(n) / 2 // scale against the two-channel demo
	ohms := func(r float64) string { return units.Format(r, units.Ohms) }
	var b strings.Builder
	fmt.Fprintf(&b, `# Generated design (invented): %d single-ended 6V6GT channels, one
# shared supply scaled to the load. For scaling benchmarks.
pinwalk: 1
title: Generated SE-6V6 x%d (invented)
mains: {volts: 230, hz: 50, tolerance: 6%%}
tolerances: {resistor: 5%%, capacitor: 10%%, electrolytic: -20%%/+50%%, winding: 10%%}
ground: 0V

parts:
  J1: {mains-inlet: iec, live: L, neutral: N, earth: 0V}
  F1: {fuse: %gA, slow: true, between: [L, L1]}
  T1:
    power-transformer:
      primary: {volts: 230, dcr: %s, ends: [L1, N]}
      secondaries:
        HT: {volts: 230-0-230, rated: %gmA, dcr: %s, ends: [HTA, HTB], centre: 0V}
        HEATER: {volts: 6.3, rated: %gA, dcr: 0R05, ends: [H1, H2], centre: 0V}
  D1: {rectifier: silicon, anodes: [HTA, HTB], cathode: B1}
  C1: {capacitor: %guF, volts: 450, kind: electrolytic, between: [B1, 0V]}
  R1: {resistor: 220k, watts: 1, between: [B1, 0V], note: bleeder}
  L1: {choke: 5H, dcr: %s, rated: %gmA, between: [B1, B2]}
  C2: {capacitor: %guF, volts: 450, kind: electrolytic, between: [B2, 0V]}
  R2: {resistor: %s, watts: %g, between: [B2, B3]}
  C3: {capacitor: %guF, volts: 450, kind: electrolytic, between: [B3, 0V]}
  R3: {resistor: %s, watts: %g, between: [B3, B4]}
  C4: {capacitor: %guF, volts: 450, kind: electrolytic, between: [B4, 0V]}
`, n, n, float64(max(1, (n+1)/2)), ohms(11/f), 75*float64(n), ohms(190/f), 0.6*float64(n), 47*f,
		ohms(110/f), 75*float64(n), 100*f, ohms(1000/f), 2*max(1, f/2), 47*f, ohms(10000/f), max(1, 2*f), 22*f)
	for c := 0; c < n; c++ {
		dv := 1 + c/2 // driver valve number
		sec := "A"
		if c%2 == 1 {
			sec = "B"
		}
		pv := 1 + (n+1)/2 + c // output valve number
		r := 100 + 10*c       // reference block of this channel
		if sec == "A" {
			fmt.Fprintf(&b, "  V%d:\n    valve: 12AU7\n    A: {plate: P%d, grid: G%d, cathode: K%d}\n", dv, c, c, c)
			if c+1 < n {
				fmt.Fprintf(&b, "    B: {plate: P%d, grid: G%d, cathode: K%d}\n", c+1, c+1, c+1)
			} else {
				b.WriteString("    B: unused\n")
			}
			b.WriteString("    heater: [H1, H2]\n")
		}
		fmt.Fprintf(&b, `  R%d: {resistor: 1M, between: [G%d, 0V], note: input grid leak}
  R%d: {resistor: 33k, watts: 1, between: [B4, P%d]}
  R%d: {resistor: 1k2, between: [K%d, 0V]}
  C%d: {capacitor: 100u, volts: 25, kind: electrolytic, between: [K%d, 0V]}
  C%d: {capacitor: 100n, volts: 630, kind: film, between: [P%d, OG%d]}
  V%d:
    valve: 6V6GT
    plate: OP%d
    screen: S%d
    grid: OG%d
    cathode: OK%d
    heater: [H1, H2]
  R%d: {resistor: 470k, between: [OG%d, 0V]}
  R%d: {resistor: 470R, watts: 1, between: [B3, S%d], note: screen stopper}
  R%d: {resistor: 330R, watts: 3, between: [OK%d, 0V]}
  C%d: {capacitor: 220u, volts: 63, kind: electrolytic, between: [OK%d, 0V]}
  OT%d:
    output-transformer:
      primary: {ends: [B2, OP%d], dcr: 250R, impedance: 5k}
      secondary: {load: 8R}
`, r, c, r+1, c, r+2, c, r, c, r+1, c, c,
			pv, c, c, c, c,
			r+3, c, r+4, c, r+5, c, r+2, c, c+1, c)
	}
	return []byte(b.String())
}

// Design parses Channels(n); it panics if the generated design does not
// load, which is a bug in this package.
func Design(n int) *design.Design {
	d, probs := design.Parse(fmt.Sprintf("generated-%dch.yaml", n), Channels(n))
	if errs := probs.Errors(); len(errs) > 0 {
		panic(fmt.Sprintf("gen: %d-channel design: %v", n, errs))
	}
	return d
}

// Chain returns the YAML of the two-channel design of Channels(2) with a
// chain of n resistors (1 kΩ each, n ≥ 1) from B1 to chassis added, a
// long bleeder divider: n more parts and n−1 more nets, for measuring how
// the solvers scale with the size of the network.
func Chain(n int) []byte {
	if n < 1 {
		n = 1
	}
	var b strings.Builder
	b.Write(Channels(2))
	prev := "B1"
	for i := 1; i <= n; i++ {
		next := fmt.Sprintf("D%d", i)
		if i == n {
			next = "0V"
		}
		fmt.Fprintf(&b, "  RC%d: {resistor: 1k, watts: 0.5, between: [%s, %s], note: bleeder chain}\n", i, prev, next)
		prev = next
	}
	return []byte(b.String())
}

// ChainDesign parses Chain(n); it panics if the generated design does not
// load, which is a bug in this package.
func ChainDesign(n int) *design.Design {
	d, probs := design.Parse(fmt.Sprintf("generated-chain-%d.yaml", n), Chain(n))
	if errs := probs.Errors(); len(errs) > 0 {
		panic(fmt.Sprintf("gen: %d-resistor chain: %v", n, errs))
	}
	return d
}
