package spectrum

import "glowlog/diag"

// Analysis routes of the pipeline (Options.Model).
const (
	// ModelWhole fits one physical model to the whole fitted range: line
	// areas tied by the Boltzmann distribution (or free), every line's
	// Stark width and shape tied to one n_e, pixel-integrated, with a
	// smooth baseline and a wavelength offset (whole.go).
	ModelWhole = "whole"
	// ModelLines fits each line's window on its own (Voigt + straight
	// baseline) and combines the areas on a Boltzmann plot and the widths
	// into densities.
	ModelLines = "lines"
)

// DefaultModel is the route of Options.Model "" for Balmer lines of the
// Stark shape (LineShape "" or LineShapeStark): the whole-spectrum fit.
// On independent SH99-shaped spectra (testdata/wholesynth) its median n_e
// error is 0.03–0.21× and its T_exc error 0.27× the line-by-line route's.
const DefaultModel = ModelWhole

// DefaultRoute is the route taken for Options.Model "" with the given
// line shape: DefaultModel for Stark-shaped lines; ModelLines when the
// lines are declared Voigt profiles (LineShapeVoigt), since the whole
// model's shapes are the tabulated Stark shapes.
func DefaultRoute(lineShape string) string {
	if lineShape == LineShapeVoigt {
		return ModelLines
	}
	return DefaultModel
}

// ValidModel reports whether s names an analysis route ("" means the
// default).
func ValidModel(s string) bool { return s == "" || s == ModelWhole || s == ModelLines }

// Area modes of the whole-spectrum fit (Options.WholeAreas).
const (
	// WholeAreasBoltzmann ties every line area to T_exc and one scale.
	WholeAreasBoltzmann = "boltzmann"
	// WholeAreasFree leaves each line's area free (populations that are
	// not Boltzmann); T_exc then comes from a Boltzmann plot of the
	// fitted areas.
	WholeAreasFree = "free"
)

// ValidWholeAreas reports whether s names an area mode of the
// whole-spectrum fit ("" means WholeAreasBoltzmann).
func ValidWholeAreas(s string) bool {
	return s == "" || s == WholeAreasBoltzmann || s == WholeAreasFree
}

// FlagWholeDisagrees is raised when the whole-spectrum fit and the
// line-by-line route disagree beyond their uncertainties.
const FlagWholeDisagrees = "whole_lines_disagree"

// FlagWholeDensityLimit is raised when the whole fit's n_e is reported as
// an upper limit only: the Stark part widens no line carrying signal by
// enough beyond its Gaussian (instrument ⊕ Doppler) for the width to
// measure n_e (wholeWeakExcessSigma).
const FlagWholeDensityLimit = "whole_density_limit"

// WholeParam is one parameter of the whole-spectrum model.
type WholeParam struct {
	// Name is a stable identifier: "T_exc", "scale", "n_e", "T_gas",
	// "instrument_fwhm", "instrument_fwhm_slope", "offset", "baseline_0"…,
	// "area_<upper>".
	Name  string  `json:"name"`
	Label string  `json:"label"` // for people: "Excitation temperature"
	Unit  string  `json:"unit"`  // "K", "m⁻³", "nm", …
	Value float64 `json:"value"`
	// Unc is the fit's 1σ (0 when Fixed).
	Unc   float64 `json:"unc"`
	Fixed bool    `json:"fixed"`
}

// WholeOtherModel is one line's n_e by another Stark model at the
// whole fit's solution.
type WholeOtherModel struct {
	Upper    int    `json:"upper_level"`
	Name     string `json:"name"`
	Relation string `json:"relation"`
	// StarkWidthNM is the SH99 Stark width of the line at the fitted n_e,
	// of the kind the relation is written for (FWHM, or FWHA for Hα).
	StarkWidthNM float64 `json:"stark_width_nm"`
	// ElectronDensityM3 is the relation's n_e for that width; RelDiff its
	// relative difference from the fitted n_e.
	ElectronDensityM3 float64 `json:"electron_density_m3"`
	RelDiff           float64 `json:"rel_diff"`
}

// WholeLine is one Balmer line inside the whole-spectrum model.
type WholeLine struct {
	Upper int    `json:"upper_level"`
	Name  string `json:"name"`
	// Shape is "SH99" (the tabulated Stark ⊗ Doppler shape) or "Voigt"
	// (outside the tables: Lorentzian Stark width of the preferred
	// relation).
	Shape string `json:"shape"`
	// TableTemperatureK is the temperature at which an SH99 line read
	// its tables: T_e, or the nearest temperature node that covers the
	// density where the tables stop short of it at T_e (0 for Voigt).
	TableTemperatureK float64 `json:"table_temperature_K,omitempty"`
	// Area and AreaUnc are the line's integrated intensity in the
	// analysis' intensity unit (from the Boltzmann scale, or free).
	Area    float64 `json:"area"`
	AreaUnc float64 `json:"area_unc"`
	// StarkFWHMNM is the model's Stark FWHM at the fitted n_e.
	StarkFWHMNM float64 `json:"stark_fwhm_nm"`
	// ReducedChi2 and ResidualRMS are over the pixels within the line's
	// window (as the line-by-line route cuts it), RMS in units of σ.
	ReducedChi2 float64 `json:"reduced_chi2"`
	ResidualRMS float64 `json:"residual_rms"`
	// PeakSNR is the model's peak over the noise.
	PeakSNR float64 `json:"peak_snr"`
}

