package procedures

import (
	"math"
	"sync"

	"pinwalk/expect/ac"
	"pinwalk/expect/amp"
	"pinwalk/expect/faults"
	"pinwalk/expect/valves"
)

// What an owner notices (common practice, for practice faults): an amp is
// brought in when its gain or its maximum output has changed by 3 dB or
// more (about the smallest change of level a listener notices between
// one day and another without a reference), or when it is dead, blows its
// fuse, hums, or overheats something. The levels come from the
// small-signal analysis (expect/ac) at the operating point solved with
// the fault in place.
const (
	// NoticeDB: a change of gain, or a fall of maximum output, at least
	// this large is noticed.
	NoticeDB = 3.0
	// SilentDB: an output this far below healthy is silent to the owner
	// (a faint whisper at full volume).
	SilentDB = 20.0
	// VeryQuietDB: this far down is "very quiet".
	VeryQuietDB = 10.0
	// HumAudibleVolts: hum at the speaker above this (rms) is heard in a
	// quiet room with the volume down, close to the speaker, and
	// HumLoudVolts across the room (common practice: a healthy valve amp
	// leaves well under a millivolt of hum at its speaker; a few mV is
	// heard close to the cone, tens of mV everywhere). Either counts only
	// if it is also twice the healthy amp's.
	HumAudibleVolts = 2e-3
	HumLoudVolts    = 20e-3
	// RedPlateShare: a power valve's plate (or screen) over its rated
	// dissipation by this share glows red within minutes.
	RedPlateShare = 0.2
	// PowerValveWatts: sections rated for at least this plate dissipation
	// are the big valves an owner sees.
	PowerValveWatts = 5.0
	// BurnShare: a resistor at this many times its rated watts scorches
	// and smells within minutes.
	BurnShare = 2.0
	// driveVolts is the input tone that drives a healthy amp far into
	// clipping, so that the clipped output is its maximum output; the
	// linear gain is taken at ac.DefaultVolts with the limits off.
	driveVolts = 30.0
)

// effect is what a fault does that an owner could notice.
type effect struct {
	solved bool
	// Per output (each speaker; with none, the last stage's plate): the
	// change of small-signal gain and of maximum output from healthy, dB
	// (−Inf for no output at all).
	gainDB, maxDB  []float64
	humUp, humLoud bool      // hum heard at an output (close to it; across the room)
	hum            []float64 // hum at each output, volts rms
	dark           []string  // valves whose heater no longer glows
	allDark        bool
	red            []string // power valves over their dissipation
	burnt          []string // resistors at BurnShare of their rating
}

// levels is one solve's outputs: linear gain, maximum output and hum at
// each output, and the operating point.
type levels struct {
	lin, max, hum []float64
	op            amp.OP
}

// outputs picks the output points from a tone result: every speaker, or
// with none (a bench stage) the plate tone point with the highest level.
func outputs(m *amp.Model, pts []ac.Point) []int {
	var spk []int
	for i, p := range pts {
		if p.Net == "" {
			spk = append(spk, i)
		}
	}
	if len(spk) > 0 {
		return spk
	}
	plate := map[string]bool{}
	for _, pd := range m.Points() {
		if pd.Electrode == valves.Plate && pd.Section >= 0 {
			plate[pd.ID] = true
		}
	}
	best := -1
	for i, p := range pts {
		if plate[p.ID] && (best < 0 || p.Volts > pts[best].Volts) {
			best = i
		}
	}
	if best < 0 {
		return nil
	}
	return []int{best}
}

func solveLevels(m *amp.Model, v *amp.Values, outs []int) (*levels, []int, error) {
	l := &levels{}
	if err := amp.NewSolver(m).Solve(amp.Conditions{}, v, false, &l.op); err != nil {
		return nil, nil, err
	}
	an, err := ac.New(m)
	if err != nil {
		return nil, nil, err
	}
	opt := ac.Options{AllInputs: true, Linear: true}
	lin, err := an.Tone(&l.op, v, opt, nil)
	if err != nil {
		return nil, nil, err
	}
	if outs == nil {
		outs = outputs(m, lin)
	}
	opt.Linear, opt.Volts = false, driveVolts
	big, err := an.Tone(&l.op, v, opt, nil)
	if err != nil {
		return nil, nil, err
	}
	hum, _ := an.Hum(&l.op, v, ac.Options{}, nil)
	humAt := map[string]float64{}
	for _, h := range hum {
		humAt[h.ID] = h.Volts
	}
	for _, i := range outs {
		if i >= len(lin) || i >= len(big) {
			l.lin, l.max, l.hum = append(l.lin, 0), append(l.max, 0), append(l.hum, 0)
			continue
		}
		l.lin = append(l.lin, lin[i].Volts)
		l.max = append(l.max, big[i].Volts)
		l.hum = append(l.hum, humAt[lin[i].ID])
	}
	return l, outs, nil
}

