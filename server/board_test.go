package server

import (
	"context"
	"math"
	"net/http"
	"net/http/httptest"
	"net/url"
	"os"
	"regexp"
	"strconv"
	"strings"
	"testing"
	"time"

	"glowlog/diag/spc"
	"glowlog/store"
)

// boardFixture: chamber "Bell jar B-2" with 25 steady runs (in control),
// "Tube T-7" with 20 steady runs and then a run at 3500 K (rule 1), and
// "Empty E-0" without runs.
func boardFixture(t *testing.T) (*reviewFixture, int64, int64, int64) {
	t.Helper()
	f := newReviewFixture(t)
	ctx := context.Background()
	db := f.s.DB
	chA, _ := db.EnsureChamber(ctx, "Bell jar B-2", "")
	chB, _ := db.EnsureChamber(ctx, "Tube T-7", "")
	if _, err := db.EnsureChamber(ctx, "Empty E-0", ""); err != nil {
		t.Fatal(err)
	}
	t0 := time.Date(2026, 6, 1, 8, 0, 0, 0, time.UTC)
	var outlier int64
	for ci, ch := range []int64{chA, chB} {
		for i := range 25 {
			v := 3000.0 + 20*float64(i%2)
			if ci == 1 && i == 20 {
				v = 3500
			}
			if ci == 1 && i > 20 {
				break
			}
			id, err := db.CreateRun(ctx, f.op.ID, store.RunInput{Title: "glow " + itoa64(int64(i)), StartedAt: t0.Add(time.Duration(i) * time.Hour),
				SourceType: "dc_glow", ChamberID: &ch})
			if err != nil {
				t.Fatal(err)
			}
			if _, err := db.SQL().Exec(`UPDATE runs SET texc_k = ?, texc_unc_k = 15, ne_m3 = ?, ne_unc_m3 = 1e19 WHERE id = ?`,
				v, 2e20+1e18*float64(i%2), id); err != nil {
				t.Fatal(err)
			}
			if ci == 1 && i == 20 {
				outlier = id
				if _, err := db.Review(ctx, id, f.op, store.ActionSubmit, ""); err != nil {
					t.Fatal(err)
				}
			}
		}
	}
	return f, chA, chB, outlier
}

