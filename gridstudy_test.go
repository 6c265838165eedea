package main

// The whole fit's grid study (testdata/gridstudy/README.md): with
// GLOWLOG_GRID_STUDY_DIR=dir, TestWholeGridStudyDump analyses every
// spectrum of the check sets (testdata/wholesynth, testdata/sh99synth,
// testdata/spectra) on the whole route with the conditions of its truth
// file (as the accuracy harnesses pass them; testdata/spectra with its
// instrument and gas temperature only) and --windows (the model over the
// fitted range), and writes each result to dir/<set>__<spectrum>.json
// (a failed analysis as {"exit": code, "stderr": text}).
// testdata/gridstudy/compare.py compares two or three such directories.
// Without the variable the test is skipped.

import (
	"bytes"
	"encoding/json"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"sync"
	"testing"
)

func TestWholeGridStudyDump(t *testing.T) {
	out := os.Getenv("GLOWLOG_GRID_STUDY_DIR")
	if out == "" {
		t.Skip("GLOWLOG_GRID_STUDY_DIR not set")
	}
	if err := os.MkdirAll(out, 0o755); err != nil {
		t.Fatal(err)
	}
	type job struct {
		name string
		args []string
	}
	var jobs []job
	for _, dir := range []string{wholeSynthDir, sh99SynthDir, "testdata/spectra"} {
		files, err := filepath.Glob(filepath.Join(dir, "*.truth.json"))
		if err != nil || len(files) == 0 {
			t.Fatalf("%s: no truth files (%v)", dir, err)
		}
		for _, f := range files {
			b, err := os.ReadFile(f)
			if err != nil {
				t.Fatal(err)
			}
			var tr struct {
				Spectrum  string  `json:"spectrum"`
				Response  string  `json:"response"`
				Inst      float64 `json:"instrument_fwhm_nm"`
				Gas       float64 `json:"gas_temperature_K"`
				Te        float64 `json:"electron_temperature_K"`
				Gain      float64 `json:"gain_e_per_count"`
				ReadNoise float64 `json:"read_noise_e"`
			}
			if err := json.Unmarshal(b, &tr); err != nil {
				t.Fatalf("%s: %v", f, err)
			}
			csv := strings.TrimSuffix(f, ".truth.json") + ".csv"
			args := []string{"--model", "whole", "--windows",
				"--instrument-fwhm-nm", fmt.Sprint(tr.Inst), "--gas-temperature-K", fmt.Sprint(tr.Gas)}
			if tr.Response != "" {
				args = append(args, "--electron-temperature-K", fmt.Sprint(givenElectronK(tr.Spectrum, tr.Te)),
					"--gain-e-per-count", fmt.Sprint(tr.Gain), "--read-noise-e", fmt.Sprint(tr.ReadNoise),
					"--response", filepath.Join(dir, tr.Response))
			}
			args = append(args, csv)
			name := filepath.Base(dir) + "__" + strings.TrimSuffix(filepath.Base(csv), ".csv")
			jobs = append(jobs, job{name, args})
		}
	}
	var wg sync.WaitGroup
	var mu sync.Mutex
	sem := make(chan struct{}, 2)
	for _, j := range jobs {
		wg.Add(1)
		go func() {
			defer wg.Done()
			sem <- struct{}{}
			defer func() { <-sem }()
			var o, e bytes.Buffer
			if code := AnalyzeCommand(j.args, nil, &o, &e); code != ExitOK {
				o.Reset()
				fmt.Fprintf(&o, `{"exit":%d,"stderr":%q}`, code, e.String())
			}
			if err := os.WriteFile(filepath.Join(out, j.name+".json"), o.Bytes(), 0o644); err != nil {
				mu.Lock()
				t.Error(err)
				mu.Unlock()
			}
		}()
	}
	wg.Wait()
	t.Logf("%d spectra written to %s", len(jobs), out)
}
