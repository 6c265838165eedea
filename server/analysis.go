package server

import (
	"bytes"
	"context"
	"database/sql"
	"encoding/json"
	"errors"
	"fmt"
	"net/http"
	"runtime"
	"slices"
	"strings"
	"sync"

	"glowlog/diag"
	"glowlog/diag/calib"
	"glowlog/diag/mset"
	"glowlog/diag/spectrum"
	"glowlog/store"
)

// AnalysisSettings are the settings of one analysis version, stored with
// it as JSON. Zero values take the run's conditions.
type AnalysisSettings struct {
	Isotope                 string  `json:"isotope,omitempty"`
	InstrumentFWHMNM        float64 `json:"instrument_fwhm_nm,omitempty"`
	InstrumentLorentzFWHMNM float64 `json:"instrument_lorentz_fwhm_nm,omitempty"`
	InstrumentID            int64   `json:"instrument_id,omitempty"`
	GasTemperatureK         float64 `json:"gas_temperature_K,omitempty"`
	GasTemperatureUncK      float64 `json:"gas_temperature_unc_K,omitempty"`
	SolveGasTemperature     bool    `json:"solve_gas_temperature,omitempty"`
	PressurePa              float64 `json:"pressure_Pa,omitempty"`
	Perturber               string  `json:"perturber,omitempty"`
	ResponseUnit            string  `json:"response_unit,omitempty"`
	// ResponseCorrectedUnit, "photon" or "energy", says the spectra are
	// already response-corrected (calibrated exports, densities per nm) in
	// that unit; "" (the default) says they are raw counts.
	ResponseCorrectedUnit string         `json:"response_corrected_unit,omitempty"`
	SaturationCounts      float64        `json:"saturation_counts,omitempty"`
	GainElectronsPerCount float64        `json:"gain_e_per_count,omitempty"`
	ReadNoiseElectrons    float64        `json:"read_noise_e,omitempty"`
	CorrectOffset         bool           `json:"correct_offset,omitempty"`
	MinSNR                float64        `json:"min_snr,omitempty"`
	MaxUpper              int            `json:"max_upper,omitempty"`
	StarkRelations        map[int]string `json:"stark_relations,omitempty"`
	ExcludeFromBoltzmann  []int          `json:"exclude_from_boltzmann,omitempty"`
	// InstrumentFWHMUncNM is the 1σ of the instrument FWHM (nm),
	// ElectronTemperatureK the temperature of the T-dependent Stark models
	// (K; 0 = diag.DefaultElectronTemperatureK) and ResponseUncRel the
	// relative 1σ of the response calibration between the extreme lines
	// (0 = not given).
	InstrumentFWHMUncNM  float64 `json:"instrument_fwhm_unc_nm,omitempty"`
	ElectronTemperatureK float64 `json:"electron_temperature_K,omitempty"`
	ResponseUncRel       float64 `json:"response_unc_rel,omitempty"`
	// LineShape is the line shape of the spectrum fits: "stark" (the
	// default, ""; Voigt fits corrected for the Stark shape of Balmer
	// lines) or "voigt" (Voigt fits as they are, for Voigt-shaped
	// synthetic spectra).
	LineShape string `json:"line_shape,omitempty"`
	// Model is the analysis route of spectra: "whole" (one model fitted
	// to the whole range), "lines" (each line's window on its own) or ""
	// (the pipeline's default, DefaultModel). Line tables are always
	// analysed line by line (route.go).
	Model string `json:"model,omitempty"`
	// WholeAreas ("boltzmann", the default "", or "free") and the two
	// freedoms are options of the whole-spectrum fit only.
	WholeAreas              string `json:"whole_areas,omitempty"`
	WholeFreeGasTemperature bool   `json:"whole_free_gas_temperature,omitempty"`
	WholeFreeInstrument     bool   `json:"whole_free_instrument,omitempty"`
	// CalibrationFiles records the dark and response attachments a version
	// was computed with (set by the analysis service, not by users).
	CalibrationFiles []int64 `json:"calibration_files,omitempty"`
}

// DefaultSettings takes the analysis settings from a run's conditions.
func DefaultSettings(r store.Run) AnalysisSettings {
	var st AnalysisSettings
	if r.InstrumentFWHMNM != nil {
		st.InstrumentFWHMNM = *r.InstrumentFWHMNM
	}
	if r.InstrumentID != nil {
		st.InstrumentID = *r.InstrumentID
	}
	if r.GasTemperatureK != nil {
		st.GasTemperatureK = *r.GasTemperatureK
	}
	if r.PressurePa != nil {
		st.PressurePa = *r.PressurePa
	}
	st.Perturber = r.Perturber
	return st
}

