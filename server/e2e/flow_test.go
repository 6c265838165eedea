package e2e

import (
	"context"
	"math"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"sync"
	"testing"
	"time"

	"github.com/chromedp/cdproto/emulation"
	cdplog "github.com/chromedp/cdproto/log"
	"github.com/chromedp/cdproto/page"
	"github.com/chromedp/chromedp"
)

const spectraDir = "../../testdata/spectra/"

// cspProbe is installed through DevTools before any page script runs (so
// the page's CSP does not apply to it) and records every
// securitypolicyviolation event of the document.
const cspProbe = `window.__csp = [];
document.addEventListener('securitypolicyviolation', function (e) {
  window.__csp.push(e.violatedDirective + ' ' + (e.blockedURI || 'inline') + ' ' + (e.sourceFile || '') + ':' + e.lineNumber);
});`

// cspWatch records the browser-log entries about the Content Security
// Policy of a tab and installs the in-page probe on every new document.
// The returned func fails the test on any violation seen so far.
func cspWatch(t *testing.T, ctx context.Context) func() {
	t.Helper()
	var mu sync.Mutex
	var seen []string
	if err := chromedp.Listen(ctx, func(ev any) {
		if e, ok := ev.(*cdplog.EventEntryAdded); ok && e.Entry != nil &&
			strings.Contains(e.Entry.Text, "Content Security Policy") {
			mu.Lock()
			seen = append(seen, e.Entry.URL+": "+e.Entry.Text)
			mu.Unlock()
		}
	}); err != nil {
		t.Fatalf("listening to the browser log: %v", err)
	}
	if _, err := chromedp.Call(ctx, page.AddScriptToEvaluateOnNewDocument, page.AddScriptToEvaluateOnNewDocumentParams{Source: cspProbe}); err != nil {
		t.Fatalf("installing the CSP probe: %v", err)
	}
	return func() {
		t.Helper()
		// The in-page probe of the current document.
		if v, err := chromedp.Run(ctx, chromedp.Evaluate[[]string](`window.__csp || []`)); err == nil {
			for _, s := range v {
				mu.Lock()
				seen = append(seen, "in page: "+s)
				mu.Unlock()
			}
		}
		mu.Lock()
		defer mu.Unlock()
		for _, s := range seen {
			t.Errorf("CSP violation: %s", s)
		}
		seen = nil
	}
}

var (
	leadNumber = regexp.MustCompile(`^\(?\s*(-?[0-9]+(?:\.[0-9]+)?)`)
	timesTen   = regexp.MustCompile(`×\s*10([⁻⁰¹²³⁴⁵⁶⁷⁸⁹]+)`)
)

// parseShown reads the central value of a displayed "v ± σ unit" or
// "(v ± σ) × 10ⁿ unit".
func parseShown(t *testing.T, s string) float64 {
	t.Helper()
	s = strings.TrimSpace(s)
	m := leadNumber.FindStringSubmatch(s)
	if m == nil {
		t.Fatalf("no number in %q", s)
	}
	v, err := strconv.ParseFloat(m[1], 64)
	if err != nil {
		t.Fatalf("number in %q: %v", s, err)
	}
	if e := timesTen.FindStringSubmatch(s); e != nil {
		exp, sign := 0, 1
		for _, r := range e[1] {
			if r == '⁻' {
				sign = -1
				continue
			}
			exp = exp*10 + superDigit(r)
		}
		v *= math.Pow(10, float64(sign*exp))
	}
	return v
}

func superDigit(r rune) int {
	for i, d := range []rune("⁰¹²³⁴⁵⁶⁷⁸⁹") {
		if d == r {
			return i
		}
	}
	return 0
}

func within(t *testing.T, what string, got, want, rel float64) {
	t.Helper()
	if math.Abs(got-want) > rel*math.Abs(want) {
		t.Errorf("%s = %.4g, want %.4g within %.0f %%", what, got, want, rel*100)
	}
}

type runInput struct {
	title, started, chamber, gas, pressure, fwhm, tgas, file string
}

