package server

import (
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"net/http"
	"strconv"
	"strings"
	"time"

	"github.com/labstack/echo/v4"

	"glowlog/diag"
	"glowlog/store"
	"glowlog/views"
)

// runForm is the new/edit run form as submitted (strings, so that a
// rejected form comes back exactly as typed).
type runForm struct {
	Title, StartedAt, SourceType               string
	ChamberID, NewChamber, RecipeID, NewRecipe string
	GasMixture, PressurePa, PowerW, Flows      string
	GapMM, GratingLMM, SlitUM, IntegrationMS   string
	InstrumentFWHMNM, InstrumentID             string
	GasTemperatureK, Perturber, Notes, Tags    string
	ResponseUnit, LineTable                    string
	// Lines are the typed line table's rows, LineUnit its intensity unit.
	Lines    []views.LineRow
	LineUnit string
	// PressureUnit is the unit PressurePa was typed in (Pa, mbar, Torr).
	PressureUnit string
	// LineShape is the window fit's line model: "", "stark" or "voigt".
	LineShape string
	// Model is the analysis route ("", "whole" or "lines"); WholeAreas,
	// WholeFreeGas and WholeFreeInstrument the whole-fit options.
	Model, WholeAreas         string
	WholeFreeGas, WholeFreeIn bool
}

// newLineRows is the number of empty rows the line table starts with.
const newLineRows = 4

// maxLineRows bounds the typed line table (diag.MaxLevel upper levels).
const maxLineRows = diag.MaxLevel

// bindLineRows reads the typed line table's rows (parallel fields
// lt_upper, lt_intensity, lt_intensity_unc, lt_fwhm, lt_fwhm_unc).
func bindLineRows(c echo.Context) []views.LineRow {
	form, err := c.FormParams()
	if err != nil {
		return nil
	}
	col := func(k string, i int) string {
		if v := form[k]; i < len(v) {
			return strings.TrimSpace(v[i])
		}
		return ""
	}
	n := len(form["lt_upper"])
	for _, k := range []string{"lt_intensity", "lt_intensity_unc", "lt_fwhm", "lt_fwhm_unc"} {
		n = max(n, len(form[k]))
	}
	n = min(n, maxLineRows)
	rows := make([]views.LineRow, n)
	for i := range rows {
		rows[i] = views.LineRow{Upper: col("lt_upper", i), Intensity: col("lt_intensity", i),
			IntensityUnc: col("lt_intensity_unc", i), FWHM: col("lt_fwhm", i), FWHMUnc: col("lt_fwhm_unc", i)}
	}
	return rows
}

// lineTableJSON turns the typed rows into a measurement set (the JSON that
// glowlog analyze reads); nil when every row is empty. A problem names the
// row and the field.
func lineTableJSON(unit string, rows []views.LineRow) ([]byte, error) {
	type line struct {
		Upper        int      `json:"upper_level"`
		Intensity    *float64 `json:"intensity,omitempty"`
		IntensityUnc *float64 `json:"intensity_unc,omitempty"`
		FWHM         *float64 `json:"fwhm_nm,omitempty"`
		FWHMUnc      *float64 `json:"fwhm_unc_nm,omitempty"`
	}
	if unit == "" {
		unit = "photon"
	}
	if unit != "photon" && unit != "energy" {
		return nil, formUserError("line table: intensity unit %q is not photon or energy", unit)
	}
	var lines []line
	seen := map[int]int{}
	for i, r := range rows {
		if r == (views.LineRow{}) {
			continue
		}
		row := fmt.Sprintf("line table, row %d", i+1)
		if r.Upper == "" {
			return nil, formUserError("%s: choose the line (upper level)", row)
		}
		n, err := strconv.Atoi(r.Upper)
		if err != nil || n < 3 || n > diag.MaxLevel {
			return nil, formUserError("%s: %q is not a Balmer upper level (3 to %d)", row, r.Upper, diag.MaxLevel)
		}
		if j, dup := seen[n]; dup {
			return nil, formUserError("%s: the line n = %d is already in row %d", row, n, j)
		}
		seen[n] = i + 1
		l := line{Upper: n}
		for _, fl := range []struct {
			label, v string
			dst      **float64
		}{{"intensity", r.Intensity, &l.Intensity}, {"intensity σ", r.IntensityUnc, &l.IntensityUnc},
			{"FWHM (nm)", r.FWHM, &l.FWHM}, {"FWHM σ (nm)", r.FWHMUnc, &l.FWHMUnc}} {
			if *fl.dst, err = optFloat(row+": "+fl.label, fl.v); err != nil {
				return nil, err
			}
		}
		if l.Intensity == nil && l.FWHM == nil {
			return nil, formUserError("%s: give an intensity, a FWHM or both", row)
		}
		lines = append(lines, l)
	}
	if len(lines) == 0 {
		return nil, nil
	}
	return json.MarshalIndent(struct {
		Unit  string `json:"intensity_unit"`
		Lines []line `json:"lines"`
	}{unit, lines}, "", "  ")
}

