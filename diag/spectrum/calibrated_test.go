package spectrum

import (
	"math"
	"math/rand/v2"
	"slices"
	"testing"

	"glowlog/diag"
)

// calibratedSpectrum is an LTE Balmer spectrum at tExc as a calibrated
// export would give it: spectral densities per nm (photon rate, or energy
// when energy is true: photon density × hc/λ, here scaled to 1 at 500 nm)
// on a non-uniform wavelength grid (pixel width varying by a factor 2.3
// across the range), so that treating the values as counts per pixel
// would bias the line ratios.
func calibratedSpectrum(t *testing.T, tExc float64, energy bool) *Spectrum {
	t.Helper()
	const n = 2048
	x := make([]float64, n)
	for i := range x {
		u := float64(i) / (n - 1)
		x[i] = 380 + 320*(0.6*u+0.4*u*u)
	}
	lines := balmerSynth(t, []int{3, 4, 5, 6, 7, 8}, tExc, 4e21, 1200, 0.3, 1e4)
	perPixel := synthesize(x, lines, 30, 0, nil)
	y := make([]float64, n)
	peak := 0.0
	for i := range y {
		y[i] = perPixel[i] / pixelWidth(x, i)
		peak = math.Max(peak, y[i])
	}
	rng := rand.New(rand.NewPCG(11, 3))
	for i := range y {
		y[i] += peak / 2000 * rng.NormFloat64()
		if energy {
			y[i] *= 500 / x[i]
		}
	}
	return &Spectrum{Name: "calibrated", WavelengthNM: x, Counts: y}
}

func hasFlag(fs []diag.Flag, code string) bool {
	return slices.ContainsFunc(fs, func(f diag.Flag) bool { return f.Code == code })
}

// TestCalibratedSpectrum: a spectrum declared response-corrected is fitted
// in its declared unit, without the uncalibrated flag; the same spectrum
// without the declaration keeps the flag.
func TestCalibratedSpectrum(t *testing.T) {
	const tExc = 9000.0
	cond := diag.Measurement{InstrumentGaussFWHMNM: 0.3, GasTemperatureK: 1200}
	p := NewPipeline(4096)
	for _, c := range []struct {
		name   string
		energy bool
		unit   diag.IntensityUnit
	}{{"photon", false, diag.PhotonUnits}, {"energy", true, diag.EnergyUnits}} {
		t.Run(c.name, func(t *testing.T) {
			sp := calibratedSpectrum(t, tExc, c.energy)
			res, err := p.Analyze(sp, Options{LineShape: LineShapeVoigt, Conditions: cond, Calibrated: true, CalibratedUnit: c.unit})
			if err != nil {
				t.Fatal(err)
			}
			if hasFlag(res.Flags, diag.FlagUncalibrated) {
				t.Errorf("declared calibrated, still flagged %s", diag.FlagUncalibrated)
			}
			if res.IntensityUnit != c.unit.String() {
				t.Errorf("intensity unit %q, want %q", res.IntensityUnit, c.unit)
			}
			T, s := *res.ExcitationTemperatureK, *res.ExcitationTemperatureUncK
			if math.Abs(T-tExc) > 3*s+0.01*tExc {
				t.Errorf("T_exc = %.0f ± %.0f K, want %v K", T, s, tExc)
			}

			plain, err := p.Analyze(sp, Options{LineShape: LineShapeVoigt, Conditions: cond})
			if err != nil {
				t.Fatal(err)
			}
			if !hasFlag(plain.Flags, diag.FlagUncalibrated) {
				t.Errorf("undeclared spectrum lacks the %s flag", diag.FlagUncalibrated)
			}
		})
	}

	// The declared unit is used: energy densities read as photon rates
	// give another temperature.
	sp := calibratedSpectrum(t, tExc, true)
	res, err := p.Analyze(sp, Options{LineShape: LineShapeVoigt, Conditions: cond, Calibrated: true, CalibratedUnit: diag.PhotonUnits})
	if err != nil {
		t.Fatal(err)
	}
	if T, s := *res.ExcitationTemperatureK, *res.ExcitationTemperatureUncK; math.Abs(T-tExc) < 5*s+0.03*tExc {
		t.Errorf("energy densities taken as photon rates give T_exc = %.0f ± %.0f K, too close to %v K for the unit to matter", T, s, tExc)
	}

	// A response calibration on top of a calibrated export is refused.
	if _, err := p.Analyze(sp, Options{Conditions: cond, Calibrated: true, Response: rangeResponse{0, 1e9}}); err == nil {
		t.Error("calibrated spectrum with a response calibration: no error")
	}
}
