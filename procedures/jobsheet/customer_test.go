package jobsheet

import (
	"bytes"
	"math"
	"pinwalk/expect/point"
	"regexp"
	"strings"
	"testing"
	"time"

	"pinwalk/expect/design"
	"pinwalk/procedures"
)

const (
	repairFixture = "../../testdata/sessions/pp-el34-repair.yaml"
	designPP      = "../../testdata/designs/pp-el34-fixed.yaml"
)

// internalKey matches what a person must never read on the customer's
// sheet: point keys as sessions spell them ("cold:GR1 ohms",
// "discharge:C2 dc_volts", "bias:V3 dc_volts", "V3.8", quantity
// suffixes, "earth ohms"), step ids ("variac-50", "cold-b+"), and raw
// number formats (+Inf, NaN).
var internalKey = regexp.MustCompile(`(?i)\b(cold|discharge|bias|part):|\b[A-Z]+[0-9]+[A-Z]?\.[0-9]+\b|\b(dc|ac)\\?_(volts|amps)\b|ripple\\?_volts|\bohms\b|\b(cold|variac|valve|bias|discharge)-[A-Za-z0-9+]|\binf\b|\bnan\b|\(from below\)`)

func renderCustomer(t *testing.T, s *procedures.Session, d *design.Design) (md, html string) {
	t.Helper()
	sh, err := Build(s, Options{Design: d})
	if err != nil {
		t.Fatal(err)
	}
	var m, h bytes.Buffer
	if err := sh.CustomerMarkdown(&m); err != nil {
		t.Fatal(err)
	}
	if err := sh.CustomerHTML(&h); err != nil {
		t.Fatal(err)
	}
	return m.String(), h.String()
}

func loadDesign(t *testing.T, path string) *design.Design {
	t.Helper()
	d, probs := design.Load(path)
	if d == nil || len(probs.Errors()) > 0 {
		t.Fatalf("loading %s: %v", path, probs)
	}
	return d
}

// The customer's sheet, Markdown and HTML, of a repair session, an old
// bring-up session, with and without the design: no internal key
// anywhere. The check itself is checked on the bench sheet, which shows
// the keys on purpose.
func TestCustomerSheetNoInternalKeys(t *testing.T) {
	cases := []struct {
		session string
		design  *design.Design
	}{
		{repairFixture, loadDesign(t, designPP)},
		{repairFixture, nil},
		{fixture, loadDesign(t, designA)},
		{fixtureAfter, nil},
	}
	found := 0
	for _, c := range cases {
		s, err := procedures.LoadSession(c.session)
		if err != nil {
			t.Fatal(err)
		}
		md, html := renderCustomer(t, s, c.design)
		for name, text := range map[string]string{"md": md, "html": html} {
			if hits := internalKey.FindAllString(text, -1); len(hits) > 0 {
				found += len(hits)
				t.Errorf("%s (design %v), %s: internal keys %q", c.session, c.design != nil, name, hits)
			}
		}
		if !strings.Contains(md, "Appendix: bench log") || !strings.Contains(html, "@media print") {
			t.Errorf("%s: no appendix or no print stylesheet", c.session)
		}
	}
	t.Logf("internal keys found in the customer sheets: %d", found)
	// The pattern does catch keys: the bench sheet lists them.
	s, _ := procedures.LoadSession(repairFixture)
	sh, _ := Build(s, Options{Design: loadDesign(t, designPP)})
	var bench bytes.Buffer
	sh.Markdown(&bench)
	for _, want := range []string{"cold:NB ohms", "discharge:C2 dc\\_volts", "bias:V3 dc\\_volts", "V3.8 dc\\_volts"} {
		if !strings.Contains(bench.String(), want) || !internalKey.MatchString(want) {
			t.Errorf("the key pattern or the bench sheet misses %q", want)
		}
	}
}

