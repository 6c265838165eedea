package views

import (
	"math"
	"strings"

	"glowlog/diag"
)

// UncSplit is a value with its total 1σ and the parts of that σ, as the
// run page and the report show it: "value ± total" with the parts on hover
// (Title) and listed on demand (Parts).
type UncSplit struct {
	// Text is "value ± total" without the unit ("≥ value" for a lower limit).
	Text string
	// Parts lists the statistical σ, the systematic σ and each named
	// systematic part, each formatted with the unit.
	Parts []KV
	// Title is the parts in one line for the title attribute.
	Title string
	// LowerLimit marks a value that is only a lower limit.
	LowerLimit bool
	// Note explains how the parts combine ("" when they add in quadrature).
	Note string
}

// sigmaText formats a σ with its unit and its size relative to the value
// ("1.2e+20 m⁻³ (5.3 %)").
func sigmaText(sigma, value float64, unit string) string {
	s := SigFig(sigma, 2) + " " + unit
	if value != 0 && !math.IsNaN(sigma) {
		s += " (" + SigFig(100*sigma/math.Abs(value), 2) + " %)"
	}
	return s
}

// splitOf builds the split of value v with total σ total, statistical σ
// stat, systematic σ sys and the named systematic parts. unit is the
// unit of the parts' text.
func splitOf(v, total, stat, sys *float64, parts []diag.UncPart, unit, statWhat string, lower bool) *UncSplit {
	if v == nil {
		return nil
	}
	s := &UncSplit{Text: ValueUnc(v, total), LowerLimit: lower}
	if lower {
		s.Text = "≥ " + SigFig(*v, 3)
		s.Parts = append(s.Parts, KV{K: "lower limit", V: "the Stark width is far below the Gaussian width, where the Voigt approximation underestimates n_e"})
	}
	if total != nil {
		s.Parts = append(s.Parts, KV{K: "total 1σ (statistical ⊕ systematic)", V: sigmaText(*total, *v, unit)})
	}
	if stat != nil {
		s.Parts = append(s.Parts, KV{K: "statistical (" + statWhat + ")", V: sigmaText(*stat, *v, unit)})
	} else if total != nil {
		s.Parts = append(s.Parts, KV{K: "statistical (" + statWhat + ")", V: "not known (no σ of the input)"})
	}
	if sys != nil {
		s.Parts = append(s.Parts, KV{K: "systematic", V: sigmaText(*sys, *v, unit)})
	}
	for _, p := range parts {
		s.Parts = append(s.Parts, KV{K: "systematic: " + p.Name, V: sigmaText(p.Sigma, *v, unit)})
	}
	lines := make([]string, len(s.Parts))
	for i, p := range s.Parts {
		lines[i] = p.K + ": " + p.V
	}
	s.Title = strings.Join(lines, "; ")
	return s
}

// NeSplit is the split of a result's best n_e (m⁻³); nil when n_e is not
// determined. The best n_e is a lower limit when the analysis says so in
// its source (only lower-limit lines were available).
func NeSplit(d *diag.Result) *UncSplit {
	if d == nil {
		return nil
	}
	s := splitOf(d.ElectronDensityM3, d.ElectronDensityUncM3, d.ElectronDensityUncStatM3, d.ElectronDensityUncSysM3,
		d.ElectronDensityUncParts, "m⁻³", "line widths", NeIsLowerLimit(d))
	if s != nil && strings.HasPrefix(d.ElectronDensitySource, "weighted mean of ") {
		s.Note = "Several lines: each line's systematic parts add in quadrature; the combined value's systematic σ and each part are the lines' values averaged with the n_e weights (taken as fully correlated between lines), so the parts listed add in quadrature to about, not exactly, the systematic σ. When the lines scatter beyond their σ, the σ are scaled by the Birge ratio (see the warnings)."
	}
	return s
}

// NeIsLowerLimit reports whether a result's best n_e is only a lower
// limit: diag combines the lines' densities leaving lower limits out, and
// falls back to one lower-limit line (source "…, lower limit") only when
// no other line has a value.
func NeIsLowerLimit(d *diag.Result) bool {
	return d != nil && d.ElectronDensityM3 != nil && strings.HasSuffix(d.ElectronDensitySource, ", lower limit")
}

// TexcSplit is the split of a result's T_exc (K); nil when undefined.
// The systematic part of T_exc is the response calibration.
func TexcSplit(d *diag.Result) *UncSplit {
	if d == nil {
		return nil
	}
	var parts []diag.UncPart
	if d.ExcitationTemperatureUncSysK != nil && *d.ExcitationTemperatureUncSysK > 0 {
		parts = []diag.UncPart{{Name: "response calibration", Sigma: *d.ExcitationTemperatureUncSysK}}
	}
	s := splitOf(d.ExcitationTemperatureK, d.ExcitationTemperatureUncK, d.ExcitationTemperatureUncStatK,
		d.ExcitationTemperatureUncSysK, parts, "K", "Boltzmann fit", false)
	if s != nil && d.ExcitationTemperatureUncSysK != nil && *d.ExcitationTemperatureUncSysK == 0 {
		for _, f := range d.Flags {
			if f.Code == diag.FlagTexNoCalibrationUnc {
				s.Parts = append(s.Parts, KV{K: "not included", V: "the response calibration's σ (none given)"})
				s.Title += "; not included: the response calibration's σ (none given)"
				break
			}
		}
	}
	return s
}

