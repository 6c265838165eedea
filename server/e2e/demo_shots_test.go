package e2e

import (
	"context"
	"fmt"
	"os"
	"testing"

	"github.com/chromedp/chromedp"

	"glowlog/server"
)

// TestDemoScreenshots seeds the demo scenario and screenshots the main
// pages for people to look at (not an assertion test; it only runs when
// GLOWLOG_DEMO_SHOTS is set):
//
//	GLOWLOG_DEMO_SHOTS=1 E2E_ARTIFACTS=/tmp/shots go test ./server/e2e/ -run DemoScreenshots
func TestDemoScreenshots(t *testing.T) {
	if os.Getenv("GLOWLOG_DEMO_SHOTS") == "" {
		t.Skip("set GLOWLOG_DEMO_SHOTS=1 to take demo screenshots")
	}
	a := startApp(t)
	admin, _ := a.db.UserByName(context.Background(), "admin")
	if err := server.SeedDemo(context.Background(), a.s, admin.ID, server.DemoOptions{Runs: 300}); err != nil {
		t.Fatal(err)
	}
	ctx := tab(t)
	signIn(t, ctx, a, "rhys")
	for _, p := range []struct{ name, path string }{
		{"d0-board", "/board"},
		{"d1-runs", "/runs"},
		{"d2-run", "/runs/5"},
		{"d3-trends-j1", "/trends?y=ne_m3&chamber=1&mode=control&base_n=30"},
		{"d3b-trends-all", "/trends?y=ne_m3"},
		{"d3c-trends-side", "/trends?y=ne_m3&compare=chamber&cmp_a=1&cmp_b=2"},
		{"d4-review", "/review"},
		{"d5-planner", "/planner"},
		{"d6-safety", "/safety"},
		{"d7-new", "/runs/new"},
	} {
		do(t, ctx, chromedp.Navigate(a.url+p.path), chromedp.WaitReady(chromedp.CSS("footer")))
		shot(t, ctx, p.name)
		t.Logf("%s: page height %d px at 1280 px wide", p.name, pageHeight(t, ctx))
	}
	// A run awaiting review, as the reviewer sees it (review buttons in
	// the summary).
	if q, err := a.db.ReviewQueue(context.Background(), 1); err == nil && len(q) > 0 {
		do(t, ctx, chromedp.Navigate(fmt.Sprintf("%s/runs/%d", a.url, q[0].Run.ID)), chromedp.WaitReady(chromedp.CSS("footer")))
		shot(t, ctx, "d8-run-submitted")
		t.Logf("d8-run-submitted: page height %d px at 1280 px wide", pageHeight(t, ctx))
	}
	// The same pages on a 390 px wide phone screen.
	do(t, ctx, chromedp.EmulateViewport(390, 844))
	for _, p := range []struct{ name, path string }{
		{"n1-runs-390", "/runs"},
		{"n2-run-390", "/runs/5"},
		{"n3-trends-390", "/trends?y=ne_m3&chamber=1&mode=control&base_n=30"},
		{"n4-new-390", "/runs/new"},
	} {
		do(t, ctx, chromedp.Navigate(a.url+p.path), chromedp.WaitReady(chromedp.CSS("footer")))
		shot(t, ctx, p.name)
		t.Logf("%s: page height %d px, content width %d px at 390 px wide", p.name, pageHeight(t, ctx), pageWidth(t, ctx))
	}
}

// pageHeight and pageWidth are the document's scroll size in CSS pixels.
func pageHeight(t *testing.T, ctx context.Context) int {
	return run(t, ctx, chromedp.Evaluate[int](`document.documentElement.scrollHeight`))
}

func pageWidth(t *testing.T, ctx context.Context) int {
	return run(t, ctx, chromedp.Evaluate[int](`document.documentElement.scrollWidth`))
}
