package server

import (
	"bytes"
	"encoding/csv"
	"encoding/json"
	"html"
	"math"
	"net/http"
	"os"
	"regexp"
	"strconv"
	"strings"
	"testing"

	"glowlog/diag"
	"glowlog/views"
)

// fixtureResult decodes the result the run page shows (version v).
func fixtureResult(t *testing.T, f *showFixture, v string) diag.Result {
	t.Helper()
	code, _, body := f.get(t, f.path("/analysis.json?v="+v))
	if code != http.StatusOK {
		t.Fatalf("analysis.json: %d %s", code, body)
	}
	var out struct {
		Result diag.Result `json:"result"`
	}
	if err := json.Unmarshal([]byte(body), &out); err != nil {
		t.Fatal(err)
	}
	return out.Result
}

// checkDisplay asserts the issue-8 display parts on a run page or report
// body: the split σ of n_e and T_exc, every model per line with the used
// one marked, and the sources with their status words.
func checkDisplay(t *testing.T, name, body string, d diag.Result) {
	t.Helper()
	// Split σ: total, statistical, systematic and every named part with
	// its size, listed visibly (a table), not only on hover.
	ne := testidInner(body, "unc-split-ne")
	if ne == "" {
		t.Fatalf("%s: no n_e split table", name)
	}
	for _, w := range []string{"total 1σ (statistical ⊕ systematic)", "statistical", "systematic"} {
		if !strings.Contains(ne, w) {
			t.Errorf("%s: n_e split lacks %q", name, w)
		}
	}
	if len(d.ElectronDensityUncParts) == 0 {
		t.Fatalf("%s: fixture result has no systematic parts", name)
	}
	for _, p := range d.ElectronDensityUncParts {
		if !strings.Contains(ne, html.EscapeString("systematic: "+p.Name)) {
			t.Errorf("%s: n_e split lacks the part %q", name, p.Name)
		}
		if !strings.Contains(ne, views.SigFig(p.Sigma, 2)) {
			t.Errorf("%s: n_e split lacks the size %s of %q", name, views.SigFig(p.Sigma, 2), p.Name)
		}
	}
	if d.ElectronDensityUncStatM3 != nil && !strings.Contains(ne, views.SigFig(*d.ElectronDensityUncStatM3, 2)) {
		t.Errorf("%s: n_e split lacks σ_stat %s", name, views.SigFig(*d.ElectronDensityUncStatM3, 2))
	}
	if !strings.Contains(ne, views.SigFig(*d.ElectronDensityUncM3, 2)) {
		t.Errorf("%s: n_e split lacks the total σ %s", name, views.SigFig(*d.ElectronDensityUncM3, 2))
	}
	tx := testidInner(body, "unc-split-texc")
	if !strings.Contains(tx, "statistical") || !strings.Contains(tx, views.SigFig(*d.ExcitationTemperatureUncStatK, 2)) {
		t.Errorf("%s: T_exc split = %q, want the statistical σ %s", name, tx, views.SigFig(*d.ExcitationTemperatureUncStatK, 2))
	}
	// The shown value carries the total σ.
	if want := views.ValueUnc(d.ElectronDensityM3, d.ElectronDensityUncM3); !strings.Contains(testidInner(body, "ne-m3"), want) {
		t.Errorf("%s: n_e = %q, want %q (total σ)", name, testidInner(body, "ne-m3"), want)
	}

	// Every model per line, the used one marked in words.
	models := testidInner(body, "line-models")
	if models == "" {
		t.Fatalf("%s: no per-model table", name)
	}
	nGGC, nSH := 0, 0
	for _, l := range d.Lines {
		for _, e := range l.Densities {
			cell := regexp.MustCompile(`(?s)data-relation="` + regexp.QuoteMeta(e.Relation) + `"[^>]*>(.*?)</td>`).FindStringSubmatch(models)
			if cell == nil {
				t.Errorf("%s: %s has no cell for model %s", name, l.Name, e.Relation)
				continue
			}
			if want := views.ValueUnc(&e.ElectronDensityM3, &e.ElectronDensityUncM3); !strings.Contains(cell[1], want) {
				t.Errorf("%s: %s by %s = %q, want %q", name, l.Name, e.Relation, cell[1], want)
			}
			if e.Preferred != strings.Contains(cell[1], ">used<") {
				t.Errorf("%s: %s by %s: preferred %v but cell %q", name, l.Name, e.Relation, e.Preferred, cell[1])
			}
			if strings.HasPrefix(e.Relation, "ggc2003-") {
				nGGC++
			}
			if strings.HasPrefix(e.Relation, "sh99-") {
				nSH++
			}
		}
	}
	if nGGC == 0 || nSH == 0 {
		t.Errorf("%s: fixture has %d GGC and %d SH99 densities, want both models", name, nGGC, nSH)
	}

	// Sources with status words.
	src := testidInner(body, "sources")
	if src == "" {
		t.Fatalf("%s: no sources section", name)
	}
	for _, r := range d.Relations {
		if !strings.Contains(src, html.EscapeString(r.Source)) {
			t.Errorf("%s: sources lack the source of %s", name, r.ID)
		}
	}
	consts := testidInner(body, "constant-sources")
	if len(d.ConstantSources) == 0 {
		t.Fatalf("%s: fixture has no constant_sources", name)
	}
	for _, c := range d.ConstantSources {
		re := regexp.MustCompile(`(?s)<th scope="row">` + regexp.QuoteMeta(html.EscapeString(c.Name)) + `</th>\s*<td>.*?</td>\s*<td data-testid="constant-status">([^<]*)</td>`)
		m := re.FindStringSubmatch(consts)
		if m == nil {
			t.Errorf("%s: constant %q missing", name, c.Name)
			continue
		}
		if !strings.HasPrefix(m[1], c.Status) {
			t.Errorf("%s: constant %q status %q, want the word %q", name, c.Name, m[1], c.Status)
		}
	}
	for _, w := range []string{">sourced<", ">cross-checked<", "open (not verified)"} {
		if !strings.Contains(src, w) {
			t.Errorf("%s: sources lack the status word %q", name, w)
		}
	}
}

