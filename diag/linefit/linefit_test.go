package linefit

import (
	"errors"
	"math"
	"math/rand/v2"
	"runtime"
	"strings"
	"testing"

	"glowlog/diag/voigt"
)

// window describes a synthetic spectral window: true lines, a baseline
// b0 + b1 (x − xmid) + b2 (x − xmid)², and constant Gaussian noise whose
// standard deviation is (highest peak)/snr.
type window struct {
	x0, x1   float64 // range, nm
	n        int     // pixels
	lines    []Line  // true parameters
	baseline [3]float64
	snr      float64
}

// make returns x, the noise-free model y0 and the noise σ.
func (w window) make() (x, y0 []float64, sigma float64) {
	x = make([]float64, w.n)
	y0 = make([]float64, w.n)
	xmid := 0.5 * (w.x0 + w.x1)
	for i := range x {
		x[i] = w.x0 + (w.x1-w.x0)*float64(i)/float64(w.n-1)
		u := x[i] - xmid
		y0[i] = w.baseline[0] + w.baseline[1]*u + w.baseline[2]*u*u
	}
	peak := 0.0
	for _, l := range w.lines {
		s, g := voigt.SigmaFromFWHM(l.GaussFWHM), voigt.GammaFromFWHM(l.LorentzFWHM)
		peak = max(peak, l.Area*voigt.Profile(0, s, g))
		for i := range x {
			y0[i] += l.Area * voigt.Profile(x[i]-l.Center, s, g)
		}
	}
	return x, y0, peak / w.snr
}

// noisy adds seeded Gaussian noise of standard deviation sigma.
func noisy(rng *rand.Rand, y0 []float64, sigma float64, y []float64) {
	for i := range y0 {
		y[i] = y0[i] + sigma*rng.NormFloat64()
	}
}

func constSigma(n int, s float64) []float64 {
	out := make([]float64, n)
	for i := range out {
		out[i] = s
	}
	return out
}

// halpha is an Hα-like window: Gaussian FWHM 0.02 nm (instrument +
// Doppler, known), Lorentzian (Stark) FWHM 0.05 nm, 150 pixels over
// 0.6 nm, sloping baseline, peak SNR 100.
var halpha = window{
	x0: 655.98, x1: 656.58, n: 150,
	lines:    []Line{{Center: 656.279, Area: 2.0, GaussFWHM: 0.02, LorentzFWHM: 0.05, FixGauss: true}},
	baseline: [3]float64{5, 3, 0},
	snr:      100,
}

// start returns deliberately offset start values for a true line.
func start(l Line) Line {
	l.Center += 0.004
	l.Area *= 0.7
	l.LorentzFWHM *= 0.6
	if !l.FixGauss {
		l.GaussFWHM *= 1.3
	}
	return l
}

