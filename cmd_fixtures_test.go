package main

import (
	"math"

	"glowlog/diag/spectrum"
)

func fp(v float64) *float64 { return &v }

// handWholeFit is a whole-spectrum fit made by hand for the text-output
// tests (the same one server's run_whole_test.go gives the run page).
func handWholeFit() *spectrum.WholeFit {
	w := &spectrum.WholeFit{Areas: spectrum.WholeAreasBoltzmann, RangeNM: [2]float64{480, 492}, Pixels: 600,
		ReducedChi2: 1.07, DOF: 593, Iterations: 14, Converged: true,
		DopplerNote: "the tables' own Doppler part was removed and the given gas temperature's put back",
		Params: []spectrum.WholeParam{
			{Name: "T_exc", Label: "Excitation temperature", Unit: "K", Value: 11000, Unc: 600},
			{Name: "scale", Label: "Boltzmann scale", Unit: "", Value: 3.2e9, Unc: 1.1e8},
			{Name: "n_e", Label: "Electron density", Unit: "m⁻³", Value: 2.01e21, Unc: 5e19},
			{Name: "T_gas", Label: "Gas temperature", Unit: "K", Value: 1200, Fixed: true},
			{Name: "offset", Label: "Wavelength offset", Unit: "nm", Value: 0.0012, Unc: 0.0004},
			{Name: "baseline_0", Label: "Baseline, constant", Unit: "counts/nm", Value: 40, Unc: 2},
		},
		Correlation: [][]float64{
			{1, 0.97, 0.1, -0.2, 0.05},
			{0.97, 1, -0.85, 0.6, 0.1},
			{0.1, -0.85, 1, 0.3, 0},
			{-0.2, 0.6, 0.3, 1, 0.2},
			{0.05, 0.1, 0, 0.2, 1},
		},
		Lines: []spectrum.WholeLine{{Upper: 4, Name: "Hβ", Shape: "SH99", Area: 12345, AreaUnc: 67, StarkFWHMNM: 0.412,
			ReducedChi2: 1.12, ResidualRMS: 1.05, PeakSNR: 310}},
		ExcitationTemperatureK: fp(11000), ExcitationTemperatureUncK: fp(600),
		ElectronDensityM3: fp(2.01e21), ElectronDensityUncM3: fp(5e19),
		LinesExcitationTemperatureK: fp(10500), LinesExcitationTemperatureUncK: fp(700),
		LinesElectronDensityM3: fp(1.80e21), LinesElectronDensityUncM3: fp(6e19),
		TexcDiffSigma: fp(0.54), NeDiffSigma: fp(2.69),
	}
	for i := range 600 {
		x := 480 + 12*float64(i)/599
		m := 40 + 1e4*math.Exp(-0.5*math.Pow((x-486.13)/0.25, 2))
		d := m + 3*math.Sin(float64(i))
		w.WavelengthNM = append(w.WavelengthNM, x)
		w.Data, w.Model, w.Residual = append(w.Data, d), append(w.Model, m), append(w.Residual, d-m)
	}
	return w
}
