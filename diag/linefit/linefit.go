package linefit

import (
	"errors"
	"fmt"
	"math"

	"glowlog/diag/voigt"
)

// Errors returned by Fit for data-dependent failures. The Result is still
// filled with the last parameter values; see Result.Status.
var (
	// ErrMaxIterations: the iteration limit was reached before convergence.
	ErrMaxIterations = errors.New("linefit: iteration limit reached before convergence")
	// ErrSingular: the normal matrix JᵀWJ is numerically singular at the
	// solution, so some parameters are not determined by the data (for
	// example a line of zero area, or two lines at one position).
	ErrSingular = errors.New("linefit: singular normal matrix, parameters not determined")
	// ErrNoProgress: the damping parameter grew without bound before any
	// convergence test was met.
	ErrNoProgress = errors.New("linefit: no progress, damping parameter overflow")
	// ErrNotFinite: the data or the model at the start values is NaN or
	// infinite.
	ErrNotFinite = errors.New("linefit: data or model not finite")
	// ErrTooFewPoints: the window has no more points than free parameters.
	ErrTooFewPoints = errors.New("linefit: fewer points than free parameters plus one")
)

// Status reports how a fit ended.
type Status int

const (
	// Converged: a convergence test was met.
	Converged Status = iota
	// MaxIterations: the iteration limit was reached (ErrMaxIterations).
	MaxIterations
	// Singular: the normal matrix is singular at the end (ErrSingular).
	Singular
	// NoProgress: the damping parameter overflowed (ErrNoProgress).
	NoProgress
	// NotFinite: non-finite data or model (ErrNotFinite).
	NotFinite
	// TooFewPoints: dof ≤ 0 (ErrTooFewPoints).
	TooFewPoints
)

func (s Status) String() string {
	switch s {
	case Converged:
		return "converged"
	case MaxIterations:
		return "max iterations"
	case Singular:
		return "singular"
	case NoProgress:
		return "no progress"
	case NotFinite:
		return "not finite"
	case TooFewPoints:
		return "too few points"
	}
	return fmt.Sprintf("Status(%d)", int(s))
}

// Line holds the start values and constraints of one Voigt line. Widths are
// full widths at half maximum in the unit of x.
type Line struct {
	Center      float64 // start value of the centre c, unit of x
	Area        float64 // start value of the area A, unit of y × unit of x
	GaussFWHM   float64 // start value, or fixed value if FixGauss, of f_G ≥ 0
	LorentzFWHM float64 // start value of f_L ≥ 0
	// FixGauss holds GaussFWHM fixed (known instrument and Doppler width).
	FixGauss bool
}

// Problem is one spectral window to fit.
type Problem struct {
	// X and Y are the abscissae (for example wavelength in nm, sorted or
	// not) and the measured values (for example counts). Same length.
	X, Y []float64
	// Sigma holds the 1σ uncertainty of each Y (for example from a Poisson
	// plus read-noise model), unit of y; nil means unit weights. All
	// entries must be positive.
	Sigma []float64
	// SigmaAbsolute states that Sigma are absolute 1σ errors: parameter
	// errors then come from (JᵀWJ)⁻¹ unscaled. Otherwise (always when
	// Sigma is nil) they are multiplied by √(χ²/dof); Result.ErrorsScaled
	// reports which.
	SigmaAbsolute bool
	// Lines are the K ≥ 1 lines of the window.
	Lines []Line
	// BaselineOrder is the order 0, 1 or 2 of the polynomial baseline in
	// (x − x_mid).
	BaselineOrder int
	// SharedGauss makes all lines share one Gaussian FWHM, started from
	// (and, if Lines[0].FixGauss, fixed at) Lines[0].GaussFWHM; the
	// GaussFWHM and FixGauss of the other lines are then ignored.
	SharedGauss bool
	// MaxIter limits the number of Levenberg–Marquardt iterations
	// (trial steps); 0 means 200.
	MaxIter int
	// PointSampled makes the model the profile sampled at each X instead
	// of its mean over the point's pixel (see pixel.go). Use it only for
	// data that really are point values (a computed curve); detector
	// spectra are pixel integrals, and sampling narrow lines at pixel
	// centres biases their widths (TestNarrowLinePixelBias).
	PointSampled bool
	// StopDrop, when > 0, ends the fit as converged before evaluating a
	// trial step of little damping (μ ≤ its start value) whose predicted
	// reduction of χ² is below StopDrop times the reduced χ² (χ²/(n − p)):
	// such a step moves the parameters by about √StopDrop of their 1σ
	// or less. 0 iterates to the relative tests alone (1e-10).
	StopDrop float64
}

