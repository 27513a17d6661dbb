package procedures

import (
	"bufio"
	"errors"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"pinwalk/expect/point"
	"reflect"
	"strconv"
	"strings"
	"testing"
	"time"
)

// TestBadSessions runs the catalogue of damaged session files: each gives a
// *SessionError naming the file, a line inside it, the field and what was
// expected, and never a panic.
func TestBadSessions(t *testing.T) {
	f, err := os.Open("../testdata/bad-sessions/want.tsv")
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	sc := bufio.NewScanner(f)
	n := 0
	for sc.Scan() {
		parts := strings.Split(sc.Text(), "\t")
		if len(parts) != 3 {
			continue
		}
		name, field, sub := parts[0], parts[1], parts[2]
		n++
		t.Run(name, func(t *testing.T) {
			path := filepath.Join("..", "testdata", "bad-sessions", name)
			_, err := LoadSession(path)
			var se *SessionError
			if !errors.As(err, &se) {
				t.Fatalf("got %v (%T), want a *SessionError", err, err)
			}
			if se.File != path || se.Line < 1 || se.Field != field || !strings.Contains(se.Msg, sub) {
				t.Errorf("got %q, want file %s, field %s, message containing %q", se.Error(), path, field, sub)
			}
		})
	}
	if n < 10 {
		t.Fatalf("only %d catalogue entries", n)
	}
}

// TestSaveFailureKeepsReading: saving into a directory that cannot be
// written (read-only, or a full disk) gives a visible error, and the
// reading stays in memory so a retry after the problem is fixed saves it.
func TestSaveFailureKeepsReading(t *testing.T) {
	if os.Geteuid() == 0 {
		// root ignores directory permissions: use a path under a file
		// instead, which fails for every user.
	}
	dir := t.TempDir()
	blocker := filepath.Join(dir, "not-a-dir")
	if err := os.WriteFile(blocker, []byte("x"), 0o644); err != nil {
		t.Fatal(err)
	}
	path := filepath.Join(blocker, "session.yaml") // its parent is a file: every save fails
	p := &Procedure{Mode: BringUp, Steps: []*Step{
		{ID: "a", Title: "Measure B1", Kind: KindLive, Measures: []Measure{{Point: point.MustParse("B1 dc_volts"), Unit: "V", Function: FuncDCV}}},
	}}
	s := &Session{Design: DesignRef{File: "x", Hash: "h"}, Mode: BringUp}
	r := NewRunner(p, s, path, nil)
	r.Now = func() time.Time { return time.Date(2026, 1, 1, 0, 0, 0, 0, time.UTC) }
	if _, err := r.Enter(point.Key{}, "312"); err == nil {
		t.Fatal("saving into an unwritable place reported no error")
	}
	if r.SaveErr == nil {
		t.Fatal("SaveErr not set")
	}
	if len(s.Readings) != 1 || s.Readings[0].Value != 312 {
		t.Fatalf("reading lost from memory: %+v", s.Readings)
	}
	// The problem is fixed (the user frees space or picks another file):
	// a retry saves everything typed so far.
	r.Path = filepath.Join(dir, "session.yaml")
	if err := r.SaveNow(); err != nil {
		t.Fatal(err)
	}
	back, err := LoadSession(r.Path)
	if err != nil {
		t.Fatal(err)
	}
	if len(back.Readings) != 1 || back.Readings[0].Raw != "312" {
		t.Fatalf("retry saved %+v", back.Readings)
	}
}

