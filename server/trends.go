package server

import (
	"fmt"
	"image/color"
	"math"
	"net/http"
	"net/url"
	"slices"
	"strconv"
	"strings"
	"time"
	"unicode/utf8"

	"github.com/labstack/echo/v4"
	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgsvg"

	"glowlog/diag/spc"
	"glowlog/store"
	"glowlog/views"
)

// trendForm is the trends page's query string: the run list's filters
// plus what to plot and how.
type trendForm struct {
	runListForm
	X, Y     string // keys of store.TrendFields
	Mode     string // "" (trend) or "control"
	Rules    string // "we" or "nelson"
	Base     string // "first" (first BaseN runs) or "dates"
	BaseN    string
	BaseFrom string
	BaseTo   string
	Compare  string // "", "chamber" or "recipe"
	CmpA     string
	CmpB     string
	ColourBy string // "" or "chamber" (default), "recipe"
}

func bindTrendForm(c echo.Context) trendForm {
	q := c.QueryParams()
	return trendForm{runListForm: bindRunListForm(c), X: q.Get("x"), Y: q.Get("y"), Mode: q.Get("mode"), Rules: q.Get("rules"),
		Base: q.Get("base"), BaseN: q.Get("base_n"), BaseFrom: q.Get("base_from"), BaseTo: q.Get("base_to"),
		Compare: q.Get("compare"), CmpA: q.Get("cmp_a"), CmpB: q.Get("cmp_b"), ColourBy: q.Get("colour")}
}

func (f trendForm) values() url.Values {
	v := f.runListForm.values()
	v.Del("sort")
	for _, kv := range [][2]string{{"x", f.X}, {"y", f.Y}, {"mode", f.Mode}, {"rules", f.Rules}, {"base", f.Base},
		{"base_n", f.BaseN}, {"base_from", f.BaseFrom}, {"base_to", f.BaseTo}, {"compare", f.Compare},
		{"cmp_a", f.CmpA}, {"cmp_b", f.CmpB}, {"colour", f.ColourBy}} {
		if strings.TrimSpace(kv[1]) != "" {
			v.Set(kv[0], kv[1])
		}
	}
	return v
}

// trendGroup is one plotted series: all selected runs, or one side of a
// comparison.
type trendGroup struct {
	Label  string
	Series store.TrendSeries
	Limits *spc.Limits
	Viol   []spc.Violation
	// BaseN is the number of baseline points (control mode), and
	// BaseX0…BaseX1 their x span (HasBase: shaded on the chart).
	BaseN          int
	HasBase        bool
	BaseX0, BaseX1 float64
	// ChamberID is the chamber of a side-by-side series of chambers.
	ChamberID int64
}

// trendPlan is a checked trend request.
type trendPlan struct {
	form     trendForm
	filter   store.RunFilter
	x, y     store.TrendField
	control  bool
	rules    []spc.Rule
	baseN    int
	baseFrom time.Time
	baseTo   time.Time
	compare  string
	cmp      [2]int64
	notes    []string
}

func (s *Server) planTrend(c echo.Context) (trendPlan, error) {
	f := bindTrendForm(c)
	p := trendPlan{form: f}
	var err error
	if p.filter, err = f.filter(); err != nil {
		return p, err
	}
	p.filter.Sort = ""
	if f.Y == "" {
		f.Y = "texc_k"
	}
	if f.X == "" {
		f.X = "started_at"
	}
	var ok bool
	if p.y, ok = store.LookupTrendField(f.Y); !ok || p.y.Time {
		return p, badRequest("y: unknown quantity %q", f.Y)
	}
	if p.x, ok = store.LookupTrendField(f.X); !ok {
		return p, badRequest("x: unknown quantity %q", f.X)
	}
	switch f.Mode {
	case "":
	case "control":
		p.control = true
		if !p.x.Time {
			p.notes = append(p.notes, "Control charts follow the order of the runs in time, so x is the start time.")
			p.x, _ = store.LookupTrendField("started_at")
			f.X = "started_at"
		}
	default:
		return p, badRequest("mode: unknown value %q (trend or control)", f.Mode)
	}
	if p.rules, err = parseRules(f.Rules); err != nil {
		return p, err
	}
	if p.baseN, p.baseFrom, p.baseTo, err = parseBaseline(f.Base, f.BaseN, f.BaseFrom, f.BaseTo); err != nil {
		return p, err
	}
	switch f.ColourBy {
	case "", "chamber", "recipe":
	default:
		return p, badRequest("colour: unknown choice %q (chamber or recipe)", f.ColourBy)
	}
	switch f.Compare {
	case "":
	case "chamber", "recipe":
		p.compare = f.Compare
		for i, v := range []string{f.CmpA, f.CmpB} {
			n, err := strconv.ParseInt(strings.TrimSpace(v), 10, 64)
			if err != nil || n <= 0 {
				return p, badRequest("side by side: choose two %ss (first and second)", f.Compare)
			}
			p.cmp[i] = n
		}
		if p.cmp[0] == p.cmp[1] {
			return p, badRequest("side by side: choose two different %ss", f.Compare)
		}
	default:
		return p, badRequest("side by side: unknown choice %q (chamber or recipe)", f.Compare)
	}
	p.form = f
	return p, nil
}