func TestFitRecoversLorentzian(t *testing.T) {
	t.Parallel()
	rng := rand.New(rand.NewPCG(1, 2))
	x, y0, s := halpha.make()
	y := make([]float64, len(x))
	noisy(rng, y0, s, y)
	truth := halpha.lines[0]
	p := &Problem{X: x, Y: y, Sigma: constSigma(len(x), s), SigmaAbsolute: true,
		Lines: []Line{start(truth)}, BaselineOrder: 1}
	var res Result
	if err := NewFitter(300, 4).Fit(&res, p); err != nil {
		t.Fatalf("Fit: %v (status %v)", err, res.Status)
	}
	l := res.Lines[0]
	t.Logf("f_L = %.5f ± %.5f nm (true %.5f), area %.4f ± %.4f, centre %.6f ± %.6f, χ²_red %.3f, %d iterations",
		l.LorentzFWHM, l.LorentzFWHMErr, truth.LorentzFWHM, l.Area, l.AreaErr, l.Center, l.CenterErr, res.RedChi2, res.Iterations)
	if d := math.Abs(l.LorentzFWHM-truth.LorentzFWHM) / truth.LorentzFWHM; d > 0.02 {
		t.Errorf("f_L = %.5f, true %.5f: relative deviation %.3f > 2 %%", l.LorentzFWHM, truth.LorentzFWHM, d)
	}
	for _, c := range []struct {
		name            string
		got, err, truth float64
	}{
		{"centre", l.Center, l.CenterErr, truth.Center},
		{"area", l.Area, l.AreaErr, truth.Area},
		{"f_L", l.LorentzFWHM, l.LorentzFWHMErr, truth.LorentzFWHM},
		{"b0", res.Baseline[0], res.BaselineErr[0], halpha.baseline[0]},
		{"b1", res.Baseline[1], res.BaselineErr[1], halpha.baseline[1]},
	} {
		if math.Abs(c.got-c.truth) > 4*c.err {
			t.Errorf("%s = %g ± %g, true %g: more than 4σ off", c.name, c.got, c.err, c.truth)
		}
	}
	if res.ErrorsScaled {
		t.Error("ErrorsScaled with absolute sigma")
	}
	if res.DOF != len(x)-5 {
		t.Errorf("DOF = %d, want %d", res.DOF, len(x)-5)
	}
	// Derived quantities: Olivero–Longbothum width and peak height.
	if want := voigt.OliveroFWHM(l.GaussFWHM, l.LorentzFWHM); l.VoigtFWHM != want {
		t.Errorf("VoigtFWHM = %g, want %g", l.VoigtFWHM, want)
	}
	if want := l.Area * voigt.Profile(0, voigt.SigmaFromFWHM(l.GaussFWHM), voigt.GammaFromFWHM(l.LorentzFWHM)); math.Abs(l.Peak-want) > 1e-12*want {
		t.Errorf("Peak = %g, want %g", l.Peak, want)
	}
	// Residuals are y − model, with Σ(r/σ)² = χ².
	var chi2 float64
	for _, r := range res.Residuals {
		chi2 += (r / s) * (r / s)
	}
	if math.Abs(chi2-res.Chi2) > 1e-9*res.Chi2 {
		t.Errorf("Σ(r/σ)² = %g, Chi2 = %g", chi2, res.Chi2)
	}
}

// TestFitCoverage checks by Monte Carlo that the reported 1σ errors of the
// Lorentzian FWHM and of the area cover the truth in 68 % ± 5 % of 400
// seeded noise draws (binomial standard deviation of the fraction 2.3 %),
// for absolute σ and for σ unknown (errors scaled by √χ²_red).
func TestFitCoverage(t *testing.T) {
	t.Parallel()
	if testing.Short() {
		t.Skip("Monte Carlo")
	}
	for _, absolute := range []bool{true, false} {
		rng := rand.New(rand.NewPCG(1, 2))
		x, y0, s := halpha.make()
		y := make([]float64, len(x))
		truth := halpha.lines[0]
		p := &Problem{X: x, Y: y, BaselineOrder: 1, Lines: []Line{start(truth)}}
		if absolute {
			p.Sigma, p.SigmaAbsolute = constSigma(len(x), s), true
		}
		f := NewFitter(len(x), 1)
		var res Result
		const draws = 400
		inL, inA, failed := 0, 0, 0
		for range draws {
			noisy(rng, y0, s, y)
			if err := f.Fit(&res, p); err != nil {
				failed++
				continue
			}
			l := res.Lines[0]
			if math.Abs(l.LorentzFWHM-truth.LorentzFWHM) <= l.LorentzFWHMErr {
				inL++
			}
			if math.Abs(l.Area-truth.Area) <= l.AreaErr {
				inA++
			}
		}
		fl, fa := float64(inL)/draws, float64(inA)/draws
		t.Logf("absolute σ %v: coverage f_L %.3f, area %.3f, failed fits %d", absolute, fl, fa, failed)
		if failed > 0 {
			t.Errorf("absolute σ %v: %d of %d fits failed", absolute, failed, draws)
		}
		for _, c := range []struct {
			name string
			frac float64
		}{{"f_L", fl}, {"area", fa}} {
			if math.Abs(c.frac-0.6827) > 0.05 {
				t.Errorf("absolute σ %v: 1σ coverage of %s = %.3f, want 0.68 ± 0.05", absolute, c.name, c.frac)
			}
		}
	}
}

