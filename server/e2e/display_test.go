package e2e

import (
	"strings"
	"testing"

	"github.com/chromedp/chromedp"
)

// TestRunPageUncertaintySplit: the summary's "where the ± comes from"
// opens in the browser to the statistical and systematic parts of n_e and
// T_exc, and the per-model table, the split and the sources stay within
// the page width at 1280 and 390 px.
func TestRunPageUncertaintySplit(t *testing.T) {
	a := startApp(t)
	ctx := tab(t)
	signIn(t, ctx, a, "olwen")
	loc := logRun(t, ctx, a, runInput{title: "Jet nozzle 5, split", started: "2026-11-30T12:20",
		chamber: "Jet bench West", gas: "Ar + 1 % H2", pressure: "101325", fwhm: "0.35", tgas: "1000",
		file: "scipy_bench_2048.csv"})
	for _, w := range []int64{1280, 390} {
		do(t, ctx, chromedp.EmulateViewport(w, 900), chromedp.Navigate(loc), chromedp.WaitVisible(chromedp.CSS(`[data-testid=run-summary]`)))
		do(t, ctx, chromedp.Click(chromedp.CSS(`[data-testid=unc-split] > summary`)),
			chromedp.WaitVisible(chromedp.CSS(`[data-testid=unc-split-ne]`)))
		text := run(t, ctx, chromedp.Evaluate[string](`document.querySelector('[data-testid=unc-split]').innerText`))
		for _, want := range []string{"statistical", "systematic: Stark model spread", "systematic: line shape", "total 1σ"} {
			if !strings.Contains(text, want) {
				t.Errorf("%d px: the opened split lacks %q:\n%s", w, want, text)
			}
		}
		over := run(t, ctx, chromedp.Evaluate[[]string](`(function(){var m=document.querySelector('main').getBoundingClientRect().right;
			return ['unc-split','line-models','sources','constant-sources'].filter(function(id){var e=document.querySelector('[data-testid='+id+']');
			return e && e.getBoundingClientRect().right > m + 0.5})})()`))
		if len(over) > 0 {
			t.Errorf("%d px: wider than the page: %v", w, over)
		}
		if side := run(t, ctx, chromedp.Evaluate[bool](`document.documentElement.scrollWidth > document.documentElement.clientWidth`)); side {
			t.Errorf("%d px: the run page scrolls sideways", w)
		}
		if w == 1280 {
			shot(t, ctx, "display-summary-1280")
		} else {
			shot(t, ctx, "display-summary-390")
		}
	}
}