// TestReadingQuestioned: a reading with the wrong unit is refused, an
// absurd magnitude is questioned until confirmed with "!".
func TestReadingQuestioned(t *testing.T) {
	m := &Measure{Point: point.MustParse("B1 dc_volts"), Unit: "V", Function: FuncDCV}
	band := &Band{Nominal: 300, Low: 290, High: 310}
	if _, err := ParseReading("4K7", m, band); err == nil || !strings.Contains(err.Error(), "resistance") {
		t.Errorf("4K7 for a voltage: got %v, want a unit error", err)
	}
	if _, err := ParseReading("12mA", m, band); err == nil {
		t.Error("12mA for a voltage accepted")
	}
	if _, err := ParseReading("2500000", m, band); !errors.Is(err, ErrQuestioned) {
		t.Errorf("2 500 000 V: got %v, want it questioned", err)
	}
	if v, err := ParseReading("2500000!", m, band); err != nil || v != 2.5e6 {
		t.Errorf("confirmed absurd reading: %v, %v", v, err)
	}
	if v, err := ParseReading("312", m, band); err != nil || v != 312 {
		t.Errorf("312: %v, %v", v, err)
	}
	for _, bad := range []string{"", "abc", "3..1", "NaN", "inf", "1e999", "--5"} {
		if _, err := ParseReading(bad, m, band); err == nil {
			t.Errorf("%q accepted as a reading", bad)
		}
	}
}

