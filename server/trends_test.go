package server

import (
	"context"
	"net/http"
	"regexp"
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

	// Side by side: two series, two colours, two markers, one chart.
	code, body = v.req(http.MethodGet, "/trends?compare=chamber&cmp_a="+itoa64(chA)+"&cmp_b="+itoa64(chB), nil)
	if code != http.StatusOK || strings.Count(body, `data-testid="trend-chart"`) != 1 || !strings.Contains(body, "Tube T-7") ||
		!strings.Contains(body, "(triangles)") {
		t.Errorf("side by side: %d %.400s", code, body)
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
// 3- or 6-digit hex colour, and error bars are present for a sparse series
// with σ (a colour with 7 hex digits made browsers drop every bar).
func TestTrendSVGColours(t *testing.T) {
	x, _ := store.LookupTrendField("started_at")
	y, _ := store.LookupTrendField("texc_k")
	var pts []store.TrendPoint
	for i := range 12 {
		pts = append(pts, store.TrendPoint{RunID: int64(i + 1), X: float64(1.78e9 + 3600*i), Y: 3000 + 10*float64(i%3), YUnc: 40})
	}
	groups := []trendGroup{{Label: "A", Series: store.TrendSeries{X: x, Y: y, Points: pts}},
		{Label: "B", Series: store.TrendSeries{X: x, Y: y, Points: pts}}}
	svg, err := trendSVG(groups, 0, x, y, "t", "d")
	if err != nil {
		t.Fatal(err)
	}
	hexes := regexp.MustCompile(`#[0-9A-Fa-f]+\b`).FindAllString(svg, -1)
	if len(hexes) == 0 {
		t.Fatal("no colours in the SVG")
	}
	for _, h := range hexes {
		if n := len(h) - 1; n != 3 && n != 6 {
			t.Errorf("invalid colour %q in the trend SVG", h)
		}
	}
	// Both series' bar colours (half-transparent) are in the SVG.
	for _, c := range []string{"#1F5F99", "#C8620B"} {
		if !strings.Contains(strings.ToUpper(svg), c) {
			t.Errorf("colour %s missing from the SVG", c)
		}
	}
}
