package infer

import (
	"fmt"
	"os"
	"path/filepath"
	"sort"
	"strings"
	"testing"
)

// clearShare: a suspect's group holding this much of the posterior counts
// as isolated (the measuring loop of fault-finding stops at the same
// share, procedures.ClearProbability).
const clearShare = 0.9

// topGroupShare returns the posterior share of the top suspect's group
// among the listed suspects.
func topGroupShare(r *Ranking) float64 {
	if len(r.Suspects) == 0 {
		return 0
	}
	g := r.Suspects[0].Group
	s := 0.0
	for _, x := range r.Suspects {
		if x.Group == g {
			s += x.Probability
		}
	}
	return s
}

// TestAccuracy: every injectable single fault of every demo design, with
// its readings simulated from a fresh tolerance sample (a generator
// stream the hypotheses' clouds never use) read through the 10 MΩ meter
// with its error (Engine.Simulate), every live DC and cold point read,
// then ranked. Faults that no reading at all tells from a healthy amp
// are counted apart (they are found by a signal check, not by a meter).
// Floors (the goals set for diagnosis): top-1 ≥ 90 % and top-3 ≥ 98 % of
// the visible faults, counting suspects no reading separates as one. Then
// the readings to isolate each visible fault (its group holding 90 % of
// the posterior), following Next from nothing (cold and live points
// allowed), against a fixed order (the cold checks in their listed
// order, then every live point in model order): goal ≤ 50 % of the fixed
// order's mean. To keep the default run under a minute it takes every
// third fault (-short every eighth); PINWALK_ACCURACY_FULL=1 takes all.
func TestAccuracy(t *testing.T) {
	names, err := filepath.Glob("../../testdata/designs/*.yaml")
	if err != nil || len(names) == 0 {
		t.Fatal("no demo designs", err)
	}
	stride := 3
	switch {
	case os.Getenv("PINWALK_ACCURACY_FULL") == "1":
		stride = 1
	case testing.Short():
		stride = 8
	}
	var totVis, totTop1, totTop3, totInv int
	var totNext, totFixed float64
	var totBoth int
	for _, path := range names {
		name := filepath.Base(path)
		e := demo(t, name)
		var fixed []string
		for _, p := range e.points[e.nDC:] {
			fixed = append(fixed, p.key)
		}
		for _, p := range e.points[:e.nDC] {
			fixed = append(fixed, p.key)
		}
		var vis, top1, top3 int
		var invisible, missed []string
		var sumNext, sumFixed float64
		var both, nextOnly, fixedOnly, neither int
		for i, h := range e.Hypotheses() {
			if h == Healthy || i%stride != 0 {
				continue
			}
			if same(e, Healthy, h, true) {
				invisible = append(invisible, h)
				continue
			}
			sim, err := e.Simulate(h, uint64(9000+i))
			if err != nil {
				t.Errorf("%s: simulate %s: %v", name, h, err)
				continue
			}
			var all []Observation
			for _, k := range e.Keys() {
				if v, ok := sim[k]; ok {
					all = append(all, Observation{k, v})
				}
			}
			vis++
			r := e.Rank(all, func(string) bool { return false })
			switch g := groupRank(e, r, h, true); {
			case g == 1:
				top1, top3 = top1+1, top3+1
			case g >= 1 && g <= 3:
				top3++
				missed = append(missed, fmt.Sprintf("%s (group %d; first %s %.2f)", h, g, r.Suspects[0].Fault, r.Suspects[0].Probability))
			default:
				missed = append(missed, fmt.Sprintf("%s (group %d; first %s %.2f)", h, g, r.Suspects[0].Fault, r.Suspects[0].Probability))
			}
			// Readings to isolate: guided and fixed order.
			isolated := func(r *Ranking) bool { return same(e, r.Suspects[0].Fault, h, true) && topGroupShare(r) >= clearShare }
			var obs []Observation
			nNext, okNext := 0, false
			for step := 0; step <= len(e.points); step++ {
				r := e.Rank(obs, nil)
				if isolated(r) {
					okNext = true
					break
				}
				if r.Next == nil {
					break
				}
				v, ok := sim[r.Next.Key]
				if !ok {
					break
				}
				obs = append(obs, Observation{r.Next.Key, v})
				nNext++
			}
			obs = obs[:0]
			nFixed, okFixed := 0, false
			for step := 0; step <= len(fixed); step++ {
				if isolated(e.Rank(obs, func(string) bool { return false })) {
					okFixed = true
					break
				}
				if step == len(fixed) {
					break
				}
				if v, ok := sim[fixed[step]]; ok {
					obs = append(obs, Observation{fixed[step], v})
				}
				nFixed++
			}
			switch {
			case okNext && okFixed:
				both++
				sumNext += float64(nNext)
				sumFixed += float64(nFixed)
			case okNext:
				nextOnly++
			case okFixed:
				fixedOnly++
			default:
				neither++
			}
		}
		pct := func(x, n int) float64 { return 100 * float64(x) / float64(max(n, 1)) }
		sort.Strings(invisible)
		t.Logf("%s: %d faults tried, %d invisible to every reading: %s", name, vis+len(invisible), len(invisible), strings.Join(invisible, " "))
		t.Logf("%s: visible %d: top-1 %d (%.1f %%), top-3 %d (%.1f %%)", name, vis, top1, pct(top1, vis), top3, pct(top3, vis))
		for _, m := range missed {
			t.Logf("  not first: %s", m)
		}
		t.Logf("%s: isolated by both %d, only guided %d, only fixed %d, neither %d; mean readings guided %.2f, fixed order %.2f (%.0f %%)",
			name, both, nextOnly, fixedOnly, neither, sumNext/float64(max(both, 1)), sumFixed/float64(max(both, 1)), 100*sumNext/max(sumFixed, 1))
		totVis, totTop1, totTop3, totInv = totVis+vis, totTop1+top1, totTop3+top3, totInv+len(invisible)
		totNext, totFixed, totBoth = totNext+sumNext, totFixed+sumFixed, totBoth+both
	}
	p1, p3 := 100*float64(totTop1)/float64(totVis), 100*float64(totTop3)/float64(totVis)
	t.Logf("all demos: %d visible faults (%d invisible apart): top-1 %.1f %%, top-3 %.1f %%; readings to isolate: guided %.2f, fixed %.2f (%.0f %%)",
		totVis, totInv, p1, p3, totNext/float64(max(totBoth, 1)), totFixed/float64(max(totBoth, 1)), 100*totNext/max(totFixed, 1))
	if p1 < 90 || p3 < 98 {
		t.Errorf("top-1 %.1f %% (floor 90), top-3 %.1f %% (floor 98) of the visible faults", p1, p3)
	}
	if totNext > 0.5*totFixed {
		t.Errorf("guided %.0f readings against fixed %.0f: goal ≤ 50 %%", totNext, totFixed)
	}
}
