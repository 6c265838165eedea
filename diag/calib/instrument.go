package calib

import (
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"math"
	"sort"
)

// InstrumentPoint is the instrument function measured at one calibration
// wavelength: the Gaussian and Lorentzian full widths at half maximum of
// the Voigt fitted to a narrow lamp line (physics.md §5.5).
type InstrumentPoint struct {
	// WavelengthNM is the calibration wavelength (the lamp line's
	// catalogue air wavelength), nm.
	WavelengthNM float64 `json:"wavelength_nm"`
	// GaussFWHMNM is the Gaussian FWHM w_inst,G, nm; GaussUncNM its 1σ
	// uncertainty, nm.
	GaussFWHMNM float64 `json:"gauss_fwhm_nm"`
	GaussUncNM  float64 `json:"gauss_unc_nm"`
	// LorentzFWHMNM is the Lorentzian FWHM w_inst,L, nm; LorentzUncNM its
	// 1σ uncertainty, nm.
	LorentzFWHMNM float64 `json:"lorentz_fwhm_nm"`
	LorentzUncNM  float64 `json:"lorentz_unc_nm"`
	// Element is the emitting species of the lamp line, e.g. "Hg I".
	Element string `json:"element"`
}

// Instrument is an instrument function (slit function plus aberrations)
// described as a Voigt whose Gaussian and Lorentzian widths vary with
// wavelength across the detector. It is combined with the plasma's
// broadening as in physics.md §5.6: Gaussian parts in quadrature,
// Lorentzian parts linearly.
//
// # File form
//
// An Instrument is saved and reused by name as JSON (encoding/json with the
// field tags below; see WriteJSON and ReadInstrument), for example
//
//	{
//	  "name": "fhpl-spectrometer-2400-slit20",
//	  "source": "FitInstrument: 5 of 6 lamp lines ...",
//	  "points": [
//	    {"wavelength_nm": 435.8335, "gauss_fwhm_nm": 0.0412, "gauss_unc_nm": 0.0003,
//	     "lorentz_fwhm_nm": 0.0121, "lorentz_unc_nm": 0.0004, "element": "Hg I"}
//	  ]
//	}
//
// with points in strictly ascending wavelength.
type Instrument struct {
	// Name identifies the set-up (spectrometer, grating, slit, centre
	// wavelength) under which the instrument is stored and reused.
	Name string `json:"name"`
	// Points are the calibration points, strictly ascending in
	// wavelength.
	Points []InstrumentPoint `json:"points"`
	// Source describes how the points were obtained.
	Source string `json:"source"`
}

// ErrInvalidInstrument is wrapped by the errors of Instrument.Validate.
var ErrInvalidInstrument = errors.New("calib: invalid instrument function")

// Validate checks that the instrument has a name and at least one point,
// that the points are strictly ascending in wavelength with positive finite
// wavelengths, that every width and uncertainty is finite and ≥ 0, and that
// no point has both widths zero. It returns an error wrapping
// ErrInvalidInstrument that names the offending point, or nil.
func (in *Instrument) Validate() error {
	if in.Name == "" {
		return fmt.Errorf("%w: empty name", ErrInvalidInstrument)
	}
	if len(in.Points) == 0 {
		return fmt.Errorf("%w %q: no calibration points", ErrInvalidInstrument, in.Name)
	}
	for i, p := range in.Points {
		if !(p.WavelengthNM > 0) || math.IsInf(p.WavelengthNM, 0) {
			return fmt.Errorf("%w %q: point %d wavelength %g nm is not positive and finite", ErrInvalidInstrument, in.Name, i, p.WavelengthNM)
		}
		if i > 0 && !(p.WavelengthNM > in.Points[i-1].WavelengthNM) {
			return fmt.Errorf("%w %q: point %d at %g nm does not follow %g nm in ascending order", ErrInvalidInstrument, in.Name, i, p.WavelengthNM, in.Points[i-1].WavelengthNM)
		}
		for _, v := range [...]struct {
			name string
			x    float64
		}{{"Gaussian FWHM", p.GaussFWHMNM}, {"Gaussian uncertainty", p.GaussUncNM}, {"Lorentzian FWHM", p.LorentzFWHMNM}, {"Lorentzian uncertainty", p.LorentzUncNM}} {
			if !(v.x >= 0) || math.IsInf(v.x, 0) {
				return fmt.Errorf("%w %q: %s %g nm at %g nm is not finite and ≥ 0", ErrInvalidInstrument, in.Name, v.name, v.x, p.WavelengthNM)
			}
		}
		if p.GaussFWHMNM == 0 && p.LorentzFWHMNM == 0 {
			return fmt.Errorf("%w %q: both widths are zero at %g nm", ErrInvalidInstrument, in.Name, p.WavelengthNM)
		}
	}
	return nil
}

// At returns the instrument's Gaussian and Lorentzian FWHMs (nm) at
// lambdaNM (nm), interpolated linearly in wavelength between the two
// neighbouring calibration points:
//
//	w(λ) = w_i + (w_{i+1} − w_i) (λ − λ_i)/(λ_{i+1} − λ_i).
//
// Outside the calibrated range the widths of the nearest end point are
// returned unchanged and extrapolated is true; the instrument width is
// then not measured there, and a calibration line closer to λ should be
// added. With a single point, extrapolated is true everywhere except at
// that point.
//
// At panics if the instrument has no points or lambdaNM is NaN; call
// Validate on instruments read from storage.
func (in *Instrument) At(lambdaNM float64) (gaussNM, lorentzNM float64, extrapolated bool) {
	pts := in.Points
	n := len(pts)
	if n == 0 {
		panic("calib: Instrument.At: instrument " + in.Name + " has no points")
	}
	if math.IsNaN(lambdaNM) {
		panic("calib: Instrument.At: NaN wavelength")
	}
	switch {
	case lambdaNM < pts[0].WavelengthNM:
		return pts[0].GaussFWHMNM, pts[0].LorentzFWHMNM, true
	case lambdaNM > pts[n-1].WavelengthNM:
		return pts[n-1].GaussFWHMNM, pts[n-1].LorentzFWHMNM, true
	}
	i := sort.Search(n, func(i int) bool { return pts[i].WavelengthNM >= lambdaNM })
	if pts[i].WavelengthNM == lambdaNM {
		return pts[i].GaussFWHMNM, pts[i].LorentzFWHMNM, false
	}
	a, b := pts[i-1], pts[i]
	t := (lambdaNM - a.WavelengthNM) / (b.WavelengthNM - a.WavelengthNM)
	return a.GaussFWHMNM + t*(b.GaussFWHMNM-a.GaussFWHMNM), a.LorentzFWHMNM + t*(b.LorentzFWHMNM-a.LorentzFWHMNM), false
}

// WriteJSON writes the instrument in its file form (indented JSON) after
// checking it with Validate.
func (in *Instrument) WriteJSON(w io.Writer) error {
	if err := in.Validate(); err != nil {
		return err
	}
	enc := json.NewEncoder(w)
	enc.SetIndent("", "  ")
	return enc.Encode(in)
}

// ReadInstrument reads an instrument in its file form (see Instrument),
// rejecting unknown fields, and validates it. Syntax errors come from
// encoding/json; invalid content wraps ErrInvalidInstrument.
func ReadInstrument(r io.Reader) (*Instrument, error) {
	dec := json.NewDecoder(r)
	dec.DisallowUnknownFields()
	var in Instrument
	if err := dec.Decode(&in); err != nil {
		return nil, fmt.Errorf("calib: reading instrument: %w", err)
	}
	if err := in.Validate(); err != nil {
		return nil, err
	}
	return &in, nil
}
