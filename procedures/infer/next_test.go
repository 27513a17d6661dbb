package infer

import (
	"regexp"
	"strings"
	"testing"

	"pinwalk/expect/design"
	"pinwalk/expect/faults"
)

// keyLike matches a point key's text form (what a screen must never show).
var keyLike = regexp.MustCompile(`\b(dc_volts|dc_amps|ac_volts|ac_amps|ripple_volts|tone_volts|ohms)\b|\bcold:`)

// TestNextOneNodeOnce: following Next on every demo, for a few faults, no
// physical node is proposed twice (a net and a socket pin on it are one
// node), none already read under another name, and each proposal's
// reason is in words: no bits, no point keys.
func TestNextOneNodeOnce(t *testing.T) {
	for _, name := range []string{"se-6v6-stereo.yaml", "pp-el34-fixed.yaml", "bench-12ax7.yaml"} {
		e := demo(t, name)
		hs := e.Hypotheses()
		for _, h := range []string{hs[1], hs[len(hs)/2], hs[len(hs)-1], Healthy} {
			sim, err := e.Simulate(h, 11)
			if err != nil {
				t.Fatal(err)
			}
			var obs []Observation
			seen := map[string]string{}
			// A pin read first: its net must never be proposed.
			for k, p := range e.points {
				if !p.cold && p.pd.Valve != "" && p.quantity == "dc_volts" {
					obs = append(obs, Observation{p.key, sim[p.key]})
					seen[e.node(k)] = p.key
					break
				}
			}
			for step := 0; step < 25; step++ {
				r := e.Rank(obs, nil)
				if r.Next == nil {
					break
				}
				node := r.Next.Key // a look is its own node
				if k, ok := e.index[r.Next.Key]; ok {
					node = e.node(k)
				}
				if prev, dup := seen[node]; dup {
					t.Errorf("%s %s: step %d proposes %s, the node already read as %s", name, h, step, r.Next.Key, prev)
				}
				seen[node] = r.Next.Key
				if r.Next.Reason == "" || strings.Contains(r.Next.Reason, "bit") || keyLike.MatchString(r.Next.Reason) {
					t.Errorf("%s %s: reason %q: want words, no bits or keys", name, h, r.Next.Reason)
				}
				if step == 0 {
					t.Logf("%s %s: first proposal %s: %s", name, h, r.Next.Label, r.Next.Reason)
				}
				v, ok := sim[r.Next.Key]
				if !ok {
					break
				}
				obs = append(obs, Observation{r.Next.Key, v})
			}
		}
	}
}

// TestNoLiveReadingIntoAShort: a cold B+ reading of a near-short (a
// shorted reservoir capacitor reads a fraction of an ohm to chassis) keeps
// every proposal cold: a technician does not power up into a short.
func TestNoLiveReadingIntoAShort(t *testing.T) {
	e := demo(t, "se-6v6-stereo.yaml")
	obs := []Observation{{ColdKey("B1"), 0.3}}
	r := e.Rank(obs, nil)
	if r.Next == nil || r.Next.Live {
		t.Fatalf("after a near-short on B1 the next reading is %+v, want a cold one", r.Next)
	}
	t.Logf("top %s (%.2f); next %s: %s", r.Suspects[0].Fault, r.Suspects[0].Probability, r.Next.Label, r.Next.Reason)
}

// TestDeadAmpPlugFirst: an amplifier that shows no lights at all (the
// owner's complaint) gets the cheap decisive checks first: live to
// neutral at the plug, or the fuse (common practice: a dead amp is
// checked at the plug and the fuse before the cover comes off).
func TestDeadAmpPlugFirst(t *testing.T) {
	for _, name := range []string{"se-6v6-stereo.yaml", "pp-el34-fixed.yaml"} {
		d, probs := design.Load("../../testdata/designs/" + name)
		if d == nil || len(probs.Errors()) > 0 {
			t.Fatal(probs)
		}
		e, err := New(d, Options{Samples: 100, Seed: 1, Symptoms: []string{"no-lights"}})
		if err != nil {
			t.Fatal(err)
		}
		r := e.Rank(nil, ColdOnly)
		if r.Next == nil || !strings.Contains(r.Next.Key, "live–neutral") {
			t.Errorf("%s: first proposal %+v, want the plug's live to neutral", name, r.Next)
			continue
		}
		t.Logf("%s: first %s (effort %g): %s", name, r.Next.Label, r.Next.Cost, r.Next.Reason)
	}
}

// TestNearShortOnB1RanksTheCapacitor: B1 reads a fraction of an ohm to
// chassis, cold. Both the reservoir capacitor shorted and the bleeder
// across it shorted explain it, but electrolytics break down far more often
// than resistors short (resistors fail open or drift high: common
// practice), and a broken-down capacitor reads anything from milliohms to
// hundreds of ohms (spread evenly in the logarithm, not in ohms), so the
// capacitor must rank first at every such reading.
func TestNearShortOnB1RanksTheCapacitor(t *testing.T) {
	e := demo(t, "se-6v6-stereo.yaml")
	for _, ohms := range []float64{0.02, 0.3, 3, 30} {
		r := e.Rank([]Observation{{ColdKey("B1"), ohms}}, nil)
		t.Logf("B1 %g Ω: %s %.3f, %s %.3f", ohms, r.Suspects[0].Fault, r.Suspects[0].Probability, r.Suspects[1].Fault, r.Suspects[1].Probability)
		if r.Suspects[0].Fault != "C1:short" {
			t.Errorf("B1 reads %g Ω: %s ranks first, want C1:short", ohms, r.Suspects[0].Fault)
		}
	}
}

