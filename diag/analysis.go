package diag

import (
	"errors"
	"fmt"
	"math"
	"strconv"
	"strings"

	"glowlog/diag/sh99"
)

// EngineVersion is the version of the analysis engine, recorded with
// every result.
const EngineVersion = "0.1.0"

// LineError reports a data problem with one line of a measurement set.
type LineError struct {
	// Index is the position of the line in Measurement.Lines.
	Index int
	// Upper is its upper level.
	Upper int
	// Err is the underlying problem.
	Err error
}

func (e *LineError) Error() string {
	return fmt.Sprintf("diag: lines[%d] (n=%d): %v", e.Index, e.Upper, trimDiag(e.Err.Error()))
}

func (e *LineError) Unwrap() error { return e.Err }

func trimDiag(s string) string {
	if len(s) > 6 && s[:6] == "diag: " {
		return s[6:]
	}
	return s
}

// Result is the full analysis of one measurement set. Pointer fields are
// nil (JSON null) when the quantity is undefined.
type Result struct {
	EngineVersion string `json:"engine_version"`
	Constants     string `json:"constants"`
	Isotope       string `json:"isotope"`
	IntensityUnit string `json:"intensity_unit"`

	// ExcitationTemperatureK is the Boltzmann-plot excitation temperature
	// of the Balmer upper levels (never an electron temperature).
	// ExcitationTemperatureUncK is the total 1σ (statistical ⊕
	// systematic); the systematic part is the response calibration.
	ExcitationTemperatureK        *float64        `json:"excitation_temperature_K"`
	ExcitationTemperatureUncK     *float64        `json:"excitation_temperature_unc_K"`
	ExcitationTemperatureUncStatK *float64        `json:"excitation_temperature_unc_stat_K"`
	ExcitationTemperatureUncSysK  *float64        `json:"excitation_temperature_unc_sys_K"`
	Boltzmann                     BoltzmannResult `json:"boltzmann"`

	// ElectronDensityM3 is the best estimate: the inverse-variance
	// weighted mean of the lines' preferred densities.
	// ElectronDensityUncM3 is its total 1σ, the quadrature sum of the
	// statistical and systematic parts.
	ElectronDensityM3        *float64  `json:"electron_density_m3"`
	ElectronDensityUncM3     *float64  `json:"electron_density_unc_m3"`
	ElectronDensityUncStatM3 *float64  `json:"electron_density_unc_stat_m3"`
	ElectronDensityUncSysM3  *float64  `json:"electron_density_unc_sys_m3"`
	ElectronDensityUncParts  []UncPart `json:"electron_density_unc_sys_parts,omitempty"`
	// ElectronTemperatureK is the temperature of the T-dependent Stark
	// models; ElectronTemperatureSource is "given" or "default".
	ElectronTemperatureK      float64  `json:"electron_temperature_K"`
	ElectronTemperatureSource string   `json:"electron_temperature_source"`
	ElectronDensityCM3        *float64 `json:"electron_density_cm3"`
	ElectronDensityUncCM3     *float64 `json:"electron_density_unc_cm3"`
	// ElectronDensitySource names the line and relation of the best estimate.
	ElectronDensitySource string `json:"electron_density_source"`

	// GasTemperatureK is the gas temperature used for Doppler and van der
	// Waals widths; GasTemperatureSource is "given", "two-line" or "none".
	GasTemperatureK      *float64 `json:"gas_temperature_K"`
	GasTemperatureUncK   *float64 `json:"gas_temperature_unc_K"`
	GasTemperatureSource string   `json:"gas_temperature_source"`

	TwoLine      *TwoLineSummary      `json:"two_line,omitempty"`
	InglisTeller *InglisTellerSummary `json:"inglis_teller,omitempty"`
	Validity     ValiditySummary      `json:"validity"`

	Lines []LineResult `json:"lines"`
	// Relations lists every Stark relation used, with its citation and
	// validity range.
	Relations []RelationSummary `json:"stark_relations_used"`
	// Perturber is the van der Waals perturber used.
	Perturber PerturberSummary `json:"perturber"`
	// ConstantSources gives the status and source of the other constants
	// the analysis uses.
	ConstantSources []ConstantSource `json:"constant_sources"`

	// Flags are structured warnings; Warnings repeats their messages.
	Flags    []Flag   `json:"flags"`
	Warnings []string `json:"warnings"`
}