// LineResult holds the fitted parameters of one line and their 1σ errors
// (zero for fixed parameters). Widths are FWHMs in the unit of x.
type LineResult struct {
	Center, CenterErr           float64
	Area, AreaErr               float64
	GaussFWHM, GaussFWHMErr     float64
	LorentzFWHM, LorentzFWHMErr float64
	// LorentzAtBound reports that f_L ended on its lower bound (0, or the
	// tiny positive floor used when f_G is fixed at 0); its error is then
	// computed from the curvature as if unconstrained and is only
	// indicative.
	LorentzAtBound bool
	// VoigtFWHM is the total FWHM by Olivero & Longbothum (1977),
	// f_V = 0.5346 f_L + √(0.2166 f_L² + f_G²), with its error propagated
	// through the covariance.
	VoigtFWHM, VoigtFWHMErr float64
	// Peak is the line's peak height above the baseline, A V(0; σ, γ),
	// unit of y, with its propagated error.
	Peak, PeakErr float64
}

// Result is the outcome of Fit. Its slices are reused by later calls when
// their capacity suffices.
type Result struct {
	Lines []LineResult
	// XMid is the middle (min + max)/2 of the window's x values.
	XMid float64
	// Baseline[j] is the coefficient b_j of (x − XMid)^j, j ≤ order; the
	// higher entries are zero. BaselineErr holds the 1σ errors.
	Baseline, BaselineErr [3]float64
	// Params and Errors are the free parameters and their 1σ errors in the
	// internal order: for each line c_k − XMid, A_k, f_G,k (if free and
	// not shared), f_L,k; then the shared f_G (if free); then the baseline
	// coefficients of u^j, u = (x − XMid)/h with h the half width of the
	// window.
	Params, Errors []float64
	// Covariance is the len(Params)² row-major covariance of Params,
	// scaled like Errors; NaN if Status is Singular.
	Covariance []float64
	// Residuals[i] = Y[i] − f(X[i]) at the solution (unweighted).
	Residuals []float64
	// Chi2 = Σ ((Y − f)/σ)², DOF = n − len(Params), RedChi2 = Chi2/DOF.
	Chi2    float64
	DOF     int
	RedChi2 float64
	// ErrorsScaled reports that errors were multiplied by √RedChi2.
	ErrorsScaled bool
	// Iterations counts trial steps.
	Iterations int
	Status     Status
}

// Fitter holds the workspace for fits of up to MaxPoints points and
// MaxLines lines. A Fitter is not safe for concurrent use; use one per
// goroutine.
type Fitter struct {
	maxN, maxK, maxP int

	// parameter layout for the current problem
	np, k               int
	pc, pa, pg, pl      []int // per line; pg = −1 if not free per line
	psg                 int   // shared Gaussian index or −1
	pb                  int   // first baseline index
	nb                  int   // number of baseline coefficients
	lorMin              []float64
	gMin                float64
	xmid, h             float64
	sharedG             bool
	fixedG              []float64 // per line Gaussian FWHM when fixed
	theta, trial, delta []float64
	grad, dscale        []float64
	active              []bool
	jac, jacT           []float64
	model, modelT       []float64
	wt                  []float64 // 1/σ_i, or 1 for unit weights
	rw                  []float64 // weighted residuals
	ata, fac            []float64
	col                 []float64

	// pixel integration (pixel.go)
	pxLo, pxW []float64 // lower edge and width of each point's pixel
	um, uq    []float64 // pixel means of u and u² (baseline basis)
	order     []int     // scratch for pixelEdges
	nodes     []int     // per line: Gauss–Legendre nodes of the last evaluation
	pixMax    float64   // widest pixel of the window

	// The baseline columns of the Jacobian are the same at every
	// parameter vector of a fit: their block of JᵀWJ, kept from the
	// fit's first normal (baseDone, reset by setup).
	baseATA  [3][3]float64
	baseDone bool
}

// NewFitter returns a Fitter for windows of at most maxPoints points and
// maxLines lines with baselines up to order 2. It panics if either is < 1.
func NewFitter(maxPoints, maxLines int) *Fitter {
	if maxPoints < 1 || maxLines < 1 {
		panic("linefit: NewFitter needs maxPoints ≥ 1 and maxLines ≥ 1")
	}
	p := 4*maxLines + 1 + 3
	f := &Fitter{maxN: maxPoints, maxK: maxLines, maxP: p}
	f.pc = make([]int, maxLines)
	f.pa = make([]int, maxLines)
	f.pg = make([]int, maxLines)
	f.pl = make([]int, maxLines)
	f.lorMin = make([]float64, maxLines)
	f.fixedG = make([]float64, maxLines)
	f.theta = make([]float64, p)
	f.trial = make([]float64, p)
	f.delta = make([]float64, p)
	f.grad = make([]float64, p)
	f.dscale = make([]float64, p)
	f.active = make([]bool, p)
	f.col = make([]float64, p)
	f.ata = make([]float64, p*p)
	f.fac = make([]float64, p*p)
	f.nodes = make([]int, maxLines)
	return f
}

