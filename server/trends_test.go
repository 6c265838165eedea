package server

import (
	"context"
	"net/http"
	"net/url"
	"regexp"
	"strconv"
	"strings"
	"testing"
	"time"

	"glowlog/store"
)

func TestTrendsPage(t *testing.T) {
	f := newReviewFixture(t)
	ctx := context.Background()
	db := f.s.DB
	chA, _ := db.EnsureChamber(ctx, "Bell jar B-2", "")
	chB, _ := db.EnsureChamber(ctx, "Tube T-7", "")
	t0 := time.Date(2026, 6, 1, 8, 0, 0, 0, time.UTC)
	// Chamber A: 20 baseline runs alternating 3000/3020 K, then one at
	// 3500 K. Baseline: x̄ = 3010, MR̄ = 20, σ̂ = 20/1.128 = 17.73 K,
	// UCL = 3010 + 53.19 = 3063 K → the 3500 K run breaks rule 1.
	var outlier int64
	for i := range 21 {
		v := 3000.0 + 20*float64(i%2)
		if i == 20 {
			v = 3500
		}
		id, err := db.CreateRun(ctx, f.op.ID, store.RunInput{Title: "glow " + itoa64(int64(i)), StartedAt: t0.Add(time.Duration(i) * time.Hour),
			SourceType: "dc_glow", ChamberID: &chA, PressurePa: f64p(100 + float64(i))})
		if err != nil {
			t.Fatal(err)
		}
		if _, err := db.SQL().Exec(`UPDATE runs SET texc_k = ?, texc_unc_k = 15 WHERE id = ?`, v, id); err != nil {
			t.Fatal(err)
		}
		outlier = id
	}
	// Chamber B: one analysed run (the real analysis service).
	analysedRun(t, f.s, f.op, "Hβ in T-7", t0.Add(30*time.Hour), &chB)
	v := f.client(t, f.vie)

	code, body := v.req(http.MethodGet, "/trends", nil)
	if code != http.StatusOK || !strings.Contains(body, `data-testid="trend-chart"`) || !strings.Contains(body, "<title>Excitation temperature against start time</title>") ||
		!strings.Contains(body, `role="img"`) || strings.Contains(body, `data-testid="bulk-form"`) {
		t.Fatalf("GET /trends: %d %.600s", code, body)
	}
	code, body = v.req(http.MethodGet, "/trends?mode=control&chamber="+itoa64(chA)+"&base=first&base_n=20", nil)
	if code != http.StatusOK {
		t.Fatalf("control chart: %d %.400s", code, body)
	}
	for _, want := range []string{`data-testid="limit-centre">3010 K`, `data-testid="limit-ucl">3063 K`, `data-testid="limit-lcl">2957 K`,
		`data-testid="violation-rule">1 point beyond 3σ`, "/runs/" + itoa64(outlier), "3500 K"} {
		if !strings.Contains(body, want) {
			t.Errorf("control chart lacks %q", want)
		}
	}
	if n := strings.Count(body, `data-testid="violation-rule"`); n != 1 {
		t.Errorf("%d violations, want 1", n)
	}

	// Side by side: two aligned charts, one per chamber, each point in
	// its chamber's colour and shape, with a legend outside the charts.
	code, body = v.req(http.MethodGet, "/trends?y=pressure_pa&compare=chamber&cmp_a="+itoa64(chA)+"&cmp_b="+itoa64(chB), nil)
	if code != http.StatusOK || strings.Count(body, `data-testid="trend-chart"`) != 2 || !strings.Contains(body, "Pressure against start time — Tube T-7") ||
		!strings.Contains(body, "Pressure against start time — Bell jar B-2") {
		t.Errorf("side by side: %d %.400s", code, body)
	}
	legend := body[strings.Index(body, `data-testid="trend-legend"`):strings.Index(body, `data-testid="trend-chart"`)]
	for _, want := range []string{`<circle cx="11" cy="7" r="4" fill="#1f5f99"></circle></svg> Bell jar B-2`, `<polygon points="11,2 15.5,11 6.5,11" fill="#c8620b"></polygon></svg> Tube T-7`} {
		if !strings.Contains(legend, want) {
			t.Errorf("legend lacks %q: %s", want, legend)
		}
	}
	if n := strings.Count(body, `<a href="/runs/`); n < 22 {
		t.Errorf("%d run links on the side-by-side page, want every point (22) linked", n)
	}
	code, body = v.req(http.MethodGet, "/trends?mode=control&compare=chamber&cmp_a="+itoa64(chA)+"&cmp_b="+itoa64(chB), nil)
	if code != http.StatusOK || strings.Count(body, `data-testid="trend-chart"`) != 1 || !strings.Contains(body, "Tube T-7: no run has a value") {
		t.Errorf("side by side control: %d", code)
	}

	// CSV: every point, with limits in control mode.
	code, body = v.req(http.MethodGet, "/trends.csv?mode=control&chamber="+itoa64(chA), nil)
	lines := strings.Split(strings.TrimSpace(body), "\n")
	if code != http.StatusOK || len(lines) != 22 || !strings.HasPrefix(lines[0], "run_id,started_at_utc,series,started_at,texc_k,texc_k_unc_1sigma,centre") ||
		!strings.HasSuffix(lines[21], "1 point beyond 3σ") {
		t.Errorf("CSV: %d, %d lines: %s … %s", code, len(lines), lines[0], lines[len(lines)-1])
	}
	if f := strings.Split(lines[1], ","); len(f) < 4 || f[3] != "2026-06-01T08:00:00Z" || f[1] != f[3] {
		t.Errorf("CSV times are not RFC 3339: %s", lines[1])
	}
	code, body = v.req(http.MethodGet, "/trends.csv?y=pressure_pa&x=texc_k&chamber="+itoa64(chA), nil)
	if code != http.StatusOK || !strings.Contains(body, "texc_k,pressure_pa") {
		t.Errorf("CSV condition vs result: %d %.200s", code, body)
	}

	for _, q := range []string{"y=title", "x=nope", "mode=magic", "compare=chamber&cmp_a=1&cmp_b=1", "base=first&base_n=1", "rules=xyz"} {
		if code, _ := v.req(http.MethodGet, "/trends?"+q, nil); code != http.StatusBadRequest {
			t.Errorf("GET /trends?%s: %d, want 400", q, code)
		}
	}
	if _, body := f.client(t, f.rev).req(http.MethodGet, "/trends", nil); !strings.Contains(body, `data-testid="bulk-form"`) {
		t.Errorf("reviewer sees no bulk reanalysis form")
	}
}

