package main

import (
	"encoding/json"
	"fmt"
	"io"
	"math"
	"strings"

	"pinwalk/expect/amp"
	"pinwalk/expect/bands"
	"pinwalk/expect/cold"
	"pinwalk/expect/design"
	"pinwalk/expect/faults"
	"pinwalk/expect/units"
)

// coldCautions open every cold report.
var coldCautions = []string{
	"Unplug the amplifier from the mains before any cold check; a switch is not isolation.",
	"Lethal voltages persist in the filter capacitors after power-off.",
	fmt.Sprintf("Discharge them and verify with the meter: below %g V DC (hazardous-live limit, IEC 62368-1; IEC 60065 for older sets), then below %g V (common practice) before touching.", cold.HazardVolts, cold.TouchVolts),
	"Keep one hand away from the chassis; use insulated probes with finger guards, rated for the circuit.",
	"These expectations do not replace training; local codes and licensed practice rule.",
}

// jsonOhms is a resistance for JSON: a number, or null for an open reading
// (JSON has no infinity).
type jsonOhms = *float64

func ohmsJSON(v float64) jsonOhms {
	if math.IsInf(v, 0) || math.IsNaN(v) {
		return nil
	}
	return &v
}

type jsonCold struct {
	ID   string   `json:"id"`
	Kind string   `json:"kind"`
	From string   `json:"from"`
	To   string   `json:"to"`
	Ohms jsonOhms `json:"ohms"` // null: open
	// Low and High are the reading band (bands.FromSpread: the parts'
	// tolerance corners, TolLow and TolHigh, widened by the meter's
	// accuracy and resolution on the range in use and the probe contact);
	// BelowResolution: the meter shows 0 for the nominal.
	Low             jsonOhms `json:"low"`
	High            jsonOhms `json:"high"`
	TolLow          jsonOhms `json:"tol_low"`
	TolHigh         jsonOhms `json:"tol_high"`
	Resolution      float64  `json:"resolution,omitempty"`
	BelowResolution bool     `json:"below_resolution,omitempty"`
	Open            bool     `json:"open"`
	Note            string   `json:"note,omitempty"`
	Why             []string `json:"why,omitempty"`
}

// coldReadingBand is a cold check's reading band, the one the walk shows
// (bands.FromSpread on the tolerance corners, read with meter mt).
func coldReadingBand(c cold.Check, mt bands.Meter) bands.Band {
	return bands.FromSpread(amp.Ohms, c.Ohms, c.Tol[0], c.Tol[1], mt, "tolerance corners of the parts in the path")
}

type jsonDischarge struct {
	Ref       string   `json:"ref"`
	Net       string   `json:"net"`
	Other     string   `json:"other,omitempty"` // a floating capacitor's second net (read Net to Other)
	Farads    float64  `json:"farads"`
	PeakVolts float64  `json:"peak_volts"`
	BleedOhms jsonOhms `json:"bleed_ohms"` // null: no path
	To60      jsonOhms `json:"seconds_to_60v"`
	To10      jsonOhms `json:"seconds_to_10v"`
	NoPath    bool     `json:"no_path"`
	Warning   string   `json:"warning,omitempty"`
}

type jsonColdReport struct {
	Cautions  []string        `json:"cautions"`
	Cold      []jsonCold      `json:"cold"`
	Discharge []jsonDischarge `json:"discharge"`
}