// upperOptions are the line table's choices: the Balmer lines by name
// with their upper level.
func upperOptions() []views.Option {
	var out []views.Option
	for n := 3; n <= 12; n++ {
		t, err := diag.Balmer(n, diag.Hydrogen)
		if err != nil {
			continue
		}
		out = append(out, views.Option{Value: strconv.Itoa(n), Label: fmt.Sprintf("%s (n = %d)", t.Name(), n)})
	}
	return out
}

func bindRunForm(c echo.Context) runForm {
	v := func(k string) string { return strings.TrimSpace(c.FormValue(k)) }
	f := runForm{Title: v("title"), StartedAt: v("started_at"), SourceType: v("source_type"),
		ChamberID: v("chamber_id"), NewChamber: v("new_chamber"), RecipeID: v("recipe_id"), NewRecipe: v("new_recipe"),
		GasMixture: v("gas_mixture"), PressurePa: v("pressure_pa"), PowerW: v("power_w"), Flows: v("flows"),
		GapMM: v("gap_mm"), GratingLMM: v("grating_lmm"), SlitUM: v("slit_um"), IntegrationMS: v("integration_ms"),
		InstrumentFWHMNM: v("instrument_fwhm_nm"), InstrumentID: v("instrument_id"), GasTemperatureK: v("gas_temperature_k"),
		Perturber: v("perturber"), Notes: c.FormValue("notes"), Tags: v("tags"), ResponseUnit: v("response_unit"),
		LineTable: c.FormValue("line_table"), Lines: bindLineRows(c), LineUnit: v("lt_unit"), PressureUnit: v("pressure_unit"),
		LineShape: v("line_shape"), Model: v("model"), WholeAreas: v("whole_areas"),
		WholeFreeGas: v("whole_free_gas_temperature") != "", WholeFreeIn: v("whole_free_instrument") != ""}
	// The pressure is typed with its unit; a form that sends pressure_pa
	// (as before the unit choice) gives it in Pa.
	if form, err := c.FormParams(); err == nil && form.Has("pressure") {
		f.PressurePa = v("pressure")
	} else {
		f.PressureUnit = "Pa"
	}
	return f
}

// formUserError is a rejected form field (422, shown on the form).
func formUserError(format string, a ...any) error {
	return &userError{http.StatusUnprocessableEntity, sprintf(format, a...)}
}

// optFloat parses an optional number field ("" is nil; a decimal comma
// is accepted).
func optFloat(label, v string) (*float64, error) {
	v = strings.TrimSpace(v)
	if v == "" {
		return nil, nil
	}
	x, err := strconv.ParseFloat(strings.Replace(v, ",", ".", 1), 64)
	if err != nil {
		return nil, formUserError("%s: %q is not a number", label, v)
	}
	return &x, nil
}