func TestDecimateIdx(t *testing.T) {
	ys := make([]float64, 10000)
	for i := range ys {
		ys[i] = float64(i % 7)
	}
	ys[5000] = 99
	idx := decimateIdx(ys, 100)
	if len(idx) > 200 {
		t.Errorf("%d points after decimation, want ≤ 200", len(idx))
	}
	found := false
	for k, i := range idx {
		found = found || i == 5000
		if k > 0 && i <= idx[k-1] {
			t.Fatalf("indices not increasing at %d", k)
		}
	}
	if !found {
		t.Error("the outlier did not survive decimation")
	}
}

// TestTrendSVGColours: every colour the trend chart writes is a valid
// 3- or 6-digit hex colour, and error bars are present, in each
// chamber's colour, for a sparse series with σ (a colour with 7 hex
// digits made browsers drop every bar).
func TestTrendSVGColours(t *testing.T) {
	x, _ := store.LookupTrendField("started_at")
	y, _ := store.LookupTrendField("texc_k")
	var pts []store.TrendPoint
	for i := range 12 {
		pts = append(pts, store.TrendPoint{RunID: int64(i + 1), X: float64(1.78e9 + 3600*i), Y: 3000 + 10*float64(i%3), YUnc: 40,
			ChamberID: int64(1 + i%2), Started: int64(1.78e9 + 3600*i)})
	}
	keys := trendKeys{by: "chamber", name: map[int64]string{1: "A", 2: "B"}, pos: map[int64]int{1: 0, 2: 1}}
	svgs, _, err := drawTrendCharts([]trendChartIn{{groups: []trendGroup{{Label: "all", Series: store.TrendSeries{X: x, Y: y, Points: pts}}},
		x: x, y: y, keys: keys, title: "t", desc: "d"}}, true)
	if err != nil {
		t.Fatal(err)
	}
	svg := svgs[0]
	hexes := regexp.MustCompile(`(?:fill|stroke)(?::|=")#[-0-9A-Fa-f]+\b`).FindAllString(svg, -1)
	if len(hexes) == 0 {
		t.Fatal("no colours in the SVG")
	}
	for _, h := range hexes {
		if n := len(h) - strings.Index(h, "#") - 1; n != 3 && n != 6 || strings.Contains(h, "-") {
			t.Errorf("invalid colour %q in the trend SVG", h)
		}
	}
	// Both chambers' error bars are drawn, half-transparent, each in its
	// chamber's colour (within the SVG writer's rounding of the alpha).
	found := map[string]int{}
	for _, m := range regexp.MustCompile(`stroke:#([0-9A-Fa-f]{6});stroke-opacity:0\.5`).FindAllStringSubmatch(svg, -1) {
		for _, want := range []string{"1f5f99", "c8620b"} {
			if colourNear(m[1], want, 2) {
				found[want]++
			}
		}
	}
	if found["1f5f99"] < 6*3 || found["c8620b"] < 6*3 { // a bar and two caps per point
		t.Errorf("error-bar strokes per chamber colour: %v", found)
	}
	// Every point links to its run, with a tooltip naming run, chamber
	// and value; shapes differ by chamber.
	if n := strings.Count(svg, `<a href="/runs/`); n != 12 {
		t.Errorf("%d linked points, want 12", n)
	}
	if !strings.Contains(svg, `<a href="/runs/2"><polygon class="pt"`) || !strings.Contains(svg, `<a href="/runs/1"><circle class="pt"`) ||
		!strings.Contains(svg, "<title>Run #2 · 2026-05-28 21:26 UTC · B · Excitation temperature 3010 ± 40 K</title>") {
		t.Errorf("points lack links, shapes or tooltips: %.600s", svg[strings.Index(svg, `<g class="points">`):])
	}
	// Responsive: a viewBox and width 100 %, no fixed height.
	if !strings.HasPrefix(svg, `<svg width="100%" viewBox=`) {
		t.Errorf("SVG root: %.80s", svg)
	}
}

