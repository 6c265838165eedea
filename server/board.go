package server

import (
	"fmt"
	"math"
	"net/http"
	"net/url"
	"slices"
	"strconv"
	"strings"
	"time"

	"github.com/labstack/echo/v4"

	"glowlog/diag/spc"
	"glowlog/store"
	"glowlog/views"
)

// Board sizes: the sparkline and the control status look at the last
// boardRecent runs with a value; the rules see boardContext runs so that
// a pattern (at most 15 points, Nelson 7) that ends among the shown runs
// is found as on the trends page.
//
// A rule that fires on one of the last boardCurrent runs makes the
// chamber "out of control"; one that fired earlier among the shown runs
// (and not since) makes it "watch": a process engineer looks at the
// chamber now, not at a false alarm of last month.
const (
	boardRecent  = 20
	boardContext = 50
	boardCurrent = 5
)

// boardQuantities are the quantities of a tile, in order.
var boardQuantities = []struct{ Key, Label, Short string }{
	{"texc_k", "T_exc", "T_exc"},
	{"ne_m3", "n_e", "n_e"},
}

// Tile states, worst first (the board's sort order).
const (
	boardOut     = "out"
	boardWatch   = "watch"
	boardUnknown = "unknown"
	boardIn      = "in"
	boardEmpty   = "empty"
)

var boardStateWord = map[string]string{
	boardOut:     "Out of control",
	boardWatch:   "Watch: a rule fired earlier",
	boardUnknown: "No limits yet",
	boardIn:      "In control",
	boardEmpty:   "No runs yet",
}

func boardRank(state string) int {
	return slices.Index([]string{boardOut, boardWatch, boardUnknown, boardIn, boardEmpty}, state)
}

// boardQuantityState is the control status of one quantity of a chamber.
type boardQuantityState struct {
	state   string
	limits  *spc.Limits
	recent  []store.TrendPoint // the shown runs
	flagged map[int]bool       // indices into recent
	latestV *spc.Violation     // the latest violation among the shown runs
	latestP store.TrendPoint
	nViol   int // shown runs with a violation
}

// boardState computes limits from the baseline and applies the rules to
// the recent runs; only violations among the last boardRecent runs count.
func boardState(s store.BoardSeries, rules []spc.Rule) boardQuantityState {
	q := boardQuantityState{state: boardEmpty, flagged: map[int]bool{}}
	pts := s.Recent
	first := max(0, len(pts)-boardRecent)
	q.recent = pts[first:]
	if len(pts) == 0 {
		return q
	}
	base := make([]float64, len(s.Baseline))
	for i, p := range s.Baseline {
		base[i] = p.Y
	}
	l, err := spc.IndividualsLimits(base)
	if err != nil {
		q.state = boardUnknown
		return q
	}
	q.limits = &l
	q.state = boardIn
	ys := make([]float64, len(pts))
	for i, p := range pts {
		ys[i] = p.Y
	}
	for _, v := range spc.Check(ys, l, rules) {
		if v.Index < first {
			continue
		}
		if !q.flagged[v.Index-first] {
			q.nViol++
		}
		q.flagged[v.Index-first] = true
		if v.Index >= len(pts)-boardCurrent {
			q.state = boardOut
		} else if q.state != boardOut {
			q.state = boardWatch
		}
		v := v
		q.latestV, q.latestP = &v, pts[v.Index]
	}
	return q
}

