package bands

import (
	"math"
	"math/rand/v2"
	"sort"
	"strings"
	"testing"

	"pinwalk/expect/amp"
	"pinwalk/expect/design"
	"pinwalk/expect/valves"
)

const (
	demoA = "../../testdata/designs/se-6v6-stereo.yaml"
	demoB = "../../testdata/designs/pp-el34-fixed.yaml"
)

func load(t testing.TB, path string) *design.Design {
	t.Helper()
	d, probs := design.Load(path)
	if errs := probs.Errors(); len(errs) > 0 || d == nil {
		t.Fatalf("load %s: %v", path, errs)
	}
	return d
}

func run(t testing.TB, d *design.Design, opt Options) *Set {
	t.Helper()
	s, err := Run(d, opt)
	if err != nil {
		t.Fatalf("Run: %v", err)
	}
	if s.Failed > 0 {
		t.Fatalf("%d of %d samples failed: %v", s.Failed, s.Samples, s.FailErrs)
	}
	return s
}

func band(t testing.TB, s *Set, key string) Band {
	t.Helper()
	b, err := s.BandOf(key)
	if err != nil {
		t.Fatal(err)
	}
	return b
}

// New valves of one type show roughly ±20–30 % plate-current spread (95 %)
// at the same electrode voltages (common practice). Measure the spread
// SpreadKoren gives at a datasheet row.
func TestKorenSpread(t *testing.T) {
	cases := []struct {
		valve string
		row   int
	}{
		{"12AX7", 0}, // 250 V, −2 V, 1.2 mA: RCA / GE 12AX7 data sheet (from memory)
		{"EL34", 0},  // 250 V, 250 V, −13.5 V, 100 mA: Philips EL34 data (from memory)
	}
	for _, c := range cases {
		vt, ok := valves.Lookup(c.valve)
		if !ok {
			t.Fatalf("no %s in the library", c.valve)
		}
		row := vt.Rows[c.row]
		pentode := vt.Kind == valves.Pentode
		ia := func(k valves.Koren) float64 {
			if pentode {
				ip, _, _, _ := k.Pentode(row.Vg1, row.Vg2, row.Va)
				return ip
			}
			ip, _, _ := k.TriodePlate(row.Vg1, row.Va)
			return ip
		}
		nom := ia(vt.Model)
		const n = 20000
		xs := make([]float64, n)
		for i := range xs {
			r := rand.New(rand.NewPCG(42, uint64(i)))
			xs[i] = ia(SpreadKoren(r, vt.Model, pentode)) / nom
		}
		sort.Float64s(xs)
		lo, hi := xs[n*25/1000], xs[n*975/1000]
		half := (hi - lo) / 2
		t.Logf("%s at %g V / %g V: Ia 95 %% interval %.3f–%.3f of nominal (±%.1f %%)", c.valve, row.Va, row.Vg1, lo, hi, 100*half)
		if half < 0.20 || half > 0.30 {
			t.Errorf("%s: Ia spread ±%.1f %% (95 %%), want ±20–30 %% (common practice)", c.valve, 100*half)
		}
		if lo < 0.65 || hi > 1.40 {
			t.Errorf("%s: interval %.3f–%.3f is lopsided", c.valve, lo, hi)
		}
	}
}

// Every band contains its nominal value (the nominal parts are inside every
// tolerance), and bands are not degenerate where parts vary.
func TestBandsContainNominal(t *testing.T) {
	for _, path := range []string{demoA, demoB} {
		d := load(t, path)
		s := run(t, d, Options{Samples: 400, Seed: 3})
		if len(s.Values) != 400 || s.ESS != 400 {
			t.Fatalf("%s: %d samples, ESS %g", path, len(s.Values), s.ESS)
		}
		for i, pd := range s.Points {
			b := s.Band(i)
			slack := 1e-9 * max(1, math.Abs(b.Nominal))
			if !(b.Low-slack <= b.Nominal && b.Nominal <= b.High+slack) {
				t.Errorf("%s: %s nominal %g outside its band %g–%g", path, pd.Key(), b.Nominal, b.Low, b.High)
			}
		}
		// A plate voltage must have a real spread: resistors 5 %, mains,
		// transformer and valves all move it.
		b := band(t, s, "B2 dc_volts")
		if b.Width() < 0.03*b.Nominal {
			t.Errorf("%s: B2 band %g–%g is implausibly narrow", path, b.Low, b.High)
		}
	}
}

// Widening one resistor's tolerance widens the bands that depend on it and
// leaves the other channel's nearly alone. Demo a: R11 is the left
// driver's plate load (PL1); PR1 is the right channel's.
func TestWiderToleranceWiderBand(t *testing.T) {
	d := load(t, demoA)
	s1 := run(t, d, Options{Samples: 600, Seed: 11})
	d2 := load(t, demoA)
	d2.ByRef["R11"].Tol = design.Tolerance{Lo: -0.20, Hi: 0.20}
	s2 := run(t, d2, Options{Samples: 600, Seed: 11})
	l1, l2 := band(t, s1, "PL1 dc_volts"), band(t, s2, "PL1 dc_volts")
	r1, r2 := band(t, s1, "PR1 dc_volts"), band(t, s2, "PR1 dc_volts")
	t.Logf("PL1 width %.2f V → %.2f V; PR1 %.2f V → %.2f V", l1.Width(), l2.Width(), r1.Width(), r2.Width())
	if l2.Width() < 1.5*l1.Width() {
		t.Errorf("PL1 band widened only from %.3g to %.3g V with R11 at 20 %%", l1.Width(), l2.Width())
	}
	// R11 reaches PR1 only through the shared B4 rail (its current drops
	// in R3), so PR1's band may move a little, far less than PL1's.
	if math.Abs(r2.Width()-r1.Width()) > 0.10*r1.Width() {
		t.Errorf("PR1 band moved from %.3g to %.3g V; R11 barely touches it", r1.Width(), r2.Width())
	}
}

