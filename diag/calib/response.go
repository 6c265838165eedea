package calib

import (
	"errors"
	"fmt"
	"math"
	"sort"

	"glowlog/diag"
)

// Errors about the data. They are returned wrapped, with the offending
// wavelength or range in the message; test for them with errors.Is.
var (
	// ErrOutOfRange: a wavelength lies outside the range a Response or an
	// irradiance certificate covers.
	ErrOutOfRange = errors.New("calib: wavelength outside calibrated range")
	// ErrNonPositive: the response at a wavelength is zero or negative
	// (for example where the lamp gave no signal), so intensities there
	// cannot be corrected.
	ErrNonPositive = errors.New("calib: response not positive")
	// ErrBadTable: a response curve or irradiance table is not a valid
	// function of wavelength (not strictly ascending, non-finite or
	// non-positive values, fewer than two points).
	ErrBadTable = errors.New("calib: invalid calibration table")
	// ErrNoUsableLine: FitInstrument found no lamp line it could use.
	ErrNoUsableLine = errors.New("calib: no usable lamp line")
)

// Response is a relative spectral response of one optical set-up (fibre,
// lenses, window, slit, grating angle, filter, detector settings), sampled
// on a wavelength grid.
//
// The corrected intensity of a spectrum is
//
//	I(λ) = C(λ) / R(λ),
//
// with C the dark-subtracted counts per nm (per second) and R = Value
// interpolated linearly in λ. I is proportional to photon rates when Unit
// is diag.PhotonUnits and to powers when Unit is diag.EnergyUnits; the
// Boltzmann ordinate must then be ln(I/(gA)) or ln(Iλ/(gA)) respectively
// (physics.md §7). Only the shape of R matters for an excitation
// temperature: the absolute scale cancels in the slope.
//
// Value may contain non-positive entries (pixels where a lamp gave no
// signal); At, Covers and Correct report those wavelengths as errors
// rather than dividing by them.
type Response struct {
	// WavelengthNM is the strictly ascending grid, nm (air wavelengths
	// when the spectrometer is calibrated on lamp lines in air).
	WavelengthNM []float64
	// Value is R at each grid point, in counts per unit of corrected
	// intensity; only ratios of values are meaningful.
	Value []float64
	// Unit says what the corrected intensities C/R are proportional to.
	Unit diag.IntensityUnit
	// Source describes how the response was obtained, for the record
	// stored with every result.
	Source string
	// Warnings lists caveats found while building the response (for
	// example the grey-body approximation or pixels without signal).
	// Show them to the user.
	Warnings []string
}

// FromCurve returns the Response given by a response curve already read
// from the file name (used in messages and Source): value[i] is the
// response at wavelengthNM[i] in nm, and unit says whether dividing counts
// by it gives photon-proportional or energy-proportional intensities.
//
// The curve must have at least two points, strictly ascending finite
// wavelengths and positive finite values; otherwise FromCurve returns an
// error wrapping ErrBadTable that names the file and the offending
// wavelength. The slices are copied.
//
// FromCurve panics if the slices differ in length.
func FromCurve(name string, wavelengthNM, value []float64, unit diag.IntensityUnit) (*Response, error) {
	if len(wavelengthNM) != len(value) {
		panic(fmt.Sprintf("calib: FromCurve: len(wavelengthNM)=%d != len(value)=%d", len(wavelengthNM), len(value)))
	}
	if err := checkTable(wavelengthNM, value, "response"); err != nil {
		return nil, fmt.Errorf("response curve %s: %w", name, err)
	}
	return &Response{
		WavelengthNM: clone(wavelengthNM),
		Value:        clone(value),
		Unit:         unit,
		Source: fmt.Sprintf("response curve %s (%d points, %.3f–%.3f nm, %s units)",
			name, len(value), wavelengthNM[0], wavelengthNM[len(wavelengthNM)-1], unit),
	}, nil
}

