package e2e

import (
	"context"
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
	}
}
