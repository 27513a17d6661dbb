package jobsheet

import (
	"bytes"
	"flag"
	"math"
	"os"
	"path/filepath"
	"pinwalk/expect/point"
	"regexp"
	"strconv"
	"strings"
	"testing"
	"time"

	"pinwalk/expect/design"
	"pinwalk/procedures"
)

var update = flag.Bool("update", false, "rewrite the golden files in testdata/golden/report")

const (
	fixture      = "../../testdata/sessions/se-6v6-bringup.yaml"
	fixtureAfter = "../../testdata/sessions/se-6v6-after.yaml"
	designA      = "../../testdata/designs/se-6v6-stereo.yaml"
	goldenDir    = "../../testdata/golden/report"
)

func loadDesignA(t *testing.T) *design.Design {
	t.Helper()
	d, probs := design.Load(designA)
	if d == nil || len(probs.Errors()) > 0 {
		t.Fatalf("loading %s: %v", designA, probs)
	}
	return d
}

func loadSheet(t *testing.T, path string) *Sheet {
	t.Helper()
	s, err := procedures.LoadSession(path)
	if err != nil {
		t.Fatal(err)
	}
	sh, err := Build(s, Options{Design: loadDesignA(t)})
	if err != nil {
		t.Fatal(err)
	}
	return sh
}

func golden(t *testing.T, name string, got []byte) {
	t.Helper()
	path := filepath.Join(goldenDir, name)
	if *update {
		if err := os.WriteFile(path, got, 0o644); err != nil {
			t.Fatal(err)
		}
		return
	}
	want, err := os.ReadFile(path)
	if err != nil {
		t.Fatalf("%v (run go test ./procedures/jobsheet -update)", err)
	}
	if !bytes.Equal(got, want) {
		gl, wl := strings.Split(string(got), "\n"), strings.Split(string(want), "\n")
		for i := 0; i < len(gl) && i < len(wl); i++ {
			if gl[i] != wl[i] {
				t.Fatalf("%s differs at line %d:\ngot:  %s\nwant: %s\n(run go test ./procedures/jobsheet -update after checking)", name, i+1, gl[i], wl[i])
			}
		}
		t.Fatalf("%s differs in length: got %d lines, want %d", name, len(gl), len(wl))
	}
}

func TestGoldenSheet(t *testing.T) {
	sh := loadSheet(t, fixture)
	var md, html bytes.Buffer
	if err := sh.Markdown(&md); err != nil {
		t.Fatal(err)
	}
	if err := sh.HTML(&html); err != nil {
		t.Fatal(err)
	}
	golden(t, "se-6v6-bringup.md", md.Bytes())
	golden(t, "se-6v6-bringup.html", html.Bytes())
}

func TestGoldenCompare(t *testing.T) {
	c := Compare(loadSheet(t, fixture), loadSheet(t, fixtureAfter))
	var md, html bytes.Buffer
	if err := c.Markdown(&md); err != nil {
		t.Fatal(err)
	}
	if err := c.HTML(&html); err != nil {
		t.Fatal(err)
	}
	golden(t, "se-6v6-compare.md", md.Bytes())
	golden(t, "se-6v6-compare.html", html.Bytes())
}

var lineRe = regexp.MustCompile(`<line id="([^"]+)-dcload" class="dc-load" x1="([-0-9.]+)" y1="([-0-9.]+)" x2="([-0-9.]+)" y2="([-0-9.]+)"`)

// distToLine is the distance in pixels from p to the infinite line
// through a and b.
func distToLine(p, a, b [2]float64) float64 {
	dx, dy := b[0]-a[0], b[1]-a[1]
	return math.Abs(dy*(p[0]-a[0])-dx*(p[1]-a[1])) / math.Hypot(dx, dy)
}

