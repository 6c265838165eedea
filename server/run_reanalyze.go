package server

import (
	"fmt"
	"net/http"
	"sort"
	"strconv"
	"strings"

	"github.com/a-h/templ"
	"github.com/labstack/echo/v4"
	"github.com/labstack/echo/v4/middleware"

	"glowlog/diag"
	"glowlog/store"
	"glowlog/views"
)

// canReanalyze: the run's operator, reviewers and admins may add analysis
// versions (a reanalysis never changes an earlier version).
// A signed-off run is refused (409): its numbers are the approved ones
// until a reviewer reopens it.
func canReanalyze(u *store.User, r store.Run) error {
	if u == nil || (u.ID != r.OperatorID && !u.Role.Can(store.RoleReviewer)) {
		return echo.NewHTTPError(http.StatusForbidden, "only the run's operator, a reviewer or an admin can reanalyse this run")
	}
	if r.Status == store.StatusSignedOff {
		return signedOffError(r.ID, r.ApprovedVersion)
	}
	return nil
}

// lineName is the short name of a Balmer line.
func lineName(upper int) string {
	greek := map[int]string{3: "Hα", 4: "Hβ", 5: "Hγ", 6: "Hδ", 7: "Hε"}
	if g, ok := greek[upper]; ok {
		return g
	}
	return fmt.Sprintf("H n=%d", upper)
}

// starkUppers are the lines that have Stark relations, ascending.
func starkUppers() []int {
	seen := map[int]bool{}
	var out []int
	for _, r := range diag.StarkRelations {
		if !seen[r.Upper] {
			seen[r.Upper] = true
			out = append(out, r.Upper)
		}
	}
	sort.Ints(out)
	return out
}

func fmtZero(v float64) string {
	if v == 0 {
		return ""
	}
	return strconv.FormatFloat(v, 'g', -1, 64)
}

// reanalyzeFormProps builds the reanalysis form pre-filled with st (the
// settings of version, 0 when the run has none yet).
func (s *Server) reanalyzeFormProps(c echo.Context, r store.Run, st AnalysisSettings, version int) (views.ReanalyzeFormProps, error) {
	p := views.ReanalyzeFormProps{RunID: r.ID, Version: version, Perturbers: perturberOptions()}
	if tok, ok := c.Get(middleware.DefaultCSRFConfig.ContextKey).(string); ok {
		p.CSRF = tok
	}
	var err error
	if p.Instruments, err = s.instrumentOptions(c.Request().Context()); err != nil {
		return p, err
	}
	ex := make([]string, 0, len(st.ExcludeFromBoltzmann))
	for _, n := range st.ExcludeFromBoltzmann {
		ex = append(ex, strconv.Itoa(n))
	}
	pert := st.Perturber
	if pert == "" {
		pert = "none"
	}
	p.Values = views.ReanalyzeValues{InstrumentFWHMNM: fmtZero(st.InstrumentFWHMNM), GasTemperatureK: fmtZero(st.GasTemperatureK),
		GasTemperatureUncK: fmtZero(st.GasTemperatureUncK), SolveGasTemperature: st.SolveGasTemperature,
		PressurePa: fmtZero(st.PressurePa), Perturber: pert, ResponseUnit: st.ResponseUnit, ResponseCorrected: st.ResponseCorrectedUnit,
		SaturationCounts: fmtZero(st.SaturationCounts), Gain: fmtZero(st.GainElectronsPerCount),
		ReadNoise: fmtZero(st.ReadNoiseElectrons), CorrectOffset: st.CorrectOffset, MinSNR: fmtZero(st.MinSNR),
		Exclude: strings.Join(ex, ", "), InstrumentFWHMUncNM: fmtZero(st.InstrumentFWHMUncNM),
		ElectronTemperatureK: fmtZero(st.ElectronTemperatureK), ResponseUncRel: fmtZero(st.ResponseUncRel), LineShape: st.LineShape,
		Route: routeValues(st.Model, st.WholeAreas, st.WholeFreeGasTemperature, st.WholeFreeInstrument)}
	if st.InstrumentID != 0 {
		p.Values.InstrumentID = strconv.FormatInt(st.InstrumentID, 10)
	}
	if st.MaxUpper != 0 {
		p.Values.MaxUpper = strconv.Itoa(st.MaxUpper)
	}
	for _, n := range starkUppers() {
		sc := views.StarkChoice{Upper: n, Line: lineName(n), Selected: st.StarkRelations[n]}
		def, _ := diag.DefaultStarkRelation(n)
		for _, rel := range diag.StarkRelations {
			if rel.Upper != n {
				continue
			}
			label := rel.ID + " (" + rel.Kind.String()
			if rel.ID == def.ID {
				label += ", default"
			}
			label += ", " + rel.Status
			sc.Options = append(sc.Options, views.Option{Value: rel.ID, Label: label + ")"})
		}
		p.Stark = append(p.Stark, sc)
	}
	return p, nil
}

