package diag

import (
	"fmt"
	"math"
	"strings"
)

// WidthKind says which width of a line profile a Stark relation uses.
type WidthKind int

const (
	// FWHM is the full width at half maximum.
	FWHM WidthKind = iota
	// FWHA is the full width at half area: the width of the central
	// interval that holds half of the profile's area.
	FWHA
)

// String returns "FWHM" or "FWHA".
func (k WidthKind) String() string {
	switch k {
	case FWHM:
		return "FWHM"
	case FWHA:
		return "FWHA"
	}
	return fmt.Sprintf("WidthKind(%d)", int(k))
}

// StarkRelation is a named, cited power law between the Stark width of a
// Balmer line (upper level Upper → 2) and the electron density:
//
//	w = CoefficientNM · (n_e/RefDensityM3)^Exponent
//	n_e = RefDensityM3 · (w/CoefficientNM)^(1/Exponent)
//
// Relations live in the table StarkRelations; look them up with
// LookupStarkRelation or DefaultStarkRelation.
type StarkRelation struct {
	// ID is glowlog's own short identifier, stored with every result.
	ID string
	// Upper is the upper principal quantum number of the Balmer line.
	Upper int
	// Kind is the width the relation is written for.
	Kind WidthKind
	// Citation is the full reference of the relation.
	Citation string
	// CoefficientNM is the width in nm at n_e = RefDensityM3.
	CoefficientNM float64
	// RefDensityM3 is the reference density, m⁻³.
	RefDensityM3 float64
	// Exponent is d ln w / d ln n_e.
	Exponent float64
	// MinNeM3 and MaxNeM3 bound the electron density range in which the
	// relation is trusted, m⁻³.
	MinNeM3, MaxNeM3 float64
	// MinTK and MaxTK bound the temperature range (T_e = T_ion) in K; 0
	// means "not specified".
	MinTK, MaxTK float64
	// Verified is false while the coefficients have not been checked
	// against the original publication.
	Verified bool
	// Provenance explains where the numbers come from and how far they
	// can be trusted.
	Provenance string
	// Notes holds further caveats for display.
	Notes string
}

// ggc2003 is the full citation of the Gigosos–González–Cardeñoso fits.
const ggc2003 = "Gigosos, M. A., González, M. Á. & Cardeñoso, V. 2003, " +
	"\"Computer simulated Balmer-alpha, -beta and -gamma Stark line profiles " +
	"for non-equilibrium plasmas diagnostics\", Spectrochim. Acta B 58, 1489–1504"

// griemHolFieldConst is the FWHM constant of Griem's α½ form, Å per
// (cm⁻³)^(2/3): twice the Holtsmark normal field F₀ = 2.61 e n_e^(2/3) =
// 1.25e-9 n_e^(2/3) statvolt cm⁻¹ (physics.md §4.2), because α½ is the
// reduced half width per unit F₀.
const griemHolFieldConst = 2.50e-9

// griemAlphaHalfHbeta is Griem's reduced half width α½ for Hβ near
// n_e = 1e16 cm⁻³ and T = 1e4 K: from memory, unverified (physics.md §10
// item 6). It is taken constant here although it rises slowly with n_e
// and depends on T.
const griemAlphaHalfHbeta = 0.08

// griemCoefficientNM returns 0.1 nm/Å · 2.50e-9 · α½ · (1e17)^(2/3): the
// Griem-form FWHM in nm at n_e = 1e23 m⁻³ = 1e17 cm⁻³.
func griemCoefficientNM(alphaHalf float64) float64 {
	return 0.1 * griemHolFieldConst * alphaHalf * math.Pow(1e17, 2.0/3.0)
}