// sqrt2 is √2.
const sqrt2 = math.Sqrt2

// growPoints makes the per-point workspace (the Jacobian above all:
// maxPoints × maxP values, several MB for wide windows) hold n points. It
// grows with the largest window fitted so far rather than being made for
// maxPoints up front, so that a Fitter made for wide windows costs nothing
// until it fits one; repeated fits of windows no larger allocate nothing.
func (f *Fitter) growPoints(n int) {
	if len(f.model) >= n {
		return
	}
	f.jac = make([]float64, n*f.maxP)
	f.jacT = make([]float64, n*f.maxP)
	f.model = make([]float64, n)
	f.modelT = make([]float64, n)
	f.wt = make([]float64, n)
	f.rw = make([]float64, n)
	f.pxLo = make([]float64, n)
	f.pxW = make([]float64, n)
	f.um = make([]float64, n)
	f.uq = make([]float64, n)
	f.order = make([]int, n)
}

// Convergence and damping constants.
const (
	ftol   = 1e-10 // relative reduction of χ² (actual and predicted)
	xtol   = 1e-10 // relative scaled step length
	gtol   = 1e-10 // cosine between residual and any Jacobian column
	mu0    = 1e-3  // initial damping, relative to the scaled diagonal
	muMax  = 1e16  // damping overflow, ErrNoProgress
	pivTol = 1e-13 // Cholesky pivot tolerance relative to unit diagonal
)

