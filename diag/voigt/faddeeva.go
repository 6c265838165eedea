package voigt

import "math"

// weidemanN is the number of terms N of Weideman's rational expansion.
// physics.md §6 gives a maximum relative error of |w| of 3.2e-13 for N = 32
// and 2.0e-14 for N = 40; with N = 40 the worst relative error of Re w or
// Im w found by TestFaddeevaScipy in the region where the expansion is used
// is 1.1e-13.
const weidemanN = 40

// weideman's passes are written out for N = 40.
var _ = [1]struct{}{}[weidemanN-40]

// weidemanL is Weideman's optimal scale parameter L = √(N/√2),
// Weideman (1994) eq. (38).
var weidemanL = math.Sqrt(weidemanN / math.Sqrt2)

// weidemanA (faddeeva_table.go) holds the expansion coefficients a_1 …
// a_N of Weideman (1994) eq. (34): weidemanA[n-1] = a_n, as
// weidemanCoefficients(weidemanN) computes them (generated, checked bit
// for bit by TestFaddeevaTablesGenerated: every process computed them at
// start).

// weidemanCoefficients returns the coefficients a_1 … a_n of Weideman's
// expansion
//
//	w(z) ≈ 2 Σ_{k=1}^{N} a_k Z^{k-1} / (L − iz)² + 1/(√π (L − iz)),
//	Z = (L + iz)/(L − iz),
//
// computed by a direct cosine sum equivalent to the FFT of Weideman (1994)
// §4: with M = 2N, θ_j = jπ/M and t_j = L tan(θ_j/2) for j = −M+1 … M−1,
//
//	f_j = exp(−t_j²) (L² + t_j²),
//	a_k = (1/(2M)) Σ_j f_j cos(k θ_j).
func weidemanCoefficients(n int) []float64 {
	m := 2 * n
	l := math.Sqrt(float64(n) / math.Sqrt2)
	f := make([]float64, 2*m-1)
	theta := make([]float64, 2*m-1)
	for j := -m + 1; j <= m-1; j++ {
		th := float64(j) * math.Pi / float64(m)
		t := l * math.Tan(th/2)
		theta[j+m-1] = th
		f[j+m-1] = math.Exp(-t*t) * (l*l + t*t)
	}
	a := make([]float64, n)
	for k := 1; k <= n; k++ {
		var s float64
		for j := range f {
			s += f[j] * math.Cos(float64(k)*theta[j])
		}
		a[k-1] = s / float64(2*m)
	}
	return a
}

// Region boundaries used by Faddeeva; see its documentation.
const (
	// asymR2 is R² for the asymptotic region |z| ≥ R = 8.
	asymR2 = 64.0
	// stripY is the half width in y of the strip around the real axis in
	// which the Taylor series about the real axis is used.
	stripY = 0.1
	// stripX is the smallest |x| for which that Taylor series is used.
	stripX = 2.5
)

const (
	sqrtPi    = 1.772453850905516027298167483341145182798 // √π
	invSqrtPi = 0.564189583547756286948079451560772585844 // 1/√π
	twoSqrtPi = 1.128379167095512573896158903121545171688 // 2/√π
)

