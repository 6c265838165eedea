package calib_test

import (
	"fmt"
	"math"

	"glowlog/diag"
	"glowlog/diag/calib"
	"glowlog/diag/voigt"
)

// A standard-lamp calibration in photon units, then the correction of two
// plasma pixels. The certificate and lamp readings are invented (lamp
// FH-Q-0412 of the Fenwick Hollow Plasma Lab); the lamp spectrum is made
// from an invented detector response that halves from 400 to 700 nm.
func ExampleFromStandardLamp() {
	var certWL, certE []float64 // nm; W m⁻² nm⁻¹, every 10 nm
	for l := 350.0; l <= 750; l += 10 {
		certWL = append(certWL, l)
		certE = append(certE, 1e-8*calib.PlanckRadianceNM(l, 3000))
	}
	lampWL := []float64{400, 486.135, 656.279, 700}
	lampC := make([]float64, len(lampWL)) // counts nm⁻¹ s⁻¹
	for i, l := range lampWL {
		e := 1e-8 * calib.PlanckRadianceNM(l, 3000)
		resp := 2e9 * (1 - (l-400)/600) // counts per photon m⁻², invented
		lampC[i] = e * l * 1e-9 / (diag.Planck * diag.SpeedOfLight) * resp
	}
	r, err := calib.FromStandardLamp(lampWL, lampC, certWL, certE, diag.PhotonUnits)
	if err != nil {
		fmt.Println(err)
		return
	}
	// Equal counts at Hβ and Hα mean more photons at Hα, where the
	// detector is less sensitive: the invented response gives exactly
	// 0.856442/0.572868 = 1.4950; the 0.05 % difference is the log-linear
	// interpolation of the 10 nm certificate.
	plasma := []float64{1000, 1000}
	if err := r.Correct([]float64{486.135, 656.279}, plasma, plasma); err != nil {
		fmt.Println(err)
		return
	}
	fmt.Printf("unit: %s\n", r.Unit)
	fmt.Printf("I(Hα)/I(Hβ) = %.4f\n", plasma[1]/plasma[0])
	_, err = r.At(380)
	fmt.Println(err)
	// Output:
	// unit: photon
	// I(Hα)/I(Hβ) = 1.4957
	// calib: wavelength outside calibrated range: 380.0000 nm is outside the response range 400.0000–700.0000 nm
}

// Measuring the instrument function on a synthetic mercury lamp spectrum
// whose lines have Gaussian and Lorentzian FWHMs of 0.050 and 0.040 nm.
func ExampleFitInstrument() {
	hg := calib.Lamps()["hg"]
	var wl, y []float64
	s, g := voigt.SigmaFromFWHM(0.050), voigt.GammaFromFWHM(0.040)
	for i := range 18001 {
		l := 540 + float64(i)*0.0025 // 540–585 nm
		v := 100.0
		for _, ln := range hg {
			if math.Abs(l-ln.WavelengthAirNM) < 3 {
				v += 5000 * voigt.Profile(l-ln.WavelengthAirNM, s, g)
			}
		}
		wl, y = append(wl, l), append(y, v)
	}
	inst, reports, err := calib.FitInstrument("fhpl-demo", wl, y, hg, calib.FitOptions{})
	if err != nil {
		fmt.Println(err)
		return
	}
	for _, r := range reports {
		if r.Accepted {
			fmt.Printf("%s %.4f nm: G %.4f nm, L %.4f nm\n", r.Line.Element, r.Line.WavelengthAirNM, r.GaussFWHMNM, r.LorentzFWHMNM)
		} else {
			fmt.Printf("%s %.4f nm: %s\n", r.Line.Element, r.Line.WavelengthAirNM, r.Reason)
		}
	}
	gw, lw, ext := inst.At(560)
	fmt.Printf("at 560 nm: G %.4f nm, L %.4f nm, extrapolated %v\n", gw, lw, ext)
	// Output:
	// Hg I 404.6565 nm: outside the spectrum range 540.000–585.000 nm
	// Hg I 407.7837 nm: outside the spectrum range 540.000–585.000 nm
	// Hg I 435.8335 nm: outside the spectrum range 540.000–585.000 nm
	// Hg I 546.0750 nm: G 0.0500 nm, L 0.0400 nm
	// Hg I 576.9610 nm: G 0.0500 nm, L 0.0400 nm
	// Hg I 579.0670 nm: G 0.0500 nm, L 0.0400 nm
	// at 560 nm: G 0.0500 nm, L 0.0400 nm, extrapolated false
}