// Fit fits the problem p and writes the outcome into dst, reusing dst's
// slices when they are large enough (so that repeated fits allocate
// nothing).
//
// Model: each point is the mean of baseline plus Voigt lines over its
// pixel, the pixel edges lying half-way between neighbouring X (see
// pixel.go; p.PointSampled samples at X instead).
//
// Method: Levenberg–Marquardt (Levenberg 1944, Marquardt 1963) on the
// weighted residuals with analytic Jacobian from voigt.ProfileDeriv. Each
// trial step solves
//
//	(Â + μ I) δ̂ = ĝ,   Â = S JᵀWJ S,  ĝ = S JᵀW r,  δ = S δ̂,
//
// with S = diag(d_j^(−1/2)), d_j the running maximum of the diagonal of
// JᵀWJ (Moré 1978), by a Cholesky factorisation in preallocated storage.
// The damping μ follows the gain-ratio rule of Madsen, Nielsen & Tingleff
// (2004): after an accepted step (ρ > 0) μ ← μ·max(1/3, 1 − (2ρ − 1)³),
// after a rejected one μ ← μν, ν ← 2ν.
//
// Constraints: f_L ≥ 0 is kept by projection onto the bound with an
// active set (a Lorentzian width on its bound whose gradient points
// outward is held for that step); a free f_G is kept ≥ 1e-9 × window
// width; when f_G is fixed at 0 (pure Lorentzian) f_L is kept at least
// 1e-9 × window width so that the profile stays finite.
//
// Convergence: on an accepted step with actual and predicted relative
// reductions of χ² both ≤ 1e-10, or a scaled step ≤ 1e-10 of the scaled
// parameter vector, or all cosines |ĝ_j|/√(χ²) ≤ 1e-10.
//
// Errors: the covariance is (JᵀWJ)⁻¹ at the solution (without damping),
// multiplied by χ²/dof unless p.SigmaAbsolute and p.Sigma ≠ nil.
//
// Fit returns nil, ErrMaxIterations, ErrSingular, ErrNoProgress,
// ErrNotFinite or ErrTooFewPoints; dst.Status matches. It panics (with a
// "linefit: " prefix) on misuse: mismatched slice lengths, no lines, more
// points or lines than the Fitter was made for, a baseline order outside
// 0–2, negative start widths, or a non-positive or NaN sigma.
func (f *Fitter) Fit(dst *Result, p *Problem) error {
	n := len(p.X)
	k := len(p.Lines)
	switch {
	case len(p.Y) != n:
		panic("linefit: len(Y) != len(X)")
	case p.Sigma != nil && len(p.Sigma) != n:
		panic("linefit: len(Sigma) != len(X)")
	case k == 0:
		panic("linefit: no lines")
	case n > f.maxN:
		panic("linefit: more points than the Fitter was made for")
	case k > f.maxK:
		panic("linefit: more lines than the Fitter was made for")
	case p.BaselineOrder < 0 || p.BaselineOrder > 2:
		panic("linefit: baseline order must be 0, 1 or 2")
	}
	for _, l := range p.Lines {
		if !(l.GaussFWHM >= 0) || !(l.LorentzFWHM >= 0) {
			panic("linefit: negative or NaN start width")
		}
	}
	for _, s := range p.Sigma {
		if !(s > 0) || math.IsInf(s, 0) {
			panic("linefit: sigma must be positive and finite")
		}
	}
	f.setup(p)
	np := f.np
	dst.prepare(k, np, n)
	dst.Status, dst.Iterations = Converged, 0

	if n <= np {
		return f.finish(dst, p, TooFewPoints, ErrTooFewPoints)
	}
	for i := range n {
		if math.IsNaN(p.X[i]) || math.IsInf(p.X[i], 0) || math.IsNaN(p.Y[i]) || math.IsInf(p.Y[i], 0) {
			return f.finish(dst, p, NotFinite, ErrNotFinite)
		}
	}
	maxIter := p.MaxIter
	if maxIter <= 0 {
		maxIter = 200
	}

	chi2 := f.eval(p, f.theta, f.model, f.jac)
	if math.IsNaN(chi2) || math.IsInf(chi2, 0) {
		return f.finish(dst, p, NotFinite, ErrNotFinite)
	}
	f.normal(p, f.model, f.jac)
	for j := range np {
		f.dscale[j] = f.ata[j*np+j]
	}
	mu, nu := mu0, 2.0
	status, err := MaxIterations, ErrMaxIterations
	iter := 0
loop:
	for iter < maxIter {
		// Gradient test on the current point.
		if f.gradientSmall(chi2) {
			status, err = Converged, nil
			break
		}
		iter++
		if !f.solveDamped(mu) {
			mu, nu = mu*nu, 2*nu
			if mu > muMax {
				status, err = NoProgress, ErrNoProgress
				break
			}
			continue
		}
		// Trial point, projected onto the bounds.
		var stepN, thetaN, pred float64
		for j := range np {
			t := f.theta[j] + f.delta[j]
			f.trial[j] = t
		}
		f.project(f.trial)
		for j := range np {
			d := f.trial[j] - f.theta[j]
			f.delta[j] = d
			stepN += f.dscale[j] * d * d
			thetaN += f.dscale[j] * f.theta[j] * f.theta[j]
		}
		// Predicted reduction of χ² by the quadratic model,
		// δᵀ(2g − Aδ).
		for a := range np {
			var s float64
			for b := range np {
				s += f.ata[a*np+b] * f.delta[b]
			}
			pred += f.delta[a] * (2*f.grad[a] - s)
		}
		if math.Sqrt(stepN) <= xtol*(math.Sqrt(thetaN)+xtol) {
			status, err = Converged, nil
			break
		}
		if p.StopDrop > 0 && mu <= mu0 && pred >= 0 && pred < p.StopDrop*chi2/float64(n-np) {
			status, err = Converged, nil
			break
		}
		chi2T := f.eval(p, f.trial, f.modelT, f.jacT)
		actual := chi2 - chi2T
		rho := actual / pred
		if !(pred > 0) || math.IsNaN(chi2T) || math.IsInf(chi2T, 0) || !(rho > 0) {
			mu, nu = mu*nu, 2*nu
			if mu > muMax {
				status, err = NoProgress, ErrNoProgress
				break
			}
			continue
		}
		// Accept.
		f.theta, f.trial = f.trial, f.theta
		f.model, f.modelT = f.modelT, f.model
		f.jac, f.jacT = f.jacT, f.jac
		chi2Old := chi2
		chi2 = chi2T
		f.normal(p, f.model, f.jac)
		for j := range np {
			f.dscale[j] = max(f.dscale[j], f.ata[j*np+j])
		}
		t := 2*rho - 1
		mu *= max(1.0/3, 1-t*t*t)
		nu = 2
		if actual <= ftol*chi2Old && pred <= ftol*chi2Old {
			status, err = Converged, nil
			break loop
		}
	}
	dst.Iterations = iter
	return f.finish(dst, p, status, err)
}