// TestShortedCapOnB2: B2 reads 220 Ω to chassis, cold (a smoothing
// capacitor broken down: an old electrolytic that has shorted reads tens
// to hundreds of ohms, not zero, common practice), first alone, then with
// every cold reading the short cannot reach (heater, winding, grid and
// cathode returns) taken from a healthy amplifier; the B+ chain's other
// nets are left unread, since a short on B2 pulls all of them down. The
// capacitor on B2 (C2) must rank in the top 3, healthy not first, and the
// next reading must be cold: a technician does not power up into a
// near-short.
func TestShortedCapOnB2(t *testing.T) {
	e := demo(t, "se-6v6-stereo.yaml")
	sim, err := e.Simulate(Healthy, 3)
	if err != nil {
		t.Fatal(err)
	}
	c2 := e.hyps[e.byName["C2:short"]]
	b2 := []Observation{{ColdKey("B2"), 220}}
	all := append([]Observation(nil), b2...)
	for k, p := range e.points {
		if p.cold && p.key != ColdKey("B2") && c2.cold[k-e.nDC] == e.hyps[0].cold[k-e.nDC] {
			all = append(all, Observation{p.key, sim[p.key]})
		}
	}
	for _, obs := range [][]Observation{b2, all} {
		r := e.Rank(obs, nil)
		rank := exactRank(r, "C2:short")
		for i, s := range r.Suspects[:min(4, len(r.Suspects))] {
			t.Logf("%d readings: %d %s %.3f", len(obs), i+1, s.Fault, s.Probability)
		}
		if rank < 1 || rank > 3 {
			t.Errorf("%d readings: C2:short ranks %d, want top 3", len(obs), rank)
		}
		if r.Suspects[0].Fault == Healthy {
			t.Errorf("%d readings: healthy ranks first", len(obs))
		}
		if r.Next == nil || r.Next.Live {
			t.Errorf("%d readings: next reading %+v, want a cold one", len(obs), r.Next)
		} else {
			t.Logf("%d readings: next %s: %s", len(obs), r.Next.Label, r.Next.Reason)
		}
	}
}

// TestShortedDiode: B1 reads 95 Ω to chassis cold (half the 190 Ω HT
// winding: a diode of D1 shorted joins HTA to B1). D1:short must rank in
// the top 3 and the next reading be cold: powered, a shorted diode
// shorts the winding and blows the fuse (common practice).
func TestShortedDiode(t *testing.T) {
	e := demo(t, "se-6v6-stereo.yaml")
	r := e.Rank([]Observation{{ColdKey("B1"), 95}}, nil)
	for i, s := range r.Suspects[:min(4, len(r.Suspects))] {
		t.Logf("%d %s %.3f", i+1, s.Fault, s.Probability)
	}
	if rank := exactRank(r, "D1:short"); rank < 1 || rank > 3 {
		t.Errorf("D1:short ranks %d, want top 3", rank)
	}
	if r.Next == nil || r.Next.Live {
		t.Errorf("next reading %+v, want a cold one", r.Next)
	} else {
		t.Logf("next %s: %s", r.Next.Label, r.Next.Reason)
	}
}

// TestNotModelledIsTrue: every fault listed as not modelled says why, and
// no fault that has a mode in some demo is listed as not modelled (a
// gassy valve, a heater-to-cathode short on a referenced winding, an
// output-transformer primary to chassis, a heater centre tap open).
func TestNotModelledIsTrue(t *testing.T) {
	var listed []string
	for _, u := range faults.NotModelled() {
		if u.Fault == "" || u.Why == "" || strings.Contains(u.Why, "\n") {
			t.Errorf("%+v: want a fault and one line why", u)
		}
		listed = append(listed, strings.ToLower(u.Fault))
	}
	words := map[string]string{"gassy": "gassy valve", "hk-short": "heater-to-cathode short", "to-chassis": "primary shorted to chassis", "centre-open": "centre tap open"}
	for _, name := range []string{"se-6v6-stereo.yaml", "pp-el34-fixed.yaml"} {
		for _, h := range demo(t, name).Hypotheses() {
			_, mode, _ := strings.Cut(h, ":")
			w, ok := words[mode]
			if !ok {
				continue
			}
			for _, l := range listed {
				if strings.Contains(l, w) {
					t.Errorf("%s: %s is modelled but %q is listed as not modelled", name, h, l)
				}
			}
		}
	}
}

// TestArcingRectifierValve: demo pp-el34-fixed's 5U4GB (V9) flashing
// over blows the fuse, so "no lights" and "fuse blows" both raise it as
// they raise a shorted silicon diode (common practice: an arcing
// rectifier is a classic cause of a fuse that blows at switch-on), and
// powered it is a near-short whatever the cold readings show: while it is
// a suspect nothing is read live.
func TestArcingRectifierValve(t *testing.T) {
	e := demo(t, "pp-el34-fixed.yaml")
	f := faults.Fault{Ref: "V9", Mode: faults.Short}
	if !e.NearShort(f.String()) {
		t.Errorf("%s is no near-short", f)
	}
	for _, s := range []string{"no-lights", "fuse-blows"} {
		up := symptomFactor(e.d, e.roles, &f, []string{s})
		weak := symptomFactor(e.d, e.roles, &faults.Fault{Ref: "V9", Mode: faults.Weak}, []string{s})
		if up < 10*weak {
			t.Errorf("%q: %s ×%g, the same valve weak ×%g: want the arcing valve ten times as likely or more", s, f, up, weak)
		}
	}
}
