package server

import (
	"bytes"
	"errors"
	"fmt"
	"html"
	"image/color"
	"math"
	"regexp"
	"sort"
	"strconv"
	"strings"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/font"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgsvg"

	"glowlog/diag"
	"glowlog/diag/spectrum"
	"glowlog/views"
)

// Figures are drawn on the server with gonum/plot as SVG: one set of bytes
// serves the inline figure, the standalone .svg download and the printed
// report. Every figure carries role="img", a <title> and a <desc> so that
// screen readers get its content in words.

// errNoFigure reports a result without the data for a figure.
var errNoFigure = errors.New("server: no data for this figure")

// Figure colours: our own palette (slate blue points, amber fit).
var (
	figPoint    = color.RGBA{R: 0x2f, G: 0x6f, B: 0x8f, A: 0xff}
	figFit      = color.RGBA{R: 0xb3, G: 0x54, B: 0x1e, A: 0xff}
	figExcluded = color.RGBA{R: 0x8a, G: 0x93, B: 0x9c, A: 0xff}
	figZero     = color.RGBA{R: 0x5b, G: 0x66, B: 0x73, A: 0xff}
)

// maxPlotPoints is the length above which a series is decimated (min/max
// per bucket) before plotting.
const maxPlotPoints = 2000

// BoltzmannSVG draws the Boltzmann plot of r: the ordinate of each line
// against its upper-level energy with ±1σ error bars, excluded lines
// hollow and labelled, the weighted fit and the excitation temperature.
func BoltzmannSVG(r *diag.Result) ([]byte, error) {
	// One level is no plot: the warnings already say that at least two
	// are needed.
	if r == nil || len(r.Boltzmann.Points) < 2 {
		return nil, errNoFigure
	}
	bz := r.Boltzmann
	names := map[int]string{}
	for _, l := range r.Lines {
		names[l.UpperLevel] = l.Name
	}
	name := func(n int) string {
		if s, ok := names[n]; ok {
			return s
		}
		return fmt.Sprintf("n = %d", n)
	}

	p := newFigure()
	p.Title.Text = "Boltzmann plot"
	p.X.Label.Text = "upper-level energy E_k (eV)"
	if r.IntensityUnit == diag.EnergyUnits.String() {
		p.Y.Label.Text = "ln(I λ / (g_k A_ki))   (λ in nm, A in s⁻¹)"
	} else {
		p.Y.Label.Text = "ln(I / (g_k A_ki))   (A in s⁻¹)"
	}
	p.Add(plotter.NewGrid())

	var in, out errXYs
	var inL, outL plotter.XYLabels
	xmin, xmax := math.Inf(1), math.Inf(-1)
	ymin, ymax := math.Inf(1), math.Inf(-1)
	for _, pt := range bz.Points {
		xmin, xmax = math.Min(xmin, pt.EnergyEV), math.Max(xmax, pt.EnergyEV)
		ymin, ymax = math.Min(ymin, pt.Y-pt.YUnc), math.Max(ymax, pt.Y+pt.YUnc)
		e := struct{ Low, High float64 }{pt.YUnc, pt.YUnc}
		xy := plotter.XY{X: pt.EnergyEV, Y: pt.Y}
		if pt.Excluded {
			out.XYs, out.YErrors = append(out.XYs, xy), append(out.YErrors, e)
			outL.XYs, outL.Labels = append(outL.XYs, xy), append(outL.Labels, "  "+name(pt.Upper)+" (excluded)")
		} else {
			in.XYs, in.YErrors = append(in.XYs, xy), append(in.YErrors, e)
			inL.XYs, inL.Labels = append(inL.XYs, xy), append(inL.Labels, "  "+name(pt.Upper))
		}
	}
	if len(in.XYs) > 0 {
		eb, err := plotter.NewYErrorBars(in)
		if err != nil {
			return nil, err
		}
		eb.LineStyle.Color, eb.LineStyle.Width, eb.CapWidth = figPoint, vg.Points(1.2), vg.Points(6)
		sc, err := plotter.NewScatter(in.XYs)
		if err != nil {
			return nil, err
		}
		sc.GlyphStyle = draw.GlyphStyle{Color: figPoint, Radius: vg.Points(3.2), Shape: draw.CircleGlyph{}}
		lb, err := plotter.NewLabels(inL)
		if err != nil {
			return nil, err
		}
		setLabelStyle(lb, figPoint)
		p.Add(eb, sc, lb)
		p.Legend.Add("lines in the fit (±1σ)", sc)
	}
	if len(out.XYs) > 0 {
		eb, err := plotter.NewYErrorBars(out)
		if err != nil {
			return nil, err
		}
		eb.LineStyle.Color, eb.LineStyle.Width, eb.CapWidth = figExcluded, vg.Points(1), vg.Points(6)
		eb.LineStyle.Dashes = []vg.Length{vg.Points(2), vg.Points(2)}
		sc, err := plotter.NewScatter(out.XYs)
		if err != nil {
			return nil, err
		}
		sc.GlyphStyle = draw.GlyphStyle{Color: figExcluded, Radius: vg.Points(3.6), Shape: draw.RingGlyph{}}
		lb, err := plotter.NewLabels(outL)
		if err != nil {
			return nil, err
		}
		setLabelStyle(lb, figExcluded)
		p.Add(eb, sc, lb)
		p.Legend.Add("excluded from the fit", sc)
	}
	if bz.N >= 2 && bz.Slope != 0 {
		pad := math.Max(0.05*(xmax-xmin), 0.02)
		fit := plotter.NewFunction(func(x float64) float64 { return bz.Intercept + bz.Slope*x })
		fit.XMin, fit.XMax = xmin-pad, xmax+pad
		fit.LineStyle.Color, fit.LineStyle.Width = figFit, vg.Points(1.5)
		fit.Dashes = []vg.Length{vg.Points(5), vg.Points(3)}
		p.Add(fit)
		p.Legend.Add("weighted fit: "+texcText(r), fit)
	}
	// Room on the right for the point labels.
	span := math.Max(xmax-xmin, 0.1)
	p.X.Min, p.X.Max = xmin-0.08*span, xmax+0.22*span
	yspan := math.Max(ymax-ymin, 0.1)
	p.Y.Min, p.Y.Max = ymin-0.08*yspan, ymax+0.15*yspan
	p.Legend.Top = true
	p.Legend.TextStyle.Font.Size = vg.Points(10)

	svg, err := drawSVG(func(dc draw.Canvas) { p.Draw(dc) }, 6*vg.Inch, 4.2*vg.Inch)
	if err != nil {
		return nil, err
	}
	return withAccessibility(svg, "Boltzmann plot: "+texcText(r), boltzmannDesc(r, name)), nil
}