// setup lays out the parameter vector and its start values.
func (f *Fitter) setup(p *Problem) {
	f.growPoints(len(p.X))
	xmin, xmax := math.Inf(1), math.Inf(-1)
	for _, x := range p.X {
		xmin = min(xmin, x)
		xmax = max(xmax, x)
	}
	f.xmid = 0.5 * (xmin + xmax)
	f.h = 0.5 * (xmax - xmin)
	if !(f.h > 0) {
		f.h = 1
	}
	span := 2 * f.h
	f.gMin = 1e-9 * span
	f.sharedG = p.SharedGauss
	f.k = len(p.Lines)
	for i := range p.X {
		f.wt[i] = 1
		if p.Sigma != nil {
			f.wt[i] = 1 / p.Sigma[i]
		}
	}
	if p.PointSampled {
		copy(f.pxLo, p.X)
		clear(f.pxW[:len(p.X)])
		f.pixMax = 0
	} else {
		f.pixMax = pixelEdges(p.X, f.pxLo, f.pxW, f.order)
	}
	for i := range p.X {
		// Pixel means of u = (x − xmid)/h and u² over [ul, ur].
		ul := (f.pxLo[i] - f.xmid) / f.h
		ur := ul + f.pxW[i]/f.h
		f.um[i] = 0.5 * (ul + ur)
		f.uq[i] = (ul*ul + ul*ur + ur*ur) / 3
	}
	clear(f.nodes[:len(p.Lines)])
	f.baseDone = false
	np := 0
	f.psg = -1
	for k, l := range p.Lines {
		f.pc[k] = np
		f.theta[np] = l.Center - f.xmid
		f.pa[k] = np + 1
		f.theta[np+1] = l.Area
		np += 2
		f.pg[k] = -1
		g := l.GaussFWHM
		if p.SharedGauss {
			g = p.Lines[0].GaussFWHM
		}
		f.fixedG[k] = g
		if !p.SharedGauss && !l.FixGauss {
			f.pg[k] = np
			f.theta[np] = max(g, f.gMin)
			np++
		}
		f.pl[k] = np
		fixedZeroG := g == 0 && (p.SharedGauss && p.Lines[0].FixGauss || !p.SharedGauss && l.FixGauss)
		f.lorMin[k] = 0
		if fixedZeroG {
			f.lorMin[k] = 1e-9 * span
		}
		f.theta[np] = max(l.LorentzFWHM, f.lorMin[k])
		np++
	}
	if p.SharedGauss && !p.Lines[0].FixGauss {
		f.psg = np
		f.theta[np] = max(p.Lines[0].GaussFWHM, f.gMin)
		np++
	}
	f.pb = np
	f.nb = p.BaselineOrder + 1
	for j := range f.nb {
		f.theta[np+j] = 0
	}
	np += f.nb
	f.np = np
	// A rough baseline start: the mean of the two window ends.
	if len(p.Y) > 0 {
		f.theta[f.pb] = 0.5 * (p.Y[0] + p.Y[len(p.Y)-1])
	}
}

// project clamps widths onto their lower bounds.
func (f *Fitter) project(t []float64) {
	for k := range f.k {
		if j := f.pl[k]; t[j] < f.lorMin[k] {
			t[j] = f.lorMin[k]
		}
		if j := f.pg[k]; j >= 0 && t[j] < f.gMin {
			t[j] = f.gMin
		}
	}
	if f.psg >= 0 && t[f.psg] < f.gMin {
		t[f.psg] = f.gMin
	}
}

// widths returns f_G and f_L of line k at parameters t.
func (f *Fitter) widths(t []float64, k int) (fg, fl float64) {
	switch {
	case f.pg[k] >= 0:
		fg = t[f.pg[k]]
	case f.psg >= 0:
		fg = t[f.psg]
	default:
		fg = f.fixedG[k]
	}
	return fg, t[f.pl[k]]
}