func TestBoard(t *testing.T) {
	f, chA, chB, outlier := boardFixture(t)
	v := f.client(t, f.vie)
	code, body := v.req(http.MethodGet, "/board", nil)
	if code != http.StatusOK {
		t.Fatalf("GET /board: %d %.400s", code, body)
	}
	// Tiles: the drifting chamber first, then in control, then empty.
	iB, iA, iE := strings.Index(body, ">Tube T-7<"), strings.Index(body, ">Bell jar B-2<"), strings.Index(body, ">Empty E-0<")
	if iB < 0 || iA < 0 || iE < 0 || !(iB < iA && iA < iE) {
		t.Fatalf("tile order: T-7 %d, B-2 %d, E-0 %d", iB, iA, iE)
	}
	tiles := strings.Split(body, `data-testid="board-tile"`)[1:]
	if len(tiles) != 3 {
		t.Fatalf("%d tiles, want 3", len(tiles))
	}
	tB, tA, tE := tiles[0], tiles[1], tiles[2]
	for _, want := range []string{`data-state="out"`, "Out of control", "T_exc: 1 point beyond 3σ at run #" + itoa64(outlier) + " (2026-06-02)",
		`class="spark-flag"`, "3500 ± 15 K", `/trends?base=first&amp;base_n=20&amp;chamber=` + itoa64(chB) + `&amp;mode=control&amp;y=texc_k`,
		`<a class="above" href="/runs?chamber=` + itoa64(chB) + `&amp;status=submitted">1 run(s)</a>`, "2026-06-02 04:00 UTC" /* the latest run, 20 h after the first */} {
		if !strings.Contains(tB, want) {
			t.Errorf("T-7 tile lacks %q in %s", want, tB)
		}
	}
	for _, want := range []string{`data-state="in"`, "In control", `<svg class="spark"`, "chamber=" + itoa64(chA)} {
		if !strings.Contains(tA, want) {
			t.Errorf("B-2 tile lacks %q", want)
		}
	}
	if strings.Contains(tA, "spark-flag") || strings.Contains(tA, "beyond") {
		t.Error("the steady chamber shows a violation")
	}
	if !strings.Contains(tE, `data-state="empty"`) || !strings.Contains(tE, "No runs yet") {
		t.Errorf("empty chamber tile: %.300s", tE)
	}
	if !strings.Contains(body, `data-testid="board-summary"`) || !strings.Contains(body, "1 out of control") {
		t.Error("summary line lacks the count out of control")
	}
	// A baseline that includes the outlier's neighbourhood changes nothing
	// for B-2; a bad baseline is a 400 naming the problem.
	if code, body := v.req(http.MethodGet, "/board?base_n=1", nil); code != http.StatusBadRequest || !strings.Contains(body, "baseline") {
		t.Errorf("base_n=1: %d", code)
	}
	// A date-span baseline (as on the trends page) is carried into the
	// chart links; the outlier is still out of control.
	code, body = v.req(http.MethodGet, "/board?base=dates&base_from=2026-06-01&base_to=2026-06-01&rules=nelson", nil)
	if code != http.StatusOK || !strings.Contains(body, "base=dates&amp;base_from=2026-06-01&amp;base_to=2026-06-01") ||
		!strings.Contains(body, "the runs from 2026-06-01 to 2026-06-01") || !strings.Contains(body, "Nelson 1–8") ||
		!strings.Contains(strings.Split(body, `data-testid="board-tile"`)[1], `data-state="out"`) {
		t.Errorf("date-span baseline: %d", code)
	}
	_, body = v.req(http.MethodGet, "/board", nil)
	if code, _ := v.req(http.MethodGet, "/board?rules=zz", nil); code != http.StatusBadRequest {
		t.Errorf("rules=zz: %d", code)
	}
	// Viewers see no event form; the home page is the board.
	if strings.Contains(body, `data-testid="event-form"`) {
		t.Error("viewer sees the event form")
	}
	if code, loc := v.redirect(http.MethodGet, "/"); code != http.StatusSeeOther || loc != "/board" {
		t.Errorf("GET /: %d %q", code, loc)
	}
	if !strings.Contains(body, `href="/board" class="current"`) {
		t.Error("the header nav has no current Board link")
	}
}

func TestChamberEvents(t *testing.T) {
	f, chA, chB, _ := boardFixture(t)
	op := f.client(t, f.op)
	form := func(ch int64, at, kind, note, back string) url.Values {
		return url.Values{"chamber": {itoa64(ch)}, "at": {at}, "kind": {kind}, "note": {note}, "back": {back}}
	}
	if _, body := op.req(http.MethodGet, "/board", nil); !strings.Contains(body, `data-testid="event-form"`) {
		t.Fatal("operator sees no event form on the board")
	}
	code, loc := op.post("/chamber-events", form(chB, "2026-06-01T12:30", "electrode_change", "pin electrode replaced", "/board"))
	if code != http.StatusSeeOther || loc != "/board" {
		t.Fatalf("log event: %d %q", code, loc)
	}
	code, loc = op.post("/chamber-events", form(chA, "2026-05-30T09:00", "gas_bottle_change", "new H2 bottle", "https://evil.example/"))
	if code != http.StatusSeeOther || loc != "/board" {
		t.Errorf("log event with a foreign back address: %d %q", code, loc)
	}
	_, body := op.req(http.MethodGet, "/board", nil)
	tiles := strings.Split(body, `data-testid="board-tile"`)[1:]
	if !strings.Contains(tiles[0], "Electrode change</span>, 2026-06-01 12:30 UTC") || !strings.Contains(tiles[0], "pin electrode replaced") ||
		!strings.Contains(tiles[0], "ada.quill") {
		t.Errorf("T-7 tile lacks its event: %s", tiles[0])
	}
	if !strings.Contains(tiles[1], "Gas bottle change") {
		t.Error("B-2 tile lacks its event")
	}
	// The list of latest events, newest first.
	if i, j := strings.Index(body, `<td class="wrap">pin electrode replaced</td>`), strings.Index(body, `<td class="wrap">new H2 bottle</td>`); i < 0 || j < 0 || i > j ||
		strings.Count(body, `data-testid="board-event"`) != 2 {
		t.Error("the board's event list lacks the events or is not newest first")
	}
	// Bad input: 400 with a message naming the field, nothing stored.
	for _, c := range []struct {
		f    url.Values
		want string
	}{
		{form(chA, "yesterday", "maintenance", "", ""), "time:"},
		{form(chA, "2026-05-30T09:00", "party", "", ""), "kind:"},
		{form(999, "2026-05-30T09:00", "other", "", ""), "chamber 999 does not exist"},
		{form(chA, "2026-05-30T09:00", "other", strings.Repeat("x", 501), ""), "at most 500"},
		{form(chA, "2099-05-30T09:00", "other", "", ""), "in the future"},
	} {
		code, body := op.req(http.MethodPost, "/chamber-events", c.f)
		if code != http.StatusBadRequest || !strings.Contains(body, c.want) {
			t.Errorf("%v: %d, want 400 with %q", c.f, code, c.want)
		}
	}
	evs, err := f.s.DB.ChamberEvents(context.Background(), nil, time.Time{}, time.Time{}, 0)
	if err != nil || len(evs) != 2 {
		t.Fatalf("%d events stored (%v), want 2", len(evs), err)
	}
	// The run page links to the form with the run's chamber chosen.
	_, body = op.req(http.MethodGet, "/runs/1", nil)
	if !strings.Contains(body, `href="/board?event_chamber=Bell+jar+B-2#log-event" data-testid="run-log-event"`) {
		t.Error("the run page has no link to log an event for its chamber")
	}
	_, body = op.req(http.MethodGet, "/board?event_chamber=Bell+jar+B-2", nil)
	if !strings.Contains(body, `<option value="`+itoa64(chA)+`" selected>Bell jar B-2</option>`) {
		t.Error("the event form does not preselect the run's chamber")
	}
	// Viewers cannot log events.
	if code, _ := f.client(t, f.vie).req(http.MethodPost, "/chamber-events", form(chA, "2026-05-30T09:00", "other", "", "")); code != http.StatusForbidden {
		t.Errorf("viewer logs an event: %d", code)
	}
}

