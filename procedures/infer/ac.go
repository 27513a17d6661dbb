package infer

import (
	"fmt"
	"math"
	"math/cmplx"
	"strings"

	"pinwalk/expect/ac"
	"pinwalk/expect/amp"
	"pinwalk/expect/bands"
	"pinwalk/expect/design"
)

// AC evidence: test-tone levels (quantity ac.ToneVolts, keys like
// "V2.5 tone_volts", sampled in every hypothesis's cloud through
// bands.Options.Extra when Options.Tone is set) and supply ripple
// (amp.RippleVolts, a DC-model point), read with an AC meter whose
// response (true rms or average-responding) and bandwidth shape what it
// shows.

// Response is how an AC meter turns a waveform into a reading.
type Response string

// AC meter responses.
const (
	// TrueRMS meters read the rms of any waveform within their bandwidth.
	TrueRMS Response = "true-rms"
	// Average-responding meters rectify, average and scale by the sine's
	// form factor π/(2√2) ≈ 1.1107: they read a sine correctly and any
	// other waveform in error by the ratio of its form factor to the
	// sine's.
	Average Response = "average"
)

// ParseResponse reads "true-rms" ("trms", "rms") or "average" ("avg",
// "mean"); "" gives TrueRMS.
func ParseResponse(s string) (Response, error) {
	switch strings.ToLower(strings.TrimSpace(s)) {
	case "", "true-rms", "truerms", "trms", "rms":
		return TrueRMS, nil
	case "average", "avg", "mean", "average-responding":
		return Average, nil
	}
	return "", fmt.Errorf("AC meter %q: expected true-rms or average", s)
}

// ACMeter is the meter AC readings (tone levels, ripple) are taken with.
// The zero value is a true-rms meter, flat at every frequency of interest.
type ACMeter struct {
	Response Response // "" means TrueRMS
	// BandwidthHz is the top of the meter's specified AC frequency range
	// (a handheld meter's data sheet gives e.g. "40 Hz – 400 Hz": the
	// reading is within its accuracy up to there, common practice). 0
	// means flat. Above it the meter reads low: we model it as a single
	// pole whose loss at BandwidthHz equals the AC accuracy
	// (ACAccuracyPct), |H(f)| = 1/√(1+(f/fc)²) with
	// fc = BandwidthHz/√((1−a)⁻² − 1), and take the correction's own size
	// as its uncertainty (the response beyond the rated range is not
	// specified). A 400 Hz meter then reads a 1 kHz tone about 6 % low.
	BandwidthHz float64
}

// ACAccuracyPct is the AC-volts accuracy the bandwidth pole is set by: the
// typical handheld meter's (bands.TypicalSpecs, the one figure every AC
// reading's σ and band also use).
var ACAccuracyPct = bands.TypicalSpecs[amp.ACVolts].Pct

// SineFormFactor is a sine's rms over its mean absolute value, π/(2√2):
// the scale an average-responding meter applies to its rectified mean.
var SineFormFactor = math.Pi / (2 * math.Sqrt2)

// SawtoothAverageRatio is what an average-responding meter shows on a
// sawtooth divided by its true rms: a sawtooth of peak-to-peak Vpp has rms
// Vpp/(2√3) and mean absolute value Vpp/4 (closed forms, e.g. the ripple
// of a capacitor-input filter, Schade 1943), so the meter shows
// SineFormFactor·Vpp/4 and the ratio is π√6/8 ≈ 0.962: it reads about
// 3.8 % low.
var SawtoothAverageRatio = math.Pi * math.Sqrt(6) / 8

func (m ACMeter) response() Response {
	if m.Response == "" {
		return TrueRMS
	}
	return m.Response
}

// set reports whether the meter was described at all.
func (m ACMeter) set() bool { return m.Response != "" || m.BandwidthHz > 0 }

// cornerHz returns the single pole's corner (Inf when flat).
func (m ACMeter) cornerHz() float64 {
	if m.BandwidthHz <= 0 {
		return math.Inf(1)
	}
	a := ACAccuracyPct / 100
	return m.BandwidthHz / math.Sqrt(1/((1-a)*(1-a))-1)
}

// Gain returns the meter's response at hz: 1 when flat, else the single
// pole's magnitude (see BandwidthHz).
func (m ACMeter) Gain(hz float64) float64 {
	fc := m.cornerHz()
	if math.IsInf(fc, 1) {
		return 1
	}
	return 1 / math.Sqrt(1+(hz/fc)*(hz/fc))
}

// Waveform is a periodic waveform by its Fourier coefficients: x(t) =
// Σ_k Im(C[k−1]·e^{jkωt}), k = 1…len(C).
type Waveform struct {
	Hz float64 // fundamental
	C  []complex128
}

// Sine returns a sine of rms 1 at hz.
func Sine(hz float64) Waveform { return Waveform{Hz: hz, C: []complex128{complex(math.Sqrt2, 0)}} }

// sawHarmonics is the number of harmonics a sawtooth is built from: the
// truncated series' mean absolute value is within 0.1 % of Vpp/4.
const sawHarmonics = 400