// TestFitOverlapping fits two blended lines (separation 0.8 of the Voigt
// FWHM) with a shared, fixed Gaussian width, and a second case with a
// shared free Gaussian width.
func TestFitOverlapping(t *testing.T) {
	t.Parallel()
	for _, fixG := range []bool{true, false} {
		w := window{
			x0: 486.0, x1: 486.3, n: 200,
			lines: []Line{
				{Center: 486.135, Area: 1.5, GaussFWHM: 0.012, LorentzFWHM: 0.020, FixGauss: fixG},
				{Center: 486.160, Area: 0.8, GaussFWHM: 0.012, LorentzFWHM: 0.030, FixGauss: fixG},
			},
			baseline: [3]float64{2, -1, 40},
			snr:      300,
		}
		rng := rand.New(rand.NewPCG(1, 2))
		x, y0, s := w.make()
		y := make([]float64, len(x))
		noisy(rng, y0, s, y)
		p := &Problem{X: x, Y: y, Sigma: constSigma(len(x), s), SigmaAbsolute: true,
			Lines: []Line{start(w.lines[0]), start(w.lines[1])}, BaselineOrder: 2, SharedGauss: true}
		p.Lines[1].Center -= 0.008
		var res Result
		if err := NewFitter(300, 4).Fit(&res, p); err != nil {
			t.Fatalf("fixG %v: Fit: %v", fixG, err)
		}
		t.Logf("fixG %v: %d iterations, χ²_red %.3f", fixG, res.Iterations, res.RedChi2)
		for k, truth := range w.lines {
			l := res.Lines[k]
			t.Logf("  line %d: c %.5f ± %.5f, A %.4f ± %.4f, f_G %.5f ± %.5f, f_L %.5f ± %.5f", k,
				l.Center, l.CenterErr, l.Area, l.AreaErr, l.GaussFWHM, l.GaussFWHMErr, l.LorentzFWHM, l.LorentzFWHMErr)
			for _, c := range []struct {
				name            string
				got, err, truth float64
			}{
				{"centre", l.Center, l.CenterErr, truth.Center},
				{"area", l.Area, l.AreaErr, truth.Area},
				{"f_L", l.LorentzFWHM, l.LorentzFWHMErr, truth.LorentzFWHM},
				{"f_G", l.GaussFWHM, l.GaussFWHMErr, truth.GaussFWHM},
			} {
				if c.err == 0 && c.name == "f_G" {
					if c.got != c.truth {
						t.Errorf("fixed f_G changed to %g", c.got)
					}
					continue
				}
				if !(math.Abs(c.got-c.truth) <= 4*c.err) {
					t.Errorf("fixG %v line %d: %s = %g ± %g, true %g: more than 4σ off", fixG, k, c.name, c.got, c.err, c.truth)
				}
			}
		}
		if res.Lines[0].GaussFWHM != res.Lines[1].GaussFWHM {
			t.Errorf("shared f_G differs: %g, %g", res.Lines[0].GaussFWHM, res.Lines[1].GaussFWHM)
		}
	}
}

// TestFitFailures checks that data-dependent failures return the sentinel
// errors rather than panicking.
func TestFitFailures(t *testing.T) {
	t.Parallel()
	x, y0, s := halpha.make()
	f := NewFitter(300, 4)
	base := func() *Problem {
		return &Problem{X: x, Y: append([]float64(nil), y0...), Lines: []Line{start(halpha.lines[0])}, BaselineOrder: 1}
	}
	_ = s
	cases := []struct {
		name   string
		mod    func(*Problem)
		want   error
		status Status
	}{
		{"zero-area line on flat data is singular", func(p *Problem) {
			for i := range p.Y {
				p.Y[i] = 3
			}
			p.Lines[0].Area = 0
		}, ErrSingular, Singular},
		{"two identical lines are singular", func(p *Problem) {
			p.Lines = append(p.Lines, p.Lines[0])
		}, ErrSingular, Singular},
		{"iteration limit", func(p *Problem) { p.MaxIter = 2 }, ErrMaxIterations, MaxIterations},
		{"NaN in data", func(p *Problem) { p.Y[7] = math.NaN() }, ErrNotFinite, NotFinite},
		{"too few points", func(p *Problem) { p.X, p.Y = p.X[:5], p.Y[:5] }, ErrTooFewPoints, TooFewPoints},
	}
	for _, c := range cases {
		p := base()
		c.mod(p)
		var res Result
		err := f.Fit(&res, p)
		if !errors.Is(err, c.want) || res.Status != c.status {
			t.Errorf("%s: Fit = %v (status %v), want %v (status %v)", c.name, err, res.Status, c.want, c.status)
		}
	}
}