// texcText is "T_exc = … ± … K" or a note that it is undefined.
func texcText(r *diag.Result) string {
	if r.ExcitationTemperatureK == nil {
		return "T_exc undefined"
	}
	return "T_exc = " + views.ValueUnc(r.ExcitationTemperatureK, r.ExcitationTemperatureUncK) + " K"
}

func boltzmannDesc(r *diag.Result, name func(int) string) string {
	bz := r.Boltzmann
	var b strings.Builder
	fmt.Fprintf(&b, "Natural logarithm of the line intensity over g·A against the upper-level energy, %d lines in the weighted straight-line fit", bz.N)
	if bz.N >= 2 {
		fmt.Fprintf(&b, ", slope %s per eV, %s (uncertainty basis: %s)", views.SigFig(bz.Slope, 4), texcText(r), bz.UncBasis)
	}
	b.WriteString(". Points:")
	for i, pt := range bz.Points {
		if i > 0 {
			b.WriteString(";")
		}
		fmt.Fprintf(&b, " %s at E = %s eV, y = %s ± %s", name(pt.Upper), views.SigFig(pt.EnergyEV, 5), views.SigFig(pt.Y, 4), views.SigFig(pt.YUnc, 2))
		if pt.Excluded {
			b.WriteString(" (excluded)")
		}
	}
	b.WriteString(".")
	return b.String()
}