// A fixed seed reproduces exactly, whatever the number of workers; another
// seed gives other samples.
func TestSeedAndWorkers(t *testing.T) {
	d := load(t, demoA)
	ref := run(t, d, Options{Samples: 230, Seed: 7, Workers: 1})
	for _, w := range []int{1, 2, 3} {
		s := run(t, d, Options{Samples: 230, Seed: 7, Workers: w})
		for j := range ref.Values {
			for i := range ref.Values[j] {
				if s.Values[j][i] != ref.Values[j][i] {
					t.Fatalf("workers %d: sample %d %s = %v, want %v (workers 1)", w, j, s.Points[i].Key(), s.Values[j][i], ref.Values[j][i])
				}
			}
		}
	}
	other := run(t, d, Options{Samples: 230, Seed: 8})
	i, _ := other.Index("B1 dc_volts")
	if other.Values[0][i] == ref.Values[0][i] {
		t.Errorf("seed 8 gave the same first sample as seed 7")
	}
}

// Failed samples are counted and kept out of the bands, never dropped
// silently: a hook that rejects every sample with R11 above nominal fails
// about half of them.
func TestFailedSamplesCounted(t *testing.T) {
	d := load(t, demoA)
	opt := Options{Samples: 200, Seed: 5, Values: func(m *amp.Model, v *amp.Values) error {
		r11 := m.SlotsOf("R11")[0]
		if v.Slot[r11] > m.Nominal[r11] {
			return errTest
		}
		return nil
	}}
	s, err := Run(d, opt)
	if err != nil {
		t.Fatal(err)
	}
	if s.Failed+len(s.Values) != s.Samples || s.Failed < 60 || s.Failed > 140 {
		t.Fatalf("failed %d, converged %d of %d", s.Failed, len(s.Values), s.Samples)
	}
	if len(s.FailErrs) != 1 || !strings.Contains(s.FailErrs[0], "test rejection") {
		t.Errorf("FailErrs = %q", s.FailErrs)
	}
}

type testErr string

func (e testErr) Error() string { return string(e) }

const errTest = testErr("test rejection")

// Weighted percentiles with equal weights follow Hazen's plotting position
// (k − ½)/n: for the values 0..99, the 2.5th percentile is 2 and the 97.5th
// is 97 (closed form).
func TestPercentilesHazen(t *testing.T) {
	s := &Set{Nominal: []float64{50}}
	for k := 99; k >= 0; k-- {
		s.Values = append(s.Values, []float64{float64(k)})
		s.Weights = append(s.Weights, 1)
	}
	lo, hi := s.Percentiles(0, 0.025, 0.975)
	if math.Abs(lo-2) > 1e-12 || math.Abs(hi-97) > 1e-12 {
		t.Errorf("percentiles %g, %g; want 2, 97", lo, hi)
	}
	// Doubling the weight of the upper half moves the median up.
	for j, row := range s.Values {
		if row[0] >= 50 {
			s.Weights[j] = 2
		}
	}
	med, _ := s.Percentiles(0, 0.5, 0.5)
	if med <= 50 {
		t.Errorf("weighted median %g, want above 50", med)
	}
}

// Variac bring-up: at 25 % the heaters are cold, the valves barely conduct
// and B+ sits at its no-load (cold-start) peak; at full mains the load
// pulls it well below (demo a, net B1).
func TestVariacB1NearColdPeak(t *testing.T) {
	d := load(t, demoA)
	steps, err := VariacSteps(d, Options{Samples: 100, Seed: 1}, []float64{0.25, 1})
	if err != nil {
		t.Fatal(err)
	}
	var ratio [2]float64
	for k, st := range steps {
		if st.Set.Failed > 0 {
			t.Fatalf("variac %g: %v", st.Variac, st.Set.FailErrs)
		}
		peaks, err := ColdPeaks(d, amp.Conditions{Variac: st.Variac})
		if err != nil {
			t.Fatal(err)
		}
		if peaks[0].Net != "B1" {
			t.Fatalf("first filter net %s, want B1", peaks[0].Net)
		}
		ratio[k] = band(t, st.Set, "B1 dc_volts").Nominal / peaks[0].Nominal
		if peaks[0].HighMains <= peaks[0].Nominal {
			t.Errorf("cold peak at high mains %g not above nominal %g", peaks[0].HighMains, peaks[0].Nominal)
		}
	}
	t.Logf("B1 / cold peak: %.4f at 25 %%, %.4f at 100 %%", ratio[0], ratio[1])
	if !(ratio[0] > ratio[1]) || ratio[0] < 0.98 || ratio[0] > 1.0001 {
		t.Errorf("B1/peak = %.4f at 25 %% and %.4f at 100 %%: want the 25 %% one at the peak (≥ 0.98) and above the 100 %% one", ratio[0], ratio[1])
	}
	// And the output valves barely conduct at 25 % (emission collapse,
	// Richardson–Dushman): under 1 % of their full-mains current.
	lo := band(t, steps[0].Set, "V2.3 dc_amps")
	hi := band(t, steps[1].Set, "V2.3 dc_amps")
	if lo.High > 0.01*hi.Nominal {
		t.Errorf("V2 plate current at 25 %% variac up to %g A, full mains %g A", lo.High, hi.Nominal)
	}
}

func BenchmarkBands1000DemoA(b *testing.B) {
	d := load(b, demoA)
	for b.Loop() {
		s, err := Run(d, Options{Samples: 1000, Seed: 1, Workers: 2})
		if err != nil || s.Failed > 0 {
			b.Fatal(err, s.FailErrs)
		}
	}
}