// Validate checks settings for impossible values.
func (st *AnalysisSettings) Validate() error {
	if _, err := diag.ParseIsotope(st.Isotope); err != nil {
		return badRequest("isotope: %s", strings.TrimPrefix(err.Error(), "diag: "))
	}
	if st.Perturber == "" {
		st.Perturber = "none"
	}
	if _, err := diag.LookupPerturber(st.Perturber); err != nil {
		return badRequest("perturber: %s", strings.TrimPrefix(err.Error(), "diag: "))
	}
	for _, f := range []struct {
		name string
		v    float64
		max  float64
	}{{"instrument FWHM (nm)", st.InstrumentFWHMNM, 50}, {"instrument Lorentzian FWHM (nm)", st.InstrumentLorentzFWHMNM, 50},
		{"gas temperature (K)", st.GasTemperatureK, 1e6}, {"gas temperature σ (K)", st.GasTemperatureUncK, 1e6},
		{"pressure (Pa)", st.PressurePa, 1e8}, {"saturation (counts)", st.SaturationCounts, 1e15},
		{"gain (e⁻/count)", st.GainElectronsPerCount, 1e6}, {"read noise (e⁻)", st.ReadNoiseElectrons, 1e6}, {"minimum SNR", st.MinSNR, 1e6},
		{"instrument FWHM σ (nm)", st.InstrumentFWHMUncNM, 50}, {"electron temperature (K)", st.ElectronTemperatureK, 2e6},
		{"response calibration σ (relative)", st.ResponseUncRel, 1}} {
		if !(f.v >= 0 && f.v <= f.max) {
			return badRequest("%s must be between 0 and %g, got %g", f.name, f.max, f.v)
		}
	}
	if st.ElectronTemperatureK != 0 && st.ElectronTemperatureK < 1000 {
		return badRequest("electron temperature (K) must be 0 (default %g K) or 1000–2e6 K, got %g", diag.DefaultElectronTemperatureK, st.ElectronTemperatureK)
	}
	if !spectrum.ValidLineShape(st.LineShape) {
		return badRequest("line shape must be %q or %q, got %q", spectrum.LineShapeStark, spectrum.LineShapeVoigt, st.LineShape)
	}
	if err := st.validateRoute(); err != nil {
		return err
	}
	if st.MaxUpper != 0 && (st.MaxUpper < 3 || st.MaxUpper > diag.MaxLevel) {
		return badRequest("highest Balmer member must be 3…%d, got %d", diag.MaxLevel, st.MaxUpper)
	}
	if st.ResponseUnit != "" {
		if _, err := diag.ParseIntensityUnit(st.ResponseUnit); err != nil {
			return badRequest("response unit: %v", err)
		}
	}
	if st.ResponseCorrectedUnit != "" {
		if _, err := diag.ParseIntensityUnit(st.ResponseCorrectedUnit); err != nil {
			return badRequest("response_corrected_unit: %v", err)
		}
	}
	for n, id := range st.StarkRelations {
		r, err := diag.LookupStarkRelation(id)
		if err != nil || r.Upper != n {
			return badRequest("Stark relation %q does not apply to n = %d", id, n)
		}
	}
	return nil
}

// pipelines reuses spectrum pipelines (their fit workspaces) across
// requests.
var pipelines = sync.Pool{New: func() any { return spectrum.NewPipeline(8192) }}

// RunAnalysis is the result of analysing one attachment: a spectrum
// (spectrum.Result) or a typed line table (diag.Result).
type RunAnalysis struct {
	Attachment store.Attachment
	Spectrum   *spectrum.Result
	Lines      *diag.Result
	Err        error
	// stored is the stored form, when encoded ahead (encode).
	stored *store.AnalysisResult
	// answer is the whole result JSON (stored.Result with its plot series
	// put back), when encoded ahead for an API answer (encodeAnswer); nil
	// otherwise.
	answer []byte
}

// Diag returns the diag part of either kind of result.
func (ra RunAnalysis) Diag() *diag.Result {
	if ra.Spectrum != nil {
		return &ra.Spectrum.Result
	}
	return ra.Lines
}