// logRun fills "Log a run" and submits it; it returns the run page URL.
func logRun(t *testing.T, ctx context.Context, a *app, in runInput) string {
	t.Helper()
	do(t, ctx,
		chromedp.Navigate(a.url+"/runs/new"),
		chromedp.WaitVisible(chromedp.CSS(`[data-testid=run-form]`)),
		chromedp.SetValue(chromedp.CSS(`[data-testid=f-title]`), in.title),
		chromedp.SetValue(chromedp.CSS(`[data-testid=f-started]`), in.started),
		chromedp.SetValue(chromedp.CSS(`[data-testid=f-source]`), "plasma_jet"),
		chromedp.SetValue(chromedp.CSS(`[data-testid=f-new-chamber]`), in.chamber),
		chromedp.SetValue(chromedp.CSS(`[data-testid=f-gas]`), in.gas),
		chromedp.SetValue(chromedp.CSS(`[data-testid=f-pressure]`), in.pressure),
		chromedp.SetValue(chromedp.CSS(`[data-testid=f-instrument-fwhm]`), in.fwhm),
		chromedp.SetValue(chromedp.CSS(`[data-testid=f-gas-temperature]`), in.tgas),
		chromedp.SetValue(chromedp.CSS(`[data-testid=f-perturber]`), "none"),
		// The scipy spectra's lines are Voigt profiles.
		chromedp.SetValue(chromedp.CSS(`[data-testid=f-line-shape]`), "voigt"),
		chromedp.SetUploadFiles(chromedp.CSS(`[data-testid=f-spectra]`), []string{abs(t, spectraDir+in.file)}),
		chromedp.Click(chromedp.CSS(`[data-testid=f-submit]`)),
		chromedp.WaitVisible(chromedp.CSS(`[data-testid=run-title]`)),
	)
	loc := run(t, ctx, chromedp.Location())
	if !regexp.MustCompile(`/runs/[0-9]+$`).MatchString(loc) {
		t.Fatalf("after logging the run the browser is at %s", loc)
	}
	return loc
}

