package jobsheet

import (
	"fmt"
	"math"
	"strconv"
	"strings"

	"pinwalk/expect/amp"
)

// Axes maps data coordinates (volts, amps) to SVG user units (pixels):
// x grows to the right, y upwards in data and downwards on the page.
type Axes struct {
	XMin, XMax, YMin, YMax   float64 // data range
	Left, Top, Width, Height float64 // plot area in pixels
}

// Px maps a data point to pixels. Points outside the range map outside
// the plot area (the mapping is affine, not clamped).
func (a Axes) Px(x, y float64) (px, py float64) {
	px = a.Left + (x-a.XMin)/(a.XMax-a.XMin)*a.Width
	py = a.Top + a.Height - (y-a.YMin)/(a.YMax-a.YMin)*a.Height
	return px, py
}

// Clip clips the segment (x0,y0)–(x1,y1) to the data range
// (Liang–Barsky: Y.-D. Liang and B. A. Barsky, "A new concept and method
// for line clipping", ACM Trans. Graphics 3(1), 1984). ok is false when no
// part of the segment is inside.
func (a Axes) Clip(x0, y0, x1, y1 float64) (cx0, cy0, cx1, cy1 float64, ok bool) {
	t0, t1 := 0.0, 1.0
	dx, dy := x1-x0, y1-y0
	p := [4]float64{-dx, dx, -dy, dy}
	q := [4]float64{x0 - a.XMin, a.XMax - x0, y0 - a.YMin, a.YMax - y0}
	for i := 0; i < 4; i++ {
		if p[i] == 0 {
			if q[i] < 0 {
				return 0, 0, 0, 0, false
			}
			continue
		}
		r := q[i] / p[i]
		if p[i] < 0 {
			if r > t1 {
				return 0, 0, 0, 0, false
			}
			t0 = math.Max(t0, r)
		} else {
			if r < t0 {
				return 0, 0, 0, 0, false
			}
			t1 = math.Min(t1, r)
		}
	}
	return x0 + t0*dx, y0 + t0*dy, x0 + t1*dx, y0 + t1*dy, true
}

// niceStep returns a tick step of 1, 2, 2.5 or 5 times a power of ten
// giving at most about n intervals over span.
func niceStep(span float64, n int) float64 {
	if !(span > 0) {
		return 1
	}
	raw := span / float64(n)
	p := math.Pow(10, math.Floor(math.Log10(raw)))
	for _, m := range []float64{1, 2, 2.5, 5, 10} {
		if m*p >= raw*(1-1e-9) {
			return m * p
		}
	}
	return 10 * p
}

// niceCeil rounds v up to a multiple of a nice step for about n ticks.
func niceCeil(v float64, n int) float64 {
	s := niceStep(v, n)
	return math.Ceil(v/s-1e-9) * s
}

// Curve is one plate characteristic: plate current against plate volts
// (to chassis) at a fixed grid-to-cathode voltage.
type Curve struct {
	GridVolts float64 // Vgk
	Operating bool    // the curve through the operating point
	Pts       [][2]float64
}

// Line is a load line in data units: from (X0, Y0) to (X1, Y1), its
// resistance in ohms and what it is.
type Line struct {
	X0, Y0, X1, Y1 float64
	Ohms           float64
	What           string
}

// PlateChart is a section's plate characteristics with its load lines and
// operating points. The x axis is plate volts to chassis (what the meter
// reads), so every curve is drawn at the operating cathode volts: the
// Koren model is evaluated at Vpk = Va − Vk.
type PlateChart struct {
	ID, Label string // "V2", "V2 6V6GT"
	Pentode   bool
	// CathodeVolts is the operating cathode volts; ScreenVolts the screen
	// to cathode volts the pentode curves are drawn at.
	CathodeVolts, ScreenVolts float64
	// OperatingGrid is the operating grid-to-cathode volts (its curve is
	// dashed).
	OperatingGrid float64
	Curves        []Curve
	// DC is the DC load line from (B+, 0) to (0, B+/R); nil when the
	// plate load is not known. AC is the output stage's AC load line
	// through the expected operating point (nil for other stages).
	DC, AC     *Line
	SupplyNet  string
	LoadRef    string
	Expected   [2]float64 // (Va, Ia)
	Measured   *[2]float64
	PlateWatts float64 // plate dissipation rating (0: none drawn)
	Axes       Axes
}

