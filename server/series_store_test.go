package server

import (
	"bytes"
	"context"
	"encoding/json"
	"fmt"
	"mime/multipart"
	"net/http"
	"net/http/httptest"
	"net/url"
	"strings"
	"testing"

	"glowlog/diag/spectrum"
	"glowlog/store"
)

// TestStoredSeriesReadAsBefore: a spectrum result's plot series are
// stored apart in their compact form (migration 0016), and every path that
// shows them gives what the previous storage (the whole JSON in the
// result column) gave:
//
//   - the stored JSON with its series put back is byte for byte what
//     encodeSpectrumResult writes for a fresh analysis of the same file
//     with the version's settings (what was stored before);
//   - the run page, the report, analysis.json, lines.csv, whole.svg and
//     window.svg for every file, and the API's run with ?full=1 and
//     without, answer the same bytes before and after the rows are
//     rewritten to the previous form (series inside the JSON, as in a
//     database written before the migration), for a run of whole-route
//     spectra with a second version that keeps the first version's
//     results (same_as);
//   - the series form is what makes the stored row smaller.
func TestStoredSeriesReadAsBefore(t *testing.T) {
	ctx := context.Background()
	f := newRunsFixture(t)
	u, sess := f.signIn("ada", store.RoleOperator)
	tok, h := NewToken()
	if _, err := f.db.CreateToken(ctx, u.ID, "test", h); err != nil {
		t.Fatal(err)
	}
	files := benchStarkSpectra(t, 3)
	v := newRunValues()
	v.Del("line_shape") // Stark-shaped: the default route, the whole fit
	v.Set("instrument_fwhm_nm", fmt.Sprint(benchRunFWHM))
	v.Set("gas_temperature_k", fmt.Sprint(benchRunTgas))
	rec := f.postMultipart("/runs", sess, v, formFile{"spectra", "s1.csv", files[0]}, formFile{"spectra", "s2.csv", files[1]})
	if rec.Code != http.StatusSeeOther {
		t.Fatalf("create: %d %.300s", rec.Code, rec.Body.String())
	}
	id := atoi64(t, runLocation.FindStringSubmatch(rec.Header().Get("Location"))[1])
	// a second version: the two results kept (same_as), a third new
	if rec := f.postMultipart(fmt.Sprintf("/runs/%d/attachments", id), sess, url.Values{}, formFile{"spectra", "s3.csv", files[2]}); rec.Code != http.StatusSeeOther {
		t.Fatalf("upload: %d %.300s", rec.Code, rec.Body.String())
	}
	var split, kept int
	if err := f.db.SQL().QueryRow(`SELECT count(series), count(same_as) FROM analysis_results`).Scan(&split, &kept); err != nil {
		t.Fatal(err)
	}
	if split != 3 || kept != 2 {
		t.Fatalf("%d results with their series apart, %d kept; want 3 and 2", split, kept)
	}

	// The whole JSON of every result is what was stored before.
	atts, err := f.db.Attachments(ctx, id)
	if err != nil {
		t.Fatal(err)
	}
	for version := 1; version <= 2; version++ {
		a, err := f.db.AnalysisVersion(ctx, id, version)
		if err != nil {
			t.Fatal(err)
		}
		var st AnalysisSettings
		if err := json.Unmarshal([]byte(a.Settings), &st); err != nil {
			t.Fatal(err)
		}
		fresh, err := f.s.analyzeAttachments(ctx, atts, st)
		if err != nil {
			t.Fatal(err)
		}
		if len(a.Results) != version+1 {
			t.Fatalf("version %d: %d results", version, len(a.Results))
		}
		for i, r := range a.Results {
			sr := fresh[i].Spectrum
			if sr == nil || sr.Model != spectrum.ModelWhole || sr.Whole == nil || len(sr.Whole.Data) == 0 {
				t.Fatalf("version %d %s: no whole fit with series", version, r.AttachmentName)
			}
			var want bytes.Buffer
			if err := encodeSpectrumResult(&want, sr); err != nil {
				t.Fatal(err)
			}
			if r.Result != want.String() || r.Series != nil {
				t.Errorf("version %d %s: stored JSON (%d bytes) differs from the previous storage's (%d bytes)", version, r.AttachmentName, len(r.Result), want.Len())
			}
			c, err := f.db.AnalysisVersionCompact(ctx, id, version)
			if err != nil {
				t.Fatal(err)
			}
			cr := c.Results[i]
			if !strings.Contains(cr.Result, "[null]") || len(cr.Result)+len(cr.Series) > want.Len()*6/10 {
				t.Errorf("version %d %s: stored %d + %d bytes for %d bytes of JSON", version, r.AttachmentName, len(cr.Result), len(cr.Series), want.Len())
			}
		}
	}

	// Every reader of the series answers the same before and after the
	// rows are rewritten to the previous form.
	var paths []string
	for _, p := range []string{"", "/report", "/analysis.json", "/lines.csv"} {
		paths = append(paths, fmt.Sprintf("/runs/%d%s", id, p), fmt.Sprintf("/runs/%d%s?v=1", id, p))
	}
	for i, a := range atts {
		for _, ver := range []int{1, 2} {
			if ver == 1 && i == 2 {
				continue // s3.csv came with version 2
			}
			paths = append(paths, fmt.Sprintf("/runs/%d/whole.svg?v=%d&a=%d", id, ver, a.ID),
				fmt.Sprintf("/runs/%d/whole.svg?v=%d&a=%d&lo=480&hi=492", id, ver, a.ID),
				fmt.Sprintf("/runs/%d/window.svg?v=%d&a=%d&k=0", id, ver, a.ID))
		}
	}
	api := []string{fmt.Sprintf("/api/v1/runs/%d?full=1", id), fmt.Sprintf("/api/v1/runs/%d", id)}
	read := func() map[string]string {
		out := map[string]string{}
		for _, p := range paths {
			rec := f.get(p, sess)
			if rec.Code != http.StatusOK {
				t.Fatalf("GET %s: %d %.300s", p, rec.Code, rec.Body.String())
			}
			out[p] = rec.Body.String()
		}
		for _, p := range api {
			req := httptest.NewRequest(http.MethodGet, p, nil)
			req.Header.Set("Authorization", "Bearer "+tok)
			rec := httptest.NewRecorder()
			f.s.ServeHTTP(rec, req)
			if rec.Code != http.StatusOK {
				t.Fatalf("GET %s: %d %.300s", p, rec.Code, rec.Body.String())
			}
			out[p] = rec.Body.String()
		}
		return out
	}
	now := read()
	if !strings.Contains(now[api[0]], `"wavelength_nm":[`) || strings.Contains(now[api[0]], "[null]") {
		t.Fatalf("API ?full=1 without whole series: %.300s", now[api[0]])
	}
	rows, err := f.db.SQL().Query(`SELECT id, result, series FROM analysis_results WHERE series IS NOT NULL`)
	if err != nil {
		t.Fatal(err)
	}
	type row struct {
		id     int64
		result string
	}
	var old []row
	for rows.Next() {
		var r row
		var series []byte
		if err := rows.Scan(&r.id, &r.result, &series); err != nil {
			t.Fatal(err)
		}
		whole, err := spectrum.ExpandSeries(nil, r.result, series)
		if err != nil {
			t.Fatal(err)
		}
		r.result = string(whole)
		old = append(old, r)
	}
	rows.Close()
	for _, r := range old {
		if _, err := f.db.SQL().Exec(`UPDATE analysis_results SET result = ?, series = NULL WHERE id = ?`, r.result, r.id); err != nil {
			t.Fatal(err)
		}
	}
	before := read()
	for _, p := range append(paths, api...) {
		if now[p] != before[p] {
			t.Errorf("GET %s: %d bytes with the series apart, %d with the previous storage", p, len(now[p]), len(before[p]))
		}
	}
}

