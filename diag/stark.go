package diag

import (
	"fmt"
	"math"
	"strings"

	"glowlog/diag/sh99"
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
	// Verified is false while the coefficients are still from memory
	// (Status "open"); true for sourced and cross-checked relations.
	Verified bool
	// Status is StatusSourced, StatusCrossChecked or StatusOpen
	// (physics.md §10).
	Status string
	// Source names where the numbers were read or how they were checked.
	Source string
	// Provenance explains where the numbers come from and how far they
	// can be trusted.
	Provenance string
	// Notes holds further caveats for display.
	Notes string

	// model selects how widths and densities are computed: the power law
	// above (zero value), Griem's form with the tabulated α½ of Hβ, or
	// the Stehlé–Hutcheon tables.
	model relationModel
}

// relationModel is the computation behind a StarkRelation.
type relationModel int

const (
	modelPowerLaw relationModel = iota
	modelGriemAlpha
	modelSH99
)

// Status words of constants and relations (physics.md §10).
const (
	// StatusSourced: read in a published source named beside the value.
	StatusSourced = "sourced"
	// StatusCrossChecked: not read in the primary source, but compared
	// against independent published data.
	StatusCrossChecked = "cross-checked"
	// StatusOpen: still from memory; keep labelled.
	StatusOpen = "open"
)

// ggc2003 is the full citation of the Gigosos–González–Cardeñoso fits.
const ggc2003 = "Gigosos, M. A., González, M. Á. & Cardeñoso, V. 2003, " +
	"\"Computer simulated Balmer-alpha, -beta and -gamma Stark line profiles " +
	"for non-equilibrium plasmas diagnostics\", Spectrochim. Acta B 58, 1489–1504"

// griemHolFieldConst is the FWHM constant of Griem's α½ form, Å per
// (cm⁻³)^(2/3): twice the Holtsmark normal field F₀ = 2.61 e n_e^(2/3) =
// 1.25e-9 n_e^(2/3) statvolt cm⁻¹ (physics.md §4.2), because α½ is the
// reduced half width per unit F₀.
const griemHolFieldConst = 2.50e-9

// ggcSource says how the GGC 2003 coefficients were checked.
const ggcSource = "coefficients as widely quoted (the 2003 paper itself not read); cross-checked against " +
	"the Stehlé & Hutcheon (1999) tables shipped in diag/sh99: at 1e4 K and 1e21–1e23 m⁻³ "

