package e2e

import (
	"context"
	"encoding/json"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"github.com/chromedp/chromedp"

	"glowlog/diag"
	"glowlog/diag/spectrum"
)

// shotOf saves a PNG of one element (for people to look at).
func shotOf(t *testing.T, ctx context.Context, sel, name string) {
	t.Helper()
	dir := os.Getenv("E2E_ARTIFACTS")
	if dir == "" {
		dir = t.TempDir()
	}
	if err := os.MkdirAll(dir, 0o755); err != nil {
		t.Fatal(err)
	}
	do(t, ctx, chromedp.ScrollIntoView(chromedp.CSS(sel)))
	png := run(t, ctx, chromedp.Screenshot(chromedp.CSS(sel)))
	if err := os.WriteFile(filepath.Join(dir, name+".png"), png, 0o644); err != nil {
		t.Fatal(err)
	}
}

// handWholeFit is a whole-spectrum fit made up for the page (not by the
// pipeline): Lorentzian Balmer lines on a flat baseline over 380–700 nm
// with seeded noise, and parameters, correlations and lines by hand.
func handWholeFit() *spectrum.WholeFit {
	f := func(v float64) *float64 { return &v }
	lines := []struct {
		upper      int
		name       string
		c, a, fwhm float64
	}{{3, "Hα", 656.28, 900, 0.9}, {4, "Hβ", 486.13, 260, 1.6}, {5, "Hγ", 434.05, 110, 2.4}, {6, "Hδ", 410.17, 55, 3.3}, {7, "Hε", 397.01, 25, 4.3}}
	w := &spectrum.WholeFit{Areas: spectrum.WholeAreasBoltzmann, RangeNM: [2]float64{380, 700}, Pixels: 2048,
		ReducedChi2: 1.04, DOF: 2036, Iterations: 17, Converged: true,
		DopplerNote: "the tables' own Doppler part was taken out and the Doppler width of the given gas temperature (1000 K) put in its place",
		Params: []spectrum.WholeParam{
			{Name: "T_exc", Label: "Excitation temperature", Unit: "K", Value: 6480, Unc: 210},
			{Name: "scale", Label: "Boltzmann scale", Unit: "counts·nm", Value: 4.1e6, Unc: 1.6e5},
			{Name: "n_e", Label: "Electron density", Unit: "m⁻³", Value: 9.6e21, Unc: 2.1e20},
			{Name: "T_gas", Label: "Gas temperature", Unit: "K", Value: 1000, Fixed: true},
			{Name: "instrument_fwhm", Label: "Instrument FWHM (Gaussian)", Unit: "nm", Value: 0.35, Fixed: true},
			{Name: "offset", Label: "Wavelength offset", Unit: "nm", Value: 0.0031, Unc: 0.0009},
			{Name: "baseline_0", Label: "Baseline, constant", Unit: "counts", Value: 8.02, Unc: 0.03},
			{Name: "baseline_1", Label: "Baseline, slope", Unit: "counts/nm", Value: -0.0004, Unc: 0.0002},
		},
		Correlation: [][]float64{
			{1, 0.98, -0.12, 0.05, -0.31, 0.22},
			{0.98, 1, -0.09, 0.04, -0.35, 0.25},
			{-0.12, -0.09, 1, 0.02, 0.61, -0.4},
			{0.05, 0.04, 0.02, 1, 0.01, 0},
			{-0.31, -0.35, 0.61, 0.01, 1, -0.86},
			{0.22, 0.25, -0.4, 0, -0.86, 1},
		},
		ExcitationTemperatureK: f(6480), ExcitationTemperatureUncK: f(210),
		ElectronDensityM3: f(9.6e21), ElectronDensityUncM3: f(2.1e20),
		LinesExcitationTemperatureK: f(6710), LinesExcitationTemperatureUncK: f(330),
		LinesElectronDensityM3: f(9.9e21), LinesElectronDensityUncM3: f(3.0e20),
		TexcDiffSigma: f(-0.59), NeDiffSigma: f(-0.82),
	}
	for _, l := range lines {
		w.Lines = append(w.Lines, spectrum.WholeLine{Upper: l.upper, Name: l.name, Shape: "SH99", Area: l.a * math.Pi * l.fwhm / 2,
			AreaUnc: 0.02 * l.a * math.Pi * l.fwhm / 2, StarkFWHMNM: l.fwhm * 0.8, ReducedChi2: 0.95 + 0.03*float64(l.upper-3),
			ResidualRMS: 1 + 0.01*float64(l.upper), PeakSNR: l.a / 0.3})
	}
	w.Lines[4].Shape = "Voigt"
	rng := rand.New(rand.NewPCG(7, 11))
	for i := range 2048 {
		x := 380 + 320*float64(i)/2047
		m := 8.0
		for _, l := range lines {
			g := l.fwhm / 2
			m += l.a * g * g / ((x-l.c)*(x-l.c) + g*g)
		}
		d := m + 0.3*rng.NormFloat64()
		w.WavelengthNM = append(w.WavelengthNM, x)
		w.Data, w.Model, w.Residual = append(w.Data, d), append(w.Model, m), append(w.Residual, d-m)
	}
	return w
}

