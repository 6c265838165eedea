package server

import (
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"math"
	"net/http"
	"net/url"
	"strconv"
	"strings"

	"github.com/labstack/echo/v4"

	"glowlog/diag"
	"glowlog/diag/spectrum"
	"glowlog/store"
	"glowlog/views"
)

// runPage is a run with its selected analysis version and attachment, as
// the run page, the report, the downloads and the figures need it.
type runPage struct {
	Run      store.Run
	Versions []store.Analysis // newest first
	Analysis *store.Analysis  // selected version with results; nil before the first analysis
	Results  []decodedResult
	Sel      int // index of the selected result in Results; -1 when none
	// VersionParam is the version asked for (0: newest).
	VersionParam int
}

// decodedResult is one stored attachment result, decoded.
type decodedResult struct {
	store.AnalysisResult
	Kind     string
	Spectrum *spectrum.Result
	Diag     *diag.Result
}

// selected returns the selected result or nil.
func (p *runPage) selected() *decodedResult {
	if p.Sel < 0 || p.Sel >= len(p.Results) {
		return nil
	}
	return &p.Results[p.Sel]
}

// loadRunPage reads the run named by :id with the version ?v= (0 or
// absent: the run's current version — the approved one while it is signed
// off, the newest otherwise) and the attachment ?a= (absent: the first result).
// An unknown run, version or attachment is a 404; a malformed parameter
// a 400.
func (s *Server) loadRunPage(c echo.Context) (*runPage, error) {
	ctx := c.Request().Context()
	id, err := strconv.ParseInt(c.Param("id"), 10, 64)
	if err != nil || id <= 0 {
		return nil, echo.NewHTTPError(http.StatusNotFound, "no such run")
	}
	p := &runPage{Sel: -1}
	if v := c.QueryParam("v"); v != "" {
		n, err := strconv.Atoi(v)
		if err != nil || n < 0 {
			return nil, badRequest("v (analysis version) must be a whole number ≥ 0, got %q", v)
		}
		p.VersionParam = n
	}
	var attID int64
	if a := c.QueryParam("a"); a != "" {
		n, err := strconv.ParseInt(a, 10, 64)
		if err != nil || n <= 0 {
			return nil, badRequest("a (attachment id) must be a positive whole number, got %q", a)
		}
		attID = n
	}
	if p.Run, err = s.DB.GetRun(ctx, id); err != nil {
		return nil, err
	}
	if p.Versions, err = s.DB.Analyses(ctx, id); err != nil {
		return nil, err
	}
	if len(p.Versions) == 0 {
		if p.VersionParam != 0 || attID != 0 {
			return nil, echo.NewHTTPError(http.StatusNotFound, "this run has no analysis yet")
		}
		return p, nil
	}
	an, err := s.DB.AnalysisVersion(ctx, id, p.VersionParam)
	if err != nil {
		return nil, err
	}
	p.Analysis = &an
	atts, err := s.DB.Attachments(ctx, id)
	if err != nil {
		return nil, err
	}
	kinds := map[int64]string{}
	for _, a := range atts {
		kinds[a.ID] = a.Kind
	}
	for _, r := range an.Results {
		d := decodedResult{AnalysisResult: r, Kind: kinds[r.AttachmentID]}
		if r.Result != "" {
			if d.Kind == store.KindLineTable {
				var lr diag.Result
				if err := json.Unmarshal([]byte(r.Result), &lr); err != nil {
					return nil, fmt.Errorf("server: decode result %d: %w", r.ID, err)
				}
				d.Diag = &lr
			} else {
				var sr spectrum.Result
				if err := json.Unmarshal([]byte(r.Result), &sr); err != nil {
					return nil, fmt.Errorf("server: decode result %d: %w", r.ID, err)
				}
				d.Spectrum, d.Diag = &sr, &sr.Result
			}
		}
		p.Results = append(p.Results, d)
	}
	if len(p.Results) > 0 {
		p.Sel = 0
	}
	if attID != 0 {
		p.Sel = -1
		for i, r := range p.Results {
			if r.AttachmentID == attID {
				p.Sel = i
			}
		}
		if p.Sel < 0 {
			return nil, echo.NewHTTPError(http.StatusNotFound, "this analysis version has no result for that attachment")
		}
	}
	return p, nil
}

