package valves

import (
	"errors"
	"fmt"
	"math"
	"regexp"
	"strconv"
	"strings"
)

// Prediction is what a model gives at one row's operating point.
type Prediction struct {
	Ia, Ig2 float64 // amps
	Gm      float64 // dIa/dVg1, siemens
	Ra      float64 // 1/(dIa/dVa), ohms (+Inf when dIa/dVa is 0)
	Mu      float64 // gm·ra
}

// Predict evaluates a Koren model of the given kind at a row's voltages.
func Predict(kind Kind, k Koren, r Row) Prediction {
	var p Prediction
	var dIdVa float64
	switch kind {
	case Pentode:
		ip, ig2, dIp, _ := k.Pentode(r.Vg1, r.Vg2, r.Va)
		p.Ia, p.Ig2, p.Gm, dIdVa = ip, ig2, dIp[0], dIp[2]
	default:
		p.Ia, p.Gm, dIdVa = k.TriodePlate(r.Vg1, r.Va)
	}
	p.Ra = math.Inf(1)
	if dIdVa > 0 {
		p.Ra = 1 / dIdVa
	}
	p.Mu = p.Gm * p.Ra
	return p
}

// RowFit compares a fitted model with one row: relative errors (model/row − 1),
// NaN where the row does not give the quantity.
type RowFit struct {
	Row                        Row
	Model                      Prediction
	ErrIa, ErrGm, ErrMu, ErrRa float64
	ErrIg2                     float64
}

// FitReport describes a fit.
type FitReport struct {
	Name        string  // the type fitted (Refit fills it in)
	Cost        float64 // final objective: squared relative residuals plus penalty
	Residual    float64 // squared relative residuals alone
	Evaluations int
	Status      string // termination of the last minimiser run
	Rows        []RowFit
}

// Compare returns the per-row comparison of a model with rows.
func Compare(kind Kind, k Koren, rows []Row) []RowFit {
	rel := func(m, want float64) float64 {
		if want == 0 {
			return math.NaN()
		}
		return m/want - 1
	}
	var out []RowFit
	for _, r := range rows {
		p := Predict(kind, k, r)
		out = append(out, RowFit{Row: r, Model: p,
			ErrIa: rel(p.Ia, r.Ia), ErrGm: rel(p.Gm, r.Gm), ErrMu: rel(p.Mu, r.Mu),
			ErrRa: rel(p.Ra, r.Ra), ErrIg2: rel(p.Ig2, r.Ig2)})
	}
	return out
}

// fitWeights are the weights of the fit objective. The penalty keeps
// under-determined fits (one or two rows for five or six parameters) near
// the starting set, as REFERENCES.md advises.
type fitWeights struct {
	Ia, Gm, Mu, Ra, Ig2 float64 // per squared relative residual
	PullLog             float64 // per (ln p − ln p0)² for mu, kg1, kp, kg2
	PullKVB             float64 // per (ln kvb − ln kvb0)²
	PullEx              float64 // per (ex − ex0)²
	ExBand              float64 // per unit² of ex outside [ExLow, ExHigh]
	ExLow, ExHigh       float64
	// Cutoff: per (ln(I/(CutoffFrac·Ia)))² when a triode's plate current
	// at Vg1 = −2·Va/mu (well beyond cutoff) exceeds CutoffFrac of the
	// row's Ia; keeps the curve physical away from the rows.
	Cutoff, CutoffFrac float64
	// PullScreen: per (ln p − ln p0)² for alpha_s and beta_s, which one or
	// two rows cannot fix alone.
	PullScreen float64
	// Conserve: per (ln(Ig2(Va=0)/Ik(row)))² for pentodes, Ik(row) being the
	// model's Ia + Ig2 at the row. In a pentode the cathode current is set
	// by Vg1 and Vg2 and barely by Va, so at Va → 0 the screen collects
	// about what the plate and screen together did at the row (the
	// current-division picture of K. R. Spangenberg, "Vacuum Tubes",
	// McGraw-Hill 1948, from memory). It ties alpha_s to the rows.
	Conserve float64
	// VCTLow, VCTHigh, VCTBand: a penalty per volt² keeping a fitted
	// contact-potential offset within the usual 0–1 V (Spangenberg, from memory).
	VCTLow, VCTHigh, VCTBand float64
}

