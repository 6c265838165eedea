package diag

import (
	"errors"
	"fmt"
	"glowlog/diag/voigt"
	"math"
)

// This file holds the non-Stark broadening of hydrogen lines and the width
// budget that separates the Stark width from a measured line width. All
// widths are full widths at half maximum (FWHM) in nm unless a name says
// otherwise. Gaussian contributions add in quadrature, Lorentzian ones
// linearly (physics.md §5.6).

// dopplerFactor returns √(8 k_B ln2/(u c²)) = 7.16233e-7 (K⁻¹ᐟ² u¹ᐟ²),
// the constant of the Doppler FWHM, from exact CODATA 2018 constants.
func dopplerFactor() float64 {
	return math.Sqrt(8 * Boltzmann * math.Ln2 / (AtomicMassUnitKG * SpeedOfLight * SpeedOfLight))
}

// DopplerFWHMNM returns the Doppler (Gaussian) FWHM in nm of a line at
// lambdaNM emitted by atoms of mass massAMU (u) with a Maxwellian velocity
// distribution at gasTempK (K):
//
//	Δλ_D = λ₀ √(8 k_B T ln2/(M c²)) = 7.16233e-7 · λ₀ · √(T[K]/M[u])
//
// The width scales with λ₀, so an air wavelength gives the width on the
// air scale. It panics if lambdaNM or massAMU is not positive or gasTempK
// is negative.
//
// References:
//
//	Griem, H. R. 1997, Principles of Plasma Spectroscopy (Cambridge
//	University Press).
func DopplerFWHMNM(lambdaNM, gasTempK, massAMU float64) float64 {
	if !(lambdaNM > 0) || !(massAMU > 0) || !(gasTempK >= 0) {
		panic(fmt.Sprintf("diag: DopplerFWHMNM(λ=%g nm, T=%g K, M=%g u): need λ > 0, T ≥ 0, M > 0", lambdaNM, gasTempK, massAMU))
	}
	return dopplerFactor() * lambdaNM * math.Sqrt(gasTempK/massAMU)
}

// GasTempFromDopplerK inverts DopplerFWHMNM: the kinetic temperature in K
// of atoms of mass massAMU whose line at lambdaNM has the Doppler FWHM
// dopplerNM,
//
//	T = M (Δλ_D/(7.16233e-7 λ₀))²
//
// In many H₂ discharges the Hα profile has fast-atom wings (dissociation
// fragments, ions reflected at walls), so a Gaussian width is not
// necessarily the gas temperature (physics.md §5.1). It panics if
// lambdaNM or massAMU is not positive or dopplerNM is negative.
func GasTempFromDopplerK(lambdaNM, dopplerNM, massAMU float64) float64 {
	if !(lambdaNM > 0) || !(massAMU > 0) || !(dopplerNM >= 0) {
		panic(fmt.Sprintf("diag: GasTempFromDopplerK(λ=%g nm, w=%g nm, M=%g u): need λ > 0, w ≥ 0, M > 0", lambdaNM, dopplerNM, massAMU))
	}
	r := dopplerNM / (dopplerFactor() * lambdaNM)
	return massAMU * r * r
}

// broadCheckIsotope panics if iso differs from the isotope the transition was
// computed for.
func broadCheckIsotope(t Transition, iso Isotope, fn string) {
	if t.Isotope != iso {
		panic(fmt.Sprintf("diag: %s: transition computed for %v, called with isotope %v", fn, t.Isotope, iso))
	}
}