// query returns the ?v=&a= query for the selected version and attachment
// plus extra pairs.
func (p *runPage) query(extra ...string) string {
	q := url.Values{}
	if p.Analysis != nil {
		q.Set("v", strconv.Itoa(p.Analysis.Version))
	}
	if r := p.selected(); r != nil {
		q.Set("a", strconv.FormatInt(r.AttachmentID, 10))
	}
	for i := 0; i+1 < len(extra); i += 2 {
		q.Set(extra[i], extra[i+1])
	}
	return "?" + q.Encode()
}

// showRun handles GET /runs/:id: the run's conditions, the results of the
// selected analysis version with figures, warnings and provenance, the
// versions, downloads, reanalysis and review.
func (s *Server) showRun(c echo.Context) error {
	p, err := s.loadRunPage(c)
	if err != nil {
		return err
	}
	props := views.RunShowProps{
		Layout:   s.layout(c, p.Run.Title, "runs"),
		Header:   runHeader(p.Run),
		Versions: versionRows(c, s, p),
	}
	props.Conditions, props.Spectrometer = conditionRows(p.Run)
	base := fmt.Sprintf("/runs/%d", p.Run.ID)
	props.ReportHref = base + "/report" + p.query()
	if p.Analysis != nil {
		props.Version = versionInfo(p.Analysis)
		props.NotApproved = p.Run.Status == store.StatusSignedOff && p.Run.ApprovedVersion != nil &&
			p.Analysis.Version != *p.Run.ApprovedVersion
		props.Series = seriesRows(base, p)
		if r := p.selected(); r != nil {
			props.Result = resultView(base, p, r, true)
			props.Result.Compact = true
			if r.Spectrum != nil {
				props.Result.Spectrum = s.spectrumFigure(c, base, p, r)
			}
			lo, hi, err := zoomRange(c)
			if err != nil {
				return err
			}
			props.Result.Whole = wholeFitView(base, p, r, lo, hi, true)
		}
	}
	props.Summary = runSummary(p)
	if canChangeRun(currentUser(c), p.Run) == nil {
		props.Summary.EditHref = base + "/edit"
	}
	if props.Reanalyze, err = s.reanalyzeFormFor(c, p.Run); err != nil {
		return err
	}
	props.Upload = s.uploadFormFor(c, p.Run)
	rp, err := s.runReviewPanel(c.Request().Context(), c, p.Run)
	if err != nil {
		return err
	}
	props.Review = views.RunReviewPanel(rp)
	props.ReviewActions = views.RunReviewActions(rp)
	if props.History, err = s.runHistory(c, p.Run.ID); err != nil {
		return err
	}
	return render(c, http.StatusOK, views.RunShow(props))
}

func runHeader(r store.Run) views.RunHeader {
	h := views.RunHeader{ID: r.ID, Title: r.Title, Status: r.Status, StatusLabel: store.StatusLabel(r.Status),
		Operator: r.OperatorName, Chamber: r.ChamberName, Recipe: r.RecipeName, Source: store.SourceLabel(r.SourceType),
		Started: r.StartedAt.UTC().Format("2006-01-02 15:04 UTC"), Notes: r.Notes, Tags: r.Tags}
	if r.SignedOffAt != nil {
		h.SignedOffAt = r.SignedOffAt.UTC().Format("2006-01-02 15:04 UTC")
	}
	if r.Status == store.StatusSignedOff && r.ApprovedVersion != nil {
		h.ApprovedVersion = *r.ApprovedVersion
	}
	return h
}

