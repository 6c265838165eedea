package spectrum

import (
	"errors"
	"fmt"
	"math"
	"slices"

	"glowlog/diag"
	"glowlog/diag/linefit"
)

// Spectrum is a measured spectrum: strictly ascending wavelengths and the
// detector signal per pixel (counts).
type Spectrum struct {
	// Name identifies the spectrum in messages (a file name).
	Name string
	// WavelengthNM are the pixel-centre wavelengths, nm, strictly ascending.
	WavelengthNM []float64
	// Counts are the detector counts per pixel.
	Counts []float64
	// Vacuum is true when the axis is in vacuum wavelengths (the default,
	// false, is standard air as most grating spectrometers report).
	Vacuum bool
}

// Response is a relative spectral response: corrected = (counts per nm) /
// At(λ). Declared here, implemented by package calib.
type Response interface {
	At(lambdaNM float64) (float64, error)
}

// Instrument gives the instrument function's Gaussian and Lorentzian FWHM
// at a wavelength. Declared here, implemented by package calib.
type Instrument interface {
	At(lambdaNM float64) (gaussNM, lorentzNM float64, extrapolated bool)
}

// Options controls the pipeline.
type Options struct {
	// Conditions carries the measurement-wide settings for the analysis
	// (isotope, instrument widths, gas temperature, pressure, perturber,
	// Stark relation overrides, two-line solution). Its Lines, Unit and
	// ResponseCorrected are set by the pipeline.
	Conditions diag.Measurement
	// Dark is a dark/background spectrum on the same wavelength grid,
	// subtracted pixel by pixel (nil: none).
	Dark *Spectrum
	// Response is the relative spectral response (nil: none; the Boltzmann
	// result is then flagged as uncalibrated) and ResponseUnit the unit of
	// the corrected intensities.
	Response     Response
	ResponseUnit diag.IntensityUnit
	// Calibrated says the spectrum's values are already corrected for the
	// spectrometer's relative response (a calibrated irradiance or
	// radiance export): spectral densities per nm in CalibratedUnit
	// (photon: photons s⁻¹ … nm⁻¹; energy: W … nm⁻¹). They are taken as
	// they are — not divided by the pixel width, no Response applied (both
	// together are an error), no detector noise model (gain) — and the
	// Boltzmann fit is done in CalibratedUnit without the uncalibrated
	// flag.
	Calibrated     bool
	CalibratedUnit diag.IntensityUnit
	// Instrument is a measured instrument function (nil: the constant
	// widths in Conditions).
	Instrument Instrument
	// SaturationCounts is the detector ceiling in raw counts (0: unknown;
	// two or more pixels at the spectrum's maximum value are then taken as
	// saturation).
	SaturationCounts float64
	// GainElectronsPerCount and ReadNoiseElectrons give the noise model
	// σ² = N_e + σ_read² in electrons (0: unknown; the fit then scales its
	// errors by the residuals).
	GainElectronsPerCount, ReadNoiseElectrons float64
	// CorrectOffset refits after shifting the axis by the mean offset of
	// the fitted line centres from their catalogue wavelengths.
	CorrectOffset bool
	// MinSNR is the detection threshold on the peak height over the noise
	// (0: DefaultMinSNR).
	MinSNR float64
	// MaxUpper is the highest Balmer member looked for (0: DefaultMaxUpper).
	MaxUpper int
	// KeepWindows keeps each fitted window's data, model and residuals in
	// the result (for plots).
	KeepWindows bool
	// ExcludeFromBoltzmann lists upper levels kept on the Boltzmann plot
	// but out of its fit.
	ExcludeFromBoltzmann []int
	// LineShape is LineShapeStark ("" means it) or LineShapeVoigt: whether
	// the Voigt window fit's Lorentzian widths and areas are corrected for
	// the Stark shape of Balmer lines (shape.go).
	LineShape string
	// Model is the analysis route: ModelWhole or ModelLines ("" means
	// DefaultRoute(LineShape)).
	Model string
	// WholeAreas is WholeAreasBoltzmann ("" means it) or WholeAreasFree.
	WholeAreas string
	// WholeFreeGasTemperature and WholeFreeInstrument free the gas
	// temperature (Doppler) and the instrument's Gaussian width (with a
	// linear dependence on λ) in the whole-spectrum fit.
	WholeFreeGasTemperature bool
	WholeFreeInstrument     bool
}

// Defaults of Options.
const (
	// DefaultMinSNR is the peak signal-to-noise below which a line counts
	// as not detected. Common practice, no source.
	DefaultMinSNR = 5
	// DefaultMaxUpper is the highest member searched by default.
	DefaultMaxUpper = 12
	// MinPixels is the fewest pixels a spectrum may have.
	MinPixels = 16
)

