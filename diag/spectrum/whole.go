package spectrum

// The whole-spectrum model fit (Options.Model == ModelWhole): one physical
// model of every Balmer line in the fitted range, fitted to all its pixels
// at once.
//
//	m(pixel i) = B(λ_i) + Σ_k a_k · ⟨P_k(λ − λ_k − δ; n_e, T_e, G_k, L_k)⟩_i
//
//   - a_k: the line areas, tied by the Boltzmann distribution (a_k = S ·
//     f_k(T_exc), f_k = g_k A_k e^(−E_k/kT) in photon units, with a
//     further 1/λ_k in energy units: the convention of diag.FitBoltzmann)
//     or free (WholeAreasFree).
//   - P_k: the Stehlé & Hutcheon (1999) Stark ⊗ Doppler(T_e) profile of
//     the line at (n_e, T_e) (diag/sh99 Shape: the tables' interpolation,
//     Hβ's central dip kept), convolved with the Gaussian still missing,
//     G_extra² = G_instr² + D_gas² − D_table(T_e)², and with the
//     non-Stark Lorentzian of the lines route's budget (instrument,
//     natural, resonance, van der Waals). Where G_extra² < 0 (an
//     instrument narrower than the tables' own Doppler width) it is
//     clamped at 0: the model line is then slightly too wide, said in
//     WholeFit.DopplerNote and carried as a systematic σ of n_e. Outside
//     the tables a line is a Voigt profile whose Lorentzian is the Stark
//     FWHM of the line's default relation plus the same non-Stark
//     Lorentzians (Shape "Voigt"); a weak high member with no relation
//     keeps its SH99 shape held at the tables' edge, and a line the
//     tables do not cover at T_e at all is left out.
//   - ⟨⟩_i: the mean over pixel i between its edge midpoints, exact for
//     the model on its fine grid (below).
//   - δ: one wavelength offset; B: a Legendre polynomial in scaled λ over
//     the fitted range (wholeBaselineOrder).
//
// Each line is built on its own uniform fine grid (wholeGridDefault:
// step at most 1/12 of the line's total FWHM and 1/4 of its base
// shape's, half span 8 total FWHM or 6 pixels; TestWholeGridDiscretisation
// bounds its error against a grid 4× finer; a line whose signal is so
// strong against the pixels' noise that this grid's error would show
// keeps the kernel's Lorentzian or moves to wholeGridFine, step /3 and
// span ×2: chooseGrids, TestWholeGridNoise): the exact bin masses of the
// SH99 shape from its cumulative integral (sh99.Shape) convolved with
// the sampled Gaussian ⊗ Lorentzian kernel and summed into the
// cumulative of the broadened profile (cubic Hermite between the bin
// edges, with the broadened densities as slopes); a pixel's mean is the
// difference of that cumulative at its edges over the pixel width, so
// pixels may be finer or coarser than the grid. Beyond the grid (far
// wings, where the kernel no longer matters) the shape's own cumulative
// is used (geometric wing nodes 1.15 apart), to 4 grid half-widths
// (wholeGrid.wingReach); what lies beyond that
// (about 1e-4 of the peak) is a smooth slope the baseline takes.
//
// The fit is Levenberg–Marquardt on all parameters with analytic
// derivatives for the areas, T_exc (as β = 1/kT), baseline and offset
// (from the broadened density on the grid) and for ln n_e (exact
// derivative of the tables' interpolation, sh99.Shape.CumulativeDeriv,
// carried through the same convolution); the gas temperature and the
// instrument width, when free, by one-sided differences of the kernel
// only (the bin masses do not depend on them).

import (
	"errors"
	"fmt"
	"math"
	"strings"

	"glowlog/diag"
	"glowlog/diag/sh99"
	"glowlog/diag/voigt"
)

// Flag codes of the whole-spectrum fit.
const (
	// FlagWholeFailed: the whole-spectrum fit was asked for and did not
	// give a result; the line-by-line numbers are reported.
	FlagWholeFailed = "whole_fit_failed"
)

// Tunables of the whole-spectrum model.
const (
	// wholeSignalSigma is the significance (fitted area over its 1σ with
	// every line's area free, at the fitted shapes) from which a line
	// counts as carrying signal; T_exc is reported when at least two do.
	// Common practice, no source (the 3σ detection rule).
	wholeSignalSigma = 3.0
	// wholeTieP is the χ² tail probability below which the Boltzmann tie
	// of the areas is rejected: 0.0455, two-sided 2σ. Common practice, no
	// source.
	wholeTieP = 0.0455
	// wholeDisagreeSigma is the difference between the routes, in
	// combined σ, beyond which FlagWholeDisagrees is raised. Common
	// practice, no source.
	wholeDisagreeSigma = 2.0
	// wholeReadNodeRel and wholeReadMidRel give the relative 1σ r of
	// the widths the model takes from the SH99 tables as this package
	// reads them (interpolation in detuning, between density nodes and
	// in T), r = wholeReadNodeRel + wholeReadMidRel × d, d the distance
	// from the tables' nodes (sh99.Line.NodeDistance: 0 at a node, 1
	// midway), carried twice: once common to all lines and once each
	// line's own, independent between lines. Evidence: our FWHM against
	// an independent reading of the same tables (the scipy generator of
	// testdata/wholesynth, its own interpolation scheme) at 197
	// line/density points differs by RMS 0.38 % where d < 0.25, 0.58 %
	// for d 0.25–0.5, 0.69 % for 0.5–0.75 and 0.93 % for d ≥ 0.75 (mean
	// −0.40 %, at most 2.8 %; TestWholeSynthTableWidths), and by at most
	// 0.52 % at the node densities of testdata/sh99synth; r follows that
	// RMS (0.3 % + 0.65 % d), for each part, so √2 r per line in all.
	// The width check values of physics.md §10 items 10–11, read by an
	// unstated method, differ by −3.9 … +1.1 %. These parts say how well
	// the tables are read, not how well the tables' theory (model
	// microfield method, pure H–H⁺) describes a plasma; that difference
	// between Stark models shows as the line-by-line route's per-model
	// densities beside the whole fit (GGC 2003 against SH99).
	wholeReadNodeRel = 0.003
	wholeReadMidRel  = 0.0065
	// wholeRelationRel is the same for a line whose width comes from a
	// Stark relation (outside the tables): the tables' midway figure.
	// Our estimate, no source.
	wholeRelationRel = 0.0095
	// wholeVoigtStandInRel is the relative 1σ of n_e from a line whose
	// Stark shape the tables do not give, modelled by the Voigt of its
	// default relation: on SH99-shaped Hα and Hβ (SynthesizeStark, 1.5–6
	// × 10²² m⁻³ at 10⁴ K, instrument 0.05 and 0.3 nm) fitted with that
	// Voigt (T_e given as 3000 K, where no tables cover them) n_e came
	// out 6–22 % low, RMS 15 %, against 0.0 % with the SH99 shapes.
	// Carried as σ, not corrected: the bias depends on the line, the
	// density and the instrument, and the case is rare (beyond the tables
	// at every temperature within a factor 2 of T_e). Measured here, no
	// published source.
	wholeVoigtStandInRel = 0.15
	// wholeWeakExcessSigma and wholeGaussRelDefault decide when n_e is
	// only an upper limit: the Stark part must widen at least one line
	// carrying signal beyond its Gaussian (instrument ⊕ Doppler(T_gas))
	// by more than wholeWeakExcessSigma times the relative accuracy of
	// that Gaussian width — the given instrument σ, or
	// wholeGaussRelDefault (2 %) when none is given. Below that, a
	// Gaussian wrong by its own accuracy would move n_e by more than it
	// measures (a line whose Stark FWHM is 10 % of its Gaussian is only
	// 5.5 % wider: Olivero & Longbothum 1977). Both common practice, no
	// source.
	wholeWeakExcessSigma = 3.0
	wholeGaussRelDefault = 0.02
	// wholeTeRelDefault and wholeTeRelGiven are the relative 1σ of the
	// electron temperature of the tables: a factor of 2 when the default
	// 1e4 K is used, 20 % when T_e was given. Common practice, no
	// source.
	wholeTeRelDefault = 0.69 // ln 2
	wholeTeRelGiven   = 0.2
	// wholeStandInMaxLn is the largest step (ln T) from T_e to a
	// temperature node of the tables that stands in for it where the
	// tables stop short of the density at T_e: a factor 2, the spacing
	// of SH99's temperature nodes (5000, 10⁴, 19 950 K …). Common
	// practice, no source.
	wholeStandInMaxLn = 0.6931471805599453 + 1e-9
	// wholeMaxIter bounds the Levenberg–Marquardt iterations.
	wholeMaxIter = 60
	// wholeStopDrop and wholeStopLambda end the Levenberg–Marquardt
	// iterations before a trial evaluation: when the next step, at a
	// damping λ ≤ wholeStopLambda (almost the Gauss–Newton step), is
	// predicted by the fit's linear model to lower χ² by at most
	// wholeStopDrop, the fit is at its minimum to within √wholeStopDrop
	// = 0.003 σ of any parameter (χ² is in units of the pixel σ; a 1σ
	// move is a change of 1), inside the 1e-4 of the χ²-drop test that
	// would otherwise end it one evaluation later — or, where rounding
	// makes that last step raise χ² by a hair, many evaluations later
	// (λ raised tenfold until a step too small to matter is accepted).
	// Our choice, no source.
	wholeStopDrop   = 1e-5
	wholeStopLambda = 1e-3
)

// wholeGrid sets a line's fine grid and wing nodes (setupGrid).
type wholeGrid struct {
	// perWidth and perBase set the fine-grid step: at most 1/perWidth of
	// the line's total FWHM (pixel edges fall anywhere on it: the
	// broadened cumulative is interpolated by cubic Hermite) and at most
	// 1/perBase of the base shape's own FWHM, on which the kernel's
	// trapezoidal rule needs the shape smooth.
	perWidth, perBase float64
	// coreWidths is the grid's half span in total FWHM (at least
	// corePixels pixels); wingReach the reach of the wings evaluated
	// beyond it, in grid half spans.
	coreWidths, corePixels, wingReach float64
	// wingStep is the ratio of successive wing nodes.
	wingStep float64
	// maxBins bounds a line's fine grid (its step grows beyond).
	maxBins int
	// maxWing bounds the number of wing nodes.
	maxWing int
	// keepLorentz keeps the kernel's Lorentzian at any width where the
	// Gaussian is at least the step (a sampled Voigt); otherwise it is
	// dropped below 0.02 of the step (kernelNew).
	keepLorentz bool
}

// wholeGridDefault is the grid of every fit (wholeFitter.grid nil).
var wholeGridDefault = wholeGrid{perWidth: 12, perBase: 4, coreWidths: 8, corePixels: 6,
	wingReach: 4, wingStep: 1.15, maxBins: 1200, maxWing: 64}

// wholeGridFine is the grid of a line whose signal is so strong that
// wholeGridDefault's error would show against the noise (chooseGrids):
// step /3, span ×2. Step /4 (perWidth 48, perBase 16, maxBins 20000)
// moved no check spectrum's n_e by more than 0.048 σ_stat (T_exc
// 0.003 σ) against this grid, for 37 % more instructions on the whole
// route of a high-signal spectrum (testdata/gridstudy/README.md,
// "The fine grid's step"); step /2 moved one by 0.31 σ.
var wholeGridFine = wholeGrid{perWidth: 36, perBase: 12, coreWidths: 16, corePixels: 12,
	wingReach: 4, wingStep: 1.15, maxBins: 15000, maxWing: 256, keepLorentz: true}

