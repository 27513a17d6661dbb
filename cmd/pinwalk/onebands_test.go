package main

import (
	"encoding/json"
	"fmt"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"pinwalk/expect/bands"
	"pinwalk/expect/design"
	pkey "pinwalk/expect/point"
	"pinwalk/procedures"
	"pinwalk/procedures/infer"
	"pinwalk/procedures/jobsheet"
)

// TestOneBandEverywhere: under the same conditions (the design's mains
// sampled within its tolerance, full variac, the default 10 MΩ meter with
// its typical accuracy, no earlier readings) and each command's default
// Monte Carlo samples (one figure, bands.DefaultSamples), the band of a reading is the same number in every place a
// technician sees one: `pinwalk expect --json` (the command itself), the
// walk (procedures.BenchModel.Expect, what the step screen shows), the
// job sheet (the band stored with a reading the walk took, as the sheet
// lists it) and `diagnose` (infer.Engine.HealthyBand, its "healthy
// predicts …"). Ten points per demo design, spread over the point list
// (volts, currents, heaters, ripple); the table is logged so that it can
// be quoted. Equality is to the six significant digits of the JSON.
func TestOneBandEverywhere(t *testing.T) {
	const seed = 1
	files, err := filepath.Glob("../../testdata/designs/*.yaml")
	if err != nil || len(files) == 0 {
		t.Fatalf("no demo designs: %v", err)
	}
	for _, path := range files {
		d, probs := design.Load(path)
		if d == nil || len(probs.Errors()) > 0 {
			t.Fatalf("%s: %v", path, probs.Errors())
		}
		// expect, the command.
		code, out, errOut := runCLI("expect", "--json", "--seed", fmt.Sprint(seed), path)
		if code != 0 {
			t.Fatalf("%s: expect exit %d: %s", path, code, errOut)
		}
		var rep struct {
			Points []jsonPoint `json:"points"`
		}
		if err := json.Unmarshal([]byte(out), &rep); err != nil {
			t.Fatal(err)
		}
		byKey := map[string]jsonPoint{}
		var keys []string
		for _, p := range rep.Points {
			if p.Low == 0 && p.High == 0 {
				continue
			}
			k := p.ID + " " + p.Quantity
			if _, dup := byKey[k]; !dup {
				keys = append(keys, k)
			}
			byKey[k] = p
		}
		// The walk and the job sheet.
		bench, err := procedures.NewBenchModel(d, procedures.BenchOptions{Seed: seed})
		if err != nil {
			t.Fatal(err)
		}
		// diagnose.
		eng, err := infer.New(d, infer.Options{Seed: seed})
		if err != nil {
			t.Fatal(err)
		}
		var pick []string
		for i := 0; i < 10 && len(keys) > 0; i++ {
			pick = append(pick, keys[i*len(keys)/10])
		}
		t.Logf("%s (%d samples, seed %d)", d.Title, bands.DefaultSamples, seed)
		t.Logf("  %-24s %-22s %-22s %-22s %-22s", "point", "expect", "walk", "job sheet", "diagnose")
		for _, key := range pick {
			ej := byKey[key]
			k, err := pkey.Parse(key)
			if err != nil {
				t.Fatal(err)
			}
			wb, ok := bench.Expect(k, 1, nil)
			if !ok {
				t.Errorf("%s: the walk has no band for %s", d.Title, key)
				continue
			}
			sheetLo, sheetHi, ok := sheetBand(t, d, bench, k, ej)
			if !ok {
				continue
			}
			db, ok := eng.HealthyBand(key)
			if !ok {
				t.Errorf("%s: diagnose has no healthy band for %s", d.Title, key)
				continue
			}
			row := func(lo, hi float64) string { return fmt.Sprintf("%.6g – %.6g", round(lo), round(hi)) }
			e, w, s, g := row(ej.Low, ej.High), row(wb.Low, wb.High), row(sheetLo, sheetHi), row(db.Low, db.High)
			t.Logf("  %-24s %-22s %-22s %-22s %-22s %s", key, e, w, s, g, ej.Unit)
			if w != e || s != e || g != e {
				t.Errorf("%s %s: expect %s, walk %s, job sheet %s, diagnose %s: want one band", d.Title, key, e, w, s, g)
			}
		}
		// diagnose shows that band in its words: a reading far above
		// the first point's band is set against it.
		key := pick[0]
		db, _ := eng.HealthyBand(key)
		rk := eng.Rank([]infer.Observation{{Key: key, Value: db.High + 10*(db.High-db.Low) + 1}}, nil)
		want := "healthy predicts " + db.Format()
		found := false
		for _, s := range rk.Suspects {
			for _, y := range s.Why {
				found = found || strings.Contains(y, want)
			}
		}
		if !found {
			t.Errorf("%s: diagnose never says %q for a reading far above %s", d.Title, want, key)
		}
	}
}

// sheetBand takes one reading of k at its nominal value through the
// walk's runner (a step that measures k at full mains, in a fresh
// session, so that no earlier reading narrows the band) and returns the
// band the job sheet lists with it.
func sheetBand(t *testing.T, d *design.Design, bench *procedures.BenchModel, k pkey.Key, ej jsonPoint) (lo, hi float64, ok bool) {
	t.Helper()
	now := time.Date(2026, 1, 5, 10, 0, 0, 0, time.UTC)
	sess := procedures.NewSession(d, procedures.BringUp, 1, now)
	unit := map[string]string{"dc_volts": "V", "dc_amps": "A", "ac_volts": "V", "ac_amps": "A", "ripple_volts": "V", "ohms": "Ω"}[k.Quantity]
	proc := &procedures.Procedure{Mode: procedures.BringUp, Title: "one reading", Steps: []*procedures.Step{{
		ID: "read", Kind: procedures.KindLive, Title: "one reading", Variac: 1,
		Measures: []procedures.Measure{{Point: k, Label: ej.Label, Unit: unit}},
	}}}
	r := procedures.NewRunner(proc, sess, "", bench)
	r.Now = func() time.Time { return now }
	if _, err := r.Enter(k, fmt.Sprintf("%g", ej.Nominal)); err != nil {
		t.Errorf("%s: entering %s: %v", d.Title, k, err)
		return 0, 0, false
	}
	sh, err := jobsheet.Build(sess, jobsheet.Options{Design: d, Proc: proc})
	if err != nil {
		t.Fatal(err)
	}
	for _, row := range sh.Readings {
		if row.Reading.Point == k && row.HasBand {
			return row.Reading.Low, row.Reading.High, true
		}
	}
	t.Errorf("%s: the job sheet lists no band for %s", d.Title, k)
	return 0, 0, false
}