// TestRunPageWholeFit: a run whose result carries a whole-spectrum fit
// shows its section (linked from the section list); a zoom link and a
// drag across the figure redraw it in place at the range asked for; the
// correlations open; at 1280 and 390 px the page does not scroll
// sideways. The section is kept as PNGs (E2E_ARTIFACTS) for people.
func TestRunPageWholeFit(t *testing.T) {
	a := startApp(t)
	ctx := tab(t)
	checkCSP := cspWatch(t, ctx)
	signIn(t, ctx, a, "olwen")
	loc := logRun(t, ctx, a, runInput{title: "Jet nozzle 6, whole fit", started: "2026-11-30T12:30",
		chamber: "Jet bench West", gas: "Ar + 1 % H2", pressure: "101325", fwhm: "0.35", tgas: "1000",
		file: "scipy_bench_2048.csv"})

	// The fit is put into the stored result by hand (this test is about
	// the page, not the fit).
	var id int64
	var res string
	var series []byte
	if err := a.db.SQL().QueryRow(`SELECT id, result, series FROM analysis_results ORDER BY id DESC LIMIT 1`).Scan(&id, &res, &series); err != nil {
		t.Fatal(err)
	}
	whole, err := spectrum.ExpandSeries(nil, res, series)
	if err != nil {
		t.Fatal(err)
	}
	var sr spectrum.Result
	if err := json.Unmarshal(whole, &sr); err != nil {
		t.Fatal(err)
	}
	sr.Model, sr.Whole = spectrum.ModelWhole, handWholeFit()
	sr.Flags = append(sr.Flags, diag.Flag{Code: "whole_lines_disagree", Message: "made up for this test"})
	b, err := json.Marshal(sr)
	if err != nil {
		t.Fatal(err)
	}
	if _, err := a.db.SQL().Exec(`UPDATE analysis_results SET result = ?, series = NULL WHERE id = ?`, string(b), id); err != nil {
		t.Fatal(err)
	}

	title := func() string {
		return run(t, ctx, chromedp.Evaluate[string](`document.querySelector('[data-testid=whole-fit-svg] svg title').textContent`))
	}
	do(t, ctx, chromedp.EmulateViewport(1280, 900), chromedp.Navigate(loc), chromedp.WaitVisible(chromedp.CSS(`[data-testid=whole-fit]`)))
	if n := run(t, ctx, chromedp.Evaluate[int](`document.querySelectorAll('[data-testid=section-nav] a[href="#whole-fit"]').length`)); n != 1 {
		t.Errorf("%d section links to the whole fit, want 1", n)
	}
	if got := title(); got != "Whole-spectrum fit" {
		t.Errorf("figure title %q before zooming", got)
	}
	shotOf(t, ctx, `[data-testid=whole-fit]`, "whole-fit-1280")

	// A zoom link redraws in place (no page load: the marker survives).
	run(t, ctx, chromedp.Evaluate[bool](`window.__marker = true`))
	do(t, ctx, chromedp.Click(chromedp.CSS(`nav.zoom a:nth-of-type(3)`)))
	run(t, ctx, chromedp.Poll[bool](`document.querySelector('[data-testid=whole-fit-svg] svg title').textContent.indexOf(' nm') > 0`))
	zoomed := title()
	if !strings.HasPrefix(zoomed, "Whole-spectrum fit, 4") || !run(t, ctx, chromedp.Evaluate[bool](`window.__marker === true`)) {
		t.Errorf("after the Hβ zoom link: title %q (want a range near 486 nm, same page)", zoomed)
	}
	cur := run(t, ctx, chromedp.Evaluate[string](`document.querySelector('nav.zoom a.current').textContent`))
	if !strings.Contains(cur, "Hβ") {
		t.Errorf("current zoom link %q, want Hβ", cur)
	}
	shotOf(t, ctx, `[data-testid=whole-fit-figure]`, "whole-fit-zoom-hbeta-1280")

	// Back to the whole range, then drag across the middle third.
	do(t, ctx, chromedp.Click(chromedp.CSS(`nav.zoom a:nth-of-type(1)`)))
	run(t, ctx, chromedp.Poll[bool](`document.querySelector('[data-testid=whole-fit-svg] svg title').textContent === 'Whole-spectrum fit'`))
	type box struct{ L, T, W, H float64 }
	r := run(t, ctx, chromedp.Evaluate[box](`(function(){var r=document.querySelector('[data-testid=whole-fit-svg] svg').getBoundingClientRect();return {L:r.left,T:r.top,W:r.width,H:r.height}})()`))
	y := r.T + 0.5*r.H
	do(t, ctx, chromedp.DragAndDropXY(r.L+0.40*r.W, y, r.L+0.60*r.W, y))
	run(t, ctx, chromedp.Poll[bool](`document.querySelector('[data-testid=whole-fit-svg] svg title').textContent.indexOf(' nm') > 0`))
	dragged := title()
	if lo, hi, err := titleRange(dragged); err != nil || !(lo > 380 && hi < 700 && hi-lo > 30 && hi-lo < 120) {
		t.Errorf("after dragging over the middle fifth: title %q (range %g–%g nm, %v)", dragged, lo, hi, err)
	}

	// The correlations open and keep within the page.
	do(t, ctx, chromedp.Click(chromedp.CSS(`[data-testid=whole-corr-details] > summary`)), chromedp.WaitVisible(chromedp.CSS(`[data-testid=whole-corr]`)),
		chromedp.Click(chromedp.CSS(`[data-testid=whole-lines-details] > summary`)), chromedp.WaitVisible(chromedp.CSS(`[data-testid=whole-lines]`)))
	shotOf(t, ctx, `[data-testid=whole-fit]`, "whole-fit-open-1280")
	checkCSP()

	do(t, ctx, chromedp.EmulateViewport(390, 844), chromedp.Navigate(loc), chromedp.WaitVisible(chromedp.CSS(`[data-testid=whole-fit]`)))
	if side := run(t, ctx, chromedp.Evaluate[bool](`document.documentElement.scrollWidth > document.documentElement.clientWidth`)); side {
		t.Errorf("390 px: the run page scrolls sideways")
	}
	do(t, ctx, chromedp.Click(chromedp.CSS(`[data-testid=whole-corr-details] > summary`)), chromedp.WaitVisible(chromedp.CSS(`[data-testid=whole-corr]`)))
	over := run(t, ctx, chromedp.Evaluate[[]string](`(function(){var m=document.querySelector('main').getBoundingClientRect().right;
		return ['whole-fit','route-compare','whole-params','whole-fit-figure'].filter(function(id){var e=document.querySelector('[data-testid='+id+']');
		return e && e.getBoundingClientRect().right > m + 0.5})})()`))
	if len(over) > 0 {
		t.Errorf("390 px: wider than the page: %v", over)
	}
	// The two key tables show every column without scrolling.
	hidden := run(t, ctx, chromedp.Evaluate[[]string](`['route-compare','whole-params'].filter(function(id){var e=document.querySelector('[data-testid='+id+']');
		return e && e.scrollWidth > e.clientWidth + 1})`))
	if len(hidden) > 0 {
		t.Errorf("390 px: columns hidden behind a sideways scroll: %v", hidden)
	}
	shotOf(t, ctx, `[data-testid=whole-fit]`, "whole-fit-390")
}

