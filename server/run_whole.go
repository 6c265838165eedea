package server

import (
	"fmt"
	"math"
	"strconv"
	"strings"

	"github.com/labstack/echo/v4"

	"glowlog/diag"
	"glowlog/diag/spectrum"
	"glowlog/views"
)

// The run page's whole-spectrum fit section (views.WholeFitView) and its
// figure, GET /runs/:id/whole.svg?v=&a=&lo=&hi= (lo/hi in nm: a zoomed
// range; absent: the whole fitted range).

// zoomRange reads the lo and hi query parameters (nm); both absent is
// the whole range (0, 0).
func zoomRange(c echo.Context) (float64, float64, error) {
	ls, hs := c.QueryParam("lo"), c.QueryParam("hi")
	if ls == "" && hs == "" {
		return 0, 0, nil
	}
	lo, err1 := strconv.ParseFloat(ls, 64)
	hi, err2 := strconv.ParseFloat(hs, 64)
	if err1 != nil || err2 != nil || !(hi > lo) || math.IsInf(lo, 0) || math.IsInf(hi, 0) {
		return 0, 0, badRequest("lo and hi (zoom range, nm) must be two numbers with lo < hi, got %q and %q", ls, hs)
	}
	return lo, hi, nil
}

// wholeMarks are the lines of the whole fit at their catalogue centres
// shifted by the fitted offset (from the result's line list).
func wholeMarks(d *diag.Result, w *spectrum.WholeFit) []wholeMark {
	offset := 0.0
	for _, p := range w.Params {
		if p.Name == "offset" {
			offset = p.Value
		}
	}
	centre := map[int]float64{}
	if d != nil {
		for _, l := range d.Lines {
			centre[l.UpperLevel] = l.WavelengthAirNM
		}
	}
	var out []wholeMark
	for _, l := range w.Lines {
		x, ok := centre[l.Upper]
		if !ok {
			t, err := diag.Balmer(l.Upper, diag.Hydrogen)
			if err != nil {
				continue
			}
			x = t.WavelengthAirNM
		}
		out = append(out, wholeMark{X: x + offset, Name: l.Name})
	}
	return out
}

// wholeZooms are the zoom choices: the whole range, then each fitted
// window of the line-by-line route (a line and its wings), else ±2 nm
// around each line.
func wholeZooms(r *decodedResult, marks []wholeMark) []struct {
	label  string
	lo, hi float64
} {
	type z = struct {
		label  string
		lo, hi float64
	}
	out := []z{{"whole range", 0, 0}}
	w := r.Spectrum.Whole
	seen := map[string]bool{}
	for _, win := range r.Spectrum.Windows {
		if len(win.WavelengthNM) < 2 {
			continue
		}
		lo, hi := win.WavelengthNM[0], win.WavelengthNM[len(win.WavelengthNM)-1]
		if lo > hi {
			lo, hi = hi, lo
		}
		name := windowNames(r.Diag, win)
		if !seen[name] {
			seen[name] = true
			out = append(out, z{name, lo, hi})
		}
	}
	if len(out) > 1 {
		return out
	}
	for _, m := range marks {
		if m.X-2 < w.RangeNM[1] && m.X+2 > w.RangeNM[0] {
			out = append(out, z{m.Name, m.X - 2, m.X + 2})
		}
	}
	return out
}

