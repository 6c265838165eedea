package diag

import (
	"fmt"
	"math"
	"sort"
	"strings"
)

// mcWhirterConst is the constant of the McWhirter criterion in cm⁻³
// K^(−1/2) eV⁻³. Status sourced (secondary): McWhirter (1965), in Plasma
// Diagnostic Techniques (Huddlestone & Leonard, eds.), Academic Press,
// pp. 201–264, as quoted by Cristoforetti et al. (2010), Spectrochim. Acta
// B 65, 86–95 (physics.md §10 item 3).
const mcWhirterConst = 1.6e12

// griemPLTEConst is the constant of Griem's partial-LTE criterion in cm⁻³,
// and griemPLTEExponent its exponent of n. Status sourced: NRL Plasma
// Formulary (2019), "Atomic Physics and Radiation", eq. (20), citing Griem,
// Plasma Spectroscopy (1964) (physics.md §10 item 1); check value n = 4,
// kT = 2 eV → 2.05e13 cm⁻³ (TestGriemNRLCheck).
const (
	griemPLTEConst    = 7e18
	griemPLTEExponent = 17.0 / 2.0
)

// griemEHEV is the hydrogen ionization energy as written in Griem's
// criterion, 13.6 eV; the exact 13.598434 eV would change the bound by
// 6e-5 relative.
const griemEHEV = 13.6

// McWhirterMinDensityM3 returns the electron density in m⁻³ that the
// McWhirter criterion requires for complete LTE at temperature tempK (K)
// with largest adjacent-level energy gap deltaEEV (eV):
//
//	n_e[cm⁻³] ≥ 1.6e12 · T^(1/2)[K] · (ΔE[eV])³
//
// For hydrogen ΔE is the 1s–2 gap (HydrogenLargestGapEV, 10.199 eV). The
// criterion is necessary, not sufficient. The constant 1.6e12 is sourced
// (secondary, via Cristoforetti et al. 2010; see mcWhirterConst). It panics for a negative temperature or gap.
//
// References:
//
//	McWhirter, R. W. P. 1965, in Huddlestone, R. H. & Leonard, S. L. (eds),
//	Plasma Diagnostic Techniques (Academic Press), ch. 5.
//	Cristoforetti, G. et al. 2010, Spectrochim. Acta B 65, 86.
func McWhirterMinDensityM3(tempK, deltaEEV float64) float64 {
	if !(tempK >= 0) || !(deltaEEV >= 0) {
		panic(fmt.Sprintf("diag: McWhirterMinDensityM3(T=%g K, ΔE=%g eV): need T ≥ 0, ΔE ≥ 0", tempK, deltaEEV))
	}
	return mcWhirterConst * math.Sqrt(tempK) * deltaEEV * deltaEEV * deltaEEV * 1e6
}

// HydrogenLargestGapEV returns the largest energy gap between adjacent
// levels of hydrogen (the given isotope), the 1s–2 gap, in eV, from the
// level energies of NewTransition(2, 1, iso): 10.199 eV for ¹H.
func HydrogenLargestGapEV(iso Isotope) float64 {
	t, err := NewTransition(2, 1, iso)
	if err != nil {
		panic(err)
	}
	return t.UpperEnergyEV - t.LowerEnergyEV
}

// GriemPLTEMinDensityM3 returns the electron density in m⁻³ that Griem's
// criterion requires for hydrogen level n (and all levels above it) to be
// in partial LTE (Saha–Boltzmann equilibrium with the free electrons) at
// electron temperature tempK (K):
//
//	n_e[cm⁻³] ≥ 7e18 · z⁷/n^(17/2) · (k_B T/(z² E_H))^(1/2),  z = 1, E_H = 13.6 eV
//
// The constant 7e18 and the exponent 17/2 are sourced (NRL Plasma
// Formulary 2019, eq. (20); see griemPLTEConst). It panics for n < 1 or a negative temperature.
//
// References:
//
//	Griem, H. R. 1963, Phys. Rev. 131, 1170.
//	Griem, H. R. 1964, Plasma Spectroscopy (McGraw-Hill).
func GriemPLTEMinDensityM3(n int, tempK float64) float64 {
	if n < 1 || !(tempK >= 0) {
		panic(fmt.Sprintf("diag: GriemPLTEMinDensityM3(n=%d, T=%g K): need n ≥ 1, T ≥ 0", n, tempK))
	}
	return griemPLTEConst / math.Pow(float64(n), griemPLTEExponent) *
		math.Sqrt(BoltzmannEVPerK*tempK/griemEHEV) * 1e6
}

// LTECheck holds the inputs of AssessLTE.
type LTECheck struct {
	// ExcitationTempK is the Boltzmann-plot excitation temperature, K. It
	// stands in for T_e in both criteria.
	ExcitationTempK float64
	// ElectronDensityM3 is the electron density, m⁻³; ≤ 0 means unknown.
	ElectronDensityM3 float64
	// DensityFromSameSpectrum is true when n_e was derived (Stark) from
	// the same spectrum as the Boltzmann plot.
	DensityFromSameSpectrum bool
	// Levels are the upper levels n in the Boltzmann fit.
	Levels []int
	// Isotope selects the level energies for the McWhirter gap.
	Isotope Isotope
}

