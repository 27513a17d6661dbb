package main

import (
	"bytes"
	"flag"
	"fmt"
	"io"
	"os"
	"strings"

	"pinwalk/expect/spice"
)

func runExport(args []string, stdout, stderr io.Writer) int {
	fs := flag.NewFlagSet("export", flag.ContinueOnError)
	fs.SetOutput(stderr)
	asSpice := fs.Bool("spice", false, "write a SPICE netlist (ngspice batch deck)")
	out := fs.String("o", "", "write to FILE instead of standard output")
	fs.Usage = func() {
		fmt.Fprintln(stderr, `Usage: pinwalk export DESIGN --spice [-o FILE]

Writes the circuit pinwalk solves as a SPICE netlist, to run in your own
simulator (ngspice -b FILE): valve sections as behavioural sources with
the library's Koren parameters, the rectifier, the transformer windings as
sine sources behind their resistance, every resistor, capacitor and choke,
heaters as resistive loads, output transformer primaries as their DC
resistance. The transient starts from pinwalk's reservoir volts and prints
each net's volts and each electrode's current averaged over whole mains
cycles. Comments in the netlist say what each element stands for.`)
		fs.PrintDefaults()
	}
	pos, code, done := parseInterspersed(fs, args)
	if done {
		return code
	}
	if len(pos) > 1 {
		fmt.Fprintf(stderr, "pinwalk: export takes one design, found %d: %s\n", len(pos), strings.Join(pos, " "))
		return exitUsage
	}
	if !*asSpice {
		fmt.Fprintln(stderr, "pinwalk export: which format? add --spice (the only one so far)")
		return exitUsage
	}
	designArg := ""
	if len(pos) == 1 {
		designArg = pos[0]
	}
	d, probs, err := loadDesign(designArg, stderr)
	if err != nil {
		for _, p := range probs.Errors() {
			fmt.Fprintln(stderr, p.Error())
		}
		fmt.Fprintf(stderr, "pinwalk: %v\n", err)
		return exitProblems
	}
	var buf bytes.Buffer
	if err := spice.Write(&buf, d); err != nil {
		fmt.Fprintf(stderr, "pinwalk: %v\n", err)
		return exitProblems
	}
	if *out == "" {
		if _, err := stdout.Write(buf.Bytes()); err != nil {
			fmt.Fprintf(stderr, "pinwalk: %v\n", err)
			return exitFailure
		}
		return exitOK
	}
	if err := os.WriteFile(*out, buf.Bytes(), 0o644); err != nil {
		fmt.Fprintf(stderr, "pinwalk: %v\n", err)
		return exitFailure
	}
	fmt.Fprintf(stderr, "pinwalk: wrote %s (run it with: ngspice -b %s)\n", *out, *out)
	return exitOK
}
