package spectrum

import (
	"fmt"
	"math"
	"math/rand/v2"

	"glowlog/diag"
	"glowlog/diag/voigt"
)

// SynthConfig describes a synthetic Balmer emission spectrum of an
// optically thin plasma whose upper levels are in Boltzmann equilibrium
// at ExcitationTemperatureK.
type SynthConfig struct {
	// WavelengthNM are the pixel-centre wavelengths (air, nm), strictly
	// ascending, at least two.
	WavelengthNM []float64
	// Uppers are the upper levels of the Balmer lines to include (3 = Hα).
	Uppers []int
	// Isotope is the emitter (zero value: hydrogen).
	Isotope diag.Isotope
	// ExcitationTemperatureK sets the line ratios (> 0).
	ExcitationTemperatureK float64
	// ElectronDensityM3 sets the Stark widths, m⁻³ (≥ 0).
	ElectronDensityM3 float64
	// GasTemperatureK sets the Doppler and van der Waals widths (> 0).
	GasTemperatureK float64
	// ElectronTemperatureK is the temperature of the Stark tables'
	// profiles in SynthesizeStark, K (0: diag.DefaultElectronTemperatureK,
	// the pipeline's default). Synthesize does not use it.
	ElectronTemperatureK float64
	// InstrumentFWHMNM is the Gaussian FWHM of the instrument, nm (≥ 0).
	InstrumentFWHMNM float64
	// Perturber and PressurePa give the van der Waals width (zero
	// Perturber: none).
	Perturber  diag.Perturber
	PressurePa float64
	// HalphaArea is the integrated Hα signal in counts·nm; the other lines
	// follow from the Boltzmann factors (> 0).
	HalphaArea float64
	// BaselinePerNM is a flat continuum, counts per nm.
	BaselinePerNM float64
	// NoisePerNM is the σ of white Gaussian noise on the signal density,
	// counts per nm (0: no noise). It needs Rand.
	NoisePerNM float64
	// Rand draws the noise; nil means no noise.
	Rand *rand.Rand
}

// SynthLine is one line of a synthetic spectrum: the truth a test or the
// demo compares the analysis with.
type SynthLine struct {
	Upper int
	// CenterNM is the air wavelength, nm.
	CenterNM float64
	// Area is the integrated signal, counts·nm.
	Area float64
	// GaussFWHMNM is √(instrument² + Doppler²); LorentzFWHMNM is Stark +
	// natural + resonance + van der Waals, nm.
	GaussFWHMNM, LorentzFWHMNM float64
	// StarkFWHMNM is the Stark part of LorentzFWHMNM, nm.
	StarkFWHMNM float64
	// Shape is the profile the line was made with: SynthShapeVoigt or
	// SynthShapeSH99 (empty from SynthLines).
	Shape string
}

// SynthLines returns the lines of cfg (areas and widths) without building
// the spectrum.
//
// Areas are photon rates of an LTE population, relative to Hα:
//
//	I_n ∝ g_n·A_n·exp(−E_n/(k_B T_exc))
//
// Stark widths come from diag.PreferredStarkWidthNM at the default
// electron temperature (the SH99 tables where they cover the line, else
// the GGC 2003 relation of Hα and Hβ), the model the analysis prefers.
// Lines no model covers are given 1.5·(n/4)² times the Hβ GGC width, a
// display approximation of the roughly n²-scaling of Stark widths along
// the series, not a physical relation.
// The other widths are those of diag.NewBudget.
func SynthLines(cfg SynthConfig) ([]SynthLine, error) {
	if !(cfg.ExcitationTemperatureK > 0) || !(cfg.HalphaArea > 0) || !(cfg.ElectronDensityM3 >= 0) {
		return nil, fmt.Errorf("spectrum: synth: need T_exc > 0, Hα area > 0 and n_e ≥ 0 (got %g, %g, %g)",
			cfg.ExcitationTemperatureK, cfg.HalphaArea, cfg.ElectronDensityM3)
	}
	ha, err := diag.Balmer(3, cfg.Isotope)
	if err != nil {
		return nil, err
	}
	hbRel, err := diag.DefaultStarkRelation(4)
	if err != nil {
		return nil, err
	}
	kT := diag.BoltzmannEVPerK * cfg.ExcitationTemperatureK
	out := make([]SynthLine, 0, len(cfg.Uppers))
	for _, n := range cfg.Uppers {
		tr, err := diag.Balmer(n, cfg.Isotope)
		if err != nil {
			return nil, err
		}
		area := cfg.HalphaArea * float64(tr.GUpper) * tr.EinsteinA / (float64(ha.GUpper) * ha.EinsteinA) *
			math.Exp(-(tr.UpperEnergyEV-ha.UpperEnergyEV)/kT)
		b, err := diag.NewBudget(diag.BudgetInput{Transition: tr, InstrumentGaussNM: cfg.InstrumentFWHMNM,
			GasTempK: cfg.GasTemperatureK, Perturber: cfg.Perturber, PressurePa: cfg.PressurePa})
		if err != nil {
			return nil, err
		}
		var stark float64
		if w, _, err := diag.PreferredStarkWidthNM(n, cfg.ElectronDensityM3, diag.DefaultElectronTemperatureK); err == nil {
			stark = w
		} else {
			stark = 1.5 * hbRel.WidthFromDensity(cfg.ElectronDensityM3) * float64(n*n) / 16
		}
		out = append(out, SynthLine{Upper: n, CenterNM: tr.WavelengthAirNM, Area: area, GaussFWHMNM: b.GaussTotalNM,
			LorentzFWHMNM: stark + b.LorentzNonStarkNM, StarkFWHMNM: stark})
	}
	return out, nil
}