// analyzeAttachments analyses every spectrum and line table of a run with
// settings st. A bad file gives an error result for that file only.
func (s *Server) analyzeAttachments(ctx context.Context, atts []store.Attachment, st AnalysisSettings) ([]RunAnalysis, error) {
	iso, _ := diag.ParseIsotope(st.Isotope)
	opt := spectrum.Options{
		Conditions: diag.Measurement{Isotope: iso, InstrumentGaussFWHMNM: st.InstrumentFWHMNM,
			InstrumentLorentzFWHMNM: st.InstrumentLorentzFWHMNM, GasTemperatureK: st.GasTemperatureK,
			GasTemperatureUncK: st.GasTemperatureUncK, PressurePa: st.PressurePa, Perturber: st.Perturber,
			SolveGasTemperature: st.SolveGasTemperature, StarkRelations: st.StarkRelations,
			InstrumentFWHMUncNM: st.InstrumentFWHMUncNM, ElectronTemperatureK: st.ElectronTemperatureK, ResponseUncRel: st.ResponseUncRel},
		SaturationCounts: st.SaturationCounts, GainElectronsPerCount: st.GainElectronsPerCount,
		ReadNoiseElectrons: st.ReadNoiseElectrons, CorrectOffset: st.CorrectOffset, MinSNR: st.MinSNR,
		MaxUpper: st.MaxUpper, KeepWindows: true, ExcludeFromBoltzmann: st.ExcludeFromBoltzmann,
		LineShape: st.LineShape, Model: st.Model, WholeAreas: st.WholeAreas,
		WholeFreeGasTemperature: st.WholeFreeGasTemperature, WholeFreeInstrument: st.WholeFreeInstrument,
	}
	if st.InstrumentID != 0 {
		in, err := s.DB.Instrument(ctx, st.InstrumentID)
		if err != nil {
			return nil, err
		}
		opt.Instrument = in
	}
	// The newest dark and response files apply to every spectrum.
	for i := len(atts) - 1; i >= 0; i-- {
		a := atts[i]
		switch {
		case a.Kind == store.KindDark && opt.Dark == nil:
			data, err := s.content(ctx, a)
			if err != nil {
				return nil, err
			}
			d, err := ReadCurve(a.Name, data, CurveOptions{}, nil)
			if err != nil {
				return nil, badRequest("dark file %s: %v", a.Name, err)
			}
			opt.Dark = d
		case a.Kind == store.KindResponse && opt.Response == nil:
			data, err := s.content(ctx, a)
			if err != nil {
				return nil, err
			}
			c, err := ReadCurve(a.Name, data, CurveOptions{MinPoints: 2}, nil)
			if err != nil {
				return nil, badRequest("response file %s: %v", a.Name, err)
			}
			unit := diag.PhotonUnits
			if st.ResponseUnit != "" {
				unit, _ = diag.ParseIntensityUnit(st.ResponseUnit)
			}
			r, err := calib.FromCurve(a.Name, c.WavelengthNM, c.Counts, unit)
			if err != nil {
				return nil, badRequest("response file %s: %v", a.Name, err)
			}
			opt.Response, opt.ResponseUnit = r, unit
		}
	}
	if st.ResponseCorrectedUnit != "" {
		if opt.Response != nil {
			return nil, badRequest("the spectra are declared response-corrected (response_corrected_unit %s) and the run has a response file too: remove one of them", st.ResponseCorrectedUnit)
		}
		opt.Calibrated = true
		opt.CalibratedUnit, _ = diag.ParseIntensityUnit(st.ResponseCorrectedUnit)
	}
	p := pipelines.Get().(*spectrum.Pipeline)
	defer pipelines.Put(p)
	var out []RunAnalysis
	for _, a := range atts {
		if a.Kind != store.KindSpectrum && a.Kind != store.KindLineTable {
			continue
		}
		data, err := s.content(ctx, a)
		if err != nil {
			return nil, err
		}
		ra := RunAnalysis{Attachment: a}
		ra.Attachment.Content = nil
		if a.Kind == store.KindLineTable {
			m, err := mset.Decode(a.Name, data)
			if err == nil {
				err = applySettings(&m, st, opt.Instrument)
			}
			if err == nil {
				var r diag.Result
				r, err = diag.Analyze(m)
				ra.Lines = &r
			}
			ra.Err = err
		} else {
			sp, err := ReadCurve(a.Name, data, CurveOptions{}, nil)
			if err == nil {
				var r spectrum.Result
				r, err = p.Analyze(sp, opt)
				if err == nil {
					ra.Spectrum = &r
				}
			}
			ra.Err = err
		}
		out = append(out, ra)
	}
	return out, nil
}

// How settings and a measurement set's own conditions combine — the same
// on every path (the run form, the upload form, the API, single and bulk
// reanalysis), so that the settings stored with a version (and shown
// beside its results) are what every one of its results was computed with:
//
//  1. The version's settings come first: the run's conditions for a new
//     run, the previous version's settings for an upload, the form's for a
//     reanalysis.
//  2. A setting left unset (0, "", perturber "none") is filled from the
//     run's line tables (fillFromLineTables): the first line table, in
//     file order, that states the condition gives it. The filled value is
//     stored in the settings.
//  3. Every file is then analysed with these settings: spectra take them
//     as their conditions; a line table's stated conditions are replaced
//     by them where they are set (applySettings), per-line instrument
//     widths included. A condition that no setting and no line table
//     gives is not used (0: none).

// fillFromLineTables fills st's unset conditions from the measurement sets
// among atts (step 2 above). A line table that cannot be decoded is
// skipped here: its analysis reports the error.
func (s *Server) fillFromLineTables(ctx context.Context, atts []store.Attachment, st *AnalysisSettings) error {
	for _, a := range atts {
		if a.Kind != store.KindLineTable {
			continue
		}
		data, err := s.content(ctx, a)
		if err != nil {
			return err
		}
		m, err := mset.Decode(a.Name, data)
		if err != nil {
			continue
		}
		if st.Isotope == "" && m.Isotope != diag.Hydrogen {
			st.Isotope = "D"
		}
		if st.InstrumentFWHMNM == 0 {
			st.InstrumentFWHMNM = m.InstrumentGaussFWHMNM
		}
		if st.InstrumentLorentzFWHMNM == 0 {
			st.InstrumentLorentzFWHMNM = m.InstrumentLorentzFWHMNM
		}
		if st.GasTemperatureK == 0 && m.GasTemperatureK > 0 {
			st.GasTemperatureK, st.GasTemperatureUncK = m.GasTemperatureK, m.GasTemperatureUncK
		}
		if st.PressurePa == 0 {
			st.PressurePa = m.PressurePa
		}
		if (st.Perturber == "" || st.Perturber == "none") && m.Perturber != "" && m.Perturber != "none" {
			if p, err := diag.LookupPerturber(m.Perturber); err == nil {
				st.Perturber = p.Name
			}
		}
		if m.SolveGasTemperature {
			st.SolveGasTemperature = true
		}
		for n, id := range m.StarkRelations {
			if _, ok := st.StarkRelations[n]; !ok {
				if st.StarkRelations == nil {
					st.StarkRelations = map[int]string{}
				}
				st.StarkRelations[n] = id
			}
		}
	}
	return nil
}