// Faddeeva returns the Faddeeva function (scaled complex complementary
// error function)
//
//	w(z) = exp(−z²) erfc(−iz)
//
// for complex z = x + iy. It satisfies w(−z̄) = conj w(z), w(−z) =
// 2 exp(−z²) − w(z), and on the real axis Re w(x) = exp(−x²),
// Im w(x) = (2/√π) F(x) with F Dawson's integral.
//
// Method, after reduction to x ≥ 0 by w(−z̄) = conj w(z):
//
//   - |z| ≥ 8: the asymptotic expansion (Abramowitz & Stegun 7.1.23)
//     w(z) ≈ (i/√π) Σ_k (2k−1)!!/(2^k z^{2k+1}), summed until the terms
//     fall below 1e-18 of the sum; for |y| < 1 the term exp(−z²) is added,
//     which carries Re w = exp(−x²) on the real axis.
//   - |z| < 8, |y| < 0.1, x ≥ 2.5: the split w(z) = exp(−z²) + (2i/√π) F(z)
//     with F(z) = Σ_n F⁽ⁿ⁾(x) (iy)ⁿ/n!, where F(x) comes from Weideman's
//     expansion on the real axis, F′ = 1 − 2xF and
//     F⁽ⁿ⁺¹⁾ = −2x F⁽ⁿ⁾ − 2n F⁽ⁿ⁻¹⁾. This keeps the relative accuracy of the
//     tiny Re w ≈ exp(−x²) + y/(√π x²) that the plain rational expansion
//     loses near the real axis.
//   - otherwise, y ≥ 0: Weideman's rational expansion with N = 40
//     (Weideman 1994, eqs. (34), (38)).
//   - otherwise, y < 0: the reflection w(z) = 2 exp(−z²) − w(−z).
//
// Accuracy (TestFaddeevaScipy): in the closed upper half plane y ≥ 0 — the
// domain used for Voigt profiles — Re w and Im w each have relative error
// below 1e-9 (the guaranteed bound the tests assert); the measured worst
// case is 1.1e-13, for |x| ≤ 30 and y ∈ {0} ∪ [1e-300, 100], against
// scipy.special.wofz and against mpmath at 40 digits near the real axis.
// Beyond that box only the asymptotic branch is used, whose error
// decreases with |z|. For y < 0 (reflection) the measured error is below
// 1e-14 relative to |w| for −4 ≤ y < 0, |x| ≤ 20, but Re w or Im w alone
// may lose relative accuracy near their zeros, and exp(−z²) overflows to
// ±Inf for y² − x² ≳ 709. Faddeeva(NaN) is NaN.
//
// References:
//
//	J. A. C. Weideman, Computation of the complex error function,
//	SIAM J. Numer. Anal. 31 (1994) 1497–1518.
//	M. Abramowitz and I. A. Stegun, Handbook of Mathematical Functions
//	(1964), eqs. 7.1.3, 7.1.11, 7.1.23.
func Faddeeva(z complex128) complex128 {
	x, y := real(z), imag(z)
	if math.IsNaN(x) || math.IsNaN(y) {
		return complex(math.NaN(), math.NaN())
	}
	if y < -stripY {
		// Reflection w(z) = 2 exp(−z²) − w(−z), Abramowitz & Stegun 7.1.11.
		return 2*expNegSq(x, y) - faddeevaUpper(-x, -y)
	}
	return faddeevaUpper(x, y)
}

// faddeevaUpper evaluates w(x + iy) for y ≥ −stripY.
func faddeevaUpper(x, y float64) complex128 {
	if x < 0 {
		// w(−z̄) = conj w(z).
		r := faddeevaRight(-x, y)
		return complex(real(r), -imag(r))
	}
	return faddeevaRight(x, y)
}

// faddeevaRight is faddeevaUpper for x ≥ 0 (or NaN; not x < 0).
func faddeevaRight(x, y float64) complex128 {
	r2 := x*x + y*y
	switch {
	case y == 0 && r2 < asymR2:
		// Real axis: Re w(x) = exp(−x²) exactly.
		return complex(math.Exp(-x*x), imag(weideman(x, 0)))
	case r2 >= asymR2:
		return faddeevaAsymptotic(x, y)
	case math.Abs(y) < stripY && x >= stripX:
		return faddeevaStrip(x, y)
	case y >= 0:
		return weideman(x, y)
	default:
		return 2*expNegSq(x, y) - weideman(-x, -y)
	}
}

// expNegSq returns exp(−z²) for z = x + iy, with exp(−z²) = 0 when
// exp(y² − x²) underflows (also for infinite x).
func expNegSq(x, y float64) complex128 {
	e := math.Exp((y - x) * (y + x))
	if e == 0 {
		return 0
	}
	s, c := math.Sincos(2 * x * y)
	return complex(e*c, -e*s)
}

