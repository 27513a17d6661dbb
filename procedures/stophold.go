package procedures

import (
	"fmt"

	"pinwalk/expect/point"
	"pinwalk/procedures/infer"
)

// A stop forbids powering, not measuring. In fault-finding and practice
// a stop read on a live step (no bias at an output grid with the output
// valves out) ends the power cycle: the amp is switched off and
// discharged, the reading that stopped counts as evidence
// (Observations), and the measuring goes on with the amp unpowered, one
// cold reading at a time while one still tells the suspects apart
// (MinColdGainBits), until a suspect is clear or none is left. Nothing
// live is proposed while the stop holds (Runner.Blockers refuses it
// anyway).

// underStop reports whether a stop is in force or a switch-off has
// happened in this session: the loop proposes no live step by itself.
func (l *faultLoop) underStop() bool {
	return len(l.w.R.Stops()) > 0 || len(l.w.R.Sess.Halts) > 0
}

// liveThisCycle reports whether the amp has been powered in the current
// power cycle: a live or bias reading taken since the last switch-off.
func (l *faultLoop) liveThisCycle() bool {
	r := l.w.R
	for _, rd := range r.Sess.Readings {
		if rd.Cycle == r.Sess.Cycle && (rd.Point.Domain == point.Live || rd.Point.Domain == point.Bias) {
			return true
		}
	}
	return false
}

// offForStop: a stop in force while the amp is powered asks for it to be
// switched off before anything else (the controller shows the step and
// confirming it ends the power cycle). It reports whether it did.
func (l *faultLoop) offForStop() bool {
	r := l.w.R
	stops := r.Stops()
	if len(stops) == 0 || r.PendingHalt() != nil || !l.liveThisCycle() {
		return false
	}
	rd := stops[len(stops)-1]
	r.Sess.Halts = append(r.Sess.Halts, Halt{Step: rd.Step, Point: rd.Point, Value: rd.Value, At: r.Now(), Stop: true,
		Why: fmt.Sprintf("The stop on %s (%s) holds: no live step can go on. Variac to zero, switch off and unplug. "+
			"The measuring goes on with the amp unpowered: the reading that stopped is evidence, and the next readings are cold ones.",
			r.labelOf(rd.Step, rd.Point), FormatValue(rd.Value, rd.Unit))})
	return true
}

// coldNow reports whether the powered amp should be switched off for cold
// readings: the best cold reading (or look) left tells at least
// MinColdGainBits, and the best live one less than that or less than
// LiveGainShare of it (the mirror of powerNow: a filament open inside a
// valve, a winding open, show only on the ohmmeter once the amp is dead).
func coldNow(live, cold *infer.Probe) bool {
	if cold == nil || cold.GainBits < MinColdGainBits {
		return false
	}
	return live == nil || live.GainBits < MinColdGainBits || live.GainBits < LiveGainShare*cold.GainBits
}

// offForCold asks for the amp to be switched off so that the measuring
// goes on cold (the controller shows the step; confirming it ends the
// power cycle, and the loop does not power up again by itself).
func (l *faultLoop) offForCold(cold *infer.Probe) {
	r := l.w.R
	r.Sess.Halts = append(r.Sess.Halts, Halt{Step: StepPowerUp, At: r.Now(), Cold: true,
		Why: fmt.Sprintf("The live readings no longer tell the suspects apart; a cold one does (%s: %s). Variac to zero, switch off and unplug: the measuring goes on with the amp unpowered.",
			cold.Label, cold.Reason)})
}
