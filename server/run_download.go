package server

import (
	"bytes"
	"encoding/csv"
	"encoding/json"
	"errors"
	"fmt"
	"net/http"
	"strconv"

	"github.com/labstack/echo/v4"

	"glowlog/diag"
)

// selectedResult loads the run page and returns its selected result, or a
// 404 when the version has no usable result for it.
func (s *Server) selectedResult(c echo.Context) (*runPage, *decodedResult, error) {
	p, err := s.loadRunPage(c)
	if err != nil {
		return nil, nil, err
	}
	r := p.selected()
	if p.Analysis == nil || r == nil {
		return nil, nil, echo.NewHTTPError(http.StatusNotFound, "this run has no analysis result yet")
	}
	return p, r, nil
}

// fileStem is the download name stem: run-7-v2-att12.
func fileStem(p *runPage, r *decodedResult) string {
	return fmt.Sprintf("run-%d-v%d-att%d", p.Run.ID, p.Analysis.Version, r.AttachmentID)
}

func attachmentHeader(c echo.Context, name string) {
	c.Response().Header().Set(echo.HeaderContentDisposition, fmt.Sprintf(`attachment; filename="%s"`, name))
}

// downloadAnalysisJSON handles GET /runs/:id/analysis.json: the stored
// result of the selected version and attachment with the run id, version
// and settings.
func (s *Server) downloadAnalysisJSON(c echo.Context) error {
	p, r, err := s.selectedResult(c)
	if err != nil {
		return err
	}
	out := struct {
		RunID          int64           `json:"run_id"`
		RunTitle       string          `json:"run_title"`
		Version        int             `json:"analysis_version"`
		CreatedAt      string          `json:"analysed_at"`
		CreatedBy      string          `json:"analysed_by"`
		Reason         string          `json:"reason"`
		EngineVersion  string          `json:"engine_version"`
		Settings       json.RawMessage `json:"settings"`
		AttachmentID   int64           `json:"attachment_id"`
		AttachmentName string          `json:"attachment_name"`
		Error          string          `json:"error,omitempty"`
		Model          string          `json:"model,omitempty"`
		Result         json.RawMessage `json:"result"`
	}{RunID: p.Run.ID, RunTitle: p.Run.Title, Version: p.Analysis.Version,
		CreatedAt: p.Analysis.CreatedAt.UTC().Format("2006-01-02T15:04:05Z"), CreatedBy: p.Analysis.CreatedByName,
		Reason: p.Analysis.Reason, EngineVersion: p.Analysis.EngineVersion, Settings: rawOrNull(p.Analysis.Settings),
		AttachmentID: r.AttachmentID, AttachmentName: r.AttachmentName, Error: r.Error, Model: downloadModel(r), Result: rawOrNull(r.Result)}
	var buf bytes.Buffer
	enc := json.NewEncoder(&buf)
	enc.SetEscapeHTML(false)
	enc.SetIndent("", "  ")
	if err := enc.Encode(out); err != nil {
		return err
	}
	attachmentHeader(c, fileStem(p, r)+".json")
	return c.Blob(http.StatusOK, echo.MIMEApplicationJSONCharsetUTF8, buf.Bytes())
}

func rawOrNull(s string) json.RawMessage {
	if s == "" || !json.Valid([]byte(s)) {
		return json.RawMessage("null")
	}
	return json.RawMessage(s)
}

// linesCSVHeader are the columns of lines.csv, units in the names.
var linesCSVHeader = []string{"upper_level", "name", "wavelength_air_nm", "wavelength_vac_nm", "upper_energy_eV", "g_upper",
	"einstein_A_per_s", "center_nm", "center_unc_nm", "intensity", "intensity_unc", "in_boltzmann_fit",
	"gauss_fwhm_nm", "gauss_fwhm_unc_nm", "lorentz_fwhm_nm", "lorentz_fwhm_unc_nm", "total_fwhm_nm", "fwha_nm",
	"stark_fwhm_nm", "stark_fwhm_unc_nm", "stark_relation", "electron_density_m3", "electron_density_unc_m3",
	"peak_snr", "fit_reduced_chi2", "budget_instrument_gauss_nm", "budget_instrument_lorentz_nm", "budget_doppler_nm",
	"budget_natural_nm", "budget_resonance_nm", "budget_van_der_waals_nm", "budget_gauss_total_nm",
	"budget_lorentz_non_stark_nm", "model"}

// downloadModel is the route that produced a result's numbers ("" for a
// failed analysis).
func downloadModel(r *decodedResult) string {
	if r.Diag == nil {
		return ""
	}
	return ResultModel(r.Spectrum)
}