// LineNeSplit is the split of one line's preferred n_e (m⁻³).
func LineNeSplit(l diag.LineResult) *UncSplit {
	return splitOf(l.ElectronDensityM3, l.ElectronDensityUncM3, l.ElectronDensityUncStatM3, l.ElectronDensityUncSysM3,
		l.DensityUncParts, "m⁻³", "line width", l.DensityLowerLimit)
}

// lineNe is a line's n_e cell: "value ± total", or "≥ value" for a lower
// limit.
func lineNe(l diag.LineResult) string {
	if s := LineNeSplit(l); s != nil {
		return s.Text
	}
	return "—"
}

func lineNeTitle(l diag.LineResult) string {
	if s := LineNeSplit(l); s != nil {
		return s.Title
	}
	return ""
}

// modelFamily names the family of a Stark relation ID for the per-model
// columns ("ggc2003-hbeta-fwhm" → "GGC 2003", "sh99-…" → "SH99").
func modelFamily(id string) string {
	switch {
	case strings.HasPrefix(id, "ggc2003-"):
		return "GGC 2003"
	case strings.HasPrefix(id, "sh99-"):
		return "SH99"
	case strings.HasPrefix(id, "griem-"):
		return "Griem"
	}
	if i := strings.IndexByte(id, '-'); i > 0 {
		return id[:i]
	}
	return id
}

// modelFamilies lists the Stark model families of a result's lines, in
// order of first appearance.
func modelFamilies(d *diag.Result) []string {
	var out []string
	seen := map[string]bool{}
	for _, l := range d.Lines {
		for _, e := range l.Densities {
			if f := modelFamily(e.Relation); !seen[f] {
				seen[f] = true
				out = append(out, f)
			}
		}
	}
	// Models that were tried on a line with a width and did not apply
	// (outside their tables or range) get their column too, so that the
	// page says why a line has no density from them.
	for _, l := range d.Lines {
		if len(l.Densities) == 0 {
			continue
		}
		for _, m := range l.DensitiesNotApplying {
			if f := modelFamily(m.Relation); !seen[f] {
				seen[f] = true
				out = append(out, f)
			}
		}
	}
	return out
}

// modelNotApplying returns why the model family fam gave the line no
// density ("" when the analysis did not say).
func modelNotApplying(l diag.LineResult, fam string) string {
	for _, m := range l.DensitiesNotApplying {
		if modelFamily(m.Relation) == fam {
			return strings.TrimPrefix(m.Reason, "sh99: ")
		}
	}
	return ""
}

// modelEstimate returns the line's density by the model family fam.
func modelEstimate(l diag.LineResult, fam string) (diag.DensityEstimate, bool) {
	for _, e := range l.Densities {
		if modelFamily(e.Relation) == fam {
			return e, true
		}
	}
	return diag.DensityEstimate{}, false
}

// estimateText formats one model's n_e ± σ ("≥ value" when the line is a
// lower limit).
func estimateText(l diag.LineResult, e diag.DensityEstimate) string {
	if l.DensityLowerLimit {
		return "≥ " + SigFig(e.ElectronDensityM3, 3)
	}
	return ValueUnc(&e.ElectronDensityM3, &e.ElectronDensityUncM3)
}

// linesWithDensities reports whether any line has a per-model density.
func linesWithDensities(d *diag.Result) bool {
	for _, l := range d.Lines {
		if len(l.Densities) > 0 {
			return true
		}
	}
	return false
}

// partsText lists a line's systematic parts in one cell.
func partsText(l diag.LineResult) string {
	var ps []string
	for _, p := range l.DensityUncParts {
		v := 0.0
		if l.ElectronDensityM3 != nil {
			v = *l.ElectronDensityM3
		}
		ps = append(ps, p.Name+" "+sigmaText(p.Sigma, v, "m⁻³"))
	}
	return strings.Join(ps, "; ")
}

// optSigma formats an optional σ ("—" when absent).
func optSigma(v *float64) string {
	if v == nil {
		return "—"
	}
	return SigFig(*v, 2)
}

// statusWord spells a source status for people ("cross-checked" stays).
func statusWord(s string) string {
	switch s {
	case diag.StatusOpen:
		return "open (not verified)"
	case "":
		return "not stated"
	}
	return s
}
