package diag_test

import (
	"fmt"

	"glowlog/diag"
)

// Compute the Hα line of hydrogen from first principles.
func ExampleNewTransition() {
	ha, err := diag.NewTransition(3, 2, diag.Hydrogen)
	if err != nil {
		panic(err)
	}
	fmt.Printf("%s: λ_air = %.4f nm, E_k = %.5f eV, g_k = %d\n", ha.Name(), ha.WavelengthAirNM, ha.UpperEnergyEV, ha.GUpper)
	fmt.Printf("A = %.4e s⁻¹, f = %.5f, S = %.2f a.u.\n", ha.EinsteinA, ha.OscillatorF, ha.LineStrengthAU)
	// Output:
	// Hα: λ_air = 656.2794 nm, E_k = 12.08751 eV, g_k = 18
	// A = 4.4102e+07 s⁻¹, f = 0.64110, S = 110.84 a.u.
}

// Fit a Boltzmann plot of four Balmer lines with 5 % intensity errors.
func ExampleFitBoltzmann() {
	intensities := map[int]float64{3: 10.12172, 4: 1, 5: 0.258556, 6: 0.103032} // energy units, 5000 K
	var pts []diag.BoltzmannPoint
	for _, n := range []int{3, 4, 5, 6} {
		t, _ := diag.Balmer(n, diag.Hydrogen)
		pts = append(pts, diag.BoltzmannPoint{Upper: n, EnergyEV: t.UpperEnergyEV, G: float64(t.GUpper), A: t.EinsteinA,
			WavelengthNM: t.WavelengthVacNM, Intensity: intensities[n], IntensityUnc: 0.05 * intensities[n]})
	}
	res, err := diag.FitBoltzmann(pts, diag.BoltzmannOptions{Unit: diag.EnergyUnits})
	if err != nil {
		panic(err)
	}
	fmt.Printf("T_exc = %.0f ± %.0f K (%s), %d lines\n", res.TemperatureK, res.TemperatureUncK, res.UncBasis, res.N)
	// Output:
	// T_exc = 5000 ± 124 K (covariance), 4 lines
}

// Analyse a measurement set: Hβ width and four line intensities.
func ExampleAnalyze() {
	m := diag.Measurement{
		Unit: diag.PhotonUnits, ResponseCorrected: true,
		InstrumentGaussFWHMNM: 0.05, GasTemperatureK: 1200, PressurePa: 101325, Perturber: "Ar",
		Lines: []diag.MeasuredLine{
			{Upper: 3, Intensity: 1.0e5, IntensityUnc: 2e3},
			{Upper: 4, Intensity: 1.5e4, IntensityUnc: 4e2, FWHMNM: 0.55, FWHMUncNM: 0.01},
			{Upper: 5, Intensity: 3.9e3, IntensityUnc: 1.5e2},
			{Upper: 6, Intensity: 1.6e3, IntensityUnc: 8e1},
		},
	}
	res, err := diag.Analyze(m)
	if err != nil {
		panic(err)
	}
	fmt.Printf("T_exc = %.0f ± %.0f K (%s, reduced χ² %.1f)\n", *res.ExcitationTemperatureK, *res.ExcitationTemperatureUncK,
		res.Boltzmann.UncBasis, res.Boltzmann.ReducedChi2)
	fmt.Printf("n_e = %.2e ± %.1e m⁻³ (stat %.1e, sys %.1e) from %s\n", *res.ElectronDensityM3, *res.ElectronDensityUncM3,
		*res.ElectronDensityUncStatM3, *res.ElectronDensityUncSysM3, res.ElectronDensitySource)
	hb := res.Lines[1]
	for _, d := range hb.Densities {
		fmt.Printf("  %s: %.2e ± %.1e m⁻³\n", d.Relation, d.ElectronDensityM3, d.ElectronDensityUncM3)
	}
	fmt.Printf("Hβ budget: Gauss %.4f nm, non-Stark Lorentz %.4f nm, Stark %.4f nm\n",
		hb.Budget.GaussTotalNM, hb.Budget.LorentzNonStarkNM, *hb.StarkFWHMNM)
	// Output:
	// T_exc = 8183 ± 647 K (chi2-scaled, reduced χ² 11.7)
	// n_e = 3.72e+21 ± 3.9e+20 m⁻³ (stat 1.1e+20, sys 3.7e+20) from Hβ (ggc2003-hbeta-fwhm)
	//   ggc2003-hbeta-fwhm: 3.72e+21 ± 2.1e+20 m⁻³
	//   sh99-hbeta-fwhm: 4.18e+21 ± 2.4e+20 m⁻³
	// Hβ budget: Gauss 0.0514 nm, non-Stark Lorentz 0.0347 nm, Stark 0.5101 nm
}
