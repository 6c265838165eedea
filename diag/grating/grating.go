package grating

import (
	"errors"
	"fmt"
	"math"
)

// ErrNoOrder is matched (errors.Is) by every *OrderError.
var ErrNoOrder = errors.New("grating: no diffraction order m at this wavelength")

// OrderError reports that the grating equation has no real solution:
// |sin β| = |m λ / d − sin α| > 1, so order m of this wavelength does not
// leave the grating at this angle of incidence.
type OrderError struct {
	Order        int
	WavelengthNM float64
	IncidenceDeg float64
	// SinBeta is the impossible value of sin β.
	SinBeta float64
}

func (e *OrderError) Error() string {
	return fmt.Sprintf("grating: no diffraction order %d at %.3f nm for incidence %.3f° (sin β would be %.3f)",
		e.Order, e.WavelengthNM, e.IncidenceDeg, e.SinBeta)
}

// Is makes errors.Is(err, ErrNoOrder) true.
func (e *OrderError) Is(target error) bool { return target == ErrNoOrder }

const deg = math.Pi / 180

func checkScalar(groovesPerMM float64, order int) {
	if !(groovesPerMM > 0) || math.IsInf(groovesPerMM, 0) {
		panic("grating: groove density must be positive and finite")
	}
	if order == 0 {
		panic("grating: order 0 has no dispersion")
	}
}

// GrooveSpacingNM returns the groove spacing d = 1/G in nm for a groove
// density G in lines/mm:
//
//	d = 10⁶ / G.
//
// It panics if G is not positive.
func GrooveSpacingNM(groovesPerMM float64) float64 {
	checkScalar(groovesPerMM, 1)
	return 1e6 / groovesPerMM
}

// DiffractionAngleDeg solves the grating equation for the diffraction
// angle,
//
//	β = asin(m λ / d − sin α),
//
// for wavelength λ (nm, in air), groove density G (lines/mm, d = 1/G),
// order m and incidence α (degrees). It returns an *OrderError when
// |m λ / d − sin α| > 1. It panics if G ≤ 0 or m = 0.
func DiffractionAngleDeg(lambdaNM, groovesPerMM float64, order int, alphaDeg float64) (float64, error) {
	checkScalar(groovesPerMM, order)
	s := float64(order)*lambdaNM/GrooveSpacingNM(groovesPerMM) - math.Sin(alphaDeg*deg)
	if math.IsNaN(s) || math.Abs(s) > 1 {
		return math.NaN(), &OrderError{Order: order, WavelengthNM: lambdaNM, IncidenceDeg: alphaDeg, SinBeta: s}
	}
	return math.Asin(s) / deg, nil
}

// WavelengthNM is the grating equation solved for the wavelength,
//
//	λ = d (sin α + sin β) / m,
//
// in nm, for groove density G (lines/mm), order m and angles α, β in
// degrees. It is the inverse of DiffractionAngleDeg. It panics if G ≤ 0 or
// m = 0.
func WavelengthNM(groovesPerMM float64, order int, alphaDeg, betaDeg float64) float64 {
	checkScalar(groovesPerMM, order)
	return GrooveSpacingNM(groovesPerMM) * (math.Sin(alphaDeg*deg) + math.Sin(betaDeg*deg)) / float64(order)
}

// LittrowAngleDeg returns the Littrow angle θ (α = β = θ, degrees) at which
// order m of wavelength λ (nm) returns along the incident beam:
//
//	λ = 2 d sin θ / m,   θ = asin(m λ / (2 d)).
//
// It returns an *OrderError when m λ / (2 d) > 1 in magnitude. It panics if
// G ≤ 0 or m = 0.
func LittrowAngleDeg(lambdaNM, groovesPerMM float64, order int) (float64, error) {
	checkScalar(groovesPerMM, order)
	s := float64(order) * lambdaNM / (2 * GrooveSpacingNM(groovesPerMM))
	if math.IsNaN(s) || math.Abs(s) > 1 {
		return math.NaN(), &OrderError{Order: order, WavelengthNM: lambdaNM, IncidenceDeg: math.NaN(), SinBeta: s}
	}
	return math.Asin(s) / deg, nil
}