func TestFitPanics(t *testing.T) {
	t.Parallel()
	x, y0, _ := halpha.make()
	f := NewFitter(len(x), 1)
	for _, c := range []struct {
		name string
		p    *Problem
	}{
		{"length mismatch", &Problem{X: x, Y: y0[:10], Lines: halpha.lines}},
		{"sigma length", &Problem{X: x, Y: y0, Sigma: []float64{1}, Lines: halpha.lines}},
		{"no lines", &Problem{X: x, Y: y0}},
		{"too many lines", &Problem{X: x, Y: y0, Lines: []Line{halpha.lines[0], halpha.lines[0]}}},
		{"baseline order", &Problem{X: x, Y: y0, Lines: halpha.lines, BaselineOrder: 3}},
		{"negative width", &Problem{X: x, Y: y0, Lines: []Line{{Center: 656.3, Area: 1, GaussFWHM: -1}}}},
		{"zero sigma", &Problem{X: x, Y: y0, Sigma: make([]float64, len(x)), Lines: halpha.lines}},
	} {
		func() {
			defer func() {
				r := recover()
				if s, ok := r.(string); !ok || !strings.HasPrefix(s, "linefit: ") {
					t.Errorf("%s: recovered %v, want a panic with prefix \"linefit: \"", c.name, r)
				}
			}()
			var res Result
			f.Fit(&res, c.p)
		}()
	}
}

// TestJacobian compares the analytic Jacobian with central differences
// of the model, for free, fixed and shared Gaussian widths.
func TestJacobian(t *testing.T) {
	t.Parallel()
	x, y0, _ := halpha.make()
	for _, shared := range []bool{false, true} {
		lines := []Line{
			{Center: 656.27, Area: 2, GaussFWHM: 0.02, LorentzFWHM: 0.05},
			{Center: 656.31, Area: 1, GaussFWHM: 0.03, LorentzFWHM: 0.01, FixGauss: true},
		}
		p := &Problem{X: x, Y: y0, Lines: lines, BaselineOrder: 2, SharedGauss: shared}
		f := NewFitter(len(x), 2)
		f.setup(p)
		np, n := f.np, len(x)
		f.theta[f.pb+1], f.theta[f.pb+2] = 0.3, -0.2
		th := append([]float64(nil), f.theta[:np]...)
		f.eval(p, th, f.model, f.jac)
		m1, m2 := make([]float64, n), make([]float64, n)
		jscr := make([]float64, n*np)
		for j := range np {
			h := 1e-6 * math.Max(math.Abs(th[j]), 0.01)
			tp := append([]float64(nil), th...)
			tp[j] += h
			f.eval(p, tp, m1, jscr)
			tp[j] -= 2 * h
			f.eval(p, tp, m2, jscr)
			for i := range n {
				fd := (m1[i] - m2[i]) / (2 * h)
				if d := math.Abs(fd - f.jac[j*n+i]); d > 1e-6*(math.Abs(fd)+1) {
					t.Errorf("shared %v: ∂f/∂θ_%d at x=%g: analytic %g, finite difference %g", shared, j, x[i], f.jac[j*n+i], fd)
					break
				}
			}
		}
	}
}

// TestFitNoAllocs verifies that a repeated Fit with a reused Result
// performs no allocation, LM loop included.
func TestFitNoAllocs(t *testing.T) {
	x, y0, s := halpha.make()
	rng := rand.New(rand.NewPCG(1, 2))
	y := make([]float64, len(x))
	noisy(rng, y0, s, y)
	p := &Problem{X: x, Y: y, Sigma: constSigma(len(x), s), SigmaAbsolute: true,
		Lines: []Line{start(halpha.lines[0])}, BaselineOrder: 1}
	f := NewFitter(len(x), 1)
	var res Result
	if err := f.Fit(&res, p); err != nil {
		t.Fatal(err)
	}
	if a := testing.AllocsPerRun(50, func() { _ = f.Fit(&res, p) }); a != 0 {
		t.Errorf("Fit allocates %v times per call, want 0", a)
	}
}

