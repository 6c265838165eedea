package server

import (
	"context"
	"encoding/json"
	"fmt"
	"math"
	"net/http"
	"net/url"
	"os"
	"regexp"
	"strings"
	"testing"
)

// resultConditions are the conditions a stored result says it was
// computed with.
type resultConditions struct {
	Isotope         string   `json:"isotope"`
	GasTemperatureK *float64 `json:"gas_temperature_K"`
	GasTemperatureS string   `json:"gas_temperature_source"`
	Perturber       struct {
		Name string `json:"name"`
	} `json:"perturber"`
	Lines []struct {
		Upper  int `json:"upper_level"`
		Budget *struct {
			InstrumentGaussNM   float64 `json:"instrument_gauss_nm"`
			InstrumentLorentzNM float64 `json:"instrument_lorentz_nm"`
		} `json:"broadening_budget"`
	} `json:"lines"`
}

// checkSettingsUsed checks that every result of a run's analysis version
// was computed with the settings stored (and shown) with that version:
// instrument widths in every line's broadening budget, gas temperature,
// perturber. It returns the settings.
func checkSettingsUsed(t *testing.T, s *Server, runID int64, version int) AnalysisSettings {
	t.Helper()
	a, err := s.DB.AnalysisVersion(context.Background(), runID, version)
	if err != nil {
		t.Fatal(err)
	}
	var st AnalysisSettings
	if err := json.Unmarshal([]byte(a.Settings), &st); err != nil {
		t.Fatal(err)
	}
	budgets := 0
	for _, r := range a.Results {
		if r.Error != "" {
			t.Fatalf("v%d %s: %s", a.Version, r.AttachmentName, r.Error)
		}
		var rc resultConditions
		if err := json.Unmarshal([]byte(r.Result), &rc); err != nil {
			t.Fatal(err)
		}
		for _, l := range rc.Lines {
			if l.Budget == nil {
				continue
			}
			budgets++
			if !sameNum(l.Budget.InstrumentGaussNM, st.InstrumentFWHMNM) || !sameNum(l.Budget.InstrumentLorentzNM, st.InstrumentLorentzFWHMNM) {
				t.Errorf("v%d %s line n=%d: budget instrument %g / %g nm, settings say %g / %g nm", a.Version, r.AttachmentName, l.Upper,
					l.Budget.InstrumentGaussNM, l.Budget.InstrumentLorentzNM, st.InstrumentFWHMNM, st.InstrumentLorentzFWHMNM)
			}
		}
		if rc.GasTemperatureS == "given" && (rc.GasTemperatureK == nil || !sameNum(*rc.GasTemperatureK, st.GasTemperatureK)) {
			t.Errorf("v%d %s: gas temperature %v, settings say %g", a.Version, r.AttachmentName, rc.GasTemperatureK, st.GasTemperatureK)
		}
		if st.GasTemperatureK > 0 && !st.SolveGasTemperature && rc.GasTemperatureS != "given" {
			t.Errorf("v%d %s: gas temperature %s, settings give %g K", a.Version, r.AttachmentName, rc.GasTemperatureS, st.GasTemperatureK)
		}
		if want := st.Perturber; rc.Perturber.Name != want && !(want == "" && rc.Perturber.Name == "none") {
			t.Errorf("v%d %s: perturber %q, settings say %q", a.Version, r.AttachmentName, rc.Perturber.Name, want)
		}
	}
	if budgets == 0 {
		t.Fatalf("v%d: no line with a broadening budget: nothing checked", a.Version)
	}
	return st
}

func sameNum(a, b float64) bool { return math.Abs(a-b) <= 1e-12*math.Max(1, math.Abs(b)) }

// setWithConditions is a measurement set stating its own conditions.
const setWithConditions = `{"intensity_unit": "photon", "instrument_fwhm_nm": 0.2, "gas_temperature_K": 600,
	"pressure_Pa": 101325, "perturber": "Ar", "lines": [
	{"upper_level": 3, "intensity": 1.0e5, "intensity_unc": 2.0e3, "fwhm_nm": 0.31},
	{"upper_level": 4, "intensity": 1.5e4, "intensity_unc": 4.0e2, "fwhm_nm": 0.55}]}`