// LTEAssessment is the result of AssessLTE.
type LTEAssessment struct {
	// McWhirterMinM3 is the complete-LTE bound at T_exc, m⁻³.
	McWhirterMinM3 float64
	// CompleteLTE is true when n_e ≥ McWhirterMinM3 (necessary only).
	CompleteLTE bool
	// GriemMinM3 maps each fitted level to its partial-LTE bound, m⁻³.
	GriemMinM3 map[int]float64
	// FailedLevels lists the fitted levels, ascending, whose partial-LTE
	// bound exceeds n_e.
	FailedLevels []int
	// Checked is false when n_e or T was unknown and no criterion could
	// be evaluated.
	Checked bool
	// Warnings are plain-language messages for the user.
	Warnings []string
	// Codes holds the flag code of each warning (same length).
	Codes []string
}

// Flag codes of the LTE checks (one per kind of warning, so that each has
// its own severity).
const (
	// FlagLTENotChecked: no n_e or no T_exc, the criteria were not checked.
	FlagLTENotChecked = "lte_not_checked"
	// FlagLTEComplete: the McWhirter criterion for complete LTE fails.
	FlagLTEComplete = "lte_complete_not_met"
	// FlagLTEPartial: Griem's partial-LTE criterion fails for fitted levels.
	FlagLTEPartial = "lte_partial_not_met"
	// FlagLTEDensitySameSource: n_e comes from the same spectrum.
	FlagLTEDensitySameSource = "lte_density_same_spectrum"
)

func (a *LTEAssessment) warn(code, msg string) {
	a.Warnings = append(a.Warnings, msg)
	a.Codes = append(a.Codes, code)
}

// AssessLTE checks the McWhirter (complete LTE) and Griem (partial LTE)
// criteria for a Boltzmann plot and returns plain-language warnings
// (physics.md §3.4):
//
//   - McWhirter fails: complete LTE is not satisfied; the slope is an
//     excitation temperature, valid only if the levels are in partial LTE;
//   - Griem fails for fitted levels: those levels may be depopulated or
//     overpopulated relative to Saha–Boltzmann;
//   - n_e from the same spectrum: an inflated n_e makes the checks easier
//     to pass.
//
// T_exc is used in place of T_e in both criteria. The bounds' constants
// are sourced (McWhirterMinDensityM3, GriemPLTEMinDensityM3).
func AssessLTE(c LTECheck) LTEAssessment {
	var a LTEAssessment
	levels := append([]int(nil), c.Levels...)
	sort.Ints(levels)
	if !(c.ExcitationTempK > 0) || !(c.ElectronDensityM3 > 0) {
		a.warn(FlagLTENotChecked, "No electron density or excitation temperature is available, so the LTE criteria could not be checked. "+
			"Treat the Boltzmann slope as an excitation temperature of the Balmer upper levels.")
		return a
	}
	a.Checked = true
	ne, T := c.ElectronDensityM3, c.ExcitationTempK
	gap := HydrogenLargestGapEV(c.Isotope)
	a.McWhirterMinM3 = McWhirterMinDensityM3(T, gap)
	a.CompleteLTE = ne >= a.McWhirterMinM3
	if !a.CompleteLTE {
		a.warn(FlagLTEComplete, fmt.Sprintf(
			"Complete LTE is not satisfied (n_e = %s m⁻³ < required %s m⁻³ by the McWhirter criterion at T_exc = %.0f K, ΔE = %.3f eV). "+
				"The Boltzmann slope is an excitation temperature of the Balmer upper levels, not T_e. "+
				"It is valid only if those levels are in partial LTE.",
			sci(ne, 3), sci(a.McWhirterMinM3, 3), T, gap))
	}
	a.GriemMinM3 = make(map[int]float64, len(levels))
	var worst float64
	for i, n := range levels {
		if i > 0 && n == levels[i-1] {
			continue
		}
		b := GriemPLTEMinDensityM3(n, T)
		a.GriemMinM3[n] = b
		if ne < b {
			a.FailedLevels = append(a.FailedLevels, n)
			worst = math.Max(worst, b)
		}
	}
	if len(a.FailedLevels) > 0 {
		names := make([]string, len(a.FailedLevels))
		for i, n := range a.FailedLevels {
			names[i] = fmt.Sprint(n)
		}
		lv, it := "Level", "it"
		if len(names) > 1 {
			lv, it = "Levels", "them"
		}
		list := strings.Join(names, ", ")
		a.warn(FlagLTEPartial, fmt.Sprintf(
			"Griem's partial-LTE criterion fails for n = %s (needs n_e ≥ %s m⁻³). "+
				"%s n = %s may be depopulated or overpopulated relative to Saha–Boltzmann (ionising or recombining plasma). "+
				"Consider excluding %s from the fit, or use a collisional–radiative model.",
			list, sci(worst, 3), lv, list, it))
	}
	if c.DensityFromSameSpectrum {
		a.warn(FlagLTEDensitySameSource,
			"n_e was derived from the Stark width in this same spectrum. An inflated n_e (for example from an unremoved instrument width) "+
				"makes these LTE checks easier to pass.")
	}
	return a
}