// FromStandardLamp returns the Response measured with a spectral-irradiance
// standard lamp recorded through the same optical path as the plasma
// (physics.md §7, procedure steps 1–3).
//
// lampCountsPerNMPerS is the dark-subtracted lamp spectrum in counts per nm
// per second on the ascending grid lampWL (nm). irradianceWL and
// irradianceWPerM2NM are the lamp's certificate: spectral irradiance E_λ
// in W m⁻² nm⁻¹ (energy units) at the ascending wavelengths irradianceWL
// (nm). The certificate is interpolated onto each lamp pixel
// log-linearly,
//
//	E_λ(λ) = E_i (E_{i+1}/E_i)^((λ − λ_i)/(λ_{i+1} − λ_i)),
//
// which is exact for an exponential between certificate points and
// follows the Wien-like fall of a tungsten lamp's irradiance towards the
// blue far better than linear interpolation at the 10–50 nm spacing of
// typical certificates. The response is then
//
//	R_E(λ) = C_L(λ) / E_λ(λ)                      (unit = diag.EnergyUnits)
//	R_p(λ) = C_L(λ) / E_p(λ),  E_p = E_λ λ/(hc)   (unit = diag.PhotonUnits)
//
// with λ in m in the photon conversion, so R_E/R_p = λ/(hc) exactly.
// R_E is in counts s⁻¹ nm⁻¹ per W m⁻² nm⁻¹, R_p in counts per photon m⁻².
//
// Lamp pixels with counts ≤ 0 (no signal, typically below 350 nm for
// tungsten) are kept with a non-positive Value and reported in Warnings;
// At and Correct return errors there. FromStandardLamp returns an error
// wrapping ErrOutOfRange if the certificate does not cover the whole lamp
// grid (trim the lamp spectrum to the range you use first), and one
// wrapping ErrBadTable if either grid is not strictly ascending, a value
// is not finite, or a certified irradiance is not positive.
//
// FromStandardLamp panics if lampWL and lampCountsPerNMPerS, or
// irradianceWL and irradianceWPerM2NM, differ in length.
//
// Reference: H. W. Yoon and C. E. Gibson, Spectral Irradiance
// Calibrations, NIST Special Publication 250-89 (2011).
func FromStandardLamp(lampWL, lampCountsPerNMPerS []float64, irradianceWL, irradianceWPerM2NM []float64, unit diag.IntensityUnit) (*Response, error) {
	if len(lampWL) != len(lampCountsPerNMPerS) {
		panic(fmt.Sprintf("calib: FromStandardLamp: len(lampWL)=%d != len(lampCountsPerNMPerS)=%d", len(lampWL), len(lampCountsPerNMPerS)))
	}
	if len(irradianceWL) != len(irradianceWPerM2NM) {
		panic(fmt.Sprintf("calib: FromStandardLamp: len(irradianceWL)=%d != len(irradianceWPerM2NM)=%d", len(irradianceWL), len(irradianceWPerM2NM)))
	}
	if err := checkTable(irradianceWL, irradianceWPerM2NM, "irradiance"); err != nil {
		return nil, fmt.Errorf("irradiance certificate: %w", err)
	}
	if err := checkLampSpectrum(lampWL, lampCountsPerNMPerS); err != nil {
		return nil, fmt.Errorf("standard lamp spectrum: %w", err)
	}
	lo, hi := lampWL[0], lampWL[len(lampWL)-1]
	clo, chi := irradianceWL[0], irradianceWL[len(irradianceWL)-1]
	if lo < clo || hi > chi {
		return nil, fmt.Errorf("%w: lamp spectrum spans %.3f–%.3f nm but the irradiance certificate covers only %.3f–%.3f nm; trim the lamp spectrum to the certified range",
			ErrOutOfRange, lo, hi, clo, chi)
	}
	r := &Response{
		WavelengthNM: clone(lampWL),
		Value:        make([]float64, len(lampWL)),
		Unit:         unit,
		Source: fmt.Sprintf("standard lamp: %d pixels %.3f–%.3f nm divided by certified spectral irradiance (%d points %.1f–%.1f nm, log-linear interpolation), %s units",
			len(lampWL), lo, hi, len(irradianceWL), clo, chi, unit),
	}
	for i, l := range lampWL {
		e := logLinear(irradianceWL, irradianceWPerM2NM, l)
		if unit == diag.PhotonUnits {
			e *= photonPerJoule(l)
		}
		r.Value[i] = lampCountsPerNMPerS[i] / e
	}
	r.warnNonPositive()
	return r, nil
}