// The repair fixture's sheet says what a customer needs: the complaint,
// the finding in words, the part, before and after, the safety tests,
// the power, the soak and the sign-off; the HTML is self-contained.
func TestCustomerSheetContent(t *testing.T) {
	s, err := procedures.LoadSession(repairFixture)
	if err != nil {
		t.Fatal(err)
	}
	md, html := renderCustomer(t, s, loadDesign(t, designPP))
	for _, want := range []string{
		"# Repair report: Example Audio PP-40 (invented)",
		"| Customer | J. Sample (invented) |",
		"“It hums loudly from switch-on",
		"C5 was leaking current (leaky).",
		"| C5 | 100µF | 100 V, 105 °C |",
		"| V3 bias, volts across its cathode sense resistor | 35.4\u00a0mV\u00a0to\u00a041.2\u00a0mV | 71\u00a0mV | 38.4\u00a0mV | ✓\u00a0within\u00a0range |",
		"| NB (bias supply) to chassis, unplugged |",
		"| Earth bond | 60\u00a0mΩ at 10\u00a0A test current | ✓ passed |",
		"| Insulation resistance | more than 300\u00a0MΩ at 500\u00a0V DC | ✓ passed |",
		"Soak test: ran for 2 h",
		"Repaired and tested by R. Example (invented), signed off 2026-02-10 15:00 +0100.",
		"T1 HT half a, across the winding, unplugged",
		"J1 live to neutral at the mains plug",
		"### First power-up, mains raised in steps on a variac",
		"### After the repair",
		"| Times | local, UTC+01:00 |",
	} {
		if !strings.Contains(md, want) {
			t.Errorf("customer sheet lacks %q", want)
		}
	}
	if strings.Contains(md, "T1 HT half a to chassis") {
		t.Error("a winding reading labelled as to chassis")
	}
	for _, bad := range []string{"<script", "http://", "https://", " src=", "<link"} {
		if strings.Contains(html, bad) {
			t.Errorf("HTML is not self-contained: %q", bad)
		}
	}
}

// Safety tests: a multimeter reading is an indication only (the note
// names the standards) and never "passed"; a missing test says so; a
// failed one warns at the top; an insulation test below 500 V is no pass.
func TestCustomerSafetyVerdicts(t *testing.T) {
	base, err := procedures.LoadSession(repairFixture)
	if err != nil {
		t.Fatal(err)
	}
	at := time.Date(2026, 2, 10, 12, 0, 0, 0, time.UTC)
	for _, c := range []struct {
		name        string
		earth, insu *procedures.SafetyTest
		want, not   []string
	}{
		{"multimeter", &procedures.SafetyTest{Ohms: 0.05, Instrument: procedures.Multimeter, At: at},
			&procedures.SafetyTest{Ohms: 50e6, Instrument: procedures.Multimeter, At: at},
			[]string{EarthBondMultimeterNote, InsulationMultimeterNote, "does not certify"}, []string{"✓ passed"}},
		{"missing", nil, nil, []string{"| **Earth bond** | **not tested** | **✗ NOT TESTED** |", "does not certify"}, []string{"✓ passed"}},
		{"failed", &procedures.SafetyTest{Ohms: 0.9, Instrument: procedures.EarthBondTester, TestAmps: 10, At: at},
			&procedures.SafetyTest{Ohms: 300e6, Instrument: procedures.InsulationTester, TestVolts: 500, At: at},
			[]string{"✗ FAILED", "FAILED an electrical-safety test", "Do not use it"}, nil},
		{"low test volts", &procedures.SafetyTest{Ohms: 0.05, Instrument: procedures.EarthBondTester, At: at},
			&procedures.SafetyTest{Ohms: 300e6, Instrument: procedures.InsulationTester, TestVolts: 250, At: at},
			[]string{"below the 500\u00a0V DC the test calls for"}, nil},
	} {
		s := *base
		s.Job.After.EarthBond, s.Job.After.Insulation = c.earth, c.insu
		md, _ := renderCustomer(t, &s, nil)
		for _, w := range c.want {
			if !strings.Contains(md, w) {
				t.Errorf("%s: lacks %q", c.name, w)
			}
		}
		for _, w := range c.not {
			if strings.Contains(md, w) {
				t.Errorf("%s: says %q", c.name, w)
			}
		}
	}
}

// How the amp was powered: "not powered" for a session of cold checks
// only, "not used" only when every powered reading was at full mains.
func TestVariacText(t *testing.T) {
	for _, c := range []struct {
		vs   []float64
		want string
	}{
		{nil, "not powered"},
		{[]float64{0}, "not powered"},
		{[]float64{0, 1}, "not used: powered at full mains"},
		{[]float64{0, 0.25, 0.5, 1}, "readings at 25 %, 50 %, 100 % of mains"},
	} {
		if got := variacText(c.vs); !strings.HasPrefix(got, c.want) {
			t.Errorf("variacText(%v) = %q, want %q…", c.vs, got, c.want)
		}
	}
}