// TestTrendChartsAligned: side-by-side charts share the x range and their
// data areas start at the same x, whatever their y tick labels.
func TestTrendChartsAligned(t *testing.T) {
	x, _ := store.LookupTrendField("started_at")
	y, _ := store.LookupTrendField("ne_m3")
	mk := func(t0, scale float64, n int) []store.TrendPoint {
		var pts []store.TrendPoint
		for i := range n {
			pts = append(pts, store.TrendPoint{RunID: int64(i + 1), X: t0 + 86400*float64(i), Y: scale * (1 + 0.1*float64(i%3))})
		}
		return pts
	}
	keys := trendKeys{by: "chamber", name: map[int64]string{}, pos: map[int64]int{}}
	in := func(pts []store.TrendPoint) trendChartIn {
		return trendChartIn{groups: []trendGroup{{Series: store.TrendSeries{X: x, Y: y, Points: pts}}}, x: x, y: y, keys: keys}
	}
	_, built, err := drawTrendCharts([]trendChartIn{in(mk(1.78e9, 1e21, 10)), in(mk(1.78e9+20*86400, 3, 30))}, false)
	if err != nil {
		t.Fatal(err)
	}
	a, b := built[0], built[1]
	if a.p.X.Min != b.p.X.Min || a.p.X.Max != b.p.X.Max {
		t.Errorf("x ranges differ: [%g, %g] and [%g, %g]", a.p.X.Min, a.p.X.Max, b.p.X.Min, b.p.X.Max)
	}
	if a.rec.min.X != b.rec.min.X || a.rec.max.X != b.rec.max.X {
		t.Errorf("data areas not aligned: %v–%v and %v–%v", a.rec.min.X, a.rec.max.X, b.rec.min.X, b.rec.max.X)
	}
	if a.p.Y.Max == b.p.Y.Max {
		t.Error("control-mode charts (shareY false) got one y range")
	}
}

