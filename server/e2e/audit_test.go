package e2e

import (
	"strings"
	"testing"

	"github.com/chromedp/chromedp"
)

// TestAuditTrail: an operator logs a run; the run page's History names
// who did what; an admin filters the audit page by that operator and the
// export link carries the filter.
func TestAuditTrail(t *testing.T) {
	a := startApp(t)
	ctx := tab(t)
	checkCSP := cspWatch(t, ctx)
	signIn(t, ctx, a, "olwen")
	runURL := logRun(t, ctx, a, runInput{title: "Jet nozzle 3, Hβ window", started: "2026-11-30T11:05",
		chamber: "Jet bench East", gas: "Ar + 1 % H2", pressure: "101325", fwhm: "0.03", tgas: "1200",
		file: "scipy_hbeta_window_snr1000.csv"})
	hist := run(t, ctx, chromedp.TextContent(chromedp.CSS(`[data-testid=history]`)))
	for _, want := range []string{"History", "olwen", "Jet nozzle 3, Hβ window", "scipy_hbeta_window_snr1000.csv", "created"} {
		if !strings.Contains(hist, want) {
			t.Errorf("run page History lacks %q", want)
		}
	}
	shot(t, ctx, "audit-run-history")
	checkCSP()

	actx := tab(t)
	checkCSPa := cspWatch(t, actx)
	signIn(t, actx, a, "admin")
	do(t, actx,
		chromedp.Navigate(a.url+"/admin/audit"),
		chromedp.WaitVisible(chromedp.CSS(`[data-testid=audit-filters]`)),
		chromedp.SendKeys(chromedp.CSS(`[data-testid=audit-actor]`), "olwen"),
		chromedp.SetValue(chromedp.CSS(`[data-testid=audit-kind]`), "file"),
		chromedp.Submit(chromedp.CSS(`[data-testid=audit-actor]`)),
		chromedp.WaitVisible(chromedp.CSS(`[data-testid=audit-row]`)),
	)
	who := run(t, actx, chromedp.Nodes(chromedp.CSS(`[data-testid=audit-who]`)))
	if len(who) != 1 {
		t.Errorf("filtered by olwen and file: %d rows, want 1 (the spectrum)", len(who))
	}
	rec := run(t, actx, chromedp.Text(chromedp.CSS(`[data-testid=audit-table]`)))
	runID := runURL[strings.LastIndex(runURL, "/")+1:]
	if !strings.Contains(rec, "olwen") || !strings.Contains(rec, "file #") || !strings.Contains(rec, "run #"+runID) {
		t.Errorf("audit table: %q", rec)
	}
	href := run(t, actx, chromedp.AttributeValue(chromedp.CSS(`[data-testid=audit-csv]`), "href")).Value
	if !strings.Contains(href, "actor=olwen") || !strings.Contains(href, "kind=file") {
		t.Errorf("CSV link %q lacks the filter", href)
	}
	shot(t, actx, "audit-trail")
	checkCSPa()
}
