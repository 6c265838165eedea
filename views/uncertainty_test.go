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

// A Stark model that does not cover a line's width still gets its column
// in the per-model table, saying why: an Hβ Stark FWHM of about 0.07 nm
// is below the SH99 tables' range at the default T_e = 10⁴ K (their
// Stark-only widths start at 3.16e20 m⁻³ there), so the line's only
// density is GGC 2003's and the SH99 cell gives the tables' range.
func TestLineModelsTableSaysWhyAModelDoesNotApply(t *testing.T) {
	m := diag.Measurement{Unit: diag.PhotonUnits, ResponseCorrected: true, InstrumentGaussFWHMNM: 0.02, GasTemperatureK: 500,
		Lines: []diag.MeasuredLine{{Upper: 4, Intensity: 1e4, IntensityUnc: 1e2, FWHMNM: 0.08, FWHMUncNM: 0.002}}}
	d, err := diag.Analyze(m)
	if err != nil {
		t.Fatal(err)
	}
	if n := len(d.Lines[0].Densities); n != 1 || !strings.HasPrefix(d.Lines[0].Densities[0].Relation, "ggc2003-") {
		t.Fatalf("densities %+v, want GGC 2003's only (test premise)", d.Lines[0].Densities)
	}
	var buf bytes.Buffer
	if err := lineModelsTable(&d).Render(context.Background(), &buf); err != nil {
		t.Fatal(err)
	}
	out := buf.String()
	for _, want := range []string{">SH99</th>", "does not apply", `data-testid="model-not-applying"`, "outside the Stehlé–Hutcheon tables"} {
		if !strings.Contains(out, want) {
			t.Errorf("per-model table lacks %q:\n%s", want, out)
		}
	}
}

// The whole-fit section lists what another Stark model gives, saying that
// this is not in the ±.
func TestWholeFitSectionOtherModels(t *testing.T) {
	var buf bytes.Buffer
	w := WholeFitView{RouteLabel: "whole-spectrum fit", Converged: true,
		OtherModels: []string{"Hβ: for its SH99 Stark FWHM at this n_e (1.56 nm), ggc2003-hbeta-fwhm gives 1.91 × 10²² m⁻³ (−9.0 %)"}}
	if err := wholeFitSection(w).Render(context.Background(), &buf); err != nil {
		t.Fatal(err)
	}
	out := buf.String()
	for _, want := range []string{`data-testid="whole-other-models"`, "not in the ± above", "ggc2003-hbeta-fwhm gives 1.91 × 10²² m⁻³ (−9.0 %)"} {
		if !strings.Contains(out, want) {
			t.Errorf("whole-fit section lacks %q", want)
		}
	}
}
