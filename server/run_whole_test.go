package server

import (
	"encoding/csv"
	"encoding/json"
	"fmt"
	"html"
	"math"
	"net/http"
	"regexp"
	"strings"
	"testing"

	"glowlog/diag"
	"glowlog/diag/spectrum"
	"glowlog/store"
	"glowlog/views"
)

func fp(v float64) *float64 { return &v }

// handWholeFit is a whole-spectrum fit built by hand (not by the
// pipeline) around Hβ: the page must show exactly these values.
func handWholeFit() *spectrum.WholeFit {
	w := &spectrum.WholeFit{Areas: spectrum.WholeAreasBoltzmann, RangeNM: [2]float64{480, 492}, Pixels: 600,
		ReducedChi2: 1.07, DOF: 593, Iterations: 14, Converged: true,
		DopplerNote: "the tables' own Doppler part was removed and the given gas temperature's put back",
		Params: []spectrum.WholeParam{
			{Name: "T_exc", Label: "Excitation temperature", Unit: "K", Value: 11000, Unc: 600},
			{Name: "scale", Label: "Boltzmann scale", Unit: "", Value: 3.2e9, Unc: 1.1e8},
			{Name: "n_e", Label: "Electron density", Unit: "m⁻³", Value: 2.01e21, Unc: 5e19},
			{Name: "T_gas", Label: "Gas temperature", Unit: "K", Value: 1200, Fixed: true},
			{Name: "offset", Label: "Wavelength offset", Unit: "nm", Value: 0.0012, Unc: 0.0004},
			{Name: "baseline_0", Label: "Baseline, constant", Unit: "counts/nm", Value: 40, Unc: 2},
		},
		Correlation: [][]float64{
			{1, 0.97, 0.1, -0.2, 0.05},
			{0.97, 1, -0.85, 0.6, 0.1},
			{0.1, -0.85, 1, 0.3, 0},
			{-0.2, 0.6, 0.3, 1, 0.2},
			{0.05, 0.1, 0, 0.2, 1},
		},
		Lines: []spectrum.WholeLine{{Upper: 4, Name: "Hβ", Shape: "SH99", Area: 12345, AreaUnc: 67, StarkFWHMNM: 0.412,
			ReducedChi2: 1.12, ResidualRMS: 1.05, PeakSNR: 310}},
		ExcitationTemperatureK: fp(11000), ExcitationTemperatureUncK: fp(600),
		ElectronDensityM3: fp(2.01e21), ElectronDensityUncM3: fp(5e19),
		LinesExcitationTemperatureK: fp(10500), LinesExcitationTemperatureUncK: fp(700),
		LinesElectronDensityM3: fp(1.80e21), LinesElectronDensityUncM3: fp(6e19),
		TexcDiffSigma: fp(0.54), NeDiffSigma: fp(2.69),
	}
	for i := range 600 {
		x := 480 + 12*float64(i)/599
		m := 40 + 1e4*math.Exp(-0.5*math.Pow((x-486.13)/0.25, 2))
		d := m + 3*math.Sin(float64(i))
		w.WavelengthNM = append(w.WavelengthNM, x)
		w.Data, w.Model, w.Residual = append(w.Data, d), append(w.Model, m), append(w.Residual, d-m)
	}
	return w
}

// putWholeFit stores w into the result of a run's newest version, as the
// route whose numbers are at the top, with the disagreement flag.
func putWholeFit(t *testing.T, f *runsFixture, runID int64, w *spectrum.WholeFit) {
	t.Helper()
	putWholeFitWith(t, f, runID, w, nil)
}

// putWholeFitWith is putWholeFit with edit applied to the stored result
// last (nil: none).
func putWholeFitWith(t *testing.T, f *runsFixture, runID int64, w *spectrum.WholeFit, edit func(*spectrum.Result)) {
	t.Helper()
	var id int64
	var res string
	var series []byte
	if err := f.db.SQL().QueryRow(`SELECT r.id, r.result, r.series FROM analysis_results r JOIN analyses a ON a.id = r.analysis_id
		WHERE a.run_id = ? ORDER BY a.version DESC LIMIT 1`, runID).Scan(&id, &res, &series); err != nil {
		t.Fatal(err)
	}
	whole, err := spectrum.ExpandSeries(nil, res, series)
	if err != nil {
		t.Fatal(err)
	}
	var sr spectrum.Result
	if err := json.Unmarshal(whole, &sr); err != nil {
		t.Fatal(err)
	}
	sr.Model, sr.Whole = spectrum.ModelWhole, w
	sr.Flags = append(sr.Flags, diag.Flag{Code: spectrum.FlagWholeDisagrees, Message: "the whole-spectrum fit and the line-by-line route disagree on n_e by 2.7σ"})
	if edit != nil {
		edit(&sr)
	}
	b, err := json.Marshal(sr)
	if err != nil {
		t.Fatal(err)
	}
	// stored whole, as results were before their series were stored apart
	if _, err := f.db.SQL().Exec(`UPDATE analysis_results SET result = ?, series = NULL WHERE id = ?`, string(b), id); err != nil {
		t.Fatal(err)
	}
}

