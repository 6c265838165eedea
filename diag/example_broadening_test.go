package diag_test

import (
	"fmt"

	"glowlog/diag"
)

// Example_broadeningBudget follows one Hβ line from its measured width to
// the electron density: build the broadening budget from the instrument
// function, gas temperature, perturber and ground-state density; remove it
// from the measured Voigt FWHM to get the Stark FWHM; convert that with the
// default Stark relation (cross-checked against the SH99 tables, so it
// has no "from memory" warning; range warnings would be printed).
func Example_broadeningBudget() {
	hb, err := diag.NewTransition(4, 2, diag.Hydrogen)
	if err != nil {
		panic(err)
	}
	ar, err := diag.LookupPerturber("Ar")
	if err != nil {
		panic(err)
	}
	b, err := diag.NewBudget(diag.BudgetInput{
		Transition:          hb,
		InstrumentGaussNM:   0.030,
		InstrumentLorentzNM: 0.005,
		GasTempK:            1500,
		Perturber:           ar,
		PressurePa:          101325,
		GroundDensityM3:     1e21,
	})
	if err != nil {
		panic(err)
	}
	fmt.Printf("%s budget (FWHM, nm):\n", b.LineName)
	fmt.Printf("  Doppler %.4f, natural %.1e, resonance %.1e, van der Waals %.4f\n",
		b.DopplerNM, b.NaturalNM, b.ResonanceNM, b.VanDerWaalsNM)
	fmt.Printf("  Gaussian total %.4f, non-Stark Lorentzian %.4f\n", b.GaussTotalNM, b.LorentzNonStarkNM)

	const measuredNM = 0.260 // Voigt FWHM from the spectrum
	stark, err := b.StarkFromVoigtNM(measuredNM)
	if err != nil {
		panic(err)
	}
	r, err := diag.DefaultStarkRelation(hb.Upper)
	if err != nil {
		panic(err)
	}
	ne, sigma := r.DensityFromWidthSigma(stark, 0.02*stark) // 2 % width uncertainty
	fmt.Printf("Stark FWHM %.4f nm → n_e = %.3e ± %.1e m⁻³ (%s)\n", stark, ne, sigma, r.ID)
	for _, w := range r.Warnings(ne, 0) {
		fmt.Println("warning:", w)
	}

	// A measured width narrower than the Gaussian budget is an error
	// carrying the numbers.
	if _, err := b.StarkFromVoigtNM(0.020); err != nil {
		fmt.Println(err)
	}
	// Output:
	// Hβ budget (FWHM, nm):
	//   Doppler 0.0134, natural 6.3e-05, resonance 5.3e-06, van der Waals 0.0297
	//   Gaussian total 0.0329, non-Stark Lorentzian 0.0347
	// Stark FWHM 0.2208 nm → n_e = 1.088e+21 ± 3.2e+19 m⁻³ (ggc2003-hbeta-fwhm)
	// diag: line n=4: measured FWHM 0.020 nm is narrower than its Gaussian budget 0.033 nm (instrument and Doppler)
}