// WholeFit is the result of the whole-spectrum model fit.
type WholeFit struct {
	// Areas is WholeAreasBoltzmann or WholeAreasFree.
	Areas string `json:"areas"`
	// RangeNM is the fitted wavelength range; Pixels the pixels in it.
	RangeNM [2]float64 `json:"range_nm"`
	Pixels  int        `json:"pixels"`
	// Params lists every parameter, fixed ones too; Correlation is the
	// correlation matrix of the free ones, in their order in Params.
	Params      []WholeParam `json:"params"`
	Correlation [][]float64  `json:"correlation"`
	ReducedChi2 float64      `json:"reduced_chi2"`
	DOF         int          `json:"dof"`
	Iterations  int          `json:"iterations"`
	Converged   bool         `json:"converged"`
	// BoltzmannDeltaChi2 is χ²(areas tied by T_exc) − χ²(areas free) at
	// the fitted shapes, with BoltzmannDOF = lines − 2 degrees of freedom
	// and its χ² tail probability BoltzmannP (Boltzmann mode with three
	// or more lines; 0 otherwise). Below p = 0.0455 (2σ) the tie is
	// rejected: T_exc's σ is scaled by √(Δχ²/dof) and FlagWholeDisagrees
	// is raised. (Added by the whole-fit work.)
	BoltzmannDeltaChi2 float64 `json:"boltzmann_delta_chi2"`
	BoltzmannDOF       int     `json:"boltzmann_dof"`
	BoltzmannP         float64 `json:"boltzmann_p"`
	// offTie describes the rejected tie for the flag ("" when accepted).
	offTie string
	// DopplerNote says how the tables' own Doppler part was handled.
	DopplerNote string      `json:"doppler_note"`
	Lines       []WholeLine `json:"lines"`
	// Results of the whole fit with the stat/sys/total split of the
	// line-by-line route (nil where the fit does not determine them).
	ExcitationTemperatureK        *float64 `json:"excitation_temperature_K"`
	ExcitationTemperatureUncStatK *float64 `json:"excitation_temperature_unc_stat_K"`
	ExcitationTemperatureUncSysK  *float64 `json:"excitation_temperature_unc_sys_K"`
	ExcitationTemperatureUncK     *float64 `json:"excitation_temperature_unc_K"`
	// ExcitationTemperatureUncParts are the parts of the systematic σ of
	// T_exc, K: the response calibration, and in Boltzmann mode the same
	// inputs as for n_e (instrument width, gas temperature, T_e of the
	// tables, Doppler handling). (Added by the whole-fit work.)
	ExcitationTemperatureUncParts []diag.UncPart `json:"excitation_temperature_unc_sys_parts,omitempty"`
	ElectronDensityM3             *float64       `json:"electron_density_m3"`
	ElectronDensityUncStatM3      *float64       `json:"electron_density_unc_stat_m3"`
	ElectronDensityUncSysM3       *float64       `json:"electron_density_unc_sys_m3"`
	ElectronDensityUncM3          *float64       `json:"electron_density_unc_m3"`
	// ElectronDensityUncParts are the parts of the systematic σ of n_e,
	// m⁻³ (added by the whole-fit work).
	ElectronDensityUncParts []diag.UncPart `json:"electron_density_unc_sys_parts,omitempty"`
	// ElectronDensityUpperLimitM3 is set instead of ElectronDensityM3
	// when the Stark part widens no line carrying signal enough for a
	// measured n_e (FlagWholeDensityLimit): the fitted value + 2 total σ.
	ElectronDensityUpperLimitM3 *float64 `json:"electron_density_upper_limit_m3,omitempty"`
	// OtherModels says, for each line of the fit that also has a Stark
	// relation of another model (GGC 2003 for Hα and Hβ), what that
	// relation gives for the SH99 Stark width of the line at the fitted
	// n_e: the dependence of n_e on the Stark theory, which the whole
	// fit's σ does not carry (its shapes are SH99's; the line-by-line
	// route beside it carries the spread between models in its σ_sys).
	OtherModels []WholeOtherModel `json:"other_models,omitempty"`
	// weakNe is the reason n_e is only a limit ("" when it is a value).
	weakNe             string
	GasTemperatureK    *float64 `json:"gas_temperature_K,omitempty"`
	GasTemperatureUncK *float64 `json:"gas_temperature_unc_K,omitempty"`
	// Lines route beside it, and the difference in combined σ.
	LinesExcitationTemperatureK    *float64 `json:"lines_excitation_temperature_K"`
	LinesExcitationTemperatureUncK *float64 `json:"lines_excitation_temperature_unc_K"`
	LinesElectronDensityM3         *float64 `json:"lines_electron_density_m3"`
	LinesElectronDensityUncM3      *float64 `json:"lines_electron_density_unc_m3"`
	TexcDiffSigma                  *float64 `json:"texc_difference_sigma"`
	NeDiffSigma                    *float64 `json:"ne_difference_sigma"`
	// Plot series over the fitted range (Options.KeepWindows).
	WavelengthNM PlotFloats `json:"wavelength_nm,omitempty"`
	Data         PlotFloats `json:"data,omitempty"`
	Model        PlotFloats `json:"model,omitempty"`
	Residual     PlotFloats `json:"residual,omitempty"`
}
