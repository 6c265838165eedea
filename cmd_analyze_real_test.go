package main

import (
	"bytes"
	"encoding/json"
	"testing"

	"glowlog/diag/spectrum"
)

// TestAnalyzeModelRoute: analyze --model whole prints the whole-spectrum
// fit, --model lines none.
func TestAnalyzeModelRoute(t *testing.T) {
	for _, c := range []struct {
		model string
		whole bool
	}{{"whole", true}, {"lines", false}} {
		var out, errb bytes.Buffer
		if code := AnalyzeCommand([]string{"--model", c.model, "--instrument-fwhm-nm", "0.35", "--gas-temperature-K", "1000",
			"testdata/spectra/scipy_bench_2048.csv"}, nil, &out, &errb); code != ExitOK {
			t.Fatalf("--model %s: exit %d %s", c.model, code, errb.String())
		}
		var r spectrum.Result
		if err := json.Unmarshal(out.Bytes(), &r); err != nil {
			t.Fatal(err)
		}
		if r.Model != c.model || (r.Whole != nil) != c.whole {
			t.Errorf("--model %s: route %q, whole fit %v", c.model, r.Model, r.Whole != nil)
		}
	}
}