// conditionRows lists the discharge conditions and the spectrometer
// settings, with the unit in every label.
func conditionRows(r store.Run) (cond, spec []views.KV) {
	// Conditions are shown as entered (no padding zeros).
	num := func(v *float64) string {
		if v == nil {
			return "—"
		}
		return strconv.FormatFloat(*v, 'g', 6, 64)
	}
	gas := r.GasMixture
	if gas == "" {
		gas = "—"
	}
	flows := r.Flows
	if flows == "" {
		flows = "—"
	}
	cond = []views.KV{
		{K: "Source type", V: store.SourceLabel(r.SourceType)},
		{K: "Gas mixture", V: gas},
		{K: "Pressure", V: pressureText(r.PressurePa, r.PressureUnit)},
		{K: "Power (W)", V: num(r.PowerW)},
		{K: "Flows (sccm)", V: flows},
		{K: "Electrode gap (mm)", V: num(r.GapMM)},
		{K: "Gas temperature, given (K)", V: num(r.GasTemperatureK)},
		{K: "Van der Waals perturber", V: r.Perturber},
	}
	instr := "—"
	if r.InstrumentID != nil {
		instr = fmt.Sprintf("stored instrument function #%d", *r.InstrumentID)
	}
	spec = []views.KV{
		{K: "Grating (lines/mm)", V: num(r.GratingLMM)},
		{K: "Slit width (µm)", V: num(r.SlitUM)},
		{K: "Integration time (ms)", V: num(r.IntegrationMS)},
		{K: "Instrument FWHM, Gaussian (nm)", V: num(r.InstrumentFWHMNM)},
		{K: "Instrument function", V: instr},
	}
	return cond, spec
}

func versionInfo(a *store.Analysis) *views.VersionInfo {
	by := a.CreatedByName
	if by == "" {
		by = "system"
	}
	var pretty bytes.Buffer
	if err := json.Indent(&pretty, []byte(a.Settings), "", "  "); err != nil {
		pretty.Reset()
		pretty.WriteString(a.Settings)
	}
	return &views.VersionInfo{Version: a.Version, EngineVersion: a.EngineVersion, CreatedBy: by,
		CreatedAt: a.CreatedAt.UTC().Format("2006-01-02 15:04 UTC"), Reason: a.Reason, Settings: pretty.String(),
		ComputedWith: computedWith(a.Settings)}
}

// computedWith describes a version's conditions in words ("" when the
// settings cannot be read).
func computedWith(settings string) string {
	var st AnalysisSettings
	if json.Unmarshal([]byte(settings), &st) != nil {
		return ""
	}
	num := func(v float64, unit string) string {
		if v == 0 {
			return "none"
		}
		return strconv.FormatFloat(v, 'g', 6, 64) + " " + unit
	}
	instr := "instrument FWHM " + num(st.InstrumentFWHMNM, "nm")
	if st.InstrumentLorentzFWHMNM > 0 {
		instr += " (Gaussian) + " + num(st.InstrumentLorentzFWHMNM, "nm") + " (Lorentzian)"
	}
	if st.InstrumentID != 0 {
		instr = fmt.Sprintf("stored instrument function #%d", st.InstrumentID)
	}
	gas := "gas temperature " + num(st.GasTemperatureK, "K")
	if st.GasTemperatureK > 0 && st.GasTemperatureUncK > 0 {
		gas += " ± " + strconv.FormatFloat(st.GasTemperatureUncK, 'g', 6, 64) + " K"
	}
	if st.SolveGasTemperature {
		gas = "gas temperature solved from Hα and Hβ"
	}
	pert := st.Perturber
	if pert == "" {
		pert = "none"
	}
	route := "route: " + ModelLabel(st.EffectiveModel())
	if st.Model == "" {
		route += " (the default)"
	}
	if st.EffectiveModel() == spectrum.ModelWhole {
		route += wholeOptionsText(st)
	}
	return strings.Join([]string{instr, gas, "pressure " + num(st.PressurePa, "Pa"), "perturber " + pert, route}, ", ")
}