// weideman evaluates Weideman's rational expansion for y ≥ 0,
// Weideman (1994) eq. (34):
//
//	w(z) ≈ [2 p(Z)/(L − iz) + 1/√π] / (L − iz),  Z = (L + iz)/(L − iz),
//	p(Z) = Σ_{k=1}^{N} a_k Z^{k−1}.
//
// p has real coefficients, so it is split as p(Z) = Σ_{j=0}^{3} Z^j p_j(Z⁴)
// and each p_j(ζ) is evaluated with the real second-order recurrence for a
// real polynomial at a complex point ζ (division by ζ² − 2Re ζ·ζ + |ζ|²;
// Knuth, TAOCP Vol. 2, 3rd ed., §4.6.4): four independent chains of
// N/4 steps with two real multiplications each.
func weideman(x, y float64) complex128 {
	l := weidemanL
	// u = L − iz = (L + y) − ix;  1/u = ((L + y) + ix)/|u|².
	ur, ui := l+y, -x
	d := 1 / (ur*ur + ui*ui)
	vr, vi := ur*d, -ui*d // 1/u
	// Z = (L + iz)/u with L + iz = (L − y) + ix.
	nr, ni := l-y, x
	zr := nr*vr - ni*vi
	zi := nr*vi + ni*vr
	z2r, z2i := zr*zr-zi*zi, 2*zr*zi
	z4r, z4i := z2r*z2r-z2i*z2i, 2*z2r*z2i
	r := 2 * z4r
	s := z4r*z4r + z4i*z4i
	a := &weidemanA
	const n = weidemanN
	// Chain j is p_j(ζ) = Σ_m a[4m+j] ζ^m, m = 0 … M = N/4 − 1, evaluated by
	// b_m = a[4m+j] + r b_{m+1} − s b_{m+2} from b_M = a[4M+j], b_{M+1} = 0
	// down to b_1, then p_j(ζ) = a[j] − s b_2 + ζ b_1. Two steps per pass
	// let the b and c variables alternate without copies; this needs N/4
	// even (N a multiple of 8). On exit b_j = b_1 and c_j = b_2.
	//
	// The passes (k = N−8, N−16, …, 8) are written out: the compiler
	// kept the loop's eight chain variables moving between registers at
	// every pass, about a sixth of the function's instructions; the
	// arithmetic, and so the result, is the loop's to the bit.
	b0, b1, b2, b3 := a[n-4], a[n-3], a[n-2], a[n-1]
	var c0, c1, c2, c3 float64
	c0 = a[32] + r*b0 - s*c0
	c1 = a[33] + r*b1 - s*c1
	c2 = a[34] + r*b2 - s*c2
	c3 = a[35] + r*b3 - s*c3
	b0 = a[28] + r*c0 - s*b0
	b1 = a[29] + r*c1 - s*b1
	b2 = a[30] + r*c2 - s*b2
	b3 = a[31] + r*c3 - s*b3
	c0 = a[24] + r*b0 - s*c0
	c1 = a[25] + r*b1 - s*c1
	c2 = a[26] + r*b2 - s*c2
	c3 = a[27] + r*b3 - s*c3
	b0 = a[20] + r*c0 - s*b0
	b1 = a[21] + r*c1 - s*b1
	b2 = a[22] + r*c2 - s*b2
	b3 = a[23] + r*c3 - s*b3
	c0 = a[16] + r*b0 - s*c0
	c1 = a[17] + r*b1 - s*c1
	c2 = a[18] + r*b2 - s*c2
	c3 = a[19] + r*b3 - s*c3
	b0 = a[12] + r*c0 - s*b0
	b1 = a[13] + r*c1 - s*b1
	b2 = a[14] + r*c2 - s*b2
	b3 = a[15] + r*c3 - s*b3
	c0 = a[8] + r*b0 - s*c0
	c1 = a[9] + r*b1 - s*c1
	c2 = a[10] + r*b2 - s*c2
	c3 = a[11] + r*b3 - s*c3
	b0 = a[4] + r*c0 - s*b0
	b1 = a[5] + r*c1 - s*b1
	b2 = a[6] + r*c2 - s*b2
	b3 = a[7] + r*c3 - s*b3
	// p_j(ζ) = a[j] − s b_2 + ζ b_1.
	p0r, p0i := a[0]-s*c0+z4r*b0, z4i*b0
	p1r, p1i := a[1]-s*c1+z4r*b1, z4i*b1
	p2r, p2i := a[2]-s*c2+z4r*b2, z4i*b2
	p3r, p3i := a[3]-s*c3+z4r*b3, z4i*b3
	// p = (p_0 + Z² p_2) + Z (p_1 + Z² p_3).
	er := p0r + z2r*p2r - z2i*p2i
	ei := p0i + z2r*p2i + z2i*p2r
	or := p1r + z2r*p3r - z2i*p3i
	oi := p1i + z2r*p3i + z2i*p3r
	pr := er + zr*or - zi*oi
	pi := ei + zr*oi + zi*or
	// w = (2 p/u + 1/√π)/u.
	tr := 2*(pr*vr-pi*vi) + invSqrtPi
	ti := 2 * (pr*vi + pi*vr)
	return complex(tr*vr-ti*vi, tr*vi+ti*vr)
}