// TestDCLoadLineGeometry parses each plate chart's SVG and checks that the
// drawn DC load line lies on the straight line through (B+, 0) and
// (0, B+/Rload) within a pixel, and that an endpoint inside the plot is
// that intercept itself (Ohm's law for the load: Ia = (B+ − Va)/R).
func TestDCLoadLineGeometry(t *testing.T) {
	sh := loadSheet(t, fixture)
	bothInside := 0
	for _, v := range sh.Valves {
		c := v.Chart
		if c == nil || c.DC == nil {
			t.Fatalf("%s: no chart or no DC load line", v.Name)
		}
		bplus, r := c.DC.X0, c.DC.Ohms
		m := lineRe.FindStringSubmatch(c.SVG())
		if m == nil {
			t.Fatalf("%s: no DC load line in the SVG", v.Name)
		}
		var e [4]float64
		for i := range e {
			e[i], _ = strconv.ParseFloat(m[i+2], 64)
		}
		ax, ay := c.Axes.Px(bplus, 0)
		bx, by := c.Axes.Px(0, bplus/r)
		for _, p := range [][2]float64{{e[0], e[1]}, {e[2], e[3]}} {
			if d := distToLine(p, [2]float64{ax, ay}, [2]float64{bx, by}); d > 1 {
				t.Errorf("%s: DC load line endpoint (%.1f, %.1f) is %.2f px off the line through (B+=%.1f V, 0) and (0, %.3g A)", v.Name, p[0], p[1], d, bplus, bplus/r)
			}
		}
		if bplus <= c.Axes.XMax {
			if math.Hypot(e[0]-ax, e[1]-ay) > 1 {
				t.Errorf("%s: line starts at (%.1f, %.1f), want (B+, 0) at (%.1f, %.1f)", v.Name, e[0], e[1], ax, ay)
			}
		}
		if bplus/r <= c.Axes.YMax {
			if math.Hypot(e[2]-bx, e[3]-by) > 1 {
				t.Errorf("%s: line ends at (%.1f, %.1f), want (0, B+/R) at (%.1f, %.1f)", v.Name, e[2], e[3], bx, by)
			} else if bplus <= c.Axes.XMax {
				bothInside++
			}
		}
		// The solved operating point lies on the DC load line: the plate
		// current is the drop across the load over its resistance (Ohm's
		// law; the OT primary and R11/R21 carry only plate current).
		va, ia := c.Expected[0], c.Expected[1]
		if want := (bplus - va) / r; math.Abs(ia-want) > 0.01*want {
			t.Errorf("%s: expected point Ia %.4g A, (B+ − Va)/R = %.4g A", v.Name, ia, want)
		}
	}
	if bothInside == 0 {
		t.Error("no chart had both DC load line intercepts inside the plot: the endpoint check did not run")
	}
}

// TestAxesAndClip checks the coordinate mapping at the corners and
// Liang–Barsky clipping against hand-worked segments.
func TestAxesAndClip(t *testing.T) {
	a := Axes{XMin: 0, XMax: 500, YMin: 0, YMax: 0.1, Left: 70, Top: 40, Width: 520, Height: 360}
	for _, c := range []struct{ x, y, px, py float64 }{
		{0, 0, 70, 400}, {500, 0.1, 590, 40}, {250, 0.05, 330, 220},
		{1000, 0, 1110, 400}, // outside: the mapping extrapolates
	} {
		px, py := a.Px(c.x, c.y)
		if math.Abs(px-c.px) > 1e-9 || math.Abs(py-c.py) > 1e-9 {
			t.Errorf("Px(%g, %g) = (%g, %g), want (%g, %g)", c.x, c.y, px, py, c.px, c.py)
		}
	}
	// A line from (1000, 0) to (0, 0.2): inside for x in [500, 1000]... it
	// enters at y = 0.1 (x = 500) and meets y = 0 at x = 1000, outside:
	// clipped to (500, 0.1)–(500, 0.1)? No: at x = 500, y = 0.1 exactly, a
	// single corner point.
	if _, _, _, _, ok := a.Clip(1000, 0, 600, 0.08); ok {
		t.Error("a segment wholly right of the plot was not rejected")
	}
	// (600, 0) to (0, 0.12): y = 0.12·(1 − x/600); enters at x = 500
	// (y = 0.02) and leaves at y = 0.1 (x = 100).
	x0, y0, x1, y1, ok := a.Clip(600, 0, 0, 0.12)
	if !ok || math.Abs(x0-500) > 1e-9 || math.Abs(y0-0.02) > 1e-12 || math.Abs(x1-100) > 1e-9 || math.Abs(y1-0.1) > 1e-12 {
		t.Errorf("Clip = (%g, %g)–(%g, %g) %v, want (500, 0.02)–(100, 0.1)", x0, y0, x1, y1, ok)
	}
}

