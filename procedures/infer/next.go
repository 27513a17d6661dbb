package infer

import "math"

// NextAmong picks the best next measurement among the points allowed,
// given the readings so far, without building a ranking (no suspects,
// reasons or pairs): what a caller needs to compare the best measurement
// of one kind with another's.
func (e *Engine) NextAmong(obs []Observation, allowed func(key string) bool) *Probe {
	e.mu.Lock()
	defer e.mu.Unlock()
	var use []Observation
	obs, looks := e.splitLooks(obs)
	for _, o := range obs {
		if _, ok := e.index[o.Key]; ok && !math.IsNaN(o.Value) {
			use = append(use, o)
		}
	}
	c := e.likelihoods(use)
	logp := e.logPosterior(c)
	e.addLooks(logp, looks)
	return e.nextProbe(c, normalise(logp), use, looks, allowed)
}
