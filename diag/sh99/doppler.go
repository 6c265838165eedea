package sh99

import (
	"math"
	"sync"
)

// Olivero & Longbothum (1977), JQSRT 17, 233: Voigt FWHM
// w_V ≈ olA·w_L + √(olB·w_L² + w_G²) (physics.md §5.6, sourced).
const (
	olA = 0.5346
	olB = 0.2166
)

// starkFWHM returns the Lorentzian FWHM w_L of a Voigt profile with FWHM
// wV and Gaussian FWHM wG, by the inverted Olivero–Longbothum formula
//
//	w_L = [a·w_V − √(b·w_V² + (a² − b)·w_G²)]/(a² − b)
//
// (physics.md §5.6). It returns a value ≤ 0 when wG ≥ wV.
func starkFWHM(wV, wG float64) float64 {
	if !(wV > wG) {
		return 0
	}
	d := olA*olA - olB
	return (olA*wV - math.Sqrt(olB*wV*wV+d*wG*wG)) / d
}

// voigtFWHARatio tabulates ψ(ρ) = FWHA of the Voigt profile with
// Lorentzian FWHM 1 and Gaussian FWHM ρ, for ρ = 0 … rhoMax in steps of
// 1/rhoSteps. Computed once by Newton's method on the half-area condition
// with the trapezoidal rule over the Gaussian (spectrally accurate here:
// the integrand's nearest poles are ≥ 0.55 from the real axis in units of
// the step-scaled variable, error < 1e-12).
var voigtFWHARatio = sync.OnceValue(func() []float64 {
	psi := make([]float64, rhoMax*rhoSteps+1)
	for i := range psi {
		psi[i] = voigtFWHA(1, float64(i)/rhoSteps)
	}
	return psi
})

const (
	rhoMax   = 2
	rhoSteps = 100
)

// voigtFWHA returns the full width at half area of the Voigt profile with
// Lorentzian FWHM wL > 0 and Gaussian FWHM wG ≥ 0: 2a with
//
//	M(a) = ∫ G(y) [atan((a−y)/γ) + atan((a+y)/γ)]/π dy = ½,  γ = w_L/2.
func voigtFWHA(wL, wG float64) float64 {
	gamma := wL / 2
	if wG == 0 {
		return wL
	}
	sigma := wG / (2 * math.Sqrt(2*math.Ln2))
	const h, tmax = 0.1, 8.0
	n := int(tmax / h)
	mass := func(a float64) (m, dm float64) {
		for i := -n; i <= n; i++ {
			t := float64(i) * h
			e := math.Exp(-t * t)
			g := math.Sqrt2 * sigma * t
			m += e * (math.Atan((a-g)/gamma) + math.Atan((a+g)/gamma))
			dm += e * gamma * (1/((a-g)*(a-g)+gamma*gamma) + 1/((a+g)*(a+g)+gamma*gamma))
		}
		c := h / (math.Pi * math.SqrtPi)
		return m * c, dm * c
	}
	// Start from the Olivero–Longbothum FWHM with the Gaussian part
	// scaled to its half-area width.
	a := 0.5 * (olA*wL + math.Sqrt(olB*wL*wL+0.328*wG*wG))
	for range 50 {
		m, dm := mass(a)
		step := (m - 0.5) / dm
		if step > 0.5*a {
			step = 0.5 * a
		}
		a -= step
		if math.Abs(step) <= 1e-13*a {
			break
		}
	}
	return 2 * a
}

// voigtFWHAFast is voigtFWHA by interpolation in the ψ table, for
// wG/wL ≤ rhoMax (accuracy ~1e-5 relative, tested).
func voigtFWHAFast(wL, wG float64) float64 {
	psi := voigtFWHARatio()
	u := wG / wL * rhoSteps
	i := int(u)
	if i >= len(psi)-1 {
		i = len(psi) - 2
	}
	t := u - float64(i)
	return wL * ((1-t)*psi[i] + t*psi[i+1])
}

// starkFWHA returns the Lorentzian FWHM w_L of a Voigt profile with full
// width at half area wA and Gaussian FWHM wG: the root of
// FWHA_Voigt(w_L, w_G) = w_A (for a Lorentzian, FWHA = FWHM), found by
// bisection. It returns 0 when wG/w_L would exceed rhoMax.
func starkFWHA(wA, wG float64) float64 {
	if !(wA > 0) {
		return 0
	}
	if wG == 0 {
		return wA
	}
	lo, hi := wG/rhoMax, wA
	if lo >= hi || voigtFWHAFast(lo, wG) > wA {
		return 0
	}
	for range 60 {
		m := 0.5 * (lo + hi)
		if voigtFWHAFast(m, wG) < wA {
			lo = m
		} else {
			hi = m
		}
	}
	return 0.5 * (lo + hi)
}