// do sends a request like req and returns the status and Location.
func (h *htmlClient) do(method, path string, form url.Values) (int, string) {
	h.t.Helper()
	var body *strings.Reader
	if form != nil {
		form.Set("_csrf", h.csrf)
		body = strings.NewReader(form.Encode())
	} else {
		body = strings.NewReader("")
	}
	r := httptest.NewRequest(method, path, body)
	if form != nil {
		r.Header.Set("Content-Type", "application/x-www-form-urlencoded")
	}
	r.AddCookie(&http.Cookie{Name: sessionCookie, Value: h.session})
	if h.csrf != "" {
		r.AddCookie(&http.Cookie{Name: "_csrf", Value: h.csrf})
	}
	w := httptest.NewRecorder()
	h.s.ServeHTTP(w, r)
	return w.Code, w.Header().Get("Location")
}

func (h *htmlClient) redirect(method, path string) (int, string) { return h.do(method, path, nil) }
func (h *htmlClient) post(path string, form url.Values) (int, string) {
	return h.do(http.MethodPost, path, form)
}

// TestBoardState: a rule that fired on one of the last 5 runs is "out",
// one that fired earlier among the shown runs is "watch", none is "in";
// a baseline with one value gives no limits.
func TestBoardState(t *testing.T) {
	mk := func(vals ...float64) []store.TrendPoint {
		var pts []store.TrendPoint
		for i, v := range vals {
			pts = append(pts, store.TrendPoint{RunID: int64(i + 1), Y: v, Started: int64(1.78e9 + 3600*i)})
		}
		return pts
	}
	var base []float64
	for i := range 20 {
		base = append(base, 3000+20*float64(i%2))
	}
	series := func(tail ...float64) store.BoardSeries {
		pts := mk(append(append([]float64{}, base...), tail...)...)
		return store.BoardSeries{Recent: pts, Baseline: pts[:20]}
	}
	for _, c := range []struct {
		name string
		s    store.BoardSeries
		want string
	}{
		{"steady", series(3000, 3020, 3000), boardIn},
		{"outlier last", series(3000, 3020, 3500), boardOut},
		{"outlier 5th from the end", series(3500, 3000, 3020, 3000, 3020), boardOut},
		{"outlier 6th from the end", series(3500, 3000, 3020, 3000, 3020, 3000), boardWatch},
		{"one baseline value", store.BoardSeries{Recent: mk(3000, 3500), Baseline: mk(3000)}, boardUnknown},
		{"no runs", store.BoardSeries{}, boardEmpty},
	} {
		st := boardState(c.s, spc.WesternElectric)
		if st.state != c.want {
			t.Errorf("%s: state %q, want %q", c.name, st.state, c.want)
		}
		if len(st.recent) > boardRecent {
			t.Errorf("%s: %d runs shown, want at most %d", c.name, len(st.recent), boardRecent)
		}
	}
}