// parseBaseline checks a control chart's baseline choice, as the trends
// page and the board take it: base "first" (or "") with the number of
// runs baseN (default 20), or "dates" with a from and to date (the to day
// included; to is returned as the next midnight).
func parseBaseline(base, baseN, baseFrom, baseTo string) (n int, from, to time.Time, err error) {
	switch base {
	case "", "first":
		n = 20
		if strings.TrimSpace(baseN) != "" {
			if n, err = strconv.Atoi(strings.TrimSpace(baseN)); err != nil || n < 2 || n > 100000 {
				return 0, from, to, badRequest("baseline: the number of runs must be a whole number from 2 to 100000, got %q", baseN)
			}
		}
	case "dates":
		d := func(name, v string) (time.Time, error) {
			t, err := time.Parse("2006-01-02", strings.TrimSpace(v))
			if err != nil {
				return t, badRequest("baseline %s date: %q is not a date like 2026-03-04", name, v)
			}
			return t, nil
		}
		if from, err = d("from", baseFrom); err != nil {
			return 0, from, to, err
		}
		if to, err = d("to", baseTo); err != nil {
			return 0, from, to, err
		}
		to = to.AddDate(0, 0, 1)
		if !from.Before(to) {
			return 0, from, to, badRequest("baseline: the from date (%s) is after the to date (%s)", baseFrom, baseTo)
		}
	default:
		return 0, from, to, badRequest("baseline: unknown choice %q (first or dates)", base)
	}
	return n, from, to, nil
}

// parseRules picks a run-rule set: "" or "we" (Western Electric), "nelson".
func parseRules(v string) ([]spc.Rule, error) {
	switch v {
	case "", "we":
		return spc.WesternElectric, nil
	case "nelson":
		return spc.Nelson, nil
	}
	return nil, badRequest("rules: unknown rule set %q (we or nelson)", v)
}

// groups loads the series of a plan and, in control mode, computes limits
// and rule violations.
func (s *Server) trendGroups(c echo.Context, p *trendPlan) ([]trendGroup, error) {
	ctx := c.Request().Context()
	type sel struct {
		label   string
		f       store.RunFilter
		chamber int64
	}
	sels := []sel{{"Selected runs", p.filter, 0}}
	if p.compare != "" {
		var names []store.Named
		var err error
		if p.compare == "chamber" {
			names, err = s.DB.Chambers(ctx)
		} else {
			names, err = s.DB.Recipes(ctx)
		}
		if err != nil {
			return nil, err
		}
		sels = nil
		for _, id := range p.cmp {
			f := p.filter
			label := ""
			for _, n := range names {
				if n.ID == id {
					label = n.Name
				}
			}
			if label == "" {
				return nil, badRequest("side by side: %s %d does not exist", p.compare, id)
			}
			if p.compare == "chamber" {
				f.ChamberID = id
			} else {
				f.RecipeID = id
			}
			sels = append(sels, sel{label, f, id})
		}
	}
	var out []trendGroup
	for _, sl := range sels {
		ts, err := s.DB.TrendSeries(ctx, sl.f, p.x.Key, p.y.Key)
		if err != nil {
			return nil, err
		}
		g := trendGroup{Label: sl.label, Series: ts}
		if p.compare == "chamber" {
			g.ChamberID = sl.chamber
		}
		if !p.control && p.compare != "" && len(ts.Points) == 0 {
			p.notes = append(p.notes, fmt.Sprintf("%s: no run has both values, so it has no chart.", sl.label))
		}
		if p.control && len(ts.Points) == 0 {
			p.notes = append(p.notes, fmt.Sprintf("%s: no run has a value, so there are no control limits for it.", sl.label))
		}
		if p.control && len(ts.Points) > 0 {
			ys := make([]float64, len(ts.Points))
			var base []float64
			for i, pt := range ts.Points {
				ys[i] = pt.Y
				if p.baseFrom.IsZero() {
					if i < p.baseN {
						base = append(base, pt.Y)
					}
				} else if !pt.StartedAt().Before(p.baseFrom) && pt.StartedAt().Before(p.baseTo) {
					base = append(base, pt.Y)
				}
			}
			g.BaseN = len(base)
			for i, pt := range ts.Points {
				in := i < p.baseN
				if !p.baseFrom.IsZero() {
					in = !pt.StartedAt().Before(p.baseFrom) && pt.StartedAt().Before(p.baseTo)
				}
				if in {
					if !g.HasBase {
						g.BaseX0 = pt.X
					}
					g.HasBase, g.BaseX1 = true, pt.X
				}
			}
			if l, err := spc.IndividualsLimits(base); err == nil {
				g.Limits = &l
				g.Viol = spc.Check(ys, l, p.rules)
				// Every plotted quantity is physically ≥ 0: a lower limit
				// below zero is shown as 0 (the run rules used the
				// computed limits).
				if l.LCL < 0 {
					l.LCL = 0
					p.notes = append(p.notes, fmt.Sprintf("%s: the lower control limit falls below zero and is shown as 0; the baseline is too scattered (or too short) for a useful lower limit.", sl.label))
				}
			} else {
				p.notes = append(p.notes, fmt.Sprintf("%s: the baseline holds %d run(s) with a value; control limits need at least 2.", sl.label, len(base)))
			}
		}
		out = append(out, g)
	}
	return out, nil
}

// trendPalette colours series (by chamber or recipe): our own set of
// six that stay apart for common colour-vision deficiencies, each with at
// least 3:1 contrast on white (WCAG 1.4.11 for graphics). Red is kept for
// rule violations. Shapes cycle too, so that no series is told by colour
// alone.
var trendPalette = []color.RGBA{
	{R: 0x1f, G: 0x5f, B: 0x99, A: 0xff}, // blue
	{R: 0xc8, G: 0x62, B: 0x0b, A: 0xff}, // orange
	{R: 0x2e, G: 0x7d, B: 0x4f, A: 0xff}, // green
	{R: 0x7b, G: 0x3f, B: 0x98, A: 0xff}, // purple
	{R: 0x0f, G: 0x76, B: 0x80, A: 0xff}, // teal
	{R: 0x80, G: 0x6a, B: 0x12, A: 0xff}, // ochre
}