// FromGreyBody returns a Response from a lamp spectrum when no irradiance
// certificate exists, approximating the lamp by a grey body at the colour
// temperature tempK (K) with Planck's law (physics.md §7, "without a
// certificate"):
//
//	R_E(λ) = C_L(λ) / B_λ(λ, T)                   (unit = diag.EnergyUnits)
//	R_p(λ) = C_L(λ) / (B_λ(λ, T) λ/(hc))          (unit = diag.PhotonUnits)
//
// with B_λ from PlanckRadianceNM (W m⁻² sr⁻¹ nm⁻¹). lampCounts are the
// dark-subtracted lamp counts per nm per second on the ascending grid
// wavelengthNM (nm).
//
// This is not recommended: tungsten's emissivity is not grey (it falls
// with wavelength), so the response shape is wrong by several percent
// across 300 nm, and the colour temperature itself is rarely known to
// better than a few tens of kelvin. The Response always carries a warning
// saying so. Non-positive counts are handled as in FromStandardLamp.
//
// FromGreyBody returns an error if tempK is not positive and finite, or one
// wrapping ErrBadTable if the grid is not strictly ascending or a value is
// not finite. It panics if the slices differ in length.
func FromGreyBody(wavelengthNM []float64, lampCounts []float64, tempK float64, unit diag.IntensityUnit) (*Response, error) {
	if len(wavelengthNM) != len(lampCounts) {
		panic(fmt.Sprintf("calib: FromGreyBody: len(wavelengthNM)=%d != len(lampCounts)=%d", len(wavelengthNM), len(lampCounts)))
	}
	if !(tempK > 0) || math.IsInf(tempK, 0) {
		return nil, fmt.Errorf("calib: grey-body colour temperature %g K is not positive and finite", tempK)
	}
	if err := checkLampSpectrum(wavelengthNM, lampCounts); err != nil {
		return nil, fmt.Errorf("grey-body lamp spectrum: %w", err)
	}
	r := &Response{
		WavelengthNM: clone(wavelengthNM),
		Value:        make([]float64, len(wavelengthNM)),
		Unit:         unit,
		Source: fmt.Sprintf("grey body at colour temperature %g K (Planck's law, no certificate): %d pixels %.3f–%.3f nm, %s units",
			tempK, len(wavelengthNM), wavelengthNM[0], wavelengthNM[len(wavelengthNM)-1], unit),
		Warnings: []string{
			"GREY-BODY APPROXIMATION: tungsten is not grey; its emissivity falls with wavelength, so expect errors of several percent in the response shape across 300 nm (glowlog physics notes §7; magnitude from memory, unverified). Temperatures computed with this response are indicative only; calibrate against a certified spectral-irradiance standard (Yoon & Gibson 2011, NIST SP 250-89) before reporting.",
			fmt.Sprintf("grey-body colour temperature %g K is an assumption: at 3000 K a 50 K error changes the B(486 nm)/B(656 nm) ratio by about 4.3 %%", tempK),
		},
	}
	for i, l := range wavelengthNM {
		b := PlanckRadianceNM(l, tempK)
		if unit == diag.PhotonUnits {
			b *= photonPerJoule(l)
		}
		r.Value[i] = lampCounts[i] / b
	}
	r.warnNonPositive()
	return r, nil
}