// AngularDispersionRadPerNM returns the angular dispersion
//
//	dβ/dλ = m / (d cos β)
//
// in rad/nm, for groove density G (lines/mm), order m and diffraction angle
// β (degrees). It panics if G ≤ 0 or m = 0.
func AngularDispersionRadPerNM(groovesPerMM float64, order int, betaDeg float64) float64 {
	checkScalar(groovesPerMM, order)
	return float64(order) / (GrooveSpacingNM(groovesPerMM) * math.Cos(betaDeg*deg))
}

// ReciprocalDispersionNMPerMM returns the reciprocal linear dispersion at
// the focal plane (normal to the diffracted central ray),
//
//	dλ/dx = d cos β / (m f),
//
// in nm/mm, for groove density G (lines/mm), order m, diffraction angle β
// (degrees) and exit focal length f (mm). The magnitude is returned (the
// sign of m only flips the direction of x). It panics if G ≤ 0, m = 0 or
// f ≤ 0.
func ReciprocalDispersionNMPerMM(groovesPerMM float64, order int, betaDeg, focalMM float64) float64 {
	checkScalar(groovesPerMM, order)
	if !(focalMM > 0) {
		panic("grating: focal length must be positive")
	}
	return math.Abs(GrooveSpacingNM(groovesPerMM) * math.Cos(betaDeg*deg) / (float64(order) * focalMM))
}

// ResolvingPower returns the theoretical resolving power of a grating,
//
//	R = λ/δλ = |m| N,   N = W G,
//
// for order m, illuminated width W (mm) and groove density G (lines/mm).
// It is an upper limit: slit width and pixel size usually dominate.
func ResolvingPower(order int, illuminatedMM, groovesPerMM float64) float64 {
	checkScalar(groovesPerMM, order)
	return math.Abs(float64(order)) * illuminatedMM * groovesPerMM
}

// FreeSpectralRangeNM returns the free spectral range λ/|m| in nm: light of
// wavelength λ/k in order k·m lands where λ does in order m.
func FreeSpectralRangeNM(lambdaNM float64, order int) float64 {
	if order == 0 {
		panic("grating: order 0 has no dispersion")
	}
	return lambdaNM / math.Abs(float64(order))
}

// Spectrometer is a plane-grating spectrometer with a flat detector in the
// focal plane of its exit (camera) optics.
type Spectrometer struct {
	// GroovesPerMM is the groove density G, lines/mm; must be > 0.
	GroovesPerMM float64
	// Order is the diffraction order m used; must not be 0.
	Order int
	// FocalLengthMM is the exit focal length f, mm; must be > 0.
	FocalLengthMM float64
	// SlitWidthUM is the entrance slit width, µm; must be > 0. The slit is
	// assumed imaged 1:1 (equal entrance and exit focal lengths).
	SlitWidthUM float64
	// PixelSizeUM is the detector pixel pitch along the dispersion, µm;
	// must be > 0.
	PixelSizeUM float64
	// Pixels is the number of pixels along the dispersion; must be > 0.
	Pixels int
	// IlluminatedWidthMM is the illuminated width of the grating, mm;
	// must be > 0.
	IlluminatedWidthMM float64
}

// ParamError names an invalid Spectrometer field.
type ParamError struct {
	Field  string
	Value  float64
	Reason string
}

func (e *ParamError) Error() string {
	return fmt.Sprintf("grating: %s = %g: %s", e.Field, e.Value, e.Reason)
}

// Validate returns a *ParamError for the first invalid field, or nil.
func (s Spectrometer) Validate() error {
	pos := func(name string, v float64) error {
		if !(v > 0) || math.IsInf(v, 0) {
			return &ParamError{Field: name, Value: v, Reason: "must be a positive number"}
		}
		return nil
	}
	if err := pos("GroovesPerMM", s.GroovesPerMM); err != nil {
		return err
	}
	if s.Order == 0 {
		return &ParamError{Field: "Order", Value: 0, Reason: "order 0 is the undispersed reflection"}
	}
	for _, f := range []struct {
		name string
		v    float64
	}{{"FocalLengthMM", s.FocalLengthMM}, {"SlitWidthUM", s.SlitWidthUM}, {"PixelSizeUM", s.PixelSizeUM},
		{"Pixels", float64(s.Pixels)}, {"IlluminatedWidthMM", s.IlluminatedWidthMM}} {
		if err := pos(f.name, f.v); err != nil {
			return err
		}
	}
	return nil
}