// trendShapes are the marker shapes, cycled with a different period
// than the colours.
var trendShapes = []string{"circle", "triangle", "square", "diamond"}

// trendNoKeyColour is for runs without a chamber (or recipe).
var trendNoKeyColour = color.RGBA{R: 0x5b, G: 0x66, B: 0x73, A: 0xff}

var (
	trendLimitColour = color.RGBA{R: 0x9b, G: 0x1c, B: 0x1c, A: 0xff}
	trendCentreColor = color.RGBA{R: 0x3a, G: 0x44, B: 0x4f, A: 0xff}
	trendBandColour  = color.RGBA{R: 0xe6, G: 0xee, B: 0xe8, A: 0xff}
)

func hexColour(c color.RGBA) string { return fmt.Sprintf("#%02x%02x%02x", c.R, c.G, c.B) }

// trendStyle is the colour and shape of one colour key (0: no chamber or
// recipe; otherwise the position of the key in the name list).
type trendStyle struct {
	Colour color.RGBA
	Shape  string
}

func styleFor(pos int) trendStyle {
	if pos < 0 {
		return trendStyle{trendNoKeyColour, "square"}
	}
	return trendStyle{trendPalette[pos%len(trendPalette)], trendShapes[pos%len(trendShapes)]}
}

// trendBuckets is the number of x buckets of the min/max decimation (about
// one per horizontal pixel of the drawn chart).
const trendBuckets = 500

// maxErrorBarPoints is the most points a trend chart draws error bars for.
const maxErrorBarPoints = 300

// decimateIdx returns the indices of ys to draw: all when there are at
// most 2·buckets, otherwise the minimum and maximum of each of buckets
// equal-count slices (the points are ordered by x), so that outliers and
// the envelope survive.
func decimateIdx(ys []float64, buckets int) []int {
	n := len(ys)
	if n <= 2*buckets {
		out := make([]int, n)
		for i := range out {
			out[i] = i
		}
		return out
	}
	out := make([]int, 0, 2*buckets)
	for b := range buckets {
		lo, hi := b*n/buckets, (b+1)*n/buckets
		iMin, iMax := lo, lo
		for i := lo; i < hi; i++ {
			if ys[i] < ys[iMin] {
				iMin = i
			}
			if ys[i] > ys[iMax] {
				iMax = i
			}
		}
		out = append(out, min(iMin, iMax))
		if iMin != iMax {
			out = append(out, max(iMin, iMax))
		}
	}
	return out
}

type xyErr struct {
	plotter.XYs
	unc []float64
}

func (e xyErr) YError(i int) (float64, float64) { return e.unc[i], e.unc[i] }

// trendKeys says how points are coloured: by chamber or by recipe, with
// the names and palette positions of the keys.
type trendKeys struct {
	by   string // "chamber" or "recipe"
	name map[int64]string
	pos  map[int64]int
}

func (k trendKeys) key(pt store.TrendPoint) int64 {
	if k.by == "recipe" {
		return pt.RecipeID
	}
	return pt.ChamberID
}

func (k trendKeys) style(key int64) trendStyle {
	if p, ok := k.pos[key]; ok && key != 0 {
		return styleFor(p)
	}
	return styleFor(-1)
}

func (k trendKeys) label(key int64) string {
	if n, ok := k.name[key]; ok && key != 0 {
		return n
	}
	return "no " + k.by
}

// trendChartIn is one chart to draw.
type trendChartIn struct {
	groups      []trendGroup
	x, y        store.TrendField
	keys        trendKeys
	events      []store.ChamberEvent
	title, desc string
	// oneChamber: every event is of the one charted chamber (labels
	// leave its name out).
	oneChamber bool
}

// trendBuilt is a chart's plot before drawing, with what the overlay
// needs.
type trendBuilt struct {
	in   trendChartIn
	p    *plot.Plot
	rec  *overlayRec
	idx  [][]int // decimated indices per group
	keys map[int64]bool
	bars bool // error bars drawn
}

// overlayRec is a plotter that draws nothing and records the data area
// and the transforms, so that the linked points and the event marks can
// be written into the SVG at the exact positions.
type overlayRec struct {
	trX, trY func(float64) vg.Length
	min, max vg.Point
}

func (o *overlayRec) Plot(c draw.Canvas, p *plot.Plot) {
	o.trX, o.trY = p.Transforms(&c)
	o.min, o.max = c.Min, c.Max
}

// rangeOnly is a plotter that draws nothing but gives the axes the range
// of its points.
type rangeOnly plotter.XYs

func (r rangeOnly) Plot(draw.Canvas, *plot.Plot) {}

func (r rangeOnly) DataRange() (xmin, xmax, ymin, ymax float64) {
	return plotter.XYRange(plotter.XYs(r))
}

// bandPlotter shades the x span [x0, x1] over the whole height of the
// data area (the baseline of a control chart).
type bandPlotter struct{ x0, x1 float64 }

func (b bandPlotter) Plot(c draw.Canvas, p *plot.Plot) {
	trX, _ := p.Transforms(&c)
	x0, x1 := max(trX(b.x0), c.Min.X), min(trX(b.x1), c.Max.X)
	if x1-x0 < vg.Points(2) {
		x0, x1 = x0-vg.Points(1), x0+vg.Points(1)
	}
	c.FillPolygon(trendBandColour, []vg.Point{{X: x0, Y: c.Min.Y}, {X: x1, Y: c.Min.Y}, {X: x1, Y: c.Max.Y}, {X: x0, Y: c.Max.Y}})
}

