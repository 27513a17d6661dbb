package valves

import (
	"math"
	"testing"
)

// device is the solver's nonlinear-device contract, restated here so the
// test does not import the solver.
type device interface {
	Terminals() []int
	Eval(v, cur, jac []float64)
}

var (
	_ device = (*TriodeDevice)(nil)
	_ device = (*PentodeDevice)(nil)
	_ device = (*RectifierDevice)(nil)
	_ device = (*DiodeDevice)(nil)
)

// checkDevice compares the Jacobian with central differences (relative
// 1e-4) and checks that the terminal currents sum to zero (Kirchhoff).
func checkDevice(t *testing.T, name string, d device, v []float64) {
	t.Helper()
	n := len(d.Terminals())
	cur := make([]float64, n)
	jac := make([]float64, n*n)
	d.Eval(v, cur, jac)
	var sum, scale float64
	for _, c := range cur {
		sum += c
		scale = math.Max(scale, math.Abs(c))
	}
	if math.Abs(sum) > 1e-12*math.Max(scale, 1e-3) {
		t.Errorf("%s v=%v: currents %v sum to %g", name, v, cur, sum)
	}
	cp, cm := make([]float64, n), make([]float64, n)
	scratch := make([]float64, n*n)
	for j := 0; j < n; j++ {
		h := 1e-6 * (1 + math.Abs(v[j]))
		vp := append([]float64(nil), v...)
		vm := append([]float64(nil), v...)
		vp[j] += h
		vm[j] -= h
		d.Eval(vp, cp, scratch)
		d.Eval(vm, cm, scratch)
		for k := 0; k < n; k++ {
			fd := (cp[k] - cm[k]) / (2 * h)
			if !near(jac[k*n+j], fd, 1e-4, 1e-10) {
				t.Errorf("%s v=%v: jac[%d][%d] = %g, finite difference %g", name, v, k, j, jac[k*n+j], fd)
			}
		}
	}
	if a := testing.AllocsPerRun(10, func() { d.Eval(v, cur, jac) }); a != 0 {
		t.Errorf("%s: Eval allocates %g times", name, a)
	}
}

func TestTriodeDevice(t *testing.T) {
	ty, _ := Lookup("12AU7")
	for _, lim := range []float64{0, 0.004} {
		d := &TriodeDevice{P: 3, G: 2, K: 1, Model: ty.Model, EmissionLimit: lim}
		if got := d.Terminals(); got[0] != 3 || got[1] != 2 || got[2] != 1 {
			t.Fatalf("Terminals = %v, want plate, grid, cathode", got)
		}
		for _, v := range [][]float64{{250, 0, 8.5}, {100, 0, 0}, {150, 2, 1}, {300, -5, 10}, {-5, 0, 1}, {20, 1.5, 0.5}} {
			checkDevice(t, "triode", d, v)
		}
	}
	// The device's plate current is the model's, and grid current flows in at the grid.
	d := &TriodeDevice{P: 1, G: 2, K: 0, Model: ty.Model}
	cur, jac := make([]float64, 3), make([]float64, 9)
	d.Eval([]float64{250, -8.5, 0}, cur, jac)
	ip, _, _ := ty.Model.TriodePlate(-8.5, 250)
	if cur[0] != ip || cur[1] < 0 || cur[1] > 1e-12 {
		t.Errorf("cur = %v, want plate %g and no grid current", cur, ip)
	}
	d.Eval([]float64{250, 3, 0}, cur, jac)
	if cur[1] <= 0 {
		t.Errorf("positive grid must draw current, got %g", cur[1])
	}
}