// TestOperatingCurve checks that the dashed curve at the operating grid
// volts passes through the solved operating point: the chart evaluates the
// same Koren model the solver used (emission limit aside: under 3 %).
func TestOperatingCurve(t *testing.T) {
	sh := loadSheet(t, fixture)
	for _, v := range sh.Valves {
		c := v.Chart
		var op *Curve
		for i := range c.Curves {
			if c.Curves[i].Operating {
				op = &c.Curves[i]
			}
		}
		if op == nil {
			t.Fatalf("%s: no operating curve", v.Name)
		}
		va, ia := c.Expected[0], c.Expected[1]
		for j := 1; j < len(op.Pts); j++ {
			p, q := op.Pts[j-1], op.Pts[j]
			if p[0] <= va && va <= q[0] {
				got := p[1] + (q[1]-p[1])*(va-p[0])/(q[0]-p[0])
				if math.Abs(got-ia) > 0.03*ia {
					t.Errorf("%s: operating curve at Va %.1f V gives %.4g A, solved Ia %.4g A", v.Name, va, got, ia)
				}
			}
		}
		if c.AC != nil {
			// AC load line through the point with slope −1/Z.
			slope := (c.AC.Y1 - c.AC.Y0) / (c.AC.X1 - c.AC.X0)
			if math.Abs(slope+1/c.AC.Ohms) > 1e-9/c.AC.Ohms {
				t.Errorf("%s: AC load line slope %g, want %g", v.Name, slope, -1/c.AC.Ohms)
			}
			if y := c.AC.Y0 + slope*(va-c.AC.X0); math.Abs(y-ia) > 1e-9 {
				t.Errorf("%s: AC load line misses the operating point: %g A at Va, want %g A", v.Name, y, ia)
			}
		}
	}
}

// TestMeasuredOperatingPoint checks V3's measured point against a hand
// calculation: Ik = Vk/Rk = 17.4 V / 330 Ω (R25), the plate share Ia/Ik of
// the solve, Pa = (Va − Vk)·Ia; it is over the 6V6GT's 12 W rating (RCA
// 6V6GT data, design-maximum plate dissipation 12 W (from memory)).
func TestMeasuredOperatingPoint(t *testing.T) {
	sh := loadSheet(t, fixture)
	var v3 *ValveSheet
	for i := range sh.Valves {
		if sh.Valves[i].Name == "V3" {
			v3 = &sh.Valves[i]
		}
	}
	if v3 == nil || v3.Measured == nil {
		t.Fatal("V3 has no measured operating point")
	}
	share := v3.Expected.Ia / (v3.Expected.Ia + v3.Expected.Ig2)
	ia := 17.4 / 330 * share
	if m := v3.Measured; math.Abs(m.Ia-ia) > 1e-9 || math.Abs(m.Pa-(276-17.4)*ia) > 1e-9 {
		t.Errorf("V3 measured Ia %g A, Pa %g W; want %g A, %g W", m.Ia, m.Pa, ia, (276-17.4)*ia)
	}
	if v3.PlateWattsMax != 12 {
		t.Errorf("6V6GT plate rating %g W, want 12 W", v3.PlateWattsMax)
	}
	if !(v3.Measured.Pa > 12) {
		t.Errorf("V3 measured Pa %g W: the fixture's high cathode volts should put it over 12 W", v3.Measured.Pa)
	}
	var md bytes.Buffer
	sh.Markdown(&md)
	if !strings.Contains(md.String(), "OVER") {
		t.Error("Markdown does not flag V3's plate dissipation over its rating")
	}
}