// trendChartW and trendChartH are the drawn size: wide, because the chart
// takes the page width (the SVG scales with its viewBox).
const (
	trendChartW = 11.5 * vg.Inch
	trendChartH = 4.4 * vg.Inch
)

// buildTrend makes the plot of one chart: grid, baseline band, error bars
// per colour key, limits and violation rings. The points themselves are
// drawn by the overlay (links and tooltips).
func buildTrend(in trendChartIn) (*trendBuilt, error) {
	p := newFigure()
	p.X.Label.Text, p.Y.Label.Text = in.x.AxisLabel(), in.y.AxisLabel()
	p.BackgroundColor = color.White
	b := &trendBuilt{in: in, p: p, rec: &overlayRec{}, keys: map[int64]bool{}}
	for _, g := range in.groups {
		if g.HasBase && len(g.Series.Points) > 0 {
			p.Add(bandPlotter{g.BaseX0, g.BaseX1})
		}
	}
	p.Add(plotter.NewGrid())
	total := 0
	for _, g := range in.groups {
		ys := make([]float64, len(g.Series.Points))
		for i, pt := range g.Series.Points {
			ys[i] = pt.Y
		}
		idx := decimateIdx(ys, trendBuckets)
		b.idx = append(b.idx, idx)
		total += len(idx)
	}
	bars := map[int64]*xyErr{}
	var order []int64
	for gi, g := range in.groups {
		pts := g.Series.Points
		var all plotter.XYs
		for _, i := range b.idx[gi] {
			pt := pts[i]
			k := in.keys.key(pt)
			b.keys[k] = true
			all = append(all, plotter.XY{X: pt.X, Y: pt.Y})
			if pt.YUnc > 0 && total <= maxErrorBarPoints {
				e := bars[k]
				if e == nil {
					e = &xyErr{}
					bars[k] = e
					order = append(order, k)
				}
				e.XYs = append(e.XYs, plotter.XY{X: pt.X, Y: pt.Y})
				e.unc = append(e.unc, pt.YUnc)
			}
		}
		if len(all) > 0 {
			// Sets the axis ranges to the points; the overlay draws them.
			p.Add(rangeOnly(all))
		}
	}
	// Error bars on hundreds of points are an unreadable smear and most
	// of the page's weight: they are drawn for sparse charts only (the CSV
	// keeps every σ).
	b.bars = len(order) > 0
	for _, k := range order {
		eb, err := plotter.NewYErrorBars(bars[k])
		if err != nil {
			return nil, err
		}
		c := in.keys.style(k).Colour
		// NRGBA: color.RGBA is alpha-premultiplied, and a straight colour
		// under A < 0xff overflows to 7 hex digits, which browsers reject.
		eb.LineStyle.Color = color.NRGBA{R: c.R, G: c.G, B: c.B, A: 0x80}
		eb.LineStyle.Width = vg.Points(0.8)
		eb.CapWidth = vg.Points(4)
		p.Add(eb)
	}
	for _, g := range in.groups {
		pts := g.Series.Points
		if g.Limits == nil || len(pts) == 0 {
			continue
		}
		l := g.Limits
		lcl := max(l.LCL, 0) // every plotted quantity is ≥ 0 (said in a note)
		for _, h := range []struct {
			v      float64
			dashed bool
			c      color.Color
		}{{l.Center, false, trendCentreColor}, {l.UCL, true, trendLimitColour}, {lcl, true, trendLimitColour}} {
			ln, err := plotter.NewLine(plotter.XYs{{X: pts[0].X, Y: h.v}, {X: pts[len(pts)-1].X, Y: h.v}})
			if err != nil {
				return nil, err
			}
			ln.LineStyle.Color, ln.LineStyle.Width = h.c, vg.Points(1)
			if h.dashed {
				ln.LineStyle.Dashes = []vg.Length{vg.Points(5), vg.Points(3)}
			}
			p.Add(ln)
		}
		var flagged plotter.XYs
		seen := map[int]bool{}
		for _, v := range g.Viol {
			if !seen[v.Index] && len(flagged) < 5000 {
				seen[v.Index] = true
				flagged = append(flagged, plotter.XY{X: pts[v.Index].X, Y: pts[v.Index].Y})
			}
		}
		if len(flagged) > 0 {
			sc, err := plotter.NewScatter(flagged)
			if err != nil {
				return nil, err
			}
			sc.GlyphStyle = draw.GlyphStyle{Color: trendLimitColour, Radius: vg.Points(6), Shape: draw.RingGlyph{}}
			p.Add(sc)
		}
	}
	p.Add(b.rec)
	return b, nil
}

// finishRanges pads the axes; x is the shared range of all charts, y
// gets room at the top for the event labels.
func (b *trendBuilt) finishRanges(xmin, xmax float64) {
	p := b.p
	p.X.Min, p.X.Max = xmin, xmax
	if b.in.x.Time && xmax > xmin {
		format := "2006-01-02"
		if xmax-xmin < 3*86400 {
			format = "01-02 15:04"
		}
		p.X.Tick.Marker = plot.TimeTicks{Format: format, Time: func(t float64) time.Time { return time.Unix(int64(t), 0).UTC() }}
	}
	padRange(&p.X.Min, &p.X.Max, 0.015)
	if d := p.Y.Max - p.Y.Min; d > 0 {
		p.Y.Min -= 0.05 * d
		top := 0.05
		switch {
		case len(b.in.events) == 1:
			top = 0.14
		case len(b.in.events) > 1:
			top = 0.26 // up to three rows of labels
		}
		p.Y.Max += top * d
	}
}