// applySettings puts a version's settings into the conditions of a line
// table (step 3 above): every setting that is set replaces the set's own
// value. In detail:
//   - isotope, pressure, perturber: the setting when set;
//   - gas temperature: the setting's value and σ together when the value
//     is set (a σ belongs to its value);
//   - instrument Gaussian / Lorentzian FWHM: the setting when set, for the
//     whole set, replacing per-line instrument widths too; a stored
//     instrument function (InstrumentID) gives every line its width at
//     the line's wavelength, as the spectrum pipeline does;
//   - two-line gas temperature: on when the setting is on;
//   - instrument-width σ, electron temperature, response σ: the setting
//     when set;
//   - Stark relations: the setting's choice for each line it names;
//   - excluded lines: the setting's lines are excluded as well.
func applySettings(m *diag.Measurement, st AnalysisSettings, in spectrum.Instrument) error {
	if st.Isotope != "" {
		iso, err := diag.ParseIsotope(st.Isotope)
		if err != nil {
			return badRequest("isotope: %v", err)
		}
		m.Isotope = iso
	}
	if st.InstrumentFWHMNM > 0 {
		m.InstrumentGaussFWHMNM = st.InstrumentFWHMNM
		for i := range m.Lines {
			m.Lines[i].InstrumentGaussFWHMNM = 0
		}
	}
	if st.InstrumentLorentzFWHMNM > 0 {
		m.InstrumentLorentzFWHMNM = st.InstrumentLorentzFWHMNM
		for i := range m.Lines {
			m.Lines[i].InstrumentLorentzFWHMNM = 0
		}
	}
	if in != nil {
		for i := range m.Lines {
			t, err := diag.Balmer(m.Lines[i].Upper, m.Isotope)
			if err != nil {
				return err
			}
			m.Lines[i].InstrumentGaussFWHMNM, m.Lines[i].InstrumentLorentzFWHMNM, _ = in.At(t.WavelengthAirNM)
		}
	}
	if st.GasTemperatureK > 0 {
		m.GasTemperatureK, m.GasTemperatureUncK = st.GasTemperatureK, st.GasTemperatureUncK
	}
	if st.PressurePa > 0 {
		m.PressurePa = st.PressurePa
	}
	if st.Perturber != "" && st.Perturber != "none" {
		m.Perturber = st.Perturber
	}
	if st.SolveGasTemperature {
		m.SolveGasTemperature = true
	}
	if st.InstrumentFWHMUncNM > 0 {
		m.InstrumentFWHMUncNM = st.InstrumentFWHMUncNM
	}
	if st.ElectronTemperatureK > 0 {
		m.ElectronTemperatureK = st.ElectronTemperatureK
	}
	if st.ResponseUncRel > 0 {
		m.ResponseUncRel = st.ResponseUncRel
	}
	for n, id := range st.StarkRelations {
		if m.StarkRelations == nil {
			m.StarkRelations = map[int]string{}
		}
		m.StarkRelations[n] = id
	}
	for i := range m.Lines {
		if slices.Contains(st.ExcludeFromBoltzmann, m.Lines[i].Upper) {
			m.Lines[i].ExcludeFromBoltzmann = true
		}
	}
	return nil
}

// toNewAnalysis turns analysis results into the stored form.
func toNewAnalysis(st AnalysisSettings, results []RunAnalysis, userID *int64, reason string) (store.NewAnalysis, error) {
	sj, err := json.Marshal(st)
	if err != nil {
		return store.NewAnalysis{}, err
	}
	na := store.NewAnalysis{Settings: string(sj), EngineVersion: diag.EngineVersion, CreatedBy: userID, Reason: reason}
	for _, ra := range results {
		if ra.stored != nil {
			r := *ra.stored
			r.AttachmentID = ra.Attachment.ID
			na.Results = append(na.Results, r)
			continue
		}
		r, err := ra.storedForm()
		if err != nil {
			return na, err
		}
		na.Results = append(na.Results, r)
	}
	return na, nil
}

// encode computes ra's stored form once (outside the write transaction).
func (ra *RunAnalysis) encode() error {
	r, err := ra.storedForm()
	if err != nil {
		return err
	}
	ra.stored = &r
	return nil
}

// encodeAnswer is encode that also keeps the whole result JSON for an
// API answer (ra.answer), written in the same pass over the plot series.
func (ra *RunAnalysis) encodeAnswer() error {
	var answer []byte
	r, err := ra.storedFormWith(&answer)
	if err != nil {
		return err
	}
	ra.stored, ra.answer = &r, answer
	return nil
}

// resultBufPool holds the buffers storedForm encodes spectrum results in.
var resultBufPool = sync.Pool{New: func() any { b := make([]byte, 0, 128<<10); return &b }}

// storedForm is ra as stored: the result JSON and its summary columns.
func (ra RunAnalysis) storedForm() (store.AnalysisResult, error) {
	return ra.storedFormWith(nil)
}

