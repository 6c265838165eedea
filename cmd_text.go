package main

import (
	"bytes"
	"fmt"
	"strings"
	"text/tabwriter"

	"glowlog/diag"
	"glowlog/diag/spectrum"
	"glowlog/server"
	"glowlog/views"
)

// writeTextSummary writes the plain-text form of one analyze result
// (analyze --text): the route, the main numbers with their total 1σ, the
// warnings and, when the whole-spectrum fit ran, its parameters with σ,
// its χ² and how far it lies from the line-by-line route.
func writeTextSummary(buf *bytes.Buffer, src string, r any) {
	var d *diag.Result
	var sr *spectrum.Result
	switch v := r.(type) {
	case diag.Result:
		d = &v
	case *diag.Result:
		d = v
	case spectrum.Result:
		sr, d = &v, &v.Result
	case *spectrum.Result:
		sr, d = v, &v.Result
	default:
		fmt.Fprintf(buf, "%s: no result\n\n", src)
		return
	}
	route := "line by line (a measurement set always is)"
	if sr != nil {
		route = server.ModelLabel(server.ResultModel(sr))
	}
	fmt.Fprintf(buf, "%s\n  route: %s\n", src, route)
	tw := tabwriter.NewWriter(buf, 0, 4, 2, ' ', 0)
	num := func(v, u *float64, unit string) string {
		if v == nil {
			return "not determined"
		}
		return views.ValueUnc(v, u) + " " + unit
	}
	fmt.Fprintf(tw, "  T_exc\t%s\t(± total 1σ)\n", num(d.ExcitationTemperatureK, d.ExcitationTemperatureUncK, "K"))
	ne := num(d.ElectronDensityM3, d.ElectronDensityUncM3, "m⁻³")
	if d.ElectronDensitySource != "" && d.ElectronDensityM3 != nil {
		ne += "\tfrom " + d.ElectronDensitySource
	}
	if sr != nil && sr.Whole != nil && sr.Whole.ElectronDensityUpperLimitM3 != nil && d.ElectronDensityM3 == nil {
		ne = "< " + views.ValueUnc(sr.Whole.ElectronDensityUpperLimitM3, nil) + " m⁻³\t(upper limit: the Stark broadening is too small to measure)"
	}
	fmt.Fprintf(tw, "  n_e\t%s\n", ne)
	if d.GasTemperatureK != nil {
		fmt.Fprintf(tw, "  T_g\t%s\t(%s)\n", num(d.GasTemperatureK, d.GasTemperatureUncK, "K"), d.GasTemperatureSource)
	}
	tw.Flush()
	n, worst := diag.CountWarnings(d.Flags)
	if n == 0 {
		buf.WriteString("  warnings: none\n")
	} else {
		fmt.Fprintf(buf, "  warnings: %d (worst: %s)\n", n, worst)
		for _, sev := range []diag.Severity{diag.SeverityProblem, diag.SeverityCaution} {
			for _, f := range d.Flags {
				if diag.FlagSeverity(f) == sev {
					fmt.Fprintf(buf, "    %s: %s\n", sev, f.Message)
				}
			}
		}
	}
	if sr != nil && sr.Whole != nil {
		writeWholeText(buf, sr.Whole, d)
	}
	buf.WriteByte('\n')
}

// writeWholeText is the whole-spectrum fit part of writeTextSummary.
func writeWholeText(buf *bytes.Buffer, w *spectrum.WholeFit, d *diag.Result) {
	state := "converged"
	if !w.Converged {
		state = "NOT converged"
	}
	areas := "line areas tied by T_exc"
	if w.Areas == spectrum.WholeAreasFree {
		areas = "free line areas"
	}
	fmt.Fprintf(buf, "  whole-spectrum fit: %s; reduced χ² %s with %d degrees of freedom, %d pixels %s–%s nm, %d iterations, %s\n",
		areas, views.SigFig(w.ReducedChi2, 3), w.DOF, w.Pixels, server.ShortNM(w.RangeNM[0]), server.ShortNM(w.RangeNM[1]), w.Iterations, state)
	tw := tabwriter.NewWriter(buf, 0, 4, 2, ' ', 0)
	for _, p := range w.Params {
		label := p.Label
		if label == "" {
			label = p.Name
		}
		val := p.Value
		v := server.PlainNum(val)
		if p.Fixed {
			v += " (fixed)"
		} else if p.Unc > 0 {
			u := p.Unc
			v = views.ValueUnc(&val, &u)
		}
		fmt.Fprintf(tw, "    %s\t%s\t%s\n", label, v, p.Unit)
	}
	tw.Flush()
	cmp := func(q, unit string, wv, wu, lv, lu, diff *float64) {
		if wv == nil || lv == nil {
			return
		}
		line := fmt.Sprintf("  %s: whole %s %s, line by line %s %s", q, views.ValueUnc(wv, wu), unit, views.ValueUnc(lv, lu), unit)
		if diff != nil {
			line += ", difference " + strings.Replace(views.SigFig(*diff, 2), "-", "−", 1) + " σ"
		}
		buf.WriteString(line + "\n")
	}
	cmp("T_exc", "K", w.ExcitationTemperatureK, w.ExcitationTemperatureUncK, w.LinesExcitationTemperatureK, w.LinesExcitationTemperatureUncK, w.TexcDiffSigma)
	cmp("n_e", "m⁻³", w.ElectronDensityM3, w.ElectronDensityUncM3, w.LinesElectronDensityM3, w.LinesElectronDensityUncM3, w.NeDiffSigma)
	disagree := "no"
	for _, f := range d.Flags {
		if f.Code == spectrum.FlagWholeDisagrees {
			disagree = "YES — " + f.Message
		}
	}
	fmt.Fprintf(buf, "  routes disagree beyond their σ: %s\n", disagree)
	for _, t := range server.OtherModelTexts(w) {
		fmt.Fprintf(buf, "  Stark theory (not in the whole fit's σ): %s\n", t)
	}
	if w.DopplerNote != "" {
		fmt.Fprintf(buf, "  Doppler: %s\n", w.DopplerNote)
	}
}