// StarkRelations is the table of every Stark relation glowlog knows. Each
// entry is cited and carries a Status (sourced, cross-checked or open,
// physics.md §10) and a Source.
//
// Deliberately absent:
//   - an Hα FWHM fit with coefficient 0.549 nm and the FWHA exponent,
//     sometimes quoted: it is exactly half of 1.098 nm, which suggests a
//     HWHM/FWHM confusion, so it is not implemented (physics.md §4.1);
//   - a GGC 2003 Hγ fit: its coefficients have not been recovered
//     (physics.md §10 item 12). Hγ and higher members use the
//     Stehlé–Hutcheon tables.
var StarkRelations = append([]StarkRelation{
	{
		ID: "ggc2003-hbeta-fwhm", Upper: 4, Kind: FWHM,
		Citation:      ggc2003,
		CoefficientNM: 4.800, RefDensityM3: 1e23, Exponent: 0.68116,
		MinNeM3: 1e21, MaxNeM3: 1e24,
		MinTK:    1000,
		Verified: true, Status: StatusCrossChecked,
		Source: ggcSource + "Hβ FWHM GGC/SH99 = 1.06–1.09 in width (diag/sh99 TestAgainstGGC2003; physics.md §10 item 10 " +
			"reads 3–4 %), i.e. 9–13 % in n_e, carried as the model spread",
		Provenance: "coefficient 4.800 nm and exponent 0.68116 as widely quoted, cross-checked against SH99 (physics.md §4.1, §10 item 10). " +
			"Density range 1e21–1e24 m⁻³ is a provisional bound (the paper's grid not read, §10 item 12); " +
			"T ≥ 1000 K recalled, upper T bound not specified",
		Notes: "Hβ is the most robust density line: its width depends only weakly on T and the " +
			"emitter–perturber reduced mass. The Hβ profile has a central dip; fit the width of the whole profile.",
	},
	{
		ID: "ggc2003-halpha-fwha", Upper: 3, Kind: FWHA,
		Citation:      ggc2003,
		CoefficientNM: 1.098, RefDensityM3: 1e23, Exponent: 0.67965,
		MinNeM3: 1e21, MaxNeM3: 1e24,
		MinTK:    1000,
		Verified: true, Status: StatusCrossChecked,
		Source: ggcSource + "Hα FWHA GGC/SH99 = 1.12–1.16 in width (diag/sh99 TestAgainstGGC2003; physics.md §10 item 11: " +
			"11–16 %, ion dynamics), i.e. 18–24 % in n_e, carried as the model spread",
		Provenance: "coefficient 1.098 nm and exponent 0.67965 as widely quoted, cross-checked against SH99 (physics.md §4.1, §10 item 11). " +
			"Density range 1e21–1e24 m⁻³ is a provisional bound (§10 item 12); T ≥ 1000 K recalled, upper T bound not specified",
		Notes: "The full width at half area is recommended for Hα because it is much less sensitive than " +
			"the FWHM to ion dynamics and T. In glowlog's budget the Stark profile is Lorentzian, whose FWHA " +
			"equals its FWHM (see DensityFromLorentzianNM). Check Hα for self-absorption.",
	},
	{
		ID: "griem-hbeta-fwhm", Upper: 4, Kind: FWHM,
		Citation: "Griem, H. R. 1974, Spectral Line Broadening by Plasmas (Academic Press); " +
			"form FWHM[Å] = 2.50e-9 · α½ · n_e^(2/3)[cm⁻³]; α½(Hβ) from the NIST atomic-spectroscopy " +
			"compendium (Wiese et al.), line-broadening section",
		RefDensityM3: 1e23, Exponent: 2.0 / 3.0,
		MinNeM3: 1e21, MaxNeM3: 1e24, MinTK: 5000, MaxTK: 30000,
		Verified: true, Status: StatusSourced,
		Source: "NIST atomic-spectroscopy compendium (Wiese et al.), line-broadening section: α½(Hβ) table in T " +
			"(5000–30000 K) and n_e (1e15–1e18 cm⁻³), interpolated in log n_e and log T (physics.md §10 item 6); " +
			"constant 2.50e-9 = 2 × Holtsmark field constant 1.25e-9 (physics.md §4.2)",
		Provenance: "Griem's α½ form with the NIST α½ table for Hβ (no longer the fixed α½ = 0.08); outside the " +
			"table the edge value is used and the result says so",
		Notes: "Alternative to the Gigosos–González–Cardeñoso fit, for comparison only.",
		model: modelGriemAlpha,
	},
}, sh99Relations()...)

// legacyRelationIDs maps IDs that earlier versions stored to the current
// entry.
var legacyRelationIDs = map[string]string{
	// The fixed α½ = 0.08 relation, replaced by the NIST α½ table.
	"griem-hbeta-fwhm-alpha008": "griem-hbeta-fwhm",
}

// sh99Names are the line names used in the SH99 relation IDs.
var sh99Names = map[int]string{3: "halpha", 4: "hbeta", 5: "hgamma", 6: "hdelta", 7: "hepsilon",
	8: "h8", 9: "h9", 10: "h10", 11: "h11", 12: "h12"}