// Chart geometry in pixels.
const (
	chartW, chartH = 820.0, 460.0
	plotL, plotT   = 70.0, 40.0
	plotW, plotH   = 520.0, 360.0
)

// newPlateChart computes a section's plate chart from its Koren model.
func newPlateChart(m *amp.Model, op *amp.OP, i int, load *PlateLoad, meas *OpPoint) *PlateChart {
	sec := m.Sections[i]
	so := op.Sections[i]
	k := sec.Type.Model
	c := &PlateChart{ID: sec.Name(), Label: sec.Name() + " " + sec.Type.Name, Pentode: sec.Pentode,
		CathodeVolts: clean(so.Vk), ScreenVolts: clean(so.Vg2 - so.Vk), Expected: [2]float64{so.Va, so.Ia},
		PlateWatts: sec.Type.Limits.PlateWatts}
	if meas != nil && meas.Ia > 0 {
		c.Measured = &[2]float64{meas.Va, meas.Ia}
	}
	bplus := so.Va
	if load != nil {
		c.LoadRef, c.SupplyNet = load.Ref, load.SupplyNet
		if v, ok := m.NetVolts(op, load.SupplyNet); ok {
			bplus = v
		}
		if load.Ohms > 0 {
			c.DC = &Line{X0: bplus, Y0: 0, X1: 0, Y1: bplus / load.Ohms, Ohms: load.Ohms,
				What: fmt.Sprintf("DC load line: %s from %s through %s", fmtVal(load.Ohms, "Ω"), load.SupplyNet, load.Ref)}
		}
		if load.Output && load.ACOhms > 0 {
			z := load.ACOhms
			c.AC = &Line{X0: so.Va + so.Ia*z, Y0: 0, X1: 0, Y1: so.Ia + so.Va/z, Ohms: z,
				What: fmt.Sprintf("AC load line: %s (%s)", fmtVal(z, "Ω"), load.ACWhat)}
		}
	}
	// Ranges.
	xmax := 1.15 * math.Max(bplus, so.Va)
	if c.AC != nil {
		xmax = math.Max(xmax, 1.02*c.AC.X0)
	}
	if c.Measured != nil {
		xmax = math.Max(xmax, 1.1*c.Measured[0])
	}
	ymax := 2.2 * so.Ia
	if c.Measured != nil {
		ymax = math.Max(ymax, 1.3*c.Measured[1])
	}
	if !(ymax > 0) {
		ymax = 1e-3
	}
	c.Axes = Axes{XMin: 0, XMax: niceCeil(xmax, 6), YMin: 0, YMax: niceCeil(ymax, 6), Left: plotL, Top: plotT, Width: plotW, Height: plotH}

	// Grid voltages: 0 down past twice the bias in nice steps, and the
	// operating one.
	bias := so.Vg - so.Vk
	c.OperatingGrid = bias
	step := niceStep(math.Max(2*math.Abs(bias), 1), 6)
	var grids []float64
	for g := 0.0; g >= -math.Max(2*math.Abs(bias), step)-1e-9; g -= step {
		grids = append(grids, g)
	}
	eval := func(vgk, va float64) float64 {
		vpk := va - so.Vk
		if sec.Pentode {
			ip, _, _, _ := k.Pentode(vgk, c.ScreenVolts, vpk)
			return ip
		}
		ip, _, _ := k.TriodePlate(vgk, vpk)
		return ip
	}
	add := func(g float64, operating bool) {
		cv := Curve{GridVolts: g, Operating: operating}
		const n = 160
		peak := 0.0
		for j := 0; j <= n; j++ {
			va := c.CathodeVolts + (c.Axes.XMax-c.CathodeVolts)*float64(j)/n
			ia := eval(g, va)
			if ia > c.Axes.YMax {
				// Cut at the top edge (linear interpolation).
				if len(cv.Pts) > 0 {
					p := cv.Pts[len(cv.Pts)-1]
					t := (c.Axes.YMax - p[1]) / (ia - p[1])
					cv.Pts = append(cv.Pts, [2]float64{p[0] + t*(va-p[0]), c.Axes.YMax})
				}
				break
			}
			peak = math.Max(peak, ia)
			cv.Pts = append(cv.Pts, [2]float64{va, ia})
		}
		if peak < 0.01*c.Axes.YMax && !operating {
			return
		}
		c.Curves = append(c.Curves, cv)
	}
	for _, g := range grids {
		if math.Abs(g-bias) < 0.02*step {
			continue
		}
		add(g, false)
	}
	add(bias, true)
	return c
}