// defaultWeights: Ia, gm and Ig2 count fully; mu and ra are redundant with
// gm (mu = gm·ra) so they count a quarter each.
var defaultWeights = fitWeights{
	Ia: 1, Gm: 1, Mu: 0.25, Ra: 0.25, Ig2: 1,
	PullLog: 2e-3, PullKVB: 2e-3, PullEx: 2e-3,
	ExBand: 10, ExLow: 1.3, ExHigh: 1.5,
	Cutoff: 1, CutoffFrac: 0.005,
	PullScreen: 2e-2, Conserve: 0.05,
	VCTLow: 0, VCTHigh: 1, VCTBand: 10,
}

// Starting screen-division parameters when a start set has none: with
// beta_s·Va/Vg2 ≫ 1 the screen share falls about as Vg2/Va, as the rows of
// beam valves at two plate voltages show (6L6GC, 6V6GT: Ia/Ig2 rises by
// about 1.5 from Va = Vg2 to Va = 1.4·Vg2, RCA data, from memory), and
// 1 + alpha_s ≈ 10·(1 + alpha_s/(1 + beta_s)) puts the screen current at
// Va = 0 near the whole cathode current.
const (
	startAlphaS = 100
	startBetaS  = 10
)

// withScreenStart fills in alpha_s, beta_s and kg2 of a pentode start set
// that has no screen-division parameters (a published Koren set, whose kg2
// belongs to Koren's own screen formula): kg2 is scaled so the first row
// that gives Ig2 comes out right.
func withScreenStart(k Koren, rows []Row) Koren {
	if k.AlphaS > 0 && k.BetaS > 0 {
		return k
	}
	k.AlphaS, k.BetaS = startAlphaS, startBetaS
	if k.KG2 <= 0 {
		k.KG2 = 4500
	}
	for _, r := range rows {
		if r.Ig2 > 0 {
			if ig2 := Predict(Pentode, k, r).Ig2; ig2 > 0 {
				k.KG2 *= ig2 / r.Ig2
			}
			break
		}
	}
	return k
}

// DeriveStart makes a starting parameter set from rows when no published set
// is known: mu from the first row (given, or gm·ra; for pentodes
// Vg2/(2|Vg1|)), ex 1.35, kp = 5·mu (the ratio in published sets, which run
// 4–6), kvb 300 for triodes or from ra for pentodes, the screen-division
// start (withScreenStart) for pentodes, and kg1, kg2 scaled so the first
// row's Ia and Ig2 come out right. vct is 0.
func DeriveStart(kind Kind, rows []Row) Koren {
	k := Koren{Mu: 20, Ex: 1.35, KG1: 1, KVB: 300}
	if len(rows) == 0 {
		k.KP, k.KG1 = 100, 1000
		if kind == Pentode {
			k.KG2, k.KVB = 4500, 24
			k.AlphaS, k.BetaS = startAlphaS, startBetaS
		}
		return k
	}
	r := rows[0]
	switch {
	case kind == Pentode && r.Vg1 < 0:
		k.Mu = r.Vg2 / (2 * -r.Vg1)
	case r.Mu > 0:
		k.Mu = r.Mu
	case r.Gm > 0 && r.Ra > 0:
		k.Mu = r.Gm * r.Ra
	}
	k.KP = 5 * k.Mu
	if kind == Pentode {
		k.KVB = 24
		if r.Ra > 0 {
			// dIa/dVa ≈ Ia·kvb/Va² when Va ≫ kvb, and atan ≈ π/2.
			k.KVB = math.Max(5, r.Va*r.Va/(r.Ra*r.Ia)*(math.Pi/2)*0.5)
		}
		k.KG2 = 0
		k = withScreenStart(k, rows)
	}
	if ia := Predict(kind, k, r).Ia; ia > 0 {
		k.KG1 = ia / r.Ia
	} else {
		k.KG1 = 1000
	}
	return k
}

// Positions in the optimiser's vector.
const (
	xMu, xEx, xKG1, xKP, xKVB = 0, 1, 2, 3, 4
	xKG2, xAlphaS, xBetaS     = 5, 6, 7 // pentodes
)