// wholeGridBaseErr, wholeGridTol and wholeLorentzTol choose a line's
// grid (chooseGrids). A line's signal over the noise is the whitened
// norm S = |a| √Σ(u_i/σ_i)² of its model over its pixels (a: area, u:
// unit profile's pixel means, σ: pixel σ); a model error δ of relative
// size ε (the same norm of δ over S) can then move any fitted parameter
// by at most ε·S of its own σ (on the check spectra the moves were
// 0.3–0.9 of that bound). On wholeGridDefault ε is about
// wholeGridBaseErr (the grid's step, span and reach: 1e-4 on survey
// lines, up to 1e-3 on some high-signal windows) plus 2γ/W where the
// kernel's Lorentzian (HWHM γ, line FWHM W) is dropped (kernelNew:
// γ < 0.02 step; measured 1.9–2.1 γ/W on Hα windows). A line keeps the
// Lorentzian (on the same grid) where 2γ/W·S > wholeLorentzTol, and
// moves to wholeGridFine where wholeGridBaseErr·S > wholeGridTol. The
// Lorentzian's tolerance is the looser so that survey spectra of
// ordinary signal (BenchmarkWholeSurvey's: peak SNR 120–210, Hα's
// S 1800–3200, 2γ/W·S ≤ 1.0) keep the default kernel and their cost;
// at 0.35 the check spectra's largest n_e move against the converged
// model falls from 0.55 to 0.32 σ, at +5 % instructions on those
// surveys (the Voigt kernel's Faddeeva evaluations). Our choices from
// testdata/gridstudy, no published source.
const (
	wholeGridBaseErr = 1e-4
	wholeGridTol     = 0.35
	wholeLorentzTol  = 1.5
)

// wholeBaselineOrder returns the Legendre order of the baseline: 1 over a
// fitted range up to 25 nm (a window around one or two lines: a straight
// continuum, nothing that can take a line wing), 2 up to 120 nm, 3 beyond
// (a survey: the response-corrected continuum curves over hundreds of nm,
// but a cubic over ≥ 120 nm has no feature narrower than ~40 nm, far
// wider than any line wing it must not eat).
func wholeBaselineOrder(spanNM float64) int {
	switch {
	case spanNM <= 25:
		return 1
	case spanNM <= 120:
		return 2
	}
	return 3
}

// wline is one Balmer line of the whole model.
type wline struct {
	t        diag.Transition
	center   float64 // catalogue centre on the working axis, nm
	shapeSH  bool
	sh       *sh99.Line
	teK      float64            // temperature of its SH99 tables, K: T_e, or the nearest the tables cover the start at (0: T_e)
	teRel    float64            // relative 1σ of teK as a stand-in for the plasma's T_e (ln units)
	rel      diag.StarkRelation // Voigt fallback
	instG    float64            // instrument Gaussian FWHM at the line (fixed value)
	lorOther float64            // non-Stark Lorentzian FWHM (instrument, natural, resonance, vdW)
	vdw, res float64            // its van der Waals and resonance parts, nm
	lnF      float64            // ln of g A (/λ) relative to the first line
	dE       float64            // E_k − E_first, eV
	px       float64            // pixel width at the line
	win      [2]float64         // line window for its statistics, nm
	// Grid.
	fine    bool // on wholeGridFine (chooseGrids)
	lorentz bool // keeps the kernel's Lorentzian (chooseGrids)
	keepL   bool // the kernel keeps the Lorentzian (setupGrid)
	regrid  bool // its grid changed since its last evaluation (chooseGrids)
	h       float64
	m       int // bins 2m+1
	plo     int // first fitted pixel evaluated
	phi     int // one past the last
	reach   float64
	// Per evaluation (over [plo, phi)).
	u, du, dn, dg []float64
	shp           sh99.Shape
	kL            float64 // kernel Lorentzian FWHM of the last evaluation
	// vGamma and vDGamma are the Voigt fallback's Lorentzian half width
	// of the last evaluation and its derivative in ln n_e.
	vGamma, vDGamma float64
	// Wing nodes (distances from the centre, nm) and the shape's
	// cumulative, density and ln n_e derivative there (left half, then
	// right half).
	wing, wc, wp, wd []float64
	// wingH and wingInvH are the lengths of the wing nodes' intervals
	// and their inverses.
	wingH, wingInvH []float64
	// Grid scratch.
	cum, dcum, fq, dfq, mass, dmass, q, dq, kern []float64
	kc                                           kernCache // of kern
	// hd holds the detunings at which evalLine evaluates the base shape
	// (the grid's right-half edges (k + ½)h, k = 0 … m, then the wing
	// nodes; setupGrid), hv, hp and hdv the shape's v, p and dv there
	// (wline.half).
	hd, hv, hp, hdv []float64
	// Alternate grid state (stashGrid) and the pixel means of both states
	// (pixelsPair), for densitySys' electron-temperature shifts: the
	// broadened cumulative on the bin edges, the broadened densities
	// there, the wing nodes' cumulative and density.
	fqAlt, pqAlt, wcAlt, wpAlt []float64
	uAlt, uCur                 []float64
	// dsl holds the slopes of the cumulative of dq at the bin edges
	// (edgeSlope, for pixels with deriv).
	dsl []float64
	// pe and pq are the base shape's density at the bin edges and the
	// same broadened (the Hermite slopes of the broadened cumulative).
	pe, pq []float64
	// State of the last evaluation.
	starkFWHM float64 // the Voigt fallback's (lineShape); a tabulated line's is shStarkFWHM
	extra2    float64 // G_extra² used
	clampGap2 float64 // D_table² − (G² + D²) when clamped, else 0
	sig       float64 // significance (area/σ, free areas)
	neLo      float64 // the SH99 tables' density range at teK, m⁻³
	neHi      float64
	held      bool // the last evaluation held the shape at a table edge
	dropped   string
}

// lineShapeState is what lineShape (and evalLine's kernel) leave in a
// tabulated line: densitySys keeps it across its T_e shifts.
type lineShapeState struct {
	shp               sh99.Shape
	held              bool
	extra2, clampGap2 float64
	kL                float64
}

// wparams locates the parameters in the vector.
type wparams struct {
	free    bool
	nLines  int
	iS, iB  int // Boltzmann: scale and β
	iA      int // free: first area
	iNe     int
	iOff    int
	iTg     int // -1 when fixed
	iIa     int // instrument FWHM at the range's middle; -1 when fixed
	iIb     int // its slope per nm
	iBase   int
	nBase   int
	n       int
	lamMid  float64
	lamHalf float64
}

// wholeFitter holds the state of one whole fit.
type wholeFitter struct {
	opt    Options
	m      diag.Measurement
	te     float64 // electron temperature of the tables, K (given or default)
	teRel  float64 // its relative 1σ (ln units)
	teSign float64 // ±1 while densitySys moves every line's tables by its T_e σ, else 0
	gasT   float64
	mass   float64
	lines  []*wline
	x      []float64 // fitted pixel centres
	a, b   []float64 // pixel edges
	y, s   []float64 // data and σ (scaled by 2^-scaleExp)
	leg    [][]float64
	scale  int
	par    wparams
	th     []float64
	model  []float64
	jac    []float64 // row-major n×npar
	lnLo   float64
	lnHi   float64
	linSol []float64
	pert   diag.Perturber
	// pool holds the lines' structs (and buffers) for reuse; nPool of
	// them are in use.
	pool  []*wline
	nPool int
	// ws is scratch for the Levenberg–Marquardt and covariance matrices.
	ws   []float64
	sens []float64
	// saveBuf and saveRows hold densitySys' copy of the lines' pixel
	// means, saveShapes that of their shapes.
	saveBuf    []float64
	saveRows   [][]float64
	saveShapes []lineShapeState
	wbuf       []float64
	mbuf       []float64
	// invW holds the fitted pixels' inverse widths, 1/(b − a).
	invW  []float64
	notes []string
	// grid is the fine grid's setting (nil: wholeGridDefault; tests).
	grid *wholeGrid
	// masked are wavelength intervals left out (saturated lines).
	masked [][2]float64
	// Blocks of the normal equations that depend on the pixels alone
	// (their σ, data and the baseline's Legendre values), built once per
	// setup and copied in: the baseline–baseline block of JᵀWJ
	// (normBase, nBase² values, rows in order), and of the linear
	// solve (linBase, its baseline–baseline block; linBaseG, its
	// baseline–data part). baseOK says they are of the current setup.
	normBase, linBase, linBaseG []float64
	baseOK                      bool
	// jacBaseOK says the Jacobian's baseline columns hold the pixels'
	// Legendre values (assemble) since the last setup.
	jacBaseOK bool
	// Scratch of linearAreas.
	linA, linG, linInv, linWork []float64
	// nEval counts the model evaluations of levmar (eval); noEarlyStop
	// (tests) ends levmar by its χ²-drop test alone, not by the
	// predicted drop (wholeStopDrop).
	nEval       int
	noEarlyStop bool
	// generic (tests) makes assemble and normal take their general
	// loops where the common case has an unrolled one.
	generic bool
	// scanFit is scanDensity's scratch fitter; scanOnly marks it (setup
	// evaluates its lines without derivatives).
	scanFit  *wholeFitter
	scanOnly bool
	// teOK says which of densitySys' T_e shifts (up, down) the lines'
	// tables covered (tests).
	teOK [2]bool
	// atTh says levmar ended with the normal equations at f.th in ws
	// (A, then M, then g: see levmar).
	atTh bool
}

func (f *wholeFitter) isMasked(lam float64) bool {
	for _, m := range f.masked {
		if lam >= m[0] && lam <= m[1] {
			return true
		}
	}
	return false
}

// wholeInput is what the whole fit needs from the lines route.
type wholeInput struct {
	cands []balmerCandidate
	x     []float64 // working axis (air), all pixels
	y     []float64 // per nm, corrected
	sig   []float64
	sat   []bool
	m     diag.Measurement
	lines diag.Result
	off   float64
}

// whole runs the whole-spectrum fit and fills res.Whole (and, when
// opt.Model is ModelWhole and the fit succeeds, the top-level numbers).
func (p *Pipeline) whole(res *Result, in wholeInput, opt Options) {
	wf, err := p.wholeFit(in, opt)
	if err == nil {
		// Everything the fit reports must be finite (it is stored and
		// written as JSON); a fit that is not is a failed fit.
		if e := diag.CheckFinite(*wf); e != nil {
			wf, err = nil, fmt.Errorf("its result is not finite (%v)", e)
		}
	}
	if err != nil {
		res.Flags = append(res.Flags, diag.Flag{Code: FlagWholeFailed, Message: "the whole-spectrum fit gave no result (" + err.Error() + "): the line-by-line results are reported"})
		return
	}
	res.Whole = wf
	lr := in.lines
	wf.LinesExcitationTemperatureK = lr.ExcitationTemperatureK
	wf.LinesExcitationTemperatureUncK = lr.ExcitationTemperatureUncK
	wf.LinesElectronDensityM3 = lr.ElectronDensityM3
	wf.LinesElectronDensityUncM3 = lr.ElectronDensityUncM3
	var why []string
	if d, ok := diffSigma(wf.ExcitationTemperatureK, wf.ExcitationTemperatureUncK, lr.ExcitationTemperatureK, lr.ExcitationTemperatureUncK); ok {
		wf.TexcDiffSigma = &d
		if math.Abs(d) > wholeDisagreeSigma {
			why = append(why, fmt.Sprintf("T_exc %s K against %s K from the line-by-line analysis, %.1f combined σ apart",
				fmtG(*wf.ExcitationTemperatureK), fmtG(*lr.ExcitationTemperatureK), math.Abs(d)))
		}
	}
	if d, ok := diffSigma(wf.ElectronDensityM3, wf.ElectronDensityUncM3, lr.ElectronDensityM3, lr.ElectronDensityUncM3); ok {
		wf.NeDiffSigma = &d
		if math.Abs(d) > wholeDisagreeSigma {
			why = append(why, fmt.Sprintf("n_e %s m⁻³ against %s m⁻³ from the line-by-line analysis, %.1f combined σ apart",
				fmtG(*wf.ElectronDensityM3), fmtG(*lr.ElectronDensityM3), math.Abs(d)))
		}
	}
	if wf.offTie != "" {
		why = append(why, wf.offTie)
	}
	if wf.weakNe != "" {
		res.Flags = append(res.Flags, diag.Flag{Code: FlagWholeDensityLimit, Message: "whole-spectrum fit: " + wf.weakNe})
	}
	if len(why) > 0 {
		res.Flags = append(res.Flags, diag.Flag{Code: FlagWholeDisagrees, Message: "whole-spectrum fit: " +
			strings.Join(why, "; ") + " (more than 2σ: common practice, no source). Likely causes: upper levels not in a Boltzmann distribution, self-absorption of Hα, a wrong spectral response, or a blend with another species' line; compare the whole fit's free-area mode and the Boltzmann plot"})
	}
	if opt.Model != ModelWhole {
		return
	}
	res.Model = ModelWhole
	r := &res.Result
	r.ExcitationTemperatureK = wf.ExcitationTemperatureK
	r.ExcitationTemperatureUncK = wf.ExcitationTemperatureUncK
	r.ExcitationTemperatureUncStatK = wf.ExcitationTemperatureUncStatK
	r.ExcitationTemperatureUncSysK = wf.ExcitationTemperatureUncSysK
	r.ElectronDensityM3 = wf.ElectronDensityM3
	r.ElectronDensityUncM3 = wf.ElectronDensityUncM3
	r.ElectronDensityUncStatM3 = wf.ElectronDensityUncStatM3
	r.ElectronDensityUncSysM3 = wf.ElectronDensityUncSysM3
	r.ElectronDensityUncParts = wf.ElectronDensityUncParts
	r.ElectronDensityCM3, r.ElectronDensityUncCM3 = nil, nil
	if wf.ElectronDensityM3 != nil {
		r.ElectronDensityCM3 = fptr(*wf.ElectronDensityM3 * 1e-6)
		r.ElectronDensitySource = "whole-spectrum fit, " + wf.shapeSummary()
	} else {
		r.ElectronDensitySource = ""
	}
	if wf.ElectronDensityUncM3 != nil {
		r.ElectronDensityUncCM3 = fptr(*wf.ElectronDensityUncM3 * 1e-6)
	}
}