// DCSegment returns the drawn (clipped) part of the DC load line in data
// units; ok is false when there is none.
func (c *PlateChart) DCSegment() (x0, y0, x1, y1 float64, ok bool) {
	if c.DC == nil {
		return 0, 0, 0, 0, false
	}
	return c.Axes.Clip(c.DC.X0, c.DC.Y0, c.DC.X1, c.DC.Y1)
}

// ACSegment is DCSegment for the AC load line.
func (c *PlateChart) ACSegment() (x0, y0, x1, y1 float64, ok bool) {
	if c.AC == nil {
		return 0, 0, 0, 0, false
	}
	return c.Axes.Clip(c.AC.X0, c.AC.Y0, c.AC.X1, c.AC.Y1)
}

func f1(v float64) string { return strconv.FormatFloat(v, 'f', 1, 64) }

func xmlEsc(s string) string {
	r := strings.NewReplacer("&", "&amp;", "<", "&lt;", ">", "&gt;", `"`, "&quot;")
	return r.Replace(s)
}

func svgID(s string) string {
	var b strings.Builder
	for _, r := range s {
		if r >= 'a' && r <= 'z' || r >= 'A' && r <= 'Z' || r >= '0' && r <= '9' {
			b.WriteRune(r)
		} else {
			b.WriteByte('-')
		}
	}
	return b.String()
}

// mA prints a tick value in amps as milliamps, without float noise.
func mA(v float64) string {
	return strconv.FormatFloat(math.Round(v*1e7)/1e4, 'f', -1, 64)
}

// gridText prints a grid voltage "−5 V", "0 V".
func gridText(g float64) string {
	s := strconv.FormatFloat(math.Abs(g), 'f', -1, 64)
	if math.Abs(g-math.Round(g*10)/10) > 1e-9 {
		s = strconv.FormatFloat(math.Abs(g), 'f', 1, 64)
	}
	if g < 0 && s != "0" {
		return "−" + s + " V"
	}
	return s + " V"
}

// Desc is the chart's text description (the SVG <desc>).
func (c *PlateChart) Desc() string {
	var b strings.Builder
	fmt.Fprintf(&b, "Plate current (mA) against plate volts to chassis (V) for %s from its Koren model, at cathode %s", c.Label, fmtVal(c.CathodeVolts, "V"))
	if c.Pentode {
		fmt.Fprintf(&b, " and screen %s above the cathode", fmtVal(c.ScreenVolts, "V"))
	}
	var gs []string
	for _, cv := range c.Curves {
		gs = append(gs, gridText(cv.GridVolts))
	}
	fmt.Fprintf(&b, "; curves for grid-to-cathode volts %s. ", strings.Join(gs, ", "))
	if c.DC != nil {
		fmt.Fprintf(&b, "%s, from %s at 0 A to 0 V at %s. ", c.DC.What, fmtVal(c.DC.X0, "V"), fmtVal(c.DC.Y1, "A"))
	}
	if c.AC != nil {
		fmt.Fprintf(&b, "%s, through the expected operating point. ", c.AC.What)
	}
	fmt.Fprintf(&b, "Expected operating point %s, %s", fmtVal(c.Expected[0], "V"), fmtVal(c.Expected[1], "A"))
	if c.Measured != nil {
		fmt.Fprintf(&b, "; measured %s, %s", fmtVal(c.Measured[0], "V"), fmtVal(c.Measured[1], "A"))
	}
	b.WriteString(".")
	return b.String()
}