func optID(label, v string) (*int64, error) {
	v = strings.TrimSpace(v)
	if v == "" {
		return nil, nil
	}
	n, err := strconv.ParseInt(v, 10, 64)
	if err != nil || n <= 0 {
		return nil, formUserError("%s: %q is not a valid choice", label, v)
	}
	return &n, nil
}

// parseStart reads a start time in UTC, as the datetime-local input
// sends it ("2026-03-04T14:05") or typed with a space.
func parseStart(v string) (time.Time, error) {
	for _, layout := range []string{"2006-01-02T15:04", "2006-01-02T15:04:05", "2006-01-02 15:04", "2006-01-02 15:04:05", time.RFC3339} {
		if t, err := time.Parse(layout, v); err == nil {
			return t.UTC(), nil
		}
	}
	if v == "" {
		return time.Time{}, formUserError("start time: required (UTC, like 2026-03-04T14:05)")
	}
	return time.Time{}, formUserError("start time: %q is not a time like 2026-03-04T14:05 (UTC)", v)
}

// input checks the form and returns the store input (validated) or a
// user error naming the field.
func (f runForm) input() (store.RunInput, error) {
	in := store.RunInput{Title: f.Title, SourceType: f.SourceType, GasMixture: f.GasMixture, Flows: f.Flows,
		Notes: strings.TrimSpace(f.Notes)}
	var err error
	if in.StartedAt, err = parseStart(f.StartedAt); err != nil {
		return in, err
	}
	for _, fl := range []struct {
		label, v string
		dst      **float64
	}{{"pressure (" + orPa(f.PressureUnit) + ")", f.PressurePa, &in.PressurePa}, {"power (W)", f.PowerW, &in.PowerW},
		{"electrode gap (mm)", f.GapMM, &in.GapMM}, {"grating (lines/mm)", f.GratingLMM, &in.GratingLMM},
		{"slit (µm)", f.SlitUM, &in.SlitUM}, {"integration time (ms)", f.IntegrationMS, &in.IntegrationMS},
		{"instrument FWHM (nm)", f.InstrumentFWHMNM, &in.InstrumentFWHMNM},
		{"gas temperature (K)", f.GasTemperatureK, &in.GasTemperatureK}} {
		if *fl.dst, err = optFloat(fl.label, fl.v); err != nil {
			return in, err
		}
	}
	unit := orPa(f.PressureUnit)
	pa, ok := store.PressureUnitPa(unit)
	if !ok {
		return in, formUserError("pressure unit: %q is not Pa, mbar or Torr", f.PressureUnit)
	}
	if in.PressurePa != nil {
		*in.PressurePa *= pa
	}
	in.PressureUnit = unit
	if f.NewChamber == "" {
		if in.ChamberID, err = optID("chamber", f.ChamberID); err != nil {
			return in, err
		}
	}
	if f.NewRecipe == "" {
		if in.RecipeID, err = optID("recipe", f.RecipeID); err != nil {
			return in, err
		}
	}
	if in.InstrumentID, err = optID("instrument function", f.InstrumentID); err != nil {
		return in, err
	}
	pt, err := diag.LookupPerturber(f.Perturber)
	if err != nil {
		return in, formUserError("perturber: %s", strings.TrimPrefix(err.Error(), "diag: "))
	}
	in.Perturber = pt.Name
	if len(f.NewChamber) > 100 || len(f.NewRecipe) > 100 {
		return in, formUserError("a new chamber or recipe name may have at most 100 characters")
	}
	if len(in.GasMixture) > 200 || len(in.Flows) > 200 {
		return in, formUserError("gas mixture and flows may have at most 200 characters each")
	}
	if len(in.Notes) > 20000 {
		return in, formUserError("notes may have at most 20 000 characters")
	}
	if f.Tags != "" {
		in.Tags = strings.Split(f.Tags, ",")
	}
	if err := in.Validate(); err != nil {
		return in, err
	}
	return in, nil
}

