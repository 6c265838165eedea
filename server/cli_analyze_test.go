package server

import (
	"bufio"
	"bytes"
	"encoding/json"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

const spectraDir = "../testdata/spectra"

// TestAnalyzeSpectrumFile: a spectrum file with conditions flags gives the
// analysis JSON with per-line fit results.
func TestAnalyzeSpectrumFile(t *testing.T) {
	var out, errb bytes.Buffer
	code := AnalyzeCommand([]string{"--instrument-fwhm-nm", "0.03", "--gas-temperature-K", "1200",
		filepath.Join(spectraDir, "scipy_hbeta_window_snr1000.csv")}, nil, &out, &errb)
	if code != ExitOK {
		t.Fatalf("exit %d: %s", code, errb.String())
	}
	var r struct {
		Ne    *float64 `json:"electron_density_m3"`
		Lines []struct {
			Upper   int      `json:"upper_level"`
			Center  *float64 `json:"center_nm"`
			I       *float64 `json:"intensity"`
			IUnc    *float64 `json:"intensity_unc"`
			Gauss   *float64 `json:"gauss_fwhm_nm"`
			Lorentz *float64 `json:"lorentz_fwhm_nm"`
		} `json:"lines"`
		Search []struct {
			Status string `json:"status"`
		} `json:"line_search"`
	}
	if err := json.Unmarshal(out.Bytes(), &r); err != nil {
		t.Fatal(err)
	}
	if len(r.Lines) != 1 || r.Lines[0].Upper != 4 {
		t.Fatalf("lines %+v", r.Lines)
	}
	l := r.Lines[0]
	for name, p := range map[string]*float64{"center_nm": l.Center, "intensity": l.I, "intensity_unc": l.IUnc, "gauss_fwhm_nm": l.Gauss, "lorentz_fwhm_nm": l.Lorentz} {
		if p == nil {
			t.Errorf("line lacks %s", name)
		}
	}
	// Truth: n_e = 2e21 m⁻³ (testdata/scipy/synth_spectra.py, case hbeta_window_snr1000).
	if r.Ne == nil || *r.Ne < 1.94e21 || *r.Ne > 2.06e21 {
		t.Errorf("n_e %v, truth 2e21", r.Ne)
	}
}

// TestAnalyzeBatch: several files give JSON Lines in the order given; a
// bad file gets its own error record and a non-zero exit, and does not
// stop the others.
func TestAnalyzeBatch(t *testing.T) {
	dir := t.TempDir()
	bad := filepath.Join(dir, "broken.csv")
	if err := os.WriteFile(bad, []byte("wavelength_nm,counts\n480,1\n481,x\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	files := []string{
		filepath.Join(spectraDir, "scipy_hbeta_window_snr100.csv"),
		bad,
		filepath.Join(spectraDir, "scipy_halpha_window_snr100.csv"),
		filepath.Join(spectraDir, "scipy_hbeta_window_snr1000.csv"),
	}
	var out, errb bytes.Buffer
	code := AnalyzeCommand(append([]string{"--instrument-fwhm-nm", "0.05", "--gas-temperature-K", "1200"}, files...), nil, &out, &errb)
	if code != ExitInput {
		t.Errorf("exit %d, want 2", code)
	}
	sc := bufio.NewScanner(&out)
	sc.Buffer(make([]byte, 1<<20), 1<<24)
	var got []map[string]any
	for sc.Scan() {
		var m map[string]any
		if err := json.Unmarshal(sc.Bytes(), &m); err != nil {
			t.Fatalf("line %d is not JSON: %v", len(got)+1, err)
		}
		got = append(got, m)
	}
	if len(got) != len(files) {
		t.Fatalf("%d records, want %d", len(got), len(files))
	}
	for i, m := range got {
		src, _ := m["source"].(string)
		if src != files[i] {
			t.Errorf("record %d is for %q, want %q (order)", i, src, files[i])
		}
		_, isErr := m["error"]
		if isErr != (i == 1) {
			t.Errorf("record %d error=%v", i, m["error"])
		}
	}
	if msg, _ := got[1]["error"].(string); !strings.Contains(msg, "broken.csv:3") {
		t.Errorf("error record %q does not name the file and line", msg)
	}
	if !strings.Contains(errb.String(), "broken.csv:3") {
		t.Errorf("stderr %q", errb.String())
	}
}

func TestAnalyzeFlagErrors(t *testing.T) {
	spec := filepath.Join(spectraDir, "scipy_hbeta_window_snr100.csv")
	cases := []struct {
		args []string
		want string
	}{
		{[]string{"--perturber", "Zz", spec}, "--perturber"},
		{[]string{"--instrument-fwhm-nm", "-1", spec}, "--instrument-fwhm-nm"},
		{[]string{"--instrument-fwhm-nm", "500", spec}, "check the unit"},
		{[]string{"--max-upper", "2", spec}, "--max-upper"},
		{[]string{"--lamp", spec, spec}, "--lamp-irradiance"},
		{[]string{"--grey-body-K", "3000", spec}, "need --lamp"},
		{[]string{"--intensity-unit", "energy", spec}, "response calibration"},
		{[]string{"--dark", "does-not-exist.csv", spec}, "does-not-exist.csv"},
		{[]string{"--gas-temperature-K", "1000", "../testdata/example_hbeta.json"}, "carries its own conditions"},
		{[]string{"--response", filepath.Join("testdata", "response_narrow.csv"), "--instrument-fwhm-nm", "0.05", spec}, "does not cover"},
	}
	for _, c := range cases {
		var out, errb bytes.Buffer
		code := AnalyzeCommand(c.args, nil, &out, &errb)
		if code != ExitInput || !strings.Contains(errb.String(), c.want) {
			t.Errorf("%v: exit %d, stderr %q, want %q", c.args, code, errb.String(), c.want)
		}
	}
}

// TestAnalyzeWithResponse: a flat response curve in energy units gives an
// energy-unit result without the uncalibrated warning.
func TestAnalyzeWithResponse(t *testing.T) {
	var out, errb bytes.Buffer
	code := AnalyzeCommand([]string{"--instrument-fwhm-nm", "0.35", "--gas-temperature-K", "1000",
		"--response", filepath.Join("testdata", "response_flat.csv"), "--intensity-unit", "energy",
		filepath.Join(spectraDir, "scipy_bench_2048.csv")}, nil, &out, &errb)
	if code != ExitOK {
		t.Fatalf("exit %d: %s", code, errb.String())
	}
	var r struct {
		Unit     string   `json:"intensity_unit"`
		Warnings []string `json:"warnings"`
	}
	if err := json.Unmarshal(out.Bytes(), &r); err != nil {
		t.Fatal(err)
	}
	if r.Unit != "energy" || strings.Contains(strings.Join(r.Warnings, " "), "meaningless") {
		t.Errorf("unit %q warnings %v", r.Unit, r.Warnings)
	}
}