// TestCleanStaleTemps: only this session's temporary files, and only
// stale ones (writer gone, or older than StaleTempAge), are removed.
func TestCleanStaleTemps(t *testing.T) {
	dir := t.TempDir()
	path := filepath.Join(dir, "amp.pinwalk.yaml")
	now := time.Now()
	// A process id that is not running: a child that has exited.
	cmd := exec.Command(os.Args[0], "-test.run=^$")
	if err := cmd.Run(); err != nil {
		t.Fatal(err)
	}
	dead := strconv.Itoa(cmd.Process.Pid)
	live := strconv.Itoa(os.Getppid())
	files := map[string]bool{ // name: removed
		".amp.pinwalk.yaml.tmp-" + dead + "-123":     true,  // writer gone
		".amp.pinwalk.yaml.bak.tmp-" + dead + "-456": true,  // the .bak's, writer gone
		".amp.pinwalk.yaml.tmp-" + live + "-789":     false, // a running process: save in progress
		".amp.pinwalk.yaml.tmp-98765":                false, // older build's name, young
		".other.pinwalk.yaml.tmp-" + dead + "-1":     false, // another session's
		".amp.pinwalk.yaml.tmp-notes":                false, // not our pattern
		"amp.pinwalk.yaml":                           false,
	}
	for name := range files {
		if err := os.WriteFile(filepath.Join(dir, name), []byte("x"), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	oldName := ".amp.pinwalk.yaml.tmp-55555"
	os.WriteFile(filepath.Join(dir, oldName), []byte("x"), 0o644)
	old := now.Add(-2 * StaleTempAge)
	os.Chtimes(filepath.Join(dir, oldName), old, old)
	files[oldName] = true // older build's name, old
	os.Mkdir(filepath.Join(dir, ".amp.pinwalk.yaml.tmp-"+dead+"-9"), 0o755)
	files[".amp.pinwalk.yaml.tmp-"+dead+"-9"] = false // a directory: never ours

	CleanStaleTemps(path, now)
	for name, removed := range files {
		_, err := os.Stat(filepath.Join(dir, name))
		if gone := errors.Is(err, os.ErrNotExist); gone != removed {
			t.Errorf("%s: removed %v, want %v", name, gone, removed)
		}
	}
}

// TestDamagedSessionNamesBackup: the message for a damaged session says
// what the .bak really holds: absent, loading (with its readings), or
// damaged too.
func TestDamagedSessionNamesBackup(t *testing.T) {
	dir := t.TempDir()
	path := filepath.Join(dir, "s.yaml")
	s := &Session{Design: DesignRef{File: "demo", Hash: "ab12"}, Mode: BringUp}
	at := time.Date(2026, 1, 2, 3, 4, 5, 0, time.UTC)
	for i := 0; i < 3; i++ {
		s.Readings = append(s.Readings, Reading{Step: "live.B1", Point: point.MustParse("B1 dc_volts"), Raw: "312", Value: 312, Unit: "V", At: at, Status: InBand})
		if err := s.Save(path); err != nil {
			t.Fatal(err)
		}
	}
	damage := func() { os.WriteFile(path, []byte("pinwalk-session: 1\nreadings:\n  - step: [\n"), 0o644) }
	damage()
	_, err := LoadSession(path)
	if err == nil || !strings.Contains(err.Error(), "s.yaml.bak) loads cleanly and holds 2 readings") {
		t.Errorf("damaged, good .bak: %v", err)
	}
	os.WriteFile(path+".bak", nil, 0o644)
	_, err = LoadSession(path)
	if err == nil || !strings.Contains(err.Error(), "s.yaml.bak) cannot be used either") {
		t.Errorf("damaged, empty .bak: %v", err)
	}
	os.Remove(path + ".bak")
	_, err = LoadSession(path)
	if err == nil || !strings.Contains(err.Error(), "no previous save (s.yaml.bak)") {
		t.Errorf("damaged, no .bak: %v", err)
	}
}

// TestJobRoundTrip: the intake and close-out fields save and load back
// unchanged, and a session file from before them loads with them empty.
func TestJobRoundTrip(t *testing.T) {
	at := time.Date(2026, 1, 2, 15, 4, 5, 0, time.UTC)
	s := &Session{Pinwalk: SessionVersion, Design: DesignRef{File: "demo", Title: "t", Hash: "ab12"}, Mode: FaultFind,
		Started: at, Updated: at,
		Bench: Bench{Mains: 231, Meter: "bench DMM, ±(0.5 % + 2), CAT III 1000 V", Who: "Tech B", AmpID: "Demo Amps SE-20", Serial: "0042"},
		Job: Job{Customer: "A. Customer (invented)", Complaint: "hums loudly, then goes quiet after ten minutes",
			Visual: []string{"C2 top bulging", "scorch mark beside R20"},
			Parts:  []PartChange{{Ref: "C2", Value: "100µF", Rating: "450 V 105 °C", Reason: "bulging, leaky", At: at}},
			After: AfterRepair{
				EarthBond:  &SafetyTest{Ohms: 0.08, Raw: "0.08", Instrument: EarthBondTester, TestAmps: 10, At: at},
				Insulation: &SafetyTest{Ohms: 200e6, Raw: ">200M", Instrument: InsulationTester, TestVolts: 500, At: at},
				PowerOut:   []PowerOut{{Channel: "left", Watts: 4.6, LoadOhms: 8, Hz: 1000, Note: "onset of clipping", At: at}},
				Soak:       &Soak{Duration: 90 * time.Minute, Note: "no change", At: at},
			},
			SignOff: &SignOff{Name: "Tech B", At: at}},
		Readings: []Reading{{Step: "live.B1", Point: point.MustParse("B1 dc_volts"), Raw: "312", Value: 312, Unit: "V", At: at, Status: InBand}}}
	path := filepath.Join(t.TempDir(), "job.yaml")
	if err := s.Save(path); err != nil {
		t.Fatal(err)
	}
	back, err := LoadSession(path)
	if err != nil {
		t.Fatal(err)
	}
	back.cleaned = s.cleaned
	if !reflect.DeepEqual(back, s) {
		t.Errorf("round trip changed the session:\n got %+v\nwant %+v", back.Job, s.Job)
	}
	data, _ := os.ReadFile(path)
	for _, want := range []string{"customer:", "complaint:", "parts-replaced:", "earth-bond:", "instrument: insulation-tester", "duration: 1h30m0s", "sign-off:", "serial:"} {
		if !strings.Contains(string(data), want) {
			t.Errorf("saved file lacks %q", want)
		}
	}
	old, err := LoadSession("../testdata/sessions/se-6v6-bringup.yaml")
	if err != nil {
		t.Fatal(err)
	}
	if !reflect.DeepEqual(old.Job, Job{}) {
		t.Errorf("a session from before the job fields: %+v", old.Job)
	}
	// A wrong instrument kind names the field and what was expected.
	bad := strings.Replace(string(data), "instrument: insulation-tester", "instrument: clamp meter", 1)
	_, err = ParseSession("bad.yaml", []byte(bad))
	var se *SessionError
	if !errors.As(err, &se) || se.Field != "job.after-repair.insulation.instrument" || !strings.Contains(se.Msg, "expected earth-bond-tester") {
		t.Errorf("bad instrument: %v", err)
	}
}

// TestReadingACDC: an AC reading may carry the qualifier a meter's
// display or a habit puts on it (6.4 VAC, 6.4VAC, 6.4 V AC, 6.4 V~); a
// qualifier that contradicts the step's meter function is refused with
// what to set; text that is no reading gets the forms of a reading of
// the step's quantity, never resistor codes on a voltage step.
func TestReadingACDC(t *testing.T) {
	heater := &Measure{Point: point.MustParse("V1.4 ac_volts"), Unit: "V", Function: FuncACV}
	hb := &Band{Nominal: 6.3, Low: 5.9, High: 6.7}
	for _, s := range []string{"6.4 VAC", "6.4VAC", "6.4 V AC", "6.4 vac", "6.4 V~", "6.4 Vrms", "6.4 AC", "6.4", "6.4V", "6400mV AC"} {
		if v, err := ParseReading(s, heater, hb); err != nil || math.Abs(v-6.4) > 1e-9 {
			t.Errorf("%q on an AC volts step: %v, %v", s, v, err)
		}
	}
	if _, err := ParseReading("6.4 VDC", heater, hb); err == nil || !strings.Contains(err.Error(), "AC V") {
		t.Errorf("6.4 VDC on an AC step: %v, want the meter set to AC V", err)
	}
	dc := &Measure{Point: point.MustParse("B1 dc_volts"), Unit: "V", Function: FuncDCV}
	band := &Band{Nominal: 300, Low: 280, High: 320}
	for _, s := range []string{"289", "289V", "289 VDC", "289 V DC", "289VDC"} {
		if v, err := ParseReading(s, dc, band); err != nil || v != 289 {
			t.Errorf("%q on a DC volts step: %v, %v", s, v, err)
		}
	}
	if _, err := ParseReading("289 VAC", dc, band); err == nil || !strings.Contains(err.Error(), "DC V") {
		t.Errorf("289 VAC on a DC step: %v, want the meter set to DC V", err)
	}
	for _, bad := range []string{"abc", "hum", "3..1", "289 volts please", "6.4 VX"} {
		_, err := ParseReading(bad, dc, band)
		if err == nil {
			t.Errorf("%q accepted", bad)
			continue
		}
		msg := err.Error()
		for _, want := range []string{"289", "289V"} {
			if !strings.Contains(msg, want) {
				t.Errorf("%q: the error %q does not suggest %s", bad, msg, want)
			}
		}
		for _, rkm := range []string{"4K7", "470R", "100n"} {
			if strings.Contains(msg, rkm) {
				t.Errorf("%q on a voltage step: the error %q suggests a resistor code %s", bad, msg, rkm)
			}
		}
	}
	// A resistance step still shows resistance forms; 4K7 is no AC reading.
	ohm := &Measure{Point: point.MustParse("cold:B1 ohms"), Unit: "Ω", Function: FuncOhms}
	if v, err := ParseReading("4K7", ohm, nil); err != nil || v != 4700 {
		t.Errorf("4K7 on an ohms step: %v, %v", v, err)
	}
	if _, err := ParseReading("abc", ohm, nil); err == nil || !strings.Contains(err.Error(), "4K7") {
		t.Errorf("abc on an ohms step: %v, want resistance forms", err)
	}
}
