package spectrum

import (
	"errors"
	"fmt"
	"math"

	"glowlog/diag"
	"glowlog/diag/sh99"
	"glowlog/diag/voigt"
)

// Shapes of a synthetic line (SynthLine.Shape).
const (
	// SynthShapeVoigt is a Voigt profile (Synthesize, and SynthesizeStark
	// where the tables do not cover the line).
	SynthShapeVoigt = "voigt"
	// SynthShapeSH99 is the Stehlé & Hutcheon (1999) Stark ⊗ Doppler
	// profile broadened by the remaining Gaussian and the non-Stark
	// Lorentzian (SynthesizeStark).
	SynthShapeSH99 = "sh99"
)

// Fine-grid settings of SynthesizeStark (our own choices; with them the
// pixels agree with a direct quadrature of the tables' profile within
// 1e-3 of the peak, TestSynthesizeStarkShape, and the areas are kept,
// TestSynthesizeStarkAreas).
const (
	synthStarkPerWidth = 20   // grid steps per FWHM of the narrowest part
	synthStarkSpan     = 40   // grid half-width in total FWHM
	synthStarkMaxBins  = 1e6  // grid points at most
	synthStarkTailExp  = 2.5  // far-wing power of the Stark profiles
	synthStarkLorReach = 60.0 // Lorentzian kernel half-width in its HWHM
)

// SynthesizeStark returns the counts per pixel of cfg and its lines, as
// Synthesize does, but with realistic Balmer shapes: every line the
// Stehlé & Hutcheon (1999) tables (glowlog/diag/sh99) cover at
// (ElectronDensityM3, T_e) is the tables' Stark ⊗ Doppler(T_e) profile
// (sh99 Line.Profile, interpolated in shape between the grid nodes, Hβ's
// central dip kept), convolved with
//
//   - the Gaussian still missing, FWHM √(G² − D_table(T_e)²) with G =
//     GaussFWHMNM = instrument ⊕ Doppler(T_gas) and D_table the tables'
//     own Doppler width at T_e (sh99 Line.DopplerFWHMNM). Where G² <
//     D_table² (an instrument and gas Doppler narrower than the tables'
//     Doppler at T_e) it is clamped at zero, so the line is slightly too
//     wide: the same model and clamp as the whole-spectrum fit (whole.go),
//   - the non-Stark Lorentzian of the budget (natural, resonance, van der
//     Waals: LorentzFWHMNM − StarkFWHMNM),
//
// T_e is cfg.ElectronTemperatureK (0: diag.DefaultElectronTemperatureK,
// the pipeline's default). Areas follow the Boltzmann distribution as in
// SynthLines and are kept exactly: each line's profile integrates to
// Area over all wavelengths. Every pixel holds the mean of the profile
// over the pixel (between the midpoints to its neighbours), from the
// cumulative integral of the broadened profile on a fine grid (trapezoid)
// and cubic Hermite between its nodes, with power-law far wings beyond it (Stark Δλ^(−5/2), the asymptote of
// the tables' profiles, plus the Lorentzian's Δλ^(−2)). Lines the tables
// do not cover at (n_e, T_e) are Voigt profiles with the widths of
// SynthLines (Shape SynthShapeVoigt), as in Synthesize.
//
// Baseline and noise are as in Synthesize.
func SynthesizeStark(cfg SynthConfig) ([]float64, []SynthLine, error) {
	x := cfg.WavelengthNM
	if err := checkSynthAxis(x); err != nil {
		return nil, nil, err
	}
	lines, err := SynthLines(cfg)
	if err != nil {
		return nil, nil, err
	}
	te := cfg.ElectronTemperatureK
	if te == 0 {
		te = diag.DefaultElectronTemperatureK
	}
	if !(te > 0) {
		return nil, nil, fmt.Errorf("spectrum: synth: electron temperature must be > 0 K, got %g", te)
	}
	y := make([]float64, len(x))
	for i := range y {
		y[i] = cfg.BaselinePerNM
	}
	for k := range lines {
		l := &lines[k]
		l.Shape = SynthShapeVoigt
		sh, err := sh99.Balmer(l.Upper)
		if err != nil {
			sh = nil // a member beyond the tables: Voigt
		}
		err = addStarkLine(y, x, l, sh, cfg.ElectronDensityM3, te)
		if err == nil {
			l.Shape = SynthShapeSH99
			continue
		}
		if !errors.Is(err, sh99.ErrOutOfRange) && !errors.Is(err, errNoSH99) {
			return nil, nil, err
		}
		addVoigtLine(y, x, l)
	}
	finishSynth(y, x, cfg)
	return y, lines, nil
}

