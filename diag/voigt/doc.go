// Package voigt evaluates the Faddeeva function w(z) and the normalised
// Voigt line profile with its analytic parameter derivatives.
//
// The Faddeeva function is
//
//	w(z) = exp(-z²) erfc(-iz),
//
// and the area-normalised Voigt profile with Gaussian standard deviation σ
// and Lorentzian half width at half maximum γ is
//
//	V(x; σ, γ) = Re w(z) / (σ √(2π)),   z = (x + iγ) / (σ √2).
//
// x, σ and γ share one unit (for example nm); V then has the reciprocal unit
// and integrates to 1 over x.
//
// The package is pure numerics: no I/O, no allocation, no global state other
// than the Weideman coefficients computed once at package initialisation.
//
// References:
//
//	J. A. C. Weideman, Computation of the complex error function,
//	SIAM J. Numer. Anal. 31 (1994) 1497–1518.
//	M. Abramowitz and I. A. Stegun, Handbook of Mathematical Functions,
//	NBS Applied Mathematics Series 55 (1964), §7.1 (error function,
//	Dawson's integral, asymptotic expansion 7.1.23).
//	J. J. Olivero and R. L. Longbothum, Empirical fits to the Voigt line
//	width: a brief review, J. Quant. Spectrosc. Radiat. Transfer 17 (1977)
//	233–236.
package voigt