// errXYs are points with symmetric y errors, for YErrorBars.
type errXYs struct {
	plotter.XYs
	plotter.YErrors
}

// figureFont is the typeface of all figure text (the page's sans serif).
var figureFont = font.Font{Typeface: "Liberation", Variant: "Sans"}

// newFigure returns a plot with our typeface and tick marks.
func newFigure() *plot.Plot {
	p := plot.New()
	for _, f := range []*font.Font{&p.Title.TextStyle.Font, &p.X.Label.TextStyle.Font, &p.Y.Label.TextStyle.Font,
		&p.X.Tick.Label.Font, &p.Y.Tick.Label.Font, &p.Legend.TextStyle.Font} {
		f.Typeface, f.Variant = figureFont.Typeface, figureFont.Variant
	}
	p.Title.TextStyle.Font.Size = vg.Points(13)
	p.X.Tick.Label.Font.Size, p.Y.Tick.Label.Font.Size = vg.Points(11), vg.Points(11)
	p.X.Tick.Marker, p.Y.Tick.Marker = niceTicks{}, niceTicks{}
	return p
}

// niceTicks labels about six round values (1, 2 or 5 × 10ⁿ apart) with
// four minor ticks between them.
type niceTicks struct{}

func (niceTicks) Ticks(lo, hi float64) []plot.Tick {
	if !(hi > lo) {
		return plot.DefaultTicks{}.Ticks(lo, hi)
	}
	raw := (hi - lo) / 6
	mag := math.Pow(10, math.Floor(math.Log10(raw)))
	step := mag
	for _, m := range []float64{1, 2, 5, 10} {
		if m*mag >= raw {
			step = m * mag
			break
		}
	}
	prec := max(0, -int(math.Floor(math.Log10(step))))
	var ticks []plot.Tick
	minor := step / 5
	for i := math.Ceil(lo / minor); i*minor <= hi+minor*1e-9; i++ {
		v := i * minor
		t := plot.Tick{Value: v}
		if k := math.Round(v / step); math.Abs(v/step-k) < 1e-6 {
			if math.Abs(v) < step*1e-9 {
				v = 0
			}
			t.Label = tickLabel(v, step, prec)
		}
		ticks = append(ticks, t)
	}
	return ticks
}

// tickLabel writes a tick value: plain for ordinary magnitudes, and as
// "9.5 × 10²¹" (with as many figures as the tick step needs) for very
// large or small ones.
func tickLabel(v, step float64, prec int) string {
	if v == 0 || (math.Abs(step) >= 1e-4 && math.Abs(v) < 1e6) {
		return strconv.FormatFloat(v, 'f', prec, 64)
	}
	sig := int(math.Floor(math.Log10(math.Abs(v)))-math.Floor(math.Log10(step))) + 1
	return views.SigFig(v, max(sig, 1))
}

func setLabelStyle(lb *plotter.Labels, c color.Color) {
	for i := range lb.TextStyle {
		lb.TextStyle[i].Font.Typeface, lb.TextStyle[i].Font.Variant = figureFont.Typeface, figureFont.Variant
		lb.TextStyle[i].Color = c
		lb.TextStyle[i].Font.Size = vg.Points(9)
		lb.TextStyle[i].YAlign = draw.YCenter
	}
}

