package diag

import (
	"errors"
	"fmt"
	"math"
)

// lineBudget builds the broadening budget of one line at gas temperature
// gasT; gasT ≤ 0 (unknown) leaves out the Doppler and van der Waals parts.
func lineBudget(in lineWidthInput, m Measurement, pert Perturber, gasT float64) (Budget, error) {
	bi := BudgetInput{Transition: in.t, InstrumentGaussNM: in.instG, InstrumentLorentzNM: in.instL,
		GasTempK: gasT, Perturber: pert, PressurePa: m.PressurePa, GroundDensityM3: m.GroundStateDensityM3}
	unknown := gasT <= 0
	if unknown {
		// Any positive temperature serves: its Doppler and van der Waals
		// parts are removed below.
		bi.GasTempK, bi.Perturber, bi.PressurePa = 300, NoPerturber, 0
	}
	b, err := NewBudget(bi)
	if err != nil {
		return b, err
	}
	if unknown {
		b.DopplerNM, b.VanDerWaalsNM = 0, 0
		b.GaussTotalNM = in.instG
		b.LorentzNonStarkNM = b.LorentzOtherNM
	}
	return b, nil
}

// lorentzOf returns the Lorentzian FWHM of a line at gas temperature gasT:
// the given Lorentzian width, or the Olivero–Longbothum inversion of the
// measured Voigt FWHM with the Gaussian budget.
func lorentzOf(in lineWidthInput, b Budget, voigt float64) (float64, error) {
	if in.line.LorentzFWHMNM > 0 {
		return in.line.LorentzFWHMNM, nil
	}
	l, err := LorentzFromVoigt(voigt, b.GaussTotalNM)
	if err != nil {
		return 0, err
	}
	return l, nil
}

// analyzeWidth fills the width, budget and Stark fields of lr.
func analyzeWidth(lr *LineResult, in lineWidthInput, m Measurement, pert Perturber, gasT, gasTUnc float64) error {
	b, err := lineBudget(in, m, pert, gasT)
	if err != nil {
		return err
	}
	lr.Budget = &BudgetView{b.InstrumentGaussNM, b.InstrumentLorentzNM, b.DopplerNM, b.NaturalNM,
		b.ResonanceNM, b.VanDerWaalsNM, b.GaussTotalNM, b.LorentzNonStarkNM}
	l := in.line
	var lor, lorUnc float64
	if l.LorentzFWHMNM > 0 {
		lor, lorUnc = l.LorentzFWHMNM, l.LorentzFWHMUncNM
		lr.LorentzSource = "given"
	} else {
		lor, err = lorentzOf(in, b, l.FWHMNM)
		if errors.Is(err, ErrBelowResolution) {
			return fmt.Errorf("measured FWHM %.4g nm is narrower than its Gaussian budget %.4g nm (instrument %.4g nm, Doppler %.4g nm)",
				l.FWHMNM, b.GaussTotalNM, b.InstrumentGaussNM, b.DopplerNM)
		}
		if err != nil {
			return err
		}
		lr.LorentzSource = "voigt-inversion"
		if l.FWHMUncNM > 0 {
			lorUnc = l.FWHMUncNM * numDeriv(func(v float64) float64 {
				x, err := LorentzFromVoigt(v, b.GaussTotalNM)
				if err != nil {
					return 0
				}
				return x
			}, l.FWHMNM)
		}
	}
	if !finite(lorUnc) {
		return &NumericError{Upper: l.Upper, Field: "fwhm_unc_nm", Value: l.FWHMUncNM, Msg: fmt.Sprintf(
			"through the Voigt inversion of the width %v nm this uncertainty becomes %v: check the value and its unit (nm)", l.FWHMNM, lorUnc)}
	}
	lr.LorentzFWHMNM = ptr(lor)
	if lorUnc > 0 {
		lr.LorentzFWHMUncNM = ptr(lorUnc)
	}
	stark := lor - b.LorentzNonStarkNM
	if !(stark > 0) {
		lr.note(FlagNoStarkWidth, "the Lorentzian width %.4g nm is not larger than the non-Stark Lorentzian budget %.4g nm (van der Waals %.4g nm): the Stark width is not resolved and no density is given",
			lor, b.LorentzNonStarkNM, b.VanDerWaalsNM)
		return nil
	}
	// The Stark width's 1σ: the width's own σ, and the gas temperature's
	// σ through the Doppler and van der Waals parts (first order).
	starkAt := func(tg float64) float64 {
		bb, err := lineBudget(in, m, pert, tg)
		if err != nil {
			return math.NaN()
		}
		ll, err := lorentzOf(in, bb, l.FWHMNM)
		if err != nil {
			return math.NaN()
		}
		return ll - bb.LorentzNonStarkNM
	}
	sigT := 0.0
	if gasT > 0 && gasTUnc > 0 {
		sigT = gasTUnc * numDeriv(starkAt, gasT)
		if math.IsNaN(sigT) {
			sigT = 0
		}
	}
	starkUnc := math.Hypot(lorUnc, sigT)
	lr.StarkFWHMNM = ptr(stark)
	if starkUnc > 0 {
		lr.StarkFWHMUncNM = ptr(starkUnc)
	}

	// The Stark width with the instrument width, gas temperature and the
	// van der Waals and resonance constants changed, for the systematic
	// parts. A Lorentzian width from a profile fit with the Gaussian held
	// at the budget moves with that budget as the Voigt inversion of the
	// fitted total width does.
	starkWith := func(instG, tg, vdwScale, resScale float64) float64 {
		in2 := in
		in2.instG = instG
		bb, err := lineBudget(in2, m, pert, tg)
		if err != nil {
			return math.NaN()
		}
		var ll float64
		switch {
		case l.LorentzFWHMNM > 0 && l.Profile != nil && l.Profile.GaussFixed && l.Profile.TotalFWHMNM > 0:
			l1, err1 := LorentzFromVoigt(l.Profile.TotalFWHMNM, bb.GaussTotalNM)
			l0, err0 := LorentzFromVoigt(l.Profile.TotalFWHMNM, b.GaussTotalNM)
			if err1 != nil || err0 != nil {
				return math.NaN()
			}
			ll = l.LorentzFWHMNM + l1 - l0
		default:
			ll, err = lorentzOf(in2, bb, l.FWHMNM)
			if err != nil {
				return math.NaN()
			}
		}
		return ll - bb.LorentzNonStarkNM - (vdwScale-1)*bb.VanDerWaalsNM - (resScale-1)*bb.ResonanceNM
	}
	te := m.ElectronTemperatureK
	if te <= 0 {
		te = DefaultElectronTemperatureK
	}
	lineDensities(lr, in, m, te, stark, lorUnc, gasT, gasTUnc, b, starkWith)
	if lr.noRelation {
		lr.Notes = append(lr.Notes, "no Stark model covers this line's width here, so it gives no density")
	}
	for _, d := range lr.Densities {
		if !finite(d.ElectronDensityM3) || !finite(d.ElectronDensityUncM3) {
			field, v := "fwhm_unc_nm", l.FWHMUncNM
			if l.LorentzFWHMNM > 0 {
				field, v = "lorentz_fwhm_unc_nm", l.LorentzFWHMUncNM
			}
			return &NumericError{Upper: l.Upper, Field: field, Value: v, Msg: fmt.Sprintf(
				"the Stark width %v nm is %.3g times smaller than its 1σ %v nm, so the density's uncertainty is unbounded: the Stark width is not resolved (check the widths and their unit, nm)",
				stark, starkUnc/stark, starkUnc)}
		}
	}
	return nil
}

