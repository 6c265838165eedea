package linefit

import "math"

// Cholesky overwrites the upper triangle of the symmetric positive definite
// n×n row-major matrix a with its Cholesky factor R, a = RᵀR, reading only
// the upper triangle. It reports false if a pivot is not above
// tol × (original diagonal entry), i.e. if a is numerically singular or
// indefinite. No allocation.
func Cholesky(a []float64, n int, tol float64) bool {
	for j := range n {
		d := a[j*n+j]
		for k := range j {
			r := a[k*n+j]
			d -= r * r
		}
		if !(d > tol*a[j*n+j]) || !(d > 0) {
			return false
		}
		d = math.Sqrt(d)
		a[j*n+j] = d
		inv := 1 / d
		for i := j + 1; i < n; i++ {
			s := a[j*n+i]
			for k := range j {
				s -= a[k*n+j] * a[k*n+i]
			}
			a[j*n+i] = s * inv
		}
	}
	return true
}

// CholSolve solves RᵀR x = b in place (b becomes x) for the factor R left
// in the upper triangle of r by cholesky.
func CholSolve(r []float64, n int, b []float64) {
	// Rᵀ y = b.
	for i := range n {
		s := b[i]
		for k := range i {
			s -= r[k*n+i] * b[k]
		}
		b[i] = s / r[i*n+i]
	}
	// R x = y.
	for i := n - 1; i >= 0; i-- {
		s := b[i]
		for k := i + 1; k < n; k++ {
			s -= r[i*n+k] * b[k]
		}
		b[i] = s / r[i*n+i]
	}
}

// CholInverse writes (RᵀR)⁻¹ into the full n×n row-major inv, using col
// (length n) as scratch.
func CholInverse(r []float64, n int, inv, col []float64) {
	for j := range n {
		for i := range col[:n] {
			col[i] = 0
		}
		col[j] = 1
		CholSolve(r, n, col)
		for i := range n {
			inv[i*n+j] = col[i]
		}
	}
}