// errNoSH99 stands for "the tables have no profile of this line" (a
// Balmer member beyond them).
var errNoSH99 = errors.New("no SH99 profile")

// checkSynthAxis checks a synthetic spectrum's wavelength axis.
func checkSynthAxis(x []float64) error {
	if len(x) < 2 {
		return fmt.Errorf("spectrum: synth: need at least two pixels, got %d", len(x))
	}
	for i := 1; i < len(x); i++ {
		if !(x[i] > x[i-1]) {
			return fmt.Errorf("spectrum: synth: wavelengths must be strictly ascending (pixel %d)", i)
		}
	}
	return nil
}

// addStarkLine adds l's SH99-shaped per-nm signal (pixel means) to y. It
// returns an error wrapping sh99.ErrOutOfRange when the tables do not
// cover (ne, te), and adds nothing then.
func addStarkLine(y, x []float64, l *SynthLine, sh *sh99.Line, ne, te float64) error {
	if sh == nil {
		return errNoSH99
	}
	wT, err := sh.TableWidthNM(sh99.FWHM, ne, te)
	if err != nil {
		return err
	}
	// The kernel: the Gaussian beyond the tables' Doppler (clamped at 0,
	// as whole.go) and the non-Stark Lorentzian.
	gExtra := math.Sqrt(math.Max(l.GaussFWHMNM*l.GaussFWHMNM-math.Pow(sh.DopplerFWHMNM(te), 2), 0))
	lOther := math.Max(l.LorentzFWHMNM-l.StarkFWHMNM, 0)
	sigma, gamma := voigt.SigmaFromFWHM(gExtra), voigt.GammaFromFWHM(lOther)
	total := diag.VoigtFWHM(gExtra, wT+lOther)

	// Fine grid: fine enough for the narrowest part of the shape (a
	// kernel part narrower than a quarter of the table width changes the
	// shape little and is sampled, normalised, on the grid), wide enough
	// that the wings beyond it follow their asymptote. Pixels need no
	// finer grid: a pixel's mean comes from the cumulative, exact at the
	// grid nodes and cubic (Hermite, the densities as slopes) between them.
	n := len(x)
	px := (x[n-1] - x[0]) / float64(n-1)
	narrow := wT
	if gExtra > 0 {
		narrow = math.Min(narrow, gExtra)
	}
	if lOther > 0 {
		narrow = math.Min(narrow, lOther)
	}
	h := math.Max(narrow, wT/4) / synthStarkPerWidth
	span := synthStarkSpan*total + 4*px
	m := int(math.Ceil(span/h)) + 1
	if 2*m+1 > synthStarkMaxBins {
		m = synthStarkMaxBins / 2
		h = span / float64(m)
	}
	fx := make([]float64, 2*m+1)
	for i := range fx {
		fx[i] = float64(i-m) * h
	}
	// The profile and the kernel are even in detuning: evaluate and
	// convolve the half from the centre (index m) up and mirror it.
	prof := make([]float64, len(fx))
	if _, err := sh.ProfileInto(prof[m:], fx[m:], ne, te); err != nil {
		return err
	}
	for i := range m {
		prof[i] = prof[2*m-i]
	}
	// Convolve with the kernel sampled on the grid (its sum normalised
	// to one, so the kernel keeps the area; the Lorentzian's wing beyond
	// its reach is restored below as the Δλ^(−2) tail).
	reach := 6 * sigma
	if gamma > 0 {
		reach = math.Max(reach, synthStarkLorReach*gamma)
	}
	kh := min(int(reach/h), m)
	if kh >= 1 && (sigma > h/4 || gamma > h/4) {
		kern := make([]float64, 2*kh+1)
		var ks float64
		for j := range kern {
			kern[j] = voigt.Profile(float64(j-kh)*h, sigma, gamma)
			ks += kern[j]
		}
		for j := range kern {
			kern[j] /= ks
		}
		conv := make([]float64, len(prof))
		for i := m; i < len(conv); i++ {
			var s float64
			j0, j1 := max(0, kh-i), min(len(kern), len(prof)-i+kh)
			for j := j0; j < j1; j++ {
				s += kern[j] * prof[i+j-kh]
			}
			conv[i] = s
		}
		for i := range m {
			conv[i] = conv[2*m-i]
		}
		prof = conv
	}
	// Cumulative on the grid (trapezoid) and the wings beyond it: the
	// density f(d) = A·|d|^(−5/2) + B·d^(−2) with B = γ/π (the far wing
	// of the Lorentzian convolved with a unit-area line) and A matching
	// f at the grid's edge.
	edge := float64(m) * h
	lorB := gamma / math.Pi
	tailA := func(pEdge float64) float64 {
		return math.Max(pEdge-lorB/(edge*edge), 0) * math.Pow(edge, synthStarkTailExp)
	}
	aL, aR := tailA(prof[0]), tailA(prof[len(prof)-1])
	tailMass := func(a, d float64) float64 { // ∫_d^∞ f
		return a*math.Pow(d, 1-synthStarkTailExp)/(synthStarkTailExp-1) + lorB/d
	}
	cum := make([]float64, len(prof))
	for i := 1; i < len(cum); i++ {
		cum[i] = cum[i-1] + 0.5*h*(prof[i]+prof[i-1])
	}
	left := tailMass(aL, edge)
	norm := left + cum[len(cum)-1] + tailMass(aR, edge)
	// C(d): the cumulative from −∞ to detuning d, normalised to one.
	at := func(d float64) float64 {
		f := (d + edge) / h
		switch {
		case f <= 0:
			return tailMass(aL, -d) / norm
		case f >= float64(len(cum)-1):
			return 1 - tailMass(aR, d)/norm
		}
		i := int(f)
		// Cubic Hermite between the nodes, the densities as slopes.
		u := f - float64(i)
		u2, u3 := u*u, u*u*u
		c := (2*u3-3*u2+1)*cum[i] + (u3-2*u2+u)*h*prof[i] + (-2*u3+3*u2)*cum[i+1] + (u3-u2)*h*prof[i+1]
		return (left + c) / norm
	}
	for i := range x {
		a, b := pixelEdgesAt(x, i)
		da, db := a-l.CenterNM, b-l.CenterNM
		if da >= edge || db <= -edge {
			// Far wing: the difference of cumulatives near 0 or 1
			// loses digits; integrate the tail density directly.
			y[i] += l.Area * tailPixelMean(da, db, aL, aR, lorB, norm)
			continue
		}
		y[i] += l.Area * (at(db) - at(da)) / (b - a)
	}
	return nil
}

// tailPixelMean is the mean over [a, b] (both on one side of the line,
// beyond the fine grid) of the wing density A·|d|^(−5/2) + B·d^(−2),
// divided by norm.
func tailPixelMean(a, b, aL, aR, lorB, norm float64) float64 {
	tA := aR
	if b <= 0 {
		a, b = -b, -a
		tA = aL
	}
	p := synthStarkTailExp - 1
	m := tA*(math.Pow(a, -p)-math.Pow(b, -p))/p + lorB*(1/a-1/b)
	return m / norm / (b - a)
}