// TestMarkdownClean: no raw HTML (GitHub would render or strip it), the
// note's angle brackets and pipe escaped, tables with a header rule, the
// skipped safety step and the out-of-band reading shown in words.
func TestMarkdownClean(t *testing.T) {
	var b bytes.Buffer
	if err := loadSheet(t, fixture).Markdown(&b); err != nil {
		t.Fatal(err)
	}
	md := b.String()
	if m := regexp.MustCompile(`<[a-zA-Z/!]`).FindString(md); m != "" {
		t.Errorf("raw HTML in Markdown: %q", m)
	}
	for _, want := range []string{"&lt;check&gt; R25 \\| C22", "SKIPPED SAFETY STEP", "✗ OUT OF BAND", "? re-measure", "|---|", "No earth-bond tester"} {
		if !strings.Contains(md, want) {
			t.Errorf("Markdown lacks %q", want)
		}
	}
	// Every table row has as many cells as its header.
	var cols int
	for i, line := range strings.Split(md, "\n") {
		if !strings.HasPrefix(line, "|") {
			cols = 0
			continue
		}
		n := strings.Count(strings.ReplaceAll(line, `\|`, ""), "|") - 1
		if cols == 0 {
			cols = n
		} else if n != cols {
			t.Errorf("line %d has %d cells, its table %d: %s", i+1, n, cols, line)
		}
	}
}

// TestHTMLSelfContained: no scripts, no external resources, every plot
// titled and described, axis titles with units, print CSS with page breaks.
func TestHTMLSelfContained(t *testing.T) {
	var b bytes.Buffer
	if err := loadSheet(t, fixture).HTML(&b); err != nil {
		t.Fatal(err)
	}
	h := b.String()
	for _, bad := range []string{"<script", "src=", "href=", "url(", "@import", "<link", "<img", "https:"} {
		if strings.Contains(strings.ToLower(h), bad) {
			t.Errorf("HTML contains %q", bad)
		}
	}
	if n := strings.Count(h, "http://") - strings.Count(h, `xmlns="http://www.w3.org/2000/svg"`); n != 0 {
		t.Errorf("HTML has %d http:// references besides the SVG namespace", n)
	}
	svgs := strings.Count(h, "<svg ")
	if svgs != 5 { // V1A, V1B, V2, V3 and the B+ chain
		t.Errorf("%d plots, want 5", svgs)
	}
	if strings.Count(h, "<title id=") != svgs || strings.Count(h, "<desc id=") != svgs {
		t.Error("a plot lacks its <title> or <desc>")
	}
	for _, want := range []string{"Plate volts to chassis, Va (V)", "Plate current, Ia (mA)", "DC volts to chassis (V)", "@media print", "break-before: page", "&lt;check&gt;"} {
		if !strings.Contains(h, want) {
			t.Errorf("HTML lacks %q", want)
		}
	}
}