// WindowSVG draws one fitted window of a spectrum: the data as points and
// the fitted model as a line, with the residuals in a panel below. names
// are the fitted lines (for the title); yLabel is the ordinate label with
// its unit.
func WindowSVG(w spectrum.Window, names, yLabel string) ([]byte, error) {
	n := len(w.WavelengthNM)
	if n < 2 || len(w.Data) != n || len(w.Model) != n || len(w.Residual) != n {
		return nil, errNoFigure
	}
	data := decimate(w.WavelengthNM, w.Data, maxPlotPoints/2)
	model := decimate(w.WavelengthNM, w.Model, maxPlotPoints/2)
	res := decimate(w.WavelengthNM, w.Residual, maxPlotPoints/2)

	top := newFigure()
	top.Title.Text = "Fitted window: " + names
	top.Y.Label.Text = yLabel
	top.Add(plotter.NewGrid())
	sc, err := plotter.NewScatter(data)
	if err != nil {
		return nil, err
	}
	sc.GlyphStyle = draw.GlyphStyle{Color: figPoint, Radius: vg.Points(1.6), Shape: draw.CircleGlyph{}}
	ln, err := plotter.NewLine(model)
	if err != nil {
		return nil, err
	}
	ln.LineStyle.Color, ln.LineStyle.Width = figFit, vg.Points(1.4)
	top.Add(sc, ln)
	top.Legend.Add("data", sc)
	top.Legend.Add("Voigt model", ln)
	top.Legend.Top = true
	top.Legend.TextStyle.Font.Size = vg.Points(10)

	bot := newFigure()
	bot.X.Label.Text = "wavelength (nm, air)"
	bot.Y.Label.Text = "residual"
	bot.Add(plotter.NewGrid())
	rs, err := plotter.NewScatter(res)
	if err != nil {
		return nil, err
	}
	rs.GlyphStyle = draw.GlyphStyle{Color: figPoint, Radius: vg.Points(1.4), Shape: draw.CircleGlyph{}}
	zero := plotter.NewFunction(func(float64) float64 { return 0 })
	zero.LineStyle.Color, zero.LineStyle.Width = figZero, vg.Points(1)
	bot.Add(zero, rs)
	// Same x range in both panels; a symmetric residual axis.
	x0, x1 := w.WavelengthNM[0], w.WavelengthNM[n-1]
	if x1 < x0 {
		x0, x1 = x1, x0
	}
	top.X.Min, top.X.Max, bot.X.Min, bot.X.Max = x0, x1, x0, x1
	var rmax float64
	for _, v := range w.Residual {
		if !math.IsNaN(v) && !math.IsInf(v, 0) {
			rmax = math.Max(rmax, math.Abs(v))
		}
	}
	if rmax > 0 {
		bot.Y.Min, bot.Y.Max = -1.1*rmax, 1.1*rmax
	}

	width, height := 6*vg.Inch, 4.6*vg.Inch
	svg, err := drawSVG(func(dc draw.Canvas) {
		cs := plot.Align([][]*plot.Plot{{top}, {bot}}, draw.Tiles{Rows: 2, Cols: 1, PadY: vg.Points(4)}, dc)
		split := dc.Min.Y + (dc.Max.Y-dc.Min.Y)*0.32
		t, b := cs[0][0], cs[1][0]
		t.Min.Y, t.Max.Y = split, dc.Max.Y
		b.Min.Y, b.Max.Y = dc.Min.Y, split-vg.Points(2)
		top.Draw(t)
		bot.Draw(b)
	}, width, height)
	if err != nil {
		return nil, err
	}
	desc := fmt.Sprintf("Spectrum from %s to %s nm with %d pixels: measured data as points and the fitted Voigt model as a line (%s); the lower panel shows data minus model, largest |residual| %s.",
		views.SigFig(x0, 6), views.SigFig(x1, 6), n, yLabel, views.SigFig(rmax, 3))
	return withAccessibility(svg, "Fitted window: "+names, desc), nil
}

// decimate returns (x, y) as plot points, reduced to the minimum and
// maximum of each of buckets buckets when longer than maxPlotPoints, so
// that narrow peaks survive. NaN values are dropped.
func decimate(x, y []float64, buckets int) plotter.XYs {
	n := len(x)
	out := make(plotter.XYs, 0, min(n, 2*buckets))
	if n <= maxPlotPoints {
		for i := range n {
			if !math.IsNaN(y[i]) && !math.IsInf(y[i], 0) {
				out = append(out, plotter.XY{X: x[i], Y: y[i]})
			}
		}
		return out
	}
	for b := range buckets {
		lo, hi := b*n/buckets, (b+1)*n/buckets
		iMin, iMax := -1, -1
		for i := lo; i < hi; i++ {
			if math.IsNaN(y[i]) || math.IsInf(y[i], 0) {
				continue
			}
			if iMin < 0 || y[i] < y[iMin] {
				iMin = i
			}
			if iMax < 0 || y[i] > y[iMax] {
				iMax = i
			}
		}
		if iMin < 0 {
			continue
		}
		first, second := min(iMin, iMax), max(iMin, iMax)
		out = append(out, plotter.XY{X: x[first], Y: y[first]})
		if second != first {
			out = append(out, plotter.XY{X: x[second], Y: y[second]})
		}
	}
	return out
}

