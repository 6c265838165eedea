package grating_test

import (
	"fmt"

	"glowlog/diag/grating"
)

// A 0.5 m spectrometer with a 1200 lines/mm grating in first order, turned
// to Hα in Littrow.
func ExampleSpectrometer_Littrow() {
	s := grating.Spectrometer{GroovesPerMM: 1200, Order: 1, FocalLengthMM: 500,
		SlitWidthUM: 20, PixelSizeUM: 13.5, Pixels: 1024, IlluminatedWidthMM: 50}
	p, err := s.Littrow(656.279)
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Printf("θ = %.3f°\n", p.DiffractionDeg)
	fmt.Printf("dλ/dx = %.3f nm/mm, %.4f nm/pixel\n", p.DispersionNMPerMM, p.DispersionNMPerPixel)
	fmt.Printf("slit-limited %.4f nm, pixel-limited %.4f nm, R = %.0f (δλ = %.4f nm)\n",
		p.SlitLimitedNM, p.PixelLimitedNM, p.ResolvingPower, p.TheoreticalNM)
	for _, o := range grating.FindOverlaps(1, 2, grating.CommonUVEmitters, grating.BalmerTargets(7), 3, nil) {
		fmt.Printf("%s %.3f nm in order %d → %.3f nm, %.2f nm from %s\n",
			o.Emitter.Name, o.Emitter.LowNM, o.ImageOrder, o.ApparentLowNM, o.DistanceNM, o.Near.Name)
	}
	// Output:
	// θ = 23.189°
	// dλ/dx = 1.532 nm/mm, 0.0207 nm/pixel
	// slit-limited 0.0306 nm, pixel-limited 0.0207 nm, R = 60000 (δλ = 0.0109 nm)
	// Cu I 327.396 nm in order 2 → 654.792 nm, 1.49 nm from Hα
	// Ag I 328.068 nm in order 2 → 656.136 nm, 0.14 nm from Hα
}
