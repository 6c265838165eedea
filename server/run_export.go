package server

import (
	"strconv"
	"strings"

	"github.com/labstack/echo/v4"

	"glowlog/store"
)

// runCSVHeader names the export's columns, with units in the names. The
// σ columns hold the total 1σ (statistical ⊕ systematic) of the run's
// summary; the split is in each result's JSON.
var runCSVHeader = []string{"id", "title", "started_at_utc", "chamber", "recipe", "source_type", "operator", "status",
	"gas_mixture", "pressure_Pa", "power_W", "flows", "electrode_gap_mm", "grating_lines_per_mm", "slit_um",
	"integration_ms", "instrument_fwhm_nm", "gas_temperature_given_K", "perturber",
	"texc_K", "texc_K_unc_total_1sigma", "ne_m3", "ne_m3_unc_total_1sigma", "tgas_solved_K", "n_warnings", "analysis_version", "tags", "notes"}

// exportRuns is GET /runs.csv: every run matching the run list's filters
// (all pages), as RFC 4180 CSV.
func (s *Server) exportRuns(c echo.Context) error {
	ctx := c.Request().Context()
	f := bindRunListForm(c)
	rf, err := f.filter()
	if err != nil {
		return err
	}
	w := csvAttachment(c, "glowlog-runs.csv")
	w.UseCRLF = true // RFC 4180 line ends
	if err := w.Write(runCSVHeader); err != nil {
		return err
	}
	err = s.DB.EachRun(ctx, rf, func(r store.Run) error {
		return w.Write([]string{strconv.FormatInt(r.ID, 10), csvText(r.Title), r.StartedAt.UTC().Format("2006-01-02T15:04:05Z"),
			csvText(r.ChamberName), csvText(r.RecipeName), r.SourceType, csvText(r.OperatorName), r.Status,
			csvText(r.GasMixture), csvNum(r.PressurePa), csvNum(r.PowerW), csvText(r.Flows), csvNum(r.GapMM),
			csvNum(r.GratingLMM), csvNum(r.SlitUM), csvNum(r.IntegrationMS), csvNum(r.InstrumentFWHMNM),
			csvNum(r.GasTemperatureK), csvText(r.Perturber), csvNum(r.TexcK), csvNum(r.TexcUncK), csvNum(r.NeM3),
			csvNum(r.NeUncM3), csvNum(r.TgasK), strconv.Itoa(r.NWarnings), strconv.Itoa(r.AnalysisVersion),
			csvText(strings.Join(r.Tags, ";")), csvText(r.Notes)})
	})
	w.Flush()
	if err == nil {
		err = w.Error()
	}
	if err != nil {
		// The header is sent; the error handler cannot answer any more,
		// so log it (a truncated file is all the client sees).
		s.Log.Error("run export failed", "err", err)
	}
	return nil
}

// csvNum writes an optional number with full precision ("" when absent).
func csvNum(v *float64) string {
	if v == nil {
		return ""
	}
	return strconv.FormatFloat(*v, 'g', -1, 64)
}

// csvText guards a text cell against formula injection: a spreadsheet
// would run a cell that starts with = + - @ (or a tab or carriage return
// before one), so such text gets a leading apostrophe (OWASP "CSV
// injection" advice).
func csvText(s string) string {
	if s == "" {
		return s
	}
	switch s[0] {
	case '=', '+', '-', '@', '\t', '\r':
		return "'" + s
	}
	return s
}