// Point holds the instrument figures at one wavelength and grating setting.
type Point struct {
	WavelengthNM float64
	// IncidenceDeg and DiffractionDeg are α and β.
	IncidenceDeg, DiffractionDeg float64
	// AngularDispersionRadPerNM is dβ/dλ.
	AngularDispersionRadPerNM float64
	// DispersionNMPerMM is dλ/dx; DispersionNMPerPixel is dλ/dx × pixel.
	DispersionNMPerMM, DispersionNMPerPixel float64
	// SlitLimitedNM ≈ slit width × dλ/dx (1:1 imaging).
	SlitLimitedNM float64
	// PixelLimitedNM = pixel size × dλ/dx. Sampling a line profile well
	// needs two or more pixels per FWHM (common practice, no source), so
	// this is a lower bound on what the detector resolves.
	PixelLimitedNM float64
	// ResolvingPower is the theoretical R = |m| N; TheoreticalNM = λ/R.
	ResolvingPower, TheoreticalNM float64
	// PracticalNM is the largest of SlitLimitedNM, PixelLimitedNM and
	// TheoreticalNM: the estimated instrument FWHM.
	PracticalNM float64
	// FreeSpectralRangeNM is λ/|m|.
	FreeSpectralRangeNM float64
}

// At returns the instrument figures at wavelength λ (nm) with the grating
// at incidence α (degrees). It returns a *ParamError for an invalid
// Spectrometer and an *OrderError if order m of λ does not diffract.
func (s Spectrometer) At(lambdaNM, alphaDeg float64) (Point, error) {
	if err := s.Validate(); err != nil {
		return Point{}, err
	}
	if !(lambdaNM > 0) {
		return Point{}, &ParamError{Field: "WavelengthNM", Value: lambdaNM, Reason: "must be a positive number"}
	}
	beta, err := DiffractionAngleDeg(lambdaNM, s.GroovesPerMM, s.Order, alphaDeg)
	if err != nil {
		return Point{}, err
	}
	p := Point{WavelengthNM: lambdaNM, IncidenceDeg: alphaDeg, DiffractionDeg: beta}
	p.AngularDispersionRadPerNM = AngularDispersionRadPerNM(s.GroovesPerMM, s.Order, beta)
	p.DispersionNMPerMM = ReciprocalDispersionNMPerMM(s.GroovesPerMM, s.Order, beta, s.FocalLengthMM)
	p.DispersionNMPerPixel = p.DispersionNMPerMM * s.PixelSizeUM * 1e-3
	p.SlitLimitedNM = p.DispersionNMPerMM * s.SlitWidthUM * 1e-3
	p.PixelLimitedNM = p.DispersionNMPerPixel
	p.ResolvingPower = ResolvingPower(s.Order, s.IlluminatedWidthMM, s.GroovesPerMM)
	p.TheoreticalNM = lambdaNM / p.ResolvingPower
	p.PracticalNM = math.Max(p.SlitLimitedNM, math.Max(p.PixelLimitedNM, p.TheoreticalNM))
	p.FreeSpectralRangeNM = FreeSpectralRangeNM(lambdaNM, s.Order)
	return p, nil
}

// MinFWHMPixels is the smallest instrument FWHM, in detector pixels, at
// which a line's width can be measured: below it a line is undersampled
// and its fitted width is unreliable. The spectrum pipeline withholds the
// width of such lines from the electron density at the same value
// (spectrum.MinFWHMPixels). Common practice, no source (Nyquist-like
// sampling of about 2.5 pixels per FWHM).
const MinFWHMPixels = 2.5

// FWHMPixels returns the estimated instrument FWHM (PracticalNM) in
// detector pixels.
func (p Point) FWHMPixels() float64 { return p.PracticalNM / p.DispersionNMPerPixel }

// Undersampled reports whether the instrument FWHM spans fewer than
// MinFWHMPixels pixels.
func (p Point) Undersampled() bool { return p.FWHMPixels() < MinFWHMPixels }