// runColdExpect prints the cold (unpowered) resistance expectations and
// the filter-capacitor discharge table of a design, as text or as JSON
// ({"cautions": [...], "cold": [...], "discharge": [...]}; open readings
// and missing bleed paths are null). It returns exitOK, or exitFailure
// when a computation fails.
//
// With faults, each is put into the unpowered network through its kind's
// cold effect (cold.FaultChecks) before the readings are worked out.
func runColdExpect(d *design.Design, meter bands.Meter, flts []faults.Fault, asJSON bool, stdout, stderr io.Writer) int {
	checks, err := cold.Checks(d)
	if err != nil {
		fmt.Fprintf(stderr, "pinwalk: cold checks: %v\n", err)
		return exitFailure
	}
	m, err := amp.Build(d)
	if err != nil {
		fmt.Fprintf(stderr, "pinwalk: %v\n", err)
		return exitFailure
	}
	for _, f := range flts {
		if err := faults.Check(m, f); err != nil {
			fmt.Fprintf(stderr, "pinwalk: --fault: %v\n", err)
			return exitUsage
		}
		if checks, _, err = cold.FaultChecks(d, m, checks, f, true); err != nil {
			fmt.Fprintf(stderr, "pinwalk: cold checks with %s: %v\n", f, err)
			return exitFailure
		}
	}
	if len(flts) > 0 && !asJSON {
		names := make([]string, len(flts))
		for i, f := range flts {
			names[i] = f.String()
		}
		fmt.Fprintf(stdout, "Assuming the fault(s): %s\n", strings.Join(names, ", "))
	}
	dis, err := cold.DischargeTimes(d, m, 0)
	if err != nil {
		fmt.Fprintf(stderr, "pinwalk: %v\n", err)
		return exitFailure
	}
	if asJSON {
		rep := jsonColdReport{Cautions: coldCautions, Cold: []jsonCold{}, Discharge: []jsonDischarge{}}
		for _, c := range checks {
			jc := jsonCold{ID: c.ID, Kind: c.Kind, From: c.From, To: c.To,
				Ohms: ohmsJSON(c.Ohms), Low: ohmsJSON(c.Tol[0]), High: ohmsJSON(c.Tol[1]),
				TolLow: ohmsJSON(c.Tol[0]), TolHigh: ohmsJSON(c.Tol[1]), Open: c.Open, Note: c.Note}
			if !c.Open {
				b := coldReadingBand(c, meter)
				jc.Low, jc.High, jc.Resolution, jc.BelowResolution, jc.Why = ohmsJSON(b.Low), ohmsJSON(b.High), b.Range.Res, b.BelowResolution, b.Why
			}
			rep.Cold = append(rep.Cold, jc)
		}
		for _, x := range dis {
			rep.Discharge = append(rep.Discharge, jsonDischarge{Ref: x.Ref, Net: x.Net, Other: x.Other, Farads: x.Farads, PeakVolts: x.PeakVolts,
				BleedOhms: ohmsJSON(x.BleedOhms), To60: ohmsJSON(x.To60), To10: ohmsJSON(x.To10), NoPath: x.NoPath, Warning: x.Warning})
		}
		enc := json.NewEncoder(stdout)
		enc.SetIndent("", "  ")
		if err := enc.Encode(rep); err != nil {
			fmt.Fprintf(stderr, "pinwalk: %v\n", err)
			return exitFailure
		}
		return exitOK
	}
	w := stdout
	fmt.Fprintf(w, "%s — cold checks (unpowered)\n\n", d.Title)
	for _, c := range coldCautions {
		fmt.Fprintf(w, "  ! %s\n", c)
	}
	for _, x := range dis {
		if x.NoPath {
			fmt.Fprintf(w, "\n  !! %s\n", x.Warning)
		}
	}
	fmt.Fprintf(w, "\nDischarge after power-off (from the cold-start peak at high mains; valves cold):\n")
	fmt.Fprintf(w, "  %-6s %-6s %-9s %-9s %-10s %-10s %-10s\n", "cap", "net", "C", "peak", "bleed", "to <60 V", "to <10 V")
	for _, x := range dis {
		fmt.Fprintf(w, "  %-6s %-6s %-9s %-9s %-10s %-10s %-10s\n", x.Ref, x.Across(), units.Format(x.Farads, units.Farads),
			units.Format(x.PeakVolts, units.Volts), fmtOhms(x.BleedOhms), fmtSecs(x.To60), fmtSecs(x.To10))
		if x.Warning != "" && !x.NoPath {
			fmt.Fprintf(w, "         %s\n", x.Warning)
		}
	}
	fmt.Fprintf(w, "\nResistance to chassis (%s), valves out of their sockets, meter + on the net:\n", d.Ground)
	printCold := func(win bool) {
		fmt.Fprintf(w, "  %-18s %-8s %-12s %-25s %s\n", "reading", "kind", "expect", "reading band", "note")
		for _, c := range checks {
			if (c.Kind == "winding") != win {
				continue
			}
			id := c.ID
			if win {
				id = fmt.Sprintf("%s (%s–%s)", c.ID, c.From, c.To)
			}
			band, nom := "—", fmtOhms(c.Ohms)
			if !c.Open {
				b := coldReadingBand(c, meter)
				band, nom = b.Format(), b.FormatNominal()
			}
			fmt.Fprintf(w, "  %-18s %-8s %-12s %-25s %s\n", id, c.Kind, nom, band, c.Note)
		}
	}
	fmt.Fprintf(w, "  (reading bands: the parts' tolerance corners, the meter's ohms accuracy %s on the range in use and its resolution, and the probe contact)\n",
		meter.SpecFor(amp.Ohms))
	printCold(false)
	fmt.Fprintf(w, "\nAcross windings (in circuit; valves out, rectifier diodes read as open):\n")
	printCold(true)
	fmt.Fprintf(w, "\nNotes: bias and bench supplies are taken as open (disconnect a bench supply); silicon diodes read differently with the leads swapped; readings on nets with large capacitors climb while the meter charges them.\n")
	return exitOK
}

func fmtOhms(v float64) string {
	if math.IsInf(v, 1) {
		return "open"
	}
	return strings.TrimSpace(units.Format(v, units.Ohms))
}

func fmtSecs(v float64) string {
	switch {
	case math.IsInf(v, 1):
		return "NEVER"
	case v == 0:
		return "0 s"
	case v < 120:
		return fmt.Sprintf("%.3g s", v)
	case v < 7200:
		return fmt.Sprintf("%.3g min", v/60)
	}
	return fmt.Sprintf("%.3g h", v/3600)
}