// NaturalFWHMNM returns the natural (radiative, Lorentzian) FWHM in nm of
// the line t:
//
//	Δν = (Γ_u + Γ_l)/(2π),   Γ_n = Σ_m A(n→m)   (TotalDecayRate)
//	Δλ = λ_vac² Δν / c
//
// with the l-substates statistically populated (n-averaged rates). The
// ground level has Γ₁ = 0. For Hα this is 1.30e-4 nm and for Hβ 6.3e-5 nm,
// negligible in any discharge. iso must be t.Isotope (it panics
// otherwise).
//
// References:
//
//	Griem, H. R. 1997, Principles of Plasma Spectroscopy (Cambridge
//	University Press).
func NaturalFWHMNM(t Transition, iso Isotope) float64 {
	broadCheckIsotope(t, iso, "NaturalFWHMNM")
	gamma := TotalDecayRate(t.Upper, iso)
	if t.Lower > 1 {
		gamma += TotalDecayRate(t.Lower, iso)
	}
	lam := t.WavelengthVacNM * 1e-9
	return lam * lam * gamma / (2 * math.Pi * SpeedOfLight) * 1e9
}

// aliGriemConst is the constant of the working form of the Ali–Griem
// resonance width, nm per (nm³ cm⁻³). Status open, ±20 % (physics.md
// §5.3 and §10 item 9): from memory; independent stellar-opacity
// implementations correspond to 10–16 % larger widths (recast, the
// half-width form Δν/ν = 2.07e-24 f/((1−1/n²)(1/n_l²−1/n_u²)) N_H agrees
// with it to about 15 %). That difference is the statistical weight of
// the resonance level, not the constant: they take the np sublevel's
// g = 6 for n = 2 where the formula below takes g_n = 2n² = 8, and
// (8/6)^½ = 1.155; with it matched two such routines agree with 8.61e-28
// to 0.13 % and 0.02 % (TestResonanceFWHM). Not read in Ali & Griem's
// paper, so still open; which weight suits an l-degenerate level is the
// 15 % that the ±20 % (aliGriemRelUnc) carried as a systematic σ of the
// resonance width covers.
const aliGriemConst = 8.61e-28

// ResonanceLevelFWHMNM returns the Ali–Griem resonance (self) broadening,
// FWHM in nm, that level n ≥ 2 contributes to a line at lambdaNM through
// its own Lyman resonance line n → 1 in a gas of ground-state atoms of the
// same isotope with density groundDensityM3 (m⁻³):
//
//	Δλ_R[nm] = 8.61e-28 · (g₁/g_n)^½ · λ²[nm] · λ_R[nm] · f_R · N₁[cm⁻³]
//
// with g₁ = 2, g_n = 2n², and λ_R (vacuum) and f_R = f(1→n) the
// n-averaged Lyman line of level n (NewTransition(n, 1, iso)). The
// constant 8.61e-28 is open (from memory, ±20 %, physics.md §10 item 9). It returns 0 for n = 1
// (the ground level has no resonance partner of its own) and panics for
// n outside 1…MaxLevel, a non-positive wavelength or a negative density.
//
// References:
//
//	Ali, A. W. & Griem, H. R. 1965, Phys. Rev. 140, A1044;
//	erratum 1966, Phys. Rev. 144, 366.
func ResonanceLevelFWHMNM(lambdaNM float64, n int, groundDensityM3 float64, iso Isotope) float64 {
	if !(lambdaNM > 0) || !(groundDensityM3 >= 0) {
		panic(fmt.Sprintf("diag: ResonanceLevelFWHMNM(λ=%g nm, N=%g m⁻³): need λ > 0, N ≥ 0", lambdaNM, groundDensityM3))
	}
	if n == 1 {
		return 0
	}
	res, err := NewTransition(n, 1, iso)
	if err != nil {
		panic(err)
	}
	g := math.Sqrt(float64(res.GLower) / float64(res.GUpper))
	return aliGriemConst * g * lambdaNM * lambdaNM * res.WavelengthVacNM * res.OscillatorF * groundDensityM3 * 1e-6
}

