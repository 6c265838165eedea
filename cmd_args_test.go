package main

import (
	"bytes"
	"encoding/json"
	"flag"
	"io"
	"math"
	"path/filepath"
	"slices"
	"strings"
	"testing"
	"time"
)

func TestParseInterleaved(t *testing.T) {
	cases := []struct {
		args   []string
		n      float64
		v      bool
		s      string
		pos    []string
		errSub string
	}{
		{args: []string{"a", "--n", "2", "b"}, n: 2, pos: []string{"a", "b"}},
		{args: []string{"--n=3", "a", "-v", "b", "--s", "x y"}, n: 3, v: true, s: "x y", pos: []string{"a", "b"}},
		{args: []string{"a", "-v", "b"}, v: true, pos: []string{"a", "b"}},        // a bool flag takes no value
		{args: []string{"-", "--n", "1"}, n: 1, pos: []string{"-"}},               // "-" is standard input
		{args: []string{"a", "--", "--n", "-v"}, pos: []string{"a", "--n", "-v"}}, // -- ends the flags
		{args: []string{"--s", "--n", "a"}, s: "--n", pos: []string{"a"}},         // a value may look like a flag
		{args: []string{"a", "--nope", "b"}, errSub: "nope"},
		{args: []string{"a", "--n", "x"}, errSub: "invalid value"},
	}
	for _, c := range cases {
		fs := flag.NewFlagSet("t", flag.ContinueOnError)
		var errb bytes.Buffer
		fs.SetOutput(&errb)
		n := fs.Float64("n", 0, "")
		v := fs.Bool("v", false, "")
		s := fs.String("s", "", "")
		err := ParseInterleaved(fs, c.args)
		if c.errSub != "" {
			if err == nil || !strings.Contains(err.Error(), c.errSub) {
				t.Errorf("%q: error %v, want one naming %q", c.args, err, c.errSub)
			}
			continue
		}
		if err != nil {
			t.Errorf("%q: %v", c.args, err)
			continue
		}
		if *n != c.n || *v != c.v || *s != c.s || !slices.Equal(fs.Args(), c.pos) {
			t.Errorf("%q: n=%v v=%v s=%q pos=%q, want %v %v %q %q", c.args, *n, *v, *s, fs.Args(), c.n, c.v, c.s, c.pos)
		}
	}
}

// TestAnalyzeFlagsAfterFile: flags after the file name work as well as
// before it, and -h exits 0.
func TestAnalyzeFlagsAfterFile(t *testing.T) {
	file := filepath.Join(spectraDir, "scipy_hbeta_window_snr1000.csv")
	var first, after, errb bytes.Buffer
	if code := AnalyzeCommand([]string{"--instrument-fwhm-nm", "0.03", "--gas-temperature-K", "1200", file}, nil, &first, &errb); code != ExitOK {
		t.Fatalf("flags first: exit %d: %s", code, errb.String())
	}
	if code := AnalyzeCommand([]string{file, "--instrument-fwhm-nm", "0.03", "--gas-temperature-K=1200"}, nil, &after, &errb); code != ExitOK {
		t.Fatalf("flags after the file: exit %d: %s", code, errb.String())
	}
	if first.String() != after.String() {
		t.Error("flags after the file give another result than flags first")
	}
	errb.Reset()
	if code := AnalyzeCommand([]string{"-h"}, nil, io.Discard, &errb); code != ExitOK || !strings.Contains(errb.String(), "-calibrated") {
		t.Errorf("analyze -h: exit %d, usage %q", code, errb.String())
	}
}

