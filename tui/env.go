package tui

import (
	"slices"

	tea "github.com/charmbracelet/bubbletea"

	"pinwalk/expect/point"
	"pinwalk/procedures"
	"pinwalk/procedures/jobsheet"
)

// env is what every view reads: the runner (the engine), styles, glyphs,
// keys, and the expected bands fetched so far. The root model owns it;
// views hold a pointer and never write to the runner themselves except
// through the actions the root gives them.
type env struct {
	run    *procedures.Runner
	st     *Styles
	g      Glyphs
	keys   KeyMap
	labels map[point.Key]string // point → label, from the procedure's measures
	lab    *jobsheet.Labeller   // every other point's label
	bands  map[bandKey]bandEntry
	cfg    *Config
}

// bandKey names a band: a point at a variac setting, conditioned on the
// first n readings of the session.
type bandKey struct {
	Point  point.Key
	Variac float64
	N      int
}

type bandEntry struct {
	Band    procedures.Band
	Has     bool
	Pending bool
}

// bandMsg carries a band computed in a command.
type bandMsg struct {
	Key   bandKey
	Band  procedures.Band
	Has   bool
	Error string
}

// band returns the cached band of a point, and a command that computes it
// when it is not cached yet (nil otherwise).
func (e *env) band(pk point.Key, variac float64) (bandEntry, tea.Cmd) {
	k := bandKey{pk, variac, len(e.run.Sess.Readings)}
	if b, ok := e.bands[k]; ok {
		return b, nil
	}
	if e.run.Expect == nil {
		e.bands[k] = bandEntry{}
		return bandEntry{}, nil
	}
	e.bands[k] = bandEntry{Pending: true}
	ex := e.run.Expect
	readings := slices.Clone(e.run.Sess.Readings)
	return bandEntry{Pending: true}, func() tea.Msg {
		b, ok := ex.Expect(pk, variac, readings)
		return bandMsg{Key: k, Band: b, Has: ok}
	}
}

// cachedBand returns a band only if it is already known (no command).
func (e *env) cachedBand(pk point.Key, variac float64) bandEntry {
	return e.bands[bandKey{pk, variac, len(e.run.Sess.Readings)}]
}

// label returns a point's label: the procedure's own for its measures,
// else the job sheet's labeller's words (never the key).
func (e *env) label(pk point.Key) string {
	if l, ok := e.labels[pk]; ok && l != "" {
		return l
	}
	return e.lab.Label(pk)
}

// lastReading returns the latest accepted reading of a point in any step.
func (e *env) lastReading(pk point.Key) *procedures.Reading {
	rs := e.run.Sess.Readings
	for i := len(rs) - 1; i >= 0; i-- {
		if rs[i].Point == pk && rs[i].Status != procedures.Retry {
			return &rs[i]
		}
	}
	return nil
}

// guessFor returns the trainee's prediction for a point in a step, if
// any. Predictions carry no step, so they are matched by time: the one
// made after the point's previous reading and before this step's reading
// of it (or, when the step has no reading yet, after the point's latest
// reading anywhere).
func (e *env) guessFor(step string, pk point.Key) *procedures.Guess {
	rs := e.run.Sess.Readings
	var until, after *procedures.Reading
	for i := len(rs) - 1; i >= 0; i-- {
		if rd := &rs[i]; rd.Point == pk && rd.Step == step && rd.Status != procedures.Retry {
			until = rd
			break
		}
	}
	for i := len(rs) - 1; i >= 0; i-- {
		rd := &rs[i]
		if rd.Point == pk && rd.Step != step && (until == nil || rd.At.Before(until.At)) {
			after = rd
			break
		}
	}
	gs := e.run.Sess.Guesses
	for i := len(gs) - 1; i >= 0; i-- {
		g := &gs[i]
		if g.Point != pk {
			continue
		}
		if until != nil && g.At.After(until.At) {
			continue
		}
		if after != nil && !g.At.After(after.At) {
			return nil
		}
		return g
	}
	return nil
}

// changedMsg says the session changed (a reading, skip, confirmation,
// note or move): the root saves it and refreshes what depends on it.
type changedMsg struct{}

func changed() tea.Msg { return changedMsg{} }
