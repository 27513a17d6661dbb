package main

import (
	"bytes"
	"flag"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strings"

	"pinwalk/expect/design"
	"pinwalk/procedures"
	"pinwalk/procedures/jobsheet"
)

func runReport(args []string, stdout, stderr io.Writer) int {
	fs := flag.NewFlagSet("report", flag.ContinueOnError)
	fs.SetOutput(stderr)
	format := fs.String("format", "", "md or html (default: from the -o file's extension, else md)")
	out := fs.String("o", "", "write to this file instead of standard output")
	designArg := fs.String("design", "", "the design to use instead of the one the session names (a file, demo or demo:NAME)")
	compare := fs.Bool("compare", false, "compare two sessions of the same amp, point by point: --compare OLD NEW")
	reader := fs.String("for", "bench", "who the sheet is for: bench (the technician's log, every reading against its band) or customer (the repair report: complaint, what was found, parts, before and after, safety tests, sign-off; the bench log as an appendix)")
	fs.Usage = func() {
		fmt.Fprintln(stderr, `Usage: pinwalk report [options] SESSION
       pinwalk report --compare [options] OLD NEW

Writes a job sheet from a bench session file: the amp and design (with a
check that the design file has not changed), the bench conditions, the
safety checks done and any skipped (with the reasons given), every reading
against its expected band, each valve's expected and measured operating
point with dissipation against its rating, the B+ chain, and the findings;
for training and practice sessions, the predictions and the path taken.
HTML is one self-contained file with plots of each valve's plate
characteristics and load lines, for printing or archiving. --compare sets
two sessions side by side (before and after a repair). --for customer
writes the repair report for the amp's owner instead, in plain words.`)
		fs.PrintDefaults()
	}
	pos, code, done := parseInterspersed(fs, args)
	if done {
		return code
	}
	want := 1
	if *compare {
		want = 2
	}
	if len(pos) != want {
		if *compare {
			fmt.Fprintf(stderr, "pinwalk: report --compare takes two session files (OLD NEW), found %d\n", len(pos))
		} else {
			fmt.Fprintf(stderr, "pinwalk: report takes one session file, found %d\n", len(pos))
		}
		return exitUsage
	}
	f := strings.ToLower(*format)
	if f == "" {
		f = "md"
		if ext := strings.ToLower(filepath.Ext(*out)); ext == ".html" || ext == ".htm" {
			f = "html"
		}
	}
	if f == "markdown" {
		f = "md"
	}
	if f != "md" && f != "html" {
		fmt.Fprintf(stderr, "pinwalk: --format %q: expected md or html\n", *format)
		return exitUsage
	}
	customer := false
	switch *reader {
	case "bench":
	case "customer":
		customer = true
		if *compare {
			fmt.Fprintln(stderr, "pinwalk: report --for customer takes one session (its before and after come from the readings), not --compare")
			return exitUsage
		}
	default:
		fmt.Fprintf(stderr, "pinwalk: --for %q: expected bench or customer\n", *reader)
		return exitUsage
	}

	var sheets []*jobsheet.Sheet
	for _, p := range pos {
		sh, code := reportSheet(p, *designArg, stderr)
		if sh == nil {
			return code
		}
		sheets = append(sheets, sh)
	}
	var buf bytes.Buffer
	var err error
	if *compare {
		c := jobsheet.Compare(sheets[0], sheets[1])
		if f == "html" {
			err = c.HTML(&buf)
		} else {
			err = c.Markdown(&buf)
		}
	} else if customer && f == "html" {
		err = sheets[0].CustomerHTML(&buf)
	} else if customer {
		err = sheets[0].CustomerMarkdown(&buf)
	} else if f == "html" {
		err = sheets[0].HTML(&buf)
	} else {
		err = sheets[0].Markdown(&buf)
	}
	if err != nil {
		fmt.Fprintf(stderr, "pinwalk: report: %v\n", err)
		return exitFailure
	}
	if *out == "" {
		stdout.Write(buf.Bytes())
		return exitOK
	}
	if err := os.WriteFile(*out, buf.Bytes(), 0o644); err != nil {
		fmt.Fprintf(stderr, "pinwalk: report: %v\n", err)
		return exitFailure
	}
	fmt.Fprintf(stderr, "pinwalk: wrote %s\n", *out)
	return exitOK
}

// reportSheet loads a session and its design and builds the job sheet.
// A design that cannot be loaded is a warning (the sheet is still written,
// without operating points); a session that cannot be read is an error.
func reportSheet(path, designArg string, stderr io.Writer) (*jobsheet.Sheet, int) {
	s, err := procedures.LoadSession(path)
	if err != nil {
		fmt.Fprintf(stderr, "pinwalk: %v\n", err)
		return nil, exitProblems
	}
	arg := designArg
	if arg == "" {
		arg = s.Design.File
		// A relative design path is looked for beside the session too.
		if arg != "" && !strings.HasPrefix(arg, "demo") && !filepath.IsAbs(arg) {
			if _, err := os.Stat(arg); err != nil {
				if alt := filepath.Join(filepath.Dir(path), arg); fileExists(alt) {
					arg = alt
				}
			}
		}
	}
	var d *design.Design
	if arg != "" {
		var probs design.Problems
		d, probs, err = loadDesign(arg, io.Discard)
		if err != nil {
			fmt.Fprintf(stderr, "pinwalk: warning: design %s: %v; the job sheet has no operating points\n", arg, err)
			for _, p := range probs.Errors() {
				fmt.Fprintln(stderr, "  "+p.Error())
			}
			d = nil
		} else if d.Hash != s.Design.Hash {
			fmt.Fprintf(stderr, "pinwalk: warning: %s has changed since session %s was taken (sha256 %.12s…, session recorded %.12s…)\n", arg, path, d.Hash, s.Design.Hash)
		}
	}
	opt := jobsheet.Options{Design: d}
	if d != nil {
		opt.Proc, opt.Channels = reportProcedure(d, s)
		if s.Mode == procedures.FaultFind || s.Mode == procedures.Practise {
			opt.Suspects = jobsheet.InferSuspects(0, s.Seed)
		}
	}
	sh, err := jobsheet.Build(s, opt)
	if err != nil {
		fmt.Fprintf(stderr, "pinwalk: %v\n", err)
		return nil, exitFailure
	}
	return sh, exitOK
}

// reportProcedure rebuilds the procedure of a session's mode, for step
// titles and safety flags, with the channels' names as the walk gives
// them; a nil procedure when it cannot be built (the sheet then shows
// step ids).
func reportProcedure(d *design.Design, s *procedures.Session) (*procedures.Procedure, map[string]string) {
	b, err := procedures.NewBenchModel(d, procedures.BenchOptions{Seed: s.Seed})
	if err != nil {
		return nil, nil
	}
	channels := procedures.ChannelTitles(b)
	var p *procedures.Procedure
	switch s.Mode {
	case procedures.BringUp, procedures.Training:
		p, err = procedures.BringUpProcedure(b)
	case procedures.FaultFind, procedures.Practise:
		p, err = procedures.FaultFindProcedure(b, s.Mode)
	}
	if err != nil || p == nil {
		return nil, channels
	}
	p.Steps = append(p.Steps, s.Added...)
	return p, channels
}

func fileExists(p string) bool {
	_, err := os.Stat(p)
	return err == nil
}