// LineResult is the analysis of one line.
type LineResult struct {
	UpperLevel      int     `json:"upper_level"`
	Name            string  `json:"name"`
	WavelengthAirNM float64 `json:"wavelength_air_nm"`
	WavelengthVacNM float64 `json:"wavelength_vac_nm"`
	UpperEnergyEV   float64 `json:"upper_energy_eV"`
	GUpper          int     `json:"g_upper"`
	EinsteinA       float64 `json:"einstein_A_per_s"`
	OscillatorF     float64 `json:"oscillator_f"`

	Intensity    *float64 `json:"intensity"`
	IntensityUnc *float64 `json:"intensity_unc"`
	InBoltzmann  bool     `json:"in_boltzmann_fit"`

	MeasuredFWHMNM   *float64    `json:"fwhm_nm"`
	LorentzFWHMNM    *float64    `json:"lorentz_fwhm_nm"`
	LorentzFWHMUncNM *float64    `json:"lorentz_fwhm_unc_nm"`
	LorentzSource    string      `json:"lorentz_source,omitempty"`
	Budget           *BudgetView `json:"broadening_budget"`

	StarkFWHMNM    *float64 `json:"stark_fwhm_nm"`
	StarkFWHMUncNM *float64 `json:"stark_fwhm_unc_nm"`
	StarkRelation  string   `json:"stark_relation,omitempty"`
	// ElectronDensityM3 is the preferred model's density (StarkRelation);
	// ElectronDensityUncM3 its total 1σ (statistical ⊕ systematic).
	ElectronDensityM3        *float64 `json:"electron_density_m3"`
	ElectronDensityUncM3     *float64 `json:"electron_density_unc_m3"`
	ElectronDensityUncStatM3 *float64 `json:"electron_density_unc_stat_m3"`
	ElectronDensityUncSysM3  *float64 `json:"electron_density_unc_sys_m3"`
	// DensityUncParts are the parts of the systematic σ, m⁻³.
	DensityUncParts []UncPart `json:"electron_density_unc_sys_parts,omitempty"`
	// DensityLowerLimit is true when n_e is only a lower limit (Stark
	// width far below the Gaussian width: ShapeBiasRel).
	DensityLowerLimit bool `json:"electron_density_lower_limit,omitempty"`
	// Densities lists the density of every applicable Stark model;
	// DensitiesNotApplying the models tried on the line's width that gave
	// none, with why (outside their tables or range).
	Densities            []DensityEstimate  `json:"densities"`
	DensitiesNotApplying []ModelNotApplying `json:"densities_not_applying,omitempty"`
	Notes                []string           `json:"notes,omitempty"`
	// ProfileFit is set when the line was fitted in a spectrum; its fields
	// appear inline (center_nm, gauss_fwhm_nm, …).
	*ProfileFit

	flags      []Flag
	noRelation bool
}

// BudgetView is the JSON form of a line's broadening budget (all FWHM, nm).
type BudgetView struct {
	InstrumentGaussNM   float64 `json:"instrument_gauss_nm"`
	InstrumentLorentzNM float64 `json:"instrument_lorentz_nm"`
	DopplerNM           float64 `json:"doppler_nm"`
	NaturalNM           float64 `json:"natural_nm"`
	ResonanceNM         float64 `json:"resonance_nm"`
	VanDerWaalsNM       float64 `json:"van_der_waals_nm"`
	GaussTotalNM        float64 `json:"gauss_total_nm"`
	LorentzNonStarkNM   float64 `json:"lorentz_non_stark_nm"`
}

