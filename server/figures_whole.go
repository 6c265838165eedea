package server

import (
	"bytes"
	"fmt"
	"math"
	"sort"
	"strconv"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"

	"glowlog/diag/spectrum"
	"glowlog/views"
)

// wholeMark is a Balmer line marked on the whole-fit figure.
type wholeMark struct {
	X    float64
	Name string
}

// wholePlotArea is where the data of the whole-fit figure's panels lie in
// the SVG's own coordinates (points, x from the left), and the wavelength
// range drawn: the page's script turns a drag across the figure into a
// wavelength range with it.
type wholePlotArea struct {
	PX0, PX1 float64 // data area, SVG user units
	X0, X1   float64 // wavelength at PX0 and PX1, nm
}

// WholeFitSVG draws the whole-spectrum fit between lo and hi nm (both 0:
// the whole fitted range): the data as points and the model as a line,
// the Balmer lines marked at their centres, and the residuals in a panel
// below. yLabel is the ordinate with its unit.
func WholeFitSVG(w *spectrum.WholeFit, marks []wholeMark, lo, hi float64, yLabel string) ([]byte, wholePlotArea, error) {
	var area wholePlotArea
	if w == nil {
		return nil, area, errNoFigure
	}
	n := len(w.WavelengthNM)
	if n < 2 || len(w.Data) != n || len(w.Model) != n || len(w.Residual) != n {
		return nil, area, errNoFigure
	}
	x0, x1 := math.Min(w.WavelengthNM[0], w.WavelengthNM[n-1]), math.Max(w.WavelengthNM[0], w.WavelengthNM[n-1])
	if hi > lo {
		x0, x1 = math.Max(x0, lo), math.Min(x1, hi)
	}
	var wl, data, model, res []float64
	for i, x := range w.WavelengthNM {
		if x >= x0 && x <= x1 {
			wl, data = append(wl, x), append(data, w.Data[i])
			model, res = append(model, w.Model[i]), append(res, w.Residual[i])
		}
	}
	if len(wl) < 2 {
		return nil, area, errNoFigure
	}
	ptsData := decimate(wl, data, maxPlotPoints/2)
	ptsModel := decimate(wl, model, maxPlotPoints/2)
	ptsRes := decimate(wl, res, maxPlotPoints/2)

	top := newFigure()
	title := "Whole-spectrum fit"
	if hi > lo {
		title += fmt.Sprintf(", %s–%s nm", ShortNM(x0), ShortNM(x1))
	}
	// The key is in the title: a legend box would sit on the line names
	// (Hα is near an edge of most ranges).
	top.Title.Text = title + "   (points: data, line: model)"
	top.Y.Label.Text = yLabel
	top.Add(plotter.NewGrid())
	y0, y1 := math.Inf(1), math.Inf(-1)
	for _, s := range []plotter.XYs{ptsData, ptsModel} {
		for _, p := range s {
			y0, y1 = math.Min(y0, p.Y), math.Max(y1, p.Y)
		}
	}
	if !(y1 > y0) {
		y1 = y0 + 1
	}
	span := y1 - y0
	// Line markers: a faint guide and the name above the data, in up to
	// two rows when names crowd.
	sort.Slice(marks, func(i, j int) bool { return marks[i].X < marks[j].X })
	var labels plotter.XYLabels
	lastX := [2]float64{math.Inf(-1), math.Inf(-1)}
	minGap := 0.05 * (x1 - x0)
	for _, m := range marks {
		if m.X < x0 || m.X > x1 {
			continue
		}
		row := 0
		if m.X-lastX[0] < minGap {
			row = 1
		}
		lastX[row] = m.X
		yl := y1 + (0.06+0.08*float64(row))*span
		g, err := plotter.NewLine(plotter.XYs{{X: m.X, Y: y0}, {X: m.X, Y: yl - 0.03*span}})
		if err != nil {
			return nil, area, err
		}
		g.LineStyle.Color, g.LineStyle.Width = figGuide, vg.Points(0.8)
		top.Add(g)
		labels.XYs, labels.Labels = append(labels.XYs, plotter.XY{X: m.X, Y: yl}), append(labels.Labels, m.Name)
	}
	sc, err := plotter.NewScatter(ptsData)
	if err != nil {
		return nil, area, err
	}
	sc.GlyphStyle = draw.GlyphStyle{Color: figPoint, Radius: vg.Points(1.3), Shape: draw.CircleGlyph{}}
	ln, err := plotter.NewLine(ptsModel)
	if err != nil {
		return nil, area, err
	}
	ln.LineStyle.Color, ln.LineStyle.Width = figFit, vg.Points(1.3)
	top.Add(sc, ln)
	if len(labels.XYs) > 0 {
		lb, err := plotter.NewLabels(labels)
		if err != nil {
			return nil, area, err
		}
		setLabelStyle(lb, figFit)
		for i := range lb.TextStyle {
			lb.TextStyle[i].XAlign = draw.XCenter
			lb.TextStyle[i].Font.Size = vg.Points(10)
		}
		top.Add(lb)
	}
	top.Y.Min, top.Y.Max = math.Min(y0, 0), y1+0.2*span
	if hi > lo {
		top.Y.Min = y0 - 0.05*span // a zoom shows the detail, not the zero
	}

	bot := newFigure()
	bot.X.Label.Text = "wavelength (nm, air)"
	bot.Y.Label.Text = "data − model"
	bot.Add(plotter.NewGrid())
	zero := plotter.NewFunction(func(float64) float64 { return 0 })
	zero.LineStyle.Color, zero.LineStyle.Width = figZero, vg.Points(1)
	rs, err := plotter.NewScatter(ptsRes)
	if err != nil {
		return nil, area, err
	}
	rs.GlyphStyle = draw.GlyphStyle{Color: figPoint, Radius: vg.Points(1.1), Shape: draw.CircleGlyph{}}
	bot.Add(zero, rs)
	var rmax float64
	for _, v := range res {
		if !math.IsNaN(v) && !math.IsInf(v, 0) {
			rmax = math.Max(rmax, math.Abs(v))
		}
	}
	if rmax > 0 {
		bot.Y.Min, bot.Y.Max = -1.1*rmax, 1.1*rmax
	}
	top.X.Min, top.X.Max, bot.X.Min, bot.X.Max = x0, x1, x0, x1

	width, height := 10*vg.Inch, 4.8*vg.Inch
	svg, err := drawSVG(func(dc draw.Canvas) {
		cs := plot.Align([][]*plot.Plot{{top}, {bot}}, draw.Tiles{Rows: 2, Cols: 1, PadY: vg.Points(4)}, dc)
		split := dc.Min.Y + (dc.Max.Y-dc.Min.Y)*0.3
		t, b := cs[0][0], cs[1][0]
		t.Min.Y, t.Max.Y = split, dc.Max.Y
		b.Min.Y, b.Max.Y = dc.Min.Y, split-vg.Points(2)
		top.Draw(t)
		bot.Draw(b)
		da := bot.DataCanvas(b)
		area = wholePlotArea{PX0: da.Min.X.Points(), PX1: da.Max.X.Points(), X0: x0, X1: x1}
	}, width, height)
	if err != nil {
		return nil, area, err
	}
	desc := fmt.Sprintf("Whole-spectrum fit from %s to %s nm, %d pixels: measured data as points and the fitted model as a line (%s); the lower panel shows data minus model, largest |residual| %s.",
		ShortNM(x0), ShortNM(x1), len(wl), yLabel, views.SigFig(rmax, 3))
	if w.ReducedChi2 > 0 {
		desc += " Reduced χ² of the fit over its whole range: " + views.SigFig(w.ReducedChi2, 3) + "."
	}
	svg = withAccessibility(svg, title, desc)
	// The data area and range ride on the root element, for the page's
	// drag-to-zoom script.
	if i := bytes.Index(svg, []byte("<svg")); i >= 0 {
		attrs := fmt.Sprintf(` data-px0="%g" data-px1="%g" data-x0="%g" data-x1="%g"`, area.PX0, area.PX1, area.X0, area.X1)
		svg = append(svg[:i+4:i+4], append([]byte(attrs), svg[i+4:]...)...)
	}
	return svg, area, nil
}

// wholeZoomQuery is the query of a zoomed whole-fit figure.
func wholeZoomQuery(lo, hi float64) []string {
	return []string{"lo", strconv.FormatFloat(lo, 'f', 4, 64), "hi", strconv.FormatFloat(hi, 'f', 4, 64)}
}

// ShortNM writes a wavelength to 0.001 nm without trailing zeros.
func ShortNM(x float64) string {
	return strconv.FormatFloat(math.Round(x*1000)/1000, 'f', -1, 64)
}