// StarkRelations is the table of every Stark relation glowlog knows. Each
// entry is cited; entries with Verified false carry coefficients from
// memory (physics.md §4, §10) and results computed with them must be
// labelled provisional.
//
// Deliberately absent:
//   - an Hα FWHM fit with coefficient 0.549 nm and the FWHA exponent,
//     sometimes quoted: it is exactly half of 1.098 nm, which suggests a
//     HWHM/FWHM confusion, so it is not implemented (physics.md §4.1);
//   - Hγ: the Gigosos–González–Cardeñoso (2003) paper treats Hγ, but its
//     coefficients have not been recovered. Hγ stays disabled until they
//     are copied from the paper.
var StarkRelations = []StarkRelation{
	{
		ID: "ggc2003-hbeta-fwhm", Upper: 4, Kind: FWHM,
		Citation:      ggc2003,
		CoefficientNM: 4.800, RefDensityM3: 1e23, Exponent: 0.68116,
		MinNeM3: 1e21, MaxNeM3: 1e24,
		MinTK:    1000,
		Verified: false,
		Provenance: "coefficient 4.800 nm and exponent 0.68116 from memory, unverified " +
			"(glowlog physics notes §4.1, §10); they agree with Griem's α½ form to ~8 %. " +
			"Density range 1e21–1e24 m⁻³ is a provisional bound (recalled grid ~1e21–1e25 m⁻³); " +
			"T ≥ 1000 K recalled, upper T bound (a few 1e4 K) not specified",
		Notes: "Hβ is the most robust density line: its width depends only weakly on T and the " +
			"emitter–perturber reduced mass. The Hβ profile has a central dip; fit the width of the whole profile.",
	},
	{
		ID: "ggc2003-halpha-fwha", Upper: 3, Kind: FWHA,
		Citation:      ggc2003,
		CoefficientNM: 1.098, RefDensityM3: 1e23, Exponent: 0.67965,
		MinNeM3: 1e21, MaxNeM3: 1e24,
		MinTK:    1000,
		Verified: false,
		Provenance: "coefficient 1.098 nm and exponent 0.67965 from memory, unverified " +
			"(glowlog physics notes §4.1, §10). Density range 1e21–1e24 m⁻³ is a provisional bound; " +
			"T ≥ 1000 K recalled, upper T bound not specified",
		Notes: "The full width at half area is recommended for Hα because it is much less sensitive than " +
			"the FWHM to ion dynamics and T. In glowlog's budget the Stark profile is Lorentzian, whose FWHA " +
			"equals its FWHM (see DensityFromLorentzianNM). Check Hα for self-absorption.",
	},
	{
		ID: "griem-hbeta-fwhm-alpha008", Upper: 4, Kind: FWHM,
		Citation: "Griem, H. R. 1974, Spectral Line Broadening by Plasmas (Academic Press); " +
			"form FWHM[Å] = 2.50e-9 · α½ · n_e^(2/3)[cm⁻³] with α½ tabulated there and in " +
			"Kepple, P. & Griem, H. R. 1968, Phys. Rev. 173, 317",
		CoefficientNM: griemCoefficientNM(griemAlphaHalfHbeta), RefDensityM3: 1e23, Exponent: 2.0 / 3.0,
		MinNeM3: 1e21, MaxNeM3: 1e23,
		Verified: false,
		Provenance: "constant 2.50e-9 from the Holtsmark normal field 1.25e-9 n_e^(2/3) [sourced]; " +
			"α½ = 0.08 (Hβ, n_e ≈ 1e22 m⁻³, T ≈ 1e4 K) from memory, unverified, and taken constant " +
			"although it rises slowly with n_e. The density range (one decade either side of 1e22 m⁻³, " +
			"where α½ = 0.08 is quoted) is glowlog's choice, not from the source",
		Notes: "Alternative to the Gigosos–González–Cardeñoso fit, for comparison only.",
	},
}

// LookupStarkRelation returns the relation with the given ID (exact,
// case-insensitive). An unknown ID returns an error listing the known IDs.
func LookupStarkRelation(id string) (StarkRelation, error) {
	for _, r := range StarkRelations {
		if strings.EqualFold(strings.TrimSpace(id), r.ID) {
			return r, nil
		}
	}
	ids := make([]string, len(StarkRelations))
	for i, r := range StarkRelations {
		ids[i] = r.ID
	}
	return StarkRelation{}, fmt.Errorf("diag: unknown Stark relation %q (known: %s)", id, strings.Join(ids, ", "))
}

// defaultStarkIDs maps a Balmer upper level to its default relation.
var defaultStarkIDs = map[int]string{
	3: "ggc2003-halpha-fwha",
	4: "ggc2003-hbeta-fwhm",
}