// RelationSummary describes a Stark relation used. For the SH99 tables
// the density range is the one at the electron temperature used.
type RelationSummary struct {
	ID         string  `json:"id"`
	UpperLevel int     `json:"upper_level"`
	Width      string  `json:"width_kind"`
	Citation   string  `json:"citation"`
	MinNeM3    float64 `json:"min_ne_m3"`
	MaxNeM3    float64 `json:"max_ne_m3"`
	Verified   bool    `json:"verified"`
	Status     string  `json:"status"`
	Source     string  `json:"source"`
	Provenance string  `json:"provenance"`
}

// PerturberSummary describes the van der Waals perturber used.
type PerturberSummary struct {
	Name              string  `json:"name"`
	PolarizabilityCM3 float64 `json:"polarizability_cm3"`
	Status            string  `json:"status"`
	Source            string  `json:"source"`
}

// TwoLineSummary is the simultaneous (n_e, T_g) solution from Hα and Hβ.
type TwoLineSummary struct {
	ElectronDensityM3    float64 `json:"electron_density_m3"`
	ElectronDensityUncM3 float64 `json:"electron_density_unc_m3"`
	GasTemperatureK      float64 `json:"gas_temperature_K"`
	GasTemperatureUncK   float64 `json:"gas_temperature_unc_K"`
	Iterations           int     `json:"iterations"`
}

// InglisTellerSummary is the Inglis–Teller estimate.
type InglisTellerSummary struct {
	LastResolvedUpper int     `json:"last_resolved_upper_level"`
	IonDensityM3      float64 `json:"ion_density_m3"`
	Note              string  `json:"note"`
}

// Flag codes of the analysis (besides the Boltzmann ones).
const (
	FlagUncalibrated     = "intensity_uncalibrated"
	FlagNoGasTemperature = "gas_temperature_unknown"
	FlagNoStarkWidth     = "stark_width_not_resolved"
	FlagNoRelation       = "stark_no_relation"
	FlagRelationRange    = "stark_relation_range"
	FlagDensityDisagree  = "density_lines_disagree"
	FlagUnverified       = "coefficients_unverified"
	// FlagLTE is the single LTE code of results stored before the LTE
	// warnings got one code each (validity.go); it is no longer emitted.
	FlagLTE = "lte_validity"
)

// MinGasTemperatureK is the lowest gas temperature Analyze accepts: below
// it the neutral density P/(k_B T) of the van der Waals width runs away.
// Common practice, no source (no gas discharge is colder than liquid
// helium).
const MinGasTemperatureK = 1.0

// densityPreference is the order in which lines supply the best n_e
// estimate: Hβ first (weak dependence on T and ion dynamics), then Hα
// (physics.md §4.1).
var densityPreference = []int{4, 3}