func (s *Server) showBoard(c echo.Context) error {
	ctx := c.Request().Context()
	qp := c.QueryParams()
	n, from, to, err := parseBaseline(qp.Get("base"), qp.Get("base_n"), qp.Get("base_from"), qp.Get("base_to"))
	if err != nil {
		return err
	}
	rules, err := parseRules(qp.Get("rules"))
	if err != nil {
		return err
	}
	keys := make([]string, len(boardQuantities))
	for i, bq := range boardQuantities {
		keys[i] = bq.Key
	}
	chambers, err := s.DB.Board(ctx, keys, boardContext, store.BoardBaseline{N: n, From: from, To: to})
	if err != nil {
		return err
	}
	events, err := s.DB.LatestChamberEvents(ctx)
	if err != nil {
		return err
	}
	recent, err := s.DB.RecentChamberEvents(ctx, 10)
	if err != nil {
		return err
	}
	// The control-chart link carries the board's baseline and rules.
	chart := url.Values{"mode": {"control"}}
	for _, k := range []string{"base", "base_n", "base_from", "base_to", "rules"} {
		if v := strings.TrimSpace(qp.Get(k)); v != "" {
			chart.Set(k, v)
		}
	}
	if chart.Get("base") == "" {
		chart.Set("base", "first")
		chart.Set("base_n", strconv.Itoa(n))
	}
	now := s.DB.Now().UTC()
	props := views.BoardProps{Layout: s.layout(c, "Chamber board", "board"), CanLog: currentUser(c).Role.Can(store.RoleOperator),
		Baseline: fmt.Sprintf("the first %d runs of each chamber with a value", n), RuleSet: "Western Electric 1–4 and the 6-point trend",
		EventAt: now.Format("2006-01-02T15:04")}
	if !from.IsZero() {
		props.Baseline = fmt.Sprintf("the runs from %s to %s", from.Format("2006-01-02"), to.AddDate(0, 0, -1).Format("2006-01-02"))
	}
	if qp.Get("rules") == "nelson" {
		props.RuleSet = "Nelson 1–8"
	}
	for _, k := range store.EventKinds {
		props.Kinds = append(props.Kinds, views.Option{Value: k.Key, Label: k.Label})
	}
	for _, ch := range chambers {
		props.Chambers = append(props.Chambers, views.Option{Value: strconv.FormatInt(ch.ID, 10), Label: ch.Name})
		if ch.Name == qp.Get("event_chamber") {
			props.EventChamber = strconv.FormatInt(ch.ID, 10)
		}
		props.Tiles = append(props.Tiles, boardTile(ch, events, rules, chart, now))
	}
	for _, e := range recent {
		props.Events = append(props.Events, views.BoardEvent{When: e.At.Format("2006-01-02 15:04"), Chamber: e.ChamberName,
			Kind: store.EventKindLabel(e.Kind), Note: e.Note, By: e.LoggedBy})
	}
	slices.SortStableFunc(props.Tiles, func(a, b views.BoardTile) int { return boardRank(a.State) - boardRank(b.State) })
	for _, t := range props.Tiles {
		switch t.State {
		case boardOut:
			props.NOut++
		case boardIn:
			props.NIn++
		case boardWatch:
			props.NWatch++
		default:
			props.NOther++
		}
	}
	return render(c, http.StatusOK, views.Board(props))
}

func boardTile(ch store.BoardChamber, events map[int64]store.ChamberEvent, rules []spc.Rule, chart url.Values, now time.Time) views.BoardTile {
	id := strconv.FormatInt(ch.ID, 10)
	t := views.BoardTile{ChamberID: ch.ID, Name: ch.Name, State: boardEmpty,
		AwaitingHref: "/runs?chamber=" + id + "&status=" + store.StatusSubmitted, Awaiting: strconv.Itoa(ch.Awaiting)}
	if ch.Awaiting > store.MaxAwaitingCount {
		t.Awaiting = "more than " + strconv.Itoa(store.MaxAwaitingCount)
	}
	chartFor := func(key string) string {
		v := url.Values{}
		for k, vs := range chart {
			v[k] = vs
		}
		v.Set("chamber", id)
		v.Set("y", key)
		return "/trends?" + v.Encode()
	}
	if ch.LastRunID != 0 {
		t.LastRun = ch.LastRunAt.Format("2006-01-02 15:04") + " UTC"
		t.LastRunAgo = ago(now.Sub(ch.LastRunAt))
		t.LastRunHref = "/runs/" + strconv.FormatInt(ch.LastRunID, 10)
	}
	firing := ""
	var firingAt time.Time
	worst := boardEmpty
	for _, bq := range boardQuantities {
		field, _ := store.LookupTrendField(bq.Key)
		st := boardState(ch.Series[bq.Key], rules)
		q := views.BoardQuantity{Label: bq.Label, Key: bq.Key, ChartHref: chartFor(bq.Key), State: st.state, Latest: "—"}
		if n := len(st.recent); n > 0 {
			p := st.recent[n-1]
			y, u := p.Y, p.YUnc
			q.Latest = views.ValueUnc(&y, &u) + " " + field.Unit
			q.LatestHref = "/runs/" + strconv.FormatInt(p.RunID, 10)
			q.LatestWhen = p.StartedAt().Format("2006-01-02")
			q.Sparkline = sparkline(st, field, bq.Label)
		}
		switch st.state {
		case boardOut, boardWatch:
			v := st.latestV
			d := fmt.Sprintf("%s: %s at run #%d (%s)", bq.Label, v.Rule.String(), st.latestP.RunID, st.latestP.StartedAt().Format("2006-01-02"))
			if st.nViol > 1 {
				d += fmt.Sprintf("; %d of the last %d runs flagged", st.nViol, len(st.recent))
			}
			if st.state == boardWatch {
				d += fmt.Sprintf("; none of the last %d", boardCurrent)
			}
			t.Details = append(t.Details, d)
			if firing == "" || st.latestP.StartedAt().After(firingAt) {
				firing, firingAt = bq.Key, st.latestP.StartedAt()
			}
		case boardUnknown:
			t.Details = append(t.Details, fmt.Sprintf("%s: fewer than 2 baseline runs with a value, so no control limits", bq.Label))
		}
		if boardRank(st.state) < boardRank(worst) {
			worst = st.state
		}
		t.Quantities = append(t.Quantities, q)
	}
	if ch.LastRunID != 0 && worst == boardEmpty {
		worst = boardUnknown
		t.Details = append(t.Details, "no run of this chamber has results yet")
	}
	t.State, t.StateWord = worst, boardStateWord[worst]
	if firing == "" {
		firing = "ne_m3"
		if len(ch.Series["ne_m3"].Recent) == 0 && len(ch.Series["texc_k"].Recent) > 0 {
			firing = "texc_k"
		}
	}
	t.Href = chartFor(firing)
	if e, ok := events[ch.ID]; ok {
		t.Event = &views.BoardEvent{When: e.At.Format("2006-01-02 15:04"), Kind: store.EventKindLabel(e.Kind), Note: e.Note, By: e.LoggedBy}
	}
	return t
}