// LineSearch reports what the pipeline did with one Balmer member inside
// the spectral range.
type LineSearch struct {
	UpperLevel int     `json:"upper_level"`
	Name       string  `json:"name"`
	ExpectedNM float64 `json:"expected_center_nm"`
	// Status is "fitted", "not-detected", "saturated" or "fit-failed".
	Status  string  `json:"status"`
	PeakSNR float64 `json:"peak_snr"`
	Reason  string  `json:"reason,omitempty"`
	// FWHMPixels is the fitted total FWHM in pixels at the line (0 when
	// not fitted); below MinFWHMPixels the line is undersampled.
	FWHMPixels float64 `json:"fwhm_pixels,omitempty"`
}

// MinFWHMPixels is the smallest fitted FWHM, in pixels, whose widths the
// pipeline uses for the electron density. Below it a line is undersampled:
// the pixel-integrated fit keeps its area unbiased, but the Lorentzian
// part of a profile spread over two pixels is not determined reliably
// (the Gaussian and Lorentzian parts trade off within the noise), so the
// line's width is withheld from the density (no n_e from it, not even a
// bound) and FlagUndersampled says so; its area still enters the
// Boltzmann plot. Common practice, no source (Nyquist-like sampling of
// about 2.5 pixels per FWHM); the spectrometer planner warns at the same
// value (grating.MinFWHMPixels).
const MinFWHMPixels = 2.5

// Flag codes of the pipeline (besides those of diag.Analyze).
const (
	FlagSaturationAuto = "saturation_auto"
	FlagLineSaturated  = "line_saturated"
	FlagPartialResult  = "partial_result"
	FlagUndersampled   = "line_undersampled"
)

// Window is one fitted window kept for plotting (Options.KeepWindows).
type Window struct {
	Uppers       []int      `json:"upper_levels"`
	WavelengthNM PlotFloats `json:"wavelength_nm"`
	Data         PlotFloats `json:"data"`
	Model        PlotFloats `json:"model"`
	Residual     PlotFloats `json:"residual"`
}

// PlotFloats is a series kept for plots: it is written to JSON with 8
// significant digits (far below any pixel or noise level, and about half
// the size of full precision).
type PlotFloats []float64

// MarshalJSON writes the series with 8 significant digits.
func (p PlotFloats) MarshalJSON() ([]byte, error) {
	return appendPlotFloatsEach(make([]byte, 0, 12*len(p)+2), p), nil
}

// appendPlotFloatsEach appends p as MarshalJSON writes it (NaN and ±Inf
// as null), a value at a time through appendFloat8: the reference of
// appendPlotFloats (encoding/json, which TestAppendJSONMatchesEncodingJSON
// compares with AppendJSON, writes series with it).
func appendPlotFloatsEach(b []byte, p PlotFloats) []byte {
	b = append(b, '[')
	for i, v := range p {
		if i > 0 {
			b = append(b, ',')
		}
		if math.IsNaN(v) || math.IsInf(v, 0) {
			b = append(b, "null"...)
			continue
		}
		b = appendFloat8(b, v) // strconv's 'g' with 8 digits
	}
	return append(b, ']')
}

// appendPlotFloats is appendPlotFloatsEach, the digits of 256 values at
// a time (seriesDigitsChunk, appendSeriesText: the series form's writer);
// AppendJSON writes series with it.
func appendPlotFloats(b []byte, p PlotFloats) []byte {
	b = append(b, '[')
	if len(p) > 0 {
		cb := chunkBufs.Get().(*seriesChunkBufs)
		for i := 0; i < len(p); i += seriesChunk {
			chunk := p[i:min(i+seriesChunk, len(p))]
			seriesDigitsChunk(cb.digits[:], chunk)
			b = appendSeriesText(b, i > 0, cb.digits[:], chunk)
		}
		chunkBufs.Put(cb)
	}
	return append(b, ']')
}

// Result is the outcome of Analyze: the diag analysis plus the search and
// preprocessing record.
type Result struct {
	diag.Result
	Source  string     `json:"source"`
	Pixels  int        `json:"pixels"`
	RangeNM [2]float64 `json:"range_nm"`
	// NoiseSigma is the robust noise estimate in (calibrated) counts per nm.
	NoiseSigma float64 `json:"noise_sigma"`
	// WavelengthOffsetNM is the mean fitted-minus-catalogue centre offset
	// and its 1σ; Corrected says whether the axis was shifted by it.
	WavelengthOffsetNM    float64      `json:"wavelength_offset_nm"`
	WavelengthOffsetUncNM float64      `json:"wavelength_offset_unc_nm"`
	OffsetCorrected       bool         `json:"wavelength_offset_corrected"`
	LineSearch            []LineSearch `json:"line_search"`
	// Partial is true when some lines could not be used (saturated or
	// failed fits); PartialReasons say which.
	Partial        bool     `json:"partial"`
	PartialReasons []string `json:"partial_reasons,omitempty"`
	Windows        []Window `json:"windows,omitempty"`
	// Model is the route whose numbers are at the top level ("lines" or
	// "whole"); Whole is the whole-spectrum fit when it was run.
	Model string    `json:"model"`
	Whole *WholeFit `json:"whole_fit,omitempty"`
}

