package diag

import (
	"errors"
	"fmt"
	"math"
)

// ValiditySummary is the (partial) LTE assessment attached to a result.
type ValiditySummary struct {
	// Checked is false when T_exc or n_e is unknown.
	Checked bool `json:"checked"`
	// McWhirterMinDensityM3 is the complete-LTE bound at T_exc.
	McWhirterMinDensityM3 *float64 `json:"mcwhirter_min_density_m3"`
	// CompleteLTE reports whether n_e meets it (a necessary condition only).
	CompleteLTE *bool `json:"complete_lte_possible"`
	// PartialLTEMinDensityM3 maps each fitted upper level to Griem's
	// partial-LTE bound.
	PartialLTEMinDensityM3 map[int]float64 `json:"partial_lte_min_density_m3"`
	// FailedLevels are the fitted levels whose bound n_e does not meet.
	FailedLevels []int `json:"partial_lte_failed_levels"`

	Flags []Flag `json:"-"`
}

func validitySummary(res Result, m Measurement) ValiditySummary {
	var v ValiditySummary
	if res.ExcitationTemperatureK == nil {
		return v
	}
	c := LTECheck{ExcitationTempK: *res.ExcitationTemperatureK, Isotope: m.Isotope}
	if res.ElectronDensityM3 != nil {
		c.ElectronDensityM3 = *res.ElectronDensityM3
		// Every density glowlog derives comes from Stark widths of the same
		// measurement set.
		c.DensityFromSameSpectrum = true
	}
	for _, p := range res.Boltzmann.Points {
		if !p.Excluded {
			c.Levels = append(c.Levels, p.Upper)
		}
	}
	a := AssessLTE(c)
	v.Checked = a.Checked
	if a.McWhirterMinM3 > 0 {
		v.McWhirterMinDensityM3 = ptr(a.McWhirterMinM3)
	}
	if a.Checked {
		ok := a.CompleteLTE
		v.CompleteLTE = &ok
	}
	v.PartialLTEMinDensityM3 = a.GriemMinM3
	v.FailedLevels = a.FailedLevels
	if v.FailedLevels == nil {
		v.FailedLevels = []int{}
	}
	for i, w := range a.Warnings {
		v.Flags = append(v.Flags, Flag{Code: a.Codes[i], Message: w})
	}
	return v
}

// solveTwoLineAnalysis solves n_e and the gas temperature together from the
// Lorentzian widths of Hα and Hβ (physics.md §5.4). Because the Doppler
// part of each line's Gaussian budget depends on the gas temperature, the
// Voigt inversion and the two-line solution are iterated to a fixed point.
func solveTwoLineAnalysis(inputs []lineWidthInput, m Measurement, pert Perturber) (TwoLineSummary, error) {
	var ia, ib *lineWidthInput
	for i := range inputs {
		l := inputs[i].line
		if l.FWHMNM <= 0 && l.LorentzFWHMNM <= 0 {
			continue
		}
		switch l.Upper {
		case 3:
			ia = &inputs[i]
		case 4:
			ib = &inputs[i]
		}
	}
	if ia == nil || ib == nil {
		return TwoLineSummary{}, errors.New("solve_gas_temperature needs widths (fwhm_nm or lorentz_fwhm_nm) of both Hα (upper_level 3) and Hβ (upper_level 4)")
	}
	if pert.PolarizabilityCM3 <= 0 || m.PressurePa <= 0 {
		return TwoLineSummary{}, errors.New("solve_gas_temperature needs a polarizable perturber and a positive pressure_Pa (the van der Waals widths carry the temperature dependence)")
	}
	tin := TwoLineInput{Perturber: pert, PressurePa: m.PressurePa, Isotope: m.Isotope}
	// The two-line solver needs power laws: a T-dependent override (SH99,
	// Griem α½) leaves the default GGC relation in the two-line solution.
	if id, ok := m.StarkRelations[3]; ok {
		if r, err := LookupStarkRelation(id); err == nil && !r.TDependent() {
			tin.AlphaRelation = r
		}
	}
	if id, ok := m.StarkRelations[4]; ok {
		if r, err := LookupStarkRelation(id); err == nil && !r.TDependent() {
			tin.BetaRelation = r
		}
	}
	gasT := 1000.0
	if m.GasTemperatureK > 0 {
		gasT = m.GasTemperatureK
	}
	var sol TwoLineResult
	var iter int
	for iter = 1; iter <= 50; iter++ {
		for k, in := range []*lineWidthInput{ia, ib} {
			b, err := lineBudget(*in, m, pert, gasT)
			if err != nil {
				return TwoLineSummary{}, err
			}
			lor, err := lorentzOf(*in, b, in.line.FWHMNM)
			if err != nil {
				return TwoLineSummary{}, fmt.Errorf("two-line method, %s: measured FWHM %.4g nm is narrower than its Gaussian budget %.4g nm at T_g = %.0f K",
					in.t.Name(), in.line.FWHMNM, b.GaussTotalNM, gasT)
			}
			w := b.TwoLineLorentzNM(lor)
			sig := in.line.LorentzFWHMUncNM
			if in.line.LorentzFWHMNM <= 0 && in.line.FWHMUncNM > 0 {
				sig = in.line.FWHMUncNM * numDeriv(func(v float64) float64 {
					x, _ := LorentzFromVoigt(v, b.GaussTotalNM)
					return x
				}, in.line.FWHMNM)
			}
			if k == 0 {
				tin.AlphaLorentzNM, tin.AlphaSigmaNM = w, sig
			} else {
				tin.BetaLorentzNM, tin.BetaSigmaNM = w, sig
			}
		}
		if !(tin.AlphaLorentzNM > 0) || !(tin.BetaLorentzNM > 0) {
			return TwoLineSummary{}, fmt.Errorf("two-line method: no Lorentzian width left after the instrument, natural and resonance parts (Hα %.4g nm, Hβ %.4g nm)",
				tin.AlphaLorentzNM, tin.BetaLorentzNM)
		}
		var err error
		sol, err = SolveTwoLine(tin)
		if err != nil {
			return TwoLineSummary{}, fmt.Errorf("two-line method: %v", trimDiag(err.Error()))
		}
		if math.Abs(sol.GasTempK-gasT) <= 1e-10*gasT {
			break
		}
		gasT = sol.GasTempK
	}
	return TwoLineSummary{sol.NeM3, sol.SigmaNeM3, sol.GasTempK, sol.SigmaGasTempK, iter}, nil
}
