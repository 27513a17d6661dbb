package procedures

import (
	"os"
	"path/filepath"
	"pinwalk/expect/point"
	"testing"
	"time"
)

// FuzzParseSession feeds arbitrary bytes to the session loader: it must
// never panic, errors must carry a position inside the file, and a
// session that loads must save and load again to the same readings.
func FuzzParseSession(f *testing.F) {
	files, _ := filepath.Glob("../testdata/sessions/*.yaml")
	for _, p := range files {
		if data, err := os.ReadFile(p); err == nil {
			f.Add(data)
		}
	}
	s := &Session{Pinwalk: SessionVersion, Design: DesignRef{File: "demo", Hash: "ab12"}, Mode: BringUp,
		Started:  time.Date(2026, 1, 2, 3, 4, 5, 0, time.UTC),
		Readings: []Reading{{Step: "live.B1", Point: point.MustParse("B1 dc_volts"), Raw: "312", Value: 312, Unit: "V", Status: InBand}},
		// Intake and close-out fields, so the fuzzer starts from them too.
		Job: Job{Customer: "c", Complaint: "hum", Visual: []string{"C2 bulging"},
			Parts: []PartChange{{Ref: "C2", Value: "100µF", Rating: "450 V", Reason: "bulging"}},
			After: AfterRepair{EarthBond: &SafetyTest{Ohms: 0.05, Instrument: Multimeter},
				Insulation: &SafetyTest{Ohms: 5e8, Instrument: InsulationTester, TestVolts: 500},
				PowerOut:   []PowerOut{{Channel: "left", Watts: 5, LoadOhms: 8}}, Soak: &Soak{Duration: time.Hour}},
			SignOff: &SignOff{Name: "t"}}}
	dir := f.TempDir()
	if err := s.Save(filepath.Join(dir, "s.yaml")); err == nil {
		data, _ := os.ReadFile(filepath.Join(dir, "s.yaml"))
		f.Add(data)
		f.Add(data[:len(data)/2]) // truncated
	}
	f.Add([]byte("pinwalk-session: 1\nmode: nonsense\n"))
	f.Fuzz(func(t *testing.T, data []byte) {
		s, err := ParseSession("fuzz.yaml", data)
		if err != nil {
			se, ok := err.(*SessionError)
			if !ok {
				t.Fatalf("error is %T, want *SessionError: %v", err, err)
			}
			if se.Line < 1 || se.Field == "" {
				t.Fatalf("error without place: %v", se)
			}
			return
		}
		path := filepath.Join(t.TempDir(), "s.yaml")
		if err := s.Save(path); err != nil {
			t.Fatalf("save: %v", err)
		}
		s2, err := LoadSession(path)
		if err != nil {
			t.Fatalf("reload: %v", err)
		}
		if len(s2.Readings) != len(s.Readings) {
			t.Fatalf("readings %d after reload, %d before", len(s2.Readings), len(s.Readings))
		}
	})
}
