package e2e

import (
	"context"
	"strings"
	"testing"
	"time"

	"github.com/chromedp/chromedp"

	"glowlog/server"
)

// TestBoardAndTrends: with a small demo scenario the home page is the
// chamber board, one tile per chamber with a status word and shape; a
// tile opens that chamber's control chart, whose points link to runs and
// whose error bars have colours the browser accepts; an operator logs a
// chamber event from the board; the board fits a 390 px screen.
func TestBoardAndTrends(t *testing.T) {
	a := startApp(t)
	admin, _ := a.db.UserByName(context.Background(), "admin")
	end := time.Now().UTC()
	if err := server.SeedDemo(context.Background(), a.s, admin.ID, server.DemoOptions{Runs: 40, End: end}); err != nil {
		t.Fatal(err)
	}
	ctx := tab(t)
	checkCSP := cspWatch(t, ctx)
	signIn(t, ctx, a, "olwen")
	do(t, ctx, chromedp.Navigate(a.url+"/"), chromedp.WaitVisible(chromedp.CSS(`[data-testid=board-tile]`)))
	if loc := run(t, ctx, chromedp.Location()); !strings.HasSuffix(loc, "/board") {
		t.Errorf("home page is %s, want the board", loc)
	}
	if n := count(t, ctx, `[data-testid=board-tile]`); n != 4 {
		t.Errorf("%d tiles, want 4 (one per demo chamber)", n)
	}
	states := run(t, ctx, chromedp.Evaluate[[]string](`Array.from(document.querySelectorAll('[data-testid=tile-state]')).map(e => e.textContent.trim() + '|' + (e.querySelector('svg path, svg circle') ? 'shape' : ''))`))
	for _, s := range states {
		if !strings.HasSuffix(s, "|shape") || strings.HasPrefix(s, "|") {
			t.Errorf("tile status %q lacks a word or a shape", s)
		}
	}
	if n := count(t, ctx, `[data-testid=board-tile] svg.spark`); n < 4 {
		t.Errorf("%d sparklines, want at least 4", n)
	}
	shot(t, ctx, "board-1280")

	// Log an event from the board.
	do(t, ctx,
		chromedp.SetValue(chromedp.CSS(`[data-testid=event-chamber]`), run(t, ctx, chromedp.Evaluate[string](`document.querySelector('[data-testid=event-chamber] option:nth-child(2)').value`))),
		chromedp.SetValue(chromedp.CSS(`[data-testid=event-kind]`), "gas_bottle_change"),
		chromedp.SendKeys(chromedp.CSS(`[data-testid=event-note]`), "browser check bottle"),
		chromedp.Click(chromedp.CSS(`[data-testid=event-submit]`)),
		chromedp.WaitVisible(chromedp.CSS(`.flash.info`)),
	)
	if txt := run(t, ctx, chromedp.Text(chromedp.CSS(`main`))); !strings.Contains(txt, "browser check bottle") {
		t.Error("the logged event is not on the board")
	}

	// The first tile opens its control chart.
	do(t, ctx, chromedp.Click(chromedp.CSS(`[data-testid=tile-link]`)), chromedp.WaitVisible(chromedp.CSS(`[data-testid=trend-chart]`)))
	if loc := run(t, ctx, chromedp.Location()); !strings.Contains(loc, "/trends?") || !strings.Contains(loc, "mode=control") || !strings.Contains(loc, "chamber=") {
		t.Errorf("tile link went to %s", loc)
	}
	if n := count(t, ctx, `[data-testid=trend-chart] svg a[href^="/runs/"]`); n == 0 {
		t.Error("no chart point links to its run")
	}
	// Every error bar has a stroke the browser understood (an invalid
	// colour string computes to "none").
	strokes := run(t, ctx, chromedp.Evaluate[[]string](`Array.from(document.querySelectorAll('[data-testid=trend-chart] svg path')).filter(p => (p.getAttribute('style') || '').includes('stroke-opacity')).map(p => getComputedStyle(p).stroke)`))
	if len(strokes) == 0 {
		t.Error("no error bars drawn")
	}
	for _, s := range strokes {
		if !strings.HasPrefix(s, "rgb") {
			t.Errorf("error bar stroke %q: the browser dropped the colour", s)
			break
		}
	}
	// The chart takes the page width.
	if w := run(t, ctx, chromedp.Evaluate[float64](`document.querySelector('[data-testid=trend-chart] svg').getBoundingClientRect().width`)); w < 1000 {
		t.Errorf("chart %g px wide in a 1280 px window", w)
	}
	shot(t, ctx, "trends-from-board")

	// A narrow screen: the tiles fit.
	do(t, ctx, chromedp.EmulateViewport(390, 844), chromedp.Navigate(a.url+"/board"), chromedp.WaitVisible(chromedp.CSS(`[data-testid=board-tile]`)))
	if over := run(t, ctx, chromedp.Evaluate[bool](`Array.from(document.querySelectorAll('[data-testid=board-tile]')).some(e => e.getBoundingClientRect().right > window.innerWidth + 1)`)); over {
		t.Error("a tile is wider than a 390 px screen")
	}
	shot(t, ctx, "board-390")
	checkCSP()
}

// count returns the number of elements matching a CSS selector.
func count(t *testing.T, ctx context.Context, sel string) int {
	t.Helper()
	return run(t, ctx, chromedp.Evaluate[int](`document.querySelectorAll(`+"`"+sel+"`"+`).length`))
}