// storedFormWith is storedForm; with answer not nil a spectrum result's
// whole JSON (its plot series in it) is set there too (nil for other
// results).
func (ra RunAnalysis) storedFormWith(answer *[]byte) (store.AnalysisResult, error) {
	r := store.AnalysisResult{AttachmentID: ra.Attachment.ID}
	if ra.Err != nil {
		r.Error = ra.Err.Error()
		return r, nil
	}
	if ra.Spectrum != nil {
		// Encoded into a pooled buffer (a whole-spectrum result is about
		// 35 kB without its plot series): the string is its only copy.
		// The series are stored apart, compactly (about 30 kB instead of
		// 80 kB of text; spectrum.AppendJSONSplit).
		bp := resultBufPool.Get().(*[]byte)
		buf := bytes.NewBuffer((*bp)[:0])
		var err error
		if answer != nil {
			r.Series, *answer, err = encodeSpectrumResultSplitFull(buf, ra.Spectrum)
		} else {
			r.Series, err = encodeSpectrumResultSplit(buf, nil, ra.Spectrum)
		}
		r.Result = buf.String()
		if b := buf.Bytes(); cap(b) <= 1<<20 {
			*bp = b[:0]
			resultBufPool.Put(bp)
		}
		if err != nil {
			return r, err
		}
	} else {
		var buf bytes.Buffer
		if err := encodePlain(&buf, ra.Lines); err != nil {
			return r, err
		}
		r.Result = buf.String()
	}
	d := ra.Diag()
	r.TexcK, r.TexcUncK, r.NeM3, r.NeUncM3, r.TgasK = d.ExcitationTemperatureK, d.ExcitationTemperatureUncK,
		d.ElectronDensityM3, d.ElectronDensityUncM3, d.GasTemperatureK
	if d.GasTemperatureSource != "two-line" {
		r.TgasK = nil // only a solved gas temperature is a result
	}
	var worst diag.Severity
	r.NWarnings, worst = diag.CountWarnings(d.Flags)
	r.WarnWorst = string(worst)
	return r, nil
}

// ReanalyzeRun analyses all of a run's attachments with st and stores the
// outcome as a new analysis version (earlier versions are kept). A
// signed-off run is refused (409): its numbers are what the reviewer
// approved until a reviewer reopens it.
func (s *Server) ReanalyzeRun(ctx context.Context, runID int64, st AnalysisSettings, userID *int64, reason string) (int, error) {
	return s.reanalyzeRunWith(ctx, runID, st, userID, reason, false)
}

// reanalyzeRunWith is ReanalyzeRun; with keepApproved a signed-off run gets its
// new version too (bulk reanalysis that a reviewer extended to signed-off
// runs), and the store keeps the approved version as the one shown.
//
// The files are analysed outside the write transaction (a long time series
// takes a while, and other writers wait for the lock); inside it the run's
// files are listed again — the transaction holds the write lock from
// BEGIN, so that list is final — and any file committed in the meantime is
// analysed there, before the version is stored. Every version therefore
// holds exactly the files committed before it.
func (s *Server) reanalyzeRunWith(ctx context.Context, runID int64, st AnalysisSettings, userID *int64, reason string, keepApproved bool) (int, error) {
	before, err := s.DB.Attachments(ctx, runID)
	if err != nil {
		return 0, err
	}
	return s.reanalyzeRunFiles(ctx, runID, before, st, userID, reason, keepApproved)
}

// reanalyzeRunFiles is reanalyzeRunWith with the run's files listed
// already (before, without content: it is read here in one query). The
// results are encoded before the write too, so that the write only
// checks the file list and inserts.
func (s *Server) reanalyzeRunFiles(ctx context.Context, runID int64, before []store.Attachment, st AnalysisSettings, userID *int64, reason string, keepApproved bool) (int, error) {
	w, err := s.prepareReanalysis(ctx, runID, before, st, userID, reason, keepApproved)
	if err != nil {
		return 0, err
	}
	if err := s.DB.InGroupTx(ctx, w.write(ctx)); err != nil {
		return 0, err
	}
	return w.version, nil
}

// reanalysisWrite is a reanalysis of one run analysed outside the write
// lock, ready to be stored by store (inside a write transaction, e.g. a
// group commit), which sets version.
type reanalysisWrite struct {
	s            *Server
	runID        int64
	given, st    AnalysisSettings
	results      []RunAnalysis
	userID       *int64
	reason       string
	keepApproved bool
	version      int
}

// prepareReanalysis analyses a run's files (listed in before) outside the
// write transaction.
func (s *Server) prepareReanalysis(ctx context.Context, runID int64, before []store.Attachment, st AnalysisSettings, userID *int64, reason string, keepApproved bool) (*reanalysisWrite, error) {
	if err := st.Validate(); err != nil {
		return nil, err
	}
	contents, err := s.DB.RunContents(ctx, runID)
	if err != nil {
		return nil, err
	}
	before = slices.Clone(before)
	for i := range before {
		if before[i].Content == nil {
			before[i].Content = contents[before[i].ID]
		}
	}
	given := st
	if err := s.fillFromLineTables(ctx, before, &st); err != nil {
		return nil, err
	}
	if err := st.Validate(); err != nil {
		return nil, err
	}
	if err := checkRouteFiles(st, before); err != nil {
		return nil, err
	}
	st.CalibrationFiles = calibrationFiles(before)
	results, err := s.analyzeAttachments(ctx, before, st)
	if err != nil {
		return nil, err
	}
	for i := range results {
		if err := results[i].encode(); err != nil {
			return nil, err
		}
	}
	return &reanalysisWrite{s: s, runID: runID, given: given, st: st, results: results, userID: userID,
		reason: reason, keepApproved: keepApproved}, nil
}