// DefaultStarkRelation returns the default relation of the Balmer line
// with upper level upper: Hβ (4) → "ggc2003-hbeta-fwhm", Hα (3) →
// "ggc2003-halpha-fwha". Other lines have no relation and return an
// error.
func DefaultStarkRelation(upper int) (StarkRelation, error) {
	id, ok := defaultStarkIDs[upper]
	if !ok {
		return StarkRelation{}, fmt.Errorf("diag: no Stark relation for the Balmer line n=%d→2 (only Hα n=3 and Hβ n=4 are supported)", upper)
	}
	return LookupStarkRelation(id)
}

// check panics if r is not a usable relation (e.g. the zero value).
func (r StarkRelation) check() {
	if !(r.CoefficientNM > 0) || !(r.RefDensityM3 > 0) || !(r.Exponent > 0) {
		panic(fmt.Sprintf("diag: Stark relation %q has no coefficients", r.ID))
	}
}

// WidthFromDensity returns the Stark width in nm (of kind r.Kind) at
// electron density neM3 (m⁻³):
//
//	w = CoefficientNM · (n_e/RefDensityM3)^Exponent
//
// It panics for a negative density or an empty relation.
func (r StarkRelation) WidthFromDensity(neM3 float64) float64 {
	r.check()
	if !(neM3 >= 0) {
		panic(fmt.Sprintf("diag: WidthFromDensity(%g): density must be ≥ 0", neM3))
	}
	return r.CoefficientNM * math.Pow(neM3/r.RefDensityM3, r.Exponent)
}

// DensityFromWidth returns the electron density in m⁻³ whose Stark width
// (of kind r.Kind) is widthNM (nm):
//
//	n_e = RefDensityM3 · (w/CoefficientNM)^(1/Exponent)
//
// It panics for a negative width or an empty relation.
func (r StarkRelation) DensityFromWidth(widthNM float64) (neM3 float64) {
	r.check()
	if !(widthNM >= 0) {
		panic(fmt.Sprintf("diag: DensityFromWidth(%g): width must be ≥ 0", widthNM))
	}
	return r.RefDensityM3 * math.Pow(widthNM/r.CoefficientNM, 1/r.Exponent)
}

// LorentzianWidthNM returns the width of kind r.Kind of a Lorentzian
// profile with FWHM fwhmNM. For a Lorentzian the full width at half area
// equals the FWHM (FWHAFromVoigt(0, w) = w), so both kinds return fwhmNM.
// The function exists so that the analysis states this step explicitly:
// glowlog's budget models the Stark profile as the Lorentzian part of a
// Voigt profile.
func (r StarkRelation) LorentzianWidthNM(fwhmNM float64) float64 {
	switch r.Kind {
	case FWHM, FWHA:
		return fwhmNM
	}
	panic(fmt.Sprintf("diag: unknown width kind %v", r.Kind))
}

// DensityFromLorentzianNM returns the electron density in m⁻³ from the
// Lorentzian Stark FWHM starkFWHMNM of the budget (Budget.StarkFromVoigtNM
// or StarkFromLorentzNM):
//
//	n_e = DensityFromWidth(LorentzianWidthNM(w_S))
//
// For the Hα FWHA relation this uses FWHA = FWHM of the Lorentzian Stark
// profile. Where the true Stark profile is not Lorentzian (Hβ has a
// central dip and is far from Lorentzian) this is the usual approximation
// of physics.md §5.6; fitting the tabulated profile is better.
func (r StarkRelation) DensityFromLorentzianNM(starkFWHMNM float64) float64 {
	return r.DensityFromWidth(r.LorentzianWidthNM(starkFWHMNM))
}

// DensityRelSigma returns the relative 1σ uncertainty of an electron
// density from the relative 1σ uncertainty of the Stark width through a
// power law of exponent p:
//
//	σ_ne/n_e = (1/p) · σ_w/w
//
// (first-order propagation; the coefficient's own uncertainty is not
// included). It panics for p ≤ 0 or a negative relative uncertainty.
func DensityRelSigma(exponent, relWidthSigma float64) float64 {
	if !(exponent > 0) || !(relWidthSigma >= 0) {
		panic(fmt.Sprintf("diag: DensityRelSigma(%g, %g): need exponent > 0, σ ≥ 0", exponent, relWidthSigma))
	}
	return relWidthSigma / exponent
}