// TestRunLifecycle: an operator logs two runs with spectra and reads the
// results and figures, submits one; a reviewer signs it off from the
// queue; the trends page draws a control chart; no page breaks the CSP.
func TestRunLifecycle(t *testing.T) {
	a := startApp(t)
	ctx := tab(t)
	checkCSP := cspWatch(t, ctx)
	signIn(t, ctx, a, "olwen")

	// 1a. Hβ window: n_e from Stark broadening.
	logRun(t, ctx, a, runInput{title: "Jet nozzle 2, Hβ window", started: "2026-11-30T09:15",
		chamber: "Jet bench West", gas: "Ar + 1 % H2", pressure: "101325", fwhm: "0.03", tgas: "1200",
		file: "scipy_hbeta_window_snr1000.csv"})
	ne := run(t, ctx, chromedp.Text(chromedp.CSS(`[data-testid=ne-m3]`)))
	within(t, "n_e (Hβ window)", parseShown(t, ne), 2e21, 0.02)
	if !strings.Contains(ne, "m⁻³") {
		t.Errorf("n_e shown as %q, without its unit m⁻³", ne)
	}
	if n := len(run(t, ctx, chromedp.Nodes(chromedp.CSS(`[data-testid=window-figure] svg[role=img]`), chromedp.AtLeast(0)))); n == 0 {
		t.Error("Hβ run page: no inline window figure (svg role=img)")
	}
	shot(t, ctx, "01-run-hbeta")

	// 1b. Wide spectrum: Boltzmann plot and T_exc.
	wide := logRun(t, ctx, a, runInput{title: "Jet nozzle 2, survey 380–700 nm", started: "2026-11-30T10:40",
		chamber: "Jet bench West", gas: "Ar + 1 % H2", pressure: "101325", fwhm: "0.35", tgas: "1000",
		file: "scipy_bench_2048.csv"})
	texc := run(t, ctx, chromedp.Text(chromedp.CSS(`[data-testid=texc]`)))
	within(t, "T_exc (survey)", parseShown(t, texc), 11960, 0.02)
	if !strings.HasSuffix(strings.TrimSpace(texc), "K") {
		t.Errorf("T_exc shown as %q, without its unit K", texc)
	}
	bz := run(t, ctx, chromedp.TextContent(chromedp.CSS(`[data-testid=boltzmann-figure] svg[role=img]`)))
	for _, want := range []string{"Boltzmann plot", "±1σ", "E_k (eV)"} {
		if !strings.Contains(bz, want) {
			t.Errorf("Boltzmann figure lacks %q", want)
		}
	}
	shot(t, ctx, "02-run-survey")

	// 2. Submit the survey run; rhys signs it off from the queue.
	do(t, ctx,
		chromedp.Click(chromedp.CSS(`[data-testid=review-submit]`)),
		chromedp.WaitVisible(chromedp.CSS(`[data-testid=review-status].submitted`)),
	)
	if st := run(t, ctx, chromedp.Text(chromedp.CSS(`[data-testid=review-status]`))); !strings.Contains(strings.ToLower(st), "submitted") && !strings.Contains(strings.ToLower(st), "review") {
		t.Errorf("after submitting, the status is %q", st)
	}
	checkCSP()

	rctx := tab(t)
	checkCSPr := cspWatch(t, rctx)
	signIn(t, rctx, a, "rhys")
	do(t, rctx,
		chromedp.Navigate(a.url+"/review"),
		chromedp.WaitVisible(chromedp.CSS(`[data-testid=queue]`)),
	)
	path := wide[strings.LastIndex(wide, "/runs/"):]
	rows := run(t, rctx, chromedp.Text(chromedp.CSS(`[data-testid=queue]`)))
	if !strings.Contains(rows, "survey 380–700 nm") {
		t.Fatalf("review queue does not list the submitted run: %q", rows)
	}
	shot(t, rctx, "03-review-queue")
	do(t, rctx,
		chromedp.Click(chromedp.CSS(`[data-testid=queue-row] a[href="`+path+`"]`)),
		chromedp.WaitVisible(chromedp.CSS(`[data-testid=review-signoff]`)),
		chromedp.Click(chromedp.CSS(`[data-testid=review-signoff]`)),
		chromedp.WaitVisible(chromedp.CSS(`[data-testid=review-status].signed_off`)),
	)
	panel := run(t, rctx, chromedp.Text(chromedp.CSS(`[data-testid=review-panel]`)))
	status := run(t, rctx, chromedp.Text(chromedp.CSS(`[data-testid=review-status]`)))
	if !strings.Contains(strings.ToLower(status), "signed off") {
		t.Errorf("after sign-off the status is %q", status)
	}
	if !strings.Contains(panel, "rhys") || !regexp.MustCompile(`20[0-9]{2}-[0-9]{2}-[0-9]{2}`).MatchString(panel) {
		t.Errorf("review panel does not name rhys and a date: %q", panel)
	}
	shot(t, rctx, "04-run-signed-off")

	// 3. Trends: n_e against start time as a control chart (the Hβ-only
	// run has no T_exc, so n_e has the two points of a baseline).
	do(t, rctx,
		chromedp.Navigate(a.url+"/trends"),
		chromedp.WaitVisible(chromedp.CSS(`[data-testid=trend-form]`)),
		chromedp.SetValue(chromedp.CSS(`[data-testid=trend-y]`), "ne_m3"),
		chromedp.SetValue(chromedp.CSS(`[data-testid=trend-x]`), "started_at"),
		chromedp.Click(chromedp.CSS(`[data-testid=mode-control]`)),
		chromedp.SetValue(chromedp.CSS(`input[name=base_n]`), "2"),
		chromedp.Click(chromedp.CSS(`[data-testid=trend-submit]`)),
		chromedp.WaitVisible(chromedp.CSS(`[data-testid=violations-none], [data-testid=violations]`)),
	)
	if loc := run(t, rctx, chromedp.Location()); !strings.Contains(loc, "mode=control") {
		t.Errorf("trends URL %s lacks mode=control", loc)
	}
	if n := len(run(t, rctx, chromedp.Nodes(chromedp.CSS(`[data-testid=trend-chart] svg[role=img]`), chromedp.AtLeast(0)))); n == 0 {
		t.Error("trends: no chart (svg role=img)")
	}
	shot(t, rctx, "05-trends-control")
	checkCSPr()

	// The CSP watch itself: a blocked image from another origin is seen.
	t.Run("watch sees violations", func(t *testing.T) {
		vctx := tab(t)
		var got []string
		var mu sync.Mutex
		if err := chromedp.Listen(vctx, func(ev any) {
			if e, ok := ev.(*cdplog.EventEntryAdded); ok && strings.Contains(e.Entry.Text, "Content Security Policy") {
				mu.Lock()
				got = append(got, e.Entry.Text)
				mu.Unlock()
			}
		}); err != nil {
			t.Fatal(err)
		}
		do(t, vctx, chromedp.Navigate(a.url+"/login"), chromedp.WaitVisible(chromedp.CSS(`[data-testid=login-name]`)))
		run(t, vctx, chromedp.Evaluate[bool](`(function(){var i=document.createElement('img');i.src='http://192.0.2.1/x.png';document.body.appendChild(i);return true})()`))
		do(t, vctx, chromedp.Sleep(300*time.Millisecond))
		mu.Lock()
		defer mu.Unlock()
		if len(got) == 0 {
			t.Error("a blocked cross-origin image left no CSP entry in the browser log: the watch would miss violations")
		}
	})
}