// fitVector maps parameters to the optimiser's space: logs of the positive
// parameters, ex as it is; for pentodes ln kg2, ln alpha_s, ln beta_s; last,
// vct as it is when the start set has one (fitVCT).
func fitVector(kind Kind, k Koren, fitVCT bool) []float64 {
	x := []float64{math.Log(k.Mu), k.Ex, math.Log(k.KG1), math.Log(k.KP), math.Log(k.KVB)}
	if kind == Pentode {
		x = append(x, math.Log(k.KG2), math.Log(k.AlphaS), math.Log(k.BetaS))
	}
	if fitVCT {
		x = append(x, k.VCT)
	}
	return x
}

// fromVector is the inverse of fitVector; grid is carried over, and vct
// when it is not fitted.
func fromVector(kind Kind, x []float64, grid, vct float64, fitVCT bool) Koren {
	k := Koren{Mu: math.Exp(x[xMu]), Ex: x[xEx], KG1: math.Exp(x[xKG1]), KP: math.Exp(x[xKP]), KVB: math.Exp(x[xKVB]), GridOhms: grid, VCT: vct}
	if kind == Pentode {
		k.KG2, k.AlphaS, k.BetaS = math.Exp(x[xKG2]), math.Exp(x[xAlphaS]), math.Exp(x[xBetaS])
	}
	if fitVCT {
		k.VCT = x[len(x)-1]
	}
	return k
}

// residual returns the sum of squared relative residuals of Ia, gm, mu, ra
// (and Ig2 for pentodes, weighted) over the rows.
func residual(kind Kind, k Koren, rows []Row, w fitWeights) float64 {
	var s float64
	add := func(w, m, want float64) {
		if want > 0 {
			e := m/want - 1
			if math.IsInf(m, 0) || math.IsNaN(e) {
				e = 10
			}
			s += w * e * e
		}
	}
	for _, r := range rows {
		p := Predict(kind, k, r)
		add(w.Ia, p.Ia, r.Ia)
		add(w.Gm, p.Gm, r.Gm)
		add(w.Mu, p.Mu, r.Mu)
		add(w.Ra, p.Ra, r.Ra)
		if kind == Pentode {
			add(w.Ig2, p.Ig2, r.Ig2)
			if w.Conserve > 0 && k.AlphaS > 0 {
				i0 := Predict(kind, k, Row{Va: 0, Vg2: r.Vg2, Vg1: r.Vg1}).Ig2
				if ik := p.Ia + p.Ig2; i0 > 0 && ik > 0 {
					l := math.Log(i0 / ik)
					s += w.Conserve * l * l
				}
			}
		}
		if kind == Triode && w.Cutoff > 0 {
			mu := r.Mu
			if mu == 0 {
				mu = k.Mu
			}
			ic, _, _ := k.TriodePlate(-2*r.Va/mu, r.Va)
			if lim := w.CutoffFrac * r.Ia; ic > lim {
				l := math.Log(ic / lim)
				s += w.Cutoff * l * l
			}
		}
	}
	return s
}

// Fit fits Koren's triode or pentode model to datasheet rows by minimising
// the squared relative residuals of Ia, gm (dIa/dVg1), mu (gm·ra), ra
// (1/(dIa/dVa)) and, for pentodes, Ig2 (the screen-division equation of
// Pentode, through kg2, alpha_s and beta_s and the shared E1) with the
// cathode-current term of fitWeights.Conserve, plus a penalty pulling the
// parameters towards start (in log space for mu, kg1, kg2, kp, kvb,
// alpha_s, beta_s; vct, fitted only when start has one, kept in 0–1 V)
// and ex into 1.3–1.5, and
// for triodes a penalty when the plate current at Vg1 = −2·Va/mu (mu from
// the row, else the model) exceeds 0.5 % of the row's Ia. The
// minimiser is Nelder–Mead (see nelderMead), restarted from its own result
// until the cost stops improving. start.GridOhms is carried over. It returns an error
// for rectifiers (use FitPerveance), for no rows, for an invalid start, or
// when the optimiser fails.
func Fit(kind Kind, rows []Row, start Koren) (Koren, FitReport, error) {
	return fitWith(kind, rows, start, defaultWeights)
}