func (wf *WholeFit) shapeSummary() string {
	sh, vo := 0, 0
	for _, l := range wf.Lines {
		if l.Shape == "SH99" {
			sh++
		} else {
			vo++
		}
	}
	switch {
	case vo == 0:
		return "SH99 shapes"
	case sh == 0:
		return "Voigt shapes (outside the SH99 tables)"
	}
	return "SH99 shapes (Voigt outside the tables)"
}

func diffSigma(a, ua, b, ub *float64) (float64, bool) {
	if a == nil || b == nil || ua == nil || ub == nil {
		return 0, false
	}
	s := math.Hypot(*ua, *ub)
	if !(s > 0) || math.IsInf(s, 0) {
		return 0, false
	}
	d := (*a - *b) / s
	return d, finite(d)
}

func finite(v float64) bool { return !math.IsNaN(v) && !math.IsInf(v, 0) }

func fptr(v float64) *float64 { return &v }

func fmtG(v float64) string { return fmt.Sprintf("%.4g", v) }

// wholeFit builds and fits the model.
func (p *Pipeline) wholeFit(in wholeInput, opt Options) (*WholeFit, error) {
	// The fitter and its lines are kept in the pipeline and their buffers
	// reused from call to call.
	if p.wfit == nil {
		p.wfit = &wholeFitter{}
	}
	f := p.wfit
	teGiven := f.begin(in, opt)

	// Starting density.
	ne0 := 0.0
	if in.lines.ElectronDensityM3 != nil && *in.lines.ElectronDensityM3 > 0 {
		ne0 = *in.lines.ElectronDensityM3
	}
	if ne0 == 0 {
		ne0 = f.scanDensity(in)
	}
	nNotes := len(f.notes)
	if err := f.setup(in, ne0); err != nil {
		return nil, err
	}
	it, conv, chi2, err := f.levmar()
	if err != nil {
		return nil, err
	}
	// A fit that ran into the end of the tables' density range at T_e
	// where a temperature node beside T_e covers densities beyond it (the
	// highest densities are tabulated only from 10⁴ K or 19 950 K up)
	// starts again just beyond that end: setup then reads those lines'
	// tables at the node (see CoveringTemperature).
	if ne, ok := f.beyondEdge(); ok {
		f.notes = f.notes[:nNotes]
		if err := f.setup(in, ne); err != nil {
			return nil, err
		}
		if it, conv, chi2, err = f.levmar(); err != nil {
			return nil, err
		}
	}
	return f.result(it, conv, chi2, teGiven, in)
}

// begin resets the (reused) fitter for a fit of in: the electron
// temperature and its σ, the gas temperature, the emitter's mass and the
// perturber. teGiven says whether in gave T_e.
func (f *wholeFitter) begin(in wholeInput, opt Options) (teGiven bool) {
	f.reset(opt, in.m)
	f.te = in.m.ElectronTemperatureK
	teGiven = f.te > 0
	f.teRel = wholeTeRelGiven
	if !teGiven {
		f.te = diag.DefaultElectronTemperatureK
		f.teRel = wholeTeRelDefault
	}
	f.gasT = in.m.GasTemperatureK
	if in.lines.GasTemperatureK != nil && *in.lines.GasTemperatureK > 0 {
		f.gasT = *in.lines.GasTemperatureK
	}
	if !(f.gasT > 0) {
		// Unknown gas temperature: the Doppler part is left to the
		// instrument (as the lines route does); a room-temperature
		// Doppler width stands in for the kernel.
		f.gasT = 300
		f.notes = append(f.notes, "no gas temperature was given: 300 K was used for the Doppler width")
	}
	f.mass = diag.EmitterMassAMU(in.m.Isotope)
	pert, err := diag.LookupPerturber(in.m.Perturber)
	if err != nil || in.m.PressurePa == 0 {
		pert = diag.NoPerturber
	}
	f.pert = pert
	return teGiven
}

// beyondEdge reports whether the fitted n_e sits at the end of the
// density range that the lines' tables cover at their temperatures while
// some SH99 line's tables cover the density just beyond that end at
// another temperature node; ne is that density (a third of a decade
// beyond the end).
func (f *wholeFitter) beyondEdge() (ne float64, ok bool) {
	ln := f.th[f.par.iNe]
	var step float64
	switch {
	case ln >= f.lnHi-1e-6:
		step = math.Log(10) / 3
	case ln <= f.lnLo+1e-6:
		step = -math.Log(10) / 3
	default:
		return 0, false
	}
	ne = math.Exp(ln + step)
	for _, l := range f.lines {
		if !l.shapeSH {
			continue
		}
		if t, ok := f.standInT(l, ne); ok && t != f.tOf(l) {
			return ne, true
		}
	}
	return 0, false
}

// reset prepares a (reused) fitter for a new fit, keeping its buffers.
func (f *wholeFitter) reset(opt Options, m diag.Measurement) {
	*f = wholeFitter{opt: opt, m: m,
		x: f.x[:0], a: f.a[:0], b: f.b[:0], y: f.y[:0], s: f.s[:0], leg: f.leg[:0],
		th: f.th, model: f.model, jac: f.jac, linSol: f.linSol, sens: f.sens, wbuf: f.wbuf, mbuf: f.mbuf, invW: f.invW,
		pool: f.pool, lines: f.lines[:0], ws: f.ws,
		normBase: f.normBase, linBase: f.linBase, linBaseG: f.linBaseG,
		linA: f.linA, linG: f.linG, linInv: f.linInv, linWork: f.linWork, saveBuf: f.saveBuf, saveRows: f.saveRows, saveShapes: f.saveShapes,
		noEarlyStop: f.noEarlyStop, generic: f.generic, scanFit: f.scanFit, grid: f.grid}
}

// standInT returns the temperature at which line l's SH99 tables cover
// ne: T_e itself, or the nearest temperature node within a factor
// exp(wholeStandInMaxLn) of it. ok is false when none does.
func (f *wholeFitter) standInT(l *wline, ne float64) (float64, bool) {
	t, ok := l.sh.CoveringTemperature(ne, f.te)
	return t, ok && math.Abs(math.Log(t/f.te)) <= wholeStandInMaxLn
}

// tOf returns the temperature at which line l reads its SH99 tables:
// T_e, or the temperature node standing in for it (wline.teK), moved by
// the line's own T_e σ while densitySys asks (teSign).
func (f *wholeFitter) tOf(l *wline) float64 {
	t, rel := f.te, f.teRel
	if l.teK > 0 {
		t, rel = l.teK, l.teRel
	}
	if f.teSign != 0 {
		t *= math.Exp(f.teSign * rel)
	}
	return t
}

// newLine returns a line from the pool, cleared, with its buffers kept.
func (f *wholeFitter) newLine() *wline {
	if f.nPool < len(f.pool) {
		l := f.pool[f.nPool]
		f.nPool++
		*l = wline{u: l.u, du: l.du, dn: l.dn, dg: l.dg, wing: l.wing[:0], wc: l.wc, wp: l.wp, wd: l.wd,
			cum: l.cum, dcum: l.dcum, fq: l.fq, dfq: l.dfq, mass: l.mass, dmass: l.dmass, q: l.q, dq: l.dq,
			kern: l.kern, pe: l.pe, pq: l.pq, wingH: l.wingH, wingInvH: l.wingInvH, dsl: l.dsl,
			hd: l.hd, hv: l.hv, hp: l.hp, hdv: l.hdv,
			fqAlt: l.fqAlt, pqAlt: l.pqAlt, wcAlt: l.wcAlt, wpAlt: l.wpAlt, uAlt: l.uAlt, uCur: l.uCur}
		return l
	}
	l := &wline{}
	f.pool = append(f.pool, l)
	f.nPool++
	return l
}

