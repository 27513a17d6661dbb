package procedures

import (
	"math"
	"slices"

	"pinwalk/expect/design"
	"pinwalk/expect/point"
	"pinwalk/expect/valves"
	"pinwalk/procedures/infer"
)

// Observations is the one rule that turns a session's readings into the
// evidence the inference ranks on: cold resistances, looks with the
// power off (a sign seen or not), and live points read
// at full mains with every valve in its socket. For each point only the
// latest accepted reading counts (a retake or a correction replaces the
// earlier one; both stay in the history); readings marked for a retry,
// not-a-number values and readings taken at a lower variac setting are
// not what the model ranks on.
//
// A reading taken with valves pulled counts only at the control grid of
// a pulled valve (d names the pins): a grid at its negative bias draws
// no grid current, so with the valve out it reads what it reads with the
// valve in (common practice; the bench model gives both the same band).
// That is the reading of a power-up with the output valves out, and the
// one that stops it when no bias arrives: the stop is evidence. Any
// other pin of a pulled valve, and every other point with valves out,
// reads a different circuit.
func Observations(rs []Reading, d *design.Design) []infer.Observation {
	latest := map[point.Key]int{}
	for i, r := range rs {
		if !evidence(r, d) {
			continue
		}
		latest[r.Point] = i
	}
	var out []infer.Observation
	for i, r := range rs {
		if j, ok := latest[r.Point]; ok && j == i {
			out = append(out, infer.Observation{Key: r.Point.String(), Value: r.Value})
		}
	}
	return out
}

func evidence(r Reading, d *design.Design) bool {
	if r.Status == Retry || r.Status == Corrected || math.IsNaN(r.Value) {
		return false
	}
	if len(r.Pulled) > 0 && !pulledGrid(r, d) {
		return false
	}
	switch r.Point.Domain {
	case point.Cold, point.Look:
		return true
	case point.Live:
		return r.Variac == 0 || r.Variac == 1
	}
	return false
}

// pulledGrid: a DC-volts reading at the control grid pin of a valve that
// was out of its socket when it was taken.
func pulledGrid(r Reading, d *design.Design) bool {
	ref, pin, ok := r.Point.Valve()
	if !ok || d == nil || r.Point.Quantity != point.DCVolts || !slices.Contains(r.Pulled, ref) {
		return false
	}
	p := d.ByRef[ref]
	if p == nil || p.Valve == nil {
		return false
	}
	for _, vp := range p.Valve.Type.Pins {
		if vp.Number == pin {
			return vp.Electrode == valves.Grid
		}
	}
	return false
}
