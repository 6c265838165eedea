package specfile

import (
	"errors"
	"fmt"
	"slices"
)

// AxisUnit is the unit of a spectrum's X axis.
type AxisUnit int

const (
	// UnknownUnit means the file did not declare a recognised unit.
	UnknownUnit AxisUnit = iota
	// NM is wavelength in nanometres.
	NM
	// Angstrom is wavelength in ångström (1 Å = 0.1 nm).
	Angstrom
	// Micrometer is wavelength in micrometres (1 µm = 1000 nm).
	Micrometer
	// WavenumberPerCM is wavenumber σ in cm⁻¹ (σ = 1/λ).
	WavenumberPerCM
)

// String returns "nm", "Å", "µm", "cm⁻¹" or "unknown".
func (u AxisUnit) String() string {
	switch u {
	case NM:
		return "nm"
	case Angstrom:
		return "Å"
	case Micrometer:
		return "µm"
	case WavenumberPerCM:
		return "cm⁻¹"
	case UnknownUnit:
		return "unknown"
	}
	return fmt.Sprintf("AxisUnit(%d)", int(u))
}

// Spectrum is a one-dimensional spectrum as read from a file.
//
// Readers guarantee: len(X) == len(Y) >= Limits.MinPoints, every value is
// finite, and X is strictly ascending. Files whose X axis is strictly
// descending (common for wavenumber exports) are reversed, X and Y together.
type Spectrum struct {
	// X holds the axis values in XUnit, after any JCAMP-DX XFACTOR.
	X []float64
	// Y holds the intensities in YUnit, after any JCAMP-DX YFACTOR.
	Y []float64
	// XUnit is the declared or requested X unit.
	XUnit AxisUnit
	// YUnit is the intensity unit as declared, e.g. "COUNTS"; "" if none.
	YUnit string
	// Title is the JCAMP-DX ##TITLE or a text file's "# title:" comment.
	Title string
	// Meta holds header labels: JCAMP-DX labels keyed by their name in
	// upper case ("DATA TYPE", "$INTEGRATION TIME"), and "key: value" or
	// "key = value" comments of text files keyed as written
	// ("integration_ms"). Never nil.
	Meta map[string]string
	// Format is the format the spectrum was read from.
	Format Format
}

// ErrUnknownUnit is returned by [Spectrum.WavelengthNM] when XUnit is
// UnknownUnit.
var ErrUnknownUnit = errors.New("specfile: x unit unknown")

// ErrNonPositiveAxis is returned by [Spectrum.WavelengthNM] when a
// wavelength or wavenumber is zero or negative.
var ErrNonPositiveAxis = errors.New("specfile: non-positive axis value")

// WavelengthNM returns the spectrum on a wavelength axis in nanometres,
// ascending, with the intensities reordered to match. Both slices are new.
//
//	λ[nm] = x              (NM)
//	λ[nm] = x / 10         (Angstrom)
//	λ[nm] = 1000 x         (Micrometer)
//	λ[nm] = 10⁷ / σ[cm⁻¹]  (WavenumberPerCM; order reversed)
//
// The conversion does not change the medium: wavenumbers are conventionally
// vacuum quantities, so 10⁷/σ is a vacuum wavelength, whereas grating
// spectrometers calibrated on lamp lines usually report air wavelengths
// (Hα is 656.28 nm in air, 656.46 nm in vacuum). Apply an air/vacuum
// conversion separately if the two are mixed.
//
// It returns ErrUnknownUnit if XUnit is UnknownUnit, and ErrNonPositiveAxis
// (wrapped, with the value) if any X is zero or negative.
func (s *Spectrum) WavelengthNM() (wl, y []float64, err error) {
	if len(s.X) != len(s.Y) {
		panic(fmt.Sprintf("specfile: WavelengthNM: len(X)=%d != len(Y)=%d", len(s.X), len(s.Y)))
	}
	var conv func(float64) float64
	switch s.XUnit {
	case NM:
		conv = func(x float64) float64 { return x }
	case Angstrom:
		conv = func(x float64) float64 { return x / 10 }
	case Micrometer:
		conv = func(x float64) float64 { return x * 1000 }
	case WavenumberPerCM:
		conv = func(x float64) float64 { return 1e7 / x }
	default:
		return nil, nil, ErrUnknownUnit
	}
	wl = make([]float64, len(s.X))
	y = slices.Clone(s.Y)
	for i, x := range s.X {
		if !(x > 0) {
			return nil, nil, fmt.Errorf("%w: x[%d] = %g %s", ErrNonPositiveAxis, i, x, s.XUnit)
		}
		wl[i] = conv(x)
	}
	if len(wl) > 1 && wl[0] > wl[len(wl)-1] {
		slices.Reverse(wl)
		slices.Reverse(y)
	}
	return wl, y, nil
}

// ToWavelengthNM converts s in place to what [Spectrum.WavelengthNM]
// returns: X in nanometres, ascending, Y reordered to match, and XUnit
// NM. It returns the same errors, leaving s unchanged, and allocates
// nothing: for callers that no longer need the file's own axis.
func (s *Spectrum) ToWavelengthNM() error {
	if len(s.X) != len(s.Y) {
		panic(fmt.Sprintf("specfile: ToWavelengthNM: len(X)=%d != len(Y)=%d", len(s.X), len(s.Y)))
	}
	switch s.XUnit {
	case NM, Angstrom, Micrometer, WavenumberPerCM:
	default:
		return ErrUnknownUnit
	}
	for i, x := range s.X {
		if !(x > 0) {
			return fmt.Errorf("%w: x[%d] = %g %s", ErrNonPositiveAxis, i, x, s.XUnit)
		}
	}
	x := s.X
	switch s.XUnit { // the expressions of WavelengthNM, for the same bits
	case Angstrom:
		for i := range x {
			x[i] = x[i] / 10
		}
	case Micrometer:
		for i := range x {
			x[i] = x[i] * 1000
		}
	case WavenumberPerCM:
		for i := range x {
			x[i] = 1e7 / x[i]
		}
	}
	if len(x) > 1 && x[0] > x[len(x)-1] {
		slices.Reverse(x)
		slices.Reverse(s.Y)
	}
	s.XUnit = NM
	return nil
}
