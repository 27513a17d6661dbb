package jobsheet

import (
	"fmt"
	"math"
	"strings"

	"pinwalk/expect/amp"
	"pinwalk/expect/design"
	"pinwalk/procedures"
	"pinwalk/procedures/infer"
)

// InferSuspects returns an Options.Suspects function that ranks the fault
// hypotheses of a design against a session's readings with the inference
// engine (procedures/infer): the last accepted reading of every point at
// full mains, and every cold reading, with the session's mains taken as
// measured and its symptoms shifting the priors (symptoms the engine does
// not know are left out). samples and seed set the engine's tolerance
// clouds (0 samples: the engine's default). The suspects come most
// probable first, each with its probability and the readings behind it.
func InferSuspects(samples int, seed uint64) func(*procedures.Session, *design.Design) ([]Suspect, error) {
	return func(s *procedures.Session, d *design.Design) ([]Suspect, error) {
		var symptoms []string
		for _, x := range s.Symptoms {
			for _, k := range infer.Symptoms {
				if x == k {
					symptoms = append(symptoms, x)
				}
			}
		}
		e, err := infer.New(d, infer.Options{Samples: samples, Seed: seed, Symptoms: symptoms,
			Cond: amp.Conditions{MainsVolts: s.Bench.Mains}})
		if err != nil {
			return nil, err
		}
		rk := e.Rank(procedures.Observations(s.Readings, d), nil)
		var out []Suspect
		for _, x := range rk.Suspects {
			why := x.Label
			if len(x.Why) > 0 {
				why += ": " + strings.Join(x.Why, "; ")
			}
			out = append(out, Suspect{Name: x.Fault, Why: fmt.Sprintf("%.0f %% — %s", 100*x.Probability, why), Score: x.Probability})
		}
		if !rk.Fits && rk.FitNote != "" {
			out = append(out, Suspect{Name: "(no single fault fits)", Why: rk.FitNote, Score: math.NaN()})
		}
		return out, nil
	}
}