// Error is a problem with a spectrum (or its dark, response or instrument
// data) that stops the analysis.
type Error struct {
	Source string
	Msg    string
	// Err is the underlying error when there is one (a *diag.LineError or
	// *diag.NumericError from the analysis), for errors.As.
	Err error
}

func (e *Error) Error() string { return e.Source + ": " + e.Msg }

func (e *Error) Unwrap() error { return e.Err }

// ErrNoBalmerLine reports a spectrum in which no Balmer line could be used.
var ErrNoBalmerLine = errors.New("no Balmer line detected")

// Pipeline holds the reusable workspace of the analysis. It is not safe for
// concurrent use.
type Pipeline struct {
	fitter  *linefit.Fitter
	fres    linefit.Result
	x, y, s []float64
	work    []float64
	cum     []float64
	sat     []bool
	maxPix  int
	problem linefit.Problem
	lineBuf []linefit.Line
	chi2    []groupChi2
	keep    []Window
	iters   []int
	// lastWhole is the input of the last whole-spectrum fit (its slices
	// are the buffers above): BenchmarkWhole2048 times the fit alone.
	lastWhole wholeInput
	// wfit is the whole-spectrum fitter, kept for its buffers.
	wfit *wholeFitter
}

// maxWindowLines bounds the lines fitted jointly in one window.
const maxWindowLines = 8

// maxWindowRefits bounds the refits with widened windows (growWindows).
const maxWindowRefits = 2

// NewPipeline returns a pipeline whose fit windows hold up to maxWindowPixels
// pixels (windows are cut to that size).
func NewPipeline(maxWindowPixels int) *Pipeline {
	if maxWindowPixels < MinPixels {
		panic("spectrum: NewPipeline with fewer than MinPixels")
	}
	p := &Pipeline{fitter: linefit.NewFitter(maxWindowPixels, maxWindowLines), maxPix: maxWindowPixels,
		lineBuf: make([]linefit.Line, 0, maxWindowLines)}
	p.problem.X = make([]float64, 0, maxWindowPixels)
	p.problem.Y = make([]float64, 0, maxWindowPixels)
	p.problem.Sigma = make([]float64, 0, maxWindowPixels)
	return p
}

func fail(src, format string, args ...any) error {
	return &Error{Source: src, Msg: fmt.Sprintf(format, args...)}
}

// check validates a spectrum's arrays.
func check(sp *Spectrum, what string) error {
	n := len(sp.WavelengthNM)
	if n != len(sp.Counts) {
		return fail(sp.Name, "%s has %d wavelengths but %d values", what, n, len(sp.Counts))
	}
	if n < MinPixels {
		return fail(sp.Name, "%s has only %d pixels (need at least %d)", what, n, MinPixels)
	}
	xs, ys := sp.WavelengthNM, sp.Counts[:n] // ys[:n]: no bounds tests below
	for i, x := range xs {
		y := ys[i]
		if !(x > 0 && x <= math.MaxFloat64) {
			return fail(sp.Name, "%s: pixel %d has an impossible wavelength %v", what, i+1, x)
		}
		if !(y >= -math.MaxFloat64 && y <= math.MaxFloat64) {
			return fail(sp.Name, "%s: pixel %d (%.4f nm) has a non-finite value %v", what, i+1, x, y)
		}
		if i > 0 && x <= xs[i-1] {
			return fail(sp.Name, "%s: wavelengths must increase strictly; pixel %d (%.6g nm) follows %.6g nm", what, i+1, x, xs[i-1])
		}
	}
	return nil
}

// balmerCandidate is a Balmer member inside the range.
type balmerCandidate struct {
	t        diag.Transition
	center   float64 // expected centre on the working (air or vacuum) axis
	gauss    float64 // expected Gaussian FWHM (0 unknown)
	gaussFix bool
	instL    float64
	instG    float64
	search   LineSearch
	peak     float64
	width    float64 // rough FWHM estimate from the data
	peakX    float64 // interpolated peak position
	base     float64 // local baseline estimate
	lo, hi   int     // window pixel range [lo, hi)
	fit      *linefit.LineResult
	sat      bool
	group    int
}