// SVG renders the chart as an inline SVG element (no scripts, no external
// resources) with a <title> and <desc>, axis labels with units, shapes as
// well as dash patterns to tell the lines apart, and a legend.
func (c *PlateChart) SVG() string {
	a := c.Axes
	id := "plate-" + svgID(c.ID)
	var b strings.Builder
	fmt.Fprintf(&b, `<svg xmlns="http://www.w3.org/2000/svg" class="chart" viewBox="0 0 %g %g" width="%g" height="%g" role="img" aria-labelledby="%s-t %s-d">`+"\n",
		chartW, chartH, chartW, chartH, id, id)
	fmt.Fprintf(&b, `<title id="%s-t">%s plate characteristics with load lines</title>`+"\n", id, xmlEsc(c.Label))
	fmt.Fprintf(&b, `<desc id="%s-d">%s</desc>`+"\n", id, xmlEsc(c.Desc()))
	writeAxes(&b, a, "Plate volts to chassis, Va (V)", "Plate current, Ia (mA)", func(v float64) string { return strconv.FormatFloat(v, 'f', -1, 64) }, mA)
	// Clip everything else to the plot area.
	fmt.Fprintf(&b, `<clipPath id="%s-clip"><rect x="%s" y="%s" width="%s" height="%s"/></clipPath>`+"\n", id, f1(a.Left), f1(a.Top), f1(a.Width), f1(a.Height))
	// Curves.
	for _, cv := range c.Curves {
		if len(cv.Pts) < 2 {
			continue
		}
		var pts []string
		for _, p := range cv.Pts {
			x, y := a.Px(p[0], p[1])
			pts = append(pts, f1(x)+","+f1(y))
		}
		style := `stroke="#222" stroke-width="1.2"`
		if cv.Operating {
			style = `stroke="#000" stroke-width="1.2" stroke-dasharray="2 3"`
		}
		fmt.Fprintf(&b, `<polyline class="curve" fill="none" %s points="%s"/>`+"\n", style, strings.Join(pts, " "))
		last := cv.Pts[len(cv.Pts)-1]
		lx, ly := a.Px(last[0], last[1])
		if cv.Operating {
			continue // named in the legend: its label would crowd a neighbour's
		}
		label := gridText(cv.GridVolts)
		if last[1] >= a.YMax*(1-1e-9) {
			fmt.Fprintf(&b, `<text x="%s" y="%s" font-size="11" text-anchor="middle">%s</text>`+"\n", f1(lx), f1(a.Top-4), xmlEsc(label))
		} else {
			fmt.Fprintf(&b, `<text x="%s" y="%s" font-size="11">%s</text>`+"\n", f1(a.Left+a.Width+4), f1(ly+4), xmlEsc(label))
		}
	}
	// Plate dissipation limit: Ia = P / (Va − Vk).
	if c.PlateWatts > 0 {
		var pts []string
		const n = 120
		for j := 0; j <= n; j++ {
			va := a.XMin + (a.XMax-a.XMin)*float64(j)/n
			if va-c.CathodeVolts <= 0 {
				continue
			}
			ia := c.PlateWatts / (va - c.CathodeVolts)
			if ia > a.YMax {
				continue
			}
			x, y := a.Px(va, ia)
			pts = append(pts, f1(x)+","+f1(y))
		}
		if len(pts) > 1 {
			fmt.Fprintf(&b, `<polyline class="pmax" fill="none" stroke="#555" stroke-width="1" stroke-dasharray="1 2" points="%s"/>`+"\n", strings.Join(pts, " "))
		}
	}
	// Load lines.
	if x0, y0, x1, y1, ok := c.DCSegment(); ok {
		px0, py0 := a.Px(x0, y0)
		px1, py1 := a.Px(x1, y1)
		fmt.Fprintf(&b, `<line id="%s-dcload" class="dc-load" x1="%s" y1="%s" x2="%s" y2="%s" stroke="#000" stroke-width="2.2"/>`+"\n", id, f1(px0), f1(py0), f1(px1), f1(py1))
	}
	if x0, y0, x1, y1, ok := c.ACSegment(); ok {
		px0, py0 := a.Px(x0, y0)
		px1, py1 := a.Px(x1, y1)
		fmt.Fprintf(&b, `<line id="%s-acload" class="ac-load" x1="%s" y1="%s" x2="%s" y2="%s" stroke="#000" stroke-width="1.6" stroke-dasharray="9 5"/>`+"\n", id, f1(px0), f1(py0), f1(px1), f1(py1))
	}
	// Operating points: a filled circle (expected), an open square (measured).
	ex, ey := a.Px(c.Expected[0], c.Expected[1])
	fmt.Fprintf(&b, `<circle class="op-expected" cx="%s" cy="%s" r="5" fill="#000"/>`+"\n", f1(ex), f1(ey))
	if c.Measured != nil {
		mx, my := a.Px(c.Measured[0], c.Measured[1])
		fmt.Fprintf(&b, `<rect class="op-measured" x="%s" y="%s" width="13" height="13" fill="none" stroke="#000" stroke-width="2"/>`+"\n", f1(mx-6.5), f1(my-6.5))
	}
	// Legend, right of the plot.
	lx := a.Left + a.Width + 50
	ly := a.Top + a.Height - 116
	leg := func(i int, sym, text string) {
		y := ly + float64(i)*20
		fmt.Fprintf(&b, sym+"\n", f1(lx), f1(y), f1(lx+22), f1(y))
		fmt.Fprintf(&b, `<text x="%s" y="%s" font-size="11">%s</text>`+"\n", f1(lx+28), f1(y+4), xmlEsc(text))
	}
	i := 0
	if c.DC != nil {
		leg(i, `<line x1="%s" y1="%s" x2="%s" y2="%s" stroke="#000" stroke-width="2.2"/>`, "DC load line")
		i++
	}
	if c.AC != nil {
		leg(i, `<line x1="%s" y1="%s" x2="%s" y2="%s" stroke="#000" stroke-width="1.6" stroke-dasharray="9 5"/>`, "AC load line")
		i++
	}
	leg(i, `<line x1="%s" y1="%s" x2="%s" y2="%s" stroke="#000" stroke-width="1.2" stroke-dasharray="2 3"/>`, "Vgk "+gridText(c.OperatingGrid)+" (operating)")
	i++
	if c.PlateWatts > 0 {
		leg(i, `<line x1="%s" y1="%s" x2="%s" y2="%s" stroke="#555" stroke-dasharray="1 2"/>`, "max "+fmtVal(c.PlateWatts, "W"))
		i++
	}
	y := ly + float64(i)*20
	fmt.Fprintf(&b, `<circle cx="%s" cy="%s" r="5" fill="#000"/><text x="%s" y="%s" font-size="11">expected</text>`+"\n", f1(lx+11), f1(y), f1(lx+28), f1(y+4))
	if c.Measured != nil {
		y += 20
		fmt.Fprintf(&b, `<rect x="%s" y="%s" width="11" height="11" fill="#fff" stroke="#000" stroke-width="2"/><text x="%s" y="%s" font-size="11">measured</text>`+"\n", f1(lx+5.5), f1(y-5.5), f1(lx+28), f1(y+4))
	}
	b.WriteString("</svg>\n")
	return b.String()
}