// TestAnalyzeCalibrated: --calibrated drops the uncalibrated flag and
// fits in the declared unit. The file holds photon-rate signals on a
// uniform grid (testdata/scipy/synth_spectra.py, case wide_snr1000).
func TestAnalyzeCalibrated(t *testing.T) {
	file := filepath.Join(spectraDir, "scipy_wide_snr1000.csv")
	run := func(extra ...string) (float64, float64, []string, string) {
		t.Helper()
		var out, errb bytes.Buffer
		args := append([]string{file, "--line-shape", "voigt", "--instrument-fwhm-nm", "0.35", "--gas-temperature-K", "1000"}, extra...) // Voigt-shaped scipy lines
		if code := AnalyzeCommand(args, nil, &out, &errb); code != ExitOK {
			t.Fatalf("%q: exit %d: %s", extra, code, errb.String())
		}
		var r struct {
			T     float64 `json:"excitation_temperature_K"`
			TUnc  float64 `json:"excitation_temperature_unc_K"`
			Unit  string  `json:"intensity_unit"`
			Flags []struct {
				Code string `json:"code"`
			} `json:"flags"`
		}
		if err := json.Unmarshal(out.Bytes(), &r); err != nil {
			t.Fatal(err)
		}
		var codes []string
		for _, f := range r.Flags {
			codes = append(codes, f.Code)
		}
		return r.T, r.TUnc, codes, r.Unit
	}
	_, _, codes, _ := run()
	if !slices.Contains(codes, "intensity_uncalibrated") {
		t.Errorf("without --calibrated: flags %v lack intensity_uncalibrated", codes)
	}
	T, s, codes, unit := run("--calibrated", "photon")
	if slices.Contains(codes, "intensity_uncalibrated") || unit != "photon" {
		t.Errorf("--calibrated photon: flags %v, unit %q", codes, unit)
	}
	if math.Abs(T-6000) > 3*s+60 { // truth: testdata/spectra/scipy_wide_snr1000.truth.json
		t.Errorf("--calibrated photon: T_exc %.0f ± %.0f K, truth 6000 K", T, s)
	}
	Te, se, codes, unit := run("--calibrated", "energy")
	if slices.Contains(codes, "intensity_uncalibrated") || unit != "energy" {
		t.Errorf("--calibrated energy: flags %v, unit %q", codes, unit)
	}
	if math.Abs(Te-T) < 3*math.Hypot(s, se) {
		t.Errorf("photon %.0f ± %.0f K and energy %.0f ± %.0f K: the declared unit is not used", T, s, Te, se)
	}

	for _, bad := range [][]string{{"--calibrated", "watts"}, {"--calibrated", "energy", "--response", file}} {
		var errb bytes.Buffer
		if code := AnalyzeCommand(append([]string{file}, bad...), nil, io.Discard, &errb); code != ExitInput || !strings.Contains(errb.String(), "--calibrated") {
			t.Errorf("%q: exit %d, %q", bad, code, errb.String())
		}
	}
}

// TestAnalyzeProgress: a batch writes a progress line (rewritten with \r)
// on a terminal (--progress always stands in for one), nothing extra on
// a pipe or buffer.
func TestAnalyzeProgress(t *testing.T) {
	files := []string{filepath.Join(spectraDir, "scipy_hbeta_window_snr1000.csv"), filepath.Join(spectraDir, "scipy_halpha_window_snr100.csv"),
		filepath.Join(spectraDir, "scipy_hbeta_window_snr100.csv")}
	var out, errb bytes.Buffer
	if code := AnalyzeCommand(append(files, "--progress", "always"), nil, &out, &errb); code != ExitOK {
		t.Fatalf("exit %d: %s", code, errb.String())
	}
	e := errb.String()
	if !strings.HasPrefix(e, "\r") || !strings.Contains(e, "3/3 files") || !strings.Contains(e, "files/s") || !strings.HasSuffix(e, "\n") {
		t.Errorf("progress on a terminal: %q", e)
	}
	var piped bytes.Buffer
	if code := AnalyzeCommand(files, nil, io.Discard, &piped); code != ExitOK || piped.Len() != 0 {
		t.Errorf("piped: exit %d, stderr %q, want nothing", code, piped.String())
	}
	if code := AnalyzeCommand(append(files, "--progress", "sometimes"), nil, io.Discard, &piped); code != ExitInput {
		t.Errorf("--progress sometimes: exit %d", code)
	}
}

// TestProgressThrottle: with files finishing faster than progressEvery
// only some lines are written; the time left follows the rate.
func TestProgressThrottle(t *testing.T) {
	var b bytes.Buffer
	p, _ := newProgress(&b, "always", 100)
	t0 := time.Unix(0, 0)
	now := t0
	p.start, p.now = t0, func() time.Time { return now }
	for range 50 {
		now = now.Add(10 * time.Millisecond) // 100 files/s
		p.done()
	}
	lines := strings.Count(b.String(), "\r")
	if lines < 1 || lines > 3 {
		t.Errorf("%d progress lines for 0.5 s of work, want 1–3 (one per %v): %q", lines, progressEvery, b.String())
	}
	if !strings.Contains(b.String(), "files/s") {
		t.Errorf("no rate: %q", b.String())
	}
	b.Reset()
	p.last = time.Time{}
	now = now.Add(10 * time.Millisecond)
	p.done() // 51 of 100 at 100 files/s: 0.49 s left
	if !strings.Contains(b.String(), "51/100 files · 100 files/s · 0 s left") {
		t.Errorf("line %q", b.String())
	}
}