func fitWith(kind Kind, rows []Row, start Koren, w fitWeights) (Koren, FitReport, error) {
	var rep FitReport
	if kind != Triode && kind != Pentode {
		return Koren{}, rep, fmt.Errorf("valves: Fit: kind %q has no Koren model", kind)
	}
	if len(rows) == 0 {
		return Koren{}, rep, errors.New("valves: Fit: no rows")
	}
	if err := checkKoren(kind, start); err != nil {
		return Koren{}, rep, fmt.Errorf("valves: Fit: start: %w", err)
	}
	if kind == Pentode {
		start = withScreenStart(start, rows)
	}
	fitVCT := start.VCT > 0
	x0 := fitVector(kind, start, fitVCT)
	cost := func(x []float64) float64 {
		ex := x[xEx]
		if !(ex > 0.8 && ex < 2.5) {
			return 1e6 * (1 + math.Abs(ex))
		}
		for _, xi := range x {
			if math.Abs(xi) > 30 {
				return 1e6
			}
		}
		k := fromVector(kind, x, start.GridOhms, start.VCT, fitVCT)
		c := residual(kind, k, rows, w)
		for i, xi := range x {
			d := xi - x0[i]
			switch {
			case i == xEx:
				c += w.PullEx * d * d
			case i == xKVB:
				c += w.PullKVB * d * d
			case fitVCT && i == len(x)-1:
				c += w.PullEx * d * d
			case kind == Pentode && (i == xAlphaS || i == xBetaS):
				c += w.PullScreen * d * d
			default:
				c += w.PullLog * d * d
			}
		}
		if ex < w.ExLow {
			c += w.ExBand * (w.ExLow - ex) * (w.ExLow - ex)
		} else if ex > w.ExHigh {
			c += w.ExBand * (ex - w.ExHigh) * (ex - w.ExHigh)
		}
		if fitVCT {
			if v := k.VCT; v < w.VCTLow {
				c += w.VCTBand * (w.VCTLow - v) * (w.VCTLow - v)
			} else if v > w.VCTHigh {
				c += w.VCTBand * (v - w.VCTHigh) * (v - w.VCTHigh)
			}
		}
		return c
	}
	x := append([]float64(nil), x0...)
	best := cost(x)
	for run := 0; run < 8; run++ {
		res, err := minimise(cost, x, 40000)
		if err != nil {
			return Koren{}, rep, fmt.Errorf("valves: Fit: %w", err)
		}
		rep.Evaluations += res.Evaluations
		if !res.Converged {
			rep.Status = "evaluation limit"
			return Koren{}, rep, fmt.Errorf("valves: Fit: no convergence after %d evaluations", res.Evaluations)
		}
		rep.Status = "converged"
		improved := res.F < best-1e-12*math.Max(1, best)
		if res.F < best {
			best = res.F
			copy(x, res.X)
		}
		if !improved && run > 0 {
			break
		}
	}
	k := fromVector(kind, x, start.GridOhms, start.VCT, fitVCT)
	rep.Cost = best
	rep.Residual = residual(kind, k, rows, w)
	rep.Rows = Compare(kind, k, rows)
	return k, rep, nil
}

// FitPerveance fits the Child–Langmuir constant G of I = G·V^1.5 (A/V^1.5)
// to rows giving a drop Va at a current Ia, by least squares on
// ln I − 1.5·ln V (closed form: the geometric mean of Ia/Va^1.5).
func FitPerveance(rows []Row) (float64, error) {
	if len(rows) == 0 {
		return 0, errors.New("valves: FitPerveance: no rows")
	}
	var s float64
	for _, r := range rows {
		if !(r.Va > 0) || !(r.Ia > 0) {
			return 0, errors.New("valves: FitPerveance: rows need positive va and ia")
		}
		s += math.Log(r.Ia) - 1.5*math.Log(r.Va)
	}
	return math.Exp(s / float64(len(rows))), nil
}

// FitDiodePerveance fits a signal-diode unit's G of I = G·(V+contact)^1.5
// to its rows (plate volts from the cathode, plate current): the rows are
// what the plate passes, contact potential included.
func FitDiodePerveance(rows []Row, contact float64) (float64, error) {
	shifted := make([]Row, len(rows))
	for i, r := range rows {
		shifted[i] = r
		shifted[i].Va = r.Va + contact
	}
	return FitPerveance(shifted)
}

