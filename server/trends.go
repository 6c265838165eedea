package server

import (
	"encoding/csv"
	"fmt"
	"image/color"
	"math"
	"net/http"
	"net/url"
	"strconv"
	"strings"
	"time"

	"github.com/labstack/echo/v4"
	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"

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
}

func bindTrendForm(c echo.Context) trendForm {
	q := c.QueryParams()
	return trendForm{runListForm: bindRunListForm(c), X: q.Get("x"), Y: q.Get("y"), Mode: q.Get("mode"), Rules: q.Get("rules"),
		Base: q.Get("base"), BaseN: q.Get("base_n"), BaseFrom: q.Get("base_from"), BaseTo: q.Get("base_to"),
		Compare: q.Get("compare"), CmpA: q.Get("cmp_a"), CmpB: q.Get("cmp_b")}
}

func (f trendForm) values() url.Values {
	v := f.runListForm.values()
	v.Del("sort")
	for _, kv := range [][2]string{{"x", f.X}, {"y", f.Y}, {"mode", f.Mode}, {"rules", f.Rules}, {"base", f.Base},
		{"base_n", f.BaseN}, {"base_from", f.BaseFrom}, {"base_to", f.BaseTo}, {"compare", f.Compare},
		{"cmp_a", f.CmpA}, {"cmp_b", f.CmpB}} {
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
	// BaseN is the number of baseline points (control mode).
	BaseN int
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
	switch f.Rules {
	case "", "we":
		p.rules = spc.WesternElectric
	case "nelson":
		p.rules = spc.Nelson
	default:
		return p, badRequest("rules: unknown rule set %q (we or nelson)", f.Rules)
	}
	switch f.Base {
	case "", "first":
		p.baseN = 20
		if strings.TrimSpace(f.BaseN) != "" {
			if p.baseN, err = strconv.Atoi(strings.TrimSpace(f.BaseN)); err != nil || p.baseN < 2 || p.baseN > 100000 {
				return p, badRequest("baseline: the number of runs must be a whole number from 2 to 100000, got %q", f.BaseN)
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
		if p.baseFrom, err = d("from", f.BaseFrom); err != nil {
			return p, err
		}
		if p.baseTo, err = d("to", f.BaseTo); err != nil {
			return p, err
		}
		p.baseTo = p.baseTo.AddDate(0, 0, 1)
		if !p.baseFrom.Before(p.baseTo) {
			return p, badRequest("baseline: the from date (%s) is after the to date (%s)", f.BaseFrom, f.BaseTo)
		}
	default:
		return p, badRequest("baseline: unknown choice %q (first or dates)", f.Base)
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

// groups loads the series of a plan and, in control mode, computes limits
// and rule violations.
func (s *Server) trendGroups(c echo.Context, p *trendPlan) ([]trendGroup, error) {
	ctx := c.Request().Context()
	type sel struct {
		label string
		f     store.RunFilter
	}
	sels := []sel{{"Selected runs", p.filter}}
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
			sels = append(sels, sel{label, f})
		}
	}
	var out []trendGroup
	for _, sl := range sels {
		ts, err := s.DB.TrendSeries(ctx, sl.f, p.x.Key, p.y.Key)
		if err != nil {
			return nil, err
		}
		g := trendGroup{Label: sl.label, Series: ts}
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
				} else if !pt.StartedAt.Before(p.baseFrom) && pt.StartedAt.Before(p.baseTo) {
					base = append(base, pt.Y)
				}
			}
			g.BaseN = len(base)
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

// Series styles: two colours that stay apart for common colour-vision
// deficiencies, and two marker shapes so that print in grey still tells
// them apart.
var trendStyles = []struct {
	Colour color.RGBA
	Hex    string
	Shape  draw.GlyphDrawer
	Marker string
}{
	{color.RGBA{R: 0x1f, G: 0x5f, B: 0x99, A: 0xff}, "#1f5f99", draw.CircleGlyph{}, "circles"},
	{color.RGBA{R: 0xc8, G: 0x62, B: 0x0b, A: 0xff}, "#c8620b", draw.TriangleGlyph{}, "triangles"},
}

var (
	trendLimitColour = color.RGBA{R: 0x9b, G: 0x1c, B: 0x1c, A: 0xff}
	trendCentreColor = color.RGBA{R: 0x3a, G: 0x44, B: 0x4f, A: 0xff}
)

// trendBuckets is the number of x buckets of the min/max decimation (about
// one per horizontal pixel of the drawn chart).
const trendBuckets = 500

// maxErrorBarPoints is the most points a trend series draws error bars for.
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

// trendSVG draws groups on one chart (with limits when there is exactly
// one group with limits).
func trendSVG(groups []trendGroup, styleFrom int, x, y store.TrendField, title, desc string) (string, error) {
	p := newFigure()
	p.X.Label.Text, p.Y.Label.Text = x.AxisLabel(), y.AxisLabel()
	p.Add(plotter.NewGrid())
	xmin, xmax := math.Inf(1), math.Inf(-1)
	for gi, g := range groups {
		st := trendStyles[(gi+styleFrom)%len(trendStyles)]
		pts := g.Series.Points
		ys := make([]float64, len(pts))
		for i, pt := range pts {
			ys[i] = pt.Y
		}
		idx := decimateIdx(ys, trendBuckets)
		xy := make(plotter.XYs, len(idx))
		var eb xyErr
		for k, i := range idx {
			xy[k] = plotter.XY{X: pts[i].X, Y: pts[i].Y}
			if pts[i].YUnc > 0 {
				eb.XYs = append(eb.XYs, xy[k])
				eb.unc = append(eb.unc, pts[i].YUnc)
			}
		}
		if len(pts) > 0 {
			xmin, xmax = math.Min(xmin, pts[0].X), math.Max(xmax, pts[len(pts)-1].X)
		}
		// Error bars on hundreds of points are an unreadable smear and most
		// of the page's weight: they are drawn for sparse series only (the
		// CSV keeps every σ).
		if len(eb.XYs) > 0 && len(idx) <= maxErrorBarPoints {
			bars, err := plotter.NewYErrorBars(eb)
			if err != nil {
				return "", err
			}
			// Half-transparent: NRGBA, because color.RGBA is alpha-premultiplied
			// and a straight colour under A = 0x80 overflows to 7 hex digits,
			// which browsers reject (every bar vanished).
			bars.LineStyle.Color = color.NRGBA{R: st.Colour.R, G: st.Colour.G, B: st.Colour.B, A: 0x80}
			bars.LineStyle.Width = vg.Points(0.6)
			p.Add(bars)
		}
		if len(xy) > 0 {
			sc, err := plotter.NewScatter(xy)
			if err != nil {
				return "", err
			}
			sc.GlyphStyle = draw.GlyphStyle{Color: st.Colour, Radius: vg.Points(2.2), Shape: st.Shape}
			p.Add(sc)
			label := g.Label
			if len(groups) == 1 && len(eb.XYs) > 0 {
				label += " (±1σ)"
			}
			p.Legend.Add(label, sc)
		}
		if g.Limits != nil && len(pts) > 0 {
			l := g.Limits
			hline := func(v float64, dashed bool, c color.Color, name string) error {
				ln, err := plotter.NewLine(plotter.XYs{{X: pts[0].X, Y: v}, {X: pts[len(pts)-1].X, Y: v}})
				if err != nil {
					return err
				}
				ln.LineStyle.Color, ln.LineStyle.Width = c, vg.Points(1)
				if dashed {
					ln.LineStyle.Dashes = []vg.Length{vg.Points(5), vg.Points(3)}
				}
				p.Add(ln)
				if name != "" {
					p.Legend.Add(name, ln)
				}
				return nil
			}
			if err := hline(l.Center, false, trendCentreColor, "centre line"); err != nil {
				return "", err
			}
			if err := hline(l.UCL, true, trendLimitColour, "±3σ limits"); err != nil {
				return "", err
			}
			if err := hline(l.LCL, true, trendLimitColour, ""); err != nil {
				return "", err
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
					return "", err
				}
				sc.GlyphStyle = draw.GlyphStyle{Color: trendLimitColour, Radius: vg.Points(4.5), Shape: draw.RingGlyph{}}
				p.Add(sc)
				p.Legend.Add("rule violation", sc)
			}
		}
	}
	if x.Time && xmax > xmin {
		format := "2006-01-02"
		if xmax-xmin < 3*86400 {
			format = "01-02 15:04"
		}
		p.X.Tick.Marker = plot.TimeTicks{Format: format, Time: func(t float64) time.Time { return time.Unix(int64(t), 0).UTC() }}
	}
	// The axes get room beyond the data, with a band at the top kept free
	// for the legend so it never hides points or limits.
	p.Legend.Top, p.Legend.Left = true, true
	padRange(&p.X.Min, &p.X.Max, 0.02)
	if d := p.Y.Max - p.Y.Min; d > 0 {
		p.Y.Min -= 0.05 * d
		p.Y.Max += 0.22 * d
	}
	svg, err := drawSVG(p.Draw, 8*vg.Inch, 4.2*vg.Inch)
	if err != nil {
		return "", err
	}
	return inlineSVG(withAccessibility(svg, title, desc)), nil
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

	// Charts: one with both series (trend mode), or one per series with
	// its own limits (control mode).
	total := 0
	for _, g := range groups {
		total += len(g.Series.Points)
	}
	props.Total = total
	var ids []int64
	for gi, g := range groups {
		st := trendStyles[gi%len(trendStyles)]
		sum := views.TrendGroupSummary{Label: g.Label, Colour: st.Hex, Marker: st.Marker, N: len(g.Series.Points), Missing: g.Series.Missing}
		if g.Limits != nil {
			l := g.Limits
			baseline := fmt.Sprintf("first %d runs", g.BaseN)
			if !p.baseFrom.IsZero() {
				baseline = fmt.Sprintf("%d runs from %s to %s", g.BaseN, f.BaseFrom, f.BaseTo)
			}
			sum.Limits = &views.ControlLimitsView{Centre: fmtQ(p.y, l.Center), Sigma: fmtQ(p.y, l.Sigma),
				UCL: fmtQ(p.y, l.UCL), LCL: fmtQ(p.y, l.LCL), MRBar: fmtQ(p.y, l.MRBar), Baseline: baseline}
			sum.Flagged = len(g.Viol)
			for _, v := range g.Viol {
				ids = append(ids, g.Series.Points[v.Index].RunID)
			}
		}
		props.Groups = append(props.Groups, sum)
	}
	if total > 0 {
		chartSets := [][]trendGroup{groups}
		if p.control && len(groups) > 1 {
			chartSets = [][]trendGroup{groups[:1], groups[1:]}
		}
		for ci, set := range chartSets {
			if len(set) == 1 && len(set[0].Series.Points) == 0 {
				continue // said in a note
			}
			title := p.y.Label + " against " + strings.ToLower(p.x.Label)
			if p.control {
				title = "Control chart (individuals): " + strings.ToLower(p.y.Label)
			}
			if len(set) == 1 && len(groups) > 1 {
				title += " — " + set[0].Label
			}
			svg, err := trendSVG(set, ci, p.x, p.y, title, trendDesc(set, p))
			if err != nil {
				return err
			}
			props.Charts = append(props.Charts, views.TrendChart{Title: title, SVG: svg})
		}
	}

	// Violations table (at most 100 rows; the CSV lists them all).
	const maxRows = 100
	if len(ids) > maxRows {
		ids = ids[:maxRows]
	}
	titles, err := s.DB.RunTitles(c.Request().Context(), ids)
	if err != nil {
		return err
	}
	for _, g := range groups {
		for _, v := range g.Viol {
			if len(props.Violations) >= maxRows {
				props.MoreViolations++
				continue
			}
			pt := g.Series.Points[v.Index]
			props.Violations = append(props.Violations, views.ViolationRow{RunID: pt.RunID, Title: titles[pt.RunID],
				Started: pt.StartedAt.Format("2006-01-02 15:04"), Group: g.Label, Rule: v.Rule.String(), Source: v.Rule.Source(),
				Value: fmtQ(p.y, pt.Y)})
		}
	}
	return render(c, http.StatusOK, views.Trends(props))
}

// trendDesc describes a chart in words for screen readers.
func trendDesc(groups []trendGroup, p trendPlan) string {
	var parts []string
	for _, g := range groups {
		pts := g.Series.Points
		if len(pts) == 0 {
			parts = append(parts, g.Label+": no runs with both values.")
			continue
		}
		lo, hi := pts[0].Y, pts[0].Y
		for _, pt := range pts {
			lo, hi = math.Min(lo, pt.Y), math.Max(hi, pt.Y)
		}
		d := fmt.Sprintf("%s: %d runs, %s from %s to %s, %s from %s to %s.", g.Label, len(pts), strings.ToLower(p.x.Label),
			fmtQ(p.x, pts[0].X), fmtQ(p.x, pts[len(pts)-1].X), strings.ToLower(p.y.Label), fmtQ(p.y, lo), fmtQ(p.y, hi))
		if g.Limits != nil {
			d += fmt.Sprintf(" Centre line %s, control limits %s to %s; %d rule violations.", fmtQ(p.y, g.Limits.Center),
				fmtQ(p.y, g.Limits.LCL), fmtQ(p.y, g.Limits.UCL), len(g.Viol))
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
	h := c.Response().Header()
	h.Set(echo.HeaderContentType, "text/csv; charset=utf-8")
	h.Set(echo.HeaderContentDisposition, `attachment; filename="glowlog-trend-`+p.y.Key+`.csv"`)
	c.Response().WriteHeader(http.StatusOK)
	w := csv.NewWriter(c.Response())
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
			rec := []string{strconv.FormatInt(pt.RunID, 10), pt.StartedAt.UTC().Format(time.RFC3339), csvText(g.Label), x, num(pt.Y), unc}
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