// writeAxes draws the frame, grid, ticks and axis titles.
func writeAxes(b *strings.Builder, a Axes, xTitle, yTitle string, xTick, yTick func(float64) string) {
	fmt.Fprintf(b, `<rect x="%s" y="%s" width="%s" height="%s" fill="none" stroke="#000"/>`+"\n", f1(a.Left), f1(a.Top), f1(a.Width), f1(a.Height))
	xs := niceStep(a.XMax-a.XMin, 6)
	for x := math.Ceil(a.XMin/xs-1e-9) * xs; x <= a.XMax+1e-9*xs; x += xs {
		px, _ := a.Px(x, a.YMin)
		fmt.Fprintf(b, `<line x1="%s" y1="%s" x2="%s" y2="%s" stroke="#ccc" stroke-width="0.6"/>`, f1(px), f1(a.Top), f1(px), f1(a.Top+a.Height))
		fmt.Fprintf(b, `<text x="%s" y="%s" font-size="11" text-anchor="middle">%s</text>`+"\n", f1(px), f1(a.Top+a.Height+15), xTick(roundTo(x, xs)))
	}
	if yTick != nil {
		ys := niceStep(a.YMax-a.YMin, 6)
		for y := math.Ceil(a.YMin/ys-1e-9) * ys; y <= a.YMax+1e-9*ys; y += ys {
			_, py := a.Px(a.XMin, y)
			fmt.Fprintf(b, `<line x1="%s" y1="%s" x2="%s" y2="%s" stroke="#ccc" stroke-width="0.6"/>`, f1(a.Left), f1(py), f1(a.Left+a.Width), f1(py))
			fmt.Fprintf(b, `<text x="%s" y="%s" font-size="11" text-anchor="end">%s</text>`+"\n", f1(a.Left-5), f1(py+4), yTick(roundTo(y, ys)))
		}
		fmt.Fprintf(b, `<text x="%s" y="%s" font-size="12" text-anchor="middle" transform="rotate(-90 %s %s)">%s</text>`+"\n",
			f1(a.Left-48), f1(a.Top+a.Height/2), f1(a.Left-48), f1(a.Top+a.Height/2), xmlEsc(yTitle))
	}
	fmt.Fprintf(b, `<text x="%s" y="%s" font-size="12" text-anchor="middle">%s</text>`+"\n", f1(a.Left+a.Width/2), f1(a.Top+a.Height+36), xmlEsc(xTitle))
}

