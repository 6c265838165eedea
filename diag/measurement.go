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
}