// dataLeft is the left edge of the data area when drawn unshifted.
func (b *trendBuilt) dataLeft() vg.Length {
	c := vgsvg.NewWith(vgsvg.UseWH(trendChartW, trendChartH))
	return b.p.DataCanvas(draw.New(c)).Min.X
}

// svg draws the chart with the data area shifted right by shift (to
// align with other charts) and writes the overlay: chamber events as
// labelled vertical lines with a tooltip, then every drawn point as a
// link to its run with a tooltip.
func (b *trendBuilt) svg(shift vg.Length) (string, error) {
	raw, err := drawSVG(func(c draw.Canvas) { b.p.Draw(draw.Crop(c, shift, 0, 0, 0)) }, trendChartW, trendChartH)
	if err != nil {
		return "", err
	}
	o := b.rec
	if o.trX == nil {
		return inlineSVG(withAccessibility(raw, b.in.title, b.in.desc)), nil
	}
	H := float64(trendChartH.Points())
	X := func(v float64) float64 { return float64(o.trX(v).Points()) }
	Y := func(v float64) float64 { return H - float64(o.trY(v).Points()) }
	top, bottom := H-float64(o.max.Y.Points()), H-float64(o.min.Y.Points())
	left, right := float64(o.min.X.Points()), float64(o.max.X.Points())
	var w strings.Builder
	w.WriteString(`<g class="events">`)
	// Labels go in the first of three rows where they do not overlap an
	// earlier label (width estimated at 0.55 em per character).
	var rowEnd [3]float64
	for i := range rowEnd {
		rowEnd[i] = math.Inf(-1)
	}
	for _, e := range b.in.events {
		if !b.in.x.Time {
			break
		}
		x := X(float64(e.At.Unix()))
		if x < left || x > right {
			continue
		}
		tip := fmt.Sprintf("%s UTC · %s · %s", e.At.Format("2006-01-02 15:04"), e.ChamberName, store.EventKindLabel(e.Kind))
		if e.Note != "" {
			tip += " — " + e.Note
		}
		tip += " (logged by " + e.LoggedBy + ")"
		label := store.EventKindLabel(e.Kind)
		if !b.in.oneChamber {
			label += ", " + e.ChamberName
		}
		width := 5.5 * float64(utf8.RuneCountInString(label))
		x0, x1, anchor := x+3, x+3+width, "start"
		if x1 > right {
			x0, x1, anchor = x-3-width, x-3, "end"
		}
		row := 0
		for row < len(rowEnd)-1 && rowEnd[row] > x0-4 {
			row++
		}
		rowEnd[row] = max(rowEnd[row], x1)
		tx := x0
		if anchor == "end" {
			tx = x1
		}
		fmt.Fprintf(&w, `<g class="event" data-testid="trend-event"><title>%s</title><line x1="%.1f" x2="%.1f" y1="%.1f" y2="%.1f" stroke="#4a3f75" stroke-width="1.2" stroke-dasharray="2 2"/>`+
			`<text x="%.1f" y="%.1f" font-size="10" font-family="Liberation Sans, Arial, sans-serif" fill="#4a3f75" text-anchor="%s">%s</text></g>`,
			htmlAttr(tip), x, x, top, bottom, tx, top+11+11*float64(row), anchor, htmlAttr(label))
	}
	w.WriteString(`</g><g class="points">`)
	for gi, g := range b.in.groups {
		for _, i := range b.idx[gi] {
			pt := g.Series.Points[i]
			k := b.in.keys.key(pt)
			st := b.in.keys.style(k)
			cx, cy := X(pt.X), Y(pt.Y)
			val := views.ValueUnc(&pt.Y, &pt.YUnc)
			if b.in.y.Unit != "" {
				val += " " + b.in.y.Unit
			}
			tip := fmt.Sprintf("Run #%d · %s UTC · %s · %s %s", pt.RunID, pt.StartedAt().Format("2006-01-02 15:04"), b.in.keys.label(k),
				b.in.y.Label, val)
			if !b.in.x.Time {
				tip += " at " + b.in.x.Label + " " + fmtQ(b.in.x, pt.X)
			}
			fmt.Fprintf(&w, `<a href="/runs/%d">%s<title>%s</title></%s></a>`, pt.RunID, shapeOpen(st, cx, cy), htmlAttr(tip), shapeTag(st.Shape))
		}
	}
	w.WriteString(`</g></svg>`)
	out := string(raw)
	end := strings.LastIndex(out, "</svg>")
	if end < 0 {
		return "", fmt.Errorf("trend chart: no </svg> in the drawing")
	}
	out = out[:end] + w.String()
	return inlineSVG(withAccessibility([]byte(out), b.in.title, b.in.desc)), nil
}

func shapeTag(shape string) string {
	switch shape {
	case "circle":
		return "circle"
	case "square":
		return "rect"
	}
	return "polygon"
}

// shapeOpen writes the opening tag of a marker centred at (x, y).
func shapeOpen(st trendStyle, x, y float64) string {
	fill := hexColour(st.Colour)
	switch st.Shape {
	case "circle":
		return fmt.Sprintf(`<circle class="pt" cx="%.1f" cy="%.1f" r="3.4" fill="%s">`, x, y, fill)
	case "square":
		return fmt.Sprintf(`<rect class="pt" x="%.1f" y="%.1f" width="6.2" height="6.2" fill="%s">`, x-3.1, y-3.1, fill)
	case "triangle":
		return fmt.Sprintf(`<polygon class="pt" points="%.1f,%.1f %.1f,%.1f %.1f,%.1f" fill="%s">`, x, y-4.2, x+3.9, y+2.6, x-3.9, y+2.6, fill)
	}
	return fmt.Sprintf(`<polygon class="pt" points="%.1f,%.1f %.1f,%.1f %.1f,%.1f %.1f,%.1f" fill="%s">`, x, y-4.4, x+4.4, y, x, y+4.4, x-4.4, y, fill)
}

