package main

import (
	"bytes"
	"encoding/json"
	"fmt"
	"path/filepath"
	"regexp"
	"strings"
	"testing"
)

func runCLI(args ...string) (code int, stdout, stderr string) {
	var o, e bytes.Buffer
	code = run(args, &o, &e)
	return code, o.String(), e.String()
}

func designFiles(t *testing.T, dir string) []string {
	t.Helper()
	files, err := filepath.Glob(filepath.Join("..", "..", "testdata", dir, "*.yaml"))
	if err != nil || len(files) == 0 {
		t.Fatalf("no files in testdata/%s: %v", dir, err)
	}
	return files
}

func TestCheckDemos(t *testing.T) {
	args := []string{"demo", "demo:pp-el34-fixed", "demo:bench-12ax7", "demo:se-6v6-stereo"}
	args = append(args, designFiles(t, "designs")...)
	for _, a := range args {
		t.Run(a, func(t *testing.T) {
			code, out, errOut := runCLI("check", a)
			if code != exitOK {
				t.Fatalf("check %s: exit %d\n%s%s", a, code, out, errOut)
			}
			if !strings.Contains(out, ": 0 error(s)") {
				t.Errorf("summary missing: %q", out)
			}
		})
	}
}

func TestCheckNoArgumentIsDemo(t *testing.T) {
	code, out, _ := runCLI("check")
	if code != exitOK || !strings.Contains(out, "demo: 0 error(s)") {
		t.Errorf("exit %d: %q", code, out)
	}
}

func TestCheckUnknownDemo(t *testing.T) {
	code, out, errOut := runCLI("check", "demo:no-such-amp")
	if code != exitProblems {
		t.Errorf("exit %d, want %d", code, exitProblems)
	}
	if !strings.Contains(out+errOut, "bench-12ax7") {
		t.Errorf("the message does not list the demos: %q %q", out, errOut)
	}
}

var placeRE = regexp.MustCompile(`(?m)^(.+?):(\d+):(\d+): error: `)

func TestCheckBadFiles(t *testing.T) {
	for _, f := range designFiles(t, "bad") {
		t.Run(filepath.Base(f), func(t *testing.T) {
			code, out, errOut := runCLI("check", f)
			if code != exitProblems {
				t.Fatalf("exit %d, want %d\n%s%s", code, exitProblems, out, errOut)
			}
			m := placeRE.FindStringSubmatch(out)
			if m == nil || m[1] != f {
				t.Fatalf("no file:line:col: error line for %s in\n%s", f, out)
			}
			if !strings.Contains(out, f+": ") || !strings.Contains(out, " error(s)") {
				t.Errorf("no summary line: %q", out)
			}
		})
	}
}

// Several files: the worst status wins, and each file gets its summary.
func TestCheckSeveralFiles(t *testing.T) {
	bad := filepath.Join("..", "..", "testdata", "bad", "shorted-part.yaml")
	code, out, _ := runCLI("check", "demo:bench-12ax7", bad)
	if code != exitProblems {
		t.Errorf("exit %d, want %d", code, exitProblems)
	}
	if !strings.Contains(out, "demo:bench-12ax7: 0 error(s)") || !strings.Contains(out, bad+": 1 error(s)") {
		t.Errorf("summaries: %q", out)
	}
}

func TestHelp(t *testing.T) {
	for _, args := range [][]string{nil, {"--help"}, {"-h"}, {"help"}} {
		code, out, _ := runCLI(args...)
		if code != exitOK || !strings.Contains(out, "Usage:") {
			t.Errorf("%v: exit %d, %q", args, code, out)
		}
		for _, c := range commands() {
			if !strings.Contains(out, "  "+c.name+" ") {
				t.Errorf("%v: usage does not list %s", args, c.name)
			}
		}
	}
}

func TestSubcommandHelp(t *testing.T) {
	for _, c := range commands() {
		t.Run(c.name, func(t *testing.T) {
			code, out, errOut := runCLI(c.name, "--help")
			if code != exitOK {
				t.Errorf("%s --help: exit %d, want %d\n%s%s", c.name, code, exitOK, out, errOut)
			}
			if !strings.Contains(out+errOut, "Usage: pinwalk "+c.name) {
				t.Errorf("%s --help prints no usage line: %q %q", c.name, out, errOut)
			}
		})
	}
}

func TestUnknownSubcommand(t *testing.T) {
	code, out, errOut := runCLI("chekc", "demo")
	if code != exitUsage {
		t.Errorf("exit %d, want %d", code, exitUsage)
	}
	if out != "" || !strings.Contains(errOut, `unknown command "chekc"`) || !strings.Contains(errOut, "Usage:") {
		t.Errorf("stdout %q stderr %q", out, errOut)
	}
}