// Analyze runs the whole analysis of a measurement set: Boltzmann plot,
// broadening budget and Stark density per line, the best density, the
// two-line solution when asked, the Inglis–Teller estimate and the
// (partial) LTE checks. Data problems with a line return a *LineError;
// everything that can still be computed is computed, and what cannot is
// null in the result with a flag saying why.
func Analyze(m Measurement) (Result, error) {
	res := Result{EngineVersion: EngineVersion, Constants: ConstantsSet,
		Isotope: m.Isotope.String(), IntensityUnit: m.Unit.String(), GasTemperatureSource: "none"}
	pert, err := LookupPerturber(m.Perturber)
	if err != nil {
		return res, err
	}
	res.Perturber = PerturberSummary{pert.Name, pert.PolarizabilityCM3, pert.Status, pert.Source}
	res.ConstantSources = ConstantSources()
	if m.PressurePa == 0 {
		pert = NoPerturber
	}

	trs := make([]Transition, len(m.Lines))
	seen := map[int]bool{}
	for i, l := range m.Lines {
		t, err := Balmer(l.Upper, m.Isotope)
		if err != nil {
			return res, &LineError{i, l.Upper, err}
		}
		if seen[l.Upper] {
			return res, &LineError{i, l.Upper, errors.New("duplicate line")}
		}
		seen[l.Upper] = true
		trs[i] = t
	}

	// Boltzmann plot.
	var pts []BoltzmannPoint
	for i, l := range m.Lines {
		if l.Intensity <= 0 {
			continue
		}
		t := trs[i]
		pts = append(pts, BoltzmannPoint{Upper: l.Upper, EnergyEV: t.UpperEnergyEV, G: float64(t.GUpper),
			A: t.EinsteinA, WavelengthNM: t.WavelengthVacNM, Intensity: l.Intensity,
			IntensityUnc: l.IntensityUnc, Excluded: l.ExcludeFromBoltzmann})
	}
	bz, err := FitBoltzmann(pts, BoltzmannOptions{Unit: m.Unit})
	if err != nil {
		var ne *NumericError
		if errors.As(err, &ne) && ne.Upper > 0 {
			return res, &LineError{lineIndex(m.Lines, ne.Upper), ne.Upper, err}
		}
		return res, err
	}
	res.Boltzmann = bz
	res.Flags = append(res.Flags, bz.Flags...)
	if bz.Defined {
		res.ExcitationTemperatureK = ptr(bz.TemperatureK)
		if bz.UncBasis != "none" {
			res.ExcitationTemperatureUncK = ptr(bz.TemperatureUncK)
			res.ExcitationTemperatureUncStatK = ptr(bz.TemperatureUncK)
		}
	}
	if bz.Defined {
		texcSystematics(&res, pts, bz, m)
	}
	if len(pts) > 0 && !m.ResponseCorrected {
		res.Flags = append(res.Flags, Flag{Code: FlagUncalibrated, Message: "the intensities are not corrected for the spectrometer's relative spectral response: a Boltzmann plot on raw counts is meaningless (the response varies by factors of 2–10 between 380 and 660 nm)"})
	}

	// Electron temperature of the T-dependent Stark models.
	te := m.ElectronTemperatureK
	res.ElectronTemperatureSource = "given"
	if te == 0 {
		te, res.ElectronTemperatureSource = DefaultElectronTemperatureK, "default"
	}
	if !(te > 0) || !finite(te) {
		return res, &NumericError{Field: "electron_temperature_K", Value: te, Msg: "the electron temperature must be a positive number of kelvin"}
	}
	res.ElectronTemperatureK = te
	m.ElectronTemperatureK = te
	if m.InstrumentFWHMUncNM < 0 || !finite(m.InstrumentFWHMUncNM) {
		return res, &NumericError{Field: "instrument_fwhm_unc_nm", Value: m.InstrumentFWHMUncNM, Msg: "the instrument width's 1σ must be ≥ 0 nm"}
	}
	if m.ResponseUncRel < 0 || !finite(m.ResponseUncRel) {
		return res, &NumericError{Field: "response_unc_rel", Value: m.ResponseUncRel, Msg: "the response calibration's relative 1σ must be ≥ 0"}
	}

	// Gas temperature.
	gasT, gasTUnc := m.GasTemperatureK, m.GasTemperatureUncK
	if gasT != 0 && !(gasT >= MinGasTemperatureK) {
		return res, &NumericError{Field: "gas_temperature_K", Value: gasT, Msg: fmt.Sprintf(
			"a gas temperature below %v K is not a discharge (and overflows the van der Waals width): check the unit (K)", MinGasTemperatureK)}
	}
	if gasT > 0 {
		res.GasTemperatureSource = "given"
	}
	inputs := make([]lineWidthInput, len(m.Lines))
	for i, l := range m.Lines {
		inputs[i] = lineWidthInput{line: l, t: trs[i]}
		inputs[i].instG, inputs[i].instL = m.InstrumentGaussFWHMNM, m.InstrumentLorentzFWHMNM
		if l.InstrumentGaussFWHMNM > 0 {
			inputs[i].instG = l.InstrumentGaussFWHMNM
		}
		if l.InstrumentLorentzFWHMNM > 0 {
			inputs[i].instL = l.InstrumentLorentzFWHMNM
		}
	}
	if m.SolveGasTemperature {
		tl, err := solveTwoLineAnalysis(inputs, m, pert)
		if err != nil {
			return res, err
		}
		res.TwoLine = &tl
		gasT, gasTUnc = tl.GasTemperatureK, tl.GasTemperatureUncK
		res.GasTemperatureSource = "two-line"
	}
	if gasT > 0 {
		res.GasTemperatureK = ptr(gasT)
		if gasTUnc > 0 {
			res.GasTemperatureUncK = ptr(gasTUnc)
		}
	}

	// Widths, budgets and Stark densities per line.
	for i, in := range inputs {
		lr := lineResultBase(in.line, in.t)
		lr.InBoltzmann = in.line.Intensity > 0 && !in.line.ExcludeFromBoltzmann && bz.N > 0
		if in.line.FWHMNM > 0 || in.line.LorentzFWHMNM > 0 {
			if gasT <= 0 && !anyFlag(res.Flags, FlagNoGasTemperature) {
				res.Flags = append(res.Flags, Flag{Code: FlagNoGasTemperature, Message: "no gas temperature was given: Doppler and van der Waals widths are left out of the budget, so the Stark widths and densities are upper limits"})
			}
			if err := analyzeWidth(&lr, in, m, pert, gasT, gasTUnc); err != nil {
				return res, &LineError{i, in.line.Upper, err}
			}
		}
		res.Lines = append(res.Lines, lr)
	}

	// Relations used, their warnings, and the best estimate.
	used := map[string]bool{}
	for _, lr := range res.Lines {
		for _, d := range lr.Densities {
			if used[d.Relation] {
				continue
			}
			used[d.Relation] = true
			r, _ := LookupStarkRelation(d.Relation)
			lo, hi := r.MinNeM3, r.MaxNeM3
			if r.model == modelSH99 {
				if l, err := sh99.Balmer(r.Upper); err == nil {
					lo, hi, _, _, _ = l.StarkRange(sh99Kind(r.Kind), te)
				}
			}
			res.Relations = append(res.Relations, RelationSummary{r.ID, r.Upper, r.Kind.String(), r.Citation,
				lo, hi, r.Verified, r.Status, r.Source, r.Provenance})
			if r.Status == StatusOpen {
				res.Flags = append(res.Flags, Flag{Code: FlagUnverified, Message: fmt.Sprintf(
					"the coefficients of Stark relation %s are from memory and not yet checked against the publication: treat the densities as provisional", r.ID)})
			}
		}
	}
	var noRel []string
	for _, lr := range res.Lines {
		res.Flags = append(res.Flags, lr.flags...)
		if lr.noRelation {
			noRel = append(noRel, lr.Name)
		}
	}
	if len(noRel) > 0 {
		res.Flags = append(res.Flags, Flag{Code: FlagNoRelation, Message: fmt.Sprintf(
			"%s: no Stark model covers these lines' widths here (GGC 2003: Hα, Hβ; SH99: Hα … H(12→2) within its tables), so they give no density", strings.Join(noRel, ", "))})
	}
	if ne, st, sy, parts, src, fl, ok := combineDensities(res.Lines); ok {
		res.ElectronDensityM3 = ptr(ne)
		res.ElectronDensityCM3 = ptr(ne * 1e-6)
		if st > 0 {
			res.ElectronDensityUncStatM3 = ptr(st)
		}
		res.ElectronDensityUncSysM3 = ptr(sy)
		res.ElectronDensityUncParts = parts
		tot := math.Hypot(st, sy)
		res.ElectronDensityUncM3 = ptr(tot)
		res.ElectronDensityUncCM3 = ptr(tot * 1e-6)
		res.ElectronDensitySource = src
		res.Flags = append(res.Flags, fl...)
	}
	res.Flags = append(res.Flags, densityConsistency(res.Lines)...)

	// Inglis–Teller.
	if m.LastResolvedUpper > 0 {
		res.InglisTeller = &InglisTellerSummary{m.LastResolvedUpper, InglisTellerDensityM3(m.LastResolvedUpper),
			"order-of-magnitude ion density from the last resolved Balmer member (Inglis & Teller 1939); spectrometer resolution and Doppler width also limit the last resolved member"}
	}

	// Validity.
	res.Validity = validitySummary(res, m)
	res.Flags = append(res.Flags, res.Validity.Flags...)

	SetSeverities(res.Flags)
	for _, f := range res.Flags {
		res.Warnings = append(res.Warnings, f.Message)
	}
	if res.Warnings == nil {
		res.Warnings = []string{}
	}
	if res.Flags == nil {
		res.Flags = []Flag{}
	}
	// Final net: every number in the result is finite (or null), so that
	// it can always be written as JSON; anything else is an input outside
	// the range the analysis can represent, reported against its line.
	if err := CheckFinite(res); err != nil {
		return res, resultLineError(res, m.Lines, err.(*NumericError))
	}
	return res, nil
}