// colourNear reports whether two rrggbb colours differ by at most d per
// channel.
func colourNear(a, b string, d int) bool {
	for i := 0; i < 6; i += 2 {
		x, _ := strconv.ParseUint(a[i:i+2], 16, 8)
		y, _ := strconv.ParseUint(b[i:i+2], 16, 8)
		if diff := int(x) - int(y); diff > d || diff < -d {
			return false
		}
	}
	return true
}

// TestTrendsControlMarks: in control mode the baseline is shaded, chamber
// events of the charted chamber are marked on the time axis with their
// note as a tooltip, and the violations list has one row per run with all
// its rules, the rows beyond 20 collapsed.
func TestTrendsControlMarks(t *testing.T) {
	f := newReviewFixture(t)
	ctx := context.Background()
	db := f.s.DB
	chA, _ := db.EnsureChamber(ctx, "Bell jar B-2", "")
	chB, _ := db.EnsureChamber(ctx, "Tube T-7", "")
	t0 := time.Date(2026, 6, 1, 8, 0, 0, 0, time.UTC)
	for i := range 45 {
		v := 3000.0 + 20*float64(i%2)
		if i >= 20 {
			v = 3500 // every run after the baseline breaks rule 1, and later runs more rules
		}
		id, err := db.CreateRun(ctx, f.op.ID, store.RunInput{Title: "glow " + itoa64(int64(i)), StartedAt: t0.Add(time.Duration(i) * time.Hour),
			SourceType: "dc_glow", ChamberID: &chA})
		if err != nil {
			t.Fatal(err)
		}
		if _, err := db.SQL().Exec(`UPDATE runs SET texc_k = ? WHERE id = ?`, v, id); err != nil {
			t.Fatal(err)
		}
	}
	for _, e := range []struct {
		ch   int64
		at   time.Time
		note string
	}{{chA, t0.Add(19*time.Hour + 30*time.Minute), "new cathode fitted"}, {chB, t0.Add(10 * time.Hour), "other chamber"},
		{chA, t0.AddDate(0, 0, -30), "long before"}} {
		if _, err := db.AddChamberEvent(ctx, f.op.ID, store.ChamberEventInput{ChamberID: e.ch, At: e.at, Kind: store.EventElectrodeChange, Note: e.note}); err != nil {
			t.Fatal(err)
		}
	}
	v := f.client(t, f.vie)
	code, body := v.req(http.MethodGet, "/trends?mode=control&chamber="+itoa64(chA), nil)
	if code != http.StatusOK {
		t.Fatalf("control chart: %d", code)
	}
	if !strings.Contains(strings.ToUpper(body), "FILL:#E6EEE8") || !strings.Contains(body, "baseline runs") {
		t.Error("the baseline is not shaded or not in the legend")
	}
	if n := strings.Count(body, `data-testid="trend-event"`); n != 1 ||
		!strings.Contains(body, "<title>2026-06-02 03:30 UTC · Bell jar B-2 · Electrode change — new cathode fitted (logged by ada.quill)</title>") {
		t.Errorf("%d event marks, want the one of B-2 in range with its tooltip", n)
	}
	if n := strings.Count(body, `data-testid="violation-row"`); n != 25 {
		t.Errorf("%d violation rows, want one per flagged run (25)", n)
	}
	main := body[strings.Index(body, `data-testid="violations"`):strings.Index(body, `data-testid="violations-more"`)]
	if n := strings.Count(main, `data-testid="violation-row"`); n != 20 {
		t.Errorf("%d rows before the collapsed part, want 20", n)
	}
	if !strings.Contains(body, "<summary>5 more runs with violations</summary>") {
		t.Error("no collapsed rest of the violations")
	}
	if !strings.Contains(body, "1 point beyond 3σ; ") {
		t.Error("no row lists several rules")
	}
	// Without a chamber filter every chamber's events in range are marked.
	if _, body := v.req(http.MethodGet, "/trends", nil); strings.Count(body, `data-testid="trend-event"`) != 2 {
		t.Errorf("all chambers: %d event marks, want 2", strings.Count(body, `data-testid="trend-event"`))
	}
	if code, _ := v.req(http.MethodGet, "/trends?colour=rainbow", nil); code != http.StatusBadRequest {
		t.Errorf("colour=rainbow: %d, want 400", code)
	}
	if code, body := v.req(http.MethodGet, "/trends?colour=recipe", nil); code != http.StatusOK || !strings.Contains(body, "no recipe") {
		t.Errorf("colour=recipe: %d, legend lacks “no recipe”", code)
	}
}