// cell returns the text of the element with data-testid id (tags
// stripped), or "" when absent.
func cell(page, id string) string {
	m := regexp.MustCompile(`data-testid="` + regexp.QuoteMeta(id) + `"[^>]*>((?s:.*?))</(td|p|span|div|section)>`).FindStringSubmatch(page)
	if m == nil {
		return ""
	}
	return strings.Join(strings.Fields(html.UnescapeString(regexp.MustCompile(`<[^>]+>`).ReplaceAllString(m[1], ""))), " ")
}

// TestRunPageWholeFit: a result with a whole-spectrum fit gets the
// section (linked from the section list) with the fit's own values: the
// route, the two routes side by side, parameters with σ, fixed ones
// marked, the correlations of the free ones banded by |r|, the per-line
// table, the Doppler note, the figure with its zoom links; the figure
// alone, zoomed, and the exports say the route.
func TestRunPageWholeFit(t *testing.T) {
	f := newRunsFixture(t)
	_, sess := f.signIn("opal", store.RoleOperator)
	r := f.createTestRun(sess)
	plain := f.get(fmt.Sprintf("/runs/%d", r.ID), sess).Body.String()
	if strings.Contains(plain, `href="#whole-fit"`) || strings.Contains(plain, `data-testid="whole-fit"`) {
		t.Errorf("a result without a whole-spectrum fit shows the section")
	}
	if got := cell(plain, "result-route"); !strings.HasPrefix(got, "Route: line by line") {
		t.Errorf("route of a line-by-line result: %q", got)
	}

	w := handWholeFit()
	putWholeFit(t, f, r.ID, w)
	rec := f.get(fmt.Sprintf("/runs/%d", r.ID), sess)
	if rec.Code != http.StatusOK {
		t.Fatalf("run page: %d", rec.Code)
	}
	page := rec.Body.String()
	if !strings.Contains(page, `<a href="#whole-fit">Whole-spectrum fit</a>`) {
		t.Errorf("section list lacks the whole-fit link")
	}
	checks := map[string]string{
		"result-route":        "Route: whole-spectrum fit (the whole fitted range at once)",
		"summary-route":       "Route: whole-spectrum fit (see the whole-spectrum fit below)",
		"whole-param-T_exc":   views.ValueUnc(fp(11000), fp(600)),
		"whole-param-n_e":     views.ValueUnc(fp(2.01e21), fp(5e19)),
		"whole-param-T_gas":   "1200",
		"whole-param-offset":  views.ValueUnc(fp(0.0012), fp(0.0004)),
		"compare-whole-T_exc": views.ValueUnc(fp(11000), fp(600)),
		"compare-lines-T_exc": views.ValueUnc(fp(10500), fp(700)),
		"compare-diff-T_exc":  "0.54",
		"compare-lines-n_e":   views.ValueUnc(fp(1.8e21), fp(6e19)),
		"compare-diff-n_e":    "2.7 far apart",
		"whole-line-area-Hβ":  views.ValueUnc(fp(12345), fp(67)),
		"whole-doppler":       "Doppler: the tables' own Doppler part was removed and the given gas temperature's put back",
		"whole-summary":       "Reduced χ² 1.07 with 593 degrees of freedom, 600 pixels from 480 to 492 nm, 14 iterations.",
		"whole-disagrees":     "The two routes disagree beyond their uncertainties",
	}
	for id, want := range checks {
		if got := cell(page, id); !strings.HasPrefix(got, want) {
			t.Errorf("%s: %q, want %q", id, got, want)
		}
	}
	if !strings.Contains(page, "10²¹") {
		t.Errorf("n_e is not written with a power of ten")
	}
	// The T_gas row is marked fixed; five free parameters in the matrix.
	if !regexp.MustCompile(`<tr data-param="T_gas" class="fixed">`).MatchString(page) || strings.Contains(cell(page, "whole-param-n_e"), "fixed") {
		t.Errorf("T_gas is not marked fixed")
	}
	corr := regexp.MustCompile(`(?s)<table class="corr-matrix" data-testid="whole-corr">.*?</table>`).FindString(page)
	for _, want := range []string{`<th scope="col">T_exc</th><th scope="col">scale</th><th scope="col">n_e</th><th scope="col">Δλ</th><th scope="col">b0</th>`,
		`<td class="corr r3">0.97</td>`, `<td class="corr r2">−0.85</td>`, `<td class="corr r1">0.60</td>`, `<td class="corr r0">−0.20</td>`, `<td class="corr diag">1</td>`} {
		if !strings.Contains(corr, want) {
			t.Errorf("correlation matrix lacks %s", want)
		}
	}
	if strings.Contains(corr, ">T_g<") {
		t.Errorf("the fixed T_gas is in the correlation matrix")
	}
	// The figure inline with its data area, and zoom links: the whole
	// range (current) and the Hβ window.
	fig := regexp.MustCompile(`(?s)<figure class="whole-spectrum whole-fit-figure".*?</figure>`).FindString(page)
	if !strings.Contains(fig, `data-px0="`) || !strings.Contains(fig, "<svg") {
		t.Errorf("whole-fit figure lacks its inline SVG with the data area")
	}
	if !regexp.MustCompile(`class="zoom-link current"[^>]*>whole range</a>`).MatchString(fig) || !strings.Contains(fig, `>Hβ</a>`) {
		t.Errorf("zoom links: %s", regexp.MustCompile(`(?s)<nav class="zoom.*?</nav>`).FindString(fig))
	}
	// Zoomed through the page's query: the title says the range and the
	// matching link is current.
	hb := regexp.MustCompile(`href="([^"]*)"[^>]*data-svg="[^"]*"[^>]*>Hβ</a>`).FindStringSubmatch(fig)
	if hb == nil {
		t.Fatalf("no Hβ zoom link")
	}
	href := strings.ReplaceAll(strings.TrimSuffix(hb[1], "#whole-fit"), "&amp;", "&")
	zoomed := f.get(href, sess).Body.String()
	if !regexp.MustCompile(`class="zoom-link current"[^>]*>Hβ</a>`).MatchString(zoomed) || !strings.Contains(zoomed, "Whole-spectrum fit, 48") {
		t.Errorf("page at the Hβ zoom (%s) does not show it", href)
	}
	// The figure alone.
	svg := f.get(fmt.Sprintf("/runs/%d/whole.svg?lo=485&hi=487.5", r.ID), sess)
	if svg.Code != http.StatusOK || svg.Header().Get("Content-Type") != "image/svg+xml" || !strings.Contains(svg.Body.String(), `data-x0="485"`) ||
		!strings.Contains(svg.Body.String(), "Whole-spectrum fit, 485–487.5 nm") {
		t.Errorf("whole.svg zoomed: %d %s %.200s", svg.Code, svg.Header().Get("Content-Type"), svg.Body.String())
	}
	if rec := f.get(fmt.Sprintf("/runs/%d/whole.svg?lo=490&hi=485", r.ID), sess); rec.Code != http.StatusBadRequest || !strings.Contains(rec.Body.String(), "lo &lt; hi") {
		t.Errorf("reversed zoom: %d", rec.Code)
	}
	// Exports and the report say the route.
	var out struct {
		Model  string `json:"model"`
		Result struct {
			Model string `json:"model"`
		} `json:"result"`
	}
	if err := json.Unmarshal(f.get(fmt.Sprintf("/runs/%d/analysis.json", r.ID), sess).Body.Bytes(), &out); err != nil || out.Model != "whole" || out.Result.Model != "whole" {
		t.Errorf("analysis.json model %q / %q (%v)", out.Model, out.Result.Model, err)
	}
	rows, err := csv.NewReader(f.get(fmt.Sprintf("/runs/%d/lines.csv", r.ID), sess).Body).ReadAll()
	if err != nil || len(rows) < 2 || rows[0][len(rows[0])-1] != "model" || rows[1][len(rows[1])-1] != "whole" {
		t.Errorf("lines.csv: model column %v (%v)", rows, err)
	}
	report := f.get(fmt.Sprintf("/runs/%d/report", r.ID), sess).Body.String()
	if !strings.Contains(report, `data-testid="whole-fit"`) || !strings.Contains(report, `data-testid="whole-corr-details" open`) ||
		!strings.HasPrefix(cell(report, "result-route"), "Route: whole-spectrum fit") || strings.Contains(report, `class="zoom noprint"`) {
		t.Errorf("report lacks the whole fit (open, no zoom) or its route")
	}
}

