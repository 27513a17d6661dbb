package ac

import (
	"errors"
	"math/cmplx"
)

// errSingular reports a matrix with no usable pivot in some column.
var errSingular = errors.New("ac: singular network matrix (a part of the circuit has no AC path to ground)")

// luSolve solves a·x = b in place for a dense n×n complex matrix a (row
// major), by Gaussian elimination with partial pivoting (any numerical
// analysis text, e.g. Golub & Van Loan, "Matrix Computations", §3.4). On
// return b holds x and a is overwritten. Zero multipliers are skipped, so
// the sparse nodal matrices of an amplifier cost far less than n³/3. It
// does not allocate.
func luSolve(a []complex128, b []complex128, n int) error {
	for k := 0; k < n; k++ {
		// Pivot: the largest magnitude in column k at or below row k.
		p, best := k, cmplx.Abs(a[k*n+k])
		for i := k + 1; i < n; i++ {
			if v := a[i*n+k]; v != 0 {
				if m := cmplx.Abs(v); m > best {
					p, best = i, m
				}
			}
		}
		if best == 0 {
			return errSingular
		}
		if p != k {
			rk, rp := a[k*n:k*n+n], a[p*n:p*n+n]
			for j := k; j < n; j++ {
				rk[j], rp[j] = rp[j], rk[j]
			}
			b[k], b[p] = b[p], b[k]
		}
		piv := a[k*n+k]
		rk := a[k*n : k*n+n]
		for i := k + 1; i < n; i++ {
			ri := a[i*n : i*n+n]
			if ri[k] == 0 {
				continue
			}
			l := ri[k] / piv
			ri[k] = 0
			for j := k + 1; j < n; j++ {
				if rk[j] != 0 {
					ri[j] -= l * rk[j]
				}
			}
			b[i] -= l * b[k]
		}
	}
	for i := n - 1; i >= 0; i-- {
		s := b[i]
		ri := a[i*n : i*n+n]
		for j := i + 1; j < n; j++ {
			if ri[j] != 0 {
				s -= ri[j] * b[j]
			}
		}
		b[i] = s / ri[i]
	}
	return nil
}
