package mna

import "math"

// Dense LU with partial pivoting, in place, over a row-major []float64.
//
// Measured against gonum's mat.LU (Factorize + SolveVecTo, storage reused) on
// this project's MNA matrices (go test -bench 'LU' ./expect/mna/, linux/amd64,
// 2 cores, Go 1.26, gonum v0.16):
//
//	                     in place              gonum mat.LU
//	ladder31 (31×31)     3.3–3.7 µs, 0 allocs  18–19 µs, 3 allocs (72 B)
//	sparse80 (80×80)     85–88 µs, 0 allocs    147 µs, 3 allocs (76 B)
//
// (factor plus one solve per op; the machine was shared, so take the ratios
// rather than the absolute times).
//
// The hand-written version wins on both counts: mat.LU allocates on every
// solve, and the in-place loop skips zero multipliers and trims each pivot
// row to its nonzero span, which pays on the sparse matrices nodal analysis
// produces. It is the one Solve uses.

// luFactor factors the n×n row-major matrix a in place into L (unit lower,
// below the diagonal) and U (on and above it), recording the pivot row
// chosen at each step in piv. span (length 2n) receives, per row i, the
// first column of the nonzero part of L (span[i], n if none) and the end of
// the nonzero part of U (span[n+i]), so that luSolve can skip the zeros. It
// returns false if a pivot is zero or not finite (the matrix is singular to
// working precision). Algorithm: Doolittle
// elimination with row partial pivoting (G. H. Golub and C. F. Van Loan,
// "Matrix Computations", algorithm 3.4.1).
func luFactor(a []float64, n int, piv []int, span []int) bool {
	lfirst, uend := span[:n], span[n:2*n]
	for i := range lfirst {
		lfirst[i] = n // no L entries yet
	}
	for k := 0; k < n; k++ {
		// Choose the pivot: largest magnitude in column k at or below row k.
		p := k
		best := math.Abs(a[k*n+k])
		for i := k + 1; i < n; i++ {
			if v := math.Abs(a[i*n+k]); v > best {
				best, p = v, i
			}
		}
		piv[k] = p
		if best == 0 || best > math.MaxFloat64 || best != best {
			return false
		}
		if p != k {
			rk := a[k*n : k*n+n]
			rp := a[p*n : p*n+n]
			for j := range rk {
				rk[j], rp[j] = rp[j], rk[j]
			}
			lfirst[k], lfirst[p] = lfirst[p], lfirst[k]
		}
		// Trim the pivot row to its nonzero span: nodal matrices are
		// sparse and mostly banded, so this removes most of the work.
		lo, hi := k+1, n
		for lo < hi && a[k*n+lo] == 0 {
			lo++
		}
		for hi > lo && a[k*n+hi-1] == 0 {
			hi--
		}
		uend[k] = hi
		rowK := a[k*n+lo : k*n+hi]
		inv := 1 / a[k*n+k]
		for i := k + 1; i < n; i++ {
			f := a[i*n+k]
			if f == 0 {
				continue // nodal matrices are sparse: skip empty rows
			}
			f *= inv
			a[i*n+k] = f
			if lfirst[i] > k {
				lfirst[i] = k
			}
			rowI := a[i*n+lo : i*n+hi]
			rowI = rowI[:len(rowK)]
			for j, u := range rowK {
				rowI[j] -= f * u
			}
		}
	}
	return true
}

// luSolve solves A x = b in place in b, given the factors and pivots from
// luFactor.
func luSolve(a []float64, n int, piv []int, span []int, b []float64) {
	lfirst, uend := span[:n], span[n:2*n]
	for k := 0; k < n; k++ {
		if p := piv[k]; p != k {
			b[k], b[p] = b[p], b[k]
		}
	}
	// Forward substitution with unit L.
	for i := 1; i < n; i++ {
		lo := min(lfirst[i], i)
		row := a[i*n+lo : i*n+i]
		s := b[i]
		for j, l := range row {
			s -= l * b[lo+j]
		}
		b[i] = s
	}
	// Back substitution with U.
	for i := n - 1; i >= 0; i-- {
		row := a[i*n+i+1 : i*n+uend[i]]
		s := b[i]
		for j, u := range row {
			s -= u * b[i+1+j]
		}
		b[i] = s / a[i*n+i]
	}
}
