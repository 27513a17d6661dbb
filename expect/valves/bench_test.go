package valves

import "testing"

var sink float64

func BenchmarkTriodePlate(b *testing.B) {
	ty, _ := Lookup("12AX7")
	k := ty.Model
	b.ReportAllocs()
	for i := 0; i < b.N; i++ {
		ip, gm, gp := k.TriodePlate(-2+float64(i&7)*0.01, 250)
		sink += ip + gm + gp
	}
}

func BenchmarkPentode(b *testing.B) {
	ty, _ := Lookup("EL34")
	k := ty.Model
	b.ReportAllocs()
	for i := 0; i < b.N; i++ {
		ip, ig2, dIp, dIg2 := k.Pentode(-13.5+float64(i&7)*0.01, 250, 250)
		sink += ip + ig2 + dIp[0] + dIg2[1]
	}
}

func BenchmarkPentodeDeviceEval(b *testing.B) {
	ty, _ := Lookup("EL34")
	d := &PentodeDevice{P: 1, G2: 2, G1: 3, K: 4, Model: ty.Model, EmissionLimit: 0.2}
	v, cur, jac := []float64{250, 250, -13.5, 0}, make([]float64, 4), make([]float64, 16)
	b.ReportAllocs()
	for i := 0; i < b.N; i++ {
		d.Eval(v, cur, jac)
	}
	sink += cur[0]
}

func BenchmarkDiodeDeviceEval(b *testing.B) {
	d := &DiodeDevice{A: 1, K: 0, Diode: DefaultDiode()}
	v, cur, jac := []float64{0.9, 0}, make([]float64, 2), make([]float64, 4)
	b.ReportAllocs()
	for i := 0; i < b.N; i++ {
		d.Eval(v, cur, jac)
	}
	sink += cur[0]
}
