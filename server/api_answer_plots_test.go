package server

import (
	"bytes"
	"encoding/json"
	"mime/multipart"
	"net/http"
	"net/http/httptest"
	"os"
	"reflect"
	"strconv"
	"strings"
	"testing"
)

// TestAPIAnswerWithoutPlots: an upload with ?plots=none answers with the
// same result as one without it, less the plot series of the windows and
// of the whole fit (single file and batch), with a true Content-Length;
// what is stored keeps its series; a value other than all or none is a
// 400 naming the parameter, and stores nothing.
func TestAPIAnswerWithoutPlots(t *testing.T) {
	f := newAPIFixture(t)
	data, err := os.ReadFile("../testdata/spectra/scipy_bench_2048.csv")
	if err != nil {
		t.Fatal(err)
	}
	post := func(run int64, query string, files int) (int, []byte) {
		t.Helper()
		var buf bytes.Buffer
		w := multipart.NewWriter(&buf)
		for k, v := range map[string]string{"instrument_fwhm_nm": "0.35", "gas_temperature_K": "1000", "model": "whole"} {
			w.WriteField(k, v)
		}
		for range files {
			fw, err := w.CreateFormFile("file", "s.csv") // the same name: the same result
			if err != nil {
				t.Fatal(err)
			}
			fw.Write(data)
		}
		w.Close()
		req := httptest.NewRequest(http.MethodPost, "/api/v1/runs/"+strconv.FormatInt(run, 10)+"/measurements"+query, &buf)
		req.Header.Set("Authorization", "Bearer "+f.token)
		req.Header.Set("Content-Type", w.FormDataContentType())
		rec := httptest.NewRecorder()
		f.s.ServeHTTP(rec, req)
		if rec.Code == http.StatusCreated && rec.Header().Get("Content-Length") != strconv.Itoa(rec.Body.Len()) {
			t.Errorf("Content-Length %q, body %d bytes", rec.Header().Get("Content-Length"), rec.Body.Len())
		}
		return rec.Code, rec.Body.Bytes()
	}
	parse := func(b []byte) map[string]any {
		t.Helper()
		var m map[string]any
		if err := json.Unmarshal(b, &m); err != nil {
			t.Fatalf("answer is not JSON: %v: %.200s", err, b)
		}
		return m
	}
	// dropPlots removes the non-empty plot series of a result's windows
	// and whole fit, and its ids; it returns how many series it removed.
	dropPlots := func(m map[string]any) int {
		n := 0
		drop := func(o map[string]any) {
			for _, k := range []string{"wavelength_nm", "data", "model", "residual"} {
				if a, ok := o[k].([]any); ok && len(a) > 0 {
					delete(o, k)
					n++
				}
			}
		}
		ws, _ := m["windows"].([]any)
		for _, w := range ws {
			drop(w.(map[string]any))
		}
		if w, ok := m["whole_fit"].(map[string]any); ok {
			drop(w)
		}
		for _, k := range []string{"run_id", "attachment_id"} {
			delete(m, k)
		}
		return n
	}

	code, full := post(f.createRun(runJSON), "", 1)
	if code != http.StatusCreated {
		t.Fatalf("%d %.300s", code, full)
	}
	run := f.createRun(runJSON)
	code, brief := post(run, "?plots=none", 1)
	if code != http.StatusCreated {
		t.Fatalf("plots=none: %d %.300s", code, brief)
	}
	if len(brief)*3 > len(full) {
		t.Errorf("plots=none: %d bytes, %d with the series", len(brief), len(full))
	}
	fm, bm := parse(full), parse(brief)
	if n := dropPlots(fm); n < 8 {
		t.Fatalf("only %d series in the full answer", n)
	}
	if n := dropPlots(bm); n != 0 {
		t.Errorf("plots=none: %d series in the answer", n)
	}
	if bm["electron_density_m3"] == nil || !reflect.DeepEqual(fm, bm) {
		t.Errorf("plots=none: the answer is not the full one less its series")
	}

	code, batch := post(f.createRun(runJSON), "?plots=none", 2)
	if code != http.StatusCreated {
		t.Fatalf("batch, plots=none: %d %.300s", code, batch)
	}
	ms, _ := parse(batch)["measurements"].([]any)
	if len(ms) != 2 {
		t.Fatalf("batch: %d measurements: %.300s", len(ms), batch)
	}
	for i, m := range ms {
		m := m.(map[string]any)
		if n := dropPlots(m); n != 0 || !reflect.DeepEqual(m, bm) {
			t.Errorf("batch measurement %d: %d series; same result as the single upload: %v", i, n, reflect.DeepEqual(m, bm))
		}
	}

	// What is stored keeps its plot series.
	req := httptest.NewRequest(http.MethodGet, "/api/v1/runs/"+strconv.FormatInt(run, 10)+"?full=1", nil)
	req.Header.Set("Authorization", "Bearer "+f.token)
	rec := httptest.NewRecorder()
	f.s.ServeHTTP(rec, req)
	if rec.Code != http.StatusOK || !strings.Contains(rec.Body.String(), `"wavelength_nm":[4`) {
		t.Errorf("stored analysis of the plots=none upload: %d, series not found: %.300s", rec.Code, rec.Body.String())
	}

	a0, n0 := f.counts()
	code, out := post(run, "?plots=some", 1)
	if code != http.StatusBadRequest || !strings.Contains(string(out), "plots") {
		t.Errorf("plots=some: %d %s", code, out)
	}
	if a, n := f.counts(); a != a0 || n != n0 {
		t.Errorf("plots=some stored something: files %d → %d, analyses %d → %d", a0, a, n0, n)
	}
}