// drawSVG renders a drawing of the given size to SVG bytes.
func drawSVG(paint func(draw.Canvas), w, h vg.Length) ([]byte, error) {
	c := vgsvg.NewWith(vgsvg.UseWH(w, h))
	paint(draw.New(c))
	var buf bytes.Buffer
	if _, err := c.WriteTo(&buf); err != nil {
		return nil, err
	}
	return buf.Bytes(), nil
}

// withAccessibility adds role="img", an aria-label, a <title> and a
// <desc> to the root element of an SVG document.
func withAccessibility(svg []byte, title, desc string) []byte {
	s := string(svg)
	i := strings.Index(s, "<svg")
	if i < 0 {
		return svg
	}
	j := strings.IndexByte(s[i:], '>')
	if j < 0 {
		return svg
	}
	j += i
	t, d := html.EscapeString(title), html.EscapeString(desc)
	return []byte(s[:j] + ` role="img" aria-label="` + t + `"><title>` + t + `</title><desc>` + d + `</desc>` + s[j+1:])
}

var svgSize = regexp.MustCompile(`^<svg width="[^"]*" height="[^"]*"`)

// inlineSVG prepares a standalone SVG for inclusion in HTML: no XML
// prologue, width 100 % (the viewBox keeps the aspect ratio).
func inlineSVG(svg []byte) string {
	s := string(svg)
	if i := strings.Index(s, "<svg"); i >= 0 {
		s = s[i:]
	}
	return svgSize.ReplaceAllString(s, `<svg width="100%"`)
}

// Marker colours of the whole-spectrum figure: fitted lines in the fit's
// amber, lines searched for but not fitted in grey.
var (
	figMissed = color.RGBA{R: 0x6b, G: 0x74, B: 0x7e, A: 0xff}
	figGuide  = color.RGBA{R: 0xe3, G: 0xb0, B: 0x8f, A: 0xff} // the fit amber, lightened
)