// ago says how long ago a duration was, coarsely.
func ago(d time.Duration) string {
	switch {
	case d < 0:
		return "in the future"
	case d < time.Hour:
		return fmt.Sprintf("%d min ago", int(d.Minutes()))
	case d < 48*time.Hour:
		return fmt.Sprintf("%d h ago", int(d.Hours()))
	}
	return fmt.Sprintf("%d days ago", int(d.Hours()/24))
}

// Sparkline geometry (SVG user units; the SVG scales to its box).
const (
	sparkW, sparkH = 220.0, 48.0
	sparkPad       = 5.0
)

// sparkline draws the shown runs of one quantity as a small inline SVG:
// the control band (LCL–UCL) shaded, the centre line dashed, the values
// joined by a line, and the flagged runs as larger red squares (shape as
// well as colour). No script; a <title> describes it.
func sparkline(st boardQuantityState, f store.TrendField, label string) string {
	pts := st.recent
	lo, hi := math.Inf(1), math.Inf(-1)
	for _, p := range pts {
		lo, hi = math.Min(lo, p.Y), math.Max(hi, p.Y)
	}
	if st.limits != nil {
		lo, hi = math.Min(lo, st.limits.LCL), math.Max(hi, st.limits.UCL)
	}
	if !(hi > lo) { // one value: ±10 % around it (±1 around 0)
		d := 0.1 * math.Abs(lo)
		if d == 0 {
			d = 1
		}
		lo, hi = lo-d, hi+d
	}
	x := func(i int) float64 {
		if len(pts) < 2 {
			return sparkW / 2
		}
		return sparkPad + (sparkW-2*sparkPad)*float64(i)/float64(len(pts)-1)
	}
	y := func(v float64) float64 { return sparkH - sparkPad - (sparkH-2*sparkPad)*(v-lo)/(hi-lo) }
	var b strings.Builder
	desc := fmt.Sprintf("%s over the last %d runs with a value: from %s to %s", label, len(pts), fmtQ(f, pts[0].Y), fmtQ(f, pts[len(pts)-1].Y))
	if st.limits != nil {
		desc += fmt.Sprintf("; control limits %s to %s", fmtQ(f, st.limits.LCL), fmtQ(f, st.limits.UCL))
	}
	if len(st.flagged) > 0 {
		desc += fmt.Sprintf("; %d flagged by a run rule", len(st.flagged))
	}
	fmt.Fprintf(&b, `<svg class="spark" viewBox="0 0 %g %g" width="100%%" role="img" aria-label="%s"><title>%s</title>`,
		sparkW, sparkH, htmlAttr(desc), htmlAttr(desc))
	if l := st.limits; l != nil {
		fmt.Fprintf(&b, `<rect x="0" y="%.1f" width="%g" height="%.1f" fill="#e3ece6"/>`, y(l.UCL), sparkW, y(l.LCL)-y(l.UCL))
		fmt.Fprintf(&b, `<line x1="0" x2="%g" y1="%.1f" y2="%.1f" stroke="#5b6673" stroke-width="1" stroke-dasharray="4 3" vector-effect="non-scaling-stroke"/>`,
			sparkW, y(l.Center), y(l.Center))
	}
	b.WriteString(`<polyline fill="none" stroke="#2f4a60" stroke-width="1.5" vector-effect="non-scaling-stroke" points="`)
	for i, p := range pts {
		fmt.Fprintf(&b, "%.1f,%.1f ", x(i), y(p.Y))
	}
	b.WriteString(`"/>`)
	for i, p := range pts {
		if st.flagged[i] {
			fmt.Fprintf(&b, `<rect class="spark-flag" x="%.1f" y="%.1f" width="7" height="7" fill="#b42318"/>`, x(i)-3.5, y(p.Y)-3.5)
		} else {
			fmt.Fprintf(&b, `<circle cx="%.1f" cy="%.1f" r="2" fill="#2f4a60"/>`, x(i), y(p.Y))
		}
	}
	b.WriteString(`</svg>`)
	return b.String()
}

// htmlAttr escapes text for an attribute or element content.
func htmlAttr(s string) string { return htmlAttrReplacer.Replace(s) }

// htmlAttrReplacer is built once (a trend chart escapes a thousand
// tooltips; building a Replacer per call was a tenth of its time).
var htmlAttrReplacer = strings.NewReplacer("&", "&amp;", "<", "&lt;", ">", "&gt;", `"`, "&quot;", "'", "&#39;")
