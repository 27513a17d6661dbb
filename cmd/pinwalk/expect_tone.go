package main

import (
	"fmt"
	"io"
	"strings"

	"pinwalk/expect/ac"
	"pinwalk/expect/amp"
	"pinwalk/expect/bands"
	"pinwalk/expect/units"
)

// parseTone reads FREQ:LEVEL ("1kHz:100mV", "400:0.5V"); either part may
// be left out ("1kHz", ":50mV").
func parseTone(s string) (ac.Options, error) {
	// One generator on every input (both channels of a stereo amp).
	opt := ac.Options{Hz: ac.DefaultHz, Volts: ac.DefaultVolts, AllInputs: true}
	f, l, _ := strings.Cut(s, ":")
	if f = strings.TrimSpace(f); f != "" {
		hz, err := units.Parse(f, units.Hertz)
		if err != nil || hz < 1 || hz > 200e3 {
			return opt, fmt.Errorf("%q: expected a frequency from 1 Hz to 200 kHz, like 1kHz", f)
		}
		opt.Hz = hz
	}
	if l = strings.TrimSpace(l); l != "" {
		v, err := units.Parse(l, units.Volts)
		if err != nil || v <= 0 || v > 100 {
			return opt, fmt.Errorf("%q: expected a tone level in rms volts, like 100mV", l)
		}
		opt.Volts = v
	}
	return opt, nil
}

// toneExtra solves the nominal point (with any faults) and returns the
// tone points as extra Monte Carlo points, and the notes of the stages
// that clip at the nominal point.
func toneExtra(m *amp.Model, opt bands.Options, topt ac.Options) (*bands.Extra, []string, error) {
	v := m.NominalValues()
	if opt.Values != nil {
		if err := opt.Values(m, v); err != nil {
			return nil, nil, err
		}
	}
	var op amp.OP
	if err := amp.NewSolver(m).Solve(opt.Cond, v, false, &op); err != nil {
		return nil, nil, err
	}
	an, err := ac.New(m)
	if err != nil {
		return nil, nil, err
	}
	if _, err := an.Tone(&op, v, topt, nil); err != nil {
		return nil, nil, err
	}
	var notes []string
	for _, c := range an.Clips() {
		notes = append(notes, c.String())
	}
	x, err := ac.ToneExtra(m, &op, v, topt)
	return x, notes, err
}

// addTonePoints appends the tone points of a set to the report.
func addTonePoints(rep *jsonReport, set *bands.Set) {
	for i, pd := range set.Points {
		if pd.Quantity != ac.ToneVolts {
			continue
		}
		b := set.Band(i)
		for _, x := range []*float64{&b.Nominal, &b.Low, &b.High} {
			if *x < 1e-6 {
				*x = 0 // below a microvolt: nothing a bench meter shows
			}
		}
		rep.Points = append(rep.Points, jsonPoint{ID: pd.ID, Quantity: pd.Quantity, Unit: "V", Nominal: round(b.Nominal),
			Low: round(min(b.Low, b.Nominal)), High: round(max(b.High, b.Nominal)), Label: pd.Label, Net: pd.Net})
	}
}

// printTone prints the tone section of the text report.
func printTone(w io.Writer, rep *jsonReport) {
	first := true
	for _, p := range rep.Points {
		if p.Quantity != ac.ToneVolts {
			continue
		}
		if first {
			fmt.Fprintln(w, "Test tone (AC rms; a dummy load on the output, never run without a load)")
			first = false
		}
		fmt.Fprintf(w, "  %-40s %12s  %s – %s\n", p.Label, units.Format(p.Nominal, units.Volts), units.Format(p.Low, units.Volts), units.Format(p.High, units.Volts))
	}
	for _, c := range rep.ToneClips {
		fmt.Fprintf(w, "  note: %s\n", c)
	}
	if !first {
		fmt.Fprintln(w)
	}
}
