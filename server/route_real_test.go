package server

import (
	"encoding/json"
	"fmt"
	"net/http"
	"os"
	"strings"
	"testing"

	"glowlog/diag/spectrum"
	"glowlog/views"
)

// TestWholeRouteReal: with the pipeline's whole-spectrum fit, a run logged
// with model "whole" stores a result that took that route, and its page
// shows the section with the fit's own numbers (analyze --model:
// TestAnalyzeModelRoute in package main).
func TestWholeRouteReal(t *testing.T) {
	f := newRunsFixture(t)
	_, sess := f.signIn("opal", "operator")
	v := newRunValues()
	v.Set("model", "whole")
	v.Set("line_shape", "") // the whole model uses the Stark shapes
	rec := f.postMultipart("/runs", sess, v, formFile{"spectra", "bench.csv", benchSpectrum(t)})
	m := runLocation.FindStringSubmatch(rec.Header().Get("Location"))
	if rec.Code != http.StatusSeeOther || m == nil {
		t.Fatalf("create: %d %.300s", rec.Code, rec.Body.String())
	}
	id := atoi64(t, m[1])
	checkRouteUsed(t, f.db, id, 1)
	a, err := f.db.AnalysisVersion(t.Context(), id, 1)
	if err != nil {
		t.Fatal(err)
	}
	var sr spectrum.Result
	if err := json.Unmarshal([]byte(a.Results[0].Result), &sr); err != nil {
		t.Fatal(err)
	}
	if sr.Model != spectrum.ModelWhole || sr.Whole == nil {
		t.Fatalf("stored result: route %q, whole fit %v", sr.Model, sr.Whole != nil)
	}
	page := f.get(fmt.Sprintf("/runs/%d", id), sess).Body.String()
	for _, want := range []string{`data-testid="whole-fit"`, `href="#whole-fit"`, `data-testid="whole-params"`} {
		if !strings.Contains(page, want) {
			t.Errorf("run page lacks %s", want)
		}
	}
	if got, want := cell(page, "whole-param-n_e"), wholeParamText(sr.Whole, "n_e"); got != want || want == "" {
		t.Errorf("n_e parameter cell %q, want the stored fit's %q", got, want)
	}

}

func benchSpectrum(t *testing.T) []byte {
	t.Helper()
	b, err := os.ReadFile("../testdata/spectra/scipy_bench_2048.csv")
	if err != nil {
		t.Fatal(err)
	}
	return b
}

// wholeParamText is the page's text for parameter name of w.
func wholeParamText(w *spectrum.WholeFit, name string) string {
	for _, p := range w.Params {
		if p.Name == name && !p.Fixed {
			v, u := p.Value, p.Unc
			return views.ValueUnc(&v, &u)
		}
	}
	return ""
}
