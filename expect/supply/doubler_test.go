package supply

import (
	"math"
	"testing"
)

// doublerParams is an invented doubler on a 120 V winding with two
// 100 µF capacitors, drawing load amps from the output.
func doublerParams(top Topology, rs, load float64) Params {
	p := Params{Topology: top, Vrms: 120, Rs: rs, Hz: 50, Rect: silicon,
		Stages: []Stage{{Parent: -1, LoadA: load}}}
	p.Doubler = Doubler{C1: 100e-6}
	if top == FullDoubler {
		p.Doubler.C2 = 100e-6
	} else {
		p.Stages[0].ShuntC = 100e-6
	}
	return p
}

// The usual doubler approximation (from memory: a full-wave (Delon)
// doubler's output sits below twice the winding's peak less a diode drop
// each by about I/(f·C) with equal capacitors C: each capacitor is
// recharged once a cycle and sags I/(f·C) between, half of it on
// average, and the two sags add). For the half-wave (Greinacher) doubler
// the charge argument bounds it: each cycle the pump capacitor hands the
// reservoir the load's charge I/f and falls by I/(f·C1) while it does,
// and the reservoir sags by I/(f·C2) between its charges, half of it on
// average: the droop lies between I/(f·C) and 1.5·I/(f·C) with equal
// capacitors (the one-stage cascade figure, from memory 4/3·I/(f·C),
// lies inside). A stiff winding keeps the charging pulses short, the
// condition of both.
func TestDoublerDroopHandCheck(t *testing.T) {
	const i, hz, c = 0.05, 50.0, 100e-6
	vpk := math.Sqrt2 * 120
	ideal := 2 * (vpk - silicon.Vf)
	for _, top := range []Topology{FullDoubler, HalfDoubler} {
		p := doublerParams(top, 0.5, i)
		r := mustSim(t, p)
		got := r.Nets[0].Vdc
		if top == FullDoubler {
			if want := ideal - i/(hz*c); !within(got, want, 0.01) {
				t.Errorf("%v: Vdc = %.1f V, hand check 2(Vpk−Vf) − I/(fC) = %.1f V ± 1 %%", top, got, want)
			}
		} else if lo, hi := ideal-1.5*i/(hz*c), ideal-i/(hz*c); got < lo || got > hi {
			t.Errorf("%v: Vdc = %.1f V, want between 2(Vpk−Vf) − 1.5·I/(fC) = %.1f V and 2(Vpk−Vf) − I/(fC) = %.1f V", top, got, lo, hi)
		}
		// Each capacitor of a full-wave doubler holds its own share,
		// about the peak; a half-wave doubler's pump about the peak.
		for k, cr := range r.Caps {
			if top == HalfDoubler && k == 1 {
				if !within(cr.Vdc, got, 1e-4) {
					t.Errorf("half-wave: the second capacitor is the reservoir, %.2f V, not %.2f V", cr.Vdc, got)
				}
				continue
			}
			if cr.Vdc < 0.85*vpk || cr.Vdc > vpk {
				t.Errorf("%v: capacitor %d at %.1f V, want between 0.85·Vpk and Vpk (%.1f V)", top, k+1, cr.Vdc, vpk)
			}
		}
		if sum := r.Caps[0].Vdc + r.Caps[1].Vdc; top == FullDoubler && !within(sum, got, 1e-3) {
			t.Errorf("full-wave: the capacitors' volts add to %.2f V, the output is %.2f V", sum, got)
		}
		// Charge balance: each diode carries the load's mean current.
		for k, cr := range r.Caps {
			if !within(cr.DCAmps, i, 0.01) {
				t.Errorf("%v: diode %d mean %.4f A, want the load %.4f A", top, k+1, cr.DCAmps, i)
			}
		}
		t.Logf("%v: out %.2f V (2(Vpk−Vf) %.2f, less I/(fC) %.2f), caps %.2f / %.2f V, ripple %.2f Vpp, mid %.2f V", top, got, ideal, ideal-i/(hz*c),
			r.Caps[0].Vdc, r.Caps[1].Vdc, r.Nets[0].RipplePP, r.Mid.Vdc)
	}
}

// With one diode of a full-wave doubler open only one capacitor charges.
// Unloaded the output is that one peak, half the HT; loaded, the load's
// return to the winding runs through the other capacitor's bleeder
// alone, so the output falls to about Vpk·RL/(RL + Rbleeder) (DC
// argument, ripple neglected).
func TestFullDoublerOneDiodeOpen(t *testing.T) {
	vpk := math.Sqrt2*120 - silicon.Vf
	const rb, rl = 100e3, 10e3
	for k := 0; k < 2; k++ {
		for _, load := range []float64{0, rl} {
			p := doublerParams(FullDoubler, 0.5, 0)
			p.Doubler.R1, p.Doubler.R2 = rb, rb
			p.Stages[0].LoadOhms = load
			if k == 0 {
				p.Doubler.Open1 = true
			} else {
				p.Doubler.Open2 = true
			}
			r := mustSim(t, p)
			want, tol := vpk, 0.01
			if load > 0 {
				want, tol = vpk*rl/(rl+rb), 0.05
			}
			if got := r.Nets[0].Vdc; !within(got, want, tol) {
				t.Errorf("diode %d open, load %.0f Ω: Vdc = %.2f V, want %.2f V ± %.0f %%", k+1, load, got, want, 100*tol)
			}
		}
	}
}

// Bleeders across each capacitor of an unloaded full-wave doubler split
// the output between them as their resistances do.
func TestFullDoublerBleederSplit(t *testing.T) {
	p := doublerParams(FullDoubler, 2, 0)
	p.Doubler.R1, p.Doubler.R2 = 100e3, 100e3
	r := mustSim(t, p)
	if d := math.Abs(r.Caps[0].Vdc - r.Caps[1].Vdc); d > 0.01*r.Nets[0].Vdc {
		t.Errorf("equal bleeders: capacitors at %.2f and %.2f V, want equal within 1 %%", r.Caps[0].Vdc, r.Caps[1].Vdc)
	}
	if !within(r.Mid.Vdc, r.Caps[1].Vdc, 1e-3) {
		t.Errorf("mid %.2f V, want the bottom capacitor's %.2f V", r.Mid.Vdc, r.Caps[1].Vdc)
	}
	if got, want := ColdPeak(p), 2*(math.Sqrt2*120-silicon.Vf); math.Abs(got-want) > 1e-9 {
		t.Errorf("ColdPeak %.2f, want 2(Vpk − Vf) = %.2f", got, want)
	}
}

func TestDoublerValidate(t *testing.T) {
	p := doublerParams(FullDoubler, 1, 0.01)
	p.Doubler.C2 = 0
	if err := p.Validate(); err == nil {
		t.Error("a full-wave doubler with no second capacitor: want an error")
	}
	p = doublerParams(HalfDoubler, 1, 0.01)
	p.Rect = valve5U4
	if err := p.Validate(); err == nil {
		t.Error("a valve doubler: want an error")
	}
}