// write returns the function that stores the version inside a write
// transaction (InGroupTx, GroupTx), which holds the write lock: the run's
// files are listed again there — that list is final — and any file
// committed in the meantime (or added by a write grouped before this one)
// is analysed there, before the version is stored. Every version
// therefore holds exactly the files committed before it.
func (w *reanalysisWrite) write(ctx context.Context) func(tx *sql.Tx) error {
	return func(tx *sql.Tx) error { return w.store(ctx, tx) }
}

func (w *reanalysisWrite) store(ctx context.Context, tx *sql.Tx) error {
	s, runID, st, results := w.s, w.runID, w.st, w.results
	if err := s.checkNotSignedOffTx(ctx, tx, runID, w.keepApproved); err != nil {
		return err
	}
	now, err := s.DB.AttachmentsTx(ctx, tx, runID)
	if err != nil {
		return err
	}
	if !analysable(now) {
		return badRequest("no spectrum or line table to analyse")
	}
	// Line tables fill unset settings: their content is read through tx
	// (a line table of a write grouped before this one is not committed).
	for i := range now {
		if now[i].Kind == store.KindLineTable {
			if now[i].Content, err = s.DB.AttachmentContentTx(ctx, tx, now[i].ID); err != nil {
				return err
			}
		}
	}
	final := w.given
	if err := s.fillFromLineTables(ctx, now, &final); err != nil {
		return err
	}
	if err := final.Validate(); err != nil {
		return err
	}
	if err := checkRouteFiles(final, now); err != nil {
		return err
	}
	final.CalibrationFiles = calibrationFiles(now)
	if !sameSettings(final, st) {
		// A dark or response file (which applies to every spectrum) or a
		// line table that fills a setting arrived meanwhile: all files are
		// analysed again, with the settings the version will store.
		st = final
		if results, err = s.analyzeAttachmentsWith(ctx, tx, now, st); err != nil {
			return err
		}
	} else {
		results, err = s.completeResults(ctx, tx, results, now, st)
		if err != nil {
			return err
		}
	}
	na, err := toNewAnalysis(st, results, w.userID, w.reason)
	if err != nil {
		return err
	}
	w.version, err = s.DB.AddAnalysisTx(ctx, tx, runID, na)
	return err
}

// sameSettings reports whether two settings are the same (as stored).
func sameSettings(a, b AnalysisSettings) bool {
	ja, err1 := json.Marshal(a)
	jb, err2 := json.Marshal(b)
	return err1 == nil && err2 == nil && bytes.Equal(ja, jb)
}

// completeResults brings results computed from an earlier file list up to
// the list now: results of files no longer there are dropped, files not
// yet analysed are analysed (with now's dark and response files as their
// context).
func (s *Server) completeResults(ctx context.Context, tx *sql.Tx, results []RunAnalysis, now []store.Attachment, st AnalysisSettings) ([]RunAnalysis, error) {
	present := map[int64]bool{}
	for _, a := range now {
		present[a.ID] = true
	}
	done := map[int64]bool{}
	kept := results[:0]
	for _, ra := range results {
		if present[ra.Attachment.ID] {
			kept = append(kept, ra)
			done[ra.Attachment.ID] = true
		}
	}
	var missing []store.Attachment
	for _, a := range now {
		switch a.Kind {
		case store.KindDark, store.KindResponse:
			missing = append(missing, a) // context only, never a result
		case store.KindSpectrum, store.KindLineTable:
			if !done[a.ID] {
				missing = append(missing, a)
			}
		}
	}
	if !analysable(missing) {
		return kept, nil
	}
	more, err := s.analyzeAttachmentsWith(ctx, tx, missing, st)
	if err != nil {
		return nil, err
	}
	return append(kept, more...), nil
}

// checkNotSignedOffTx refuses, inside the write transaction, a new version
// of a signed-off run (unless keepApproved: the store then keeps the
// approved version as the one shown).
func (s *Server) checkNotSignedOffTx(ctx context.Context, tx *sql.Tx, runID int64, keepApproved bool) error {
	status, approved, err := s.DB.RunStatusTx(ctx, tx, runID)
	if err != nil {
		return err
	}
	if status == store.StatusSignedOff && !keepApproved {
		return signedOffError(runID, approved)
	}
	return nil
}

// signedOffError is the 409 answer to changing a signed-off run's numbers.
func signedOffError(runID int64, approved *int) error {
	v := "its approved analysis version"
	if approved != nil && *approved > 0 {
		v = fmt.Sprintf("approved analysis version %d", *approved)
	}
	return &userError{http.StatusConflict, fmt.Sprintf(
		"run %d is signed off (%s): its numbers cannot change; a reviewer can reopen it first (with a reason)", runID, v)}
}

