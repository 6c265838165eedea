package server

import (
	"encoding/json"
	"net/http"
	"net/http/httptest"
	"os"
	"strconv"
	"testing"
)

// TestAPIAddMeasurementLength: the 201 answer of an upload declares its
// length, and it is the body's (net/http refuses a handler that writes more
// than it declared, and a client reading a shorter body would wait for the
// rest); the body is the file's answer as JSON.
func TestAPIAddMeasurementLength(t *testing.T) {
	f := newAPIFixture(t)
	id := f.createRun(runJSON)
	data, err := os.ReadFile("../testdata/spectra/scipy_hbeta_window_snr100.csv")
	if err != nil {
		t.Fatal(err)
	}
	ct, mp := multipartBody(t, "s.csv", data,
		map[string]string{"instrument_fwhm_nm": "0.05", "gas_temperature_K": "1200", "perturber": "none", "pressure_Pa": "0", "line_shape": "voigt"})
	req := httptest.NewRequest(http.MethodPost, "/api/v1/runs/"+strconv.FormatInt(id, 10)+"/measurements", mp)
	req.Header.Set("Authorization", "Bearer "+f.token)
	req.Header.Set("Content-Type", ct)
	rec := httptest.NewRecorder()
	f.s.ServeHTTP(rec, req)
	if rec.Code != http.StatusCreated {
		t.Fatalf("%d %s", rec.Code, rec.Body.String())
	}
	if got := rec.Header().Get("Content-Length"); got != strconv.Itoa(rec.Body.Len()) {
		t.Errorf("Content-Length %q, body %d bytes", got, rec.Body.Len())
	}
	var out map[string]any
	if err := json.Unmarshal(rec.Body.Bytes(), &out); err != nil {
		t.Fatal(err)
	}
	if out["attachment_id"] == nil || out["electron_density_m3"] == nil {
		t.Errorf("answer %v", out)
	}
}
