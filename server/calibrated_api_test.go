package server

import (
	"encoding/json"
	"fmt"
	"net/http"
	"net/url"
	"os"
	"strconv"
	"strings"
	"testing"
)

// TestAPICalibratedSpectrum: the multipart field response_corrected_unit
// declares a calibrated export: no uncalibrated flag, the declared unit,
// and the setting is stored with the version; a bad unit is a 400.
func TestAPICalibratedSpectrum(t *testing.T) {
	f := newAPIFixture(t)
	data, err := os.ReadFile("../testdata/spectra/scipy_wide_snr1000.csv")
	if err != nil {
		t.Fatal(err)
	}
	flagged := func(out map[string]any) bool {
		raw, _ := json.Marshal(out["flags"])
		return strings.Contains(string(raw), `"intensity_uncalibrated"`)
	}
	post := func(fields map[string]string) (int64, int, map[string]any) {
		id := f.createRun(runJSON)
		fields["instrument_fwhm_nm"], fields["gas_temperature_K"] = "0.35", "1000"
		ct, mp := multipartBody(t, "wide.csv", data, fields)
		code, out := f.do(http.MethodPost, "/api/v1/runs/"+strconv.FormatInt(id, 10)+"/measurements", f.token, ct, mp)
		return id, code, out
	}
	_, code, out := post(map[string]string{})
	if code != http.StatusCreated || !flagged(out) {
		t.Errorf("raw counts: %d, uncalibrated flag %v", code, flagged(out))
	}
	id, code, out := post(map[string]string{"response_corrected_unit": "energy"})
	if code != http.StatusCreated {
		t.Fatalf("%d %v", code, out)
	}
	if flagged(out) || out["intensity_unit"] != "energy" {
		t.Errorf("declared energy: uncalibrated flag %v, intensity_unit %v", flagged(out), out["intensity_unit"])
	}
	_, run := f.do(http.MethodGet, "/api/v1/runs/"+strconv.FormatInt(id, 10), f.token, "", nil)
	raw, _ := json.Marshal(run["analysis"].(map[string]any)["settings"])
	var st AnalysisSettings
	if err := json.Unmarshal(raw, &st); err != nil || st.ResponseCorrectedUnit != "energy" {
		t.Errorf("stored settings %s", raw)
	}
	_, code, out = post(map[string]string{"response_corrected_unit": "watts"})
	if code != http.StatusBadRequest || !strings.Contains(out["error"].(string), "response_corrected_unit") {
		t.Errorf("bad unit: %d %v", code, out)
	}
}

// TestReanalyzeFormCalibrated: the run page's reanalysis form declares
// the spectra response-corrected; the setting is stored with the version
// and shown selected; an unknown unit is refused.
func TestReanalyzeFormCalibrated(t *testing.T) {
	f := newRunsFixture(t)
	_, sess := f.signIn("ada.quill", "operator")
	v := newRunValues()
	v.Set("line_table", tinySet(0))
	rec := f.postForm("/runs", sess, v)
	m := runLocation.FindStringSubmatch(rec.Header().Get("Location"))
	if rec.Code != http.StatusSeeOther || m == nil {
		t.Fatalf("create: %d %.300s", rec.Code, rec.Body.String())
	}
	id := atoi64(t, m[1])
	form := func(unit string) url.Values {
		return url.Values{"reason": {"calibrated export"}, "instrument_fwhm_nm": {"0.03"}, "gas_temperature_k": {"1200"},
			"pressure_pa": {"300"}, "perturber": {"none"}, "response_corrected_unit": {unit}}
	}
	rec = f.postForm(fmt.Sprintf("/runs/%d/reanalyze", id), sess, form("energy"))
	if rec.Code != http.StatusSeeOther {
		t.Fatalf("reanalyse: %d %.300s", rec.Code, rec.Body.String())
	}
	if st := checkSettingsUsed(t, f.s, id, 2); st.ResponseCorrectedUnit != "energy" {
		t.Errorf("stored settings %+v", st)
	}
	page := f.get(fmt.Sprintf("/runs/%d", id), sess).Body.String()
	if !strings.Contains(page, `<option value="energy" selected>yes, in energy units`) {
		t.Error("the run page's form does not show the declared unit selected")
	}
	if rec = f.postForm(fmt.Sprintf("/runs/%d/reanalyze", id), sess, form("watts")); rec.Code < 400 || !strings.Contains(rec.Body.String(), "response_corrected_unit") {
		t.Errorf("unknown unit: %d %.300s", rec.Code, rec.Body.String())
	}
}