// TestAPIAnswerIsStoredResult: the answer to an API upload (one file, and
// a batch) carries each file's result JSON as stored, plot series put
// back, byte for byte (the answer is written in the same pass as the
// stored form; a result analysed again inside the write transaction is
// expanded from the stored form instead).
func TestAPIAnswerIsStoredResult(t *testing.T) {
	f := newAPIFixture(t)
	ctx := context.Background()
	files := benchStarkSpectra(t, 3)
	for _, n := range []int{1, 2} {
		id := f.createRun(fmt.Sprintf(`{"title": "series %d", "started_at": "2026-11-30T08:00:00Z", "source_type": "microwave",
			"instrument_fwhm_nm": %g, "gas_temperature_K": %g}`, n, benchRunFWHM, benchRunTgas))
		var body bytes.Buffer
		mw := multipart.NewWriter(&body)
		for j := range n {
			fw, _ := mw.CreateFormFile("file", fmt.Sprintf("s%d.csv", j))
			fw.Write(files[j])
		}
		mw.Close()
		req := httptest.NewRequest(http.MethodPost, fmt.Sprintf("/api/v1/runs/%d/measurements", id), &body)
		req.Header.Set("Authorization", "Bearer "+f.token)
		req.Header.Set("Content-Type", mw.FormDataContentType())
		rec := httptest.NewRecorder()
		f.s.ServeHTTP(rec, req)
		if rec.Code != http.StatusCreated {
			t.Fatalf("upload %d: %d %.300s", n, rec.Code, rec.Body.String())
		}
		a, err := f.db.AnalysisVersion(ctx, id, 0)
		if err != nil {
			t.Fatal(err)
		}
		var want bytes.Buffer
		if n > 1 {
			fmt.Fprintf(&want, `{"run_id":%d,"analysis_version":%d,"measurements":[`, id, a.Version)
		}
		for k, r := range a.Results {
			if !strings.Contains(r.Result, `"model":"whole"`) || !strings.Contains(r.Result, `"residual":[`) {
				t.Fatalf("upload %d: result %d is not a whole fit with series", n, k)
			}
			if k > 0 {
				want.WriteByte(',')
			}
			head, _ := json.Marshal(apiMeasurementIDs{RunID: id, AttachmentID: r.AttachmentID, AnalysisVersion: a.Version, Kind: store.KindSpectrum})
			want.Write(head[:len(head)-1])
			want.WriteByte(',')
			want.WriteString(strings.TrimSpace(r.Result)[1:])
		}
		if n > 1 {
			want.WriteString("]}")
		}
		want.WriteByte('\n')
		if rec.Body.String() != want.String() {
			t.Errorf("upload of %d: the answer (%d bytes) is not the stored results (%d bytes)", n, rec.Body.Len(), want.Len())
		}
	}
}