// reanalyzeFormFor is the reanalysis form for the run page (nil when the
// user may not reanalyse this run).
func (s *Server) reanalyzeFormFor(c echo.Context, r store.Run) (templ.Component, error) {
	if canReanalyze(currentUser(c), r) != nil {
		return nil, nil
	}
	st, err := s.latestSettings(c, r)
	if err != nil {
		return nil, err
	}
	p, err := s.reanalyzeFormProps(c, r, st, r.AnalysisVersion)
	if err != nil {
		return nil, err
	}
	return views.ReanalyzeForm(p), nil
}

// uploadFormFor is the add-data form for the run page (nil when the user
// may not change this run).
func (s *Server) uploadFormFor(c echo.Context, r store.Run) templ.Component {
	if canChangeRun(currentUser(c), r) != nil {
		return nil
	}
	p := views.UploadFormProps{RunID: r.ID, MaxFileMB: store.MaxAttachmentBytes >> 20, Uppers: upperOptions()}
	if tok, ok := c.Get(middleware.DefaultCSRFConfig.ContextKey).(string); ok {
		p.CSRF = tok
	}
	return views.UploadForm(p)
}

// bindReanalyze reads the reanalysis form over base (fields not on the
// form, such as the isotope, are kept). An empty number field means
// "not set" (0).
func bindReanalyze(c echo.Context, base AnalysisSettings) (AnalysisSettings, string, error) {
	st := base
	num := func(label, key string, dst *float64) error {
		v := strings.TrimSpace(c.FormValue(key))
		if v == "" {
			*dst = 0
			return nil
		}
		x, err := strconv.ParseFloat(strings.Replace(v, ",", ".", 1), 64)
		if err != nil {
			return formUserError("%s: %q is not a number", label, v)
		}
		*dst = x
		return nil
	}
	for _, f := range []struct {
		label, key string
		dst        *float64
	}{{"instrument FWHM (nm)", "instrument_fwhm_nm", &st.InstrumentFWHMNM}, {"gas temperature (K)", "gas_temperature_k", &st.GasTemperatureK},
		{"gas temperature σ (K)", "gas_temperature_unc_k", &st.GasTemperatureUncK}, {"pressure (Pa)", "pressure_pa", &st.PressurePa},
		{"saturation (counts)", "saturation_counts", &st.SaturationCounts}, {"gain (e⁻/count)", "gain_e_per_count", &st.GainElectronsPerCount},
		{"read noise (e⁻)", "read_noise_e", &st.ReadNoiseElectrons}, {"minimum SNR", "min_snr", &st.MinSNR},
		{"instrument FWHM σ (nm)", "instrument_fwhm_unc_nm", &st.InstrumentFWHMUncNM},
		{"electron temperature (K)", "electron_temperature_k", &st.ElectronTemperatureK},
		{"response calibration σ (relative)", "response_unc_rel", &st.ResponseUncRel}} {
		if err := num(f.label, f.key, f.dst); err != nil {
			return st, "", err
		}
	}
	st.InstrumentID = 0
	if v := strings.TrimSpace(c.FormValue("instrument_id")); v != "" {
		id, err := strconv.ParseInt(v, 10, 64)
		if err != nil || id <= 0 {
			return st, "", formUserError("instrument function: %q is not a valid choice", v)
		}
		st.InstrumentID = id
	}
	st.SolveGasTemperature = c.FormValue("solve_gas_temperature") != ""
	st.CorrectOffset = c.FormValue("correct_offset") != ""
	st.Perturber = strings.TrimSpace(c.FormValue("perturber"))
	if v := strings.TrimSpace(c.FormValue("line_shape")); v != "" {
		st.LineShape = v // absent: the version's line shape is kept
	}
	// The route: absent keeps the version's, "" is the pipeline's
	// default. The whole-fit options: an unticked box is off; an absent
	// area choice (a disabled field) keeps the version's. Options carried
	// over are dropped when the route is lines; given ones are refused
	// then (route.go).
	form, _ := c.FormParams()
	if form.Has("model") {
		st.Model = strings.TrimSpace(form.Get("model"))
	}
	if form.Has("whole_areas") {
		st.WholeAreas = strings.TrimSpace(form.Get("whole_areas"))
	}
	givenWhole := form.Has("whole_areas") && st.WholeAreas != ""
	st.WholeFreeGasTemperature = c.FormValue("whole_free_gas_temperature") != ""
	st.WholeFreeInstrument = c.FormValue("whole_free_instrument") != ""
	givenWhole = givenWhole || st.WholeFreeGasTemperature || st.WholeFreeInstrument
	st.dropWholeOptions(givenWhole)
	st.ResponseUnit = strings.TrimSpace(c.FormValue("response_unit"))
	st.ResponseCorrectedUnit = strings.TrimSpace(c.FormValue("response_corrected_unit"))
	st.MaxUpper = 0
	if v := strings.TrimSpace(c.FormValue("max_upper")); v != "" {
		n, err := strconv.Atoi(v)
		if err != nil {
			return st, "", formUserError("highest Balmer member: %q is not a whole number", v)
		}
		st.MaxUpper = n
	}
	st.StarkRelations = nil
	for _, n := range starkUppers() {
		if id := strings.TrimSpace(c.FormValue(fmt.Sprintf("stark_%d", n))); id != "" {
			if st.StarkRelations == nil {
				st.StarkRelations = map[int]string{}
			}
			st.StarkRelations[n] = id
		}
	}
	st.ExcludeFromBoltzmann = nil
	seen := map[int]bool{}
	for _, w := range strings.FieldsFunc(c.FormValue("exclude_from_boltzmann"), func(r rune) bool { return r == ',' || r == ' ' || r == ';' }) {
		n, err := strconv.Atoi(w)
		if err != nil || n < 3 || n > diag.MaxLevel {
			return st, "", formUserError("exclude from the Boltzmann fit: %q is not an upper level 3…%d", w, diag.MaxLevel)
		}
		if !seen[n] {
			seen[n] = true
			st.ExcludeFromBoltzmann = append(st.ExcludeFromBoltzmann, n)
		}
	}
	sort.Ints(st.ExcludeFromBoltzmann)
	reason := strings.TrimSpace(c.FormValue("reason"))
	if reason == "" {
		return st, "", formUserError("reason: say briefly why this reanalysis is made (it is kept with the version)")
	}
	if len(reason) > 500 {
		return st, "", formUserError("reason: at most 500 characters")
	}
	return st, reason, nil
}

