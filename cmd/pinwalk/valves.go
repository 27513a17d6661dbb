package main

import (
	"flag"
	"fmt"
	"io"
	"sort"
	"strings"

	"pinwalk/expect/units"
	"pinwalk/expect/valves"
)

func runValves(args []string, stdout, stderr io.Writer) int {
	fs := flag.NewFlagSet("valves", flag.ContinueOnError)
	fs.SetOutput(stderr)
	fs.Usage = func() {
		fmt.Fprintln(stderr, `Usage: pinwalk valves [--design FILE] [TYPE]

Lists the valve library; with a type, shows its base and pins (numbered
from below), heater, limits, model parameters and the datasheet rows the
model was fitted to, with the model's figures beside each row. With
--design, the types of the design's valve-files are listed too (marked
"side file") and take precedence over the library.`)
	}
	designFile := fs.String("design", "", "also list the valve types of this design's valve-files")
	if code, done := parseFlags(fs, args); done {
		return code
	}
	var side []*valves.Type
	if *designFile != "" {
		d, probs, err := loadDesign(*designFile, stderr)
		if err != nil {
			fmt.Fprintln(stderr, "pinwalk:", err)
			return exitProblems
		}
		if errs := probs.Errors(); len(errs) > 0 {
			for _, e := range errs {
				fmt.Fprintln(stderr, e)
			}
			return exitProblems
		}
		side = d.SideValves
	}
	if fs.NArg() == 0 {
		for _, t := range side {
			fmt.Fprintf(stdout, "%-8s %-9s %-6s heater %s %s  (side file)\n", t.Name, t.Kind, t.Base,
				units.Format(t.Heater.Volts, units.Volts), units.Format(t.Heater.Amps, units.Amps))
		}
		for _, t := range valves.All() {
			h := "no heater"
			if t.Heater.Volts > 0 {
				h = "heater " + units.Format(t.Heater.Volts, units.Volts) + " " + units.Format(t.Heater.Amps, units.Amps)
			}
			fmt.Fprintf(stdout, "%-8s %-9s %-6s %s\n", t.Name, t.Kind, t.Base, h)
		}
		return exitOK
	}
	t, ok := lookupWith(side, fs.Arg(0))
	if !ok {
		fmt.Fprintf(stderr, "pinwalk: unknown valve type %q\n", fs.Arg(0))
		return exitProblems
	}
	fmt.Fprintf(stdout, "%s (%s, %s base)\n", t.Name, t.Kind, t.Base)
	pins := append([]valves.Pin(nil), t.Pins...)
	sort.Slice(pins, func(i, j int) bool { return pins[i].Number < pins[j].Number })
	for _, p := range pins {
		sec := ""
		if p.Section != "" {
			sec = " " + p.Section
		}
		fmt.Fprintf(stdout, "  pin %d  %s%s\n", p.Number, p.Electrode, sec)
	}
	if t.Heater.Volts == 0 {
		fmt.Fprint(stdout, "no heater (cold cathode)")
	} else {
		fmt.Fprintf(stdout, "heater %s at %s", units.Format(t.Heater.Volts, units.Volts), units.Format(t.Heater.Amps, units.Amps))
	}
	if t.Heater.AltVolts > 0 {
		fmt.Fprintf(stdout, " (or %s at %s)", units.Format(t.Heater.AltVolts, units.Volts), units.Format(t.Heater.AltAmps, units.Amps))
	}
	fmt.Fprintln(stdout)
	switch {
	case t.Kind == valves.Multi:
		for _, sec := range t.Sections {
			st := t.SectionType(sec, side)
			if st == nil {
				fmt.Fprintf(stdout, "section %s: unit type %s missing\n", sec, t.Units[sec])
				continue
			}
			fmt.Fprintf(stdout, "section %s (%s):\n", sec, st.Kind)
			if st.Kind.Modelled() {
				showRatingsAndModel(stdout, st)
			} else {
				fmt.Fprintln(stdout, "  not modelled: a design leaves this section unused")
			}
		}
	case t.Kind == valves.Regulator:
		g := t.Gas
		fmt.Fprintf(stdout, "gas regulator: strikes at %s, maintains %s, %s to %s\n", units.Format(g.StrikeVolts, units.Volts),
			units.Format(g.MaintainVolts, units.Volts), units.Format(g.MinAmps, units.Amps), units.Format(g.MaxAmps, units.Amps))
		law := valves.GasLawOf(g)
		fmt.Fprintf(stdout, "model once struck: %s at %s, %s at %s (incremental resistance %s); wire anode and cathode, no heater\n",
			units.Format(law.Volts(g.MinAmps), units.Volts), units.Format(g.MinAmps, units.Amps),
			units.Format(law.Volts(g.MaxAmps), units.Volts), units.Format(g.MaxAmps, units.Amps), units.Format(law.R, units.Ohms))
	case !t.Kind.Modelled():
		fmt.Fprintf(stdout, "limits: plate %s, %s\nnot yet modelled in a design\n", units.Format(t.Limits.PlateWatts, units.Watts), units.Format(t.Limits.PlateVolts, units.Volts))
	default:
		showRatingsAndModel(stdout, t)
	}
	return exitOK
}

// showRatingsAndModel prints a modelled type's (or section's) limits,
// model and datasheet rows.
func showRatingsAndModel(stdout io.Writer, t *valves.Type) {
	l := t.Limits
	fmt.Fprintf(stdout, "limits: plate %s, %s", units.Format(l.PlateWatts, units.Watts), units.Format(l.PlateVolts, units.Volts))
	if l.ScreenWatts > 0 {
		fmt.Fprintf(stdout, ", screen %s", units.Format(l.ScreenWatts, units.Watts))
	}
	if l.ScreenVolts > 0 {
		fmt.Fprintf(stdout, ", screen %s", units.Format(l.ScreenVolts, units.Volts))
	}
	fmt.Fprintln(stdout)
	if t.Kind == valves.Rectifier {
		fmt.Fprintf(stdout, "perveance %.3g A/V^1.5 per anode\n", t.Perveance)
		return
	}
	k := t.Model
	fmt.Fprintf(stdout, "Koren model: mu %.4g ex %.4g kg1 %.4g kg2 %.4g kp %.4g kvb %.4g", k.Mu, k.Ex, k.KG1, k.KG2, k.KP, k.KVB)
	if t.Kind == valves.Pentode {
		fmt.Fprintf(stdout, " alpha_s %.4g beta_s %.4g", k.AlphaS, k.BetaS)
	}
	if k.VCT != 0 {
		fmt.Fprintf(stdout, " vct %.3g V", k.VCT)
	}
	fmt.Fprintln(stdout)
	for _, r := range t.Rows {
		fmt.Fprintf(stdout, "  row Va %s Vg1 %s: Ia %s  (%s)\n", units.Format(r.Va, units.Volts), units.Format(r.Vg1, units.Volts), units.Format(r.Ia, units.Amps), r.Source)
	}
}

// lookupWith finds a type by name or alias among side (first) and then the
// library, ignoring case.
func lookupWith(side []*valves.Type, name string) (*valves.Type, bool) {
	key := strings.TrimSpace(name)
	for _, t := range side {
		if strings.EqualFold(t.Name, key) {
			return t, true
		}
		for _, a := range t.Aliases {
			if strings.EqualFold(a, key) {
				return t, true
			}
		}
	}
	return valves.Lookup(key)
}
