package procedures

import (
	"math"
	"sort"
	"testing"

	"pinwalk/expect/ac"
	"pinwalk/expect/amp"
	"pinwalk/expect/faults"
)

// gainDBAt is the small-signal gain change of a fault at each output, in
// dB, by ac.Analyzer.Gain (a unit source at the input net, the limits
// off): a second path to the levels the complaint is drawn from
// (Analyzer.Tone).
func gainDBAt(t *testing.T, m *amp.Model, fault string, outs []string) []float64 {
	t.Helper()
	at := func(v *amp.Values) []float64 {
		var op amp.OP
		if err := amp.NewSolver(m).Solve(amp.Conditions{}, v, false, &op); err != nil {
			return nil
		}
		an, err := ac.New(m)
		if err != nil {
			t.Fatal(err)
		}
		var out []float64
		for _, o := range outs {
			sum := 0.0
			// Every input grid in turn (a stereo amp's channels); the
			// outputs of one channel see only their own input.
			for _, in := range an.InputNets() {
				g, err := an.Gain(&op, v, in, o, ac.Options{})
				if err != nil {
					t.Fatal(err)
				}
				sum += abs(g)
			}
			out = append(out, sum)
		}
		return out
	}
	h := at(m.NominalValues())
	v := m.NominalValues()
	f, _ := faults.Parse(fault)
	if faults.Apply(m, v, f) != nil {
		return nil
	}
	x := at(v)
	if x == nil {
		return nil
	}
	var out []float64
	for i := range h {
		out = append(out, dB(x[i], h[i]))
	}
	return out
}

func abs(z complex128) float64 { return math.Hypot(real(z), imag(z)) }

// TestPracticeFaultsNoticed: every injectable fault of every demo is
// either noticed by its owner, with a complaint that fits it, or never
// drawn for practice. The floor (common practice): the gain or the
// maximum output changes by 3 dB or more, or the fault kills, blows,
// hums or overheats something. Checks:
//   - a complaint of a quieter, silent or dead amp (or channel) has the
//     gain at that output down by 3 dB (20 dB for silent) by a second
//     path (ac.Analyzer.Gain from every input grid); a fault not noticed
//     moves no output's gain by 3 dB on that path;
//   - faults whose complaint is known on the bench (common practice): a
//     blown mains fuse lights nothing; a shorted reservoir blows the fuse;
//     a fixed-bias supply gone dead red-plates the output valves; an open
//     plate load of the bench stage leaves no sound; a stereo amp's output
//     valve with an open heater silences its channel and stays dark; a
//     dried reservoir of the single-ended stereo amp hums;
//   - no complaint is worded for more than half of a demo's noticed faults
//     (no catch-all), and the count of each is logged;
//   - every fault drawn over 24 seeds is one with a complaint.
func TestPracticeFaultsNoticed(t *testing.T) {
	known := map[string]map[string]string{
		"se-6v6-stereo": {"F1:open": "no-lights", "C1:short": "fuse-blows", "V2:heater-open": "no-sound-one-channel", "C1:open": "hum"},
		"pp-el34-fixed": {"F1:open": "no-lights", "C1:short": "fuse-blows", "U1:dead": "red-plate"},
		"bench-12ax7":   {"R2:open": "no-sound"},
	}
	for _, name := range []string{"se-6v6-stereo", "pp-el34-fixed", "bench-12ax7"} {
		d := loadDesign(t, name)
		w := newWalk(t, d, Practise, "")
		l := w.Loop.(*faultLoop)
		e, err := l.engine()
		if err != nil {
			t.Fatal(err)
		}
		m := w.B.M
		h := healthyOf(m)
		if h.err != nil {
			t.Fatal(h.err)
		}
		an, _ := ac.New(m)
		var op amp.OP
		if err := amp.NewSolver(m).Solve(amp.Conditions{}, m.NominalValues(), false, &op); err != nil {
			t.Fatal(err)
		}
		pts, err := an.Tone(&op, m.NominalValues(), ac.Options{Linear: true, AllInputs: true}, nil)
		if err != nil {
			t.Fatal(err)
		}
		var outs []string
		for _, i := range h.outs {
			outs = append(outs, pts[i].ID)
		}
		counts := map[string]int{}
		noticed, all, unseen := 0, 0, 0
		for _, f := range faults.All(m) {
			all++
			c, ok := complaintOf(w.B, e, f.String())
			g := gainDBAt(t, m, f.String(), outs)
			if want, has := known[name][f.String()]; has && (!ok || c.Symptom != want) {
				t.Errorf("%s %s: complaint %q (symptom %q), want symptom %s", name, f, c.Words, c.Symptom, want)
			}
			if !ok {
				for i, x := range g {
					if math.Abs(x) >= NoticeDB && !e.NearShort(f.String()) {
						t.Errorf("%s %s: not noticed, but the gain at %s moves %.1f dB", name, f, outs[i], x)
					}
				}
				continue
			}
			noticed++
			counts[c.Words]++
			if e.SameGroup(f.String(), "healthy", true) {
				unseen++ // noticed, but no reading of the walk sees it: not drawn
			}
			worst := 0.0
			for _, x := range g {
				worst = math.Min(worst, x)
			}
			switch c.Words {
			case "It's quieter than it used to be: I have to turn it up further for the same volume.",
				"It has gone very quiet: even turned right up it is nowhere near as loud as it was.",
				"One channel is quieter than the other and breaks up sooner.":
				if worst > -NoticeDB && worstMax(effectOf(m, f.String())) > -NoticeDB {
					t.Errorf("%s %s: %q, but no output is 3 dB down (gain %v)", name, f, c.Words, g)
				}
			case "The valves light up but there is no sound at all.",
				"One channel has gone silent (or very faint); the other is fine.":
				if g != nil && worst > -SilentDB {
					t.Errorf("%s %s: %q, but the gain is only %.1f dB down", name, f, c.Words, worst)
				}
			}
		}
		words := make([]string, 0, len(counts))
		for k := range counts {
			words = append(words, k)
		}
		sort.Slice(words, func(a, b int) bool { return counts[words[a]] > counts[words[b]] })
		t.Logf("%s: %d of %d injectable faults noticed (%d of them seen by no reading of the walk, not drawn), %d complaints", name, noticed, all, unseen, len(words))
		for _, k := range words {
			t.Logf("%s %3d  %s", name, counts[k], k)
			if 2*counts[k] > noticed {
				t.Errorf("%s: %q used for %d of %d noticed faults: a catch-all", name, k, counts[k], noticed)
			}
		}
		for seed := uint64(1); seed <= 24; seed++ {
			f, c, err := l.drawPractice(e, seed)
			if err != nil {
				t.Fatal(err)
			}
			if c2, ok := complaintOf(w.B, e, f); !ok || c2 != c {
				t.Errorf("%s seed %d: drew %s (%q), which its owner would not notice", name, seed, f, c.Words)
			}
		}
	}
}