// setup builds the model at the starting density ne0: the lines and
// their shapes, the fitted pixels, the parameters, the fine grids, and
// the linear start (free areas and baseline at the starting shapes,
// then T_exc from them or from the lines route).
func (f *wholeFitter) setup(in wholeInput, ne0 float64) error {
	f.baseOK, f.jacBaseOK, f.atTh = false, false, false
	// setup runs again when a fit restarts past the end of the tables
	// (beyondEdge): the pixels and masks are built afresh, not appended
	// to those of the first start.
	f.x, f.a, f.b, f.y, f.s = f.x[:0], f.a[:0], f.b[:0], f.y[:0], f.s[:0]
	f.masked = f.masked[:0]
	x := in.x
	n := len(x)
	// Lines: every member the search found inside the range, up to the
	// merging of the series, that a shape model covers.
	lines := f.lines[:0]
	for i := range in.cands {
		c := &in.cands[i]
		if c.search.Status == "saturated" {
			// Its unsaturated wings are not modelled: their pixels are
			// left out (the line's window, at least ±10 of its widths).
			hw := math.Max(10*c.width, float64(c.hi-c.lo)/2*pixelWidth(x, min(max(index(x, c.center), 0), n-1)))
			f.masked = append(f.masked, [2]float64{c.center - hw, c.center + hw})
			f.notes = append(f.notes, fmt.Sprintf("%s is saturated: its window %.2f–%.2f nm is left out of the fit", c.t.Name(), c.center-hw, c.center+hw))
			continue
		}
		ic := min(max(index(x, c.center), 0), n-1)
		l := f.newLine()
		l.t, l.center, l.instG, l.px = c.t, c.t.WavelengthAirNM, c.instG, pixelWidth(x, ic)
		b, err := diag.NewBudget(diag.BudgetInput{Transition: c.t, InstrumentGaussNM: c.instG, InstrumentLorentzNM: c.instL,
			GasTempK: f.gasT, PressurePa: in.m.PressurePa, GroundDensityM3: in.m.GroundStateDensityM3, Perturber: f.pert})
		if err != nil {
			return err
		}
		l.lorOther = b.LorentzNonStarkNM
		l.vdw, l.res = b.VanDerWaalsNM, b.ResonanceNM
		if s, err := sh99.Balmer(c.t.Upper); err == nil {
			l.sh = s
		}
		if r, err := diag.DefaultStarkRelation(c.t.Upper); err == nil {
			l.rel = r
		}
		l.dE = c.t.UpperEnergyEV
		l.lnF = math.Log(float64(c.t.GUpper) * c.t.EinsteinA)
		if in.m.Unit == diag.EnergyUnits {
			l.lnF -= math.Log(c.t.WavelengthVacNM)
		}
		if c.fit != nil {
			l.win = [2]float64{x[c.lo], x[c.hi-1]}
		}
		lines = append(lines, l)
	}
	if len(lines) == 0 {
		return errors.New("no Balmer line to model")
	}
	// Shapes at the start, the series' merging limit, and the n_e bounds:
	// a line the tables cover at the starting density gets its SH99
	// shape; one they do not cover gets the Voigt of its default Stark
	// relation (Hα, Hβ); a high member without one gets the SH99 shape
	// held at the tables' lower edge when the density is below their
	// range, and is left out (its light left to the baseline) when the
	// density is above it: the tables of the high members stop about
	// where they merge into the series' continuum, and a shape frozen at
	// that edge is far narrower than the line (on SH99-shaped demo
	// spectra it raised the Boltzmann-tie flag on 54 of 300 runs). During
	// the fit each SH99 line's shape is held at its own table range; n_e
	// itself is bounded by the widest range of the lines.
	f.lnLo, f.lnHi = math.Inf(1), math.Inf(-1)
	var keep []*wline
	for i, l := range lines {
		if l.sh != nil {
			// The tables at T_e, or, where they stop short of the start
			// at T_e but cover it at a temperature node beside it, at
			// that node: SH99 give the highest densities only from
			// 10⁴ K or 19 950 K up, and a line whose shape switched to
			// the Voigt fallback there (reduced χ² ~10³ on SH99-shaped
			// Hβ at 8000 K, n_e 27 % low) is far worse than the shape
			// at a nearby temperature. The temperature step is added to
			// the line's T_e uncertainty (densitySys).
			if t, ok := f.standInT(l, ne0); ok && t != f.te {
				l.teK = t
				l.teRel = math.Hypot(f.teRel, math.Log(t/f.te))
				f.notes = append(f.notes, fmt.Sprintf("%s: the SH99 tables do not give n_e ≈ %.3g m⁻³ at T_e = %.0f K; its shape is read at the nearest temperature that does, %.0f K, and the step is added to the electron-temperature part of σ_sys", l.t.Name(), ne0, f.te, t))
			}
			if lo, hi, ok := l.sh.ProfileRange(f.tOf(l)); ok {
				l.neLo, l.neHi = lo, hi
				l.shapeSH = ne0 >= lo && ne0 <= hi || l.rel.ID == "" && ne0 < lo
				if !l.shapeSH && l.rel.ID == "" {
					f.notes = append(f.notes, fmt.Sprintf("%s is left out: the SH99 tables stop at n_e %.3g m⁻³, below the start %.3g m⁻³ (the member is merging into the series' continuum); the baseline takes its light", l.t.Name(), hi, ne0))
					continue
				}
			}
		}
		if !l.shapeSH && l.rel.ID == "" {
			f.notes = append(f.notes, fmt.Sprintf("%s is left out: no Stark shape covers it at n_e ≈ %.3g m⁻³", l.t.Name(), ne0))
			continue
		}
		// Merging: stop where the line is wider than the distance to the
		// next member.
		if i+1 < len(lines) {
			w := f.totalWidth(l, ne0, l.instG)
			if gap := l.center - lines[i+1].center; w > gap {
				f.notes = append(f.notes, fmt.Sprintf("members from %s up are merged (FWHM %.3g nm over a spacing of %.3g nm) and left to the baseline", lines[i+1].t.Name(), w, gap))
				keep = append(keep, l)
				break
			}
		}
		keep = append(keep, l)
	}
	lines = keep
	if len(lines) == 0 {
		return errors.New("no Balmer line has a Stark shape model at this density")
	}
	for _, l := range lines {
		if l.shapeSH {
			f.lnLo = math.Min(f.lnLo, math.Log(l.neLo))
			f.lnHi = math.Max(f.lnHi, math.Log(l.neHi))
		} else {
			f.lnLo = math.Min(f.lnLo, math.Log(1e18))
			f.lnHi = math.Max(f.lnHi, math.Log(1e26))
		}
	}
	ne0 = math.Min(math.Max(ne0, math.Exp(f.lnLo)), math.Exp(f.lnHi))
	f.lines = lines

	// Fitted pixels: the union of the lines' core windows, widened.
	lo, hi := n, 0
	for _, l := range lines {
		w := f.totalWidth(l, ne0, l.instG)
		half := math.Max(8*w, 15*l.px)
		a, b := index(x, l.center-half), min(index(x, l.center+half), n)
		lo, hi = min(lo, a), max(hi, b)
		if l.win[1] == 0 {
			hw := math.Max(5*w, 12*l.px)
			l.win = [2]float64{l.center - hw, l.center + hw}
		}
	}
	lo = max(lo, 0)
	for i := lo; i < hi; i++ {
		if in.sat[i] || math.IsNaN(in.y[i]) || !(in.sig[i] > 0) || f.isMasked(x[i]) {
			continue
		}
		ea, eb := pixelEdgesAt(x, i)
		f.x = append(f.x, x[i])
		f.a = append(f.a, ea)
		f.b = append(f.b, eb)
		f.y = append(f.y, in.y[i])
		f.s = append(f.s, in.sig[i])
	}
	np := len(f.x)
	if np < 10 {
		return errors.New("too few usable pixels")
	}
	f.invW = grow(&f.invW, np)
	for i := range f.invW {
		f.invW[i] = 1 / (f.b[i] - f.a[i])
	}
	f.scale = windowScaleExp(f.y)
	if f.scale != 0 {
		for i := range f.y {
			f.y[i] = math.Ldexp(f.y[i], -f.scale)
			f.s[i] = math.Ldexp(f.s[i], -f.scale)
		}
	}
	if !validSigma(f.s) {
		return errors.New("the pixel uncertainties are zero or beyond the range of the fit")
	}
	span := f.x[np-1] - f.x[0]
	order := wholeBaselineOrder(span)

	// Parameters.
	pr := wparams{free: f.opt.WholeAreas == WholeAreasFree, nLines: len(lines), iTg: -1, iIa: -1, iIb: -1}
	if !pr.free && len(lines) < 2 {
		// One line: no Boltzmann slope to fit; its area is free.
		pr.free = true
		f.notes = append(f.notes, "one line in the model: its area is fitted on its own and no excitation temperature follows")
	}
	k := 0
	if pr.free {
		pr.iA = 0
		k = len(lines)
	} else {
		pr.iS, pr.iB = 0, 1
		k = 2
	}
	pr.iNe, pr.iOff = k, k+1
	k += 2
	if f.opt.WholeFreeGasTemperature {
		pr.iTg = k
		k++
	}
	if f.opt.WholeFreeInstrument {
		pr.iIa, pr.iIb = k, k+1
		k += 2
	}
	pr.iBase, pr.nBase = k, order+1
	k += order + 1
	pr.n = k
	pr.lamMid, pr.lamHalf = 0.5*(f.x[0]+f.x[np-1]), math.Max(0.5*span, 1e-9)
	f.par = pr
	for len(f.leg) < pr.nBase {
		// Within the capacity the previous fits' rows are reused.
		if len(f.leg) < cap(f.leg) {
			f.leg = f.leg[:len(f.leg)+1]
		} else {
			f.leg = append(f.leg, nil)
		}
	}
	f.leg = f.leg[:pr.nBase]
	for j := range f.leg {
		f.leg[j] = grow(&f.leg[j], np)
	}
	for i, v := range f.x {
		t := (v - pr.lamMid) / pr.lamHalf
		f.leg[0][i] = 1
		if pr.nBase > 1 {
			f.leg[1][i] = t
		}
	}
	// The recurrence order by order over all pixels (the same values as
	// pixel by pixel: each needs its own pixel's lower orders and t,
	// which is leg[1]).
	for j := 2; j < pr.nBase; j++ {
		l2, l1, l0, ts := f.leg[j-2][:np], f.leg[j-1][:np], f.leg[j][:np], f.leg[1][:np]
		a, b, c := float64(2*j-1), float64(j-1), float64(j)
		for i := range l0 {
			l0[i] = (a*ts[i]*l1[i] - b*l2[i]) / c
		}
	}
	e0, f0 := lines[0].dE, lines[0].lnF
	for _, l := range lines {
		l.dE -= e0
		l.lnF -= f0
	}

	f.th = grow(&f.th, pr.n)
	for i := range f.th {
		f.th[i] = 0
	}
	f.model = grow(&f.model, np)
	f.jac = grow(&f.jac, np*pr.n)
	th := f.th
	th[pr.iNe] = math.Log(ne0)
	th[pr.iOff] = in.off
	if pr.iTg >= 0 {
		th[pr.iTg] = f.gasT
	}
	if pr.iIa >= 0 {
		th[pr.iIa] = f.instAt(pr.lamMid)
		if !(th[pr.iIa] > 0) {
			th[pr.iIa] = 2 * f.lines[0].px
		}
		th[pr.iIb] = 0
	}
	for _, l := range lines {
		if err := f.setupGrid(l, ne0); err != nil {
			return err
		}
	}
	// Linear start: free areas and baseline at the starting shapes.
	if f.scanOnly {
		for _, l := range f.lines {
			g, tg := f.lineInst(l, th)
			if err := f.evalLine(l, th[pr.iNe], th[pr.iOff], g, tg, false); err != nil {
				return err
			}
		}
	} else if err := f.evalLines(th); err != nil {
		return err
	}
	areas, areaSig, _, ok := f.linearAreas()
	if !ok {
		return errors.New("the starting linear fit is singular")
	}
	if f.grid == nil && f.chooseGrids(areas, ne0) {
		// The lines whose grid changed are evaluated again (the others'
		// pixel means stand), and the linear start is made afresh.
		for _, l := range f.lines {
			if !l.regrid {
				continue
			}
			l.regrid = false
			if f.scanOnly {
				g, tg := f.lineInst(l, th)
				if err := f.evalLine(l, th[pr.iNe], th[pr.iOff], g, tg, false); err != nil {
					return err
				}
			} else if err := f.evalLineAt(l, th); err != nil {
				return err
			}
		}
		if areas, areaSig, _, ok = f.linearAreas(); !ok {
			return errors.New("the starting linear fit is singular")
		}
	}
	if pr.free {
		for k := range lines {
			th[pr.iA+k] = areas[k]
		}
	} else {
		beta := 1 / (diag.BoltzmannEVPerK * 8000)
		if in.lines.ExcitationTemperatureK != nil && *in.lines.ExcitationTemperatureK > 0 {
			beta = 1 / (diag.BoltzmannEVPerK * *in.lines.ExcitationTemperatureK)
		} else if b, ok := boltzmannBeta(lines, areas, areaSig); ok {
			beta = b
		}
		th[pr.iB] = beta
		th[pr.iS] = math.Max(areas[0], 0)
		if !(th[pr.iS] > 0) {
			th[pr.iS] = math.Abs(areas[0]) + areaSig[0]
		}
	}
	f.linearBaseline()

	return nil
}