// TestSettingsShownAreSettingsUsed: on every path that analyses files,
// the stored result's broadening budget, gas temperature and perturber
// are the stored (displayed) settings.
func TestSettingsShownAreSettingsUsed(t *testing.T) {
	f := newRunsFixture(t)
	_, sess := f.signIn("ada.quill", "operator")

	t.Run("typed line table on Log a run", func(t *testing.T) {
		v := newRunValues() // instrument 0.03 nm, 1200 K, 300 Pa, perturber none
		v.Set("line_table", tinySet(0))
		rec := f.postForm("/runs", sess, v)
		m := runLocation.FindStringSubmatch(rec.Header().Get("Location"))
		if rec.Code != http.StatusSeeOther || m == nil {
			t.Fatalf("create: %d %.300s", rec.Code, rec.Body.String())
		}
		id := atoi64(t, m[1])
		st := checkSettingsUsed(t, f.s, id, 1)
		if st.InstrumentFWHMNM != 0.03 || st.GasTemperatureK != 1200 {
			t.Errorf("stored settings %+v are not the form's", st)
		}
		// The run page shows these settings beside the result, whose
		// budget row has the same width.
		page := f.get(fmt.Sprintf("/runs/%d", id), sess).Body.String()
		if !strings.Contains(page, `data-testid="computed-with">Computed with instrument FWHM 0.03 nm, gas temperature 1200 K, pressure 300 Pa`) {
			t.Errorf("run page does not show the settings used beside the result: %s", regexp.MustCompile(`data-testid="computed-with">[^<]*`).FindString(page))
		}

		// Reanalysis with another width: the typed table follows it.
		rec = f.postForm(fmt.Sprintf("/runs/%d/reanalyze", id), sess, url.Values{"reason": {"lamp width"}, "instrument_fwhm_nm": {"0.09"},
			"gas_temperature_k": {"900"}, "pressure_pa": {"300"}, "perturber": {"Ar"}})
		if rec.Code != http.StatusSeeOther {
			t.Fatalf("reanalyse: %d %.300s", rec.Code, rec.Body.String())
		}
		if st := checkSettingsUsed(t, f.s, id, 2); st.InstrumentFWHMNM != 0.09 || st.Perturber != "Ar" {
			t.Errorf("reanalysis settings %+v", st)
		}
	})

	t.Run("line-table result stored before settings applied", func(t *testing.T) {
		// A result stored by an earlier release (line table analysed
		// without the settings: budget 0 nm) is not carried into a new
		// version by an upload with unchanged settings.
		v := newRunValues()
		v.Set("line_table", tinySet(0))
		rec := f.postForm("/runs", sess, v)
		m := runLocation.FindStringSubmatch(rec.Header().Get("Location"))
		if rec.Code != http.StatusSeeOther || m == nil {
			t.Fatalf("create: %d", rec.Code)
		}
		id := atoi64(t, m[1])
		if _, err := f.db.SQL().Exec(`UPDATE analysis_results SET result = replace(result, '"instrument_gauss_nm":0.03', '"instrument_gauss_nm":0')
			WHERE analysis_id = (SELECT id FROM analyses WHERE run_id = ?)`, id); err != nil {
			t.Fatal(err)
		}
		rec = f.postMultipart(fmt.Sprintf("/runs/%d/attachments", id), sess, url.Values{}, formFile{"spectra", "hbeta.csv", hbetaSpectrum(t)})
		if rec.Code != http.StatusSeeOther {
			t.Fatalf("upload: %d %.300s", rec.Code, rec.Body.String())
		}
		checkSettingsUsed(t, f.s, id, 2)
	})

	t.Run("line table stating its own conditions", func(t *testing.T) {
		// The form sets width, temperature and pressure (they win); the
		// perturber is "none" (unset), so the table's Ar fills it.
		v := newRunValues()
		v.Set("line_table", setWithConditions)
		rec := f.postForm("/runs", sess, v)
		m := runLocation.FindStringSubmatch(rec.Header().Get("Location"))
		if rec.Code != http.StatusSeeOther || m == nil {
			t.Fatalf("create: %d %.300s", rec.Code, rec.Body.String())
		}
		st := checkSettingsUsed(t, f.s, atoi64(t, m[1]), 1)
		if st.InstrumentFWHMNM != 0.03 || st.GasTemperatureK != 1200 || st.PressurePa != 300 || st.Perturber != "Ar" {
			t.Errorf("settings %+v: want the form's width, temperature, pressure and the table's perturber", st)
		}
	})

	t.Run("spectrum upload on Log a run", func(t *testing.T) {
		rec := f.postMultipart("/runs", sess, newRunValues(), formFile{"spectra", "hbeta.csv", hbetaSpectrum(t)})
		m := runLocation.FindStringSubmatch(rec.Header().Get("Location"))
		if rec.Code != http.StatusSeeOther || m == nil {
			t.Fatalf("create: %d %.300s", rec.Code, rec.Body.String())
		}
		if st := checkSettingsUsed(t, f.s, atoi64(t, m[1]), 1); st.InstrumentFWHMNM != 0.03 {
			t.Errorf("settings %+v", st)
		}
	})
}

func TestAPISettingsShownAreSettingsUsed(t *testing.T) {
	f := newAPIFixture(t)
	run := f.createRun(`{"title": "api", "started_at": "2026-03-04T09:30:00Z", "source_type": "dc_glow",
		"instrument_fwhm_nm": 0.05, "gas_temperature_K": 1200, "pressure_Pa": 300}`)

	// A JSON measurement set stating another width and temperature: the
	// run's settings win, and the set's perturber fills the unset one.
	code, out := f.do(http.MethodPost, fmt.Sprintf("/api/v1/runs/%d/measurements", run), f.token, "application/json",
		strings.NewReader(setWithConditions))
	if code != http.StatusCreated {
		t.Fatalf("JSON upload: %d %v", code, out)
	}
	st := checkSettingsUsed(t, f.s, run, 1)
	if st.InstrumentFWHMNM != 0.05 || st.GasTemperatureK != 1200 || st.Perturber != "Ar" {
		t.Errorf("settings %+v", st)
	}

	// A multipart spectrum with its own width field: that width is stored
	// and used for every file of the new version, the line table too.
	data, err := os.ReadFile("../testdata/spectra/scipy_hbeta_window_snr100.csv")
	if err != nil {
		t.Fatal(err)
	}
	ct, body := multipartBody(t, "hbeta.csv", data, map[string]string{"instrument_fwhm_nm": "0.07"})
	code, out = f.do(http.MethodPost, fmt.Sprintf("/api/v1/runs/%d/measurements", run), f.token, ct, body)
	if code != http.StatusCreated {
		t.Fatalf("multipart upload: %d %v", code, out)
	}
	if st := checkSettingsUsed(t, f.s, run, 2); st.InstrumentFWHMNM != 0.07 {
		t.Errorf("settings %+v", st)
	}
}

func atoi64(t *testing.T, s string) int64 {
	t.Helper()
	var n int64
	if _, err := fmt.Sscan(s, &n); err != nil {
		t.Fatal(err)
	}
	return n
}