// roundTo removes floating-point noise from a tick value.
func roundTo(v, step float64) float64 {
	q := step / 1000
	v = math.Round(v/q) * q
	if v == 0 {
		return 0 // not −0
	}
	return v
}

// SupplySVG draws the B+ chain: one row per filter net, the expected band
// as an outlined bar with the nominal as a tick, the reading as a filled
// diamond when in band and a cross when out of band, with the value and
// status written beside it.
func SupplySVG(rows []SupplyRow) string {
	if len(rows) == 0 {
		return ""
	}
	lo, hi := math.Inf(1), 0.0
	for _, r := range rows {
		for _, v := range []float64{r.Low, r.High, r.Nominal} {
			if v > 0 {
				lo, hi = math.Min(lo, v), math.Max(hi, v)
			}
		}
		if r.Reading != nil {
			lo, hi = math.Min(lo, r.Reading.Value), math.Max(hi, r.Reading.Value)
		}
	}
	if math.IsInf(lo, 1) {
		lo = 0
	}
	span := hi - lo
	step := niceStep(math.Max(span, 10), 6)
	xmin := math.Max(0, math.Floor((lo-0.3*span)/step)*step)
	xmax := math.Ceil((hi+0.1*span)/step+1e-9) * step
	rowH := 40.0
	h := 40 + rowH*float64(len(rows)) + 50
	a := Axes{XMin: xmin, XMax: xmax, YMin: 0, YMax: float64(len(rows)), Left: 70, Top: 30, Width: 470, Height: rowH * float64(len(rows))}
	var b strings.Builder
	fmt.Fprintf(&b, `<svg xmlns="http://www.w3.org/2000/svg" class="chart" viewBox="0 0 %g %g" width="%g" height="%g" role="img" aria-labelledby="bplus-t bplus-d">`+"\n", chartW, h, chartW, h)
	b.WriteString(`<title id="bplus-t">B+ chain: expected band and reading per filter net</title>` + "\n")
	var desc []string
	for _, r := range rows {
		s := "net " + r.Net + ": expected "
		if r.HasBand {
			s += fmtBand(r.Low, r.High, "V")
		} else {
			s += fmtVal(r.Nominal, "V") + " (nominal)"
		}
		if r.Reading != nil {
			s += ", read " + fmtVal(r.Reading.Value, "V") + " (" + strings.TrimLeft(StatusText(r.Reading.Status), "✓✗?•– ") + ")"
		} else {
			s += ", not read"
		}
		desc = append(desc, s)
	}
	fmt.Fprintf(&b, `<desc id="bplus-d">DC volts to chassis of each HT filter net, from the rectifier outwards. %s.</desc>`+"\n", xmlEsc(strings.Join(desc, "; ")))
	writeAxes(&b, a, "DC volts to chassis (V)", "", func(v float64) string { return strconv.FormatFloat(v, 'f', -1, 64) }, nil)
	for i, r := range rows {
		yc := a.Top + rowH*(float64(i)+0.5)
		fmt.Fprintf(&b, `<text x="%s" y="%s" font-size="12" text-anchor="end">%s</text>`+"\n", f1(a.Left-8), f1(yc+4), xmlEsc(r.Net))
		if r.HasBand {
			x0, _ := a.Px(r.Low, 0)
			x1, _ := a.Px(r.High, 0)
			fmt.Fprintf(&b, `<rect class="band" x="%s" y="%s" width="%s" height="14" fill="#e6e6e6" stroke="#000"/>`+"\n", f1(x0), f1(yc-7), f1(math.Max(x1-x0, 1)))
		}
		xn, _ := a.Px(r.Nominal, 0)
		fmt.Fprintf(&b, `<line class="nominal" x1="%s" y1="%s" x2="%s" y2="%s" stroke="#000" stroke-width="1.5"/>`+"\n", f1(xn), f1(yc-10), f1(xn), f1(yc+10))
		text := "not read"
		tx := a.Left + a.Width + 10
		if rd := r.Reading; rd != nil {
			xr, _ := a.Px(rd.Value, 0)
			if rd.Status == "out-of-band" {
				fmt.Fprintf(&b, `<path class="reading out" d="M%s %s l12 12 m0 -12 l-12 12" stroke="#000" stroke-width="2.5" fill="none"/>`+"\n", f1(xr-6), f1(yc-6))
			} else {
				fmt.Fprintf(&b, `<path class="reading" d="M%s %s l6 6 l-6 6 l-6 -6 z" fill="#000"/>`+"\n", f1(xr), f1(yc-6))
			}
			text = fmtVal(rd.Value, "V") + "  " + StatusText(rd.Status)
		}
		fmt.Fprintf(&b, `<text x="%s" y="%s" font-size="12">%s</text>`+"\n", f1(tx), f1(yc+4), xmlEsc(text))
	}
	// Legend.
	ly := a.Top + a.Height + 48
	fmt.Fprintf(&b, `<rect x="70" y="%s" width="24" height="10" fill="#e6e6e6" stroke="#000"/><text x="100" y="%s" font-size="11">expected band</text>`, f1(ly-5), f1(ly+4))
	fmt.Fprintf(&b, `<line x1="200" y1="%s" x2="200" y2="%s" stroke="#000" stroke-width="1.5"/><text x="208" y="%s" font-size="11">nominal</text>`, f1(ly-7), f1(ly+7), f1(ly+4))
	fmt.Fprintf(&b, `<path d="M280 %s l6 6 l-6 6 l-6 -6 z" fill="#000"/><text x="292" y="%s" font-size="11">reading in band</text>`, f1(ly-6), f1(ly+4))
	fmt.Fprintf(&b, `<path d="M394 %s l12 12 m0 -12 l-12 12" stroke="#000" stroke-width="2.5" fill="none"/><text x="412" y="%s" font-size="11">reading out of band</text>`+"\n", f1(ly-6), f1(ly+4))
	b.WriteString("</svg>\n")
	return b.String()
}
