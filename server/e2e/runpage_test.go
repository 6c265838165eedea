package e2e

import (
	"strings"
	"testing"

	"github.com/chromedp/chromedp"
)

// TestRunPageLayout: the run page opens with the summary and its review
// button in the first screen, its section links all lead somewhere, the
// key lines table fits the page width, the whole spectrum is drawn, the
// owner sees the Edit link; the skip link is the first thing the keyboard
// reaches; the line-table form adds a row in place; and at 390 px wide no
// page (run log, run page, trends, Log a run) scrolls sideways.
func TestRunPageLayout(t *testing.T) {
	a := startApp(t)
	ctx := tab(t)
	checkCSP := cspWatch(t, ctx)
	signIn(t, ctx, a, "olwen")
	loc := logRun(t, ctx, a, runInput{title: "Jet nozzle 4, survey", started: "2026-11-30T12:10",
		chamber: "Jet bench West", gas: "Ar + 1 % H2", pressure: "101325", fwhm: "0.35", tgas: "1000",
		file: "scipy_bench_2048.csv"})
	path := loc[strings.LastIndex(loc, "/runs/"):]
	shot(t, ctx, "runpage-1280")

	type box struct{ Top, Bottom, Right float64 }
	rect := func(sel string) box {
		t.Helper()
		return run(t, ctx, chromedp.Evaluate[box](`(function(){var r=document.querySelector(`+"`"+sel+"`"+`).getBoundingClientRect();return {Top:r.top+scrollY,Bottom:r.bottom+scrollY,Right:r.right}})()`))
	}
	do(t, ctx, chromedp.EmulateViewport(1280, 900), chromedp.Navigate(loc), chromedp.WaitVisible(chromedp.CSS(`[data-testid=run-summary]`)))
	if b := rect(`[data-testid=review-submit]`); b.Bottom > 900 {
		t.Errorf("the submit button is at %.0f px, below the first screen (900 px)", b.Bottom)
	}
	if b := rect(`[data-testid=edit-link]`); b.Bottom > 900 {
		t.Errorf("the edit link is at %.0f px, below the first screen", b.Bottom)
	}
	mainRight := rect(`main`).Right
	if b := rect(`[data-testid=lines-key]`); b.Right > mainRight+0.5 {
		t.Errorf("the key lines table ends at %.0f px, beyond the page's %.0f px", b.Right, mainRight)
	}
	if b := rect(`[data-testid=line-ne]`); b.Right > mainRight+0.5 {
		t.Errorf("per-line n_e ends at %.0f px, off the page (%.0f px)", b.Right, mainRight)
	}
	if n := len(run(t, ctx, chromedp.Nodes(chromedp.CSS(`[data-testid=spectrum-figure] svg[role=img]`), chromedp.AtLeast(0)))); n != 1 {
		t.Errorf("%d whole-spectrum figures, want 1", n)
	}
	missing := run(t, ctx, chromedp.Evaluate[[]string](`Array.from(document.querySelectorAll('[data-testid=section-nav] a')).map(a=>a.getAttribute('href')).filter(h=>!document.getElementById(h.slice(1)))`))
	if len(missing) > 0 {
		t.Errorf("section links lead nowhere: %v", missing)
	}

	// Keyboard: the first Tab reaches the skip link, which is then shown.
	do(t, ctx, chromedp.KeyEvent("\t"))
	focus := run(t, ctx, chromedp.Evaluate[string](`document.activeElement.getAttribute('data-testid') || ''`))
	if focus != "skip-link" {
		t.Errorf("first Tab focuses %q, want the skip link", focus)
	}
	if b := rect(`[data-testid=skip-link]`); b.Top < 0 || b.Bottom <= b.Top {
		t.Errorf("focused skip link is not on screen: %+v", b)
	}

	// The line table adds a row in place (script), without a round trip.
	do(t, ctx, chromedp.Navigate(a.url+"/runs/new"), chromedp.WaitVisible(chromedp.CSS(`[data-testid=lt-add]`)))
	run(t, ctx, chromedp.Evaluate[bool](`window.__marker = true`))
	do(t, ctx, chromedp.Click(chromedp.CSS(`[data-testid=lt-add]`)))
	rows := run(t, ctx, chromedp.Evaluate[int](`document.querySelectorAll('[data-testid=lt-row]').length`))
	same := run(t, ctx, chromedp.Evaluate[bool](`window.__marker === true`))
	if rows != 5 || !same {
		t.Errorf("after 'Add a line': %d rows, same page %v; want 5 rows without reloading", rows, same)
	}
	checkCSP()

	// 390 px wide: nothing scrolls sideways.
	do(t, ctx, chromedp.EmulateViewport(390, 844))
	for _, p := range []struct{ name, path string }{
		{"narrow-runs", "/runs"}, {"narrow-run", path}, {"narrow-trends", "/trends"}, {"narrow-new", "/runs/new"},
	} {
		do(t, ctx, chromedp.Navigate(a.url+p.path), chromedp.WaitReady(chromedp.CSS("footer")))
		if w := run(t, ctx, chromedp.Evaluate[int](`document.documentElement.scrollWidth`)); w > 390 {
			t.Errorf("%s at 390 px: the page is %d px wide", p.path, w)
		}
		shot(t, ctx, p.name)
	}
	do(t, ctx, chromedp.Navigate(a.url+path), chromedp.WaitReady(chromedp.CSS("footer")))
	if b := rect(`[data-testid=line-ne]`); b.Right > 390 {
		t.Errorf("at 390 px per-line n_e ends at %.0f px, off screen", b.Right)
	}
	checkCSP()
}