// SpectrumSVG draws a whole uploaded spectrum (wavelength in nm against
// the counts as uploaded) with the Balmer lines of its analysis marked:
// a solid vertical line and the line's name at the fitted centre of each
// fitted line, a dashed one at the expected centre of each line searched
// for but not fitted (not detected, saturated, fit failed). Long spectra
// are decimated (min/max per bucket) so that narrow peaks survive.
func SpectrumSVG(wl, counts []float64, d *diag.Result, search []spectrum.LineSearch, name string) ([]byte, error) {
	n := len(wl)
	if n < 2 || len(counts) != n {
		return nil, errNoFigure
	}
	pts := decimate(wl, counts, maxPlotPoints/2)
	if len(pts) < 2 {
		return nil, errNoFigure
	}
	x0, x1 := math.Inf(1), math.Inf(-1)
	y0, y1 := math.Inf(1), math.Inf(-1)
	for _, p := range pts {
		x0, x1 = math.Min(x0, p.X), math.Max(x1, p.X)
		y0, y1 = math.Min(y0, p.Y), math.Max(y1, p.Y)
	}
	if !(y1 > y0) {
		y1 = y0 + 1
	}

	p := newFigure()
	p.Title.Text = "Whole spectrum: " + name
	p.X.Label.Text = "wavelength (nm, as in the file)"
	p.Y.Label.Text = "counts (as uploaded)"
	p.Add(plotter.NewGrid())

	type mark struct {
		x      float64
		name   string
		fitted bool
	}
	var marks []mark
	fitted := map[int]bool{}
	if d != nil {
		for _, l := range d.Lines {
			if l.ProfileFit != nil {
				marks = append(marks, mark{l.CenterNM, l.Name, true})
				fitted[l.UpperLevel] = true
			}
		}
	}
	for _, ls := range search {
		if !fitted[ls.UpperLevel] && ls.Status != "fitted" {
			marks = append(marks, mark{ls.ExpectedNM, ls.Name, false})
		}
	}
	sort.Slice(marks, func(i, j int) bool { return marks[i].x < marks[j].x })
	// Labels sit above the data in up to three rows: a label closer than
	// minGap to the previous one in its row moves up a row.
	span := y1 - y0
	minGap := 0.035 * (x1 - x0)
	rowY := func(r int) float64 { return y1 + (0.07+0.075*float64(r))*span }
	top := rowY(2) + 0.06*span
	var lastX [3]float64
	for i := range lastX {
		lastX[i] = math.Inf(-1)
	}
	var fitL, missL plotter.XYLabels
	var fittedNames, missedNames []string
	for _, m := range marks {
		if m.x < x0 || m.x > x1 {
			continue
		}
		row := 0
		for row < 2 && m.x-lastX[row] < minGap {
			row++
		}
		lastX[row] = m.x
		// A faint guide from the axis to the label, under the data.
		v, err := plotter.NewLine(plotter.XYs{{X: m.x, Y: math.Min(y0, 0)}, {X: m.x, Y: rowY(row) - 0.03*span}})
		if err != nil {
			return nil, err
		}
		v.LineStyle.Width = vg.Points(0.8)
		xy := plotter.XY{X: m.x, Y: rowY(row)}
		if m.fitted {
			v.LineStyle.Color = figGuide
			fitL.XYs, fitL.Labels = append(fitL.XYs, xy), append(fitL.Labels, m.name)
			fittedNames = append(fittedNames, m.name+" at "+views.SigFig(m.x, 6)+" nm")
		} else {
			v.LineStyle.Color = figMissed
			v.LineStyle.Dashes = []vg.Length{vg.Points(3), vg.Points(3)}
			missL.XYs, missL.Labels = append(missL.XYs, xy), append(missL.Labels, m.name+"?")
			missedNames = append(missedNames, m.name)
		}
		p.Add(v)
	}
	ln, err := plotter.NewLine(pts)
	if err != nil {
		return nil, err
	}
	ln.LineStyle.Color, ln.LineStyle.Width = figPoint, vg.Points(1)
	p.Add(ln)
	for _, l := range []struct {
		xyl plotter.XYLabels
		c   color.Color
	}{{fitL, figFit}, {missL, figMissed}} {
		if len(l.xyl.XYs) == 0 {
			continue
		}
		lb, err := plotter.NewLabels(l.xyl)
		if err != nil {
			return nil, err
		}
		setLabelStyle(lb, l.c)
		for i := range lb.TextStyle {
			lb.TextStyle[i].XAlign = draw.XCenter
			lb.TextStyle[i].Font.Size = vg.Points(10)
		}
		p.Add(lb)
	}
	p.X.Min, p.X.Max = x0, x1
	p.Y.Min, p.Y.Max = math.Min(y0, 0), top

	svg, err := drawSVG(p.Draw, 10*vg.Inch, 3.4*vg.Inch)
	if err != nil {
		return nil, err
	}
	desc := fmt.Sprintf("Spectrum %s from %s to %s nm with %d pixels, counts as uploaded.", name,
		views.SigFig(x0, 6), views.SigFig(x1, 6), n)
	if len(fittedNames) > 0 {
		desc += " Fitted lines: " + strings.Join(fittedNames, ", ") + "."
	} else {
		desc += " No line was fitted."
	}
	if len(missedNames) > 0 {
		desc += " Searched for but not fitted: " + strings.Join(missedNames, ", ") + "."
	}
	return withAccessibility(svg, "Whole spectrum: "+name, desc), nil
}