// TestFitterWorkspaceOnDemand: a Fitter made for wide windows allocates
// its per-point workspace (two Jacobians of maxPoints × parameters) only
// as windows need it, and fits exactly as one made to measure.
func TestFitterWorkspaceOnDemand(t *testing.T) {
	var before, after runtime.MemStats
	runtime.ReadMemStats(&before)
	wide := NewFitter(8192, 8)
	runtime.ReadMemStats(&after)
	if b := after.TotalAlloc - before.TotalAlloc; b > 64<<10 {
		t.Errorf("NewFitter(8192, 8) allocates %d bytes up front, want ≤ 64 KiB", b)
	}
	x, y0, s := halpha.make()
	y := make([]float64, len(x))
	noisy(rand.New(rand.NewPCG(5, 6)), y0, s, y)
	p := &Problem{X: x, Y: y, Sigma: constSigma(len(x), s), SigmaAbsolute: true,
		Lines: []Line{start(halpha.lines[0])}, BaselineOrder: 1}
	var got, want Result
	if err := wide.Fit(&got, p); err != nil {
		t.Fatal(err)
	}
	if err := NewFitter(len(x), 1).Fit(&want, p); err != nil {
		t.Fatal(err)
	}
	if got.Chi2 != want.Chi2 || got.Lines[0].Area != want.Lines[0].Area || got.Lines[0].AreaErr != want.Lines[0].AreaErr {
		t.Errorf("wide fitter: χ² %v, area %v ± %v; made to measure: %v, %v ± %v",
			got.Chi2, got.Lines[0].Area, got.Lines[0].AreaErr, want.Chi2, want.Lines[0].Area, want.Lines[0].AreaErr)
	}
}

func BenchmarkFitWindow(b *testing.B) {
	for _, bc := range []struct {
		name string
		w    window
		base int
	}{
		{"1line_60px", window{x0: 656.18, x1: 656.38, n: 60, lines: halpha.lines, baseline: [3]float64{5, 3, 0}, snr: 100}, 0},
		{"1line_150px", halpha, 1},
		{"2lines_150px", window{x0: 486.0, x1: 486.3, n: 150, lines: []Line{
			{Center: 486.135, Area: 1.5, GaussFWHM: 0.012, LorentzFWHM: 0.020, FixGauss: true},
			{Center: 486.180, Area: 0.8, GaussFWHM: 0.012, LorentzFWHM: 0.030, FixGauss: true},
		}, baseline: [3]float64{2, -1, 0}, snr: 100}, 1},
		{"4lines_300px_freeG", window{x0: 396.8, x1: 397.4, n: 300, lines: []Line{
			{Center: 396.90, Area: 1, GaussFWHM: 0.015, LorentzFWHM: 0.02},
			{Center: 397.01, Area: 2, GaussFWHM: 0.015, LorentzFWHM: 0.04},
			{Center: 397.15, Area: 0.5, GaussFWHM: 0.015, LorentzFWHM: 0.01},
			{Center: 397.28, Area: 1, GaussFWHM: 0.015, LorentzFWHM: 0.03},
		}, baseline: [3]float64{1, 0.5, 2}, snr: 100}, 2},
	} {
		b.Run(bc.name, func(b *testing.B) {
			rng := rand.New(rand.NewPCG(1, 2))
			x, y0, s := bc.w.make()
			y := make([]float64, len(x))
			noisy(rng, y0, s, y)
			lines := make([]Line, len(bc.w.lines))
			for i, l := range bc.w.lines {
				lines[i] = start(l)
			}
			p := &Problem{X: x, Y: y, Sigma: constSigma(len(x), s), SigmaAbsolute: true, Lines: lines, BaselineOrder: bc.base}
			f := NewFitter(len(x), len(lines))
			var res Result
			if err := f.Fit(&res, p); err != nil {
				b.Fatal(err)
			}
			b.ReportAllocs()
			iters := 0
			for b.Loop() {
				_ = f.Fit(&res, p)
				iters += res.Iterations
			}
			b.ReportMetric(float64(iters)/float64(b.N), "iter/op")
		})
	}
}