// TestNoJavaScript: with scripts disabled the sign-in form posts and the
// run list and a run page render in full.
func TestNoJavaScript(t *testing.T) {
	a := startApp(t)
	// The run is logged in a scripted tab (the test fills the form with
	// DevTools calls); the reader's tab runs no script at all.
	octx := tab(t)
	signIn(t, octx, a, "olwen")
	loc := logRun(t, octx, a, runInput{title: "No-script check", started: "2026-11-29T08:00",
		chamber: "Jet bench East", gas: "Ar + 1 % H2", pressure: "101325", fwhm: "0.03", tgas: "1200",
		file: "scipy_hbeta_window_snr1000.csv"})
	path := loc[strings.LastIndex(loc, "/runs/"):]

	ctx := tab(t)
	if _, err := chromedp.Call(ctx, emulation.SetScriptExecutionDisabled, emulation.SetScriptExecutionDisabledParams{Value: true}); err != nil {
		t.Fatal(err)
	}
	signIn(t, ctx, a, "rhys")
	do(t, ctx,
		chromedp.Navigate(a.url+"/runs"),
		chromedp.WaitVisible(chromedp.CSS(`[data-testid=run-table]`)),
	)
	if n := len(run(t, ctx, chromedp.Nodes(chromedp.CSS(`[data-testid=run-row]`)))); n != 1 {
		t.Errorf("run list without JS shows %d rows, want 1", n)
	}
	shot(t, ctx, "06-nojs-run-list")
	do(t, ctx,
		chromedp.Click(chromedp.CSS(`[data-testid=run-row] a[href="`+path+`"]`)),
		chromedp.WaitVisible(chromedp.CSS(`[data-testid=ne-m3]`)),
	)
	within(t, "n_e without JS", parseShown(t, run(t, ctx, chromedp.Text(chromedp.CSS(`[data-testid=ne-m3]`)))), 2e21, 0.02)
	if n := len(run(t, ctx, chromedp.Nodes(chromedp.CSS(`[data-testid=window-figure] svg[role=img]`), chromedp.AtLeast(0)))); n == 0 {
		t.Error("run page without JS: no inline figure")
	}
	shot(t, ctx, "07-nojs-run")
}

func abs(t *testing.T, p string) string {
	t.Helper()
	a, err := filepath.Abs(p)
	if err != nil {
		t.Fatal(err)
	}
	return a
}