// Analyze runs the whole pipeline on sp.
func (p *Pipeline) Analyze(sp *Spectrum, opt Options) (Result, error) {
	var res Result
	src := sp.Name
	if err := check(sp, "spectrum"); err != nil {
		return res, err
	}
	n := len(sp.WavelengthNM)
	res.Source, res.Pixels = src, n
	res.RangeNM = [2]float64{sp.WavelengthNM[0], sp.WavelengthNM[n-1]}
	if opt.MinSNR <= 0 {
		opt.MinSNR = DefaultMinSNR
	}
	if opt.MaxUpper <= 0 {
		opt.MaxUpper = DefaultMaxUpper
	}
	if opt.MaxUpper > diag.MaxLevel {
		opt.MaxUpper = diag.MaxLevel
	}

	if !ValidModel(opt.Model) {
		return res, fail(src, "unknown analysis route %q (want %q or %q)", opt.Model, ModelLines, ModelWhole)
	}
	if opt.Model == "" {
		opt.Model = DefaultRoute(opt.LineShape)
	}
	if !ValidWholeAreas(opt.WholeAreas) {
		return res, fail(src, "unknown area mode %q of the whole-spectrum fit (want %q or %q)", opt.WholeAreas, WholeAreasBoltzmann, WholeAreasFree)
	}
	if opt.Calibrated && opt.Response != nil {
		return res, fail(src, "the spectrum is declared response-corrected and a response calibration is given too: give one or the other")
	}
	if opt.Calibrated && opt.GainElectronsPerCount > 0 {
		return res, fail(src, "the spectrum is declared response-corrected: its values are not detector counts, so a detector gain does not apply")
	}

	// Preprocess into per-nm, dark-subtracted, calibrated arrays.
	x := grow(&p.x, n)
	y := grow(&p.y, n)
	sig := grow(&p.s, n)
	sat := growBool(&p.sat, n)
	// Of length n as the compiler can see: the per-pixel loops below index
	// them without bounds tests.
	x, y, sig, sat = x[:n], y[:n], sig[:n], sat[:n]
	counts := sp.Counts[:n]
	copy(x, sp.WavelengthNM)
	if opt.Dark != nil {
		d := opt.Dark
		if d.Name == "" {
			d.Name = src + " (dark)"
		}
		if err := check(d, "dark spectrum"); err != nil {
			return res, err
		}
		if len(d.WavelengthNM) != n {
			return res, fail(d.Name, "dark spectrum has %d pixels, the spectrum %d: it is on another wavelength grid", len(d.WavelengthNM), n)
		}
		tol := 1e-3 * (x[n-1] - x[0]) / float64(n)
		for i := range n {
			if math.Abs(d.WavelengthNM[i]-x[i]) > tol {
				return res, fail(d.Name, "dark spectrum is on another wavelength grid: pixel %d is at %.5f nm, the spectrum's at %.5f nm", i+1, d.WavelengthNM[i], x[i])
			}
		}
	}
	satLevel := opt.SaturationCounts
	autoSat := false
	if satLevel <= 0 {
		satLevel, autoSat = autoSaturation(sp.Counts)
	}
	if opt.Dark == nil && !opt.Calibrated && !(opt.GainElectronsPerCount > 0) && n >= 3 {
		// The usual case (raw counts, no dark, no noise model): the
		// inner pixels without pixelCounts' tests of the options, the
		// same operations in the same order; the first and the last
		// pixel go the general way, in order.
		if err := p.pixelCounts(0, x, y, sig, sat, counts, satLevel, sp, opt); err != nil {
			return res, err
		}
		for i := 1; i < n-1; i++ {
			c := counts[i]
			sat[i] = satLevel > 0 && c >= satLevel*(1-1e-9)
			dx := (x[i+1] - x[i-1]) / 2
			v := c / dx
			y[i] = v
			if math.IsInf(v, 0) || math.IsNaN(v) {
				return res, fail(src, "pixel %d (%.4f nm): %v counts (dark subtracted: %v) over a %.3g nm pixel is beyond the range that can be analysed: check the values and their scale",
					i+1, sp.WavelengthNM[i], sp.Counts[i], c, dx)
			}
		}
		if err := p.pixelCounts(n-1, x, y, sig, sat, counts, satLevel, sp, opt); err != nil {
			return res, err
		}
	} else {
		for i := range n {
			if err := p.pixelCounts(i, x, y, sig, sat, counts, satLevel, sp, opt); err != nil {
				return res, err
			}
		}
	}
	if sp.Vacuum {
		for i := range n {
			x[i] = diag.VacToAirNM(x[i])
		}
	}
	noise := robustNoise(y, grow(&p.work, n))
	if opt.GainElectronsPerCount <= 0 {
		// Without a noise model the fit's σ only weights the pixels
		// equally (its errors are scaled by the residuals), so a spectrum
		// without measurable noise (a flat zero with one spike) takes a
		// σ far below its values instead of 0, which no fit accepts.
		s := noise
		if !(s > 0) {
			s = flatNoiseFloor(y)
		}
		for i := range sig {
			sig[i] = s
		}
	}
	if !(noise > 0) {
		noise = math.SmallestNonzeroFloat64
	}

	p.chi2, p.keep = p.chi2[:0], nil
	p.work = grow(&p.work, n)

	// Candidates.
	cands, err := p.candidates(x, y, sat, noise, sp, opt)
	if err != nil {
		return res, err
	}
	if len(cands) == 0 {
		return res, fail(src, "no Balmer line (Hα … H%d) lies inside %.2f–%.2f nm", opt.MaxUpper, x[0], x[n-1])
	}
	// Response correction of the data that will be fitted.
	if opt.Response != nil {
		for ci := range cands {
			c := &cands[ci]
			if c.search.Status != "" {
				continue
			}
			for i := c.lo; i < c.hi; i++ {
				r, err := opt.Response.At(x[i])
				if err != nil {
					return res, fail(src, "response calibration does not cover %s: %v", c.t.Name(), err)
				}
				if !(r > 0) {
					return res, fail(src, "response calibration is %v at %.3f nm (%s): it must be positive", r, x[i], c.t.Name())
				}
			}
		}
		for i := range n {
			if r, err := opt.Response.At(x[i]); err == nil && r > 0 {
				y[i] /= r
				sig[i] /= r
				if math.IsInf(y[i], 0) || !(sig[i] > 0 && sig[i] <= math.MaxFloat64) {
					return res, fail(src, "pixel %d (%.4f nm): dividing by the response %v gives %v ± %v, beyond the range that can be analysed: check the response calibration's scale",
						i+1, x[i], r, y[i], sig[i])
				}
			} else {
				y[i], sig[i] = math.NaN(), math.NaN()
			}
		}
	}

	offset, offUnc, err := p.fitAll(cands, x, y, sig, opt, noise)
	if err != nil {
		return res, fail(src, "%v", err)
	}
	// Windows made for a line narrower than the fit found are widened
	// and the lines fitted again (fit.go, growWindows).
	for range maxWindowRefits {
		if !p.growWindows(cands, x) {
			break
		}
		if offset, offUnc, err = p.fitAll(cands, x, y, sig, opt, noise); err != nil {
			return res, fail(src, "%v", err)
		}
	}
	res.WavelengthOffsetNM, res.WavelengthOffsetUncNM = offset, offUnc
	if opt.CorrectOffset && offUnc > 0 {
		for i := range cands {
			cands[i].center += offset
			cands[i].fit = nil
		}
		offset2, offUnc2, err := p.fitAll(cands, x, y, sig, opt, noise)
		if err != nil {
			return res, fail(src, "%v", err)
		}
		res.OffsetCorrected = true
		res.WavelengthOffsetNM += offset2
		res.WavelengthOffsetUncNM = offUnc2
	}
	if opt.KeepWindows {
		res.Windows = p.windows(cands, x, y)
	}

	// Measurement for the analysis.
	m := opt.Conditions
	m.Lines = nil
	m.ResponseCorrected = opt.Response != nil || opt.Calibrated
	m.Unit = diag.PhotonUnits
	switch {
	case opt.Response != nil:
		m.Unit = opt.ResponseUnit
	case opt.Calibrated:
		m.Unit = opt.CalibratedUnit
	}
	res.NoiseSigma = noise
	if opt.Response != nil && len(cands) > 0 {
		// Report the noise in calibrated units near the first fitted line.
		if r, err := opt.Response.At(cands[0].center); err == nil && r > 0 {
			res.NoiseSigma = noise / r
		}
	}
	var undersampled []string
	for i := range cands {
		c := &cands[i]
		if c.fit != nil {
			c.search.FWHMPixels = c.fit.VoigtFWHM / pixelWidth(x, min(max(index(x, c.fit.Center), 0), n-1))
		}
		res.LineSearch = append(res.LineSearch, c.search)
		if c.search.Status == "saturated" || c.search.Status == "fit-failed" {
			res.Partial = true
			res.PartialReasons = append(res.PartialReasons, fmt.Sprintf("%s %s: %s", c.t.Name(), c.search.Status, c.search.Reason))
		}
		if c.fit == nil {
			continue
		}
		f := c.fit
		ml := diag.MeasuredLine{Upper: c.t.Upper, Intensity: f.Area, IntensityUnc: f.AreaErr,
			ExcludeFromBoltzmann: slices.Contains(opt.ExcludeFromBoltzmann, c.t.Upper)}
		// Stark-shape correction (shape.go): the Voigt fit's Lorentzian
		// (its Stark part, above the instrument's own Lorentzian) and area
		// divided by the measured fitted/true factors.
		lor, shape := f.LorentzFWHM, LineShapeVoigt
		var wFac, aFac, wUnc float64
		if opt.LineShape != LineShapeVoigt && f.GaussFWHM > 0 {
			shape = LineShapeStark
			starkPart := math.Max(f.LorentzFWHM-c.instL, 0)
			var aUnc float64
			wFac, aFac, wUnc, aUnc = starkShape(c.t.Upper, starkPart/f.GaussFWHM, continuumToPeak(c))
			lor = c.instL + starkPart/wFac
			ml.Intensity = f.Area / aFac
			ml.IntensityUnc = math.Hypot(f.AreaErr/aFac, aUnc*ml.Intensity)
			if starkPart > 0 {
				ml.ShapeUncRel = wUnc
			}
		}
		if c.search.FWHMPixels < MinFWHMPixels {
			undersampled = append(undersampled, fmt.Sprintf(
				"%s is undersampled: its fitted FWHM %.3g nm spans %.3g pixels (< %.1f), so its width is unreliable and gives no electron density; its area is kept. Use more pixels per nm (a finer grating, a longer focal length or a higher order), or a slit wide enough that the instrument FWHM covers at least %.1f pixels",
				c.t.Name(), f.VoigtFWHM, c.search.FWHMPixels, MinFWHMPixels, MinFWHMPixels))
		} else if !f.LorentzAtBound && f.LorentzFWHM > 0 {
			ml.LorentzFWHMNM, ml.LorentzFWHMUncNM = lor, f.LorentzFWHMErr
			if wFac > 0 {
				ml.LorentzFWHMUncNM /= wFac
			}
		}
		ml.InstrumentGaussFWHMNM, ml.InstrumentLorentzFWHMNM = c.instG, c.instL
		ml.Profile = &diag.ProfileFit{CenterNM: f.Center, CenterUncNM: f.CenterErr,
			GaussFWHMNM: f.GaussFWHM, GaussFWHMUncNM: f.GaussFWHMErr, GaussFixed: c.gaussFix,
			LorentzAtBound: f.LorentzAtBound, TotalFWHMNM: f.VoigtFWHM, TotalFWHMUncNM: f.VoigtFWHMErr,
			FWHANM: diag.FWHAFromVoigt(f.GaussFWHM, f.LorentzFWHM), PeakSNR: f.Peak / noiseAt(sig, c),
			ReducedChi2: p.groupChi2(cands, c.group), ErrorsScaled: true,
			WindowNM: [2]float64{x[c.lo], x[c.hi-1]}, LineShape: shape,
			ContinuumToPeak: continuumToPeak(c)}
		if shape == LineShapeStark {
			ml.Profile.StarkShapeWidthFactor, ml.Profile.StarkShapeAreaFactor = wFac, aFac
			ml.Profile.VoigtLorentzFWHMNM, ml.Profile.VoigtArea = f.LorentzFWHM, f.Area
		}
		for j := range cands {
			if j != i && cands[j].group == c.group && cands[j].fit != nil {
				ml.Profile.JointWith = append(ml.Profile.JointWith, cands[j].t.Upper)
			}
		}
		m.Lines = append(m.Lines, ml)
	}
	if len(m.Lines) == 0 {
		return res, fail(src, "%v in %.2f–%.2f nm above %.0f× the noise (%s)", ErrNoBalmerLine, x[0], x[n-1], opt.MinSNR, searchSummary(res.LineSearch))
	}
	if m.LastResolvedUpper == 0 {
		m.LastResolvedUpper = lastResolved(cands, x)
	}
	ar, err := diag.Analyze(m)
	if err != nil {
		return res, &Error{Source: src, Msg: trimDiag(err.Error()), Err: err}
	}
	// A line's density far outside the others' (outlier.go) is withheld.
	ar, withheld, err := withholdDensityOutliers(m, ar)
	if err != nil {
		return res, &Error{Source: src, Msg: trimDiag(err.Error()), Err: err}
	}
	if len(withheld) > 0 {
		res.Partial = true
		res.PartialReasons = append(res.PartialReasons, withheld...)
	}
	res.Result = ar
	res.Model = ModelLines
	if opt.Model == ModelWhole {
		p.lastWhole = wholeInput{cands: cands, x: x, y: y, sig: sig, sat: sat, m: m, lines: ar, off: res.WavelengthOffsetNM}
		p.whole(&res, p.lastWhole, opt)
	}
	if autoSat && anySaturated(cands) {
		res.Flags = append(res.Flags, diag.Flag{Code: FlagSaturationAuto, Message: fmt.Sprintf(
			"no detector ceiling was given; a flat top at %.6g counts was taken as saturation", satLevel)})
	}
	for _, c := range cands {
		if c.search.Status == "saturated" {
			res.Flags = append(res.Flags, diag.Flag{Code: FlagLineSaturated, Message: fmt.Sprintf(
				"%s touches the detector ceiling (%.6g counts) and is kept out of the analysis: reduce the integration time", c.t.Name(), satLevel)})
		}
	}
	for _, msg := range undersampled {
		res.Flags = append(res.Flags, diag.Flag{Code: FlagUndersampled, Message: msg})
	}
	if res.Partial {
		res.Flags = append(res.Flags, diag.Flag{Code: FlagPartialResult, Message: "partial result: " + joinReasons(res.PartialReasons)})
	}
	diag.SetSeverities(res.Flags)
	demoteLinesRouteFlags(&res)
	res.Warnings = res.Warnings[:0]
	for _, f := range res.Flags {
		res.Warnings = append(res.Warnings, f.Message)
	}
	// Final net: the preprocessing and search record is finite too (the
	// analysis, fits included, was checked by diag.Analyze).
	own := res
	own.Result = diag.Result{}
	if err := diag.CheckFinite(own); err != nil {
		return res, &Error{Source: src, Msg: trimDiag(err.Error()), Err: err}
	}
	return res, nil
}