// ReanalyzeRunTx adds a new analysis version inside the caller's write
// transaction, for requests that store a run's files and their analysis at
// once. atts are the files the caller added in tx (with their content);
// the run's full file list is read inside tx, so files committed by
// concurrent requests are never left out.
func (s *Server) ReanalyzeRunTx(ctx context.Context, tx *sql.Tx, runID int64, atts []store.Attachment, st AnalysisSettings, userID *int64, reason string) (int, []RunAnalysis, error) {
	return s.reanalyzeRunTxPre(ctx, tx, runID, atts, nil, st, userID, reason)
}

// preAnalysis is the analysis of new files made before their write
// transaction (outside the write lock): results[i] is that of the i-th
// added attachment (its ID not known yet), computed with settings, which
// include the dark and response files then committed.
type preAnalysis struct {
	settings AnalysisSettings
	results  []RunAnalysis
}

// analyzeBefore analyses new spectra outside the write transaction with
// the settings their version would have if nothing changed meanwhile: st
// filled from the run's committed line tables, with its committed dark and
// response files. Inside the transaction reanalyzeRunTxPre uses these
// results only if the settings it computes there are the same. With
// answer, each result's whole JSON is kept for the API answer too
// (encodeAnswer); without, only its stored form (encode).
func (s *Server) analyzeBefore(ctx context.Context, runID int64, added []store.Attachment, st AnalysisSettings, answer bool) (*preAnalysis, error) {
	for _, a := range added {
		if a.Kind != store.KindSpectrum {
			return nil, nil // a new dark, response or line table changes the settings
		}
	}
	committed, err := s.DB.Attachments(ctx, runID)
	if err != nil {
		return nil, err
	}
	if err := s.fillFromLineTables(ctx, committed, &st); err != nil {
		return nil, err
	}
	if err := st.Validate(); err != nil {
		return nil, nil // reported inside, as before
	}
	st.CalibrationFiles = calibrationFiles(committed)
	var calib []store.Attachment
	for _, a := range committed {
		if a.Kind == store.KindDark || a.Kind == store.KindResponse {
			calib = append(calib, a)
		}
	}
	// A batch is analysed by up to GOMAXPROCS goroutines (each with the
	// run's dark and response files as context), so one client's batch
	// uses every core.
	parts := min(runtime.GOMAXPROCS(0), len(added))
	chunk := (len(added) + parts - 1) / parts
	out := make([][]RunAnalysis, parts)
	errs := make([]error, parts)
	var wg sync.WaitGroup
	for p := range parts {
		lo, hi := p*chunk, min((p+1)*chunk, len(added))
		if lo >= hi {
			continue
		}
		wg.Add(1)
		go func() {
			defer wg.Done()
			atts := append(slices.Clone(calib), added[lo:hi]...)
			out[p], errs[p] = s.analyzeAttachments(ctx, atts, st)
			for i := range out[p] {
				switch {
				case errs[p] != nil:
				case answer:
					errs[p] = out[p][i].encodeAnswer()
				default:
					errs[p] = out[p][i].encode()
				}
			}
		}()
	}
	wg.Wait()
	var results []RunAnalysis
	for p := range parts {
		if errs[p] != nil {
			var ue *userError
			if errors.As(errs[p], &ue) {
				return nil, nil // a bad dark or response file: reported inside
			}
			return nil, errs[p]
		}
		results = append(results, out[p]...)
	}
	if len(results) != len(added) {
		return nil, fmt.Errorf("server: %d results for %d new files", len(results), len(added))
	}
	return &preAnalysis{settings: st, results: results}, nil
}

// reanalyzeRunTxPre is ReanalyzeRunTx with the new files' results computed
// beforehand (pre, or nil): they are used when the settings inside tx are
// those they were computed with; otherwise the files are analysed inside.
func (s *Server) reanalyzeRunTxPre(ctx context.Context, tx *sql.Tx, runID int64, atts []store.Attachment, pre *preAnalysis, st AnalysisSettings, userID *int64, reason string) (int, []RunAnalysis, error) {
	if err := st.Validate(); err != nil {
		return 0, nil, err
	}
	all, err := s.DB.AttachmentsTx(ctx, tx, runID)
	if err != nil {
		return 0, nil, err
	}
	content := make(map[int64][]byte, len(atts))
	for _, a := range atts {
		if a.Content != nil {
			content[a.ID] = a.Content
		}
	}
	for i := range all {
		all[i].Content = content[all[i].ID]
		if all[i].Content == nil && all[i].Kind == store.KindLineTable {
			// Line tables are small and always analysed again (below);
			// their content also fills unset settings.
			if all[i].Content, err = s.DB.AttachmentContentTx(ctx, tx, all[i].ID); err != nil {
				return 0, nil, err
			}
		}
	}
	if err := s.fillFromLineTables(ctx, all, &st); err != nil {
		return 0, nil, err
	}
	if err := st.Validate(); err != nil {
		return 0, nil, err
	}
	if err := checkRouteFiles(st, all); err != nil {
		return 0, nil, err
	}
	st.CalibrationFiles = calibrationFiles(all)
	// Adding data to a run with unchanged settings and calibration files
	// reuses the stored results of its other files: only new spectra are
	// analysed, so a long time series grows in linear time.
	reused, toAnalyze, err := s.reusableResults(ctx, tx, runID, all, st)
	if err != nil {
		return 0, nil, err
	}
	var results []RunAnalysis
	if pre != nil && len(pre.results) == len(atts) && sameSettings(pre.settings, st) {
		done := make(map[int64]RunAnalysis, len(atts))
		for i, a := range atts {
			ra := pre.results[i]
			ra.Attachment = a
			ra.Attachment.Content = nil
			done[a.ID] = ra
		}
		rest := toAnalyze[:0:0]
		for _, a := range toAnalyze {
			if ra, ok := done[a.ID]; ok {
				results = append(results, ra)
			} else {
				rest = append(rest, a)
			}
		}
		toAnalyze = rest
	}
	if analysable(toAnalyze) {
		more, err := s.analyzeAttachmentsWith(ctx, tx, toAnalyze, st)
		if err != nil {
			return 0, nil, err
		}
		results = append(more, results...)
		// file order, as when all are analysed here
		pos := make(map[int64]int, len(all))
		for i, a := range all {
			pos[a.ID] = i
		}
		slices.SortStableFunc(results, func(a, b RunAnalysis) int { return pos[a.Attachment.ID] - pos[b.Attachment.ID] })
	}
	na, err := toNewAnalysis(st, results, userID, reason)
	if err != nil {
		return 0, nil, err
	}
	na.Results = append(reused, na.Results...)
	v, err := s.DB.AddAnalysisTx(ctx, tx, runID, na)
	return v, results, err
}