// versionRows lists every analysis version with its summary values (one
// result: its values; several: their inverse-variance mean).
func versionRows(c echo.Context, s *Server, p *runPage) []views.VersionRow {
	ctx := c.Request().Context()
	var out []views.VersionRow
	for _, v := range p.Versions {
		row := views.VersionRow{Version: v.Version, CreatedAt: v.CreatedAt.UTC().Format("2006-01-02 15:04 UTC"),
			CreatedBy: v.CreatedByName, Reason: v.Reason,
			Href:    fmt.Sprintf("/runs/%d?v=%d", p.Run.ID, v.Version),
			Current: p.Analysis != nil && v.Version == p.Analysis.Version}
		if p.Run.Status == store.StatusSignedOff && p.Run.ApprovedVersion != nil {
			row.Approved = v.Version == *p.Run.ApprovedVersion
			row.NotApproved = !row.Approved
		}
		if row.CreatedBy == "" {
			row.CreatedBy = "system"
		}
		rs := p.Analysis.Results
		if !row.Current {
			full, err := s.DB.AnalysisVersion(ctx, p.Run.ID, v.Version)
			if err != nil {
				out = append(out, row)
				continue
			}
			rs = full.Results
		}
		t, tu := meanOf(rs, func(r store.AnalysisResult) (*float64, *float64) { return r.TexcK, r.TexcUncK })
		n, nu := meanOf(rs, func(r store.AnalysisResult) (*float64, *float64) { return r.NeM3, r.NeUncM3 })
		row.Texc, row.Ne = views.ValueUnc(t, tu), views.ValueUnc(n, nu)
		if len(rs) > 1 {
			row.Note = fmt.Sprintf("mean of %d spectra", len(rs))
		}
		out = append(out, row)
	}
	return out
}

// meanOf is the inverse-variance weighted mean and its σ of the values
// that have a σ (the plain mean when any lacks one).
func meanOf(rs []store.AnalysisResult, get func(store.AnalysisResult) (*float64, *float64)) (*float64, *float64) {
	var sw, swx, sum float64
	var n int
	allUnc := true
	for _, r := range rs {
		v, u := get(r)
		if v == nil {
			continue
		}
		n++
		sum += *v
		if u == nil || *u <= 0 {
			allUnc = false
			continue
		}
		w := 1 / (*u * *u)
		sw += w
		swx += w * *v
	}
	if n == 0 {
		return nil, nil
	}
	if allUnc {
		m, s := swx/sw, 1/math.Sqrt(sw)
		return &m, &s
	}
	m := sum / float64(n)
	return &m, nil
}

func seriesRows(base string, p *runPage) []views.SeriesRow {
	if len(p.Results) < 2 {
		return nil
	}
	var out []views.SeriesRow
	for i, r := range p.Results {
		row := views.SeriesRow{Name: r.AttachmentName, Seq: r.AttachmentSeq, Error: r.Error, Selected: i == p.Sel,
			Href: fmt.Sprintf("%s?v=%d&a=%d", base, p.Analysis.Version, r.AttachmentID),
			Texc: views.ValueUnc(r.TexcK, r.TexcUncK), Ne: views.ValueUnc(r.NeM3, r.NeUncM3), NWarnings: r.NWarnings}
		out = append(out, row)
	}
	return out
}