// TestDot2MatchesDot: dot2 is two dot products with dot's sums in dot's
// order, bit for bit, for every length (the four-wide loop and its tail)
// and values of many magnitudes, signs and specials.
func TestDot2MatchesDot(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 5))
	val := func() float64 {
		switch rng.IntN(20) {
		case 0:
			return 0
		case 1:
			return math.Copysign(0, -1)
		case 2:
			return math.SmallestNonzeroFloat64 * float64(rng.IntN(9))
		case 3:
			return math.Inf(1 - 2*rng.IntN(2))
		case 4:
			return math.NaN()
		}
		return (rng.Float64() - 0.5) * math.Pow(10, float64(rng.IntN(40)-20))
	}
	for trial := range 4000 {
		n := trial % 41
		a, b, c := make([]float64, n), make([]float64, n+rng.IntN(3)), make([]float64, n+rng.IntN(3))
		for _, s := range [][]float64{a, b, c} {
			for i := range s {
				s[i] = val()
			}
		}
		if trial%3 == 0 { // no specials: finite sums with cancellation
			for _, s := range [][]float64{a, b, c} {
				for i := range s {
					s[i] = (rng.Float64() - 0.5) * math.Pow(10, float64(rng.IntN(12)-6))
				}
			}
		}
		gb, gc := dot2(a, b, c)
		wb, wc := dot(a, b), dot(a, c)
		if math.Float64bits(gb) != math.Float64bits(wb) && !(math.IsNaN(gb) && math.IsNaN(wb)) ||
			math.Float64bits(gc) != math.Float64bits(wc) && !(math.IsNaN(gc) && math.IsNaN(wc)) {
			t.Fatalf("n=%d: dot2 = (%v, %v), dot = (%v, %v)", n, gb, gc, wb, wc)
		}
	}
}

// TestNormalBaselineBlockKept: the baseline block of JᵀWJ that normal
// keeps from a fit's first call is, bit for bit, what it would compute
// at the solution, for baselines of order 0–2, weighted or not, and for
// a second fit of another window with the same Fitter (the kept block
// must be that window's).
func TestNormalBaselineBlockKept(t *testing.T) {
	f := NewFitter(400, 2)
	rng := rand.New(rand.NewPCG(7, 9))
	for trial, w := range []window{halpha, halpha, halpha,
		{x0: 485.9, x1: 486.5, n: 90, lines: []Line{{Center: 486.13, Area: 1, GaussFWHM: 0.03, LorentzFWHM: 0.02}}, baseline: [3]float64{2, -1, 4}, snr: 300},
		{x0: 433.5, x1: 434.6, n: 333, lines: []Line{{Center: 434.0, Area: 1, GaussFWHM: 0.05, LorentzFWHM: 0.01}, {Center: 434.2, Area: 0.3, GaussFWHM: 0.05, LorentzFWHM: 0.01}}, baseline: [3]float64{1, 0.5, 0}, snr: 50},
	} {
		x, y0, s := w.make()
		y := make([]float64, len(x))
		noisy(rng, y0, s, y)
		var lines []Line
		for _, l := range w.lines {
			lines = append(lines, start(l))
		}
		p := &Problem{X: x, Y: y, Lines: lines, BaselineOrder: trial % 3}
		if trial%2 == 0 {
			p.Sigma = constSigma(len(x), s*(1+0.1*float64(trial)))
		}
		var res Result
		if err := f.Fit(&res, p); err != nil {
			t.Fatalf("trial %d: %v", trial, err)
		}
		np := f.np
		kept := append([]float64(nil), f.ata[:np*np]...)
		f.baseDone = false
		f.normal(p, f.model, f.jac)
		for i, v := range f.ata[:np*np] {
			if math.Float64bits(v) != math.Float64bits(kept[i]) {
				t.Fatalf("trial %d: JᵀWJ[%d][%d] = %v with the kept baseline block, %v computed", trial, i/np, i%np, kept[i], v)
			}
		}
		if res.Iterations < 2 {
			t.Fatalf("trial %d: %d iterations: the kept block was not used", trial, res.Iterations)
		}
	}
}