// flatNoiseFloor is the σ used when the robust noise estimate is zero:
// 2⁻⁴⁰ of the largest finite magnitude, or 1 for an all-zero spectrum.
func flatNoiseFloor(y []float64) float64 {
	var m float64
	for _, v := range y {
		if a := math.Abs(v); a > m && a <= math.MaxFloat64 {
			m = a
		}
	}
	if s := math.Ldexp(m, -40); s > 0 {
		return s
	}
	return 1
}

func joinReasons(rs []string) string {
	s := ""
	for i, r := range rs {
		if i > 0 {
			s += "; "
		}
		s += r
	}
	return s
}

func searchSummary(ls []LineSearch) string {
	s := ""
	for i, l := range ls {
		if i > 0 {
			s += ", "
		}
		s += fmt.Sprintf("%s %s", l.Name, l.Status)
		if l.PeakSNR > 0 {
			s += fmt.Sprintf(" at SNR %.1f", l.PeakSNR)
		}
	}
	return s
}

func trimDiag(s string) string {
	if len(s) > 6 && s[:6] == "diag: " {
		return s[6:]
	}
	return s
}

func anySaturated(cs []balmerCandidate) bool {
	for _, c := range cs {
		if c.sat {
			return true
		}
	}
	return false
}

func noiseAt(sig []float64, c *balmerCandidate) float64 {
	i := (c.lo + c.hi) / 2
	if i < len(sig) && sig[i] > 0 && !math.IsNaN(sig[i]) {
		return sig[i]
	}
	return math.SmallestNonzeroFloat64
}