// chooseGrids chooses each line's grid from its signal over the noise,
// S = |a| √Σ(u_i/σ_i)² at the starting areas (see wholeGridTol): the
// kernel keeps its Lorentzian where dropping it would move the model
// by more than wholeLorentzTol (2γ/W·S), and the line moves to
// wholeGridFine where the default grid's own error would exceed
// wholeGridTol (wholeGridBaseErr·S), or where a Lorentzian to keep meets
// a Gaussian narrower than the default step. Every other line keeps
// wholeGridDefault and its kernel, bit for bit. It reports whether any
// line's grid changed (set up afresh; the caller evaluates again).
func (f *wholeFitter) chooseGrids(areas []float64, ne float64) bool {
	moved := false
	for k, l := range f.lines {
		var s2 float64
		us, ws := l.u[:l.phi-l.plo], f.wbuf[l.plo:l.phi] // 1/σ² (linearAreas' baseBlocks)
		ws = ws[:len(us)]
		for i, u := range us {
			s2 += u * u * ws[i]
		}
		sig := math.Abs(areas[k]) * math.Sqrt(s2)
		fine := sig*wholeGridBaseErr > wholeGridTol
		keepL := false
		if gamma := l.lorOther / 2; l.shapeSH && gamma > 0 && gamma < 0.02*l.h {
			w, _ := f.widths(l, ne, l.instG)
			keepL = 2*gamma/w*sig > wholeLorentzTol
			// The kernel keeps a Lorentzian only with a Gaussian of at
			// least the step (kernelNew): a narrower one needs the fine
			// grid's step.
			if keepL && voigt.SigmaFromFWHM(math.Sqrt(l.extra2)) < l.h {
				fine = true
			}
		}
		if !fine && !keepL || l.fine || l.keepL {
			continue
		}
		l.fine, l.lorentz = fine, keepL
		if err := f.setupGrid(l, ne); err != nil {
			l.fine, l.lorentz = false, false
			_ = f.setupGrid(l, ne)
		}
		l.regrid = true
		moved = true
	}
	return moved
}

// instAt is the fixed instrument Gaussian FWHM at λ (interpolated between
// the lines' values, or the conditions' constant).
func (f *wholeFitter) instAt(lam float64) float64 {
	if f.opt.Instrument != nil {
		g, _, _ := f.opt.Instrument.At(lam)
		return g
	}
	return f.m.InstrumentGaussFWHMNM
}

// totalWidth estimates a line's total FWHM at n_e.
func (f *wholeFitter) totalWidth(l *wline, ne, instG float64) float64 {
	w, _ := f.widths(l, ne, instG)
	return w
}

// widths returns a line's estimated total FWHM and the FWHM of its base
// shape (the SH99 table profile, or the Lorentzian of the fallback).
func (f *wholeFitter) widths(l *wline, ne, instG float64) (total, base float64) {
	d := diag.DopplerFWHMNM(l.center, f.gasT, f.mass)
	g := math.Hypot(instG, d)

	if l.sh != nil {
		if w, err := l.sh.TableWidthNM(sh99.FWHM, ne, f.tOf(l)); err == nil {
			base = w
			g = math.Sqrt(math.Max(g*g-math.Pow(l.sh.DopplerFWHMNM(f.tOf(l)), 2), 0))
		}
	}
	if base == 0 && l.rel.ID != "" {
		base = l.rel.WidthFromDensity(ne)
	}
	if base == 0 {
		base = 2 * l.px
	}
	return diag.VoigtFWHM(g, base+l.lorOther), base
}

// setupGrid fixes a line's fine grid, its wing nodes and its pixel range.
func (f *wholeFitter) setupGrid(l *wline, ne float64) error {
	g := &wholeGridDefault
	switch {
	case f.grid != nil:
		g = f.grid
	case l.fine:
		g = &wholeGridFine
	}
	l.keepL = g.keepLorentz || l.lorentz && f.grid == nil
	w, wb := f.widths(l, ne, l.instG)
	l.h = math.Min(w/g.perWidth, wb/g.perBase)
	if !(l.h > 0) || math.IsInf(l.h, 0) {
		return fmt.Errorf("%s: no usable line width at n_e = %.3g m⁻³", l.t.Name(), ne)
	}
	half := math.Max(g.coreWidths*w, g.corePixels*l.px)
	l.m = int(math.Ceil(half / l.h))
	if l.m > g.maxBins/2 {
		l.m = g.maxBins / 2
		l.h = half / float64(l.m)
	}
	edge := (float64(l.m) + 0.5) * l.h
	l.reach = g.wingReach * edge
	// Wing nodes: geometric from the grid's edge to the reach.
	l.wing = l.wing[:0]
	for d := edge; len(l.wing) < g.maxWing; d *= g.wingStep {
		l.wing = append(l.wing, d)
		if !(d < l.reach) {
			break
		}
	}
	if len(l.wing) < 2 {
		l.wing = append(l.wing, 2*edge)
	}
	nw := len(l.wing)
	l.wingH = grow(&l.wingH, nw-1)
	l.wingInvH = grow(&l.wingInvH, nw-1)
	for i := range nw - 1 {
		l.wingH[i] = l.wing[i+1] - l.wing[i]
		l.wingInvH[i] = 1 / l.wingH[i]
	}
	l.wc = grow(&l.wc, 2*nw)
	l.wp = grow(&l.wp, 2*nw)
	l.wd = grow(&l.wd, 2*nw)
	l.plo = max(index(f.x, l.center-l.reach), 0)
	l.phi = min(index(f.x, l.center+l.reach), len(f.x))
	nb := 2*l.m + 1
	l.cum = grow(&l.cum, nb+1)
	l.pe = grow(&l.pe, nb+1)
	l.pq = grow(&l.pq, nb+1)
	l.dcum = grow(&l.dcum, nb+1)
	l.fq = grow(&l.fq, nb+1)
	l.dfq = grow(&l.dfq, nb+1)
	l.dsl = grow(&l.dsl, nb+1)
	l.mass = grow(&l.mass, nb)
	l.dmass = grow(&l.dmass, nb)
	l.q = grow(&l.q, nb)
	l.dq = grow(&l.dq, nb)
	nh := l.m + 1 + nw
	l.hd = grow(&l.hd, nh)
	l.hv = grow(&l.hv, nh)
	l.hp = grow(&l.hp, nh)
	l.hdv = grow(&l.hdv, nh)
	for k := 0; k <= l.m; k++ {
		l.hd[k] = (float64(k) + 0.5) * l.h
	}
	copy(l.hd[l.m+1:], l.wing)
	k := l.phi - l.plo
	l.u = grow(&l.u, k)
	l.du = grow(&l.du, k)
	l.dn = grow(&l.dn, k)
	return nil
}

// kernL is the kernel Lorentzian FWHM of the last evaluation.
func (l *wline) kernL() float64 { return l.kL }

// lineShape prepares a line's base shape at ln n_e (for wline.half) and
// returns the Gaussian and Lorentzian FWHM of the kernel still to be
// applied.
func (f *wholeFitter) lineShape(l *wline, lnNe, instG, gasT float64) (float64, float64, error) {
	ne := math.Exp(lnNe)
	dg := diag.DopplerFWHMNM(l.center, gasT, f.mass)
	g2 := instG*instG + dg*dg
	l.clampGap2 = 0
	if l.shapeSH {
		held := ne < l.neLo || ne > l.neHi
		ne = math.Min(math.Max(ne, l.neLo), l.neHi)
		te := f.tOf(l)
		s, err := l.sh.Shape(ne, te)
		if err != nil {
			return 0, 0, err
		}
		l.shp = s
		l.held = held
		dt := l.sh.DopplerFWHMNM(te)
		e2 := g2 - dt*dt
		if e2 < 0 {
			l.clampGap2 = -e2
			e2 = 0
		}
		l.extra2 = e2
		return math.Sqrt(e2), l.lorOther, nil
	}
	// Voigt fallback: a Lorentzian of the Stark FWHM of the default
	// relation plus the other Lorentzians, convolved with the Gaussian.
	w := l.rel.LorentzianWidthNM(l.rel.WidthFromDensity(ne))
	p := l.rel.Exponent
	l.starkFWHM = w
	l.extra2 = g2
	l.vGamma = (w + l.lorOther) / 2
	l.vDGamma = p * w / 2 // dγ/dln n_e
	return math.Sqrt(g2), 0, nil
}

// shStarkFWHM returns the Stark-only FWHM of tabulated line l at ln n_e
// (held at the tables' range, read at the line's temperature as
// lineShape reads its shape; 0 where the tables give none).
func (f *wholeFitter) shStarkFWHM(l *wline, lnNe float64) float64 {
	ne := math.Min(math.Max(math.Exp(lnNe), l.neLo), l.neHi)
	if w, err := l.sh.StarkWidthNM(sh99.FWHM, ne, f.tOf(l)); err == nil {
		return w
	}
	return 0
}

// half evaluates the line's base shape, as the last lineShape prepared
// it, at detuning d ≥ 0 (nm): the odd part v of its cumulative integral
// (C(±d) = ½ ± v), its density p (even in d) and, with deriv, the
// derivative dv of v in ln n_e (that of C(±d) is ±dv; 0 without deriv).
// A shape held at the end of its tables does not follow n_e: its dv is
// 0 (evalLine writes 0 on both sides).
func (l *wline) half(d float64, deriv bool) (v, p, dv float64) {
	if l.shapeSH {
		if !deriv || l.held {
			v, p = l.shp.HalfValue(d)
			return v, p, 0
		}
		return l.shp.Half(d)
	}
	gamma := l.vGamma
	den := gamma*gamma + d*d
	v = math.Atan(d/gamma) / math.Pi
	p = gamma / (math.Pi * den)
	if deriv {
		dv = -d / (math.Pi * den) * l.vDGamma
	}
	return v, p, dv
}

// halves evaluates the line's base shape as wline.half does, bit for
// bit, at every detuning of l.hd into l.hv, l.hp and l.hdv: a tabulated
// shape through sh99's batch forms (Shape.Halves, HalfValues: corner by
// corner over all detunings).
func (l *wline) halves(deriv bool) {
	ds := l.hd
	hv, hp, hdv := l.hv[:len(ds)], l.hp[:len(ds)], l.hdv[:len(ds)]
	if !l.shapeSH {
		for k, d := range ds {
			hv[k], hp[k], hdv[k] = l.half(d, deriv)
		}
		return
	}
	if !deriv || l.held {
		l.shp.HalfValues(ds, hv, hp)
		for k := range hdv {
			hdv[k] = 0
		}
		return
	}
	l.shp.Halves(ds, hv, hp, hdv)
}

// evalLine computes the line's unit profile's pixel means (u), their
// derivative in the offset (du) and in ln n_e (dn) over its pixel range,
// for line centre λ_k + off. Without deriv only u is computed (the same,
// bit for bit); du and dn are left alone.
//
// The fine grid's edges are symmetric about the centre, ±(k + ½)h for
// k = 0 … m, and so are the base shape's bin masses, its densities at
// the edges and the masses' derivative in ln n_e: the shape is evaluated
// on the right half (wline.half) and mirrored, the masses taken as
// differences of the cumulative's odd part (no cancellation against ½),
// and the symmetric kernel's output is computed on one half (convolve).
func (f *wholeFitter) evalLine(l *wline, lnNe, off, instG, gasT float64, deriv bool) error {
	if err := f.evalGrid(l, lnNe, instG, gasT, deriv); err != nil {
		return err
	}
	f.pixels(l, off, deriv)
	return nil
}

// evalGrid is evalLine up to the pixels: the base shape on the fine grid
// and the wing nodes, its bin masses and their convolution with the
// kernel (l.cum[0], l.q, l.pq, l.wc, l.wp and, with deriv, their ln n_e
// derivatives), from which pixels takes the pixel means.
func (f *wholeFitter) evalGrid(l *wline, lnNe, instG, gasT float64, deriv bool) error {
	gF, lF, err := f.lineShape(l, lnNe, instG, gasT)
	if err != nil {
		return err
	}
	l.kL = lF
	m := l.m
	l.halves(deriv)
	hv, hp, hdv := l.hv[:len(l.hd)], l.hp[:len(l.hd)], l.hdv[:len(l.hd)]
	var vPrev, dvPrev float64
	for k := 0; k <= m; k++ {
		v, p, dv := hv[k], hp[k], hdv[k]
		jr, jl := m+1+k, m-k
		l.cum[jr], l.cum[jl] = 0.5+v, 0.5-v
		l.pe[jr], l.pe[jl] = p, p
		l.dcum[jr], l.dcum[jl] = dv, 0-dv
		// Bin m lies between edges m and m+1; bins m ± k (k ≥ 1) between
		// the k−1st and kth edges of either side.
		if k == 0 {
			l.mass[m] = 2 * v
			l.dmass[m] = 2 * dv
		} else {
			mk, dk := v-vPrev, dv-dvPrev
			l.mass[m+k], l.mass[m-k] = mk, mk
			l.dmass[m+k], l.dmass[m-k] = dk, dk
		}
		vPrev, dvPrev = v, dv
	}
	// Wing nodes, left (index i) and right (nw + i).
	nw := len(l.wing)
	for i := range l.wing {
		v, p, dv := hv[m+1+i], hp[m+1+i], hdv[m+1+i]
		l.wc[i], l.wp[i], l.wd[i] = 0.5-v, p, 0-dv
		l.wc[nw+i], l.wp[nw+i], l.wd[nw+i] = 0.5+v, p, dv
	}
	f.convolve(l, gF, lF, deriv)
	return nil
}