// TestTrendsShowChangeAtOnce: the trends page and its CSV (served from
// the trend column store) show a change of a run in the very next
// request: a sign-off through the review pages, an edit, a reopen with a
// newer analysis version.
func TestTrendsShowChangeAtOnce(t *testing.T) {
	f := newReviewFixture(t)
	ctx := context.Background()
	db := f.s.DB
	chA, _ := db.EnsureChamber(ctx, "Bell jar B-2", "")
	chB, _ := db.EnsureChamber(ctx, "Tube T-7", "")
	run := analysedRun(t, f.s, f.op, "Hβ in B-2", time.Date(2026, 6, 1, 8, 0, 0, 0, time.UTC), &chA)
	op, rev, vie := f.client(t, f.op), f.client(t, f.rev), f.client(t, f.vie)
	rows := func(q string) []string {
		t.Helper()
		code, body := vie.req(http.MethodGet, "/trends.csv?"+q, nil)
		if code != http.StatusOK {
			t.Fatalf("GET /trends.csv?%s: %d", q, code)
		}
		return strings.Split(strings.TrimSpace(body), "\n")[1:]
	}
	has := func(what, q string, want bool) {
		t.Helper()
		r := rows("y=ne_m3&" + q)
		if got := len(r) == 1 && strings.HasPrefix(r[0], itoa64(run)+","); got != want { // (n_e: one Hβ line gives no T_exc)
			t.Errorf("%s: /trends.csv?%s rows %q, want the run: %v", what, q, r, want)
		}
	}
	has("analysed", "chamber="+itoa64(chA), true)
	has("not signed off yet", "status=signed_off", false)
	for _, p := range []struct {
		h    *htmlClient
		path string
	}{{op, "submit"}, {rev, "signoff"}} {
		if code, body := p.h.req(http.MethodPost, "/runs/"+itoa64(run)+"/"+p.path, url.Values{}); code != http.StatusSeeOther {
			t.Fatalf("POST %s: %d %.300s", p.path, code, body)
		}
	}
	has("signed off", "status=signed_off", true)
	if _, err := db.SQL().Exec(`UPDATE runs SET chamber_id = ? WHERE id = ?`, chB, run); err != nil {
		t.Fatal(err)
	}
	has("moved away", "chamber="+itoa64(chA), false)
	has("moved in", "chamber="+itoa64(chB), true)
	// Reopen with a changed summary: the page's number follows.
	if _, err := db.Review(ctx, run, f.rev, store.ActionReopen, "wrong lamp file"); err != nil {
		t.Fatal(err)
	}
	if _, err := db.SQL().Exec(`UPDATE runs SET texc_k = 4321.5 WHERE id = ?`, run); err != nil {
		t.Fatal(err)
	}
	if got := rows("y=texc_k&status=returned"); len(got) != 1 || !strings.Contains(got[0], ",4321.5,") {
		t.Errorf("after reopen and a new value: %q", got)
	}
	if n := db.TrendColumnRuns(); n != 1 {
		t.Errorf("the trend column store holds %d runs, want 1 (it answered these)", n)
	}
}