// eval computes the model and the weighted Jacobian at t and returns χ².
// jac is column-major: jac[j*n+i] = ∂f(x_i)/∂θ_j / σ_i (σ_i = 1 for unit
// weights), so that JᵀWJ is a matrix of dot products of columns.
func (f *Fitter) eval(p *Problem, t, model, jac []float64) float64 {
	n, np := len(p.X), f.np
	model = model[:n]
	jac = jac[:n*np]
	sw := f.wt[:n]
	nb := f.nb
	b0 := jac[f.pb*n : f.pb*n+n]
	var b1, b2 []float64
	if nb > 1 {
		b1 = jac[(f.pb+1)*n : (f.pb+2)*n]
	}
	if nb > 2 {
		b2 = jac[(f.pb+2)*n : (f.pb+3)*n]
	}
	// Parameters and columns as locals of known length, so that the
	// loops below index without bounds tests (the same operations).
	um, uqs := f.um[:n], f.uq[:n]
	tb := t[f.pb : f.pb+nb]
	t0 := tb[0]
	var t1, t2 float64
	if nb > 1 {
		t1 = tb[1]
		b1 = b1[:n]
	}
	if nb > 2 {
		t2 = tb[2]
		b2 = b2[:n]
	}
	b0 = b0[:n]
	for i := range n {
		u, uq := um[i], uqs[i]
		m := t0
		b0[i] = sw[i]
		if nb > 1 {
			m += t1 * u
			b1[i] = sw[i] * u
		}
		if nb > 2 {
			m += t2 * uq
			b2[i] = sw[i] * uq
		}
		model[i] = m
	}
	pxLo, pxW := f.pxLo[:n], f.pxW[:n]
	if f.psg >= 0 {
		clear(jac[f.psg*n : f.psg*n+n])
	}
	for k := range len(p.Lines) {
		c := t[f.pc[k]] + f.xmid
		a := t[f.pa[k]]
		fg, fl := f.widths(t, k)
		sigma := fg / voigt.FWHMPerSigma
		gamma := fl / 2
		jg := f.pg[k]
		if jg < 0 {
			jg = f.psg
		}
		colC := jac[f.pc[k]*n : f.pc[k]*n+n][:n]
		colA := jac[f.pa[k]*n : f.pa[k]*n+n][:n]
		colL := jac[f.pl[k]*n : f.pl[k]*n+n][:n]
		var colG []float64
		if jg >= 0 {
			colG = jac[jg*n : jg*n+n][:n]
		}
		shared := f.psg >= 0
		aG := a / voigt.FWHMPerSigma
		// Nodes per pixel for this line; a change of tier changes the
		// model by less than intTol of the peak.
		nq := 1
		if f.pixMax > 0 {
			nq = nodesFor(voigt.OliveroFWHM(fg, fl) / f.pixMax)
		}
		f.nodes[k] = nq
		reach := coreReach(sigma, gamma, f.pixMax)
		rule := glRule[nq]
		// The line's profile evaluators: voigt.ProfileDeriv and
		// taylorMean with their divisions by σ done once.
		prof := voigt.NewDeriv(sigma, gamma)
		var tay taylor
		if nq == 2 {
			tay = newTaylor(sigma, gamma)
		}
		for i := range n {
			half := 0.5 * pxW[i]
			d := pxLo[i] + half - c
			var v, dx, ds, dgm float64
			switch {
			case nq == 1 || math.Abs(d) > reach+half:
				v, dx, ds, dgm = prof.At(d)
			case nq == 2 && math.Abs(d)+half+gamma < 50*sqrt2*sigma:
				// Wide enough for the midpoint Taylor mean (one
				// Faddeeva evaluation, the accuracy of two nodes);
				// |z| < 50 keeps the recurrences for w″ and w‴ free
				// of cancellation (near-Lorentzian shapes use the
				// nodes).
				v, dx, ds, dgm = tay.mean(d, half)
			default:
				for j, tj := range rule.t {
					vj, dxj, dsj, dgj := prof.At(d + half*tj)
					wj := rule.w[j]
					v += wj * vj
					dx += wj * dxj
					ds += wj * dsj
					dgm += wj * dgj
				}
			}
			w := sw[i]
			model[i] += a * v
			colC[i] = -a * dx * w
			colA[i] = v * w
			colL[i] = 0.5 * a * dgm * w
			if colG != nil {
				if shared {
					colG[i] += aG * ds * w
				} else {
					colG[i] = aG * ds * w
				}
			}
		}
	}
	var chi2 float64
	for i, y := range p.Y[:n] {
		r := (y - model[i]) * sw[i]
		chi2 += r * r
	}
	return chi2
}

// normal forms A = JᵀWJ (full symmetric, in f.ata) and g = JᵀW r (f.grad)
// from the weighted Jacobian columns.
func (f *Fitter) normal(p *Problem, model, jac []float64) {
	n, np := len(p.X), f.np
	ata := f.ata[:np*np]
	rw := f.rw[:n]
	for i, y := range p.Y {
		rw[i] = (y - model[i]) * f.wt[i]
	}
	for a := range np {
		ca := jac[a*n : a*n+n]
		if a >= f.pb && f.baseDone {
			// The baseline block of JᵀWJ (the last nb columns, which
			// do not depend on the parameters) as the first call of
			// this fit computed it.
			f.grad[a] = dot(ca, rw)
			for b := a; b < np; b++ {
				v := f.baseATA[a-f.pb][b-f.pb]
				ata[a*np+b], ata[b*np+a] = v, v
			}
			continue
		}
		// Two dot products per pass over ca (the gradient's and the
		// diagonal's first, then pairs of columns): each the same sums
		// in the same order as dot, twice the independent additions.
		b := a
		f.grad[a], ata[a*np+a] = dot2(ca, rw, jac[b*n:b*n+n])
		for b++; b+1 < np; b += 2 {
			v, u := dot2(ca, jac[b*n:b*n+n], jac[(b+1)*n:(b+1)*n+n])
			ata[a*np+b], ata[b*np+a] = v, v
			ata[a*np+b+1], ata[(b+1)*np+a] = u, u
		}
		if b < np {
			v := dot(ca, jac[b*n:b*n+n])
			ata[a*np+b], ata[b*np+a] = v, v
		}
	}
	if !f.baseDone {
		for a := f.pb; a < np; a++ {
			for b := a; b < np; b++ {
				f.baseATA[a-f.pb][b-f.pb] = ata[a*np+b]
			}
		}
		f.baseDone = true
	}
}