type healthyLevels struct {
	l    *levels
	outs []int
	err  error
}

// healthyCache holds the healthy amp's levels per model.
var healthyCache sync.Map // *amp.Model → *healthyLevels

func healthyOf(m *amp.Model) *healthyLevels {
	if h, ok := healthyCache.Load(m); ok {
		return h.(*healthyLevels)
	}
	h := &healthyLevels{}
	h.l, h.outs, h.err = solveLevels(m, m.NominalValues(), nil)
	healthyCache.Store(m, h)
	return h
}

func dB(x, ref float64) float64 {
	if !(ref > 0) {
		return 0
	}
	if !(x > 0) {
		return math.Inf(-1)
	}
	return 20 * math.Log10(x/ref)
}

// effectOf solves the amp with the fault in place and compares it with
// the healthy amp.
func effectOf(m *amp.Model, fault string) effect {
	var e effect
	h := healthyOf(m)
	f, err := faults.Parse(fault)
	if err != nil || h.err != nil {
		return e
	}
	v := m.NominalValues()
	if faults.Apply(m, v, f) != nil {
		return e
	}
	l, _, err := solveLevels(m, v, h.outs)
	if err != nil {
		return e
	}
	e.solved = true
	for i := range h.l.lin {
		e.gainDB = append(e.gainDB, dB(l.lin[i], h.l.lin[i]))
		e.maxDB = append(e.maxDB, dB(l.max[i], h.l.max[i]))
		e.hum = append(e.hum, l.hum[i])
		if l.hum[i] > HumAudibleVolts && l.hum[i] > 2*h.l.hum[i] {
			e.humUp = true
			e.humLoud = e.humLoud || l.hum[i] > HumLoudVolts
		}
	}
	healthyHeater := map[string]float64{}
	for _, ho := range h.l.op.Heaters {
		healthyHeater[ho.Ref] = ho.Volts
	}
	// The owner sees the amplifying valves: every one of them dark is
	// "nothing lights up" (a valve rectifier dark on its own is a dark
	// valve among lit ones).
	amplifying := map[string]bool{}
	for _, sec := range m.Sections {
		amplifying[sec.Ref] = true
	}
	lit := 0
	for _, ho := range l.op.Heaters {
		switch hv := healthyHeater[ho.Ref]; {
		case !(hv > 0):
			// A heater the model does not light (a directly heated
			// rectifier's filament is judged by the HT it gives).
		case ho.Volts < darkShare*hv:
			e.dark = append(e.dark, ho.Ref)
		case amplifying[ho.Ref]:
			lit++
		}
	}
	e.allDark = len(e.dark) > 0 && lit == 0
	for i, sec := range m.Sections {
		if i >= len(l.op.Sections) || sec.Type.Limits.PlateWatts < PowerValveWatts {
			continue
		}
		so, lim := l.op.Sections[i], sec.Type.Limits
		if so.Pa > (1+RedPlateShare)*lim.PlateWatts || (lim.ScreenWatts > 0 && so.Pg2 > (1+RedPlateShare)*lim.ScreenWatts) {
			e.red = append(e.red, sec.Ref)
		}
	}
	for _, r := range m.Resistors(&l.op) {
		if r.RatedWatts > 0 && r.Watts > BurnShare*r.RatedWatts {
			e.burnt = append(e.burnt, r.Ref)
		}
	}
	return e
}

// noticed reports whether an owner would notice the effect (the floor
// of practice faults).
func (e effect) noticed() bool {
	if !e.solved {
		return false
	}
	if e.allDark || len(e.dark) > 0 || e.humUp || len(e.red) > 0 || len(e.burnt) > 0 {
		return true
	}
	for i := range e.gainDB {
		if math.Abs(e.gainDB[i]) >= NoticeDB || e.maxDB[i] <= -NoticeDB {
			return true
		}
	}
	return false
}

// worstMax is the largest fall of maximum output over the outputs, dB.
func worstMax(e effect) float64 {
	w := 0.0
	for _, x := range e.maxDB {
		w = math.Min(w, x)
	}
	return w
}