func TestUnknownFlag(t *testing.T) {
	code, _, _ := runCLI("check", "--no-such-flag", "demo")
	if code != exitUsage {
		t.Errorf("exit %d, want %d", code, exitUsage)
	}
}

func TestExpectBadDesign(t *testing.T) {
	bad := filepath.Join("..", "..", "testdata", "bad", "missing-ground.yaml")
	code, out, errOut := runCLI("expect", bad)
	if code != exitProblems || out != "" || !placeRE.MatchString(errOut) {
		t.Errorf("exit %d stdout %q stderr %q", code, out, errOut)
	}
}

var pinID = regexp.MustCompile(`^V\d+\.\d+$`)

func TestExpectJSON(t *testing.T) {
	for _, arg := range []string{"demo", "demo:pp-el34-fixed", "demo:bench-12ax7"} {
		t.Run(arg, func(t *testing.T) {
			code, out, errOut := runCLI("expect", "--json", arg)
			if code != exitOK {
				t.Fatalf("exit %d: %s", code, errOut)
			}
			var doc map[string]json.RawMessage
			if err := json.Unmarshal([]byte(out), &doc); err != nil {
				t.Fatalf("not JSON: %v\n%s", err, out)
			}
			raw, ok := doc["points"]
			if !ok {
				t.Fatalf("no top-level points; keys %v", keys(doc))
			}
			var points []map[string]any
			if err := json.Unmarshal(raw, &points); err != nil {
				t.Fatalf("points is not an array of objects: %v", err)
			}
			if len(points) == 0 {
				t.Fatal("no points")
			}
			pins := 0
			for _, p := range points {
				for _, k := range []string{"id", "quantity", "unit", "nominal", "low", "high"} {
					if _, ok := p[k]; !ok {
						t.Fatalf("point %v lacks %q", p, k)
					}
				}
				id, _ := p["id"].(string)
				q, _ := p["quantity"].(string)
				u, _ := p["unit"].(string)
				nom, ok1 := p["nominal"].(float64)
				lo, ok2 := p["low"].(float64)
				hi, ok3 := p["high"].(float64)
				if id == "" || q == "" || u == "" || !ok1 || !ok2 || !ok3 {
					t.Errorf("point with empty or non-numeric fields: %v", p)
					continue
				}
				if !(lo <= nom && nom <= hi) {
					t.Errorf("%s %s: low %g <= nominal %g <= high %g does not hold", id, q, lo, nom, hi)
				}
				if pinID.MatchString(id) {
					pins++
				}
			}
			if pins == 0 {
				t.Errorf("no pin points with ids like V2.3")
			}
			ids := map[string]bool{}
			for _, p := range points {
				ids[fmt.Sprint(p["id"], " ", p["quantity"])] = true
			}
			if len(ids) != len(points) {
				t.Errorf("%d points but %d distinct id+quantity keys", len(points), len(ids))
			}
		})
	}
}

// The default demo's output stage: V2 is a 6V6GT, whose plate is pin 3
// (octal 6V6 basing, from memory); its plate point must be there with DC
// volts, and sit well below the HT winding's 230 V rms × √2 ≈ 325 V peak.
func TestExpectJSONPlatePin(t *testing.T) {
	code, out, errOut := runCLI("expect", "--json", "demo")
	if code != exitOK {
		t.Fatalf("exit %d: %s", code, errOut)
	}
	var doc struct {
		Points []struct {
			ID, Quantity, Unit string
			Nominal, Low, High float64
		} `json:"points"`
	}
	if err := json.Unmarshal([]byte(out), &doc); err != nil {
		t.Fatal(err)
	}
	found := false
	for _, p := range doc.Points {
		if p.ID == "V2.3" && p.Quantity == "dc_volts" {
			found = true
			if p.Unit != "V" || p.Nominal < 150 || p.Nominal > 325 {
				t.Errorf("V2.3 plate: %+v", p)
			}
		}
	}
	if !found {
		t.Error("no V2.3 dc_volts point")
	}
}

func keys(m map[string]json.RawMessage) []string {
	var out []string
	for k := range m {
		out = append(out, k)
	}
	return out
}

// valves --design lists the design's side-file types beside the library's.
func TestValvesListsSideFileTypes(t *testing.T) {
	var out, errb strings.Builder
	if code := runValves([]string{"--design", "../../testdata/sidefile/bench-qt35.yaml"}, &out, &errb); code != exitOK {
		t.Fatalf("exit %d: %s", code, errb.String())
	}
	lines := strings.Split(strings.TrimSpace(out.String()), "\n")
	if !strings.HasPrefix(lines[0], "QT-35") || !strings.Contains(lines[0], "side file") {
		t.Errorf("first line %q, want the side-file type QT-35", lines[0])
	}
	if len(lines) < 31 {
		t.Errorf("%d lines, want the side file's types and the library's 30", len(lines))
	}
}