// TestWholeFitFigureEdges: a fit without plot series has no figure (the
// section still shows the numbers); a zoom outside the range is a 404.
func TestWholeFitFigureEdges(t *testing.T) {
	w := handWholeFit()
	if _, _, err := WholeFitSVG(w, nil, 600, 700, "y"); err != errNoFigure {
		t.Errorf("zoom outside the range: %v, want errNoFigure", err)
	}
	w.WavelengthNM, w.Data, w.Model, w.Residual = nil, nil, nil, nil
	r := &decodedResult{Spectrum: &spectrum.Result{Model: spectrum.ModelWhole, Whole: w}}
	r.Diag = &r.Spectrum.Result
	p := &runPage{Run: store.Run{ID: 1}, Sel: -1}
	v := wholeFitView("/runs/1", p, r, 0, 0, true)
	if v == nil || v.Figure != nil || len(v.Params) != 6 || len(v.Corr) != 5 {
		t.Fatalf("view without series: %+v", v)
	}
	for _, c := range []struct {
		r    float64
		text string
		band int
	}{{-0.003, "0.00", 0}, {-0.5, "−0.50", 1}, {0.949, "0.95", 2}, {-0.95, "−0.95", 3}, {math.NaN(), "—", 0}} {
		if got := corrCell(c.r, false); got.Text != c.text || got.Band != c.band {
			t.Errorf("corrCell(%g) = %+v, want %q band %d", c.r, got, c.text, c.band)
		}
	}
	// A correlation matrix of the wrong size is left out, not misread.
	w.Correlation = w.Correlation[:3]
	if v := wholeFitView("/runs/1", p, r, 0, 0, true); len(v.Corr) != 0 {
		t.Errorf("a 3×5 correlation matrix for 5 free parameters was shown")
	}
}