func grow(b *[]float64, n int) []float64 {
	if cap(*b) < n {
		*b = make([]float64, n)
	}
	*b = (*b)[:n]
	return *b
}

func growBool(b *[]bool, n int) []bool {
	if cap(*b) < n {
		*b = make([]bool, n)
	}
	*b = (*b)[:n]
	return *b
}

// pixelCounts is the preprocessing of pixel i in Analyze: saturation,
// dark subtraction, counts per nm and the noise model's σ.
func (p *Pipeline) pixelCounts(i int, x, y, sig []float64, sat []bool, counts []float64, satLevel float64, sp *Spectrum, opt Options) error {
	n, src := len(x), sp.Name
	c := counts[i]
	sat[i] = satLevel > 0 && c >= satLevel*(1-1e-9)
	if opt.Dark != nil {
		c -= opt.Dark.Counts[i]
	}
	// Pixel width: half the distance between the neighbours.
	var dx float64
	switch i {
	case 0:
		dx = x[1] - x[0]
	case n - 1:
		dx = x[n-1] - x[n-2]
	default:
		dx = (x[i+1] - x[i-1]) / 2
	}
	y[i] = c / dx
	if opt.Calibrated {
		y[i] = c // already a density per nm
	}
	if opt.GainElectronsPerCount > 0 {
		raw := math.Max(sp.Counts[i], 0) * opt.GainElectronsPerCount
		v := raw + opt.ReadNoiseElectrons*opt.ReadNoiseElectrons
		if opt.Dark != nil {
			v += math.Max(opt.Dark.Counts[i], 0)*opt.GainElectronsPerCount + opt.ReadNoiseElectrons*opt.ReadNoiseElectrons
		}
		sig[i] = math.Sqrt(math.Max(v, 1)) / opt.GainElectronsPerCount / dx
		if math.IsInf(sig[i], 0) || math.IsNaN(sig[i]) {
			return fail(src, "pixel %d (%.4f nm): the noise model (gain %v e⁻/count, read noise %v e⁻) gives a non-finite σ: check the gain and read noise",
				i+1, sp.WavelengthNM[i], opt.GainElectronsPerCount, opt.ReadNoiseElectrons)
		}
	}
	if math.IsInf(y[i], 0) || math.IsNaN(y[i]) {
		return fail(src, "pixel %d (%.4f nm): %v counts (dark subtracted: %v) over a %.3g nm pixel is beyond the range that can be analysed: check the values and their scale",
			i+1, sp.WavelengthNM[i], sp.Counts[i], c, dx)
	}
	return nil
}