// drawTrendCharts builds the charts, gives them one x range and aligned
// data areas, and draws them. In trend mode side-by-side charts share
// the y range too.
func drawTrendCharts(ins []trendChartIn, shareY bool) ([]string, []*trendBuilt, error) {
	var built []*trendBuilt
	xmin, xmax := math.Inf(1), math.Inf(-1)
	ymin, ymax := math.Inf(1), math.Inf(-1)
	for _, in := range ins {
		b, err := buildTrend(in)
		if err != nil {
			return nil, nil, err
		}
		if b.in.desc == "" {
			b.in.desc = trendDesc(in.groups, in.x, in.y, b.idx)
		}
		built = append(built, b)
		xmin, xmax = math.Min(xmin, b.p.X.Min), math.Max(xmax, b.p.X.Max)
		ymin, ymax = math.Min(ymin, b.p.Y.Min), math.Max(ymax, b.p.Y.Max)
	}
	var lefts []vg.Length
	maxLeft := vg.Length(0)
	for _, b := range built {
		if shareY && len(built) > 1 {
			b.p.Y.Min, b.p.Y.Max = ymin, ymax
		}
		b.finishRanges(xmin, xmax)
		l := b.dataLeft()
		lefts = append(lefts, l)
		maxLeft = max(maxLeft, l)
	}
	var out []string
	for i, b := range built {
		svg, err := b.svg(maxLeft - lefts[i])
		if err != nil {
			return nil, nil, err
		}
		out = append(out, svg)
	}
	return out, built, nil
}

// fmtQ formats a value of field f for tables and descriptions.
func fmtQ(f store.TrendField, v float64) string {
	if f.Time {
		return time.Unix(int64(v), 0).UTC().Format("2006-01-02 15:04")
	}
	if f.Key == "n_warnings" {
		return strconv.Itoa(int(v))
	}
	s := views.SigFig(v, 4)
	if f.Unit != "" {
		s += " " + f.Unit
	}
	return s
}

