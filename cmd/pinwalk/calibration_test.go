package main

import (
	"flag"
	"path/filepath"
	"sort"
	"testing"

	"pinwalk/expect/amp"
	"pinwalk/expect/bands"
	"pinwalk/expect/design"
	"pinwalk/procedures/infer"
)

// calibrationAmps is the number of healthy amps per demo the alarm
// calibration draws: 200 by default (about 20 s for the three demos on
// one core), 20 with -short; more for a finer figure:
// `go test ./cmd/pinwalk -run TestAlarmsCalibrated -v -calibration.amps 1000`.
var calibrationAmps = flag.Int("calibration.amps", 200, "healthy amps per demo design in TestAlarmsCalibrated")

// TestAlarmsCalibrated: healthy amplifiers drawn from the tolerance model
// (bands.HealthyReadings: parts, transformer, valves and the mains within
// tolerance, each solved in full, read with model error and meter error)
// are read at every DC-volts and heater point, as a full bring-up reads
// them, and fed to the two checks a technician sees:
//
//   - the walk's "the readings do not fit a healthy amplifier" (the bands
//     conditioned on the readings, Set.Condition, flags a misfit);
//   - diagnose's "no single fault explains the readings" (infer.Rank,
//     Fits false).
//
// Each may fire on at most 5 % of healthy amps, and on none whose readings
// are exactly the nominal values. Every 95 % reading band (Set.Expect, the
// band every command shows) must hold 93–97 % of the healthy readings
// taken together, and no point's band under 85 % (with 200 amps a
// point's binomial standard error is 1.5 %; a cathode band capped at the
// valve's rated dissipation, a safety rule, holds fewer of the hottest
// healthy valves). The walk's alarm allows for the number of readings
// checked together (bands.MisfitSigmas). The meter's
// input resistance is taken as huge so that its loading (left out of
// the reference readings) is out of the bands too.
func TestAlarmsCalibrated(t *testing.T) {
	n := *calibrationAmps
	if testing.Short() {
		n = min(n, 20)
	}
	mt := bands.DigitalMeter
	mt.InputOhms = 1e13
	files, err := filepath.Glob("../../testdata/designs/*.yaml")
	if err != nil || len(files) == 0 {
		t.Fatalf("no demo designs: %v", err)
	}
	for _, path := range files {
		d, probs := design.Load(path)
		if d == nil || len(probs.Errors()) > 0 {
			t.Fatalf("%s: %v", path, probs.Errors())
		}
		s, err := bands.Run(d, bands.Options{Samples: 300, Seed: 1, Meter: mt})
		if err != nil {
			t.Fatal(err)
		}
		eng, err := infer.New(d, infer.Options{Samples: infer.DefaultSamples, Seed: 1, Meter: mt})
		if err != nil {
			t.Fatal(err)
		}
		var keys []string
		var bs []bands.Band
		for _, pd := range s.Points {
			if pd.Quantity != amp.DCVolts && pd.Quantity != amp.ACVolts {
				continue
			}
			b, err := s.Expect(pd.Key(), mt)
			if err != nil {
				t.Fatal(err)
			}
			keys = append(keys, pd.Key())
			bs = append(bs, b)
		}
		check := func(rd map[string]float64) (walk, diag bool, healthyFirst bool) {
			var rs []bands.Reading
			var obs []infer.Observation
			for _, k := range keys {
				x, ok := rd[k]
				if !ok {
					continue
				}
				rs = append(rs, bands.Reading{Key: k, Value: x, Meter: mt})
				obs = append(obs, infer.Observation{Key: k, Value: x})
			}
			c, err := s.Condition(rs)
			if err != nil {
				t.Fatal(err)
			}
			if c.Misfit && testing.Verbose() {
				t.Logf("%s: walk alarm: %s", d.Title, c.Reason)
			}
			rk := eng.Rank(obs, nil)
			return c.Misfit, !rk.Fits, len(rk.Suspects) > 0 && rk.Suspects[0].Fault == infer.Healthy
		}

		// Exact nominal readings.
		nomRd := map[string]float64{}
		for i, pd := range s.Points {
			nomRd[pd.Key()] = s.Nominal[i]
		}
		if w, g, _ := check(nomRd); w || g {
			t.Errorf("%s: readings exactly at nominal set off an alarm: walk %v, diagnose %v", d.Title, w, g)
		}

		amps, err := bands.HealthyReadings(d, amp.Conditions{}, mt, 2026, n)
		if err != nil {
			t.Fatal(err)
		}
		hits := make([]int, len(keys))
		walkAlarms, diagAlarms, notFirst, total := 0, 0, 0, 0
		for _, rd := range amps {
			for i, k := range keys {
				if x, ok := rd[k]; ok && bs[i].Contains(x) {
					hits[i]++
				}
			}
			total += len(keys)
			w, g, first := check(rd)
			if w {
				walkAlarms++
			}
			if g {
				diagAlarms++
			}
			if !first {
				notFirst++
			}
		}
		cov := make([]float64, len(keys))
		sum := 0
		for i, h := range hits {
			cov[i] = float64(h) / float64(len(amps))
			sum += h
		}
		mean := float64(sum) / float64(total)
		order := make([]int, len(keys))
		for i := range order {
			order[i] = i
		}
		sort.Slice(order, func(a, b int) bool { return cov[order[a]] < cov[order[b]] })
		lo, hi := order[0], order[len(order)-1]
		inside := 0
		for _, c := range cov {
			if c >= 0.93 && c <= 0.97 {
				inside++
			}
		}
		N := float64(len(amps))
		t.Logf("%s: %d healthy amps (full solve), %d points each: coverage of the 95 %% bands %.1f %% overall, lowest %.1f %% (%s), highest %.1f %% (%s), %d of %d points within 93–97 %%",
			d.Title, len(amps), len(keys), 100*mean, 100*cov[lo], keys[lo], 100*cov[hi], keys[hi], inside, len(keys))
		t.Logf("%s: alarms: walk 'do not fit a healthy amplifier' %d (%.1f %%), diagnose 'no single fault explains' %d (%.1f %%); healthy not ranked first %d (%.1f %%); at exact nominal: none",
			d.Title, walkAlarms, 100*float64(walkAlarms)/N, diagAlarms, 100*float64(diagAlarms)/N, notFirst, 100*float64(notFirst)/N)
		if float64(walkAlarms) > 0.05*N || float64(diagAlarms) > 0.05*N {
			t.Errorf("%s: false alarms on healthy amps: walk %d, diagnose %d of %d (want at most 5 %%)", d.Title, walkAlarms, diagAlarms, len(amps))
		}
		if !testing.Short() && (mean < 0.93 || mean > 0.97 || cov[lo] < 0.85) {
			t.Errorf("%s: coverage %.1f %% overall (want 93–97 %%), lowest %.1f %% at %s (want at least 85 %%)", d.Title, 100*mean, 100*cov[lo], keys[lo])
		}
	}
}