// Littrow returns At(λ, θ) with θ the Littrow angle of λ: the grating
// turned so that λ is diffracted back along the incident beam.
func (s Spectrometer) Littrow(lambdaNM float64) (Point, error) {
	if err := s.Validate(); err != nil {
		return Point{}, err
	}
	th, err := LittrowAngleDeg(lambdaNM, s.GroovesPerMM, s.Order)
	if err != nil {
		return Point{}, err
	}
	return s.At(lambdaNM, th)
}

// Coverage is the wavelength range seen by the detector.
type Coverage struct {
	// CentreNM is the wavelength at the detector centre.
	CentreNM float64
	// LowNM and HighNM are the wavelengths at the two detector edges
	// (LowNM < HighNM).
	LowNM, HighNM float64
	// SpanNM is HighNM − LowNM.
	SpanNM float64
	// DetectorWidthMM is Pixels × PixelSizeUM.
	DetectorWidthMM float64
}

// Contains reports whether λ (nm) is on the detector.
func (c Coverage) Contains(lambdaNM float64) bool { return lambdaNM >= c.LowNM && lambdaNM <= c.HighNM }

// Coverage returns the wavelengths on a flat detector of width
// L = Pixels × PixelSizeUM centred on the diffracted ray of λ_c at
// incidence α. The edges are at β_c ± atan(L/(2f)), so
//
//	λ_edge = d (sin α + sin(β_c ± atan(L/(2f)))) / m,
//
// which is exact for a flat focal plane normal to the central ray and
// reduces to λ_c ± (L/2) dλ/dx for a small detector. Edges beyond ±90° are
// clipped to the grazing ray.
func (s Spectrometer) Coverage(centreNM, alphaDeg float64) (Coverage, error) {
	p, err := s.At(centreNM, alphaDeg)
	if err != nil {
		return Coverage{}, err
	}
	w := float64(s.Pixels) * s.PixelSizeUM * 1e-3
	half := math.Atan(w/(2*s.FocalLengthMM)) / deg
	b1 := math.Max(-90, p.DiffractionDeg-half)
	b2 := math.Min(90, p.DiffractionDeg+half)
	l1 := WavelengthNM(s.GroovesPerMM, s.Order, alphaDeg, b1)
	l2 := WavelengthNM(s.GroovesPerMM, s.Order, alphaDeg, b2)
	if l1 > l2 {
		l1, l2 = l2, l1
	}
	return Coverage{CentreNM: centreNM, LowNM: l1, HighNM: l2, SpanNM: l2 - l1, DetectorWidthMM: w}, nil
}

// PixelWavelengths returns the wavelength (nm) at the centre of every
// pixel of the flat detector of Coverage(centreNM, alphaDeg), in
// ascending order. Pixel i (0 … Pixels−1) sits at x_i = (i − (Pixels−1)/2)
// × PixelSizeUM from the detector centre, diffracted at
// β_i = β_c + atan(x_i/f), so
//
//	λ_i = d (sin α + sin β_i) / m.
//
// The axis is therefore slightly non-linear, as a real spectrometer's is;
// the spacing at the centre is Point.DispersionNMPerPixel. Errors are those
// of At; it also returns an *OrderError if a pixel would lie beyond the
// grazing ray.
func (s Spectrometer) PixelWavelengths(centreNM, alphaDeg float64) ([]float64, error) {
	p, err := s.At(centreNM, alphaDeg)
	if err != nil {
		return nil, err
	}
	out := make([]float64, s.Pixels)
	mid := 0.5 * float64(s.Pixels-1)
	for i := range out {
		x := (float64(i) - mid) * s.PixelSizeUM * 1e-3
		b := p.DiffractionDeg + math.Atan(x/s.FocalLengthMM)/deg
		if b <= -90 || b >= 90 {
			return nil, &OrderError{Order: s.Order, WavelengthNM: centreNM, IncidenceDeg: alphaDeg, SinBeta: math.Sin(b * deg)}
		}
		out[i] = WavelengthNM(s.GroovesPerMM, s.Order, alphaDeg, b)
	}
	if len(out) > 1 && out[0] > out[len(out)-1] {
		for i, j := 0, len(out)-1; i < j; i, j = i+1, j-1 {
			out[i], out[j] = out[j], out[i]
		}
	}
	return out, nil
}
