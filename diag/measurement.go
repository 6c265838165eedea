package diag

// Measurement is one measurement set: Balmer lines observed together, with
// the conditions needed to analyse them. Zero values mean "not given"
// where a field's comment says so.
type Measurement struct {
	// Isotope of the emitter.
	Isotope Isotope
	// Unit of the line intensities.
	Unit IntensityUnit
	// ResponseCorrected is false when the intensities are raw detector
	// counts without a relative spectral-response calibration; the
	// Boltzmann result then carries a warning.
	ResponseCorrected bool
	// InstrumentGaussFWHMNM and InstrumentLorentzFWHMNM are the Gaussian
	// and Lorentzian parts of the instrument function, nm (0 = none). A
	// line may override them (MeasuredLine).
	InstrumentGaussFWHMNM, InstrumentLorentzFWHMNM float64
	// GasTemperatureK is the emitter (gas) temperature for Doppler and van
	// der Waals widths, K (0 = unknown), with its 1σ GasTemperatureUncK.
	GasTemperatureK, GasTemperatureUncK float64
	// PressurePa is the gas pressure, Pa (0 = unknown: no van der Waals
	// width).
	PressurePa float64
	// Perturber is the dominant neutral perturber gas ("" or "none": no van
	// der Waals width).
	Perturber string
	// GroundStateDensityM3 is the H(1s) atom density for resonance
	// broadening, m⁻³ (0 = neglected).
	GroundStateDensityM3 float64
	// StarkRelations overrides the Stark relation used for a line: upper
	// level → relation ID (see the StarkRelations table).
	StarkRelations map[int]string
	// LastResolvedUpper is the highest resolved Balmer member, for the
	// Inglis–Teller estimate (0 = not given).
	LastResolvedUpper int
	// InstrumentFWHMUncNM is the 1σ of the instrument's Gaussian FWHM, nm
	// (0 = not given); it enters the systematic σ of n_e.
	InstrumentFWHMUncNM float64
	// ElectronTemperatureK selects the temperature of the T-dependent
	// Stark models (SH99 tables, Griem α½), K (0 = the default
	// DefaultElectronTemperatureK).
	ElectronTemperatureK float64
	// ResponseUncRel is the relative 1σ of the spectral-response
	// calibration between the extreme lines of the Boltzmann plot (0 = not
	// given: the σ of T_exc then excludes the calibration, and says so).
	ResponseUncRel float64
	// SolveGasTemperature asks for the two-line (Hα + Hβ) solution of n_e
	// and gas temperature from the Lorentzian widths.
	SolveGasTemperature bool
	// Lines are the observed lines, each upper level at most once.
	Lines []MeasuredLine
}

// MeasuredLine is one observed Balmer line n → 2.
type MeasuredLine struct {
	// Upper is the upper principal quantum number (3 = Hα).
	Upper int
	// Intensity is the integrated intensity (> 0; 0 = not given, the line
	// then serves only for its width) and IntensityUnc its 1σ (0 = not
	// given).
	Intensity, IntensityUnc float64
	// FWHMNM is the measured total (Voigt) FWHM and FWHMUncNM its 1σ, nm
	// (0 = not given).
	FWHMNM, FWHMUncNM float64
	// LorentzFWHMNM is the Lorentzian part already separated by the user
	// or a profile fit, with its 1σ LorentzFWHMUncNM, nm (0 = not given).
	// It takes precedence over FWHMNM.
	LorentzFWHMNM, LorentzFWHMUncNM float64
	// InstrumentGaussFWHMNM and InstrumentLorentzFWHMNM override the
	// measurement-wide instrument function at this line (0 = use it).
	InstrumentGaussFWHMNM, InstrumentLorentzFWHMNM float64
	// ExcludeFromBoltzmann keeps the line off the Boltzmann fit.
	ExcludeFromBoltzmann bool
	// ShapeUncRel is the relative 1σ of LorentzFWHMNM's Stark part left by
	// a line-shape correction already applied to it (the spectrum
	// pipeline's Stark-shape correction of its Voigt fits). When > 0 it
	// replaces the ShapeBiasRel envelope in σ_sys of n_e (0: the width is
	// a plain Voigt quantity and the envelope is carried).
	ShapeUncRel float64
	// Profile holds the details of a profile fit the line came from (nil
	// for lines typed in); it is passed through to the result.
	Profile *ProfileFit
}

// ProfileFit summarises the Voigt-profile fit of one line in a spectrum.
// Widths are FWHM in nm; intensities are in the spectrum's (calibrated)
// units times nm.
type ProfileFit struct {
	CenterNM       float64 `json:"center_nm"`
	CenterUncNM    float64 `json:"center_unc_nm"`
	GaussFWHMNM    float64 `json:"gauss_fwhm_nm"`
	GaussFWHMUncNM float64 `json:"gauss_fwhm_unc_nm"`
	// GaussFixed is true when the Gaussian width was held at the
	// instrument and Doppler budget.
	GaussFixed bool `json:"gauss_fixed"`
	// LorentzAtBound is true when the Lorentzian width ended at zero.
	LorentzAtBound bool    `json:"lorentz_at_bound"`
	TotalFWHMNM    float64 `json:"total_fwhm_nm"`
	TotalFWHMUncNM float64 `json:"total_fwhm_unc_nm"`
	// FWHANM is the full width at half area of the fitted profile.
	FWHANM float64 `json:"fwha_nm"`
	// PeakSNR is the fitted peak height over the noise σ.
	PeakSNR float64 `json:"peak_snr"`
	// ReducedChi2 is the window fit's χ²/dof.
	ReducedChi2 float64 `json:"fit_reduced_chi2"`
	// ErrorsScaled reports that the σ were scaled by √χ²ᵣ.
	ErrorsScaled bool `json:"fit_errors_scaled"`
	// WindowNM is the fitted wavelength window.
	WindowNM [2]float64 `json:"window_nm"`
	// JointWith lists the other upper levels fitted in the same window.
	JointWith []int `json:"fitted_jointly_with,omitempty"`
	// ContinuumToPeak is the local continuum over the line's peak height
	// above it, both from the line search (it sets how much the line's
	// wings weigh in the fit, and so the Stark-shape correction).
	ContinuumToPeak float64 `json:"continuum_to_peak"`
	// LineShape is the shape the width and area were taken with: "stark"
	// (Voigt fit corrected for the Stark shape) or "voigt" (as fitted).
	LineShape string `json:"line_shape,omitempty"`
	// StarkShapeWidthFactor and StarkShapeAreaFactor are the measured
	// ratios fitted/true by which the Voigt fit's Lorentzian (Stark part)
	// and area were divided (line shape "stark"; 0 otherwise).
	StarkShapeWidthFactor float64 `json:"stark_shape_width_factor,omitempty"`
	StarkShapeAreaFactor  float64 `json:"stark_shape_area_factor,omitempty"`
	// VoigtLorentzFWHMNM and VoigtArea are the Voigt fit's own values
	// before that correction.
	VoigtLorentzFWHMNM float64 `json:"voigt_lorentz_fwhm_nm,omitempty"`
	VoigtArea          float64 `json:"voigt_area,omitempty"`
}