// ResonanceFWHMNM returns the resonance (self) broadening FWHM in nm of
// the line t by ground-state atoms of density groundDensityM3 (m⁻³),
// after Ali & Griem. Both levels of the line that have a Lyman resonance
// line contribute, and their Lorentzian widths add:
//
//	Δλ_R = Δλ_R(lower level) + Δλ_R(upper level)   (ResonanceLevelFWHMNM)
//
// with λ the vacuum wavelength of t. For a Balmer line the lower level
// n = 2 (Lyα, λ_R = 121.57 nm, f = 0.4162) dominates; the upper level adds
// about 11 % for Hα (Lyβ) and 3 % for Hβ (Lyγ). For a Lyman line only the
// upper level contributes. iso must be t.Isotope (it panics otherwise).
//
// The modern replacement for Hα–Hγ is the self-broadening theory of
// Barklem, Piskunov & O'Mara (2000), A&A 363, 1091, not implemented here.
// Resonance broadening matters only when the ground-state density exceeds
// about 1e22 m⁻³.
//
// References:
//
//	Ali, A. W. & Griem, H. R. 1965, Phys. Rev. 140, A1044;
//	erratum 1966, Phys. Rev. 144, 366.
func ResonanceFWHMNM(t Transition, groundDensityM3 float64, iso Isotope) float64 {
	broadCheckIsotope(t, iso, "ResonanceFWHMNM")
	return ResonanceLevelFWHMNM(t.WavelengthVacNM, t.Lower, groundDensityM3, iso) +
		ResonanceLevelFWHMNM(t.WavelengthVacNM, t.Upper, groundDensityM3, iso)
}

// vdWConst is the constant of the general van der Waals impact formula,
// cm-based cgs units as in VanDerWaalsFWHMNM. Convention (physics.md §5.4
// and §10 item 7, "convention, now explained"): 8.18e-12 is the constant of
// the literature formula behind the published simplified two-line-method
// coefficients (Griem 1964; Allard & Kielkopf 1982), and glowlog uses it.
// The Lindholm–Foley FWHM with Unsöld's C₆ = e²ᾱ⟨R²⟩a₀²/ħ gives
// vdWConstUnsold = 6.999e-12 (ratio 1.169); the analysis carries the
// difference as a systematic σ of the van der Waals width.
const vdWConst = 8.18e-12

// vdWConstUnsold is the van der Waals constant of the Lindholm–Foley FWHM
// with Unsöld's C₆ (physics.md §10 item 7, computed there).
const vdWConstUnsold = 6.999e-12

// vdWTempExponent is d ln Δλ_W / d ln T at constant pressure: N = p/(k_B T)
// contributes −1 and (T/μ)^(3/10) contributes +3/10.
const vdWTempExponent = -0.7

// MeanSquareRadiusA0 returns the l-averaged mean square radius of the
// hydrogen level n in units of a₀²:
//
//	⟨R²⟩_nl = (n²/2)(5n² + 1 − 3l(l+1))
//	⟨R²⟩_n = Σ_l (2l+1)⟨R²⟩_nl / n² = n²(7n² + 5)/4
//
// (Hα: 153 − 33 = 120; Hβ: 435; Hγ: 1092.) Choosing a particular l
// instead of the average changes van der Waals widths by up to +17 %
// (physics.md §5.4). It panics for n < 1.
func MeanSquareRadiusA0(n int) float64 {
	if n < 1 {
		panic(fmt.Sprintf("diag: MeanSquareRadiusA0(%d): need n ≥ 1", n))
	}
	f := float64(n)
	return f * f * (7*f*f + 5) / 4
}

// VanDerWaalsFWHMNM returns the van der Waals (Lorentzian) FWHM in nm of
// the line t perturbed by neutral perturber atoms or molecules at partial
// pressure pressurePa (Pa) and gas temperature gasTempK (K), by the
// general impact formula
//
//	Δλ_W[cm] = 8.18e-12 · λ²[cm] · (ᾱ ⟨R²⟩)^(2/5) · (T/μ)^(3/10) · N[cm⁻³]
//	N = p/(k_B T),   ⟨R²⟩ = ⟨R²⟩_u − ⟨R²⟩_l   (MeanSquareRadiusA0, a₀²)
//
// with ᾱ the perturber polarizability in cm³, μ the emitter–perturber
// reduced mass in u (emitter mass EmitterMassAMU(t.Isotope)) and λ the air
// wavelength of t. At constant pressure Δλ_W = C/T^0.7. The constant
// 8.18e-12 is a named convention (see vdWConst). The zero perturber
// (NoPerturber) gives 0. It panics for a negative pressure, a
// non-positive temperature or a polarizable perturber without a mass.
//
// References:
//
//	Griem, H. R. 1964, Plasma Spectroscopy (McGraw-Hill).
//	Allard, N. & Kielkopf, J. 1982, Rev. Mod. Phys. 54, 1103.
func VanDerWaalsFWHMNM(t Transition, perturber Perturber, pressurePa, gasTempK float64) float64 {
	return vanDerWaalsFWHMNM(t, perturber, EmitterMassAMU(t.Isotope), pressurePa, gasTempK)
}