// TestRouteWords: each result says its route; a whole fit that gave no
// result (the pipeline reports the line-by-line numbers) says so.
func TestRouteWords(t *testing.T) {
	for _, c := range []struct {
		r    *decodedResult
		want string
	}{
		{&decodedResult{}, "line by line (a line table always is)"},
		{&decodedResult{Spectrum: &spectrum.Result{}}, "line by line (each line's window on its own)"},
		{&decodedResult{Spectrum: &spectrum.Result{Model: spectrum.ModelWhole}}, "whole-spectrum fit (the whole fitted range at once)"},
		{&decodedResult{Spectrum: &spectrum.Result{Model: spectrum.ModelLines, Result: diag.Result{Flags: []diag.Flag{{Code: flagWholeFailed}}}}},
			"line by line (each line's window on its own): the whole-spectrum fit asked for gave no result, see the warnings"},
	} {
		if got := routeWords(c.r); got != c.want {
			t.Errorf("routeWords = %q, want %q", got, c.want)
		}
	}
}

// TestRunPageDensityLimit: when the whole fit's n_e is only an upper
// limit (no value at the top), the run summary says "< limit (upper
// limit)" in m⁻³ and cm⁻³, not "not determined".
func TestRunPageDensityLimit(t *testing.T) {
	f := newRunsFixture(t)
	_, sess := f.signIn("opal", store.RoleOperator)
	r := f.createTestRun(sess)
	w := handWholeFit()
	w.ElectronDensityM3, w.ElectronDensityUncM3 = nil, nil
	w.ElectronDensityUpperLimitM3 = fp(2.3e20)
	putWholeFitWith(t, f, r.ID, w, func(sr *spectrum.Result) {
		sr.ElectronDensityM3, sr.ElectronDensityUncM3, sr.ElectronDensityCM3, sr.ElectronDensityUncCM3 = nil, nil, nil, nil
		sr.Flags = append(sr.Flags, diag.Flag{Code: spectrum.FlagWholeDensityLimit, Message: "whole-spectrum fit: n_e is only an upper limit"})
	})
	page := f.get(fmt.Sprintf("/runs/%d", r.ID), sess).Body.String()
	// (cell reads a <dd> on to the next listed closing tag: the m⁻³
	// value comes first, then the cm⁻³ one.)
	want := "< " + views.ValueUnc(fp(2.3e20), nil) + " m⁻³ (upper limit)" + "< " + views.ValueUnc(fp(2.3e14), nil) + " cm⁻³"
	if got := cell(page, "ne-m3"); !strings.HasPrefix(got, want) {
		t.Errorf("n_e in the summary: %q, want %q", got, want)
	}
}