// numDeriv is a central-difference derivative with a relative step, so
// that x ± h keeps the sign of x (widths and temperatures stay positive
// however small they are). It is 0 at x = 0.
func numDeriv(f func(float64) float64, x float64) float64 {
	h := 1e-6 * math.Abs(x)
	if h == 0 {
		h = math.Abs(x) / 2 // subnormal x: 1e-6·x underflows
	}
	if h == 0 {
		return 0
	}
	return math.Abs(f(x+h)-f(x-h)) / (2 * h)
}

// unknownSpreadLimit is the relative difference between line densities
// beyond which they are flagged when no width uncertainties were given.
// Common practice, no source.
const unknownSpreadLimit = 0.3

// relationSystematic is the relative uncertainty assumed for each Stark
// relation when densities from different lines are compared (the fits'
// own accuracy, a few per cent, plus the approximation of the Hβ profile
// by a Lorentzian). Common practice, no source; it is not included in the
// reported statistical σ of n_e.
const relationSystematic = 0.05

// densityConsistency flags lines whose densities disagree by more than
// twice their combined 1σ (or, without uncertainties, by more than
// unknownSpreadLimit relative to their mean).
func densityConsistency(lines []LineResult) []Flag {
	var out []Flag
	for i := range lines {
		for j := i + 1; j < len(lines); j++ {
			a, b := lines[i], lines[j]
			if a.ElectronDensityM3 == nil || b.ElectronDensityM3 == nil {
				continue
			}
			d := math.Abs(*a.ElectronDensityM3 - *b.ElectronDensityM3)
			if a.ElectronDensityUncM3 == nil || b.ElectronDensityUncM3 == nil {
				if mean := (*a.ElectronDensityM3 + *b.ElectronDensityM3) / 2; d > unknownSpreadLimit*mean {
					out = append(out, Flag{Code: FlagDensityDisagree, Message: fmt.Sprintf(
						"%s and %s give electron densities %s and %s m⁻³, %.0f %% apart (no width uncertainties were given to judge the difference): check the instrument width, the gas temperature and self-absorption; the Hβ value is preferred",
						a.Name, b.Name, sci(*a.ElectronDensityM3, 3), sci(*b.ElectronDensityM3, 3), 100*d/mean)})
				}
				continue
			}
			s := math.Hypot(math.Hypot(*a.ElectronDensityUncM3, relationSystematic**a.ElectronDensityM3),
				math.Hypot(*b.ElectronDensityUncM3, relationSystematic**b.ElectronDensityM3))
			if d > 2*s {
				out = append(out, Flag{Code: FlagDensityDisagree, Message: fmt.Sprintf(
					"%s and %s give electron densities %s and %s m⁻³, which differ by more than twice their combined uncertainty (statistical, plus 5 %% per relation): check the instrument width, the gas temperature and self-absorption; the Hβ value is preferred",
					a.Name, b.Name, sci(*a.ElectronDensityM3, 3), sci(*b.ElectronDensityM3, 3))})
			}
		}
	}
	return out
}