// lineIndex returns the index of the line with upper level n (-1: none).
func lineIndex(lines []MeasuredLine, n int) int {
	for i, l := range lines {
		if l.Upper == n {
			return i
		}
	}
	return -1
}

// resultLineError attributes a non-finite result field to the input line
// its path names ("lines[i]…" or "boltzmann.points[i]…"), if any.
func resultLineError(res Result, lines []MeasuredLine, ne *NumericError) error {
	upper := 0
	if rest, ok := strings.CutPrefix(ne.Field, "lines["); ok {
		num, _, _ := strings.Cut(rest, "]")
		if i, err := strconv.Atoi(num); err == nil && i >= 0 && i < len(res.Lines) {
			upper = res.Lines[i].UpperLevel
		}
	}
	if rest, ok := strings.CutPrefix(ne.Field, "boltzmann.points["); ok {
		num, _, _ := strings.Cut(rest, "]")
		if i, err := strconv.Atoi(num); err == nil && i >= 0 && i < len(res.Boltzmann.Points) {
			upper = res.Boltzmann.Points[i].Upper
		}
	}
	if i := lineIndex(lines, upper); i >= 0 {
		ne.Upper = upper
		return &LineError{i, upper, ne}
	}
	return ne
}

type lineWidthInput struct {
	line         MeasuredLine
	t            Transition
	instG, instL float64
}