func TestRunPageShowsSplitModelsSources(t *testing.T) {
	f := newShowFixture(t)
	d := fixtureResult(t, f, "1")
	code, _, body := f.get(t, f.path("?v=1"))
	if code != http.StatusOK {
		t.Fatalf("run page: %d", code)
	}
	checkDisplay(t, "run page", body, d)
	// The summary: value ± total with the parts on hover and on demand.
	sum := testidInner(body, "run-summary")
	if !regexp.MustCompile(`data-testid="ne-m3" title="[^"]*statistical \(line widths\): [^"]*systematic: `).MatchString(body) {
		t.Error("summary n_e has no title listing the parts")
	}
	if !strings.Contains(body, `<details class="more unc-split" data-testid="unc-split">`) || !strings.Contains(sum, "Where the ± comes from") {
		t.Error("summary has no on-demand list of the σ parts")
	}
	if !strings.Contains(body, `href="#sources"`) {
		t.Error("no section link to the sources")
	}
	// The key table's n_e cell is the line's total σ.
	for _, l := range d.Lines {
		if l.ElectronDensityM3 == nil || l.DensityLowerLimit {
			continue
		}
		re := regexp.MustCompile(`(?s)<tr data-line="` + strconv.Itoa(l.UpperLevel) + `">.*?data-testid="line-ne"[^>]*>([^<]*)<`)
		m := re.FindStringSubmatch(testidInner(body, "lines-key"))
		if m == nil || m[1] != views.ValueUnc(l.ElectronDensityM3, l.ElectronDensityUncM3) {
			t.Errorf("key table n_e of %s = %v, want %q", l.Name, m, views.ValueUnc(l.ElectronDensityM3, l.ElectronDensityUncM3))
		}
	}
	if !strings.Contains(testidInner(body, "lines-all"), `data-testid="line-unc"`) {
		t.Error("the All-columns fold lacks the per-line σ parts")
	}
}

func TestReportShowsSplitModelsSources(t *testing.T) {
	f := newShowFixture(t)
	d := fixtureResult(t, f, "1")
	code, _, body := f.get(t, f.path("/report?v=1"))
	if code != http.StatusOK {
		t.Fatalf("report: %d", code)
	}
	checkDisplay(t, "report", body, d)
	if !strings.Contains(body, `data-testid="line-unc"`) {
		t.Error("report lacks the per-line σ parts")
	}
}

