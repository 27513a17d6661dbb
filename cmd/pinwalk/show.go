package main

import (
	"flag"
	"fmt"
	"io"

	"pinwalk/expect/design"
)

func runShow(args []string, stdout, stderr io.Writer) int {
	fs := flag.NewFlagSet("show", flag.ContinueOnError)
	fs.SetOutput(stderr)
	fs.Usage = func() {
		fmt.Fprintln(stderr, `Usage: pinwalk show DESIGN

Prints a readable summary of a design to check it against the schematic:
each supply drawn from the rectifier outwards (filter nets, their
capacitors, the series part to the next net and what hangs on each), every
valve pin with its net and the other parts on that net, the parts on each
net, and anything unusual (a net with one connection, a grid or cathode
with no DC path to ground, an overloaded heater winding, a screen with no
stopper, an electrolytic with no voltage rating). A design with errors is
not shown: its errors are printed instead (exit status 1).`)
	}
	if code, done := parseFlags(fs, args); done {
		return code
	}
	if fs.NArg() > 1 {
		fs.Usage()
		return exitUsage
	}
	d, probs, err := loadDesign(fs.Arg(0), stdout)
	if err != nil {
		for _, p := range probs.Errors() {
			fmt.Fprintln(stderr, p.Error())
		}
		fmt.Fprintf(stderr, "pinwalk show: %v; fix them first (pinwalk check lists every problem)\n", err)
		return exitProblems
	}
	if err := design.Summarize(d).WriteText(stdout); err != nil {
		fmt.Fprintf(stderr, "pinwalk show: %v\n", err)
		return exitFailure
	}
	return exitOK
}
