package voigt_test

import (
	"fmt"

	"glowlog/diag/voigt"
)

func ExampleProfile() {
	// A line with Gaussian FWHM 0.02 nm (instrument + Doppler) and
	// Lorentzian (Stark) FWHM 0.05 nm. The printed values agree with
	// scipy.special.voigt_profile (peak 11.600766768838827 /nm) and a
	// scipy.optimize.brentq root of V(x) = V(0)/2 (FWHM 0.05742433129583451 nm).
	sigma := voigt.SigmaFromFWHM(0.02)
	gamma := voigt.GammaFromFWHM(0.05)
	fmt.Printf("peak   %.4f /nm\n", voigt.Profile(0, sigma, gamma))
	fmt.Printf("FWHM   %.6f nm (exact)\n", voigt.FWHM(sigma, gamma))
	fmt.Printf("FWHM   %.6f nm (Olivero–Longbothum)\n", voigt.OliveroFWHM(0.02, 0.05))
	// Output:
	// peak   11.6008 /nm
	// FWHM   0.057424 nm (exact)
	// FWHM   0.057414 nm (Olivero–Longbothum)
}

func ExampleFaddeeva() {
	// w(1 + i), physics.md §6: 0.30474420525691259 + 0.20821893820283163i.
	w := voigt.Faddeeva(1 + 1i)
	fmt.Printf("%.15f %+.15fi\n", real(w), imag(w))
	// Output:
	// 0.304744205256913 +0.208218938202832i
}