// The run log shows n_e and T_exc ± the total σ and says so; the CSV
// names its σ columns as total and holds the result's total σ.
func TestRunLogAndCSVTotalSigma(t *testing.T) {
	f := newShowFixture(t)
	d := fixtureResult(t, f, "2") // the run's current version
	code, _, body := f.get(t, "/runs")
	if code != http.StatusOK {
		t.Fatalf("run log: %d", code)
	}
	if note := testidInner(body, "runs-unc-note"); !strings.Contains(note, "total 1σ") || !strings.Contains(note, "statistical ⊕ systematic") ||
		!strings.Contains(note, "run's page") {
		t.Errorf("run log footnote = %q, want it to say σ is total and where the split is", note)
	}
	if !strings.Contains(body, "n_e ± total σ (m⁻³)") || !strings.Contains(body, "T_exc ± total σ (K)") {
		t.Error("run log headers do not say the σ is total")
	}
	if got, want := testidInner(body, "run-ne"), views.ValueUnc(d.ElectronDensityM3, d.ElectronDensityUncM3); got != want {
		t.Errorf("run log n_e = %q, want %q (total σ)", got, want)
	}
	code, _, csvBody := f.get(t, "/runs.csv")
	if code != http.StatusOK {
		t.Fatalf("runs.csv: %d", code)
	}
	rows, err := csv.NewReader(strings.NewReader(csvBody)).ReadAll()
	if err != nil || len(rows) != 2 {
		t.Fatalf("csv: %v, %d rows", err, len(rows))
	}
	col := map[string]int{}
	for i, h := range rows[0] {
		col[h] = i
	}
	for h, want := range map[string]*float64{"ne_m3_unc_total_1sigma": d.ElectronDensityUncM3, "texc_K_unc_total_1sigma": d.ExcitationTemperatureUncK} {
		i, ok := col[h]
		if !ok {
			t.Errorf("CSV header lacks %s: %v", h, rows[0])
			continue
		}
		// The run's summary combines its results (inverse-variance), which
		// for one result may differ from it in the last bit.
		if got, err := strconv.ParseFloat(rows[1][i], 64); err != nil || math.Abs(got-*want) > 1e-12*math.Abs(*want) {
			t.Errorf("CSV %s = %s, want the total σ %g", h, rows[1][i], *want)
		}
	}
	// The fixture's total σ really is more than its statistical part.
	if d.ElectronDensityUncStatM3 == nil || !(*d.ElectronDensityUncM3 > *d.ElectronDensityUncStatM3*1.01) {
		t.Errorf("fixture n_e σ total %v vs stat %v: cannot tell them apart", d.ElectronDensityUncM3, d.ElectronDensityUncStatM3)
	}
}

// The trend legend calls the error bars the total σ.
func TestTrendLegendTotalSigma(t *testing.T) {
	items := trendLegend(trendKeys{}, nil, false, false, false, false, true)
	found := false
	for _, it := range items {
		if it.Shape == "bar" {
			found = strings.Contains(it.Label, "±1σ total")
		}
	}
	if !found {
		t.Errorf("legend %v has no error bar labelled ±1σ total", items)
	}
}

// The API's run summary names its σ as total and each result carries the
// split.
func TestAPIRunSummaryTotalSigma(t *testing.T) {
	f := newAPIFixture(t)
	id := f.createRun(runJSON)
	body, err := os.ReadFile("../testdata/example_hbeta.json")
	if err != nil {
		t.Fatal(err)
	}
	if code, out := f.do(http.MethodPost, "/api/v1/runs/"+strconv.FormatInt(id, 10)+"/measurements", f.token, "application/json", bytes.NewReader(body)); code != http.StatusCreated {
		t.Fatalf("%d %v", code, out)
	}
	_, run := f.do(http.MethodGet, "/api/v1/runs/"+strconv.FormatInt(id, 10), f.token, "", nil)
	sum := run["summary"].(map[string]any)
	for _, k := range []string{"electron_density_unc_m3", "excitation_temperature_unc_K"} {
		if sum[k] == nil {
			t.Fatalf("summary lacks %s: %v", k, sum)
		}
	}
	if sum["electron_density_unc_total_m3"] != sum["electron_density_unc_m3"] || sum["excitation_temperature_unc_total_K"] != sum["excitation_temperature_unc_K"] {
		t.Errorf("summary total fields %v", sum)
	}
	if k, _ := sum["uncertainty_kind"].(string); !strings.Contains(k, "total 1σ = statistical ⊕ systematic") {
		t.Errorf("uncertainty_kind = %q", k)
	}
	res := run["analysis"].(map[string]any)["results"].([]any)[0].(map[string]any)
	tot, _ := res["electron_density_unc_m3"].(float64)
	st, _ := res["electron_density_unc_stat_m3"].(float64)
	sy, ok := res["electron_density_unc_sys_m3"].(float64)
	if !ok || math.Abs(math.Hypot(st, sy)-tot) > 1e-6*tot {
		t.Errorf("result split stat %v ⊕ sys %v ≠ total %v", res["electron_density_unc_stat_m3"], res["electron_density_unc_sys_m3"], tot)
	}
	if _, ok := res["excitation_temperature_unc_stat_K"].(float64); !ok {
		t.Errorf("result lacks excitation_temperature_unc_stat_K: %v", res)
	}
}