// latestSettingsTx returns, inside tx, the settings of a run's newest
// analysis version, or the run's defaults when it has none (read inside
// the write transaction, so a concurrent reanalysis's settings are not
// undone by an upload that read them before it).
func (s *Server) latestSettingsTx(ctx context.Context, tx *sql.Tx, r store.Run) (AnalysisSettings, error) {
	sj, err := s.DB.LatestSettingsTx(ctx, tx, r.ID)
	st, err := decodeSettings(r, sj, err)
	st.CalibrationFiles = nil // recomputed from the files
	return st, err
}

// decodeSettings turns a run's stored latest settings (sj, err as the
// store returns them) into AnalysisSettings: the run's defaults when it has
// no analysis yet.
func decodeSettings(r store.Run, sj string, err error) (AnalysisSettings, error) {
	if errors.Is(err, store.ErrNotFound) {
		return DefaultSettings(r), nil
	}
	if err != nil {
		return AnalysisSettings{}, err
	}
	var st AnalysisSettings
	if err := json.Unmarshal([]byte(sj), &st); err != nil {
		return AnalysisSettings{}, fmt.Errorf("server: settings of run %d: %w", r.ID, err)
	}
	return st, nil
}

// reusableResults splits atts into spectra whose newest stored result can be
// kept (same settings — including the same dark and response files,
// st.CalibrationFiles — and the same engine) and the rest, which are
// analysed; dark and response files always go along as their context.
func (s *Server) reusableResults(ctx context.Context, tx *sql.Tx, runID int64, atts []store.Attachment, st AnalysisSettings) ([]store.AnalysisResult, []store.Attachment, error) {
	settings, engine, prev, err := s.DB.LatestResultsTx(ctx, tx, runID)
	if errors.Is(err, store.ErrNotFound) {
		return nil, atts, nil
	}
	if err != nil {
		return nil, nil, err
	}
	sj, err := json.Marshal(st)
	if err != nil {
		return nil, nil, err
	}
	if settings != string(sj) || engine != diag.EngineVersion {
		return nil, atts, nil
	}
	old := map[int64]store.AnalysisResult{}
	for _, r := range prev {
		if r.Error == "" {
			old[r.AttachmentID] = r
		}
	}
	var reused []store.AnalysisResult
	var rest []store.Attachment
	for _, a := range atts {
		// Only spectra are reused (their fits are what costs); line tables
		// are cheap and always analysed again, so that a result stored
		// before their settings were applied is never carried forward.
		if r, ok := old[a.ID]; ok && a.Kind == store.KindSpectrum {
			reused = append(reused, r)
			continue
		}
		rest = append(rest, a)
	}
	return reused, rest, nil
}

// calibrationFiles lists the dark and response attachments among atts.
func calibrationFiles(atts []store.Attachment) []int64 {
	var ids []int64
	for _, a := range atts {
		if a.Kind == store.KindDark || a.Kind == store.KindResponse {
			ids = append(ids, a.ID)
		}
	}
	slices.Sort(ids)
	return ids
}

// analyzeAttachmentsWith analyses attachments inside a transaction: new
// ones come with their content, stored ones are loaded through tx (which
// sees the files of the writes grouped before it in the same transaction,
// not committed yet).
func (s *Server) analyzeAttachmentsWith(ctx context.Context, tx *sql.Tx, atts []store.Attachment, st AnalysisSettings) ([]RunAnalysis, error) {
	atts = slices.Clone(atts)
	for i := range atts {
		if atts[i].Content != nil {
			continue
		}
		var err error
		if atts[i].Content, err = s.DB.AttachmentContentTx(ctx, tx, atts[i].ID); err != nil {
			return nil, err
		}
	}
	return s.analyzeAttachments(ctx, atts, st)
}

// content returns an attachment's bytes, loading them when not given.
func (s *Server) content(ctx context.Context, a store.Attachment) ([]byte, error) {
	if a.Content != nil {
		return a.Content, nil
	}
	full, err := s.DB.AttachmentContent(ctx, a.ID)
	return full.Content, err
}
