package spice

import (
	"bufio"
	"bytes"
	"context"
	"errors"
	"fmt"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
)

// ErrNoSimulator is returned (wrapped) by Run and Simulate when ngspice is
// not on the PATH.
var ErrNoSimulator = errors.New("spice: ngspice not found on the PATH")

// measLine matches a .meas result as ngspice prints it in batch mode:
// "name = value [from= ... to= ...]".
var measLine = regexp.MustCompile(`^\s*([a-z][a-z0-9_]*)\s*=\s*([-+0-9.eE]+)`)

// Run runs a deck through ngspice in batch mode (ngspice -b) in a
// temporary directory and returns every .meas result by its (lower-case)
// name. It fails when ngspice is missing, exits with an error, or prints
// an error line; the error carries the end of ngspice's output.
func Run(ctx context.Context, deck string) (map[string]float64, error) {
	dir, err := os.MkdirTemp("", "pinwalk-spice-")
	if err != nil {
		return nil, err
	}
	defer os.RemoveAll(dir)
	return runIn(ctx, dir, deck)
}

func runIn(ctx context.Context, dir, deck string) (map[string]float64, error) {
	exe, err := exec.LookPath("ngspice")
	if err != nil {
		return nil, ErrNoSimulator
	}
	file := filepath.Join(dir, "deck.cir")
	if err := os.WriteFile(file, []byte(deck), 0o644); err != nil {
		return nil, err
	}
	cmd := exec.CommandContext(ctx, exe, "-b", file)
	cmd.Dir = dir
	var out bytes.Buffer
	cmd.Stdout = &out
	cmd.Stderr = &out
	runErr := cmd.Run()
	res := map[string]float64{}
	var problems []string
	sc := bufio.NewScanner(bytes.NewReader(out.Bytes()))
	sc.Buffer(make([]byte, 0, 64*1024), 1<<20)
	for sc.Scan() {
		line := sc.Text()
		low := strings.ToLower(line)
		if strings.Contains(low, "error") || strings.Contains(low, "failed") || strings.Contains(low, "aborted") ||
			strings.Contains(low, "too small") {
			problems = append(problems, strings.TrimSpace(line))
		}
		if m := measLine.FindStringSubmatch(low); m != nil {
			if v, err := strconv.ParseFloat(m[2], 64); err == nil {
				res[m[1]] = v
			}
		}
	}
	if runErr != nil || len(problems) > 0 {
		return res, fmt.Errorf("ngspice: %v: %s\n%s", runErr, strings.Join(problems, "; "), tail(out.String(), 2000))
	}
	return res, nil
}

func tail(s string, n int) string {
	if len(s) <= n {
		return s
	}
	return "…" + s[len(s)-n:]
}

// Result is a transient run averaged over whole mains cycles.
type Result struct {
	// Cycles holds, per probe name, the mean over each of the last
	// DeckOptions.Average mains cycles, the last cycle first.
	Cycles map[string][]float64
}

// Mean returns a probe's mean over all the averaged cycles.
func (r *Result) Mean(probe string) (float64, bool) {
	c, ok := r.Cycles[probe]
	if !ok || len(c) == 0 {
		return 0, false
	}
	var s float64
	for _, x := range c {
		s += x
	}
	return s / float64(len(c)), true
}

// Simulate runs the netlist's transient in ngspice and averages every
// probe over each of the last o.Average whole mains cycles, integrating
// the simulator's own time points exactly (trapezoids, the cycle
// boundaries interpolated). Errors are those of Run, or a waveform file
// that does not cover the averaged cycles.
func Simulate(ctx context.Context, n *Netlist, o DeckOptions) (*Result, error) {
	o = o.withDefaults()
	dir, err := os.MkdirTemp("", "pinwalk-spice-")
	if err != nil {
		return nil, err
	}
	defer os.RemoveAll(dir)
	o.dataFile = filepath.Join(dir, "wave")
	if _, err := runIn(ctx, dir, n.Deck(o)); err != nil {
		return nil, err
	}
	period := 1 / n.Hz
	end := float64(o.Cycles) * period
	res := &Result{Cycles: map[string][]float64{}}
	for i := 0; i < len(n.Probes); i += probesPerFile {
		probes := n.Probes[i:min(i+probesPerFile, len(n.Probes))]
		file := fmt.Sprintf("%s.%d", o.dataFile, i/probesPerFile)
		t, cols, err := readWaves(file, len(probes))
		if err != nil {
			return nil, err
		}
		for j, p := range probes {
			c := make([]float64, o.Average)
			for k := 1; k <= o.Average; k++ {
				a := end - float64(k)*period
				m, err := meanOver(t, cols[j], a, a+period)
				if err != nil {
					return nil, fmt.Errorf("spice: %s: %w", p.Name, err)
				}
				c[k-1] = m
			}
			res.Cycles[p.Name] = c
		}
	}
	return res, nil
}

// readWaves reads an ngspice wrdata file written with wr_singlescale and
// wr_vecnames: a header line, then rows of time and one value per vector.
func readWaves(file string, nvec int) (t []float64, cols [][]float64, err error) {
	f, err := os.Open(file)
	if err != nil {
		return nil, nil, fmt.Errorf("spice: waveform file: %w", err)
	}
	defer f.Close()
	cols = make([][]float64, nvec)
	sc := bufio.NewScanner(f)
	sc.Buffer(make([]byte, 0, 64*1024), 1<<20)
	first := true
	for sc.Scan() {
		fields := strings.Fields(sc.Text())
		if first {
			first = false
			if len(fields) != nvec+1 {
				return nil, nil, fmt.Errorf("spice: %s: header has %d columns, want %d", filepath.Base(file), len(fields), nvec+1)
			}
			continue
		}
		if len(fields) == 0 {
			continue
		}
		if len(fields) != nvec+1 {
			return nil, nil, fmt.Errorf("spice: %s: a row has %d columns, want %d", filepath.Base(file), len(fields), nvec+1)
		}
		for j, s := range fields {
			x, err := strconv.ParseFloat(s, 64)
			if err != nil {
				return nil, nil, fmt.Errorf("spice: %s: %q: %w", filepath.Base(file), s, err)
			}
			if j == 0 {
				t = append(t, x)
			} else {
				cols[j-1] = append(cols[j-1], x)
			}
		}
	}
	if err := sc.Err(); err != nil {
		return nil, nil, err
	}
	return t, cols, nil
}

// meanOver returns the mean of the piecewise-linear waveform (t, y) over
// [a, b], which the samples must cover.
func meanOver(t, y []float64, a, b float64) (float64, error) {
	if len(t) < 2 || t[0] > a+1e-12*math.Abs(a) || t[len(t)-1] < b-1e-12*math.Abs(b) {
		return 0, fmt.Errorf("waveform does not cover %g s to %g s", a, b)
	}
	at := func(i int, x float64) float64 { // value at x within [t[i], t[i+1]]
		dt := t[i+1] - t[i]
		if dt <= 0 {
			return y[i]
		}
		return y[i] + (y[i+1]-y[i])*(x-t[i])/dt
	}
	var s float64
	for i := 0; i+1 < len(t); i++ {
		lo, hi := math.Max(t[i], a), math.Min(t[i+1], b)
		if hi <= lo {
			continue
		}
		s += (hi - lo) * (at(i, lo) + at(i, hi)) / 2
	}
	return s / (b - a), nil
}
