package server

import (
	"context"
	"fmt"
	"net/http"
	"net/http/httptest"
	"net/url"
	"slices"
	"strings"
	"sync"
	"testing"
)

// tinySet is a two-line measurement set (Hα, Hβ) whose intensities vary
// with i, so that every upload is a different file.
func tinySet(i int) string {
	return fmt.Sprintf(`{"intensity_unit": "photon", "lines": [
		{"upper_level": 3, "intensity": %d, "intensity_unc": 2000, "fwhm_nm": 0.21},
		{"upper_level": 4, "intensity": 15000, "intensity_unc": 400, "fwhm_nm": 0.55}]}`, 100000+1000*i)
}

// TestConcurrentUploadsKeepEveryFile is a stress test (bounded loops, no
// timing): in each trial 8 uploads to one run race — 4 through the API,
// 4 through the run page's form — together with a reanalysis of the run.
// Every acknowledged file must be in the final analysis version, and every
// version must hold exactly the files committed before it: each version's
// files include the previous version's, and a version that holds file N
// holds every file committed before N (attachment ids grow in commit
// order, since each is inserted inside its serialised write transaction).
func TestConcurrentUploadsKeepEveryFile(t *testing.T) {
	const trials, uploads = 50, 8
	f := newAPIFixture(t)
	ctx := context.Background()
	htmls := make([]*htmlClient, uploads/2)
	for i := range htmls {
		htmls[i] = newHTMLClient(t, f.s, f.user)
		if code, _ := htmls[i].req(http.MethodGet, "/runs", nil); code != http.StatusOK {
			t.Fatalf("GET /runs: %d", code)
		}
	}
	missingFinal, badVersions := 0, 0
	for trial := range trials {
		run := f.createRun(`{"title": "race", "started_at": "2026-03-04T09:30:00Z", "source_type": "dc_glow",
			"instrument_fwhm_nm": 0.05, "gas_temperature_K": 1200}`)
		codes := make([]int, uploads)
		bodies := make([]string, uploads)
		var wg sync.WaitGroup
		for i := range uploads {
			wg.Add(1)
			go func() {
				defer wg.Done()
				if i%2 == 0 {
					req := httptest.NewRequest(http.MethodPost, fmt.Sprintf("/api/v1/runs/%d/measurements?name=set-%d.json", run, i),
						strings.NewReader(tinySet(i)))
					req.Header.Set("Authorization", "Bearer "+f.token)
					req.Header.Set("Content-Type", "application/json")
					rec := httptest.NewRecorder()
					f.s.ServeHTTP(rec, req)
					codes[i], bodies[i] = rec.Code, rec.Body.String()
					return
				}
				codes[i], _ = htmls[i/2].req(http.MethodPost, fmt.Sprintf("/runs/%d/attachments", run), url.Values{"line_table": {tinySet(i)}})
			}()
		}
		// A reanalysis racing the uploads (it may find nothing to analyse
		// yet, which is a 400 and stores nothing).
		wg.Add(1)
		go func() {
			defer wg.Done()
			uid := f.user.ID
			_, _ = f.s.ReanalyzeRun(ctx, run, AnalysisSettings{InstrumentFWHMNM: 0.05, GasTemperatureK: 1200}, &uid, "racing reanalysis")
		}()
		wg.Wait()
		for i, c := range codes {
			if want := map[bool]int{true: http.StatusCreated, false: http.StatusSeeOther}[i%2 == 0]; c != want {
				t.Fatalf("trial %d upload %d: status %d, want %d: %s", trial, i, c, want, bodies[i])
			}
		}
		atts, err := f.db.Attachments(ctx, run)
		if err != nil || len(atts) != uploads {
			t.Fatalf("trial %d: %d files stored, %v", trial, len(atts), err)
		}
		var all []int64
		for _, a := range atts {
			all = append(all, a.ID)
		}
		slices.Sort(all)
		versions, err := f.db.Analyses(ctx, run)
		if err != nil {
			t.Fatal(err)
		}
		var prev []int64
		for k := len(versions) - 1; k >= 0; k-- { // oldest first
			a, err := f.db.AnalysisVersion(ctx, run, versions[k].Version)
			if err != nil {
				t.Fatal(err)
			}
			var ids []int64
			for _, r := range a.Results {
				if r.Error != "" {
					t.Fatalf("trial %d v%d: %s", trial, a.Version, r.Error)
				}
				ids = append(ids, r.AttachmentID)
			}
			slices.Sort(ids)
			// Exactly the files committed before it: a prefix of all.
			ok := len(ids) > 0 && slices.Equal(ids, all[:len(ids)]) && len(ids) >= len(prev)
			if !ok {
				badVersions++
				t.Errorf("trial %d v%d holds files %v; previous version %v; all files %v", trial, a.Version, ids, prev, all)
			}
			prev = ids
		}
		if !slices.Equal(prev, all) {
			missingFinal++
			t.Errorf("trial %d: newest version holds %v, want every acknowledged file %v", trial, prev, all)
		}
		r, _ := f.db.GetRun(ctx, run)
		if r.AnalysisVersion != versions[0].Version {
			t.Errorf("trial %d: run summary is of v%d, newest is v%d", trial, r.AnalysisVersion, versions[0].Version)
		}
	}
	if missingFinal+badVersions > 0 {
		t.Fatalf("%d of %d trials lost a file from the final version; %d versions lacked an earlier file", missingFinal, trials, badVersions)
	}
}