// titleRange reads "Whole-spectrum fit, LO–HI nm".
func titleRange(s string) (lo, hi float64, err error) {
	s = strings.TrimSuffix(strings.TrimPrefix(s, "Whole-spectrum fit, "), " nm")
	parts := strings.Split(s, "–")
	if len(parts) != 2 {
		return 0, 0, os.ErrInvalid
	}
	if lo, err = strconv.ParseFloat(parts[0], 64); err == nil {
		hi, err = strconv.ParseFloat(parts[1], 64)
	}
	return lo, hi, err
}

// TestRouteChoiceForm: on Log a run the whole-fit options are enabled
// while the route is the default (the whole-spectrum fit, for Stark-shaped
// lines), disabled when the lines route is chosen, and enabled again for
// the whole-spectrum fit.
func TestRouteChoiceForm(t *testing.T) {
	a := startApp(t)
	ctx := tab(t)
	checkCSP := cspWatch(t, ctx)
	signIn(t, ctx, a, "olwen")
	disabled := func() bool {
		return run(t, ctx, chromedp.Evaluate[bool](`document.querySelector('[data-testid=f-route] [data-whole-options]').disabled`))
	}
	do(t, ctx, chromedp.EmulateViewport(1280, 900), chromedp.Navigate(a.url+"/runs/new"), chromedp.WaitVisible(chromedp.CSS(`[data-testid=f-route]`)))
	if disabled() {
		t.Errorf("whole-fit options disabled with the default route (the whole-spectrum fit)")
	}
	do(t, ctx, chromedp.SetValue(chromedp.CSS(`[data-testid=f-model]`), "lines"))
	run(t, ctx, chromedp.Evaluate[bool](`document.querySelector('[data-testid=f-model]').dispatchEvent(new Event('change', {bubbles: true}))`))
	if !disabled() {
		t.Errorf("whole-fit options enabled with the lines route")
	}
	do(t, ctx, chromedp.SetValue(chromedp.CSS(`[data-testid=f-model]`), "whole"))
	run(t, ctx, chromedp.Evaluate[bool](`document.querySelector('[data-testid=f-model]').dispatchEvent(new Event('change', {bubbles: true}))`))
	if disabled() {
		t.Errorf("whole-fit options still disabled after choosing the whole-spectrum fit")
	}
	do(t, ctx, chromedp.SetValue(chromedp.CSS(`[data-testid=f-whole-areas]`), "free"))
	shotOf(t, ctx, `[data-testid=f-route]`, "route-choice-1280")
	do(t, ctx, chromedp.SetValue(chromedp.CSS(`[data-testid=f-model]`), "lines"))
	run(t, ctx, chromedp.Evaluate[bool](`document.querySelector('[data-testid=f-model]').dispatchEvent(new Event('change', {bubbles: true}))`))
	if !disabled() {
		t.Errorf("whole-fit options enabled with the lines route")
	}
	do(t, ctx, chromedp.EmulateViewport(390, 844), chromedp.Navigate(a.url+"/runs/new"), chromedp.WaitVisible(chromedp.CSS(`[data-testid=f-route]`)))
	if side := run(t, ctx, chromedp.Evaluate[bool](`document.documentElement.scrollWidth > document.documentElement.clientWidth`)); side {
		t.Errorf("390 px: Log a run scrolls sideways")
	}
	shotOf(t, ctx, `[data-testid=f-route]`, "route-choice-390")
	checkCSP()
}