// vanDerWaalsFWHMNM is VanDerWaalsFWHMNM with an explicit emitter mass.
func vanDerWaalsFWHMNM(t Transition, perturber Perturber, emitterAMU, pressurePa, gasTempK float64) float64 {
	if !(pressurePa >= 0) || !(gasTempK > 0) {
		panic(fmt.Sprintf("diag: VanDerWaalsFWHMNM(p=%g Pa, T=%g K): need p ≥ 0, T > 0", pressurePa, gasTempK))
	}
	if perturber.PolarizabilityCM3 == 0 || pressurePa == 0 {
		return 0
	}
	if !(perturber.MassAMU > 0) || !(perturber.PolarizabilityCM3 > 0) || !(emitterAMU > 0) {
		panic(fmt.Sprintf("diag: VanDerWaalsFWHMNM: perturber %q needs positive polarizability and mass", perturber.Name))
	}
	mu := emitterAMU * perturber.MassAMU / (emitterAMU + perturber.MassAMU)
	r2 := MeanSquareRadiusA0(t.Upper) - MeanSquareRadiusA0(t.Lower)
	nCM3 := pressurePa / (Boltzmann * gasTempK) * 1e-6
	lamCM := t.WavelengthAirNM * 1e-7
	w := vdWConst * lamCM * lamCM * math.Pow(perturber.PolarizabilityCM3*r2, 0.4) *
		math.Pow(gasTempK/mu, 0.3) * nCM3
	return w * 1e7
}

// Olivero–Longbothum coefficients (Olivero & Longbothum 1977).
const (
	olA = 0.5346
	olB = 0.2166
)

// VoigtFWHM returns the approximate FWHM of a Voigt profile with Gaussian
// FWHM wG and Lorentzian FWHM wL (any common unit):
//
//	w_V ≈ 0.5346 w_L + √(0.2166 w_L² + w_G²)
//
// The maximum relative error against the exact Voigt width is 2.4e-4, near
// w_L/w_G ≈ 0.29 (physics.md §5.6). It panics on a negative or NaN width.
//
// References:
//
//	Olivero, J. J. & Longbothum, R. L. 1977, J. Quant. Spectrosc. Radiat.
//	Transfer 17, 233.
func VoigtFWHM(wG, wL float64) float64 {
	if !(wG >= 0) || !(wL >= 0) {
		panic(fmt.Sprintf("diag: VoigtFWHM(%g, %g): widths must be ≥ 0", wG, wL))
	}
	return voigt.OliveroFWHM(wG, wL)
}

// ErrBelowResolution reports a measured width narrower than the Gaussian
// (instrument and Doppler) width it must contain.
var ErrBelowResolution = errors.New("diag: width below instrument/Doppler resolution")

// ErrNoStarkWidth reports a Lorentzian width that does not exceed its
// non-Stark Lorentzian budget, so the Stark width would be ≤ 0.
var ErrNoStarkWidth = errors.New("diag: no Stark width left after the non-Stark budget")