// faddeevaAsymptotic evaluates w for |z| ≥ 8 from the asymptotic series
// (Abramowitz & Stegun 7.1.23, written for w)
//
//	w(z) ≈ (2i/√π) Σ_{k≥0} c_k z^{−(2k+1)},  c_0 = 1/2,  c_{k+1} = c_k (2k+1)/2,
//
// plus exp(−z²) when |y| < 1. Near the real axis the series is the
// asymptotic expansion of Dawson's integral F(z) in w = exp(−z²) + (2i/√π)F;
// for |y| ≥ 1 (and |z| ≥ 8) the omitted exponential part is of order
// exp(−|z|²) ≤ exp(−64) relative. The sum stops when the term magnitude
// falls below 1e-18 of the leading term (at most 64 terms for |z| = 8,
// about 12 for |z| = 12).
func faddeevaAsymptotic(x, y float64) complex128 {
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
	// The even chain runs k = ke, ke−2, …, 2 and the odd one k = ko, …, 3;
	// each step waits for the one before, so the two chains are run side
	// by side (the longer one's extra step first): the same operations in
	// the same order per chain, twice the independent work per step.
	var be, ce, bo, co float64
	se, so := ke>>1, max((ko-1)>>1, 0) // steps of each chain (ke, ko − 1 even: >>1 is /2)
	k, j := ke, ko
	for ; se > so; se-- {
		be, ce = c[k]+rho*be-s4*ce, be
		k -= 2
	}
	for ; so > se; so-- {
		bo, co = c[j]+rho*bo-s4*co, bo
		j -= 2
	}
	for ; se > 0; se-- {
		be, ce = c[k]+rho*be-s4*ce, be
		bo, co = c[j]+rho*bo-s4*co, bo
		k, j = k-2, j-2
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

// asymC holds c_k = (2k−1)!!/2^(k+1) of the asymptotic series.
var asymC = func() (c [82]float64) {
	c[0] = 0.5
	for k := 1; k < len(c); k++ {
		c[k] = c[k-1] * float64(2*k-1) / 2
	}
	return c
}()

// asymTable (faddeeva_table.go) gives in asymTable[i] the number K of
// terms beyond the first that the asymptotic series needs for |z|² ≥ i
// (64 ≤ i < 4096): the smallest K with Π_{k<K} (2k+1)/(2|z|²) < 1e-18, as
// asymTermsSlow(i) computes it (0 below 64; generated, checked by
// TestFaddeevaTablesGenerated).

func asymTermsSlow(r2 float64) int {
	mag := 1.0
	for k := 0; k < 80; k++ {
		mag *= float64(2*k+1) / (2 * r2)
		if mag < 1e-18 {
			return k + 1
		}
	}
	return 80
}

// asymTerms returns K for |z|² = r2 ≥ 64.
func asymTerms(r2 float64) int {
	if r2 < float64(len(asymTable)) {
		return int(asymTable[int(r2)])
	}
	return asymTermsSlow(r2)
}

// faddeevaStrip evaluates w for x ≥ 2.5, |y| < 0.1, |z| < 8 by the Taylor
// series about the real point x,
//
//	w(x + iy) = Σ_n w⁽ⁿ⁾(x) (iy)ⁿ / n!,
//	w⁽¹⁾ = −2x w + 2i/√π,  w⁽ⁿ⁺¹⁾ = −2x w⁽ⁿ⁾ − 2n w⁽ⁿ⁻¹⁾  (n ≥ 1),
//
// which follows from w′(z) = −2z w(z) + 2i/√π (Abramowitz & Stegun 7.1.20).
// On the real axis w(x) = exp(−x²) + (2i/√π) F(x) exactly in its real part,
// and F(x) (Dawson's integral) comes from Weideman's expansion, whose
// relative error in Im w(x) is small. The real parts of w⁽ⁿ⁾(x) are
// exp(−x²)(−1)ⁿHₙ(x), a stable forward recurrence; in the imaginary parts
// the recurrence amplifies the error of F′(x) = 1 − 2xF(x) by at most
// about exp(2xy) ≤ e^1.6, so Re w keeps its relative accuracy even where
// Re w ≈ exp(−x²) + y/(√π x²) ≪ |w|.
func faddeevaStrip(x, y float64) complex128 {
	e := math.Exp(-x * x)
	d := imag(weideman(x, 0)) // (2/√π) F(x)
	if y == 0 {
		return complex(e, d)
	}
	// (ar, ai) = w⁽ⁿ⁻¹⁾, (br, bi) = w⁽ⁿ⁾; c = yⁿ/n!.
	ar, ai := e, d
	br, bi := -2*x*e, -2*x*d+twoSqrtPi
	c := y
	// w = Σ iⁿ c_n w⁽ⁿ⁾: accumulate real and imaginary parts.
	wr, wi := ar-c*bi, ai+c*br
	for n := 1; n < 40; n++ {
		fn := 2 * float64(n)
		ar, ai, br, bi = br, bi, -2*x*br-fn*ar, -2*x*bi-fn*ai
		c *= y / float64(n+1)
		tr, ti := c*br, c*bi
		// i^(n+1) for n+1 ≡ 0, 1, 2, 3 (mod 4) is 1, i, −1, −i.
		switch (n + 1) & 3 {
		case 0:
			wr += tr
			wi += ti
		case 1:
			wr -= ti
			wi += tr
		case 2:
			wr -= tr
			wi -= ti
		case 3:
			wr += ti
			wi -= tr
		}
		if math.Abs(tr)+math.Abs(ti) < 1e-18*math.Abs(wr) {
			break
		}
	}
	return complex(wr, wi)
}