// autoSaturation returns the spectrum's maximum when at least two pixels
// sit exactly at it (a clipped, flat top: noisy unsaturated data almost
// never repeat their maximum), else 0.
func autoSaturation(counts []float64) (float64, bool) {
	mx, k := counts[0], 0
	for _, c := range counts {
		switch {
		case c > mx:
			mx, k = c, 1
		case c == mx:
			k++
		}
	}
	if k >= 2 && mx > 0 {
		return mx, true
	}
	return 0, false
}

// robustNoise estimates the white-noise σ of y from the median absolute
// deviation of second differences: for white noise Var(y[i−1] − 2y[i] +
// y[i+1]) = 6σ², and σ ≈ 1.4826·MAD (normal consistency factor).
func robustNoise(y, work []float64) float64 {
	n := len(y)
	d := work[:0]
	for i := 1; i < n-1; i++ {
		v := y[i-1] - 2*y[i] + y[i+1]
		if !math.IsNaN(v) {
			d = append(d, math.Abs(v))
		}
	}
	if len(d) == 0 {
		return 0
	}
	med := selectK(d, len(d)/2)
	return 1.4826 * med / math.Sqrt(6)
}

// selectK returns the k-th smallest element of v (0-based), reordering v:
// Hoare's quickselect with median-of-three pivots, O(n) on average.
func selectK(v []float64, k int) float64 {
	lo, hi := 0, len(v)-1
	for lo < hi {
		mid := lo + (hi-lo)/2
		// Median of three as pivot.
		if v[mid] < v[lo] {
			v[mid], v[lo] = v[lo], v[mid]
		}
		if v[hi] < v[lo] {
			v[hi], v[lo] = v[lo], v[hi]
		}
		if v[hi] < v[mid] {
			v[hi], v[mid] = v[mid], v[hi]
		}
		pivot := v[mid]
		i, j := lo, hi
		for i <= j {
			for v[i] < pivot {
				i++
			}
			for v[j] > pivot {
				j--
			}
			if i <= j {
				v[i], v[j] = v[j], v[i]
				i++
				j--
			}
		}
		switch {
		case k <= j:
			hi = j
		case k >= i:
			lo = i
		default:
			return v[k]
		}
	}
	return v[k]
}