// LorentzFromVoigt returns the Lorentzian FWHM of a Voigt profile with
// FWHM wV and known Gaussian FWHM wG, inverting VoigtFWHM exactly:
//
//	w_L = [a w_V − √(b w_V² + (a² − b) w_G²)]/(a² − b)
//	    = (w_V² − w_G²)/(a w_V + √(b w_V² + (a² − b) w_G²))
//
// with a = 0.5346, b = 0.2166 (the second form is used; it has no
// cancellation). wG = wV gives 0; wG = 0 gives w_V/(a + √b). If wG > wV it
// returns an error wrapping ErrBelowResolution. It panics on a negative or
// NaN width.
//
// References:
//
//	Olivero, J. J. & Longbothum, R. L. 1977, JQSRT 17, 233 (the forward
//	formula; the inversion is its quadratic solved for w_L).
func LorentzFromVoigt(wV, wG float64) (float64, error) {
	if !(wV >= 0) || !(wG >= 0) {
		panic(fmt.Sprintf("diag: LorentzFromVoigt(%g, %g): widths must be ≥ 0", wV, wG))
	}
	if wG > wV {
		return 0, fmt.Errorf("%w: Voigt FWHM %g is narrower than Gaussian FWHM %g", ErrBelowResolution, wV, wG)
	}
	if wV == 0 {
		return 0, nil
	}
	d := olA*olA - olB
	return (wV - wG) * (wV + wG) / (olA*wV + math.Sqrt(olB*wV*wV+d*wG*wG)), nil
}

// BudgetInput holds the plain inputs of a line's broadening budget.
type BudgetInput struct {
	// Transition is the line (from NewTransition); its Isotope selects the
	// emitter for the natural and resonance widths.
	Transition Transition
	// InstrumentGaussNM and InstrumentLorentzNM are the Gaussian and
	// Lorentzian FWHM of the instrument function at this line, nm (≥ 0).
	InstrumentGaussNM, InstrumentLorentzNM float64
	// GasTempK is the gas (neutral kinetic) temperature, K (> 0). It sets
	// the Doppler and van der Waals widths.
	GasTempK float64
	// EmitterMassAMU is the emitter mass in u; 0 means
	// EmitterMassAMU(Transition.Isotope). It enters the Doppler width and
	// the van der Waals reduced mass.
	EmitterMassAMU float64
	// Perturber is the neutral perturber for van der Waals broadening;
	// the zero value (or NoPerturber) means none.
	Perturber Perturber
	// PressurePa is the perturber partial pressure, Pa (≥ 0).
	PressurePa float64
	// GroundDensityM3 is the ground-state density of the emitting
	// isotope, m⁻³ (≥ 0), for resonance broadening.
	GroundDensityM3 float64
}

// Budget is the broadening budget of one line: every non-Stark
// contribution as a FWHM in nm, and the Gaussian and Lorentzian totals.
//
//	GaussTotalNM      = √(InstrumentGaussNM² + DopplerNM²)
//	LorentzOtherNM    = InstrumentLorentzNM + NaturalNM + ResonanceNM
//	LorentzNonStarkNM = LorentzOtherNM + VanDerWaalsNM
type Budget struct {
	// Upper and Lower identify the line (principal quantum numbers).
	Upper, Lower int
	// LineName is the spectroscopic name, e.g. "Hβ".
	LineName string

	InstrumentGaussNM   float64
	InstrumentLorentzNM float64
	DopplerNM           float64
	NaturalNM           float64
	ResonanceNM         float64
	VanDerWaalsNM       float64

	// GaussTotalNM is the quadrature sum of the Gaussian parts.
	GaussTotalNM float64
	// LorentzOtherNM is the linear sum of the Lorentzian parts other than
	// Stark and van der Waals (instrument, natural, resonance): what the
	// two-line method (SolveTwoLine) needs subtracted.
	LorentzOtherNM float64
	// LorentzNonStarkNM is the linear sum of all non-Stark Lorentzian
	// parts.
	LorentzNonStarkNM float64
}

// BudgetInputError reports an invalid BudgetInput field.
type BudgetInputError struct {
	Field string
	Value float64
}

func (e *BudgetInputError) Error() string {
	return fmt.Sprintf("diag: broadening budget: invalid %s = %g", e.Field, e.Value)
}