// sh99Relations returns the Stehlé–Hutcheon relations, Hα (FWHA) and
// Hβ … H(12→2) (FWHM, for the even levels relative to the peaks): Stark
// widths with the tables' Doppler part removed (package diag/sh99),
// functions of n_e and T.
func sh99Relations() []StarkRelation {
	var out []StarkRelation
	for n := 3; n <= 12; n++ {
		k := FWHM
		if n == 3 {
			k = FWHA
		}
		out = append(out, StarkRelation{
			ID: "sh99-" + sh99Names[n] + "-" + strings.ToLower(k.String()), Upper: n, Kind: k,
			Citation: sh99.Citation, Verified: true, Status: StatusSourced,
			Source: "Stehlé & Hutcheon (1999) tables (CDS VI/98A), shipped in diag/sh99/data with their provenance; " +
				"tables' Doppler part at T removed (diag/sh99 doc); interpolated in n_e and T",
			Provenance: "primary tables (model microfield method, pure hydrogen plasma, reduced mass 0.5); " +
				"the density range depends on T and is stated with the result",
			Notes: "H–H⁺ tables: heavier ions (Ar⁺) narrow Hα noticeably, Hβ less; the spread against GGC 2003 " +
				"is carried as a systematic uncertainty.",
			model: modelSH99,
		})
	}
	return out
}

// NIST α½(Hβ) table (physics.md §10 item 6: NIST atomic-spectroscopy
// compendium, Wiese et al., line-broadening section). Rows T in K,
// columns n_e in cm⁻³; NaN: not tabulated.
var (
	alphaHalfTK  = []float64{5000, 10000, 20000, 30000}
	alphaHalfNe  = []float64{1e15, 1e16, 1e17, 1e18}
	alphaHalfTab = [][]float64{
		{0.0787, 0.0808, 0.0765, math.NaN()},
		{0.0803, 0.0840, 0.0851, 0.0781},
		{0.0815, 0.0860, 0.0902, 0.0896},
		{0.0814, 0.0860, 0.0919, 0.0946},
	}
)

// GriemAlphaHalfHbeta returns Griem's reduced half width α½ of Hβ at
// electron density neM3 (m⁻³) and temperature tempK (K) from the NIST
// table (physics.md §10 item 6), interpolated bilinearly in log n_e and
// log T. Outside the table (or in the untabulated 5000 K, 1e18 cm⁻³
// corner) the nearest tabulated value is used and inside is false.
func GriemAlphaHalfHbeta(neM3, tempK float64) (alpha float64, inside bool) {
	ne := neM3 * 1e-6
	inside = ne >= alphaHalfNe[0] && ne <= alphaHalfNe[len(alphaHalfNe)-1] &&
		tempK >= alphaHalfTK[0] && tempK <= alphaHalfTK[len(alphaHalfTK)-1]
	i, ti := logCell(alphaHalfTK, tempK)
	j, tj := logCell(alphaHalfNe, ne)
	v00, v01, v10, v11 := alphaHalfTab[i][j], alphaHalfTab[i][j+1], alphaHalfTab[i+1][j], alphaHalfTab[i+1][j+1]
	if math.IsNaN(v01) {
		// 5000 K has no 1e18 cm⁻³ column: use the 1e4 K row there.
		v01, ti, inside = v11, 1, inside && ti == 1
	}
	return (1-ti)*((1-tj)*v00+tj*v01) + ti*((1-tj)*v10+tj*v11), inside
}

// logCell returns the cell i (g[i] ≤ v ≤ g[i+1]) and the fraction in log
// v, clamped to the grid.
func logCell(g []float64, v float64) (int, float64) {
	n := len(g)
	switch {
	case !(v > g[0]):
		return 0, 0
	case v >= g[n-1]:
		return n - 2, 1
	}
	i := 0
	for v > g[i+1] {
		i++
	}
	return i, math.Log(v/g[i]) / math.Log(g[i+1]/g[i])
}

// DefaultElectronTemperatureK is the electron temperature that selects the
// temperature of the T-dependent Stark models (SH99, Griem α½) when none
// is given: 1e4 K (issue 8; a typical discharge value, common practice).
const DefaultElectronTemperatureK = 1e4

// LookupStarkRelation returns the relation with the given ID (exact,
// case-insensitive). An unknown ID returns an error listing the known IDs.
func LookupStarkRelation(id string) (StarkRelation, error) {
	if cur, ok := legacyRelationIDs[strings.ToLower(strings.TrimSpace(id))]; ok {
		id = cur
	}
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
	if r.model == modelPowerLaw && (!(r.CoefficientNM > 0) || !(r.RefDensityM3 > 0) || !(r.Exponent > 0)) {
		panic(fmt.Sprintf("diag: Stark relation %q has no coefficients", r.ID))
	}
}