// Sawtooth returns a sawtooth at hz (x = Σ (−1)^{k+1} sin(kωt)/k, a ramp
// from −π/2 to π/2), truncated to sawHarmonics harmonics.
func Sawtooth(hz float64) Waveform {
	c := make([]complex128, sawHarmonics)
	for k := 1; k <= sawHarmonics; k++ {
		s := 1.0
		if k%2 == 0 {
			s = -1
		}
		c[k-1] = complex(s/float64(k), 0)
	}
	return Waveform{Hz: hz, C: c}
}

// Smoothed returns the waveform after a well-filtered smoothing section
// (the ripple at each later filter net): an RC section multiplies harmonic
// k by 1/(jkωRC) and an LC section by −1/(k²ω²LC) (Radiotron Designer's
// Handbook, 4th ed., ch. 31: a section's ripple attenuation 1/(ωRC) or
// 1/(ω²LC) when it filters well); only the shape matters here, so the
// common factor is dropped.
func (w Waveform) Smoothed(lc bool) Waveform {
	c := make([]complex128, len(w.C))
	for i, x := range w.C {
		k := float64(i + 1)
		if lc {
			c[i] = -x / complex(k*k, 0)
		} else {
			c[i] = x / complex(0, k)
		}
	}
	return Waveform{Hz: w.Hz, C: c}
}

// RMS returns the true rms of the waveform (Parseval).
func (w Waveform) RMS() float64 {
	s := 0.0
	for _, c := range w.C {
		a := cmplx.Abs(c)
		s += a * a / 2
	}
	return math.Sqrt(s)
}

// readSteps samples one period for the average-responding detector.
const readSteps = 4096

// Reading returns what the meter shows for the waveform: its harmonics
// through the meter's single pole, then the rms (TrueRMS) or the mean
// absolute value times SineFormFactor (Average), by sampling one period.
func (m ACMeter) Reading(w Waveform) float64 {
	fc := m.cornerHz()
	c := make([]complex128, len(w.C))
	for i, x := range w.C {
		k := float64(i + 1)
		if math.IsInf(fc, 1) {
			c[i] = x
		} else {
			c[i] = x / complex(1, k*w.Hz/fc)
		}
	}
	f := Waveform{Hz: w.Hz, C: c}
	if m.response() == TrueRMS {
		return f.RMS()
	}
	// Mean |x| over one period; x(t) = Σ Im(c_k e^{jkθ}) by the
	// recurrence e^{jkθ} = e^{j(k−1)θ}·e^{jθ}.
	sum := 0.0
	for n := range readSteps {
		th := 2 * math.Pi * (float64(n) + 0.5) / readSteps
		step := cmplx.Rect(1, th)
		e := step
		x := 0.0
		for _, ck := range c {
			x += imag(ck * e)
			e *= step
		}
		sum += math.Abs(x)
	}
	return SineFormFactor * sum / readSteps
}

// Ratio is the meter's reading of the waveform over its true rms.
func (m ACMeter) Ratio(w Waveform) float64 { return m.Reading(w) / w.RMS() }

// IsTone reports whether a key is a test-tone point ("V2.5 tone_volts").
func IsTone(key string) bool { return strings.HasSuffix(key, " "+ac.ToneVolts) }

// NoTone wraps a probe predicate to leave out the tone points: for a bench
// where the tone generator or the dummy load is not set up.
func NoTone(allowed func(string) bool) func(string) bool {
	return func(k string) bool { return !IsTone(k) && (allowed == nil || allowed(k)) }
}

// CostTone is the effort of a tone reading: the amplifier is live with a
// generator on the input and a dummy load on the output (our scale, as
// CostVolts).
const CostTone = 2.0

// initTone solves the healthy nominal once for the tone point list and
// sets e.tone; it does nothing when Options.Tone is nil.
func (e *Engine) initTone() error {
	if e.opt.Tone == nil {
		return nil
	}
	t := *e.opt.Tone
	if t.Hz <= 0 {
		t.Hz = ac.DefaultHz
	}
	if t.Volts <= 0 {
		t.Volts = ac.DefaultVolts
	}
	e.opt.Tone = &t
	v := e.m.NominalValues()
	var op amp.OP
	if err := amp.NewSolver(e.m).Solve(e.opt.Cond, v, false, &op); err != nil {
		return fmt.Errorf("infer: tone: the healthy amplifier does not solve: %w", err)
	}
	x, err := ac.ToneExtra(e.m, &op, v, t)
	if err != nil {
		return fmt.Errorf("infer: tone: %w", err)
	}
	// Levels below a microvolt are nothing a bench meter shows: zero them
	// (no float noise such as 1e-25 V in the explanations).
	inner := x.New
	x.New = func(m *amp.Model) (func(op *amp.OP, v *amp.Values, dst []float64) error, error) {
		ev, err := inner(m)
		if err != nil {
			return nil, err
		}
		return func(op *amp.OP, v *amp.Values, dst []float64) error {
			err := ev(op, v, dst)
			for i, y := range dst {
				if math.Abs(y) < 1e-6 {
					dst[i] = 0
				}
			}
			return err
		}, nil
	}
	e.tone = x
	e.toneUnc = 1 - e.opt.ACMeter.Gain(t.Hz)
	return nil
}