// NewBudget computes the broadening budget of in.Transition:
//
//	w_D = DopplerFWHMNM(λ_air, T_g, M)
//	w_N = NaturalFWHMNM, w_R = ResonanceFWHMNM, w_W = VanDerWaalsFWHMNM
//	w_G = √(w_inst,G² + w_D²)
//	w_L,non-Stark = w_inst,L + w_N + w_R + w_W
//
// Gaussian parts add in quadrature and Lorentzian parts linearly, which is
// exact for Voigt convolutions and an approximation for the (non-
// Lorentzian) Stark profile of Hβ (physics.md §5.6). A negative width,
// pressure or density, or a non-positive gas temperature returns a
// *BudgetInputError.
func NewBudget(in BudgetInput) (Budget, error) {
	for _, f := range []struct {
		name string
		v    float64
		ok   bool
	}{
		{"InstrumentGaussNM", in.InstrumentGaussNM, in.InstrumentGaussNM >= 0},
		{"InstrumentLorentzNM", in.InstrumentLorentzNM, in.InstrumentLorentzNM >= 0},
		{"GasTempK", in.GasTempK, in.GasTempK > 0 && !math.IsInf(in.GasTempK, 0)},
		{"EmitterMassAMU", in.EmitterMassAMU, in.EmitterMassAMU >= 0},
		{"PressurePa", in.PressurePa, in.PressurePa >= 0 && !math.IsInf(in.PressurePa, 0)},
		{"GroundDensityM3", in.GroundDensityM3, in.GroundDensityM3 >= 0 && !math.IsInf(in.GroundDensityM3, 0)},
	} {
		if !f.ok {
			return Budget{}, &BudgetInputError{f.name, f.v}
		}
	}
	t := in.Transition
	if t.Upper <= t.Lower || t.Lower < 1 {
		panic(fmt.Sprintf("diag: NewBudget: transition %d→%d not from NewTransition", t.Upper, t.Lower))
	}
	m := in.EmitterMassAMU
	if m == 0 {
		m = EmitterMassAMU(t.Isotope)
	}
	b := Budget{
		Upper: t.Upper, Lower: t.Lower, LineName: t.Name(),
		InstrumentGaussNM:   in.InstrumentGaussNM,
		InstrumentLorentzNM: in.InstrumentLorentzNM,
		DopplerNM:           DopplerFWHMNM(t.WavelengthAirNM, in.GasTempK, m),
		NaturalNM:           NaturalFWHMNM(t, t.Isotope),
		ResonanceNM:         ResonanceFWHMNM(t, in.GroundDensityM3, t.Isotope),
		VanDerWaalsNM:       vanDerWaalsFWHMNM(t, in.Perturber, m, in.PressurePa, in.GasTempK),
	}
	b.GaussTotalNM = math.Hypot(b.InstrumentGaussNM, b.DopplerNM)
	b.LorentzOtherNM = b.InstrumentLorentzNM + b.NaturalNM + b.ResonanceNM
	b.LorentzNonStarkNM = b.LorentzOtherNM + b.VanDerWaalsNM
	return b, nil
}

// WidthBudgetError reports a measured width that leaves no room for a
// Stark width. It wraps ErrBelowResolution (Gaussian budget) or
// ErrNoStarkWidth (Lorentzian budget), for errors.Is.
type WidthBudgetError struct {
	// Upper and Lower identify the line.
	Upper, Lower int
	// Gaussian is true when the measured Voigt FWHM is narrower than the
	// Gaussian budget, false when the Lorentzian FWHM does not exceed the
	// non-Stark Lorentzian budget.
	Gaussian bool
	// MeasuredNM is the measured width (Voigt FWHM if Gaussian, else the
	// Lorentzian FWHM), nm.
	MeasuredNM float64
	// BudgetNM is the budget it fails to exceed (GaussTotalNM or
	// LorentzNonStarkNM), nm.
	BudgetNM float64
}