func (s *Server) showTrends(c echo.Context) error {
	p, err := s.planTrend(c)
	if err != nil {
		return err
	}
	groups, err := s.trendGroups(c, &p)
	if err != nil {
		return err
	}
	f := p.form
	props := views.TrendsProps{Layout: s.layout(c, "Trends", "trends"),
		Filter: views.RunListFilter{Query: f.Query, Chamber: f.Chamber, Recipe: f.Recipe, Source: f.Source, Gas: f.Gas,
			From: f.From, To: f.To, Status: f.Status, Tag: f.Tag, Operator: f.Operator},
		X: p.x.Key, Y: p.y.Key, Mode: f.Mode, Rules: f.Rules, Base: f.Base, BaseN: f.BaseN, BaseFrom: f.BaseFrom, BaseTo: f.BaseTo,
		Compare: f.Compare, CmpA: f.CmpA, CmpB: f.CmpB, Notes: p.notes,
		CSVHref: hrefWith("/trends.csv", f.values()), CanBulk: currentUser(c).Role.Can(store.RoleReviewer)}
	if props.BaseN == "" {
		props.BaseN = "20"
	}
	var lp views.RunListProps
	if err := s.runListChoices(c, &lp); err != nil {
		return err
	}
	props.Perturbers = perturberOptions()
	props.Chambers, props.Recipes, props.Operators, props.Sources, props.Statuses, props.Tags =
		lp.Chambers, lp.Recipes, lp.Operators, lp.Sources, lp.Statuses, lp.Tags
	for _, tf := range store.TrendFields {
		o := views.Option{Value: tf.Key, Label: tf.AxisLabel()}
		group := "Conditions"
		if tf.Result {
			group = "Results"
		}
		if !tf.Time {
			props.YFields = append(props.YFields, views.OptionInGroup{Option: o, Group: group})
		}
		props.XFields = append(props.XFields, views.OptionInGroup{Option: o, Group: group})
	}
	fv := f.runListForm.values()
	fv.Del("sort")
	for _, k := range []string{"q", "chamber", "recipe", "source", "gas", "from", "to", "status", "tag", "operator"} {
		if v := fv.Get(k); v != "" {
			props.FilterHidden = append(props.FilterHidden, views.HiddenField{Name: k, Value: v})
		}
	}

	// Charts: one for the selection, or two aligned ones side by side
	// (the same x range; in trend mode the same y range too).
	total := 0
	for _, g := range groups {
		total += len(g.Series.Points)
	}
	props.Total = total
	type flaggedRun struct {
		group, index int
		rules        []spc.Rule
	}
	var flagged []flaggedRun
	for gi, g := range groups {
		sum := views.TrendGroupSummary{Label: g.Label, N: len(g.Series.Points), Missing: g.Series.Missing}
		if g.Limits != nil {
			l := g.Limits
			baseline := fmt.Sprintf("first %d runs", g.BaseN)
			if !p.baseFrom.IsZero() {
				baseline = fmt.Sprintf("%d runs from %s to %s", g.BaseN, f.BaseFrom, f.BaseTo)
			}
			sum.Limits = &views.ControlLimitsView{Centre: fmtQ(p.y, l.Center), Sigma: fmtQ(p.y, l.Sigma),
				UCL: fmtQ(p.y, l.UCL), LCL: fmtQ(p.y, l.LCL), MRBar: fmtQ(p.y, l.MRBar), Baseline: baseline}
			// One entry per run with all the rules it breaks (Check
			// orders violations by index).
			for _, v := range g.Viol {
				if n := len(flagged); n > 0 && flagged[n-1].group == gi && flagged[n-1].index == v.Index {
					flagged[n-1].rules = append(flagged[n-1].rules, v.Rule)
					continue
				}
				flagged = append(flagged, flaggedRun{gi, v.Index, []spc.Rule{v.Rule}})
				sum.Flagged++
			}
		}
		props.Groups = append(props.Groups, sum)
	}
	if total > 0 {
		keys, err := s.trendColourKeys(c, p.form.ColourBy)
		if err != nil {
			return err
		}
		events, err := s.trendEvents(c, p, groups)
		if err != nil {
			return err
		}
		chartSets := [][]trendGroup{groups}
		if len(groups) > 1 {
			chartSets = [][]trendGroup{groups[:1], groups[1:]}
		}
		var ins []trendChartIn
		for _, set := range chartSets {
			if len(set[0].Series.Points) == 0 {
				continue // said in a note
			}
			title := p.y.Label + " against " + strings.ToLower(p.x.Label)
			if p.control {
				title = "Control chart (individuals): " + strings.ToLower(p.y.Label)
			}
			if len(groups) > 1 {
				title += " — " + set[0].Label
			}
			ev := events
			if p.compare == "chamber" {
				ev = nil
				for _, e := range events {
					if e.ChamberID == set[0].ChamberID {
						ev = append(ev, e)
					}
				}
			}
			ins = append(ins, trendChartIn{groups: set, x: p.x, y: p.y, keys: keys, events: ev, title: title,
				oneChamber: p.compare == "chamber" || p.filter.ChamberID != 0})
		}
		svgs, built, err := drawTrendCharts(ins, !p.control)
		if err != nil {
			return err
		}
		used := map[int64]bool{}
		nEvents, band, bars := 0, false, false
		for i, svg := range svgs {
			props.Charts = append(props.Charts, views.TrendChart{Title: ins[i].title, SVG: svg})
			for k := range built[i].keys {
				used[k] = true
			}
			nEvents += strings.Count(svg, `data-testid="trend-event"`)
			for _, g := range ins[i].groups {
				band = band || g.HasBase
			}
			bars = bars || built[i].bars
		}
		props.Legend = trendLegend(keys, used, p.control, band, len(flagged) > 0, nEvents > 0, bars)
		props.ColourBy = keys.by
	}

	// Violations: one row per run with all its rules; the first 20 shown,
	// the rest (up to 200) collapsed; the CSV lists them all.
	const maxRows = 200
	var ids []int64
	for _, fr := range flagged[:min(len(flagged), maxRows)] {
		ids = append(ids, groups[fr.group].Series.Points[fr.index].RunID)
	}
	titles, err := s.DB.RunTitles(c.Request().Context(), ids)
	if err != nil {
		return err
	}
	for i, fr := range flagged {
		if i >= maxRows {
			props.MoreViolations = len(flagged) - maxRows
			break
		}
		g := groups[fr.group]
		pt := g.Series.Points[fr.index]
		row := views.ViolationRow{RunID: pt.RunID, Title: titles[pt.RunID], Started: pt.StartedAt().Format("2006-01-02 15:04"),
			Group: g.Label, Value: fmtQ(p.y, pt.Y)}
		var names, sources []string
		for _, r := range fr.rules {
			names = append(names, r.String())
			sources = append(sources, r.Source())
		}
		row.Rule, row.Source = strings.Join(names, "; "), strings.Join(slices.Compact(sources), "; ")
		props.Violations = append(props.Violations, row)
	}
	return render(c, http.StatusOK, views.Trends(props))
}

// trendColourKeys loads the names of the chambers (or recipes) that colour
// the points, each with a fixed palette position (its place in the name
// list), so that a chamber keeps its colour from chart to chart.
func (s *Server) trendColourKeys(c echo.Context, by string) (trendKeys, error) {
	k := trendKeys{by: by, name: map[int64]string{}, pos: map[int64]int{}}
	var names []store.Named
	var err error
	if by == "recipe" {
		names, err = s.DB.Recipes(c.Request().Context())
	} else {
		k.by = "chamber"
		names, err = s.DB.Chambers(c.Request().Context())
	}
	if err != nil {
		return k, err
	}
	for i, n := range names {
		k.name[n.ID], k.pos[n.ID] = n.Name, i
	}
	return k, nil
}

// trendEvents loads the chamber events within the charts' time range: of
// the filtered or compared chambers, or of all chambers.
func (s *Server) trendEvents(c echo.Context, p trendPlan, groups []trendGroup) ([]store.ChamberEvent, error) {
	if !p.x.Time {
		return nil, nil
	}
	lo, hi := math.Inf(1), math.Inf(-1)
	for _, g := range groups {
		if n := len(g.Series.Points); n > 0 {
			lo, hi = math.Min(lo, g.Series.Points[0].X), math.Max(hi, g.Series.Points[n-1].X)
		}
	}
	if lo > hi {
		return nil, nil
	}
	var ids []int64
	switch {
	case p.compare == "chamber":
		ids = p.cmp[:]
	case p.filter.ChamberID != 0:
		ids = []int64{p.filter.ChamberID}
	}
	// A little beyond the runs: an event just before the first run of the
	// range still explains it (the axis is padded by 1.5 %).
	pad := 0.015 * (hi - lo)
	return s.DB.ChamberEvents(c.Request().Context(), ids, time.Unix(int64(lo-pad), 0), time.Unix(int64(hi+pad)+1, 0), 200)
}