// checkChoices makes sure that chosen ids exist (a stale form would
// otherwise fail on a foreign key, as an internal error).
func (s *Server) checkChoices(ctx context.Context, in store.RunInput) error {
	has := func(list []store.Named, id int64) bool {
		for _, n := range list {
			if n.ID == id {
				return true
			}
		}
		return false
	}
	if in.ChamberID != nil {
		list, err := s.DB.Chambers(ctx)
		if err != nil {
			return err
		}
		if !has(list, *in.ChamberID) {
			return formUserError("chamber: the chosen chamber no longer exists")
		}
	}
	if in.RecipeID != nil {
		list, err := s.DB.Recipes(ctx)
		if err != nil {
			return err
		}
		if !has(list, *in.RecipeID) {
			return formUserError("recipe: the chosen recipe no longer exists")
		}
	}
	if in.InstrumentID != nil {
		if _, err := s.DB.Instrument(ctx, *in.InstrumentID); err != nil {
			if errors.Is(err, store.ErrNotFound) {
				return formUserError("instrument function: no stored instrument function %d", *in.InstrumentID)
			}
			return err
		}
	}
	return nil
}

// userMessage returns the user-facing message of err, or false for an
// internal error (which goes to the error handler instead).
func userMessage(err error) (string, bool) {
	var ue *userError
	var he *echo.HTTPError
	switch {
	case errors.As(err, &ue):
		return ue.msg, true
	case errors.As(err, &he) && he.Code < 500:
		if m, ok := he.Message.(string); ok {
			return m, true
		}
	case errors.Is(err, store.ErrInvalid):
		m := err.Error()
		if i := strings.Index(m, "store: invalid: "); i >= 0 {
			m = m[:i] + m[i+len("store: invalid: "):]
		}
		return strings.TrimPrefix(m, "store: "), true
	}
	return "", false
}

func fmtOpt(v *float64) string {
	if v == nil {
		return ""
	}
	return strconv.FormatFloat(*v, 'g', -1, 64)
}

func idOpt(v *int64) string {
	if v == nil {
		return ""
	}
	return strconv.FormatInt(*v, 10)
}

func (f runForm) view() views.RunFormValues {
	return views.RunFormValues{Title: f.Title, StartedAt: f.StartedAt, SourceType: f.SourceType, ChamberID: f.ChamberID,
		NewChamber: f.NewChamber, RecipeID: f.RecipeID, NewRecipe: f.NewRecipe, GasMixture: f.GasMixture,
		PressurePa: f.PressurePa, PowerW: f.PowerW, Flows: f.Flows, GapMM: f.GapMM, GratingLMM: f.GratingLMM,
		SlitUM: f.SlitUM, IntegrationMS: f.IntegrationMS, InstrumentFWHMNM: f.InstrumentFWHMNM,
		InstrumentID: f.InstrumentID, GasTemperatureK: f.GasTemperatureK, Perturber: f.Perturber, Notes: f.Notes,
		Tags: f.Tags, ResponseUnit: f.ResponseUnit, LineTable: f.LineTable, Lines: f.Lines, LineUnit: f.LineUnit,
		PressureUnit: f.PressureUnit, LineShape: f.LineShape, Route: routeValues(f.Model, f.WholeAreas, f.WholeFreeGas, f.WholeFreeIn)}
}

func runFormFromRun(r store.Run) runForm {
	return runForm{Title: r.Title, StartedAt: r.StartedAt.UTC().Format("2006-01-02T15:04"), SourceType: r.SourceType,
		ChamberID: idOpt(r.ChamberID), RecipeID: idOpt(r.RecipeID), GasMixture: r.GasMixture,
		PressurePa: pressureAsEntered(r.PressurePa, r.PressureUnit), PressureUnit: r.PressureUnit, PowerW: fmtOpt(r.PowerW), Flows: r.Flows, GapMM: fmtOpt(r.GapMM),
		GratingLMM: fmtOpt(r.GratingLMM), SlitUM: fmtOpt(r.SlitUM), IntegrationMS: fmtOpt(r.IntegrationMS),
		InstrumentFWHMNM: fmtOpt(r.InstrumentFWHMNM), InstrumentID: idOpt(r.InstrumentID),
		GasTemperatureK: fmtOpt(r.GasTemperatureK), Perturber: r.Perturber, Notes: r.Notes, Tags: strings.Join(r.Tags, ", ")}
}