// Message returns the plain-language explanation without the package
// prefix, e.g. "line n=4: measured FWHM 0.030 nm is narrower than its
// Gaussian budget 0.052 nm".
func (e *WidthBudgetError) Message() string {
	if e.Gaussian {
		return fmt.Sprintf("line n=%d: measured FWHM %s nm is narrower than its Gaussian budget %s nm (instrument and Doppler)",
			e.Upper, fmtWidthNM(e.MeasuredNM), fmtWidthNM(e.BudgetNM))
	}
	return fmt.Sprintf("line n=%d: Lorentzian FWHM %s nm does not exceed its non-Stark Lorentzian budget %s nm, so the Stark width would be ≤ 0",
		e.Upper, fmtWidthNM(e.MeasuredNM), fmtWidthNM(e.BudgetNM))
}

func (e *WidthBudgetError) Error() string { return "diag: " + e.Message() }

// Unwrap returns ErrBelowResolution or ErrNoStarkWidth.
func (e *WidthBudgetError) Unwrap() error {
	if e.Gaussian {
		return ErrBelowResolution
	}
	return ErrNoStarkWidth
}

// fmtWidthNM formats a width in nm with enough decimals to show two
// significant figures of small widths.
func fmtWidthNM(w float64) string {
	switch a := math.Abs(w); {
	case a == 0 || a >= 0.01:
		return fmt.Sprintf("%.3f", w)
	case a >= 1e-4:
		return fmt.Sprintf("%.5f", w)
	default:
		return fmt.Sprintf("%.2e", w)
	}
}

// StarkFromLorentzNM returns the Stark FWHM in nm left when the non-Stark
// Lorentzian budget is subtracted from the Lorentzian FWHM lorentzNM of
// the line (for example from a Voigt fit with the Gaussian width fixed):
//
//	w_S = w_L − LorentzNonStarkNM
//
// It returns a *WidthBudgetError (wrapping ErrNoStarkWidth) when w_S ≤ 0.
// It panics on a negative or NaN width.
func (b Budget) StarkFromLorentzNM(lorentzNM float64) (float64, error) {
	if !(lorentzNM >= 0) {
		panic(fmt.Sprintf("diag: StarkFromLorentzNM(%g): width must be ≥ 0", lorentzNM))
	}
	ws := lorentzNM - b.LorentzNonStarkNM
	if !(ws > 0) {
		return 0, &WidthBudgetError{Upper: b.Upper, Lower: b.Lower, MeasuredNM: lorentzNM, BudgetNM: b.LorentzNonStarkNM}
	}
	return ws, nil
}

// StarkFromVoigtNM returns the Stark FWHM in nm of a line whose measured
// total (Voigt) FWHM is voigtNM:
//
//	w_L = LorentzFromVoigt(w_V, GaussTotalNM)
//	w_S = w_L − LorentzNonStarkNM
//
// It returns a *WidthBudgetError wrapping ErrBelowResolution when the
// measured width is narrower than the Gaussian budget, and one wrapping
// ErrNoStarkWidth when w_S ≤ 0. It panics on a negative or NaN width.
func (b Budget) StarkFromVoigtNM(voigtNM float64) (float64, error) {
	if !(voigtNM >= 0) {
		panic(fmt.Sprintf("diag: StarkFromVoigtNM(%g): width must be ≥ 0", voigtNM))
	}
	wl, err := LorentzFromVoigt(voigtNM, b.GaussTotalNM)
	if err != nil {
		return 0, &WidthBudgetError{Upper: b.Upper, Lower: b.Lower, Gaussian: true, MeasuredNM: voigtNM, BudgetNM: b.GaussTotalNM}
	}
	return b.StarkFromLorentzNM(wl)
}

// TwoLineLorentzNM returns the Lorentzian FWHM in nm with only the Stark
// and van der Waals parts left, as SolveTwoLine expects:
//
//	w = w_L − LorentzOtherNM
//
// The result may be ≤ 0 for a line narrower than its budget; SolveTwoLine
// then reports ErrTwoLineNoSolution.
func (b Budget) TwoLineLorentzNM(lorentzNM float64) float64 {
	return lorentzNM - b.LorentzOtherNM
}