// TDependent reports whether the relation's width depends on the electron
// temperature (Griem α½ table, SH99 tables); the power laws do not.
func (r StarkRelation) TDependent() bool { return r.model != modelPowerLaw }

// WidthAt returns the Stark width in nm (of kind r.Kind) at electron
// density neM3 (m⁻³) and electron temperature tempK (K; only the
// T-dependent relations use it). Power law: w = CoefficientNM ·
// (n_e/RefDensityM3)^Exponent; Griem: FWHM[Å] = 2.50e-9 α½(n_e, T)
// n_e^(2/3)[cm⁻³]; SH99: sh99.Line.StarkWidthNM. The error wraps
// sh99.ErrOutOfRange outside the SH99 tables.
func (r StarkRelation) WidthAt(neM3, tempK float64) (float64, error) {
	r.check()
	if !(neM3 >= 0) {
		return 0, fmt.Errorf("diag: Stark width at n_e = %g m⁻³: density must be ≥ 0", neM3)
	}
	switch r.model {
	case modelGriemAlpha:
		a, _ := GriemAlphaHalfHbeta(neM3, tempK)
		return 0.1 * griemHolFieldConst * a * math.Pow(neM3*1e-6, 2.0/3.0), nil
	case modelSH99:
		l, err := sh99.Balmer(r.Upper)
		if err != nil {
			return 0, err
		}
		return l.StarkWidthNM(sh99Kind(r.Kind), neM3, tempK)
	}
	return r.CoefficientNM * math.Pow(neM3/r.RefDensityM3, r.Exponent), nil
}

// DensityAt returns the electron density in m⁻³ whose Stark width (of
// kind r.Kind) is widthNM (nm) at electron temperature tempK (K; only the
// T-dependent relations use it): the inverse of WidthAt. The error wraps
// sh99.ErrOutOfRange outside the SH99 tables.
func (r StarkRelation) DensityAt(widthNM, tempK float64) (float64, error) {
	r.check()
	if !(widthNM >= 0) {
		return 0, fmt.Errorf("diag: density from Stark width %g nm: width must be ≥ 0", widthNM)
	}
	switch r.model {
	case modelGriemAlpha:
		// n = (w/(2.50e-9 α½(n, T)))^(3/2): α½ changes by a few per cent
		// per decade, so the fixed point converges in a few steps.
		wA := widthNM * 10
		ne := 1e22
		for range 50 {
			a, _ := GriemAlphaHalfHbeta(ne, tempK)
			next := math.Pow(wA/(griemHolFieldConst*a), 1.5) * 1e6
			if math.Abs(next-ne) <= 1e-12*ne {
				return next, nil
			}
			ne = next
		}
		return ne, nil
	case modelSH99:
		l, err := sh99.Balmer(r.Upper)
		if err != nil {
			return 0, err
		}
		return l.DensityFromStarkWidthM3(sh99Kind(r.Kind), widthNM, tempK)
	}
	return r.RefDensityM3 * math.Pow(widthNM/r.CoefficientNM, 1/r.Exponent), nil
}

// LocalExponent returns d ln w / d ln n_e at (neM3, tempK): Exponent for
// a power law, a central difference (±1 %) of WidthAt otherwise (NaN
// where WidthAt fails).
func (r StarkRelation) LocalExponent(neM3, tempK float64) float64 {
	if r.model == modelPowerLaw {
		return r.Exponent
	}
	const h = 0.01
	lo, err1 := r.WidthAt(neM3*(1-h), tempK)
	hi, err2 := r.WidthAt(neM3*(1+h), tempK)
	if err1 != nil || err2 != nil {
		// At a range edge use a one-sided difference.
		mid, err := r.WidthAt(neM3, tempK)
		switch {
		case err != nil:
			return math.NaN()
		case err1 == nil:
			return math.Log(mid/lo) / -math.Log(1-h)
		case err2 == nil:
			return math.Log(hi/mid) / math.Log(1+h)
		}
		return math.NaN()
	}
	return math.Log(hi/lo) / math.Log((1+h)/(1-h))
}