// At returns the response at lambdaNM (nm), interpolated linearly between
// the two neighbouring grid points (exactly Value[i] on a grid point).
//
// It returns an error wrapping ErrOutOfRange, naming the wavelength and
// the covered range, if lambdaNM lies outside [WavelengthNM[0],
// WavelengthNM[last]] or is NaN, and one wrapping ErrNonPositive if a
// grid value used is ≤ 0.
func (r *Response) At(lambdaNM float64) (float64, error) {
	r.check()
	wl := r.WavelengthNM
	n := len(wl)
	if !(lambdaNM >= wl[0] && lambdaNM <= wl[n-1]) {
		return 0, fmt.Errorf("%w: %.4f nm is outside the response range %.4f–%.4f nm", ErrOutOfRange, lambdaNM, wl[0], wl[n-1])
	}
	i := sort.SearchFloat64s(wl, lambdaNM) // wl[i] ≥ λ
	if wl[i] == lambdaNM {
		if v := r.Value[i]; !(v > 0) {
			return 0, fmt.Errorf("%w: response %g at %.4f nm", ErrNonPositive, v, lambdaNM)
		}
		return r.Value[i], nil
	}
	v0, v1 := r.Value[i-1], r.Value[i]
	if !(v0 > 0) || !(v1 > 0) {
		return 0, fmt.Errorf("%w: response %g at %.4f nm and %g at %.4f nm, needed at %.4f nm",
			ErrNonPositive, v0, wl[i-1], v1, wl[i], lambdaNM)
	}
	t := (lambdaNM - wl[i-1]) / (wl[i] - wl[i-1])
	return v0 + t*(v1-v0), nil
}

// Covers reports whether every wavelength in [lo, hi] (nm) can be
// corrected: nil if the range lies inside the grid and every grid value
// that At would use there is positive, otherwise an error wrapping
// ErrOutOfRange or ErrNonPositive that names the first offending
// wavelength.
//
// Covers panics if lo > hi or either is NaN.
func (r *Response) Covers(lo, hi float64) error {
	r.check()
	if !(lo <= hi) {
		panic(fmt.Sprintf("calib: Response.Covers: invalid range [%g, %g]", lo, hi))
	}
	wl := r.WavelengthNM
	n := len(wl)
	if lo < wl[0] || hi > wl[n-1] {
		return fmt.Errorf("%w: %.4f–%.4f nm requested, response covers %.4f–%.4f nm", ErrOutOfRange, lo, hi, wl[0], wl[n-1])
	}
	// Grid points used: from the left neighbour of lo to the right
	// neighbour of hi.
	i0 := sort.SearchFloat64s(wl, lo)
	if wl[i0] > lo {
		i0--
	}
	i1 := sort.SearchFloat64s(wl, hi)
	for i := i0; i <= i1; i++ {
		if v := r.Value[i]; !(v > 0) {
			return fmt.Errorf("%w: response %g at %.4f nm (inside %.4f–%.4f nm)", ErrNonPositive, v, wl[i], lo, hi)
		}
	}
	return nil
}

// Correct divides a spectrum by the response,
//
//	dst[i] = countsPerNM[i] / R(wavelengthNM[i]),
//
// with R interpolated as in At. countsPerNM must already be divided by the
// pixel width in nm (physics.md §7, pitfalls). dst may be countsPerNM
// itself. The wavelengths need not be sorted.
//
// If any pixel is outside the response's coverage (see At), Correct
// returns the error for the first such pixel, naming its index and
// wavelength, and leaves dst unchanged.
//
// Correct panics if the three slices differ in length.
func (r *Response) Correct(wavelengthNM, countsPerNM []float64, dst []float64) error {
	if len(wavelengthNM) != len(countsPerNM) || len(dst) != len(wavelengthNM) {
		panic(fmt.Sprintf("calib: Response.Correct: lengths %d (wavelength), %d (counts), %d (dst) differ",
			len(wavelengthNM), len(countsPerNM), len(dst)))
	}
	for i, l := range wavelengthNM {
		if _, err := r.At(l); err != nil {
			return fmt.Errorf("pixel %d: %w", i, err)
		}
	}
	for i, l := range wavelengthNM {
		v, _ := r.At(l)
		dst[i] = countsPerNM[i] / v
	}
	return nil
}

