package voigt

import (
	"math"
	"math/rand/v2"
	"testing"
)

// faddeevaAsymptoticTwoLoops is faddeevaAsymptotic as it was before its
// two recurrences ran side by side: the even chain, then the odd one.
func faddeevaAsymptoticTwoLoops(x, y float64) complex128 {
	r2 := x*x + y*y
	var qr, qi float64 // q = 1/z
	if r2 < 1e300 {
		d := 1 / r2
		qr, qi = x*d, -y*d
	} else {
		q := 1 / complex(x, y) // Smith's division, safe from overflow
		qr, qi = real(q), imag(q)
	}
	// S = Σ_{k=0}^{K} c_k ζ^k with ζ = q², split as E(ζ²) + ζ O(ζ²) and
	// both halves evaluated by the real recurrence for real coefficients
	// (as in weideman) with ρ = 2 Re ζ², s = |ζ|⁴.
	zr, zi := qr*qr-qi*qi, 2*qr*qi
	z2r, z2i := zr*zr-zi*zi, 2*zr*zi
	rho := 2 * z2r
	s4 := z2r*z2r + z2i*z2i
	kmax := asymTerms(r2)
	c := &asymC
	// Highest even and odd indices ≤ kmax.
	ke, ko := kmax&^1, (kmax-1)|1
	if ko > kmax {
		ko -= 2
	}
	var be, ce, bo, co float64
	for k := ke; k >= 2; k -= 2 {
		be, ce = c[k]+rho*be-s4*ce, be
	}
	for k := ko; k >= 3; k -= 2 {
		bo, co = c[k]+rho*bo-s4*co, bo
	}
	// E = c_0 − s ce + ζ² be, O = c_1 − s co + ζ² bo (O = 0 if kmax = 0).
	er, ei := c[0]-s4*ce+z2r*be, z2i*be
	or, oi := c[1]-s4*co+z2r*bo, z2i*bo
	if kmax == 0 {
		or, oi = 0, 0
	}
	sumR := er + zr*or - zi*oi
	sumI := ei + zr*oi + zi*or
	// sum = q S.
	sr, si := qr*sumR-qi*sumI, qr*sumI+qi*sumR
	wr, wi := -twoSqrtPi*si, twoSqrtPi*sr
	// exp(−z²) matters only where it is not negligible against Re w, whose
	// size is at least about |y|/(√π|z|²). For |y| ≥ 1e-10 and |z| < 1e3
	// it is negligible (below 1e-18 relative) once x² − y² > 80.
	// Cheaper special case first: for 1e-3 ≤ |y| < 1 and |z|² ≤ 1e4,
	// Re w ≥ 1e-3/(√π·1e4), so exp(−t) is below 1e-16 of it once
	// t > 36.8 + ln(√π·1e4/1e-3) ≈ 53.5 (always true here, as |z| ≥ 8).
	ay := math.Abs(y)
	if t := (x - y) * (x + y); ay < 1 && t < 745 && !(t > 54 && ay >= 1e-3 && r2 <= 1e4) && !(t > 80 && ay >= 1e-10 && r2 < 1e6) {
		if e := math.Exp(-t); e > 1e-18*math.Abs(wr) {
			s, c := math.Sincos(2 * x * y)
			wr += e * c
			wi -= e * s
		}
	}
	return complex(wr, wi)
}

// TestFaddeevaAsymptoticChains: running the even and odd recurrences side
// by side gives the same bits as running them one after the other, for
// every term count (|z|² from 64 to beyond the table) and both signs.
func TestFaddeevaAsymptoticChains(t *testing.T) {
	r := rand.New(rand.NewPCG(8, 64))
	n := 0
	for range 200000 {
		rad := 8 * math.Exp(r.Float64()*math.Log(1e4)) // |z| from 8 to 8e4
		ang := r.Float64() * math.Pi
		x, y := rad*math.Cos(ang), rad*math.Sin(ang)
		if r.IntN(4) == 0 {
			y = math.Ldexp(y, -r.IntN(60)) // near the real axis
		}
		got, want := faddeevaAsymptotic(x, y), faddeevaAsymptoticTwoLoops(x, y)
		if math.Float64bits(real(got)) != math.Float64bits(real(want)) || math.Float64bits(imag(got)) != math.Float64bits(imag(want)) {
			t.Fatalf("z = %v%+vi: %v, one chain after the other %v", x, y, got, want)
		}
		n++
	}
	for k := range 4096 { // every table entry's term count
		x := math.Sqrt(float64(max(k, 64)) + 0.5)
		if got, want := faddeevaAsymptotic(x, 0.3), faddeevaAsymptoticTwoLoops(x, 0.3); got != want {
			t.Fatalf("|z|² = %v: %v, want %v", x*x, got, want)
		}
	}
}