// resultView builds the view of one attachment's result; inline says
// whether to embed the figures.
func resultView(base string, p *runPage, r *decodedResult, inline bool) *views.ResultView {
	rv := &views.ResultView{AttachmentName: r.AttachmentName, Error: r.Error, D: r.Diag,
		JSONHref: base + "/analysis.json" + p.query(), CSVHref: base + "/lines.csv" + p.query(),
		Route: routeWords(r)}
	if r.Diag == nil {
		return rv
	}
	if sr := r.Spectrum; sr != nil {
		rv.IsSpectrum, rv.LineSearch, rv.Partial, rv.PartialReasons = true, sr.LineSearch, sr.Partial, sr.PartialReasons
		rv.Pixels, rv.RangeNM, rv.NoiseSigma = sr.Pixels, sr.RangeNM, sr.NoiseSigma
		rv.OffsetNM, rv.OffsetUncNM, rv.OffsetCorrected = sr.WavelengthOffsetNM, sr.WavelengthOffsetUncNM, sr.OffsetCorrected
	}
	if svg, err := BoltzmannSVG(r.Diag); err == nil {
		rv.Boltzmann = &views.Figure{Title: "Boltzmann plot", Href: base + "/boltzmann.svg" + p.query()}
		if inline {
			rv.Boltzmann.SVG = inlineSVG(svg)
		}
	}
	if r.Spectrum != nil {
		yl := windowYLabel(r.Diag)
		for k, w := range r.Spectrum.Windows {
			names := windowNames(r.Diag, w)
			f := views.Figure{Title: "Fitted window: " + names, Href: base + "/window.svg" + p.query("k", strconv.Itoa(k))}
			if inline {
				svg, err := WindowSVG(w, names, yl)
				if err != nil {
					continue
				}
				f.SVG = inlineSVG(svg)
			}
			rv.Windows = append(rv.Windows, f)
		}
	}
	return rv
}

// windowNames names the lines of a window ("Hβ", "Hδ + Hε").
func windowNames(d *diag.Result, w spectrum.Window) string {
	var names []string
	for _, n := range w.Uppers {
		name := fmt.Sprintf("n = %d", n)
		for _, l := range d.Lines {
			if l.UpperLevel == n {
				name = l.Name
			}
		}
		names = append(names, name)
	}
	if len(names) == 0 {
		return "window"
	}
	return strings.Join(names, " + ")
}

// windowYLabel is the ordinate of a window plot: raw counts per nm, or the
// response-corrected relative units.
func windowYLabel(d *diag.Result) string {
	for _, f := range d.Flags {
		if f.Code == diag.FlagUncalibrated {
			return "intensity (counts/nm, raw)"
		}
	}
	if d.IntensityUnit == diag.EnergyUnits.String() {
		return "radiance (rel. energy units/nm)"
	}
	return "intensity (rel. photon units/nm)"
}

// runSummary gives the numbers of the result shown (for a version with
// several spectra, also their mean), its problems and failures.
func runSummary(p *runPage) views.RunSummary {
	var sum views.RunSummary
	if p.Analysis == nil {
		return sum
	}
	sum.Analysed = true
	for _, r := range p.Results {
		if r.Error != "" {
			sum.Failed++
		}
	}
	with := func(v, unc *float64, unit string) string {
		if v == nil {
			return ""
		}
		return views.ValueUnc(v, unc) + " " + unit
	}
	r := p.selected()
	if r == nil || r.Diag == nil {
		return sum
	}
	d := r.Diag
	sum.Texc = with(d.ExcitationTemperatureK, d.ExcitationTemperatureUncK, "K")
	sum.Ne = with(d.ElectronDensityM3, d.ElectronDensityUncM3, "m⁻³")
	sum.NeCM3 = with(d.ElectronDensityCM3, d.ElectronDensityUncCM3, "cm⁻³")
	if d.ElectronDensityM3 == nil && r.Spectrum != nil && r.Spectrum.Whole != nil && r.Spectrum.Whole.ElectronDensityUpperLimitM3 != nil {
		// The whole fit's n_e is only an upper limit (whole_density_limit).
		lim := *r.Spectrum.Whole.ElectronDensityUpperLimitM3
		sum.Ne = "< " + views.ValueUnc(&lim, nil) + " m⁻³ (upper limit)"
		limCM3 := lim * 1e-6
		sum.NeCM3 = "< " + views.ValueUnc(&limCM3, nil) + " cm⁻³"
	}
	sum.Tgas = with(d.GasTemperatureK, d.GasTemperatureUncK, "K")
	switch d.GasTemperatureSource {
	case "two-line":
		sum.TgasLabel = "(solved from Hα and Hβ)"
	case "given":
		sum.TgasLabel = "(given)"
	}
	sum.TexcSplit, sum.NeSplit = views.TexcSplit(d), views.NeSplit(d)
	if sum.NeSplit != nil && sum.NeSplit.LowerLimit {
		sum.Ne = sum.NeSplit.Text + " m⁻³"
		if d.ElectronDensityCM3 != nil {
			sum.NeCM3 = "≥ " + views.SigFig(*d.ElectronDensityCM3, 3) + " cm⁻³"
		}
	}
	sum.NeSource = d.ElectronDensitySource
	if r.Spectrum != nil {
		sum.Route = ModelLabel(ResultModel(r.Spectrum))
		if r.Spectrum.Whole != nil {
			sum.Route += " (see the whole-spectrum fit below)"
		}
	}
	// Problems and cautions, as the Warnings section and the run log count
	// them (notes are method caveats, listed apart and not counted).
	sum.Problems, _ = diag.CountWarnings(d.Flags)
	if len(p.Results) > 1 {
		sum.Of = fmt.Sprintf("spectrum %s (%d of %d in this version)", r.AttachmentName, p.Sel+1, len(p.Results))
		t, tu := meanOf(p.Analysis.Results, func(r store.AnalysisResult) (*float64, *float64) { return r.TexcK, r.TexcUncK })
		n, nu := meanOf(p.Analysis.Results, func(r store.AnalysisResult) (*float64, *float64) { return r.NeM3, r.NeUncM3 })
		sum.Mean = fmt.Sprintf("Mean of the %d spectra: T_exc %s, n_e %s.", len(p.Results),
			withUnit(views.ValueUnc(t, tu), "K"), withUnit(views.ValueUnc(n, nu), "m⁻³"))
	}
	return sum
}

