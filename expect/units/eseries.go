package units

import (
	"fmt"
	"math"
	"strconv"
)

// e24 holds the IEC 60063 E24 values. E3, E6, E12 and E24 keep their
// historical two-figure values, which differ from the rounded geometric
// series 10^(i/24) at 2.7 to 4.7 and 8.2 (the formula gives 2.6, 2.9, 3.2,
// 3.5, 3.8, 4.2, 4.6, 8.3); so they are a table, not a formula.
var e24 = []float64{
	1.0, 1.1, 1.2, 1.3, 1.5, 1.6, 1.8, 2.0, 2.2, 2.4, 2.7, 3.0,
	3.3, 3.6, 3.9, 4.3, 4.7, 5.1, 5.6, 6.2, 6.8, 7.5, 8.2, 9.1,
}

// e192 is the IEC 60063 E192 series: 10^(i/192) rounded to three
// significant figures, with the standard's one exception, 9.20 where the
// formula gives 9.19 (i = 185). E96 and E48 are every second and every
// fourth value of E192.
var e192 = func() []float64 {
	s := make([]float64, 192)
	for i := range s {
		s[i] = math.Round(math.Pow(10, float64(i)/192)*100) / 100
	}
	s[185] = 9.20
	return s
}()

// Series returns the mantissas in [1, 10) of the IEC 60063 E-series En, in
// ascending order, for n = 3, 6, 12, 24, 48, 96 or 192. E3 to E24 are the
// historical two-figure values (E24: 1.0 1.1 1.2 1.3 1.5 1.6 1.8 2.0 2.2
// 2.4 2.7 3.0 3.3 3.6 3.9 4.3 4.7 5.1 5.6 6.2 6.8 7.5 8.2 9.1; each shorter
// series takes every second value of the next); E48 to E192 are three-figure
// values. The slice is a fresh copy. Any other n gives an error.
func Series(n int) ([]float64, error) {
	src, step, err := seriesSource(n)
	if err != nil {
		return nil, err
	}
	out := make([]float64, 0, n)
	for i := 0; i < len(src); i += step {
		out = append(out, src[i])
	}
	return out, nil
}

// seriesSource returns the table En is taken from and the stride in it.
func seriesSource(n int) (src []float64, step int, err error) {
	switch n {
	case 3, 6, 12, 24:
		src = e24
	case 48, 96, 192:
		src = e192
	default:
		return nil, 0, fmt.Errorf("units: no E%d series: IEC 60063 defines E3, E6, E12, E24, E48, E96 and E192", n)
	}
	return src, len(src) / n, nil
}

// Nearest returns the preferred value of series En nearest to v, in any
// decade, measuring distance by ratio (|log(p/v)|), so 4.6k in E12 gives
// 4.7k and 9.6 in E12 gives 10. On an exact geometric tie the lower value
// wins. v must be positive and finite; n as for Series.
func Nearest(v float64, n int) (float64, error) {
	src, step, err := seriesSource(n)
	if err != nil {
		return 0, err
	}
	if !(v > 0) || math.IsInf(v, 0) {
		return 0, fmt.Errorf("units: Nearest needs a positive finite value, got %g", v)
	}
	d := int(math.Floor(math.Log10(v)))
	bestM, bestD, bestDist := 0.0, 0, math.Inf(1)
	// Candidates from the decade below to the one above cover any
	// rounding of Log10 near a decade boundary.
	for dd := d - 1; dd <= d+1; dd++ {
		for i := 0; i < len(src); i += step {
			m := src[i]
			if dist := math.Abs(math.Log(m / v * math.Pow10(dd))); dist < bestDist {
				bestM, bestD, bestDist = m, dd, dist
			}
		}
	}
	// Build the value from its decimal digits so that 4.7 in the third
	// decade is exactly 4700, not 4.7*1000.
	best, err := strconv.ParseFloat(strconv.FormatFloat(bestM, 'f', -1, 64)+"e"+strconv.Itoa(bestD), 64)
	if err != nil || best == 0 || math.IsInf(best, 0) {
		return 0, fmt.Errorf("units: the nearest E%d value to %g is out of float64 range", n, v)
	}
	return best, nil
}