// sh99Kind converts a width kind.
func sh99Kind(k WidthKind) sh99.WidthKind {
	if k == FWHA {
		return sh99.FWHA
	}
	return sh99.FWHM
}

// WidthFromDensity returns the Stark width in nm (of kind r.Kind) at
// electron density neM3 (m⁻³), for the T-dependent relations at
// DefaultElectronTemperatureK:
//
//	w = CoefficientNM · (n_e/RefDensityM3)^Exponent   (power laws)
//
// It panics for a negative density or an empty relation and returns NaN
// outside the SH99 tables (use WidthAt to get the reason).
func (r StarkRelation) WidthFromDensity(neM3 float64) float64 {
	r.check()
	if !(neM3 >= 0) {
		panic(fmt.Sprintf("diag: WidthFromDensity(%g): density must be ≥ 0", neM3))
	}
	w, err := r.WidthAt(neM3, DefaultElectronTemperatureK)
	if err != nil {
		return math.NaN()
	}
	return w
}

// DensityFromWidth returns the electron density in m⁻³ whose Stark width
// (of kind r.Kind) is widthNM (nm), for the T-dependent relations at
// DefaultElectronTemperatureK:
//
//	n_e = RefDensityM3 · (w/CoefficientNM)^(1/Exponent)   (power laws)
//
// It panics for a negative width or an empty relation and returns NaN
// outside the SH99 tables (use DensityAt to get the reason).
func (r StarkRelation) DensityFromWidth(widthNM float64) (neM3 float64) {
	r.check()
	if !(widthNM >= 0) {
		panic(fmt.Sprintf("diag: DensityFromWidth(%g): width must be ≥ 0", widthNM))
	}
	ne, err := r.DensityAt(widthNM, DefaultElectronTemperatureK)
	if err != nil {
		return math.NaN()
	}
	return ne
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
	return ne, ne * DensityRelSigma(r.LocalExponent(ne, DefaultElectronTemperatureK), sigmaWidthNM/widthNM)
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
	case r.model == modelSH99:
		// The SH99 range depends on T and is enforced by DensityAt.
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
	if r.model == modelGriemAlpha && tempK > 0 {
		if _, in := GriemAlphaHalfHbeta(neM3, tempK); !in {
			w = append(w, fmt.Sprintf("n_e = %s m⁻³, T = %.0f K is outside the NIST α½ table of Hβ (1e21–1e24 m⁻³, 5000–30000 K; no 1e24 m⁻³ at 5000 K): the edge value of α½ is used.",
				sci(neM3, 3), tempK))
		}
	}
	if r.Status == StatusOpen {
		w = append(w, fmt.Sprintf("The coefficients of %s are from memory and unverified; treat n_e as provisional.", r.ID))
	}
	return w
}

// inglisTellerConst is the constant 0.027 of the Inglis–Teller relation
// N n_m^(15/2) = 0.027 a₀⁻³. Status sourced (secondary): Inglis & Teller
// (1939), ApJ 90, 439, as summarised in encyclopedic reference works
// (physics.md §4.4, §10 item 2); check n_m = 10 → 5.76e15 cm⁻³.
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
//	Inglis, D. R. & Teller, E. 1939, ApJ 90, 439 (as summarised in
//	encyclopedic reference works; physics.md §10 item 2).
func InglisTellerDensityM3(lastResolvedUpper int) float64 {
	if lastResolvedUpper < 3 {
		panic(fmt.Sprintf("diag: InglisTellerDensityM3(%d): need a Balmer upper level ≥ 3", lastResolvedUpper))
	}
	a0CM := BohrRadiusM * 100
	nCM3 := inglisTellerConst / (a0CM * a0CM * a0CM) / math.Pow(float64(lastResolvedUpper), 7.5)
	return nCM3 * 1e6
}