// dot returns Σ a_i b_i with four partial sums; len(b) ≥ len(a).
func dot(a, b []float64) float64 {
	b = b[:len(a)]
	var s0, s1, s2, s3 float64
	i := 0
	for ; i+4 <= len(a); i += 4 {
		aa, bb := a[i:i+4:i+4], b[i:i+4:i+4]
		s0 += aa[0] * bb[0]
		s1 += aa[1] * bb[1]
		s2 += aa[2] * bb[2]
		s3 += aa[3] * bb[3]
	}
	for ; i < len(a); i++ {
		s0 += a[i] * b[i]
	}
	return (s0 + s1) + (s2 + s3)
}

// dot2 returns dot(a, b) and dot(a, c), bit for bit, from one pass over
// a; len(b), len(c) ≥ len(a).
func dot2(a, b, c []float64) (float64, float64) {
	b, c = b[:len(a)], c[:len(a)]
	var s0, s1, s2, s3, t0, t1, t2, t3 float64
	i := 0
	for ; i+4 <= len(a); i += 4 {
		// Groups of four by three-index slices: one bounds test each.
		aa, bb, cc := a[i:i+4:i+4], b[i:i+4:i+4], c[i:i+4:i+4]
		s0 += aa[0] * bb[0]
		t0 += aa[0] * cc[0]
		s1 += aa[1] * bb[1]
		t1 += aa[1] * cc[1]
		s2 += aa[2] * bb[2]
		t2 += aa[2] * cc[2]
		s3 += aa[3] * bb[3]
		t3 += aa[3] * cc[3]
	}
	for ; i < len(a); i++ {
		s0 += a[i] * b[i]
		t0 += a[i] * c[i]
	}
	return (s0 + s1) + (s2 + s3), (t0 + t1) + (t2 + t3)
}

// gradientSmall reports whether every scaled gradient component is at most
// gtol √χ² (MINPACK-style orthogonality test).
func (f *Fitter) gradientSmall(chi2 float64) bool {
	np := f.np
	lim := gtol * math.Sqrt(chi2)
	for j := range np {
		d := f.ata[j*np+j]
		if d == 0 {
			continue
		}
		if f.isActive(j) {
			continue
		}
		if math.Abs(f.grad[j])/math.Sqrt(d) > lim {
			return false
		}
	}
	return true
}

// isActive reports whether parameter j sits on a lower bound with the
// gradient of −χ²/2 pointing further down.
func (f *Fitter) isActive(j int) bool {
	for k := range f.k {
		if j == f.pl[k] && f.theta[j] <= f.lorMin[k] && f.grad[j] <= 0 {
			return true
		}
		if j == f.pg[k] && f.theta[j] <= f.gMin && f.grad[j] <= 0 {
			return true
		}
	}
	return j == f.psg && f.theta[j] <= f.gMin && f.grad[j] <= 0
}

// solveDamped solves the scaled damped system for f.delta; it reports
// false if the Cholesky factorisation fails.
func (f *Fitter) solveDamped(mu float64) bool {
	np := f.np
	fac := f.fac[:np*np]
	for a := range np {
		f.active[a] = f.isActive(a)
	}
	for a := range np {
		sa := 1 / math.Sqrt(max(f.dscale[a], 1e-300))
		for b := a; b < np; b++ {
			sb := 1 / math.Sqrt(max(f.dscale[b], 1e-300))
			v := f.ata[a*np+b] * sa * sb
			if f.active[a] || f.active[b] {
				v = 0
			}
			if a == b {
				v += mu
				if f.active[a] {
					v = 1
				}
			}
			fac[a*np+b] = v
		}
		g := f.grad[a] * sa
		if f.active[a] {
			g = 0
		}
		f.delta[a] = g
	}
	if !Cholesky(fac, np, 0) {
		return false
	}
	CholSolve(fac, np, f.delta[:np])
	for a := range np {
		f.delta[a] /= math.Sqrt(max(f.dscale[a], 1e-300))
	}
	return true
}

