// Command pinwalk computes what every valve socket pin of an amplifier
// should read, walks a technician through a safe measurement order, and
// ranks the likely faults from the readings.
package main

import (
	"errors"
	"flag"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strings"
)

// Exit codes.
const (
	exitOK       = 0
	exitProblems = 1 // the design or readings have errors, or a check failed
	exitUsage    = 2 // the command line is wrong
	exitFailure  = 3 // the computation failed (e.g. no convergence)
)

type command struct {
	name    string
	summary string
	run     func(args []string, stdout, stderr io.Writer) int
}

func commands() []command {
	return []command{
		{"check", "validate a design file and print every problem found", runCheck},
		{"expect", "what every pin and net should read, with tolerance bands", runExpect},
		{"valves", "list the valve library, or show one type's pins, ratings and fit", runValves},
		{"new", "write a commented design file to start from, from a template", runNew},
		{"show", "a readable summary of a design, to check it against the schematic", runShow},
		{"diagnose", "rank the likely faults from readings and say what to measure next", runDiagnose},
		{"report", "a job sheet from a session (Markdown or HTML), or two sessions compared", runReport},
		{"export", "the circuit as a SPICE netlist, to run in your own simulator (--spice)", runExport},
		{"walk", "guided bring-up, fault-finding, training, practice or signal tracing (--plain: line by line)", runWalk},
	}
}

func usage(w io.Writer) {
	fmt.Fprintf(w, `pinwalk: expected readings, safe measurement order and fault ranking for valve amplifiers.

Usage:
  pinwalk <command> [options] [DESIGN]

Commands:
`)
	for _, c := range commands() {
		fmt.Fprintf(w, "  %-9s %s\n", c.name, c.summary)
	}
	fmt.Fprintf(w, `
DESIGN is a design file (YAML); "demo" or no file means the embedded demo
design (demo:NAME picks another: %s).

Run "pinwalk <command> --help" for a command's options. With no arguments
on a terminal, pinwalk opens the demo design's bring-up full-screen,
resuming (or starting) the session in
%s.

Valve amplifiers hold lethal voltages, and filter capacitors keep them after
power-off. pinwalk's expectations do not replace training, local codes or
licensed practice.
`, strings.Join(demoNames(), ", "), demoSessionHint())
}

func main() {
	os.Exit(run(os.Args[1:], os.Stdout, os.Stderr))
}

func run(args []string, stdout, stderr io.Writer) int {
	if len(args) == 0 {
		if isTerminal(stdout) && isTerminal(os.Stdin) {
			return runWalk([]string{"demo", "--mode", "bringup", "--session", demoSessionPath(), "--accept-changed-design"}, stdout, stderr)
		}
		usage(stdout)
		return exitOK
	}
	switch args[0] {
	case "-h", "--help", "help":
		usage(stdout)
		return exitOK
	}
	for _, c := range commands() {
		if c.name == args[0] {
			return c.run(args[1:], stdout, stderr)
		}
	}
	fmt.Fprintf(stderr, "pinwalk: unknown command %q\n\n", args[0])
	usage(stderr)
	return exitUsage
}

// parseFlags parses a subcommand's flags. When done is true the command
// returns code at once: 0 after --help, exitUsage on a bad flag.
func parseFlags(fs *flag.FlagSet, args []string) (code int, done bool) {
	if err := fs.Parse(args); err != nil {
		if errors.Is(err, flag.ErrHelp) {
			return exitOK, true
		}
		return exitUsage, true
	}
	return exitOK, false
}

// demoSessionPath is where a bare "pinwalk" keeps its demo bring-up
// session: in the user's cache directory (the temporary directory when
// there is none), so trying the demo writes nothing in the current
// directory and a second run carries on where the first stopped.
func demoSessionPath() string {
	dir, err := os.UserCacheDir()
	if err != nil {
		dir = os.TempDir()
	}
	dir = filepath.Join(dir, "pinwalk")
	if err := os.MkdirAll(dir, 0o755); err != nil {
		dir = os.TempDir()
	}
	return filepath.Join(dir, "demo-bringup.pinwalk.yaml")
}

// demoSessionHint names the file a bare "pinwalk" resumes, for help
// texts, without creating its directory.
func demoSessionHint() string {
	dir, err := os.UserCacheDir()
	if err != nil {
		return filepath.Join(os.TempDir(), "demo-bringup.pinwalk.yaml")
	}
	return filepath.Join(dir, "pinwalk", "demo-bringup.pinwalk.yaml")
}

// parseInterspersed parses flags that may come before or after the
// positional arguments (Go's flag package stops at the first argument
// that is not a flag, so the rest is parsed again) and returns the
// positional arguments. done and code are as for parseFlags.
func parseInterspersed(fs *flag.FlagSet, args []string) (pos []string, code int, done bool) {
	for rest := args; ; {
		if code, done := parseFlags(fs, rest); done {
			return nil, code, true
		}
		if fs.NArg() == 0 {
			return pos, exitOK, false
		}
		pos = append(pos, fs.Arg(0))
		rest = fs.Args()[1:]
	}
}
