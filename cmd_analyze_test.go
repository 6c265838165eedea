package main

import (
	"bufio"
	"bytes"
	"encoding/json"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

const spectraDir = "testdata/spectra"

// TestAnalyzeSpectrumFile: a spectrum file with conditions flags gives the
// analysis JSON with per-line fit results.
func TestAnalyzeSpectrumFile(t *testing.T) {
	var out, errb bytes.Buffer
	// The scipy lines are Voigt profiles: --line-shape voigt.
	code := AnalyzeCommand([]string{"--instrument-fwhm-nm", "0.03", "--gas-temperature-K", "1200", "--line-shape", "voigt",
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
		{[]string{"--gas-temperature-K", "5e-324", spec}, "at least 1 K"},
		{[]string{"--max-upper", "2", spec}, "--max-upper"},
		{[]string{"--lamp", spec, spec}, "--lamp-irradiance"},
		{[]string{"--grey-body-K", "3000", spec}, "need --lamp"},
		{[]string{"--intensity-unit", "energy", spec}, "response calibration"},
		{[]string{"--dark", "does-not-exist.csv", spec}, "does-not-exist.csv"},
		{[]string{"--gas-temperature-K", "1000", "testdata/example_hbeta.json"}, "carries its own conditions"},
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

// TestAnalyzeExtremeValues: extreme but valid intensities are analysed
// (exit 0, finite JSON); an intensity σ of 1e-160 is a clear input error
// (exit 2) naming the file line, the measurement line and the value; in a
// batch every file keeps its record and the bad one gets an error record.
func TestAnalyzeExtremeValues(t *testing.T) {
	dir := t.TempDir()
	write := func(name, body string) string {
		p := filepath.Join(dir, name)
		if err := os.WriteFile(p, []byte(body), 0o644); err != nil {
			t.Fatal(err)
		}
		return p
	}
	big := write("big.json", `{"intensity_unit":"energy","lines":[{"upper_level":3,"intensity":1.7e308},{"upper_level":4,"intensity":1e307},{"upper_level":5,"intensity":1e306}]}`)
	tiny := write("tiny.json", `{"intensity_unit":"photon","lines":[{"upper_level":3,"intensity":5e-324},{"upper_level":4,"intensity":1e-320},{"upper_level":5,"intensity":1e-322}]}`)
	sig := write("sig.json", "{\"intensity_unit\":\"photon\",\n\"lines\":[\n{\"upper_level\":3,\"intensity\":1,\n \"intensity_unc\":1e-160},\n{\"upper_level\":4,\"intensity\":0.2,\"intensity_unc\":0.01}]}\n")
	deep := write("deep.json", `{"intensity_unit":"photon","lines":`+strings.Repeat("[", 20000)+strings.Repeat("]", 20000)+`}`)

	for _, f := range []string{big, tiny} {
		var out, errb bytes.Buffer
		if code := AnalyzeCommand([]string{f}, nil, &out, &errb); code != ExitOK {
			t.Fatalf("%s: exit %d: %s", f, code, errb.String())
		}
		var full struct {
			B struct {
				N int `json:"lines_fitted"`
			} `json:"boltzmann"`
		}
		if err := json.Unmarshal(out.Bytes(), &full); err != nil || full.B.N != 3 {
			t.Errorf("%s: %v, %d lines fitted", f, err, full.B.N)
		}
	}

	var out, errb bytes.Buffer
	if code := AnalyzeCommand([]string{sig}, nil, &out, &errb); code != ExitInput {
		t.Fatalf("σ = 1e-160: exit %d, want 2 (%s)", code, errb.String())
	}
	for _, want := range []string{"sig.json:4:", "lines[0] (n=3)", "intensity_unc = 1e-160"} {
		if !strings.Contains(errb.String(), want) {
			t.Errorf("stderr %q lacks %q", errb.String(), want)
		}
	}

	files := []string{big, sig, tiny, deep, "testdata/example_hbeta.json"}
	out.Reset()
	errb.Reset()
	if code := AnalyzeCommand(files, nil, &out, &errb); code != ExitInput {
		t.Errorf("batch with bad files: exit %d, want 2", code)
	}
	recs := strings.Split(strings.TrimSpace(out.String()), "\n")
	if len(recs) != len(files) {
		t.Fatalf("%d records for %d files:\n%s", len(recs), len(files), out.String())
	}
	for i, rec := range recs {
		var m map[string]any
		if err := json.Unmarshal([]byte(rec), &m); err != nil {
			t.Fatalf("record %d: %v", i, err)
		}
		msg, isErr := m["error"].(string)
		if wantErr := i == 1 || i == 3; isErr != wantErr {
			t.Errorf("record %d (%s): error %q", i, files[i], msg)
		}
		if isErr && m["source"] != files[i] {
			t.Errorf("record %d is for %v, want %s", i, m["source"], files[i])
		}
	}
	if !strings.Contains(recs[3], "nested more than 8 deep") {
		t.Errorf("deep record %s", recs[3])
	}
}

// TestAnalyzeUncertaintyFlags: the issue-8 flags reach the analysis (the
// electron temperature is echoed, the instrument σ adds a σ_sys part) and
// bad values exit 2 naming the flag.
func TestAnalyzeUncertaintyFlags(t *testing.T) {
	file := filepath.Join(spectraDir, "scipy_hbeta_window_snr1000.csv")
	var out, errb bytes.Buffer
	code := AnalyzeCommand([]string{"--instrument-fwhm-nm", "0.03", "--gas-temperature-K", "1200", "--instrument-fwhm-unc-nm", "0.01",
		"--electron-temperature-K", "15000", "--response-unc-rel", "0.05", file}, nil, &out, &errb)
	if code != ExitOK {
		t.Fatalf("exit %d: %s", code, errb.String())
	}
	var r struct {
		Te    float64 `json:"electron_temperature_K"`
		Sys   float64 `json:"electron_density_unc_sys_m3"`
		Lines []struct {
			Parts []struct {
				Name string `json:"name"`
			} `json:"electron_density_unc_sys_parts"`
		} `json:"lines"`
	}
	if err := json.Unmarshal(out.Bytes(), &r); err != nil {
		t.Fatal(err)
	}
	if r.Te != 15000 || !(r.Sys > 0) || len(r.Lines) == 0 {
		t.Fatalf("T_e %v, σ_sys %v, lines %d", r.Te, r.Sys, len(r.Lines))
	}
	found := false
	for _, p := range r.Lines[0].Parts {
		found = found || p.Name == "instrument width"
	}
	if !found {
		t.Errorf("σ_sys parts %+v lack the instrument width", r.Lines[0].Parts)
	}
	for _, bad := range [][]string{{"--electron-temperature-K", "1.2"}, {"--response-unc-rel", "5"}, {"--instrument-fwhm-unc-nm", "-1"}} {
		out.Reset()
		errb.Reset()
		if code := AnalyzeCommand(append(bad, file), nil, &out, &errb); code != 2 || !strings.Contains(errb.String(), bad[0]) {
			t.Errorf("%v: exit %d, stderr %q", bad, code, errb.String())
		}
	}
}

// TestAnalyzeLineShape: --line-shape stark (the default) corrects the
// Voigt fit of a Stark-shaped line and says so per line; voigt keeps the
// fit as it is; any other value exits 2 naming the flag.
func TestAnalyzeLineShape(t *testing.T) {
	file := filepath.Join(sh99SynthDir, "mid_ne1e22_t2.csv")
	run := func(extra ...string) (code int, shape string, area, voigtArea float64, stderr string) {
		var out, errb bytes.Buffer
		args := append([]string{"--instrument-fwhm-nm", "0.1", "--gas-temperature-K", "1000"}, extra...)
		code = AnalyzeCommand(append(args, file), nil, &out, &errb)
		if code != ExitOK {
			return code, "", 0, 0, errb.String()
		}
		var r struct {
			Lines []struct {
				Upper     int     `json:"upper_level"`
				Shape     string  `json:"line_shape"`
				Area      float64 `json:"intensity"`
				VoigtArea float64 `json:"voigt_area"`
			} `json:"lines"`
		}
		if err := json.Unmarshal(out.Bytes(), &r); err != nil {
			t.Fatal(err)
		}
		for _, l := range r.Lines {
			if l.Upper == 4 {
				return code, l.Shape, l.Area, l.VoigtArea, ""
			}
		}
		t.Fatalf("no Hβ in %s", out.String())
		return
	}
	code, shape, area, voigtArea, stderr := run()
	if code != ExitOK || shape != "stark" || !(voigtArea > 1.03*area) {
		t.Errorf("default: exit %d %s, line shape %q, area %g, Voigt area %g: want stark with the Voigt area > 3 %% above", code, stderr, shape, area, voigtArea)
	}
	code, shape, vArea, _, stderr := run("--line-shape", "voigt")
	if code != ExitOK || shape != "voigt" || vArea != voigtArea {
		t.Errorf("voigt: exit %d %s, line shape %q, area %g, want the Voigt area %g", code, stderr, shape, vArea, voigtArea)
	}
	if code, _, _, _, stderr := run("--line-shape", "lorentz"); code != ExitInput || !strings.Contains(stderr, "--line-shape") {
		t.Errorf("bad line shape: exit %d, stderr %q", code, stderr)
	}
}