// check panics if r is structurally invalid (a programming error: a
// Response built by hand with mismatched or too short slices).
func (r *Response) check() {
	if len(r.WavelengthNM) != len(r.Value) || len(r.WavelengthNM) < 2 {
		panic(fmt.Sprintf("calib: Response has %d wavelengths and %d values (need equal, ≥ 2)", len(r.WavelengthNM), len(r.Value)))
	}
}

// warnNonPositive appends a warning if some values are ≤ 0.
func (r *Response) warnNonPositive() {
	n, first, last := 0, 0.0, 0.0
	for i, v := range r.Value {
		if !(v > 0) {
			if n == 0 {
				first = r.WavelengthNM[i]
			}
			last = r.WavelengthNM[i]
			n++
		}
	}
	if n > 0 {
		r.Warnings = append(r.Warnings, fmt.Sprintf(
			"%d of %d lamp pixels have counts ≤ 0 (between %.3f and %.3f nm): the response is undefined there and At/Correct return errors",
			n, len(r.Value), first, last))
	}
}

// checkTable validates a tabulated positive function of wavelength.
func checkTable(wl, v []float64, what string) error {
	if len(wl) < 2 {
		return fmt.Errorf("%w: %d points, need at least 2", ErrBadTable, len(wl))
	}
	for i := range wl {
		if math.IsNaN(wl[i]) || math.IsInf(wl[i], 0) || !(wl[i] > 0) {
			return fmt.Errorf("%w: wavelength %g nm at point %d is not positive and finite", ErrBadTable, wl[i], i+1)
		}
		if i > 0 && !(wl[i] > wl[i-1]) {
			return fmt.Errorf("%w: wavelength %g nm at point %d does not increase (previous %g nm)", ErrBadTable, wl[i], i+1, wl[i-1])
		}
		if !(v[i] > 0) || math.IsInf(v[i], 0) {
			return fmt.Errorf("%w: %s %g at %g nm is not positive and finite", ErrBadTable, what, v[i], wl[i])
		}
	}
	return nil
}

// checkLampSpectrum validates a lamp spectrum: ascending finite positive
// wavelengths, finite counts (which may be ≤ 0).
func checkLampSpectrum(wl, c []float64) error {
	if len(wl) < 2 {
		return fmt.Errorf("%w: %d pixels, need at least 2", ErrBadTable, len(wl))
	}
	for i := range wl {
		if math.IsNaN(wl[i]) || math.IsInf(wl[i], 0) || !(wl[i] > 0) {
			return fmt.Errorf("%w: wavelength %g nm at pixel %d is not positive and finite", ErrBadTable, wl[i], i)
		}
		if i > 0 && !(wl[i] > wl[i-1]) {
			return fmt.Errorf("%w: wavelength %g nm at pixel %d does not increase (previous %g nm)", ErrBadTable, wl[i], i, wl[i-1])
		}
		if math.IsNaN(c[i]) || math.IsInf(c[i], 0) {
			return fmt.Errorf("%w: counts %g at %g nm are not finite", ErrBadTable, c[i], wl[i])
		}
	}
	return nil
}

// logLinear interpolates the positive table (x, y) at t ∈ [x[0], x[last]]
// linearly in ln y.
func logLinear(x, y []float64, t float64) float64 {
	i := sort.SearchFloat64s(x, t)
	if x[i] == t {
		return y[i]
	}
	u := (t - x[i-1]) / (x[i] - x[i-1])
	return y[i-1] * math.Exp(u*math.Log(y[i]/y[i-1]))
}

func clone(s []float64) []float64 { return append([]float64(nil), s...) }
