package server

import (
	"encoding/json"
	"net/http"
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