// wholeFitView builds the whole-fit section of result r (nil when r has
// no whole-spectrum fit). lo, hi is the zoom (0, 0: the whole range);
// inline embeds the figure.
func wholeFitView(base string, p *runPage, r *decodedResult, lo, hi float64, inline bool) *views.WholeFitView {
	if r == nil || r.Spectrum == nil || r.Spectrum.Whole == nil {
		return nil
	}
	w := r.Spectrum.Whole
	route := ResultModel(r.Spectrum)
	v := &views.WholeFitView{Route: route, RouteLabel: ModelLabel(route), Converged: w.Converged,
		DopplerNote: w.DopplerNote}
	if w.Areas == spectrum.WholeAreasFree {
		v.Areas = "Free line areas (each line its own; T_exc from a Boltzmann plot of them)"
	} else {
		v.Areas = "Line areas tied by the Boltzmann distribution (T_exc and one scale)"
	}
	v.Summary = fmt.Sprintf("Reduced χ² %s with %d degrees of freedom, %d pixels from %s to %s nm, %d iterations.",
		views.SigFig(w.ReducedChi2, 3), w.DOF, w.Pixels, ShortNM(w.RangeNM[0]), ShortNM(w.RangeNM[1]), w.Iterations)

	// The two routes side by side.
	add := func(q, unit string, wv, wu, lv, lu, diff *float64) {
		if wv == nil && lv == nil {
			return
		}
		row := views.RouteCompareRow{Quantity: q, Unit: unit, Whole: views.ValueUnc(wv, wu), Lines: views.ValueUnc(lv, lu), DiffSigma: "—"}
		if diff != nil && !math.IsNaN(*diff) && !math.IsInf(*diff, 0) {
			row.DiffSigma = strings.Replace(views.SigFig(*diff, 2), "-", "−", 1)
			// 2 combined σ: common practice, no source.
			row.Far = math.Abs(*diff) > 2
		}
		v.Compare = append(v.Compare, row)
	}
	add("T_exc", "K", w.ExcitationTemperatureK, w.ExcitationTemperatureUncK, w.LinesExcitationTemperatureK, w.LinesExcitationTemperatureUncK, w.TexcDiffSigma)
	add("n_e", "m⁻³", w.ElectronDensityM3, w.ElectronDensityUncM3, w.LinesElectronDensityM3, w.LinesElectronDensityUncM3, w.NeDiffSigma)
	for _, f := range r.Diag.Flags {
		if f.Code == spectrum.FlagWholeDisagrees {
			v.Disagrees = true
		}
	}
	v.OtherModels = OtherModelTexts(w)

	// Parameters, and the correlations of the free ones.
	var free []spectrum.WholeParam
	for _, p := range w.Params {
		row := views.WholeParamRow{Name: p.Name, Label: p.Label, Unit: p.Unit, Fixed: p.Fixed}
		if row.Label == "" {
			row.Label = p.Name
		}
		if p.Fixed || !(p.Unc > 0) {
			row.Value = PlainNum(p.Value)
		} else {
			val, unc := p.Value, p.Unc
			row.Value = views.ValueUnc(&val, &unc)
		}
		v.Params = append(v.Params, row)
		if !p.Fixed {
			free = append(free, p)
		}
	}
	if len(w.Correlation) == len(free) && len(free) > 1 {
		for i, p := range free {
			if len(w.Correlation[i]) != len(free) {
				v.CorrCols, v.Corr = nil, nil
				break
			}
			v.CorrCols = append(v.CorrCols, shortParamName(p.Name, w))
			var row []views.CorrCell
			for j, r := range w.Correlation[i] {
				row = append(row, corrCell(r, i == j))
			}
			v.Corr = append(v.Corr, row)
		}
	}

	for _, l := range w.Lines {
		area, unc := l.Area, l.AreaUnc
		row := views.WholeLineRow{Name: l.Name, Shape: shapeWords(l.Shape), Area: views.ValueUnc(&area, &unc),
			StarkFWHM: views.SigFig(l.StarkFWHMNM, 3), Chi2: views.SigFig(l.ReducedChi2, 3), RMS: views.SigFig(l.ResidualRMS, 3),
			PeakSNR: views.SigFig(l.PeakSNR, 3)}
		if !(l.AreaUnc > 0) {
			row.Area = views.SigFig(l.Area, 4)
		}
		v.Lines = append(v.Lines, row)
	}

	// The figure and its zooms.
	marks := wholeMarks(r.Diag, w)
	yl := windowYLabel(r.Diag)
	svg, _, err := WholeFitSVG(w, marks, lo, hi, yl)
	if err != nil {
		return v
	}
	zoomArgs := []string{}
	if hi > lo {
		zoomArgs = wholeZoomQuery(lo, hi)
	}
	v.Figure = &views.Figure{Title: "Whole-spectrum fit of " + r.AttachmentName, Href: base + "/whole.svg" + p.query(zoomArgs...)}
	if inline {
		v.Figure.SVG = inlineSVG(svg)
	}
	for _, z := range wholeZooms(r, marks) {
		var q []string
		if z.hi > z.lo {
			q = wholeZoomQuery(z.lo, z.hi)
		}
		cur := (z.hi == 0 && !(hi > lo)) || (z.hi > z.lo && math.Abs(z.lo-lo) < 1e-3 && math.Abs(z.hi-hi) < 1e-3)
		v.Zoom = append(v.Zoom, views.ZoomLink{Label: z.label, Current: cur,
			PageHref: base + p.query(q...) + "#whole-fit", SVGHref: base + "/whole.svg" + p.query(q...)})
	}
	return v
}