// Synthesize returns the counts per pixel of cfg and the lines it contains:
//
//	counts_i = (baseline + Σ_lines Area·⟨V(λ − λ_0; σ, γ)⟩_i + noise) · Δλ_i
//
// with V the area-normalised Voigt profile of glowlog/diag/voigt, ⟨⟩_i its
// mean over pixel i (PixelMeanVoigt: a detector integrates over the pixel)
// and Δλ_i the pixel width (the pixel runs between the midpoints to the
// neighbouring centres).
// Lines far outside the grid add nothing visible but are still returned.
func Synthesize(cfg SynthConfig) ([]float64, []SynthLine, error) {
	x := cfg.WavelengthNM
	if err := checkSynthAxis(x); err != nil {
		return nil, nil, err
	}
	lines, err := SynthLines(cfg)
	if err != nil {
		return nil, nil, err
	}
	y := make([]float64, len(x))
	for i := range y {
		y[i] = cfg.BaselinePerNM
	}
	for k := range lines {
		l := &lines[k]
		l.Shape = SynthShapeVoigt
		addVoigtLine(y, x, l)
	}
	finishSynth(y, x, cfg)
	return y, lines, nil
}

// addVoigtLine adds line l as a Voigt profile, each pixel's mean over its
// edges; every pixel gets the Lorentzian wing, so the area is kept.
func addVoigtLine(y, x []float64, l *SynthLine) {
	sigma, gamma := voigt.SigmaFromFWHM(l.GaussFWHMNM), voigt.GammaFromFWHM(l.LorentzFWHMNM)
	for i := range x {
		lo, hi := pixelEdgesAt(x, i)
		y[i] += l.Area * PixelMeanVoigt(lo-l.CenterNM, hi-l.CenterNM, sigma, gamma)
	}
}

// finishSynth adds the noise (per nm) and turns the densities per nm
// into counts per pixel.
func finishSynth(y, x []float64, cfg SynthConfig) {
	for i := range y {
		if cfg.Rand != nil && cfg.NoisePerNM > 0 {
			y[i] += cfg.NoisePerNM * cfg.Rand.NormFloat64()
		}
		y[i] *= pixelWidth(x, i)
	}
}

// pixelEdgesAt returns the edges of pixel i of an ascending axis: the
// midpoints to its neighbours, mirrored at the ends.
func pixelEdgesAt(x []float64, i int) (lo, hi float64) {
	n := len(x)
	switch {
	case i == 0:
		hi = 0.5 * (x[0] + x[1])
		return x[0] - (hi - x[0]), hi
	case i == n-1:
		lo = 0.5 * (x[n-2] + x[n-1])
		return lo, x[n-1] + (x[n-1] - lo)
	}
	return 0.5 * (x[i-1] + x[i]), 0.5 * (x[i] + x[i+1])
}

// gl8 are the nodes t ∈ (0, 1) and weights of the 8-point Gauss–Legendre
// rule on (−1, 1) (Abramowitz & Stegun 1964, Table 25.4); the rule is
// symmetric.
var gl8 = [4][2]float64{
	{0.183434642495649804939476142360184, 0.362683783378361982965150449277196},
	{0.525532409916328985817739049189, 0.313706645877887287337962201986601},
	{0.796666477413626739591553936475830, 0.222381034453374470544355994426241},
	{0.960289856497536231683560868569473, 0.101228536290376259152531354309962},
}

// PixelMeanVoigt returns the mean of the Voigt profile V(x; σ, γ) over
// the pixel a ≤ x ≤ b (offsets from the line centre, b > a): composite
// 8-point Gauss–Legendre on sub-intervals no wider than a quarter of the
// line's FWHM (at most 32 of them), which is exact to about 1e-10 of the
// peak for any Voigt shape. Beyond 40 FWHM from the centre the midpoint
// value is used (its error there is below 1e-8 of the peak).
func PixelMeanVoigt(a, b, sigma, gamma float64) float64 {
	w := b - a
	fwhm := voigt.OliveroFWHM(sigma*voigt.FWHMPerSigma, 2*gamma)
	mid := 0.5 * (a + b)
	if !(w > 0) || math.Abs(mid) > 40*fwhm+w {
		return voigt.Profile(mid, sigma, gamma)
	}
	s := 1
	if fwhm > 0 {
		s = int(min(32, math.Ceil(4*w/fwhm)))
	}
	h := w / float64(s)
	var sum float64
	for k := range s {
		c := a + (float64(k)+0.5)*h
		for _, nw := range gl8 {
			d := 0.5 * h * nw[0]
			sum += nw[1] * (voigt.Profile(c-d, sigma, gamma) + voigt.Profile(c+d, sigma, gamma))
		}
	}
	return sum / (2 * float64(s))
}