// DensityFromWidthSigma returns the electron density in m⁻³ and its 1σ
// uncertainty from a Stark width widthNM with 1σ uncertainty sigmaWidthNM
// (nm):
//
//	n_e = DensityFromWidth(w),   σ_ne = n_e · (1/Exponent) · σ_w/w
//
// It panics for a non-positive width or a negative σ.
func (r StarkRelation) DensityFromWidthSigma(widthNM, sigmaWidthNM float64) (neM3, sigmaNeM3 float64) {
	if !(widthNM > 0) || !(sigmaWidthNM >= 0) {
		panic(fmt.Sprintf("diag: DensityFromWidthSigma(%g, %g): need w > 0, σ ≥ 0", widthNM, sigmaWidthNM))
	}
	ne := r.DensityFromWidth(widthNM)
	return ne, ne * DensityRelSigma(r.Exponent, sigmaWidthNM/widthNM)
}

// Warnings returns plain-language warnings for using r at electron
// density neM3 (m⁻³) and temperature tempK (K; ≤ 0 or NaN means unknown
// and skips the temperature check): one when n_e lies outside
// [MinNeM3, MaxNeM3], one when T lies outside the specified temperature
// bounds, and one when the coefficients are unverified. It returns nil
// when there is nothing to say.
func (r StarkRelation) Warnings(neM3, tempK float64) []string {
	var w []string
	switch {
	case neM3 < r.MinNeM3:
		w = append(w, fmt.Sprintf("n_e = %s m⁻³ is below the validity range of %s (%s–%s m⁻³); the density is an extrapolation.",
			sci(neM3, 3), r.ID, sci(r.MinNeM3, 1), sci(r.MaxNeM3, 1)))
	case neM3 > r.MaxNeM3:
		w = append(w, fmt.Sprintf("n_e = %s m⁻³ is above the validity range of %s (%s–%s m⁻³); the density is an extrapolation.",
			sci(neM3, 3), r.ID, sci(r.MinNeM3, 1), sci(r.MaxNeM3, 1)))
	}
	if tempK > 0 {
		if r.MinTK > 0 && tempK < r.MinTK {
			w = append(w, fmt.Sprintf("T = %.0f K is below the temperature range of %s (≥ %.0f K).", tempK, r.ID, r.MinTK))
		}
		if r.MaxTK > 0 && tempK > r.MaxTK {
			w = append(w, fmt.Sprintf("T = %.0f K is above the temperature range of %s (≤ %.0f K).", tempK, r.ID, r.MaxTK))
		}
	}
	if !r.Verified {
		w = append(w, fmt.Sprintf("The coefficients of %s are from memory and unverified; treat n_e as provisional.", r.ID))
	}
	return w
}

// inglisTellerConst is the constant 0.027 of the Inglis–Teller relation
// N n_m^(15/2) = 0.027 a₀⁻³ (physics.md §4.4, sourced).
const inglisTellerConst = 0.027

// InglisTellerDensityM3 returns the charged-particle (ion) density in m⁻³
// at which the Balmer series merges above the last resolved upper level
// lastResolvedUpper, by the Inglis–Teller relation:
//
//	N · n_m^(15/2) = 0.027 a₀⁻³
//	log₁₀ N[cm⁻³] = 23.2606 − 7.5 log₁₀ n_m
//
// The constant 23.2606 = log₁₀(0.027/a₀³[cm³]) is computed from
// BohrRadiusM. The electron contribution discussed in the original paper
// is neglected. Use it only as an order-of-magnitude estimate: spectrometer
// resolution and Doppler width also limit the last resolved member. It
// panics for lastResolvedUpper < 3.
//
// References:
//
//	Inglis, D. R. & Teller, E. 1939, ApJ 90, 439 (volume and page from
//	memory, unverified).
func InglisTellerDensityM3(lastResolvedUpper int) float64 {
	if lastResolvedUpper < 3 {
		panic(fmt.Sprintf("diag: InglisTellerDensityM3(%d): need a Balmer upper level ≥ 3", lastResolvedUpper))
	}
	a0CM := BohrRadiusM * 100
	nCM3 := inglisTellerConst / (a0CM * a0CM * a0CM) / math.Pow(float64(lastResolvedUpper), 7.5)
	return nCM3 * 1e6
}