// convolve convolves the bin masses with the kernel of Gaussian FWHM gF
// and Lorentzian FWHM lF into l.q, l.dq (masses per bin). The broadened
// cumulative at a bin edge is F(e_j) = ∫ C(e_j − y) K(y) dy; on the grid
// the trapezoidal rule over y = kh gives F_j = Σ_k K(kh)h·C_{j−k}, and by
// linearity the same weights move the bin masses. The trapezoidal rule
// converges exponentially for a Gaussian kernel and a shape smooth on
// the grid step (h ≤ 1/12 of the line's total FWHM and ≤ 1/4 of the
// base shape's: wholeGridDefault), so no variance correction
// is made; a kernel much narrower than h is the identity to within its
// own (negligible) width. A Gaussian narrower than the step is given
// three weights with its exact variance instead of samples. The weights
// are normalised to sum to 1 (the area is kept). Without deriv the ln n_e
// derivatives (l.dq) are left alone: l.q and l.pq are the same, bit for
// bit (pixels without deriv reads no more).
func (f *wholeFitter) convolve(l *wline, gF, lF float64, deriv bool) {
	nb := 2*l.m + 1
	kern, r, ok := l.kernel(gF, lF)
	if !ok {
		copy(l.q, l.mass)
		if deriv {
			copy(l.dq, l.dmass)
		}
		copy(l.pq, l.pe)
		return
	}
	// Bin masses (q, dq, nb values) and edge densities (pq, nb+1 values)
	// in one pass; the kernel is symmetric (kern[j−i+r] = kern[i−j+r]),
	// and so are the masses, their derivatives and the densities about
	// the grid's centre (evalLine): the left half and the centre bin are
	// computed (edges and bins 0 … m) and mirrored.
	m := l.m
	// Where the kernel's reach lies inside the grid (r ≤ j ≤ nb−1−r) its
	// two halves are folded: k₀·x_j + Σ_t k_t (x_{j−t} + x_{j+t}).
	kh := kern[r : 2*r+1] // k₀ … k_r
	if !deriv {
		// The loop below without ds.
		for j := 0; j <= m; j++ {
			if j >= r && j+1 <= m && j+1+r <= nb-1 && !f.generic {
				// Two outputs, j and j + 1, at once: the same sums, their
				// chains of additions interleaved.
				ms, ps := l.mass[j-r:j+r+2], l.pe[j-r:j+r+2]
				s, sp := kh[0]*ms[r], kh[0]*ps[r]
				s2, sp2 := kh[0]*ms[r+1], kh[0]*ps[r+1]
				for t := 1; t <= r; t++ {
					k := kh[t]
					s += k * (ms[r-t] + ms[r+t])
					sp += k * (ps[r-t] + ps[r+t])
					s2 += k * (ms[r+1-t] + ms[r+1+t])
					sp2 += k * (ps[r+1-t] + ps[r+1+t])
				}
				l.q[j], l.q[nb-1-j] = s, s
				l.pq[j], l.pq[nb-j] = sp, sp
				l.q[j+1], l.q[nb-2-j] = s2, s2
				l.pq[j+1], l.pq[nb-1-j] = sp2, sp2
				j++
				continue
			}
			if j >= r && j+r <= nb-1 {
				ms, ps := l.mass[j-r:j+r+1], l.pe[j-r:j+r+1]
				s, sp := kh[0]*ms[r], kh[0]*ps[r]
				for t := 1; t <= r; t++ {
					s += kh[t] * (ms[r-t] + ms[r+t])
					sp += kh[t] * (ps[r-t] + ps[r+t])
				}
				l.q[j], l.q[nb-1-j] = s, s
				l.pq[j], l.pq[nb-j] = sp, sp
				continue
			}
			lo, hi := max(j-r, 0), min(j+r, nb)
			k := kern[lo-j+r : hi-j+r+1]
			ps := l.pe[lo : hi+1]
			var s, sp float64
			if hi == nb {
				ms := l.mass[lo:nb]
				for i := range ms {
					s += k[i] * ms[i]
				}
				for i, kv := range k {
					sp += kv * ps[i]
				}
			} else {
				ms := l.mass[lo : hi+1]
				ps = ps[:len(k)]
				ms = ms[:len(k)]
				for i, kv := range k {
					s += kv * ms[i]
					sp += kv * ps[i]
				}
			}
			l.q[j], l.q[nb-1-j] = s, s
			l.pq[j], l.pq[nb-j] = sp, sp
		}
		return
	}
	for j := 0; j <= m; j++ {
		if j >= r && j+1 <= m && j+1+r <= nb-1 && !f.generic {
			// Two outputs, j and j + 1, at once: the same sums, their
			// chains of additions interleaved.
			ms, dms, ps := l.mass[j-r:j+r+2], l.dmass[j-r:j+r+2], l.pe[j-r:j+r+2]
			s, ds, sp := kh[0]*ms[r], kh[0]*dms[r], kh[0]*ps[r]
			s2, ds2, sp2 := kh[0]*ms[r+1], kh[0]*dms[r+1], kh[0]*ps[r+1]
			for t := 1; t <= r; t++ {
				k := kh[t]
				s += k * (ms[r-t] + ms[r+t])
				ds += k * (dms[r-t] + dms[r+t])
				sp += k * (ps[r-t] + ps[r+t])
				s2 += k * (ms[r+1-t] + ms[r+1+t])
				ds2 += k * (dms[r+1-t] + dms[r+1+t])
				sp2 += k * (ps[r+1-t] + ps[r+1+t])
			}
			l.q[j], l.dq[j] = s, ds
			l.q[nb-1-j], l.dq[nb-1-j] = s, ds
			l.pq[j], l.pq[nb-j] = sp, sp
			l.q[j+1], l.dq[j+1] = s2, ds2
			l.q[nb-2-j], l.dq[nb-2-j] = s2, ds2
			l.pq[j+1], l.pq[nb-1-j] = sp2, sp2
			j++
			continue
		}
		if j >= r && j+r <= nb-1 {
			ms, dms, ps := l.mass[j-r:j+r+1], l.dmass[j-r:j+r+1], l.pe[j-r:j+r+1]
			s, ds, sp := kh[0]*ms[r], kh[0]*dms[r], kh[0]*ps[r]
			for t := 1; t <= r; t++ {
				s += kh[t] * (ms[r-t] + ms[r+t])
				ds += kh[t] * (dms[r-t] + dms[r+t])
				sp += kh[t] * (ps[r-t] + ps[r+t])
			}
			l.q[j], l.dq[j] = s, ds
			l.q[nb-1-j], l.dq[nb-1-j] = s, ds
			l.pq[j], l.pq[nb-j] = sp, sp
			continue
		}
		lo, hi := max(j-r, 0), min(j+r, nb)
		k := kern[lo-j+r : hi-j+r+1]
		ps := l.pe[lo : hi+1]
		var s, ds, sp float64
		if hi == nb {
			// The last edge has no bin: masses up to nb−1.
			ms, dms := l.mass[lo:nb], l.dmass[lo:nb]
			for i := range ms {
				s += k[i] * ms[i]
				ds += k[i] * dms[i]
			}
			for i, kv := range k {
				sp += kv * ps[i]
			}
		} else {
			ms, dms := l.mass[lo:hi+1], l.dmass[lo:hi+1]
			ps = ps[:len(k)]
			ms, dms = ms[:len(k)], dms[:len(k)]
			for i, kv := range k {
				s += kv * ms[i]
				ds += kv * dms[i]
				sp += kv * ps[i]
			}
		}
		l.q[j], l.dq[j] = s, ds
		l.q[nb-1-j], l.dq[nb-1-j] = s, ds
		l.pq[j], l.pq[nb-j] = sp, sp
	}
}

// kernel returns the line's sampled kernel of Gaussian FWHM gF and
// Lorentzian FWHM lF on its grid step (2r+1 weights, symmetric,
// normalised to sum 1; see convolve), in l.kern; ok is false where the
// kernel is the identity.
func (l *wline) kernel(gF, lF float64) (kern []float64, r int, ok bool) {
	// The kernel of the last call is kept: most evaluations repeat it
	// (the Gaussian and Lorentzian widths change only with a free gas
	// temperature or instrument width, and with T_e in densitySys).
	if c := &l.kc; c.valid && c.gF == gF && c.lF == lF && c.h == l.h && c.m == l.m && c.keepL == l.keepL {
		if !c.ok {
			return nil, 0, false
		}
		return l.kern[:2*c.r+1], c.r, true
	}
	kern, r, ok = l.kernelNew(gF, lF)
	l.kc = kernCache{valid: true, gF: gF, lF: lF, h: l.h, m: l.m, r: r, ok: ok, keepL: l.keepL}
	return kern, r, ok
}

// kernCache records the arguments and outcome of a line's last kernel
// (its weights are in l.kern).
type kernCache struct {
	valid     bool
	gF, lF, h float64
	m, r      int
	ok, keepL bool
}

// kernelNew computes kernel's weights afresh.
func (l *wline) kernelNew(gF, lF float64) (kern []float64, r int, ok bool) {
	h := l.h
	nb := 2*l.m + 1
	sigma := voigt.SigmaFromFWHM(gF)
	gamma := lF / 2
	keep := gamma >= 0.02*h || l.keepL && gamma > 0 && sigma >= h
	if sigma < 0.05*h && !keep {
		return nil, 0, false
	}
	// 4.5σ: the Gaussian's mass beyond is 7e-6 (renormalised below).
	reach := 4.5 * sigma
	if keep {
		reach += 20 * gamma
	} else {
		gamma = 0
	}
	r = min(int(math.Ceil(reach/h)), nb)
	kern = grow(&l.kern, 2*r+1)
	var ks float64
	switch {
	case gamma == 0 && sigma < h:
		// A Gaussian narrower than the step is not sampled well: three
		// weights with its variance, 2a·h² = σ² (exact to second order).
		r = 1
		kern = grow(&l.kern, 3)
		a := sigma * sigma / (2 * h * h)
		kern[0], kern[1], kern[2] = a, 1-2*a, a
		ks = 1
	case gamma == 0:
		// The Gaussian's samples are even in i (float64(−i)·h is −(i·h)):
		// computed once for ±i, summed in order.
		for i := 0; i <= r; i++ {
			d := float64(i) * h
			v := math.Exp(-d * d / (2 * sigma * sigma))
			kern[r+i], kern[r-i] = v, v
		}
		for _, v := range kern {
			ks += v
		}
	default:
		for i := -r; i <= r; i++ {
			d := float64(i) * h
			var v float64
			if sigma < 0.05*h {
				v = 1 / (gamma*gamma + d*d)
			} else {
				v = voigt.Profile(d, sigma, gamma)
			}
			kern[i+r] = v
			ks += v
		}
	}
	if !(ks > 0) {
		return nil, 0, false
	}
	for i := range kern {
		kern[i] /= ks
	}
	return kern, r, true
}