// FitType refits a type's model (or perveance) from its rows and start set.
func FitType(t *Type) (Koren, float64, FitReport, error) {
	if t.Kind == Diode {
		g, err := FitDiodePerveance(t.Rows, t.ContactVolts)
		return Koren{}, g, FitReport{}, err
	}
	if t.Kind == Rectifier {
		g, err := FitPerveance(t.Rows)
		return Koren{}, g, FitReport{}, err
	}
	k, rep, err := Fit(t.Kind, t.Rows, t.Start)
	return k, 0, rep, err
}

func fmtNum(x float64) string { return strconv.FormatFloat(x, 'g', 6, 64) }

// FormatModel renders a model as the one-line YAML flow mapping that
// library.yaml uses.
func FormatModel(kind Kind, k Koren) string {
	var b strings.Builder
	fmt.Fprintf(&b, "{mu: %s, ex: %s, kg1: %s", fmtNum(k.Mu), fmtNum(k.Ex), fmtNum(k.KG1))
	if kind == Pentode {
		fmt.Fprintf(&b, ", kg2: %s", fmtNum(k.KG2))
	}
	fmt.Fprintf(&b, ", kp: %s, kvb: %s", fmtNum(k.KP), fmtNum(k.KVB))
	if kind == Pentode {
		fmt.Fprintf(&b, ", alpha_s: %s, beta_s: %s", fmtNum(k.AlphaS), fmtNum(k.BetaS))
	}
	if k.VCT != 0 {
		fmt.Fprintf(&b, ", vct: %s", fmtNum(k.VCT))
	}
	fmt.Fprintf(&b, ", grid_ohms: %s}", fmtNum(k.GridOhms))
	return b.String()
}

var (
	reValveName = regexp.MustCompile(`^\s*-\s*name:\s*(\S+)\s*$`)
	reModelLine = regexp.MustCompile(`^(\s*)model:\s*\{[^}]*\}(.*)$`)
	rePervLine  = regexp.MustCompile(`^(\s*)perveance_ma:\s*[^\s#]+(.*)$`)
)

// Refit parses a library document (file names it in errors), refits every
// type from its rows and start set, and returns the document with each
// type's "model:" line (or "perveance_ma:" line for rectifiers) rewritten;
// all other lines, comments included, are kept. Every type must already
// have such a line.
func Refit(file string, src []byte) ([]byte, []FitReport, error) {
	p, err := parseDoc(file, src, false)
	if err != nil {
		return nil, nil, err
	}
	byName := map[string]*Type{}
	for _, t := range p.types {
		byName[t.Name] = t
	}
	lines := strings.Split(string(src), "\n")
	done := map[string]bool{}
	var reps []FitReport
	var cur *Type
	for i, ln := range lines {
		if m := reValveName.FindStringSubmatch(ln); m != nil {
			cur = byName[strings.Trim(m[1], `"'`)]
			continue
		}
		if cur == nil {
			continue
		}
		if m := reModelLine.FindStringSubmatch(ln); m != nil && (cur.Kind == Triode || cur.Kind == Pentode) {
			k, rep, err := Fit(cur.Kind, cur.Rows, cur.Start)
			if err != nil {
				return nil, nil, fmt.Errorf("%s:%d: %s: %w", file, i+1, cur.Name, err)
			}
			lines[i] = m[1] + "model: " + FormatModel(cur.Kind, k) + m[2]
			rep.Name = cur.Name
			reps = append(reps, rep)
			done[cur.Name] = true
		} else if m := rePervLine.FindStringSubmatch(ln); m != nil && (cur.Kind == Rectifier || cur.Kind == Diode) {
			_, g, _, err := FitType(cur)
			if err != nil {
				return nil, nil, fmt.Errorf("%s:%d: %s: %w", file, i+1, cur.Name, err)
			}
			lines[i] = m[1] + "perveance_ma: " + fmtNum(g*1e3) + m[2]
			done[cur.Name] = true
		}
	}
	for _, t := range p.types {
		if !done[t.Name] && t.Kind.Modelled() {
			return nil, nil, fmt.Errorf("%s: %s: no model or perveance_ma line to rewrite", file, t.Name)
		}
	}
	return []byte(strings.Join(lines, "\n")), reps, nil
}