func orPa(unit string) string {
	if unit == "" {
		return "Pa"
	}
	return unit
}

// pressureAsEntered writes a pressure stored in Pa in the unit it was
// entered in, with 12 significant digits so that the conversion's last
// bit does not show ("0.5" Torr, not "0.49999999999999994").
func pressureAsEntered(pa *float64, unit string) string {
	if pa == nil {
		return ""
	}
	f, ok := store.PressureUnitPa(unit)
	if !ok {
		f = 1
	}
	return strconv.FormatFloat(*pa/f, 'g', 12, 64)
}

// pressureUnitOptions are the pressure unit choices.
func pressureUnitOptions() []views.Option {
	var out []views.Option
	for _, u := range store.PressureUnits {
		out = append(out, views.Option{Value: u.Key, Label: u.Key})
	}
	return out
}

// perturberOptions lists "none" and the perturbers of diag.
func perturberOptions() []views.Option {
	out := []views.Option{{Value: "none", Label: "none (no van der Waals width)"}}
	for _, p := range diag.Perturbers() {
		out = append(out, views.Option{Value: p.Name, Label: p.Name})
	}
	return out
}

// instrumentOptions lists the stored instrument functions.
func (s *Server) instrumentOptions(ctx context.Context) ([]views.Option, error) {
	list, err := s.DB.Instruments(ctx)
	if err != nil {
		return nil, err
	}
	out := make([]views.Option, 0, len(list))
	for _, in := range list {
		out = append(out, views.Option{Value: strconv.FormatInt(in.ID, 10), Label: in.Name})
	}
	return out, nil
}

// runFormProps builds the form page around values f.
func (s *Server) runFormProps(c echo.Context, f runForm, edit bool, run *store.Run) (views.RunFormProps, error) {
	ctx := c.Request().Context()
	title, cur := "Log a run", "new"
	if edit {
		title, cur = "Edit run", "runs"
	}
	p := views.RunFormProps{Layout: s.layout(c, title, cur), Edit: edit, Values: f.view(),
		Perturbers: perturberOptions(), MaxFileMB: store.MaxAttachmentBytes >> 20, Uppers: upperOptions(),
		PressureUnits: pressureUnitOptions()}
	if run != nil {
		p.RunID, p.AnalysisVersion = run.ID, run.AnalysisVersion
	}
	if !edit && len(p.Values.Lines) == 0 {
		p.Values.Lines = make([]views.LineRow, newLineRows)
	}
	for _, st := range store.SourceTypes {
		p.Sources = append(p.Sources, views.Option{Value: st.Key, Label: st.Label})
	}
	chambers, err := s.DB.Chambers(ctx)
	if err != nil {
		return p, err
	}
	recipes, err := s.DB.Recipes(ctx)
	if err != nil {
		return p, err
	}
	p.Chambers, p.Recipes = namedOptions(chambers), namedOptions(recipes)
	if p.Instruments, err = s.instrumentOptions(ctx); err != nil {
		return p, err
	}
	return p, nil
}

// canChangeRun: only the run's operator or an admin changes a run.
func canChangeRun(u *store.User, r store.Run) error {
	if u == nil || (u.Role != store.RoleAdmin && u.ID != r.OperatorID) {
		return echo.NewHTTPError(http.StatusForbidden, "only the run's operator ("+r.OperatorName+") or an admin can change this run")
	}
	// A signed-off run's conditions and files are what the reviewer
	// approved; a reviewer returns it for rework before they change.
	if r.Status == "signed_off" {
		return &userError{http.StatusConflict, "this run is signed off: its conditions and files are locked; a reviewer can return it for rework first"}
	}
	return nil
}