// pixels turns the broadened bin masses into pixel means: the
// broadened cumulative F on the bin edges, cubic Hermite between them
// (slopes: the densities of the neighbouring bins), the shape's own
// cumulative in the wings (Hermite between the geometric wing nodes,
// with the profile as slope; the far wing is not changed by the kernel),
// shifted on the right by what the kernel moved across the grid's end.
// Without deriv only the means l.u are computed (the same, bit for bit),
// from l.q and l.pq alone; l.du and l.dn are left alone.
func (f *wholeFitter) pixels(l *wline, off float64, deriv bool) {
	h := l.h
	nb := 2*l.m + 1
	e0 := -(float64(l.m) + 0.5) * h
	eEnd := -e0
	F, dF := l.fq, l.dfq
	F[0], dF[0] = l.cum[0], l.dcum[0]
	if deriv {
		for j := range nb {
			F[j+1] = F[j] + l.q[j]
			dF[j+1] = dF[j] + l.dq[j]
		}
		sl := l.dsl[:nb+1]
		for j := range sl {
			sl[j] = edgeSlope(l.dq, j, nb)
		}
	} else {
		for j := range nb {
			F[j+1] = F[j] + l.q[j]
		}
	}
	nw := len(l.wing)
	e := edgeEval{l: l, F: F, dF: dF, e0: e0, eEnd: eEnd, h: h, invH: 1 / h, shR: F[nb] - l.wc[nw], dshR: dF[nb] - l.wd[nw],
		nb: nb, nw: nw, deriv: deriv}
	ctr := l.center + off
	if !deriv {
		// Values only: the same F as at gives, bit for bit.
		fa, fb, iws, us := f.a[l.plo:l.phi], f.b[l.plo:l.phi], f.invW[l.plo:l.phi], l.u[:l.phi-l.plo]
		fb = fb[:len(fa)]
		iws = iws[:len(fa)]
		us = us[:len(fa)]
		pa := e.value(fa[0] - ctr)
		for k := range fa {
			if k > 0 && fa[k] != fb[k-1] {
				pa = e.value(fa[k] - ctr)
			}
			cb := e.value(fb[k] - ctr)
			us[k] = (cb - pa) * iws[k]
			pa = cb
		}
		return
	}
	fa, fb, iws := f.a[l.plo:l.phi], f.b[l.plo:l.phi], f.invW[l.plo:l.phi]
	fb, iws = fb[:len(fa)], iws[:len(fa)]
	us, dns, dus := l.u[:len(fa)], l.dn[:len(fa)], l.du[:len(fa)]
	if f.generic {
		pa, pda, pdens := e.at(fa[0] - ctr)
		for k := range fa {
			if k > 0 && fa[k] != fb[k-1] {
				pa, pda, pdens = e.at(fa[k] - ctr)
			}
			cb, dcb, densb := e.at(fb[k] - ctr)
			iw := iws[k] // 1/(b − a)
			us[k] = (cb - pa) * iw
			dns[k] = (dcb - pda) * iw
			// d/dδ of the mean = −(density(b) − density(a))/w.
			dus[k] = (pdens - densb) * iw
			pa, pda, pdens = cb, dcb, densb
		}
		return
	}
	// The loop above in three stretches of pixels by where their upper
	// edge lies (the edges ascend): left of the grid, on it, right of
	// it, each with its branch of edgeEval.at inlined (the same
	// operations; a pixel's lower edge, when it is not the previous
	// pixel's upper edge, through at).
	n := len(fa)
	wing, wc, wp, wd := l.wing[:nw], l.wc[:2*nw], l.wp[:2*nw], l.wd[:2*nw]
	wingH, wingInvH := l.wingH[:nw-1], l.wingInvH[:nw-1]
	pa, pda, pdens := e.at(fa[0] - ctr)
	k := 0
	for ; k < n; k++ {
		t := fb[k] - ctr
		if !(t < e0) {
			break
		}
		if k > 0 && fa[k] != fb[k-1] {
			pa, pda, pdens = e.at(fa[k] - ctr)
		}
		var cb, dcb, densb float64
		if d := -t; d >= wing[nw-1] {
			cb, dcb = wc[nw-1], wd[nw-1]
		} else {
			wl := e.wl
			for wl > 0 && d < wing[wl] {
				wl--
			}
			for wl < nw-2 && d >= wing[wl+1] {
				wl++
			}
			e.wl = wl
			hh, ih := wingH[wl], wingInvH[wl]
			u := (t + wing[wl+1]) * ih
			c0, c1, d0, d1 := wc[wl+1], wc[wl], wp[wl+1]*hh, wp[wl]*hh
			cb = hermiteValue(c0, c1, d0, d1, u)
			densb = hermiteSlope(c0, c1, d0, d1, u) * ih
			dcb = wd[wl+1] + u*(wd[wl]-wd[wl+1])
		}
		iw := iws[k]
		us[k] = (cb - pa) * iw
		dns[k] = (dcb - pda) * iw
		dus[k] = (pdens - densb) * iw
		pa, pda, pdens = cb, dcb, densb
	}
	Fg, dFg, pqg, slg := F[:nb+1], dF[:nb+1], l.pq[:nb+1], l.dsl[:nb+1]
	invH := e.invH
	for ; k < n; k++ {
		t := fb[k] - ctr
		if t > eEnd {
			break
		}
		if k > 0 && fa[k] != fb[k-1] {
			pa, pda, pdens = e.at(fa[k] - ctr)
		}
		fj := (t - e0) * invH
		j := min(int(fj), nb-1)
		u := fj - float64(j)
		c0, c1, d0, d1 := Fg[j], Fg[j+1], pqg[j]*h, pqg[j+1]*h
		cb := hermiteValue(c0, c1, d0, d1, u)
		densb := hermiteSlope(c0, c1, d0, d1, u) * invH
		dcb := hermiteValue(dFg[j], dFg[j+1], slg[j], slg[j+1], u)
		iw := iws[k]
		us[k] = (cb - pa) * iw
		dns[k] = (dcb - pda) * iw
		dus[k] = (pdens - densb) * iw
		pa, pda, pdens = cb, dcb, densb
	}
	for ; k < n; k++ {
		t := fb[k] - ctr
		if k > 0 && fa[k] != fb[k-1] {
			pa, pda, pdens = e.at(fa[k] - ctr)
		}
		var cb, dcb, densb float64
		if t >= wing[nw-1] {
			cb, dcb = wc[2*nw-1]+e.shR, wd[2*nw-1]+e.dshR
		} else {
			wr := e.wr
			for wr > 0 && t < wing[wr] {
				wr--
			}
			for wr < nw-2 && t >= wing[wr+1] {
				wr++
			}
			e.wr = wr
			hh, ih := wingH[wr], wingInvH[wr]
			u := (t - wing[wr]) * ih
			c0, c1, d0, d1 := wc[nw+wr], wc[nw+wr+1], wp[nw+wr]*hh, wp[nw+wr+1]*hh
			cb = hermiteValue(c0, c1, d0, d1, u) + e.shR
			densb = hermiteSlope(c0, c1, d0, d1, u) * ih
			dc := wd[nw+wr] + u*(wd[nw+wr+1]-wd[nw+wr])
			dcb = dc + e.dshR
		}
		iw := iws[k]
		us[k] = (cb - pa) * iw
		dns[k] = (dcb - pda) * iw
		dus[k] = (pdens - densb) * iw
		pa, pda, pdens = cb, dcb, densb
	}
}

// stashGrid keeps the line's grid state of the last evalGrid aside for
// pixelsPair: the broadened cumulative on the bin edges (summed as
// pixels sums it), the broadened densities there and the wing nodes'
// cumulative and density.
func (l *wline) stashGrid() {
	nb := 2*l.m + 1
	nw := len(l.wing)
	F := grow(&l.fqAlt, nb+1)
	F[0] = l.cum[0]
	for j := range nb {
		F[j+1] = F[j] + l.q[j]
	}
	l.pqAlt = append(l.pqAlt[:0], l.pq[:nb+1]...)
	l.wcAlt = append(l.wcAlt[:0], l.wc[:2*nw]...)
	l.wpAlt = append(l.wpAlt[:0], l.wp[:2*nw]...)
}

// pixelsPair is pixels without deriv for two grid states of the line at
// once: the one stashGrid kept (means into l.uAlt) and the current one
// (means into l.uCur; l.u is left alone), each bit for bit what pixels
// gives from that state. The position of every pixel edge on the grid
// or between the wing nodes, and its cubic Hermite weights, are found
// once for both.
func (f *wholeFitter) pixelsPair(l *wline, off float64) {
	h := l.h
	nb := 2*l.m + 1
	nw := len(l.wing)
	e0 := -(float64(l.m) + 0.5) * h
	F := l.fq
	F[0] = l.cum[0]
	for j := range nb {
		F[j+1] = F[j] + l.q[j]
	}
	e := pairEval{l: l, e0: e0, eEnd: -e0, h: h, invH: 1 / h, nb: nb, nw: nw,
		F1: l.fqAlt[:nb+1], pq1: l.pqAlt[:nb+1], wc1: l.wcAlt[:2*nw], wp1: l.wpAlt[:2*nw], shR1: l.fqAlt[nb] - l.wcAlt[nw],
		F2: F[:nb+1], pq2: l.pq[:nb+1], wc2: l.wc[:2*nw], wp2: l.wp[:2*nw], shR2: F[nb] - l.wc[nw]}
	ctr := l.center + off
	n := l.phi - l.plo
	u1, u2 := grow(&l.uAlt, n), grow(&l.uCur, n)
	fa, fb, iws := f.a[l.plo:l.phi], f.b[l.plo:l.phi], f.invW[l.plo:l.phi]
	fb, iws, u1, u2 = fb[:len(fa)], iws[:len(fa)], u1[:len(fa)], u2[:len(fa)]
	// The pixels in three stretches by where their upper edge lies (the
	// edges ascend), each with its branch of pairEval.value inlined (as
	// pixels with deriv); a lower edge that is not the previous pixel's
	// upper edge through pairEval.value.
	pa1, pa2 := e.value(fa[0] - ctr)
	wing, wingH, wingInvH := l.wing[:nw], l.wingH[:nw-1], l.wingInvH[:nw-1]
	wc1, wp1, wc2, wp2 := e.wc1, e.wp1, e.wc2, e.wp2
	n, k := len(fa), 0
	for ; k < n; k++ {
		t := fb[k] - ctr
		if !(t < e.e0) {
			break
		}
		if k > 0 && fa[k] != fb[k-1] {
			pa1, pa2 = e.value(fa[k] - ctr)
		}
		var cb1, cb2 float64
		if d := -t; d >= wing[nw-1] {
			cb1, cb2 = wc1[nw-1], wc2[nw-1]
		} else {
			wl := e.wl
			for wl > 0 && d < wing[wl] {
				wl--
			}
			for wl < nw-2 && d >= wing[wl+1] {
				wl++
			}
			e.wl = wl
			hh, ih := wingH[wl], wingInvH[wl]
			b0, b1, b2, b3 := hermiteBasis((t + wing[wl+1]) * ih)
			cb1 = b0*wc1[wl+1] + b1*(wp1[wl+1]*hh) + b2*wc1[wl] + b3*(wp1[wl]*hh)
			cb2 = b0*wc2[wl+1] + b1*(wp2[wl+1]*hh) + b2*wc2[wl] + b3*(wp2[wl]*hh)
		}
		u1[k] = (cb1 - pa1) * iws[k]
		u2[k] = (cb2 - pa2) * iws[k]
		pa1, pa2 = cb1, cb2
	}
	F1, pq1, F2, pq2 := e.F1[:nb+1], e.pq1[:nb+1], e.F2[:nb+1], e.pq2[:nb+1]
	for ; k < n; k++ {
		t := fb[k] - ctr
		if t > e.eEnd {
			break
		}
		if k > 0 && fa[k] != fb[k-1] {
			pa1, pa2 = e.value(fa[k] - ctr)
		}
		fj := (t - e.e0) * e.invH
		j := min(int(fj), nb-1)
		b0, b1, b2, b3 := hermiteBasis(fj - float64(j))
		cb1 := b0*F1[j] + b1*(pq1[j]*h) + b2*F1[j+1] + b3*(pq1[j+1]*h)
		cb2 := b0*F2[j] + b1*(pq2[j]*h) + b2*F2[j+1] + b3*(pq2[j+1]*h)
		u1[k] = (cb1 - pa1) * iws[k]
		u2[k] = (cb2 - pa2) * iws[k]
		pa1, pa2 = cb1, cb2
	}
	for ; k < n; k++ {
		t := fb[k] - ctr
		if k > 0 && fa[k] != fb[k-1] {
			pa1, pa2 = e.value(fa[k] - ctr)
		}
		var cb1, cb2 float64
		if t >= wing[nw-1] {
			cb1, cb2 = wc1[2*nw-1]+e.shR1, wc2[2*nw-1]+e.shR2
		} else {
			wr := e.wr
			for wr > 0 && t < wing[wr] {
				wr--
			}
			for wr < nw-2 && t >= wing[wr+1] {
				wr++
			}
			e.wr = wr
			hh, ih := wingH[wr], wingInvH[wr]
			b0, b1, b2, b3 := hermiteBasis((t - wing[wr]) * ih)
			i := nw + wr
			cb1 = b0*wc1[i] + b1*(wp1[i]*hh) + b2*wc1[i+1] + b3*(wp1[i+1]*hh) + e.shR1
			cb2 = b0*wc2[i] + b1*(wp2[i]*hh) + b2*wc2[i+1] + b3*(wp2[i+1]*hh) + e.shR2
		}
		u1[k] = (cb1 - pa1) * iws[k]
		u2[k] = (cb2 - pa2) * iws[k]
		pa1, pa2 = cb1, cb2
	}
}