// linesRouteDensityFlags and linesRouteTexcFlags concern only the
// line-by-line route's n_e (its per-line relations and their combination)
// and its Boltzmann plot.
var (
	linesRouteDensityFlags = []string{diag.FlagRelationRange, diag.FlagDensityDisagree, diag.FlagModelRange,
		diag.FlagShapeBound, diag.FlagDensityScatter}
	linesRouteTexcFlags = []string{diag.FlagTooFewLines, diag.FlagPartialLTE, diag.FlagScaledUnc, diag.FlagWideUncertainty}
)

// demoteLinesRouteFlags: when the whole-spectrum fit gives the reported
// n_e — a value or its upper limit (FlagWholeDensityLimit) — (or T_exc),
// the line-by-line route's flags about its own densities
// (or Boltzmann plot) do not concern the reported number; they are kept,
// named as the line-by-line route's, with severity note (not counted).
// Where they point at the data (self-absorption, a level off the line),
// the whole fit's own Boltzmann-tie test raises FlagWholeDisagrees.
func demoteLinesRouteFlags(res *Result) {
	if res.Model != ModelWhole {
		return
	}
	wholeNe := res.ElectronDensityM3 != nil || res.Whole != nil && res.Whole.ElectronDensityUpperLimitM3 != nil
	for i := range res.Flags {
		f := &res.Flags[i]
		if wholeNe && slices.Contains(linesRouteDensityFlags, f.Code) ||
			res.ExcitationTemperatureK != nil && slices.Contains(linesRouteTexcFlags, f.Code) {
			f.Severity = diag.SeverityNote
			f.Message = "line-by-line route (shown beside the whole-spectrum fit): " + f.Message
		}
	}
	// The reported T_exc's own width: the whole fit's total σ.
	if t, u := res.ExcitationTemperatureK, res.ExcitationTemperatureUncK; t != nil && u != nil {
		if f, ok := diag.WideUncertaintyFlag(*t, *u); ok {
			f.Severity = diag.SeverityOf(f.Code)
			res.Flags = append(res.Flags, f)
		}
	}
}