// newRun is GET /runs/new.
func (s *Server) newRun(c echo.Context) error {
	f := runForm{StartedAt: s.DB.Now().UTC().Format("2006-01-02T15:04"), SourceType: store.SourceTypes[0].Key,
		Perturber: "none", ResponseUnit: "photon", Lines: make([]views.LineRow, newLineRows), LineUnit: "photon",
		PressureUnit: "Pa"}
	p, err := s.runFormProps(c, f, false, nil)
	if err != nil {
		return err
	}
	return render(c, http.StatusOK, views.RunForm(p))
}

// createRun is POST /runs: the run, its files and the first analysis in
// one transaction; any problem stores nothing and shows the form again.
func (s *Server) createRun(c echo.Context) error {
	ctx := c.Request().Context()
	u := currentUser(c)
	f := bindRunForm(c)
	// "Add a line" and "×" re-render the form with one row more or less
	// (without a script); nothing is stored.
	if c.FormValue("lt_add") != "" || c.FormValue("lt_remove") != "" {
		return s.relayoutLineTable(c, f)
	}
	ups, upErr := readUploads(c)
	fail := func(err error) error {
		msg, ok := userMessage(err)
		if !ok {
			return err
		}
		p, perr := s.runFormProps(c, f, false, nil)
		if perr != nil {
			return perr
		}
		p.Layout.Error, p.FilesLost = msg, hasFiles(ups)
		return render(c, http.StatusUnprocessableEntity, views.RunForm(p))
	}
	if upErr != nil {
		return fail(upErr)
	}
	in, err := f.input()
	if err != nil {
		return fail(err)
	}
	if err := s.checkChoices(ctx, in); err != nil {
		return fail(err)
	}
	st := DefaultSettings(store.Run{InstrumentFWHMNM: in.InstrumentFWHMNM, InstrumentID: in.InstrumentID,
		GasTemperatureK: in.GasTemperatureK, PressurePa: in.PressurePa, Perturber: in.Perturber})
	st.ResponseUnit = f.ResponseUnit
	st.LineShape = f.LineShape
	st.Model, st.WholeAreas = f.Model, f.WholeAreas
	st.WholeFreeGasTemperature, st.WholeFreeInstrument = f.WholeFreeGas, f.WholeFreeIn
	if err := st.Validate(); err != nil {
		return fail(err)
	}

	tx, err := s.DB.Begin(ctx)
	if err != nil {
		return err
	}
	defer tx.Rollback()
	if f.NewChamber != "" {
		id, err := s.DB.EnsureChamberTx(ctx, tx, f.NewChamber)
		if err != nil {
			tx.Rollback()
			return fail(err)
		}
		in.ChamberID = &id
	}
	if f.NewRecipe != "" {
		id, err := s.DB.EnsureRecipeTx(ctx, tx, f.NewRecipe)
		if err != nil {
			tx.Rollback()
			return fail(err)
		}
		in.RecipeID = &id
	}
	runID, err := s.DB.CreateRunTx(ctx, tx, u.ID, in)
	if err != nil {
		tx.Rollback()
		return fail(err)
	}
	atts, err := s.addUploadsTx(ctx, tx, runID, ups)
	if err != nil {
		tx.Rollback()
		return fail(err)
	}
	version := 0
	if analysable(atts) {
		var results []RunAnalysis
		version, results, err = s.ReanalyzeRunTx(ctx, tx, runID, atts, st, &u.ID, "created")
		if err == nil {
			err = uploadResultError(results, nil)
		}
		if err != nil {
			tx.Rollback()
			return fail(err)
		}
	}
	if err := tx.Commit(); err != nil {
		return err
	}
	switch {
	case version > 0:
		flash(c, fmt.Sprintf("Run logged with %d file(s). Analysis version %d stored.", len(atts), version))
	default:
		flash(c, "Run logged. Add spectra or a line table on this page to analyse it.")
	}
	return c.Redirect(http.StatusSeeOther, fmt.Sprintf("/runs/%d", runID))
}

