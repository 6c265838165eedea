package voigt

import "math"

const (
	sqrt2      = math.Sqrt2
	sqrt2Pi    = 2.506628274631000502415765284811045253007 // √(2π)
	invSqrt2Pi = 0.398942280401432677939946059934381868476 // 1/√(2π)

	// FWHMPerSigma is the ratio 2√(2 ln 2) of the full width at half
	// maximum of a Gaussian to its standard deviation (dimensionless, exact
	// by definition; value to 20 digits).
	FWHMPerSigma = 2.3548200450309493820231386529193992755
)

// Profile returns the area-normalised Voigt profile
//
//	V(x; σ, γ) = Re w(z) / (σ √(2π)),   z = (x + iγ) / (σ √2),
//
// the convolution of a Gaussian with standard deviation σ and a Lorentzian
// with half width at half maximum γ, evaluated at offset x from the line
// centre. x, σ and γ share one unit (for example nm); V has the reciprocal
// unit, and ∫V dx = 1.
//
// The limits are exact: γ = 0 gives the Gaussian
// exp(−x²/(2σ²))/(σ√(2π)), σ = 0 the Lorentzian γ/(π(x² + γ²)). For
// σ = γ = 0 V is a Dirac delta: Profile returns +Inf at x = 0 and 0
// elsewhere. The relative accuracy is that of Faddeeva in the upper half
// plane (better than 1e-9, in practice about 1e-13).
//
// Profile panics if σ or γ is negative or NaN.
//
// Reference: the definition follows scipy.special.voigt_profile; see also
// Olivero & Longbothum (1977), J. Quant. Spectrosc. Radiat. Transfer 17, 233.
func Profile(x, sigma, gamma float64) float64 {
	checkWidths(sigma, gamma)
	switch {
	case sigma == 0 && gamma == 0:
		if x == 0 {
			return math.Inf(1)
		}
		return 0
	case gamma == 0:
		u := x / sigma
		return math.Exp(-0.5*u*u) * invSqrt2Pi / sigma
	case sigma == 0:
		return gamma / (math.Pi * (x*x + gamma*gamma))
	}
	s := sigma * sqrt2
	return real(Faddeeva(complex(x/s, gamma/s))) * invSqrt2Pi / sigma
}

// ProfileDeriv returns the Voigt profile v = V(x; σ, γ) of Profile together
// with its analytic partial derivatives with respect to x, σ and γ.
//
// With z = (x + iγ)/(σ√2), c = 1/(σ√(2π)) and w′(z) = −2z w(z) + 2i/√π
// (Abramowitz & Stegun 7.1.20),
//
//	∂V/∂x = c Re w′(z) / (σ√2),
//	∂V/∂γ = −c Im w′(z) / (σ√2),
//	∂V/∂σ = −(c/σ) [Re w(z) + Re(z w′(z))].
//
// For a line centred at x₀, evaluated at V(λ − x₀), the derivative with
// respect to x₀ is −∂V/∂x. In the pure-Lorentzian limit σ = 0, ∂V/∂σ = 0 (V
// is even in σ); at γ = 0 ∂V/∂γ is the one-sided derivative, which is not
// zero. The absolute error of each derivative is of order 1e-15 times the
// peak of |∂V| (TestProfileDeriv compares with finite differences); in the
// far wings (|z| ≫ 1) the cancellation in −2zw + 2i/√π makes the relative
// error grow like |z|² × 1e-16, which is harmless for least squares. For
// σ = γ = 0 the derivatives are NaN.
//
// ProfileDeriv panics if σ or γ is negative or NaN.
func ProfileDeriv(x, sigma, gamma float64) (v, dx, dsigma, dgamma float64) {
	checkWidths(sigma, gamma)
	switch {
	case sigma == 0 && gamma == 0:
		nan := math.NaN()
		return Profile(x, 0, 0), nan, nan, nan
	case sigma == 0:
		d := x*x + gamma*gamma
		v = gamma / (math.Pi * d)
		dx = -2 * x * gamma / (math.Pi * d * d)
		dgamma = (x*x - gamma*gamma) / (math.Pi * d * d)
		return v, dx, 0, dgamma
	}
	invSigma := 1 / sigma
	is := invSigma / sqrt2 // 1/(σ√2)
	zr, zi := x*is, gamma*is
	w := Faddeeva(complex(zr, zi))
	wr, wi := real(w), imag(w)
	// w′ = −2 z w + 2i/√π.
	dr := -2 * (zr*wr - zi*wi)
	di := -2*(zr*wi+zi*wr) + twoSqrtPi
	c := invSqrt2Pi * invSigma
	if gamma == 0 {
		u := x * invSigma
		v = math.Exp(-0.5*u*u) * c
	} else {
		v = wr * c
	}
	dx = c * dr * is
	dgamma = -c * di * is
	// Re(z w′) = zr dr − zi di.
	dsigma = -c * invSigma * (wr + zr*dr - zi*di)
	return v, dx, dsigma, dgamma
}

// Deriv evaluates ProfileDeriv for one pair of widths σ, γ at many
// offsets: d.At(x) is ProfileDeriv(x, σ, γ), bit for bit (the same
// operations; TestDerivMatchesProfileDeriv). The reciprocals of σ, which
// ProfileDeriv divides out at every point, are computed once: two
// divisions less per point, which a fit over a window evaluates
// thousands of times with one σ and γ per line.
type Deriv struct {
	sigma, gamma float64
	invSigma     float64 // 1/σ
	is           float64 // 1/(σ√2)
	c            float64 // 1/(σ√(2π))
}

