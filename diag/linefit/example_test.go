package linefit_test

import (
	"fmt"

	"glowlog/diag/linefit"
	"glowlog/diag/voigt"
)

func ExampleFitter_Fit() {
	// A noise-free Hα-like window: Gaussian FWHM 0.02 nm known, Lorentzian
	// FWHM 0.05 nm to be found, on a constant baseline of 5 counts. Like a
	// detector, each pixel (0.005 nm wide) holds the profile's mean over
	// its width, here by a 64-point midpoint sum.
	const n = 120
	x, y := make([]float64, n), make([]float64, n)
	sigma, gamma := voigt.SigmaFromFWHM(0.02), voigt.GammaFromFWHM(0.05)
	for i := range x {
		x[i] = 656.0 + 0.005*float64(i)
		var mean float64
		for j := range 64 {
			mean += voigt.Profile(x[i]+0.005*((float64(j)+0.5)/64-0.5)-656.279, sigma, gamma) / 64
		}
		y[i] = 5 + 2*mean
	}
	p := &linefit.Problem{
		X: x, Y: y,
		Lines: []linefit.Line{{Center: 656.28, Area: 1.5, GaussFWHM: 0.02, LorentzFWHM: 0.03, FixGauss: true}},
	}
	var res linefit.Result
	if err := linefit.NewFitter(n, 1).Fit(&res, p); err != nil {
		fmt.Println(err)
		return
	}
	l := res.Lines[0]
	fmt.Printf("centre %.4f nm, area %.4f, f_L %.4f nm, f_V %.4f nm, baseline %.3f\n",
		l.Center, l.Area, l.LorentzFWHM, l.VoigtFWHM, res.Baseline[0])
	// Output:
	// centre 656.2790 nm, area 2.0000, f_L 0.0500 nm, f_V 0.0574 nm, baseline 5.000
}