// TestWholeRouteLogged: a run logged with the whole-spectrum fit chosen
// on the form is analysed by it (the pipeline's own fit), and its page
// shows the section with the route named in the summary; kept as PNGs.
func TestWholeRouteLogged(t *testing.T) {
	a := startApp(t)
	ctx := tab(t)
	checkCSP := cspWatch(t, ctx)
	signIn(t, ctx, a, "olwen")
	do(t, ctx,
		chromedp.EmulateViewport(1280, 900),
		chromedp.Navigate(a.url+"/runs/new"),
		chromedp.WaitVisible(chromedp.CSS(`[data-testid=run-form]`)),
		chromedp.SetValue(chromedp.CSS(`[data-testid=f-title]`), "Jet nozzle 7, whole route"),
		chromedp.SetValue(chromedp.CSS(`[data-testid=f-started]`), "2026-11-30T12:40"),
		chromedp.SetValue(chromedp.CSS(`[data-testid=f-source]`), "plasma_jet"),
		chromedp.SetValue(chromedp.CSS(`[data-testid=f-new-chamber]`), "Jet bench West"),
		chromedp.SetValue(chromedp.CSS(`[data-testid=f-pressure]`), "101325"),
		chromedp.SetValue(chromedp.CSS(`[data-testid=f-instrument-fwhm]`), "0.35"),
		chromedp.SetValue(chromedp.CSS(`[data-testid=f-gas-temperature]`), "1000"),
		chromedp.SetValue(chromedp.CSS(`[data-testid=f-perturber]`), "none"),
		chromedp.SetValue(chromedp.CSS(`[data-testid=f-model]`), "whole"),
		chromedp.SetUploadFiles(chromedp.CSS(`[data-testid=f-spectra]`), []string{abs(t, spectraDir+"scipy_bench_2048.csv")}),
		chromedp.Click(chromedp.CSS(`[data-testid=f-submit]`)),
		chromedp.WaitVisible(chromedp.CSS(`[data-testid=run-title]`)),
		chromedp.WaitVisible(chromedp.CSS(`[data-testid=whole-fit]`)),
	)
	route := run(t, ctx, chromedp.Evaluate[string](`document.querySelector('[data-testid=summary-route]').textContent`))
	if !strings.Contains(route, "whole-spectrum fit") {
		t.Errorf("summary route %q", route)
	}
	if n := run(t, ctx, chromedp.Evaluate[int](`document.querySelectorAll('[data-testid=whole-params] tbody tr').length`)); n < 4 {
		t.Errorf("%d parameter rows", n)
	}
	do(t, ctx, chromedp.Click(chromedp.CSS(`[data-testid=whole-corr-details] > summary`)), chromedp.Click(chromedp.CSS(`[data-testid=whole-lines-details] > summary`)))
	shotOf(t, ctx, `[data-testid=whole-fit]`, "whole-fit-real-1280")
	checkCSP()
}