// NewDeriv returns the evaluator for widths σ and γ. It panics if σ or γ
// is negative or NaN.
func NewDeriv(sigma, gamma float64) Deriv {
	checkWidths(sigma, gamma)
	invSigma := 1 / sigma
	return Deriv{sigma: sigma, gamma: gamma, invSigma: invSigma, is: invSigma / sqrt2, c: invSqrt2Pi * invSigma}
}

// At returns the profile and its derivatives at offset x (see
// ProfileDeriv).
func (d *Deriv) At(x float64) (v, dx, dsigma, dgamma float64) {
	sigma, gamma := d.sigma, d.gamma
	switch {
	case sigma == 0 && gamma == 0:
		nan := math.NaN()
		return Profile(x, 0, 0), nan, nan, nan
	case sigma == 0:
		q := x*x + gamma*gamma
		v = gamma / (math.Pi * q)
		dx = -2 * x * gamma / (math.Pi * q * q)
		dgamma = (x*x - gamma*gamma) / (math.Pi * q * q)
		return v, dx, 0, dgamma
	}
	invSigma, is := d.invSigma, d.is
	zr, zi := x*is, gamma*is
	// Faddeeva(complex(zr, zi)) with its steps for zi ≥ 0 taken here
	// (one call instead of up to three; the same values).
	var wr, wi float64
	switch {
	case math.IsNaN(zr) || math.IsNaN(zi) || zi < -stripY:
		w := Faddeeva(complex(zr, zi))
		wr, wi = real(w), imag(w)
	case zr < 0:
		w := faddeevaRight(-zr, zi)
		wr, wi = real(w), -imag(w)
	default:
		w := faddeevaRight(zr, zi)
		wr, wi = real(w), imag(w)
	}
	// w′ = −2 z w + 2i/√π.
	dr := -2 * (zr*wr - zi*wi)
	di := -2*(zr*wi+zi*wr) + twoSqrtPi
	c := d.c
	if gamma == 0 {
		u := x * invSigma
		v = math.Exp(-0.5*u*u) * c
	} else {
		v = wr * c
	}
	dx = c * dr * is
	dgamma = -c * di * is
	// Re(z w′) = zr dr − zi di.
	dsigma = -c * invSigma * (wr + zr*dr - zi*di)
	return v, dx, dsigma, dgamma
}

func checkWidths(sigma, gamma float64) {
	if !(sigma >= 0) || !(gamma >= 0) {
		panic("voigt: negative or NaN width")
	}
}

// SigmaFromFWHM returns the Gaussian standard deviation σ = FWHM/(2√(2 ln 2))
// for a Gaussian full width at half maximum (same unit).
func SigmaFromFWHM(fwhm float64) float64 { return fwhm / FWHMPerSigma }

// GaussianFWHM returns the Gaussian full width at half maximum 2√(2 ln 2) σ
// for a standard deviation σ (same unit).
func GaussianFWHM(sigma float64) float64 { return sigma * FWHMPerSigma }

// GammaFromFWHM returns the Lorentzian half width at half maximum γ = FWHM/2.
func GammaFromFWHM(fwhm float64) float64 { return fwhm / 2 }

// LorentzianFWHM returns the Lorentzian full width at half maximum 2γ.
func LorentzianFWHM(gamma float64) float64 { return 2 * gamma }

// OliveroFWHM returns the Olivero–Longbothum approximation to the full width
// at half maximum of a Voigt profile from the Gaussian and Lorentzian full
// widths fG and fL (same unit):
//
//	f_V ≈ 0.5346 f_L + √(0.2166 f_L² + f_G²).
//
// Its maximum relative error is about 2.4e-4, at f_L/f_G ≈ 0.29
// (physics.md §5.6, checked against FWHM in TestOliveroFWHM).
//
// Reference: J. J. Olivero and R. L. Longbothum, Empirical fits to the Voigt
// line width: a brief review, J. Quant. Spectrosc. Radiat. Transfer 17
// (1977) 233–236.
func OliveroFWHM(fG, fL float64) float64 {
	return 0.5346*fL + math.Sqrt(0.2166*fL*fL+fG*fG)
}

// FWHM returns the exact full width at half maximum of the Voigt profile
// V(x; σ, γ), found as twice the root x > 0 of V(x) = V(0)/2 by a
// safeguarded Newton iteration started from OliveroFWHM, to a relative
// accuracy of about 1e-14. FWHM panics if σ or γ is negative or NaN and
// returns 0 for σ = γ = 0.
func FWHM(sigma, gamma float64) float64 {
	checkWidths(sigma, gamma)
	switch {
	case sigma == 0:
		return 2 * gamma
	case gamma == 0:
		return sigma * FWHMPerSigma
	}
	half := 0.5 * Profile(0, sigma, gamma)
	// Bracket [lo, hi] with V(lo) > half > V(hi).
	x := 0.5 * OliveroFWHM(sigma*FWHMPerSigma, 2*gamma)
	lo, hi := 0.0, 2*x
	for Profile(hi, sigma, gamma) > half {
		lo, hi = hi, 2*hi
	}
	for range 100 {
		v, dv, _, _ := ProfileDeriv(x, sigma, gamma)
		f := v - half
		if f > 0 {
			lo = x
		} else {
			hi = x
		}
		next := x - f/dv
		if !(next > lo && next < hi) {
			next = 0.5 * (lo + hi)
		}
		if math.Abs(next-x) <= 1e-15*x {
			x = next
			break
		}
		x = next
	}
	return 2 * x
}