// addACPoints appends the tone points (when the tone is set up) and sets
// the AC meter's response on tone and ripple points: a tone is a sine, so
// both responses read it, times the meter's gain at the tone; ripple at
// the reservoir of a capacitor-input filter is a sawtooth, and each
// smoothing section after it integrates it once (RC) or twice (LC), which
// an average-responding meter reads low by its form factor. Call after the
// model's DC points.
func (e *Engine) addACPoints() {
	if e.tone != nil {
		r := e.opt.ACMeter.Gain(e.opt.Tone.Hz)
		for _, pd := range e.tone.Points {
			e.addPoint(point{key: pd.Key(), label: pd.Label + " (test tone)", quantity: pd.Quantity, pd: pd, ratio: r})
		}
	}
	if !e.opt.ACMeter.set() || e.m.HT == nil {
		return
	}
	for i, r := range rippleRatios(e.m, e.opt.ACMeter) {
		if k, ok := e.index[e.m.HT.Nets[i]+" "+amp.RippleVolts]; ok {
			e.points[k].ratio = r
		}
	}
}

// rippleRatios returns, per HT filter net, the meter's reading of the
// ripple there over its true rms (see addACPoints).
func rippleRatios(m *amp.Model, mt ACMeter) []float64 {
	ht := m.HT
	hz := ac.RippleHz(m, nil)
	waves := make([]Waveform, len(ht.Nets))
	out := make([]float64, len(ht.Nets))
	for i := range ht.Nets {
		p := -1
		if i < len(ht.Parent) {
			p = ht.Parent[i]
		}
		if p < 0 || p >= i {
			waves[i] = Sawtooth(hz)
		} else {
			lc := false
			if ref := ht.SeriesRefs[i]; ref != "" {
				if part := m.D.ByRef[ref]; part != nil && part.Kind == design.Choke {
					lc = true
				}
			}
			waves[i] = waves[p].Smoothed(lc)
		}
		out[i] = mt.Ratio(waves[i])
	}
	return out
}

// sigma is the σ of a reading of x at a point of quantity q, as every band
// builds it (bands.ReadingSigma: the model error of the point's kind and
// the meter's error on the function and range in use): a tone point is an
// AC-volts reading with the tone model's error (bands.ModelTone) and, in
// quadrature, the meter's unspecified response beyond its bandwidth.
func (e *Engine) sigma(q string, x float64) float64 {
	if q == ac.ToneVolts {
		s := bands.ReadingSigma(amp.ACVolts, x, bands.ModelTone, e.opt.Meter)
		return math.Hypot(s, e.toneUnc*x)
	}
	return sigmaOf(q, x, e.opt.Meter)
}

// accuracy is the meter's error limit on a reading x of quantity q (the
// simulated reading's noise).
func (e *Engine) accuracy(q string, x float64) float64 {
	switch {
	case q == amp.Ohms:
		lim, _ := bands.DigitalMeter.ErrorLimit(q, x)
		return lim
	case q == ac.ToneVolts:
		q = amp.ACVolts
	}
	lim, _ := e.opt.Meter.ErrorLimit(q, x) // on the quantity's own function and range
	return lim
}

// toneSetup says how to take a tone reading.
func (e *Engine) toneSetup(p *point) string {
	t := e.opt.Tone
	in := t.InputNet
	if in == "" {
		if an, err := ac.New(e.m); err == nil {
			in = an.InputNet()
		}
	}
	where := p.pd.ID
	if strings.HasSuffix(p.pd.ID, ac.SpeakerSuffix) {
		where = "across the speaker terminals of " + strings.TrimSuffix(p.pd.ID, ac.SpeakerSuffix) + " (dummy load connected)"
	} else if ref, pin, ok := amp.ParseID(p.pd.ID); ok {
		where = fmt.Sprintf("%s pin %d (net %s) to chassis", ref, pin, p.pd.Net)
	}
	s := fmt.Sprintf("powered, with a dummy load of the rated impedance on every output (never run an output stage without a load) and a sine tone of %s rms at %s into net %s: meter on AC volts %s; on a plate the AC range must block the DC (most meters' AC volts do; else a 0.1 µF capacitor rated for the HT in series)",
		fmtQ(t.Volts, ac.ToneVolts), fmtHz(t.Hz), in, where)
	if bw := e.opt.ACMeter.BandwidthHz; bw > 0 && t.Hz > bw {
		s += fmt.Sprintf("; the meter is specified to %s only: it reads the %s tone about %.0f %% low (allowed for)", fmtHz(bw), fmtHz(t.Hz), 100*(1-e.opt.ACMeter.Gain(t.Hz)))
	}
	return s
}

func fmtHz(hz float64) string {
	if hz >= 1000 {
		return fmt.Sprintf("%g kHz", hz/1000)
	}
	return fmt.Sprintf("%g Hz", hz)
}