// finish computes the covariance at f.theta and fills dst.
func (f *Fitter) finish(dst *Result, p *Problem, status Status, err error) error {
	n, np := len(p.X), f.np
	dst.XMid = f.xmid
	dst.DOF = n - np
	chi2 := math.NaN()
	if status != TooFewPoints && status != NotFinite {
		chi2 = 0
		for i, y := range p.Y {
			r := y - f.model[i]
			dst.Residuals[i] = r
			if p.Sigma != nil {
				r /= p.Sigma[i]
			}
			chi2 += r * r
		}
	} else {
		for i := range dst.Residuals {
			dst.Residuals[i] = math.NaN()
		}
	}
	dst.Chi2 = chi2
	dst.RedChi2 = math.NaN()
	if dst.DOF > 0 {
		dst.RedChi2 = chi2 / float64(dst.DOF)
	}
	dst.ErrorsScaled = !(p.SigmaAbsolute && p.Sigma != nil)
	copy(dst.Params, f.theta[:np])

	cov := dst.Covariance[:np*np]
	ok := false
	if status != TooFewPoints && status != NotFinite {
		// Covariance (JᵀWJ)⁻¹ with Jacobi scaling to unit diagonal.
		fac := f.fac[:np*np]
		sing := false
		for a := range np {
			if !(f.ata[a*np+a] > 0) {
				sing = true
			}
		}
		if !sing {
			for a := range np {
				sa := 1 / math.Sqrt(f.ata[a*np+a])
				for b := range np {
					fac[a*np+b] = f.ata[a*np+b] * sa / math.Sqrt(f.ata[b*np+b])
				}
			}
			if Cholesky(fac, np, pivTol) {
				CholInverse(fac, np, cov, f.col)
				scale := 1.0
				if dst.ErrorsScaled {
					scale = dst.RedChi2
				}
				for a := range np {
					sa := 1 / math.Sqrt(f.ata[a*np+a])
					for b := range np {
						cov[a*np+b] *= scale * sa / math.Sqrt(f.ata[b*np+b])
					}
				}
				ok = true
			}
		}
		if !ok && err == nil {
			status, err = Singular, ErrSingular
		}
	}
	if !ok {
		for i := range cov {
			cov[i] = math.NaN()
		}
	}
	for a := range np {
		dst.Errors[a] = math.Sqrt(cov[a*np+a])
	}
	dst.Status = status

	// Per-line results.
	t := f.theta
	for k := range p.Lines {
		lr := &dst.Lines[k]
		jc, ja, jl := f.pc[k], f.pa[k], f.pl[k]
		jg := f.pg[k]
		if jg < 0 {
			jg = f.psg
		}
		fg, fl := f.widths(t, k)
		lr.Center, lr.CenterErr = t[jc]+f.xmid, dst.Errors[jc]
		lr.Area, lr.AreaErr = t[ja], dst.Errors[ja]
		lr.GaussFWHM, lr.GaussFWHMErr = fg, 0
		if jg >= 0 {
			lr.GaussFWHMErr = dst.Errors[jg]
		}
		lr.LorentzFWHM, lr.LorentzFWHMErr = fl, dst.Errors[jl]
		lr.LorentzAtBound = fl <= f.lorMin[k]
		// Olivero–Longbothum width and its gradient.
		root := math.Sqrt(0.2166*fl*fl + fg*fg)
		lr.VoigtFWHM = 0.5346*fl + root
		var dVdL, dVdG float64
		if root > 0 {
			dVdL = 0.5346 + 0.2166*fl/root
			dVdG = fg / root
		} else {
			dVdL = 0.5346
		}
		lr.VoigtFWHMErr = propagate(cov, np, jl, dVdL, jg, dVdG, -1, 0)
		// Peak height A V(0) and its gradient.
		v0, _, ds, dgm := voigt.ProfileDeriv(0, fg/voigt.FWHMPerSigma, fl/2)
		lr.Peak = t[ja] * v0
		lr.PeakErr = propagate(cov, np, ja, v0, jl, t[ja]*dgm/2, jg, t[ja]*ds/voigt.FWHMPerSigma)
	}
	// Baseline in (x − XMid)^j.
	dst.Baseline, dst.BaselineErr = [3]float64{}, [3]float64{}
	hj := 1.0
	for j := range f.nb {
		dst.Baseline[j] = t[f.pb+j] / hj
		dst.BaselineErr[j] = dst.Errors[f.pb+j] / hj
		hj *= f.h
	}
	return err
}

// propagate returns √(gᵀ C g) for a gradient g with up to three non-zero
// entries (index −1 means absent).
func propagate(cov []float64, np int, i1 int, g1 float64, i2 int, g2 float64, i3 int, g3 float64) float64 {
	idx := [3]int{i1, i2, i3}
	g := [3]float64{g1, g2, g3}
	var s float64
	for a := range 3 {
		if idx[a] < 0 {
			continue
		}
		for b := range 3 {
			if idx[b] < 0 {
				continue
			}
			s += g[a] * g[b] * cov[idx[a]*np+idx[b]]
		}
	}
	return math.Sqrt(s)
}

// prepare sizes dst's slices, allocating only when capacity is short.
func (r *Result) prepare(k, np, n int) {
	r.Lines = grow(r.Lines, k)
	r.Params = grow(r.Params, np)
	r.Errors = grow(r.Errors, np)
	r.Covariance = grow(r.Covariance, np*np)
	r.Residuals = grow(r.Residuals, n)
}

func grow[T any](s []T, n int) []T {
	if cap(s) < n {
		return make([]T, n)
	}
	return s[:n]
}