// TestHashMismatchAndTraining: a changed design is warned about; training
// predictions and path, and a practice fault hidden until revealed.
func TestHashMismatchAndTraining(t *testing.T) {
	at := time.Date(2025, 3, 14, 9, 0, 0, 0, time.UTC)
	s := &procedures.Session{Pinwalk: 1, Mode: procedures.Practise, Started: at, Updated: at,
		Design: procedures.DesignRef{File: "demo:se-6v6-stereo", Hash: "0000"},
		Guesses: []procedures.Guess{
			{Point: point.MustParse("B2 dc_volts"), Raw: "290", Value: 290, Low: 282.4, High: 301.3, Good: true, At: at},
			{Point: point.MustParse("V2.8 dc_volts"), Raw: "30", Value: 30, Low: 13.66, High: 16.44, Good: false, At: at},
		},
		Attempts: []procedures.Attempt{{Step: "supply", Blocked: "Prove the meter", At: at}},
		Practice: &procedures.Practice{Seed: 7, Fault: "R15:open", Named: "R25:open", Score: 40},
	}
	render := func() string {
		sh, err := Build(s, Options{Design: loadDesignA(t)})
		if err != nil {
			t.Fatal(err)
		}
		var b bytes.Buffer
		sh.Markdown(&b)
		return b.String()
	}
	md := render()
	for _, want := range []string{"has changed since the session", "1 of 2 predictions within the band", "✗ outside the band", "Prove the meter", "(not revealed yet)"} {
		if !strings.Contains(md, want) {
			t.Errorf("Markdown lacks %q", want)
		}
	}
	if strings.Contains(md, "R15:open") {
		t.Error("the hidden practice fault shows before it is revealed")
	}
	s.Practice.Revealed = true
	md = render()
	if !strings.Contains(md, "R15:open") || !strings.Contains(md, "✗ not the hidden fault") {
		t.Error("the revealed practice fault and verdict are missing")
	}
}

// TestOutOfBandRanking: the last accepted reading counts (a retry does
// not), ranked by distance outside the band in band widths.
func TestOutOfBandRanking(t *testing.T) {
	rs := []procedures.Reading{
		{Point: point.MustParse("A dc_volts"), Value: 12, Low: 8, High: 10, Status: procedures.OutOfBand, Unit: "V"}, // 1 band width high
		{Point: point.MustParse("B dc_volts"), Value: 2, Low: 8, High: 10, Status: procedures.OutOfBand, Unit: "V"},  // 3 band widths low
		{Point: point.MustParse("C dc_volts"), Value: 20, Low: 8, High: 10, Status: procedures.OutOfBand, Unit: "V"},
		{Point: point.MustParse("C dc_volts"), Value: 9, Low: 8, High: 10, Status: procedures.InBand, Unit: "V"}, // re-measured in band
		{Point: point.MustParse("D dc_volts"), Value: 10.1, Low: 8, High: 10, Status: procedures.Retry, Unit: "V"},
	}
	got := OutOfBand(rs, nil)
	if len(got) != 2 || !strings.Contains(got[0].Name, "B") || !strings.Contains(got[1].Name, "A") {
		t.Fatalf("ranking %+v, want B then A", got)
	}
	if got[0].Score != 3 || got[1].Score != 1 {
		t.Errorf("scores %g, %g; want 3, 1", got[0].Score, got[1].Score)
	}
}

// TestInferSuspects: a fault-finding session ranks its suspects with the
// inference engine; probabilities come most probable first and sum to at
// most 1.
func TestInferSuspects(t *testing.T) {
	s, err := procedures.LoadSession(fixture)
	if err != nil {
		t.Fatal(err)
	}
	s.Mode = procedures.FaultFind
	sh, err := Build(s, Options{Design: loadDesignA(t), Suspects: InferSuspects(40, 1)})
	if err != nil {
		t.Fatal(err)
	}
	if !sh.Ranked || len(sh.Suspects) == 0 {
		t.Fatalf("no ranked suspects (warnings: %v)", sh.Warnings)
	}
	sum := 0.0
	for i, x := range sh.Suspects {
		if math.IsNaN(x.Score) {
			continue
		}
		sum += x.Score
		if i > 0 && x.Score > sh.Suspects[i-1].Score {
			t.Errorf("suspect %d (%s, %g) ranked below a less probable one (%g)", i+1, x.Name, x.Score, sh.Suspects[i-1].Score)
		}
	}
	if sum > 1+1e-9 {
		t.Errorf("probabilities sum to %g", sum)
	}
	var b bytes.Buffer
	sh.Markdown(&b)
	if !strings.Contains(b.String(), "Suspects, most likely first") || !strings.Contains(b.String(), sh.Suspects[0].Name) {
		t.Error("the Markdown does not list the ranked suspects")
	}
	t.Logf("top suspects: %v", sh.Suspects[:min(3, len(sh.Suspects))])
}