// The labeller: the brief's own examples and the families of keys.
func TestLabel(t *testing.T) {
	withDesign := NewLabeller(loadDesign(t, designA))
	none := NewLabeller(nil)
	for _, c := range []struct {
		l         *Labeller
		key, want string
	}{
		{withDesign, "cold:GR1 ohms", "GR1 to chassis, unplugged"},
		{withDesign, "cold:B1 ohms", "B1 (B+ supply) to chassis, unplugged"},
		{withDesign, "discharge:C2 dc_volts", "C2 after discharge"},
		{withDesign, "bias:V3 dc_volts", "V3 bias, volts across its cathode sense resistor"},
		{withDesign, "bias:V3 dc_amps", "V3 idle current, bias set"},
		{withDesign, "V3.8 dc_volts", "V3 pin 8 cathode, DC volts"},
		{withDesign, "V2.2 ac_volts", "V2 heater, pins 2-7"},
		{withDesign, "B1 ripple_volts", "net B1 (B+ supply), ripple"},
		{withDesign, "cold:T1 HT half a ohms", "T1 HT half a, across the winding, unplugged"},
		{withDesign, "cold:L1 ohms", "L1, across the winding, unplugged"},
		{withDesign, "earth ohms", "mains earth pin to chassis, unplugged"},
		{withDesign, "part:R7 ohms", "R7 out of circuit, resistance"},
		{none, "V3.8 dc_volts", "V3 pin 8, DC volts"},
		{none, "cold:L1 ohms", "L1, across the winding, unplugged"},
		{none, "cold:OT1 half b ohms", "OT1 half b, across the winding, unplugged"},
		{none, "cold:GR1 ohms", "GR1 to chassis, unplugged"},
		{none, "B4 dc_volts", "net B4, DC volts"},
		{none, "discharge:supply dc_volts", "supply nets after discharge"},
	} {
		if got := c.l.Label(point.MustParse(c.key)); got != c.want {
			t.Errorf("Label(%q) = %q, want %q", c.key, got, c.want)
		}
	}
}

// An open reading or band prints as open, never +Inf.
func TestOpenNotInf(t *testing.T) {
	inf := math.Inf(1)
	for _, c := range []struct{ got, want string }{
		{fmtVal(inf, "Ω"), "open (OL)"},
		{fmtBand(inf, inf, "Ω"), "open (OL)"},
		{fmtBand(1e6, inf, "Ω"), "1 MΩ or more, up to open"},
		{cVal(inf, "Ω"), "open\u00a0(OL)"},
	} {
		if c.got != c.want {
			t.Errorf("got %q, want %q", c.got, c.want)
		}
	}
}

// Before and after: a point out of band before the repair pairs with its
// last reading after it; a point never out of band is not listed.
func TestBeforeAfter(t *testing.T) {
	t0 := time.Date(2026, 2, 10, 9, 0, 0, 0, time.UTC)
	rd := func(min int, key string, v float64, st procedures.Status) procedures.Reading {
		return procedures.Reading{Step: "s", Point: point.MustParse(key), Value: v, Unit: "V", Variac: 1, Status: st, At: t0.Add(time.Duration(min) * time.Minute), Low: 60, High: 80}
	}
	rs := []procedures.Reading{
		rd(1, "NB dc_volts", 52, procedures.OutOfBand),
		rd(2, "B1 dc_volts", 70, procedures.InBand),
		rd(3, "NB dc_volts", 53, procedures.Retry),
		rd(30, "NB dc_volts", 70, procedures.InBand),
		rd(31, "B2 dc_volts", 90, procedures.OutOfBand), // after the repair: not a "before"
	}
	ba := beforeAfter(rs, t0.Add(20*time.Minute))
	if len(ba) != 1 || ba[0].Key.String() != "NB dc_volts" || ba[0].Before.Value != 52 || ba[0].After.Value != 70 || !ba[0].Remeasured {
		t.Errorf("beforeAfter = %+v", ba)
	}
}

