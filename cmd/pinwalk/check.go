package main

import (
	"flag"
	"fmt"
	"io"
	"strings"

	"pinwalk/expect/amp"
	"pinwalk/expect/design"
)

func runCheck(args []string, stdout, stderr io.Writer) int {
	fs := flag.NewFlagSet("check", flag.ContinueOnError)
	fs.SetOutput(stderr)
	quiet := fs.Bool("quiet", false, "print errors only")
	fs.Usage = func() {
		fmt.Fprintln(stderr, `Usage: pinwalk check [--quiet] DESIGN...

Validates each design file and prints every problem found, with file,
line, column and field. When the file is sound it also solves the amplifier
and checks ratings: resistor dissipation, capacitor voltage at the switch-on
peak (high mains, valves cold), valve dissipation, grid-1 resistance and
heater windings. Exit status 1 when any design has errors.`)
		fs.PrintDefaults()
	}
	if code, done := parseFlags(fs, args); done {
		return code
	}
	files := fs.Args()
	if len(files) == 0 {
		files = []string{"demo"}
	}
	status := exitOK
	for _, f := range files {
		if st := checkOne(f, *quiet, stdout, stderr); st > status {
			status = st
		}
	}
	return status
}

func checkOne(file string, quiet bool, stdout, stderr io.Writer) int {
	d, probs, err := loadDesign(file, stdout)
	errs, warns, notes, placeholders := 0, 0, 0, 0
	for _, p := range probs {
		switch {
		case p.Severity == design.Error:
			errs++
		case p.Severity == design.Warning:
			warns++
		case strings.HasPrefix(p.Msg, "placeholder value"):
			placeholders++
		default:
			notes++
		}
		if quiet && p.Severity != design.Error {
			continue
		}
		fmt.Fprintln(stdout, p.Error())
	}
	if d == nil {
		if err != nil && len(probs) == 0 {
			fmt.Fprintf(stderr, "pinwalk: %v\n", err)
		}
		fmt.Fprintf(stdout, "%s: %d error(s), %d warning(s)\n", file, errs, warns)
		return exitProblems
	}
	m, err := amp.Build(d)
	if err != nil {
		fmt.Fprintf(stdout, "%v\n", err)
		fmt.Fprintf(stdout, "%s: %d error(s), %d warning(s)\n", file, errs+1, warns)
		return exitProblems
	}
	s := amp.NewSolver(m)
	var hot, cold amp.OP
	if err := s.Solve(amp.Conditions{}, m.NominalValues(), false, &hot); err != nil {
		fmt.Fprintf(stdout, "%s: error: %v\n", d.File, err)
		return exitProblems
	}
	high := d.Mains.Volts * (1 + d.Mains.Tol.Hi)
	coldErr := s.ColdStart(high, &cold)
	coldOP := &cold
	if coldErr != nil {
		coldOP = nil
		fmt.Fprintf(stdout, "%s: warning: switch-on peak not computed: %v\n", d.File, coldErr)
		warns++
	}
	for _, f := range m.RatingChecks(&hot, coldOP) {
		switch f.Severity {
		case design.Error:
			errs++
		case design.Warning:
			warns++
		}
		if quiet && f.Severity != design.Error {
			continue
		}
		pos := f.Pos
		if pos.Line == 0 {
			pos = design.Pos{Line: 1, Col: 1}
		}
		field := f.Ref
		if field == "" {
			field = "ratings"
		}
		fmt.Fprintf(stdout, "%s:%d:%d: %s: %s: %s\n", d.File, pos.Line, pos.Col, f.Severity, field, f.Msg)
	}
	fmt.Fprintf(stdout, "%s: %d error(s), %d warning(s)", file, errs, warns)
	if notes > 0 {
		fmt.Fprintf(stdout, ", %d note(s)", notes)
	}
	if placeholders > 0 {
		fmt.Fprintf(stdout, ", %d placeholder(s) to replace", placeholders)
	}
	fmt.Fprintln(stdout)
	if errs > 0 {
		return exitProblems
	}
	return exitOK
}