// reanalyzeRun is POST /runs/:id/reanalyze: a new analysis version with
// the form's settings; earlier versions are kept.
func (s *Server) reanalyzeRun(c echo.Context) error {
	ctx := c.Request().Context()
	r, err := s.runFromPath(c)
	if err != nil {
		return err
	}
	id := r.ID
	u := currentUser(c)
	if err := canReanalyze(u, r); err != nil {
		return err
	}
	base, err := s.latestSettings(c, r)
	if err != nil {
		return err
	}
	st, reason, err := bindReanalyze(c, base)
	if err != nil {
		return err
	}
	if err := st.Validate(); err != nil {
		return err
	}
	if st.InstrumentID != 0 {
		if _, err := s.DB.Instrument(ctx, st.InstrumentID); err != nil {
			return formUserError("instrument function: no stored instrument function %d", st.InstrumentID)
		}
	}
	v, err := s.ReanalyzeRun(ctx, id, st, &u.ID, reason)
	if err != nil {
		return err
	}
	msg := fmt.Sprintf("Analysis version %d stored. Earlier versions are kept.", v)
	if a, err := s.DB.AnalysisVersion(ctx, id, v); err == nil {
		failed := 0
		for _, res := range a.Results {
			if res.Error != "" {
				failed++
			}
		}
		if failed > 0 {
			msg += fmt.Sprintf(" %d of %d file(s) could not be analysed with these settings (see the version's results).", failed, len(a.Results))
		}
	}
	flash(c, msg)
	return c.Redirect(http.StatusSeeOther, fmt.Sprintf("/runs/%d?v=%d", id, v))
}