// editRun is GET /runs/:id/edit.
func (s *Server) editRun(c echo.Context) error {
	id, err := pathID(c, "id")
	if err != nil {
		return err
	}
	r, err := s.DB.GetRun(c.Request().Context(), id)
	if err != nil {
		return err
	}
	if err := canChangeRun(currentUser(c), r); err != nil {
		return err
	}
	p, err := s.runFormProps(c, runFormFromRun(r), true, &r)
	if err != nil {
		return err
	}
	return render(c, http.StatusOK, views.RunForm(p))
}

// updateRun is POST /runs/:id: new conditions; stored analyses stay as
// they are (a reanalysis makes a new version).
func (s *Server) updateRun(c echo.Context) error {
	ctx := c.Request().Context()
	r, err := s.runFromPath(c)
	if err != nil {
		return err
	}
	id := r.ID
	if err := canChangeRun(currentUser(c), r); err != nil {
		return err
	}
	f := bindRunForm(c)
	fail := func(err error) error {
		msg, ok := userMessage(err)
		if !ok {
			return err
		}
		p, perr := s.runFormProps(c, f, true, &r)
		if perr != nil {
			return perr
		}
		p.Layout.Error = msg
		return render(c, http.StatusUnprocessableEntity, views.RunForm(p))
	}
	in, err := f.input()
	if err != nil {
		return fail(err)
	}
	if err := s.checkChoices(ctx, in); err != nil {
		return fail(err)
	}
	// Everything is checked; a new chamber or recipe name is the only
	// thing stored before the run itself.
	if f.NewChamber != "" {
		cid, err := s.DB.EnsureChamber(ctx, f.NewChamber, "")
		if err != nil {
			return fail(err)
		}
		in.ChamberID = &cid
	}
	if f.NewRecipe != "" {
		rid, err := s.DB.EnsureRecipe(ctx, f.NewRecipe, "")
		if err != nil {
			return fail(err)
		}
		in.RecipeID = &rid
	}
	if err := s.DB.UpdateRun(ctx, id, in); err != nil {
		return fail(err)
	}
	msg := "Conditions saved."
	if r.AnalysisVersion > 0 {
		msg += " The stored analyses are unchanged. Reanalyse to apply the new conditions (a new version)."
	}
	flash(c, msg)
	return c.Redirect(http.StatusSeeOther, fmt.Sprintf("/runs/%d", id))
}

// relayoutLineTable answers the line table's add and remove buttons: the
// form comes back as typed with a row added or the chosen row removed.
func (s *Server) relayoutLineTable(c echo.Context, f runForm) error {
	if c.FormValue("lt_add") != "" && len(f.Lines) < maxLineRows {
		f.Lines = append(f.Lines, views.LineRow{})
	}
	if v := c.FormValue("lt_remove"); v != "" {
		i, err := strconv.Atoi(v)
		if err != nil || i < 0 || i >= len(f.Lines) {
			return badRequest("lt_remove: no row %q to remove", v)
		}
		f.Lines = append(f.Lines[:i:i], f.Lines[i+1:]...)
		if len(f.Lines) == 0 {
			f.Lines = []views.LineRow{{}}
		}
	}
	p, err := s.runFormProps(c, f, false, nil)
	if err != nil {
		return err
	}
	if form, err := c.MultipartForm(); err == nil && form != nil {
		for _, fhs := range form.File {
			for _, fh := range fhs {
				p.FilesLost = p.FilesLost || fh.Filename != ""
			}
		}
	}
	return render(c, http.StatusOK, views.RunForm(p))
}
