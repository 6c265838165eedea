package views

import (
	"bytes"
	"context"
	"io"
	"strings"
	"testing"

	"glowlog/diag"
)

// A lower-limit density shows as "≥ value" in the key table, the full
// table, the per-model table and the summary values; never as value ± σ.
func TestLowerLimitDensityShownAsBound(t *testing.T) {
	ne, unc, stat, sys := 3.2e20, 1.1e20, 2e19, 1.08e20
	d := &diag.Result{ElectronDensityM3: &ne, ElectronDensityUncM3: &unc, ElectronDensityUncStatM3: &stat,
		ElectronDensityUncSysM3: &sys, ElectronDensitySource: "Hβ (sh99-hbeta-fwhm), lower limit",
		Lines: []diag.LineResult{{UpperLevel: 4, Name: "Hβ", ElectronDensityM3: &ne, ElectronDensityUncM3: &unc,
			ElectronDensityUncStatM3: &stat, ElectronDensityUncSysM3: &sys, DensityLowerLimit: true, StarkRelation: "sh99-hbeta-fwhm",
			DensityUncParts: []diag.UncPart{{Name: "line shape (Voigt approximation of the Stark profile)", Sigma: 1.08e20}},
			Densities: []diag.DensityEstimate{{Relation: "sh99-hbeta-fwhm", ElectronDensityM3: ne, ElectronDensityUncM3: unc, Preferred: true},
				{Relation: "ggc2003-hbeta-fwhm", ElectronDensityM3: 2.9e20, ElectronDensityUncM3: 1e20}}}}}
	var buf bytes.Buffer
	rv := ResultView{D: d, Compact: true}
	for _, c := range []interface {
		Render(context.Context, io.Writer) error
	}{linesKeyTable(rv), bigValues(d)} {
		if err := c.Render(context.Background(), &buf); err != nil {
			t.Fatal(err)
		}
	}
	out := buf.String()
	for _, want := range []string{"≥ 3.20 × 10²⁰", "≥ 2.90 × 10²⁰", "lower limit"} {
		if !strings.Contains(out, want) {
			t.Errorf("output lacks %q", want)
		}
	}
	if strings.Contains(out, ValueUnc(&ne, &unc)) {
		t.Errorf("a lower limit is shown as value ± σ (%s)", ValueUnc(&ne, &unc))
	}
	if s := NeSplit(d); s == nil || !s.LowerLimit || !strings.HasPrefix(s.Text, "≥ ") {
		t.Errorf("NeSplit = %+v, want a lower limit", s)
	}
}