// note records a per-line remark, both on the line and as a flag.
func (lr *LineResult) note(code, format string, args ...any) {
	msg := fmt.Sprintf(format, args...)
	lr.Notes = append(lr.Notes, msg)
	lr.flags = append(lr.flags, Flag{Code: code, Message: lr.Name + ": " + msg})
}

func ptr(v float64) *float64 { return &v }

func anyFlag(fs []Flag, code string) bool {
	for _, f := range fs {
		if f.Code == code {
			return true
		}
	}
	return false
}

func lineResultBase(l MeasuredLine, t Transition) LineResult {
	lr := LineResult{UpperLevel: l.Upper, Name: t.Name(), WavelengthAirNM: t.WavelengthAirNM,
		WavelengthVacNM: t.WavelengthVacNM, UpperEnergyEV: t.UpperEnergyEV, GUpper: t.GUpper,
		EinsteinA: t.EinsteinA, OscillatorF: t.OscillatorF}
	if l.Intensity > 0 {
		lr.Intensity = ptr(l.Intensity)
		if l.IntensityUnc > 0 {
			lr.IntensityUnc = ptr(l.IntensityUnc)
		}
	}
	if l.FWHMNM > 0 {
		lr.MeasuredFWHMNM = ptr(l.FWHMNM)
	}
	lr.ProfileFit = l.Profile
	lr.Densities = []DensityEstimate{}
	return lr
}