// TestBoardContrast: the status words and event labels of the board and
// trends keep a contrast of at least 4.5:1 (WCAG 2.1, 1.4.3) against the
// tile backgrounds set in the stylesheet.
func TestBoardContrast(t *testing.T) {
	css, err := os.ReadFile("../static/glowlog-2.css")
	if err != nil {
		t.Fatal(err)
	}
	rule := func(sel, prop string) string {
		t.Helper()
		re := regexp.MustCompile(regexp.QuoteMeta(sel) + `\s*\{[^}]*?\b` + prop + `:\s*(#[0-9a-fA-F]{6}|var\(--[a-z0-9-]+\))`)
		m := re.FindStringSubmatch(string(css))
		if m == nil {
			t.Fatalf("no %s in the rule for %s", prop, sel)
		}
		v := m[1]
		if strings.HasPrefix(v, "var(") {
			name := strings.TrimSuffix(strings.TrimPrefix(v, "var("), ")")
			vm := regexp.MustCompile(regexp.QuoteMeta(name) + `:\s*(#[0-9a-fA-F]{6})`).FindStringSubmatch(string(css))
			if vm == nil {
				t.Fatalf("no value for %s", name)
			}
			v = vm[1]
		}
		return v
	}
	for _, c := range []struct{ fg, bg string }{
		{rule(".state-out", "color"), rule(".tile-out", "background")},
		{rule(".state-watch", "color"), rule(".tile-watch", "background")},
		{rule(".state-in", "color"), "#ffffff"},
		{rule(".tile-q .label", "color"), rule(".tile-out", "background")},
		{"#4a3f75", "#ffffff"}, // event labels on the chart
	} {
		if r := contrastRatio(c.fg, c.bg); r < 4.5 {
			t.Errorf("%s on %s: contrast %.2f, want ≥ 4.5", c.fg, c.bg, r)
		}
	}
}

// contrastRatio is the WCAG 2.1 contrast ratio of two #rrggbb colours.
func contrastRatio(a, b string) float64 {
	lum := func(h string) float64 {
		var ch [3]float64
		for i := range 3 {
			v, _ := strconv.ParseUint(h[1+2*i:3+2*i], 16, 8)
			c := float64(v) / 255
			if c <= 0.04045 {
				ch[i] = c / 12.92
			} else {
				ch[i] = math.Pow((c+0.055)/1.055, 2.4)
			}
		}
		return 0.2126*ch[0] + 0.7152*ch[1] + 0.0722*ch[2]
	}
	la, lb := lum(a), lum(b)
	return (max(la, lb) + 0.05) / (min(la, lb) + 0.05)
}

// TestSparklineFlat: a single run or equal values draw inside the box.
func TestSparklineFlat(t *testing.T) {
	f, _ := store.LookupTrendField("ne_m3")
	for _, vals := range [][]float64{{5e20}, {5e20, 5e20, 5e20}, {0, 0}} {
		var pts []store.TrendPoint
		for i, v := range vals {
			pts = append(pts, store.TrendPoint{RunID: int64(i + 1), Y: v})
		}
		svg := sparkline(boardQuantityState{recent: pts, flagged: map[int]bool{}}, f, "n_e")
		for _, m := range regexp.MustCompile(`c[xy]="([-0-9.]+)"`).FindAllStringSubmatch(svg, -1) {
			v, err := strconv.ParseFloat(m[1], 64)
			if err != nil || v < 0 || v > sparkW {
				t.Errorf("%v: coordinate %s outside the sparkline", vals, m[1])
			}
		}
		if strings.Contains(svg, "NaN") {
			t.Errorf("%v: NaN in %s", vals, svg)
		}
	}
}
