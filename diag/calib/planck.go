package calib

import (
	"fmt"
	"math"

	"glowlog/diag"
)

// Radiation constants of Planck's law, computed from the exact SI 2019
// values of h, c and k_B in package diag (CODATA 2018 set), so they are
// exact up to the float64 rounding of the constant expression.
const (
	// PlanckC1 is the first radiation constant for spectral radiance,
	// c₁L = 2hc² in W m² sr⁻¹ (≈ 1.191 042 972e-16; physics.md §7 quotes
	// 1.19104e-16).
	PlanckC1 = 2 * diag.Planck * diag.SpeedOfLight * diag.SpeedOfLight
	// PlanckC2 is the second radiation constant c₂ = hc/k_B in m K
	// (≈ 1.438 776 877e-2; physics.md §7 quotes 1.438777e-2).
	PlanckC2 = diag.Planck * diag.SpeedOfLight / diag.Boltzmann
	// hcJM is hc in J m, used to turn energy into photon quantities.
	hcJM = diag.Planck * diag.SpeedOfLight
)

// PlanckRadianceNM returns the black-body spectral radiance per unit
// wavelength by Planck's law,
//
//	B_λ(λ, T) = c₁ / λ⁵ · 1 / (exp(c₂/(λT)) − 1),   c₁ = 2hc², c₂ = hc/k_B,
//
// in W m⁻² sr⁻¹ nm⁻¹ (the SI value per metre of wavelength times 1e-9), for
// the vacuum wavelength lambdaNM in nm and the temperature tempK in K. The
// difference between air and vacuum wavelengths (about 0.03 %) changes the
// shape of B_λ over 380–700 nm by far less than the grey-body error, so air
// wavelengths may be passed as they are.
//
// The denominator is evaluated with math.Expm1, so the Rayleigh–Jeans limit
// c₂/(λT) ≪ 1 keeps full precision.
//
// PlanckRadianceNM panics with a "calib: " prefix if lambdaNM or tempK is
// not positive and finite.
//
// Reference: M. Planck, Ueber das Gesetz der Energieverteilung im
// Normalspectrum, Ann. Phys. 309 (1901) 553–563; radiation constants as in
// CODATA 2018 (E. Tiesinga et al., Rev. Mod. Phys. 93 (2021) 025010).
func PlanckRadianceNM(lambdaNM, tempK float64) float64 {
	checkPositive("PlanckRadianceNM", "wavelength", lambdaNM)
	checkPositive("PlanckRadianceNM", "temperature", tempK)
	l := lambdaNM * 1e-9
	x := PlanckC2 / (l * tempK)
	l2 := l * l
	return PlanckC1 / (l2 * l2 * l) / math.Expm1(x) * 1e-9
}

// PlanckPhotonRadianceNM returns the black-body spectral photon radiance
//
//	B_p(λ, T) = B_λ(λ, T) · λ / (hc)
//
// in photons s⁻¹ m⁻² sr⁻¹ nm⁻¹, with B_λ from PlanckRadianceNM and λ in m
// inside the factor. Inputs and panics are as for PlanckRadianceNM.
func PlanckPhotonRadianceNM(lambdaNM, tempK float64) float64 {
	return PlanckRadianceNM(lambdaNM, tempK) * photonPerJoule(lambdaNM)
}

// photonPerJoule returns λ/(hc), the number of photons per joule at the
// wavelength lambdaNM (nm): E_p = E_λ · photonPerJoule(λ) (physics.md §7).
func photonPerJoule(lambdaNM float64) float64 {
	return lambdaNM * 1e-9 / hcJM
}

func checkPositive(fn, what string, v float64) {
	if !(v > 0) || math.IsInf(v, 0) {
		panic(fmt.Sprintf("calib: %s: %s %g is not positive and finite", fn, what, v))
	}
}