// A whole fault-finding job on the stereo demo, as a technician ran it in
// plain mode: the right channel silent, V3's cathode at 53 V (switch-off),
// KR2 open to chassis cold, R25 read good once (a stop: not confirmed)
// and then open, replaced, the amp re-run, power out, soak, safety tests
// and sign-off. The replaced part's own readings are findings, not points
// still out; a power figure with no load given does not print "0 Ω".
func TestCustomerSheetWholeJob(t *testing.T) {
	s, err := procedures.LoadSession("../../testdata/sessions/se-6v6-r25-repair.yaml")
	if err != nil {
		t.Fatal(err)
	}
	md, html := renderCustomer(t, s, loadDesign(t, "../../testdata/designs/se-6v6-stereo.yaml"))
	for _, want := range []string{
		"R25 had gone open circuit.",
		"Channel with the fault: right.",
		"| R25 | 330R | 3W |",
		"| V3 pin 8 cathode, DC volts |",
		"✓ passed",
	} {
		if !strings.Contains(md, want) {
			t.Errorf("customer sheet lacks %q", want)
		}
	}
	for _, bad := range []string{"Still outside", "0\u00a0Ω dummy load", "0 Ω dummy load", "Found by measurement: R25"} {
		if strings.Contains(md, bad) || strings.Contains(html, bad) {
			t.Errorf("customer sheet says %q", bad)
		}
	}
	if m := internalKey.FindAllString(md, -1); len(m) > 0 {
		t.Errorf("internal keys on the customer sheet: %q", m)
	}
}

// The bench sheet of a fault-finding job lists the faults the ranking
// cannot see (each with why), so none is silently absent; a power figure
// with no load given does not print "0 Ω".
func TestBenchSheetListsNotModelled(t *testing.T) {
	s, err := procedures.LoadSession("../../testdata/sessions/se-6v6-r25-repair.yaml")
	if err != nil {
		t.Fatal(err)
	}
	sh, err := Build(s, Options{Design: loadDesign(t, "../../testdata/designs/se-6v6-stereo.yaml")})
	if err != nil {
		t.Fatal(err)
	}
	var b bytes.Buffer
	if err := sh.Markdown(&b); err != nil {
		t.Fatal(err)
	}
	md := b.String()
	for _, want := range []string{"Not in the ranking", "heater-to-cathode leak", "valve internal short"} {
		if !strings.Contains(md, want) {
			t.Errorf("bench sheet lacks %q", want)
		}
	}
	if strings.Contains(md, "into 0\u00a0Ω") || strings.Contains(md, "into 0 Ω") {
		t.Error("bench sheet prints a 0 Ω dummy load")
	}
}

// The power out after the repair is listed by the channel's name as the
// walk asked for it ("… channel (OT1)"), not by the output transformer's
// reference alone, on the customer's sheet and the bench sheet.
func TestPowerOutByChannelName(t *testing.T) {
	s, err := procedures.LoadSession("../../testdata/sessions/se-6v6-r25-repair.yaml")
	if err != nil {
		t.Fatal(err)
	}
	d := loadDesign(t, "../../testdata/designs/se-6v6-stereo.yaml")
	b, err := procedures.NewBenchModel(d, procedures.BenchOptions{Seed: s.Seed})
	if err != nil {
		t.Fatal(err)
	}
	sh, err := Build(s, Options{Design: d, Channels: procedures.ChannelTitles(b)})
	if err != nil {
		t.Fatal(err)
	}
	if len(s.Job.After.PowerOut) == 0 {
		t.Fatal("the fixture has no power-out reading")
	}
	var cust, bench bytes.Buffer
	if err := sh.CustomerMarkdown(&cust); err != nil {
		t.Fatal(err)
	}
	if err := sh.Markdown(&bench); err != nil {
		t.Fatal(err)
	}
	for _, po := range s.Job.After.PowerOut {
		name := sh.ChannelName(po.Channel)
		if name == po.Channel || !strings.Contains(name, "("+po.Channel+")") {
			t.Errorf("%s: named %q, want the walk's channel name with the reference in brackets", po.Channel, name)
		}
		if !strings.Contains(cust.String(), "| "+name+" |") {
			t.Errorf("customer sheet: no row for %q", name)
		}
		if !strings.Contains(bench.String(), "Power out, "+name) {
			t.Errorf("bench sheet: no row for %q", name)
		}
	}
}
