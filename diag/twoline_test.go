package diag

import (
	"errors"
	"math"
	"testing"
)

// TestTwoLineCheck30 is physics.md check 30: w_L(Hα) = 0.08031 nm and
// w_L(Hβ) = 0.23808 nm in Ar at 1 atm must give n_e = 1.000e21 m⁻³ and
// T_g = 1500 K (rel 1e-3). The widths were generated in physics.md from
// the §4.1 and §5.4 formulas, whose coefficients are from memory,
// unverified: this is a self-consistency check of the solver, not physics.
func TestTwoLineCheck30(t *testing.T) {
	t.Parallel()
	res, err := SolveTwoLine(TwoLineInput{AlphaLorentzNM: 0.08031, BetaLorentzNM: 0.23808,
		Perturber: argonAtm(t), PressurePa: 101325})
	if err != nil {
		t.Fatal(err)
	}
	if broadRel(res.NeM3, 1.000e21) > 1e-3 || broadRel(res.GasTempK, 1500) > 1e-3 {
		t.Errorf("SolveTwoLine = n_e %.5g m⁻³, T_g %.2f K; want 1.000e21, 1500 (rel 1e-3)", res.NeM3, res.GasTempK)
	}
	if res.AlphaRelationID != "ggc2003-halpha-fwha" || res.BetaRelationID != "ggc2003-hbeta-fwhm" {
		t.Errorf("relations = %s, %s", res.AlphaRelationID, res.BetaRelationID)
	}
	if res.SigmaNeM3 != 0 || res.SigmaGasTempK != 0 {
		t.Errorf("σ without width σ: %g, %g", res.SigmaNeM3, res.SigmaGasTempK)
	}
}

// TestTwoLineRecovery generates widths from known (n_e, T_g) with the same
// model and checks that the solver recovers them to 1e-9 (invariant), and
// that the Jacobian uncertainties match finite-difference propagation.
func TestTwoLineRecovery(t *testing.T) {
	t.Parallel()
	ar := argonAtm(t)
	he, _ := LookupPerturber("He")
	ha := mustTransition(t, 3, 2, Hydrogen)
	hb := mustTransition(t, 4, 2, Hydrogen)
	ra, _ := DefaultStarkRelation(3)
	rb, _ := DefaultStarkRelation(4)
	for _, tc := range []struct {
		ne, T float64
		p     Perturber
		pa    float64
	}{
		{1e21, 1500, ar, 101325},
		{3e20, 400, ar, 101325},
		{5e22, 4000, ar, 101325},
		{2e21, 900, he, 101325},
		{1e22, 2500, ar, 2e5},
	} {
		wa := ra.WidthFromDensity(tc.ne) + VanDerWaalsFWHMNM(ha, tc.p, tc.pa, tc.T)
		wb := rb.WidthFromDensity(tc.ne) + VanDerWaalsFWHMNM(hb, tc.p, tc.pa, tc.T)
		in := TwoLineInput{AlphaLorentzNM: wa, BetaLorentzNM: wb, AlphaSigmaNM: 0.01 * wa, BetaSigmaNM: 0.01 * wb,
			Perturber: tc.p, PressurePa: tc.pa}
		res, err := SolveTwoLine(in)
		if err != nil {
			t.Errorf("SolveTwoLine(n_e=%g, T=%g, %s): %v", tc.ne, tc.T, tc.p.Name, err)
			continue
		}
		if broadRel(res.NeM3, tc.ne) > 1e-9 || broadRel(res.GasTempK, tc.T) > 1e-9 {
			t.Errorf("recovered (%.10g, %.10g), want (%g, %g)", res.NeM3, res.GasTempK, tc.ne, tc.T)
		}
		// Finite-difference propagation: perturb each width by its σ and
		// add the responses in quadrature (first order, uncorrelated).
		var dNe, dT [2]float64
		for k := 0; k < 2; k++ {
			p := in
			if k == 0 {
				p.AlphaLorentzNM += 1e-3 * in.AlphaSigmaNM
			} else {
				p.BetaLorentzNM += 1e-3 * in.BetaSigmaNM
			}
			r2, err := SolveTwoLine(p)
			if err != nil {
				t.Fatal(err)
			}
			dNe[k] = (r2.NeM3 - res.NeM3) * 1e3
			dT[k] = (r2.GasTempK - res.GasTempK) * 1e3
		}
		if want := math.Hypot(dNe[0], dNe[1]); broadRel(res.SigmaNeM3, want) > 1e-2 {
			t.Errorf("σ_ne = %g, finite differences %g", res.SigmaNeM3, want)
		}
		if want := math.Hypot(dT[0], dT[1]); broadRel(res.SigmaGasTempK, want) > 1e-2 {
			t.Errorf("σ_T = %g, finite differences %g", res.SigmaGasTempK, want)
		}
		if !(math.Abs(res.Correlation) <= 1) {
			t.Errorf("correlation %g", res.Correlation)
		}
		if broadRel(res.StarkAlphaNM+res.VanDerWaalsAlphaNM, wa) > 1e-9 || broadRel(res.StarkBetaNM+res.VanDerWaalsBetaNM, wb) > 1e-9 {
			t.Errorf("width split does not add up: %+v", res)
		}
	}
}

// TestTwoLineErrors checks the sentinel errors.
func TestTwoLineErrors(t *testing.T) {
	t.Parallel()
	ar := argonAtm(t)
	for name, tc := range map[string]struct {
		in   TwoLineInput
		want error
	}{
		// Hα wider than any (n_e, T_g) allows relative to Hβ: with the Hβ
		// width nearly all van der Waals, Hα cannot be matched.
		"inconsistent widths": {TwoLineInput{AlphaLorentzNM: 0.5, BetaLorentzNM: 0.05, Perturber: ar, PressurePa: 101325}, ErrTwoLineNoSolution},
		"no perturber":        {TwoLineInput{AlphaLorentzNM: 0.08, BetaLorentzNM: 0.24, Perturber: NoPerturber, PressurePa: 101325}, ErrTwoLineNoSolution},
		"zero pressure":       {TwoLineInput{AlphaLorentzNM: 0.08, BetaLorentzNM: 0.24, Perturber: ar}, ErrTwoLineNoSolution},
		"negative width":      {TwoLineInput{AlphaLorentzNM: -0.01, BetaLorentzNM: 0.24, Perturber: ar, PressurePa: 101325}, ErrTwoLineNoSolution},
		"outside T bounds": {TwoLineInput{AlphaLorentzNM: 0.08031, BetaLorentzNM: 0.23808, Perturber: ar, PressurePa: 101325,
			MinGasTempK: 2000, MaxGasTempK: 5000}, ErrTwoLineNoSolution},
	} {
		if _, err := SolveTwoLine(tc.in); !errors.Is(err, tc.want) {
			t.Errorf("%s: error = %v, want %v", name, err, tc.want)
		}
	}
}