// trendLegend lists what the charts show, drawn outside the plot area.
func trendLegend(k trendKeys, used map[int64]bool, control, band, violations, events, bars bool) []views.LegendItem {
	var keys []int64
	for id := range used {
		keys = append(keys, id)
	}
	slices.SortFunc(keys, func(a, b int64) int {
		pa, oka := k.pos[a]
		pb, okb := k.pos[b]
		if !oka || a == 0 {
			pa = math.MaxInt
		}
		if !okb || b == 0 {
			pb = math.MaxInt
		}
		return pa - pb
	})
	var out []views.LegendItem
	for _, id := range keys {
		st := k.style(id)
		out = append(out, views.LegendItem{Label: k.label(id), Colour: hexColour(st.Colour), Shape: st.Shape})
	}
	if bars {
		out = append(out, views.LegendItem{Label: "error bar ±1σ total (statistical ⊕ systematic)", Colour: "#5b6673", Shape: "bar"})
	}
	if control {
		out = append(out, views.LegendItem{Label: "centre line", Colour: hexColour(trendCentreColor), Shape: "line"},
			views.LegendItem{Label: "control limits ±3σ", Colour: hexColour(trendLimitColour), Shape: "dashed"})
	}
	if band {
		out = append(out, views.LegendItem{Label: "baseline runs", Colour: hexColour(trendBandColour), Shape: "band"})
	}
	if violations {
		out = append(out, views.LegendItem{Label: "rule violation", Colour: hexColour(trendLimitColour), Shape: "ring"})
	}
	if events {
		out = append(out, views.LegendItem{Label: "chamber event (hover for the note)", Colour: "#4a3f75", Shape: "event"})
	}
	return out
}

// trendDesc describes a chart in words for screen readers. idx are the
// drawn (decimated) indices of each group's points: they hold every
// bucket's minimum and maximum, so the y range is found from them without
// another pass over a million points.
func trendDesc(groups []trendGroup, x, y store.TrendField, idx [][]int) string {
	var parts []string
	for gi, g := range groups {
		pts := g.Series.Points
		if len(pts) == 0 {
			parts = append(parts, g.Label+": no runs with both values.")
			continue
		}
		lo, hi := pts[0].Y, pts[0].Y
		for _, i := range idx[gi] { // no NaN in a series: plain comparisons
			if pts[i].Y < lo {
				lo = pts[i].Y
			}
			if pts[i].Y > hi {
				hi = pts[i].Y
			}
		}
		d := fmt.Sprintf("%s: %d runs, %s from %s to %s, %s from %s to %s.", g.Label, len(pts), strings.ToLower(x.Label),
			fmtQ(x, pts[0].X), fmtQ(x, pts[len(pts)-1].X), strings.ToLower(y.Label), fmtQ(y, lo), fmtQ(y, hi))
		if g.Limits != nil {
			d += fmt.Sprintf(" Centre line %s, control limits %s to %s; %d rule violations.", fmtQ(y, g.Limits.Center),
				fmtQ(y, g.Limits.LCL), fmtQ(y, g.Limits.UCL), len(g.Viol))
		}
		parts = append(parts, d)
	}
	return strings.Join(parts, " ")
}

// exportTrends writes the plotted series as CSV (every point, not the
// decimated drawing), with limits and rule violations in control mode.
func (s *Server) exportTrends(c echo.Context) error {
	p, err := s.planTrend(c)
	if err != nil {
		return err
	}
	groups, err := s.trendGroups(c, &p)
	if err != nil {
		return err
	}
	w := csvAttachment(c, "glowlog-trend-"+p.y.Key+".csv")
	head := []string{"run_id", "started_at_utc", "series", p.x.Key, p.y.Key, p.y.Key + "_unc_1sigma"}
	if p.control {
		head = append(head, "centre", "lcl", "ucl", "violations")
	}
	if err := w.Write(head); err != nil {
		return err
	}
	num := func(v float64) string { return strconv.FormatFloat(v, 'g', -1, 64) }
	for _, g := range groups {
		byIdx := map[int][]string{}
		for _, v := range g.Viol {
			byIdx[v.Index] = append(byIdx[v.Index], v.Rule.String())
		}
		for i, pt := range g.Series.Points {
			unc := ""
			if pt.YUnc > 0 {
				unc = num(pt.YUnc)
			}
			x := num(pt.X)
			if p.x.Time { // Unix seconds on the axis, RFC 3339 in files
				x = time.Unix(int64(pt.X), 0).UTC().Format(time.RFC3339)
			}
			rec := []string{strconv.FormatInt(pt.RunID, 10), pt.StartedAt().UTC().Format(time.RFC3339), csvText(g.Label), x, num(pt.Y), unc}
			if p.control {
				if g.Limits != nil {
					rec = append(rec, num(g.Limits.Center), num(g.Limits.LCL), num(g.Limits.UCL), strings.Join(byIdx[i], "; "))
				} else {
					rec = append(rec, "", "", "", "")
				}
			}
			if err := w.Write(rec); err != nil {
				return err
			}
		}
	}
	w.Flush()
	return w.Error()
}

// padRange widens [lo, hi] by frac of its span on both sides.
func padRange(lo, hi *float64, frac float64) {
	if d := *hi - *lo; d > 0 {
		*lo -= frac * d
		*hi += frac * d
	}
}