// shapeWords names a line shape of the whole model.
func shapeWords(s string) string {
	switch s {
	case "SH99":
		return "Stark tables (SH99) ⊗ Doppler"
	case "Voigt":
		return "Voigt (outside the tables)"
	}
	return s
}

// shortParamName is a parameter's name in the correlation matrix's
// narrow headers.
func shortParamName(name string, w *spectrum.WholeFit) string {
	switch name {
	case "T_exc", "n_e":
		return name
	case "T_gas":
		return "T_g"
	case "scale":
		return "scale"
	case "instrument_fwhm":
		return "w_instr"
	case "instrument_fwhm_slope":
		return "dw/dλ"
	case "offset":
		return "Δλ"
	}
	if n, ok := strings.CutPrefix(name, "baseline_"); ok {
		return "b" + n
	}
	if n, ok := strings.CutPrefix(name, "area_"); ok {
		if up, err := strconv.Atoi(n); err == nil {
			for _, l := range w.Lines {
				if l.Upper == up {
					return "A " + l.Name
				}
			}
		}
		return "A n=" + n
	}
	return name
}

// corrCell writes a correlation coefficient with its band of |r|.
func corrCell(r float64, diagonal bool) views.CorrCell {
	if diagonal {
		return views.CorrCell{Text: "1", Band: -1}
	}
	if math.IsNaN(r) || math.IsInf(r, 0) {
		return views.CorrCell{Text: "—", Band: 0}
	}
	a := math.Abs(r)
	if a < 0.005 {
		r = 0 // no "−0.00"
	}
	band := 0
	switch {
	case a >= 0.95:
		band = 3
	case a >= 0.8:
		band = 2
	case a >= 0.5:
		band = 1
	}
	return views.CorrCell{Text: strings.Replace(strconv.FormatFloat(r, 'f', 2, 64), "-", "−", 1), Band: band}
}

// figureWhole handles GET /runs/:id/whole.svg?v=&a=&lo=&hi=.
func (s *Server) figureWhole(c echo.Context) error {
	p, r, err := s.selectedResult(c)
	if err != nil {
		return err
	}
	lo, hi, err := zoomRange(c)
	if err != nil {
		return err
	}
	if r.Spectrum == nil || r.Spectrum.Whole == nil {
		return svgBlob(c, "", nil, errNoFigure)
	}
	svg, _, err := WholeFitSVG(r.Spectrum.Whole, wholeMarks(r.Diag, r.Spectrum.Whole), lo, hi, windowYLabel(r.Diag))
	return svgBlob(c, fileStem(p, r)+"-whole.svg", svg, err)
}

// PlainNum writes a given (not fitted) value as it is, to 6 figures, with
// a minus sign.
func PlainNum(v float64) string {
	return strings.Replace(strconv.FormatFloat(v, 'g', 6, 64), "-", "−", 1)
}

// OtherModelTexts says, per line of whole fit w, what another Stark
// model's relation gives for the line's SH99 Stark width at the fitted
// n_e (run page and analyze --text).
func OtherModelTexts(w *spectrum.WholeFit) []string {
	var out []string
	for _, m := range w.OtherModels {
		width := "FWHM"
		if r, err := diag.LookupStarkRelation(m.Relation); err == nil && r.Kind == diag.FWHA {
			width = "FWHA"
		}
		out = append(out, fmt.Sprintf("%s: for its SH99 Stark %s at this n_e (%s nm), %s gives %s m⁻³ (%s %%)",
			m.Name, width, views.SigFig(m.StarkWidthNM, 3), m.Relation, views.SigFig(m.ElectronDensityM3, 3),
			strings.Replace(fmt.Sprintf("%+.1f", 100*m.RelDiff), "-", "−", 1)))
	}
	return out
}