// spectrumFigure draws the whole uploaded spectrum of result r with its
// lines marked (nil when the file cannot be read or drawn: the page then
// shows the windows only).
func (s *Server) spectrumFigure(c echo.Context, base string, p *runPage, r *decodedResult) *views.Figure {
	svg, err := s.spectrumSVG(c, r)
	if err != nil {
		if !errors.Is(err, errNoFigure) {
			s.Log.Warn("whole-spectrum figure", "run", p.Run.ID, "attachment", r.AttachmentID, "err", err)
		}
		return nil
	}
	return &views.Figure{Title: "Whole spectrum " + r.AttachmentName, Href: base + "/spectrum.svg" + p.query(), SVG: inlineSVG(svg)}
}

func (s *Server) spectrumSVG(c echo.Context, r *decodedResult) ([]byte, error) {
	if r.Spectrum == nil || r.Kind != store.KindSpectrum {
		return nil, errNoFigure
	}
	att, err := s.DB.AttachmentContent(c.Request().Context(), r.AttachmentID)
	if err != nil {
		return nil, err
	}
	sp, err := ReadCurve(att.Name, att.Content, CurveOptions{}, nil)
	if err != nil {
		return nil, err
	}
	return SpectrumSVG(sp.WavelengthNM, sp.Counts, r.Diag, r.Spectrum.LineSearch, r.AttachmentName)
}

// figureSpectrum handles GET /runs/:id/spectrum.svg?v=&a=: the whole
// uploaded spectrum of the selected result with its lines marked.
func (s *Server) figureSpectrum(c echo.Context) error {
	p, r, err := s.selectedResult(c)
	if err != nil {
		return err
	}
	svg, err := s.spectrumSVG(c, r)
	return svgBlob(c, fileStem(p, r)+"-spectrum.svg", svg, err)
}

// pressureText shows a pressure as entered, with Pa beside another unit
// ("5 mbar (500 Pa)", "300 Pa").
func pressureText(pa *float64, unit string) string {
	if pa == nil {
		return "—"
	}
	if unit == "" || unit == "Pa" {
		return strconv.FormatFloat(*pa, 'g', 6, 64) + " Pa"
	}
	v, err := strconv.ParseFloat(pressureAsEntered(pa, unit), 64)
	if err != nil {
		v = *pa
	}
	return strconv.FormatFloat(v, 'g', 6, 64) + " " + unit + " (" + strconv.FormatFloat(*pa, 'g', 6, 64) + " Pa)"
}