// pairEval is edgeEval.value for two grid states of one line (1 and 2;
// pixelsPair): each value is the same, bit for bit, the Hermite weights
// computed once (hermiteBasis: hermiteValue's own).
type pairEval struct {
	l                 *wline
	F1, pq1, wc1, wp1 []float64
	F2, pq2, wc2, wp2 []float64
	shR1, shR2        float64
	e0, eEnd, h, invH float64
	nb, nw, wl, wr    int
}

func (e *pairEval) value(t float64) (v1, v2 float64) {
	l, nw := e.l, e.nw
	wing := l.wing[:nw]
	if t < e.e0 {
		// edgeEval.leftValue.
		d := -t
		if d >= wing[nw-1] {
			return e.wc1[nw-1], e.wc2[nw-1]
		}
		wl := e.wl
		for wl > 0 && d < wing[wl] {
			wl--
		}
		for wl < nw-2 && d >= wing[wl+1] {
			wl++
		}
		e.wl = wl
		hh, ih := l.wingH[wl], l.wingInvH[wl]
		b0, b1, b2, b3 := hermiteBasis((t + wing[wl+1]) * ih)
		v1 = b0*e.wc1[wl+1] + b1*(e.wp1[wl+1]*hh) + b2*e.wc1[wl] + b3*(e.wp1[wl]*hh)
		v2 = b0*e.wc2[wl+1] + b1*(e.wp2[wl+1]*hh) + b2*e.wc2[wl] + b3*(e.wp2[wl]*hh)
		return v1, v2
	}
	if t > e.eEnd {
		// edgeEval.rightValue.
		if t >= wing[nw-1] {
			return e.wc1[2*nw-1] + e.shR1, e.wc2[2*nw-1] + e.shR2
		}
		wr := e.wr
		for wr > 0 && t < wing[wr] {
			wr--
		}
		for wr < nw-2 && t >= wing[wr+1] {
			wr++
		}
		e.wr = wr
		hh, ih := l.wingH[wr], l.wingInvH[wr]
		b0, b1, b2, b3 := hermiteBasis((t - wing[wr]) * ih)
		i := nw + wr
		v1 = b0*e.wc1[i] + b1*(e.wp1[i]*hh) + b2*e.wc1[i+1] + b3*(e.wp1[i+1]*hh) + e.shR1
		v2 = b0*e.wc2[i] + b1*(e.wp2[i]*hh) + b2*e.wc2[i+1] + b3*(e.wp2[i+1]*hh) + e.shR2
		return v1, v2
	}
	fj := (t - e.e0) * e.invH
	j := min(int(fj), e.nb-1)
	b0, b1, b2, b3 := hermiteBasis(fj - float64(j))
	h := e.h
	F1, pq1, F2, pq2 := e.F1[j:j+2], e.pq1[j:j+2], e.F2[j:j+2], e.pq2[j:j+2]
	v1 = b0*F1[0] + b1*(pq1[0]*h) + b2*F1[1] + b3*(pq1[1]*h)
	v2 = b0*F2[0] + b1*(pq2[0]*h) + b2*F2[1] + b3*(pq2[1]*h)
	return v1, v2
}

// edgeEval evaluates a line's broadened cumulative F, its derivative in
// ln n_e and the broadened density at a detuning (pixels): on the grid
// from the bin edges' F (cubic Hermite, the broadened densities as
// slopes), beyond it from the wing nodes; wl and wr walk the left and
// right wing nodes (the detunings come in ascending order).
type edgeEval struct {
	l                 *wline
	F, dF             []float64
	e0, eEnd, h, invH float64
	shR, dshR         float64
	nb, nw, wl, wr    int
	deriv             bool
}

// at returns F, dF/dln n_e and the density at detuning t (nm); without
// deriv only F (the others 0).
func (e *edgeEval) at(t float64) (c, dc, dens float64) {
	l, nw := e.l, e.nw
	switch {
	case t < e.e0:
		d := -t
		if d >= l.wing[nw-1] {
			return l.wc[nw-1], l.wd[nw-1], 0
		}
		wl := e.wl
		for wl > 0 && d < l.wing[wl] {
			wl--
		}
		for wl < nw-2 && d >= l.wing[wl+1] {
			wl++
		}
		e.wl = wl
		// Nodes at −wing[wl] (right end) and −wing[wl+1] (left end).
		hh, ih := l.wingH[wl], l.wingInvH[wl]
		u := (t + l.wing[wl+1]) * ih
		c0, c1, d0, d1 := l.wc[wl+1], l.wc[wl], l.wp[wl+1]*hh, l.wp[wl]*hh
		c = hermiteValue(c0, c1, d0, d1, u)
		if !e.deriv {
			return c, 0, 0
		}
		dens = hermiteSlope(c0, c1, d0, d1, u) * ih
		dc = l.wd[wl+1] + u*(l.wd[wl]-l.wd[wl+1])
		return c, dc, dens
	case t > e.eEnd:
		if t >= l.wing[nw-1] {
			return l.wc[2*nw-1] + e.shR, l.wd[2*nw-1] + e.dshR, 0
		}
		wr := e.wr
		for wr > 0 && t < l.wing[wr] {
			wr--
		}
		for wr < nw-2 && t >= l.wing[wr+1] {
			wr++
		}
		e.wr = wr
		hh, ih := l.wingH[wr], l.wingInvH[wr]
		u := (t - l.wing[wr]) * ih
		c0, c1, d0, d1 := l.wc[nw+wr], l.wc[nw+wr+1], l.wp[nw+wr]*hh, l.wp[nw+wr+1]*hh
		// The shift fades with the wing (the kernel's leak is a
		// near-grid effect); keep it constant: it is below 1e-6.
		c = hermiteValue(c0, c1, d0, d1, u) + e.shR
		if !e.deriv {
			return c, 0, 0
		}
		dens = hermiteSlope(c0, c1, d0, d1, u) * ih
		dc = l.wd[nw+wr] + u*(l.wd[nw+wr+1]-l.wd[nw+wr])
		return c, dc + e.dshR, dens
	}
	h, nb := e.h, e.nb
	fj := (t - e.e0) * e.invH
	j := min(int(fj), nb-1)
	u := fj - float64(j)
	F := e.F[j : j+2]
	pq := l.pq[j : j+2]
	c0, c1, d0, d1 := F[0], F[1], pq[0]*h, pq[1]*h
	c = hermiteValue(c0, c1, d0, d1, u)
	if !e.deriv {
		return c, 0, 0
	}
	dens = hermiteSlope(c0, c1, d0, d1, u) * e.invH
	sl := l.dsl[j : j+2]
	dc = hermiteValue(e.dF[j], e.dF[j+1], sl[0], sl[1], u)
	return c, dc, dens
}

// value is at's F alone (deriv false), bit for bit: on the grid inline,
// in the wings through at.
func (e *edgeEval) value(t float64) float64 {
	if t < e.e0 {
		return e.leftValue(t)
	}
	if t > e.eEnd {
		return e.rightValue(t)
	}
	fj := (t - e.e0) * e.invH
	j := min(int(fj), e.nb-1)
	u := fj - float64(j)
	F := e.F[j : j+2]
	pq := e.l.pq[j : j+2]
	return hermiteValue(F[0], F[1], pq[0]*e.h, pq[1]*e.h, u)
}

// leftValue is at's F left of the grid (t < e0), bit for bit.
func (e *edgeEval) leftValue(t float64) float64 {
	l, nw := e.l, e.nw
	wing := l.wing[:nw]
	d := -t
	if d >= wing[nw-1] {
		return l.wc[nw-1]
	}
	wl := e.wl
	for wl > 0 && d < wing[wl] {
		wl--
	}
	for wl < nw-2 && d >= wing[wl+1] {
		wl++
	}
	e.wl = wl
	hh, ih := l.wingH[wl], l.wingInvH[wl]
	u := (t + wing[wl+1]) * ih
	return hermiteValue(l.wc[wl+1], l.wc[wl], l.wp[wl+1]*hh, l.wp[wl]*hh, u)
}

// rightValue is at's F right of the grid (t > eEnd), bit for bit.
func (e *edgeEval) rightValue(t float64) float64 {
	l, nw := e.l, e.nw
	wing := l.wing[:nw]
	if t >= wing[nw-1] {
		return l.wc[2*nw-1] + e.shR
	}
	wr := e.wr
	for wr > 0 && t < wing[wr] {
		wr--
	}
	for wr < nw-2 && t >= wing[wr+1] {
		wr++
	}
	e.wr = wr
	hh, ih := l.wingH[wr], l.wingInvH[wr]
	u := (t - wing[wr]) * ih
	return hermiteValue(l.wc[nw+wr], l.wc[nw+wr+1], l.wp[nw+wr]*hh, l.wp[nw+wr+1]*hh, u) + e.shR
}

// edgeSlope returns the slope (mass per bin) at edge j of the
// cumulative of the bin masses q (nb bins).
func edgeSlope(q []float64, j, nb int) float64 {
	switch j {
	case 0:
		return q[0]
	case nb:
		return q[nb-1]
	}
	return 0.5 * (q[j-1] + q[j])
}

// hermiteSlope is the derivative of hermiteValue per unit u.
func hermiteSlope(c0, c1, d0, d1, u float64) float64 {
	u2 := u * u
	return (6*u2-6*u)*c0 + (3*u2-4*u+1)*d0 + (-6*u2+6*u)*c1 + (3*u2-2*u)*d1
}

// hermiteValue interpolates between (0, c0) and (1, c1) with slopes d0,
// d1 (per unit u): cubic Hermite.
func hermiteValue(c0, c1, d0, d1, u float64) float64 {
	u2 := u * u
	u3 := u2 * u
	return (2*u3-3*u2+1)*c0 + (u3-2*u2+u)*d0 + (-2*u3+3*u2)*c1 + (u3-u2)*d1
}

// hermiteBasis returns the weights of c0, d0, c1 and d1 in hermiteValue
// at u, the same values: b0·c0 + b1·d0 + b2·c1 + b3·d1 is hermiteValue,
// bit for bit.
func hermiteBasis(u float64) (b0, b1, b2, b3 float64) {
	u2 := u * u
	u3 := u2 * u
	return 2*u3 - 3*u2 + 1, u3 - 2*u2 + u, -2*u3 + 3*u2, u3 - u2
}