func TestPentodeDevice(t *testing.T) {
	ty, _ := Lookup("EL34")
	for _, lim := range []float64{0, 0.06} {
		d := &PentodeDevice{P: 4, G2: 3, G1: 2, K: 1, Model: ty.Model, EmissionLimit: lim}
		if got := d.Terminals(); got[0] != 4 || got[1] != 3 || got[2] != 2 || got[3] != 1 {
			t.Fatalf("Terminals = %v, want plate, screen, grid, cathode", got)
		}
		for _, v := range [][]float64{{250, 250, 0, 13.5}, {400, 300, -20, 0}, {30, 250, 5, 5}, {250, 250, 1, 0}, {-5, 100, 0, 2}} {
			checkDevice(t, "pentode", d, v)
		}
	}
	// With the cap, plate and screen currents are scaled by the same factor.
	d0 := &PentodeDevice{P: 1, G2: 2, G1: 3, K: 0, Model: ty.Model}
	d1 := &PentodeDevice{P: 1, G2: 2, G1: 3, K: 0, Model: ty.Model, EmissionLimit: 0.05}
	c0, c1, jac := make([]float64, 4), make([]float64, 4), make([]float64, 16)
	v := []float64{250, 250, -13.5, 0}
	d0.Eval(v, c0, jac)
	d1.Eval(v, c1, jac)
	if !near(c1[0]/c0[0], c1[1]/c0[1], 1e-12, 0) || c1[0]+c1[1] > 0.05 {
		t.Errorf("capped currents %v vs %v", c1, c0)
	}
}

func TestRectifierDevice(t *testing.T) {
	ty, _ := Lookup("5Y3GT")
	for _, lim := range []float64{0, 0.1} {
		d := &RectifierDevice{A: 1, K: 2, Perveance: ty.Perveance, EmissionLimit: lim}
		for _, v := range [][]float64{{400, 350}, {350, 400}, {10, 0}, {0, 0.001}, {1000, 0}} {
			checkDevice(t, "rectifier", d, v)
		}
	}
	d := &RectifierDevice{Perveance: 1e-3}
	// Child–Langmuir: I = G·V^1.5, so 100 V gives 1e-3·1000 = 1 A.
	if i, _ := d.Current(100); !near(i, 1, 1e-9, 0) {
		t.Errorf("I(100 V) = %g, want 1 A", i)
	}
	if i, g := d.Current(-500); i > 0 || g <= 0 || i < -1e-8 {
		t.Errorf("reverse: I = %g, g = %g; want a tiny leakage only", i, g)
	}
}

func TestDiodeDevice(t *testing.T) {
	def := DefaultDiode()
	// Generic 1N4007 class (from memory): Is ≈ 7 nA, n ≈ 1.9, Rs ≈ 0.04 Ω, 1000 V, 1 A.
	if def.Name != "silicon" || def.Is != 7e-9 || def.N != 1.9 || def.Rs != 0.04 || def.PIV != 1000 || def.Amps != 1 {
		t.Errorf("DefaultDiode = %+v", def)
	}
	d := &DiodeDevice{A: 1, K: 2, Diode: def}
	for _, v := range [][]float64{{0.3, 0}, {0.6, 0}, {0.8, 0}, {1.0, 0}, {3, 0}, {50, 0}, {0, 400}, {-0.01, 0}} {
		checkDevice(t, "diode", d, v)
	}
	// 1N4007 data sheet: forward voltage at most 1.1 V at 1 A (from memory);
	// a typical part reads 0.9–1.0 V. Solve for V at 1 A by bisection.
	lo, hi := 0.0, 5.0
	for i := 0; i < 100; i++ {
		mid := (lo + hi) / 2
		if c, _ := def.Current(mid); c < 1 {
			lo = mid
		} else {
			hi = mid
		}
	}
	if lo < 0.8 || lo > 1.1 {
		t.Errorf("forward drop at 1 A = %.3f V, want 0.8–1.1 V (1N4007 data sheet, from memory)", lo)
	}
	// The solved junction voltage satisfies V = Vj + Rs·I (Ohm's law on Rs).
	for _, v := range []float64{0.5, 0.9, 2, 20} {
		i, _ := def.Current(v)
		vj := def.N * thermalVolts * math.Log1p((i-gminSiemens*v)/def.Is)
		if v < diodeLinVolts+1 && !near(vj+def.Rs*(i-gminSiemens*v), v, 1e-9, 1e-12) {
			t.Errorf("V=%g: Vj %g + Rs·I %g ≠ V", v, vj, def.Rs*i)
		}
	}
	if i, _ := def.Current(-400); !near(i, -def.Is-400*gminSiemens, 1e-6, 0) {
		t.Errorf("reverse current at −400 V = %g, want −Is − gmin·V", i)
	}
}