// downloadLinesCSV handles GET /runs/:id/lines.csv: the per-line table of
// the selected result.
func (s *Server) downloadLinesCSV(c echo.Context) error {
	p, r, err := s.selectedResult(c)
	if err != nil {
		return err
	}
	if r.Diag == nil {
		return echo.NewHTTPError(http.StatusNotFound, "this attachment's analysis failed: no line table")
	}
	var buf bytes.Buffer
	if err := writeLinesCSV(&buf, r.Diag, downloadModel(r)); err != nil {
		return err
	}
	attachmentHeader(c, fileStem(p, r)+"-lines.csv")
	return c.Blob(http.StatusOK, "text/csv; charset=utf-8", buf.Bytes())
}

// writeLinesCSV writes the per-line table; model (the route that
// produced the numbers) fills the last column of every row.
func writeLinesCSV(buf *bytes.Buffer, d *diag.Result, model string) error {
	w := csv.NewWriter(buf)
	if err := w.Write(linesCSVHeader); err != nil {
		return err
	}
	f := func(v float64) string { return strconv.FormatFloat(v, 'g', 10, 64) }
	pf := func(v *float64) string {
		if v == nil {
			return ""
		}
		return f(*v)
	}
	for _, l := range d.Lines {
		row := []string{strconv.Itoa(l.UpperLevel), l.Name, f(l.WavelengthAirNM), f(l.WavelengthVacNM), f(l.UpperEnergyEV),
			strconv.Itoa(l.GUpper), f(l.EinsteinA)}
		if pr := l.ProfileFit; pr != nil {
			row = append(row, f(pr.CenterNM), f(pr.CenterUncNM))
		} else {
			row = append(row, "", "")
		}
		row = append(row, pf(l.Intensity), pf(l.IntensityUnc), strconv.FormatBool(l.InBoltzmann))
		total := pf(l.MeasuredFWHMNM)
		if pr := l.ProfileFit; pr != nil {
			row = append(row, f(pr.GaussFWHMNM), f(pr.GaussFWHMUncNM))
			total = f(pr.TotalFWHMNM)
		} else {
			row = append(row, "", "")
		}
		row = append(row, pf(l.LorentzFWHMNM), pf(l.LorentzFWHMUncNM), total)
		if pr := l.ProfileFit; pr != nil {
			row = append(row, f(pr.FWHANM))
		} else {
			row = append(row, "")
		}
		row = append(row, pf(l.StarkFWHMNM), pf(l.StarkFWHMUncNM), l.StarkRelation, pf(l.ElectronDensityM3), pf(l.ElectronDensityUncM3))
		if pr := l.ProfileFit; pr != nil {
			row = append(row, f(pr.PeakSNR), f(pr.ReducedChi2))
		} else {
			row = append(row, "", "")
		}
		if b := l.Budget; b != nil {
			row = append(row, f(b.InstrumentGaussNM), f(b.InstrumentLorentzNM), f(b.DopplerNM), f(b.NaturalNM),
				f(b.ResonanceNM), f(b.VanDerWaalsNM), f(b.GaussTotalNM), f(b.LorentzNonStarkNM))
		} else {
			row = append(row, "", "", "", "", "", "", "", "")
		}
		row = append(row, model)
		if err := w.Write(row); err != nil {
			return err
		}
	}
	w.Flush()
	return w.Error()
}

// svgBlob sends a standalone SVG figure.
func svgBlob(c echo.Context, name string, svg []byte, err error) error {
	if errors.Is(err, errNoFigure) {
		return echo.NewHTTPError(http.StatusNotFound, "no data for this figure")
	}
	if err != nil {
		return err
	}
	c.Response().Header().Set(echo.HeaderContentDisposition, fmt.Sprintf(`inline; filename="%s"`, name))
	return c.Blob(http.StatusOK, "image/svg+xml", svg)
}

// figureBoltzmann handles GET /runs/:id/boltzmann.svg?v=&a=.
func (s *Server) figureBoltzmann(c echo.Context) error {
	p, r, err := s.selectedResult(c)
	if err != nil {
		return err
	}
	svg, err := BoltzmannSVG(r.Diag)
	return svgBlob(c, fileStem(p, r)+"-boltzmann.svg", svg, err)
}

// figureWindow handles GET /runs/:id/window.svg?v=&a=&k=: fitted window k
// (from 0) of a spectrum result.
func (s *Server) figureWindow(c echo.Context) error {
	p, r, err := s.selectedResult(c)
	if err != nil {
		return err
	}
	k, err := strconv.Atoi(c.QueryParam("k"))
	if err != nil || k < 0 {
		return badRequest("k (window number) must be a whole number ≥ 0, got %q", c.QueryParam("k"))
	}
	if r.Spectrum == nil || k >= len(r.Spectrum.Windows) {
		return echo.NewHTTPError(http.StatusNotFound, "no such fitted window")
	}
	w := r.Spectrum.Windows[k]
	svg, err := WindowSVG(w, windowNames(r.Diag, w), windowYLabel(r.Diag))
	return svgBlob(c, fmt.Sprintf("%s-window-%d.svg", fileStem(p, r), k), svg, err)
}
