package procedures

import (
	"math"

	"pinwalk/expect/point"
	"pinwalk/procedures/infer"
)

// Observations is the one rule that turns a session's readings into the
// evidence the inference ranks on: cold resistances, and live points read
// at full mains with every valve in its socket. For each point only the
// latest accepted reading counts (a retake or a correction replaces the
// earlier one; both stay in the history); readings marked for a retry,
// not-a-number values and readings taken with valves pulled or at a
// lower variac setting are not what the model ranks on.
func Observations(rs []Reading) []infer.Observation {
	latest := map[point.Key]int{}
	for i, r := range rs {
		if !evidence(r) {
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

func evidence(r Reading) bool {
	if r.Status == Retry || r.Status == Corrected || math.IsNaN(r.Value) || len(r.Pulled) > 0 {
		return false
	}
	switch r.Point.Domain {
	case point.Cold:
		return true
	case point.Live:
		return r.Variac == 0 || r.Variac == 1
	}
	return false
}
