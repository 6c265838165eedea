package diag

import (
	"errors"
	"fmt"
	"math"
)

// ErrTwoLineNoSolution reports that no (n_e, T_g) inside the bounds
// reproduces both Lorentzian widths.
var ErrTwoLineNoSolution = errors.New("diag: two-line method: no (n_e, T_g) within bounds reproduces both widths")

// ErrTwoLineNoConvergence reports that the Newton iteration did not
// converge.
var ErrTwoLineNoConvergence = errors.New("diag: two-line method: Newton iteration did not converge")

// ErrTwoLineAmbiguous reports more than one (n_e, T_g) inside the bounds
// that reproduces both widths.
var ErrTwoLineAmbiguous = errors.New("diag: two-line method: more than one solution within bounds")

// Default bounds of SolveTwoLine.
const (
	twoLineMinNeM3 = 1e17
	twoLineMaxNeM3 = 1e26
	twoLineMinTK   = 50
	twoLineMaxTK   = 1e5
)

// TwoLineInput holds the inputs of SolveTwoLine.
type TwoLineInput struct {
	// AlphaLorentzNM and BetaLorentzNM are the Lorentzian FWHM of Hα and
	// Hβ in nm with everything but the Stark and van der Waals parts
	// already subtracted (Budget.TwoLineLorentzNM).
	AlphaLorentzNM, BetaLorentzNM float64
	// AlphaSigmaNM and BetaSigmaNM are their 1σ uncertainties, nm; 0 means
	// unknown (no uncertainties are returned then).
	AlphaSigmaNM, BetaSigmaNM float64
	// Perturber and PressurePa set the van der Waals widths; the
	// perturber must be polarizable and the pressure positive.
	Perturber  Perturber
	PressurePa float64
	// Isotope is the emitter.
	Isotope Isotope
	// AlphaRelation and BetaRelation are the Stark relations; the zero
	// value selects DefaultStarkRelation(3) and DefaultStarkRelation(4).
	AlphaRelation, BetaRelation StarkRelation
	// MinNeM3, MaxNeM3, MinGasTempK and MaxGasTempK bound the search; 0
	// selects 1e17 m⁻³, 1e26 m⁻³, 50 K and 1e5 K.
	MinNeM3, MaxNeM3, MinGasTempK, MaxGasTempK float64
}

// TwoLineResult is the solution of SolveTwoLine.
type TwoLineResult struct {
	// NeM3 is the electron density, m⁻³, and GasTempK the gas
	// temperature, K.
	NeM3, GasTempK float64
	// SigmaNeM3 and SigmaGasTempK are 1σ uncertainties propagated from
	// the width uncertainties through the Jacobian (0 if none were given);
	// Correlation is the correlation coefficient of ln n_e and ln T_g.
	SigmaNeM3, SigmaGasTempK, Correlation float64
	// StarkAlphaNM, StarkBetaNM, VanDerWaalsAlphaNM and VanDerWaalsBetaNM
	// split the two widths at the solution, nm.
	StarkAlphaNM, StarkBetaNM, VanDerWaalsAlphaNM, VanDerWaalsBetaNM float64
	// AlphaRelationID and BetaRelationID name the Stark relations used.
	AlphaRelationID, BetaRelationID string
	// Iterations is the number of Newton steps taken.
	Iterations int
}

// SolveTwoLine finds the electron density and gas temperature for which
// the Stark and van der Waals widths of Hα and Hβ add up to the given
// Lorentzian widths (physics.md §5.4):
//
//	w_L(Hα) = w_S,α(n_e) + C_α/T_g^0.7
//	w_L(Hβ) = w_S,β(n_e) + C_β/T_g^0.7
//
// with w_S from the Stark relations (StarkRelation.DensityFromLorentzianNM:
// for the Hα FWHA relation the Lorentzian Stark part's FWHA equals its
// FWHM) and the van der Waals widths from VanDerWaalsFWHMNM at the given
// perturber pressure. The two lines differ in the ratio of their Stark and
// van der Waals sensitivities, which makes the system solvable.
//
// The unknowns x = (ln n_e, ln T_g) are found by a 2-D Newton iteration on
// the relative residuals r_i = (w_S,i + w_W,i − w_i)/w_i, with analytic
// Jacobian ∂w_S/∂ln n_e = p·w_S and ∂w_W/∂ln T_g = −0.7·w_W, step
// limiting, backtracking and the bounds of in. The starting point is
// bracketed on a logarithmic temperature grid along the curve that
// satisfies the Hβ equation, which also detects the absence or
// multiplicity of solutions.
//
// With width uncertainties σ_i the covariance of x is J⁻¹ diag(σ²) J⁻ᵀ,
// with J = ∂w/∂x at the solution (first order).
//
// It returns ErrTwoLineNoSolution (wrapped, with a reason) when no point
// inside the bounds fits both widths, ErrTwoLineAmbiguous when more than
// one does, and ErrTwoLineNoConvergence when Newton fails. It panics for
// widths that are NaN or negative σ, and for bounds that are not ordered.
//
// The model is a solver for the stated widths, not physics validation:
// the GGC Stark coefficients are cross-checked, not read in the paper, the
// van der Waals constant is a named convention (physics.md §10 items 7,
// 10, 11) and the Doppler width inside the Gaussian budget depends on the
// assumed T_g, which a caller may need to iterate.
func SolveTwoLine(in TwoLineInput) (TwoLineResult, error) {
	if math.IsNaN(in.AlphaLorentzNM) || math.IsNaN(in.BetaLorentzNM) || !(in.AlphaSigmaNM >= 0) || !(in.BetaSigmaNM >= 0) {
		panic(fmt.Sprintf("diag: SolveTwoLine: bad widths %g ± %g, %g ± %g nm", in.AlphaLorentzNM, in.AlphaSigmaNM, in.BetaLorentzNM, in.BetaSigmaNM))
	}
	neMin, neMax := twoLineBound(in.MinNeM3, twoLineMinNeM3), twoLineBound(in.MaxNeM3, twoLineMaxNeM3)
	tMin, tMax := twoLineBound(in.MinGasTempK, twoLineMinTK), twoLineBound(in.MaxGasTempK, twoLineMaxTK)
	if !(0 < neMin && neMin < neMax) || !(0 < tMin && tMin < tMax) {
		panic(fmt.Sprintf("diag: SolveTwoLine: bounds n_e %g…%g m⁻³, T %g…%g K not ordered", neMin, neMax, tMin, tMax))
	}
	ra, rb := in.AlphaRelation, in.BetaRelation
	var err error
	if ra.ID == "" {
		if ra, err = DefaultStarkRelation(3); err != nil {
			return TwoLineResult{}, err
		}
	}
	if rb.ID == "" {
		if rb, err = DefaultStarkRelation(4); err != nil {
			return TwoLineResult{}, err
		}
	}
	if ra.Upper != 3 || rb.Upper != 4 {
		panic(fmt.Sprintf("diag: SolveTwoLine: relations %q (n=%d) and %q (n=%d) are not for Hα and Hβ", ra.ID, ra.Upper, rb.ID, rb.Upper))
	}
	ha, err := NewTransition(3, 2, in.Isotope)
	if err != nil {
		return TwoLineResult{}, err
	}
	hb, err := NewTransition(4, 2, in.Isotope)
	if err != nil {
		return TwoLineResult{}, err
	}
	wa, wb := in.AlphaLorentzNM, in.BetaLorentzNM
	if !(wa > 0) || !(wb > 0) {
		return TwoLineResult{}, fmt.Errorf("%w: Lorentzian widths must be positive (Hα %g nm, Hβ %g nm)", ErrTwoLineNoSolution, wa, wb)
	}
	if !(in.Perturber.PolarizabilityCM3 > 0) || !(in.PressurePa > 0) {
		return TwoLineResult{}, fmt.Errorf("%w: the method needs van der Waals broadening (perturber %q at %g Pa)", ErrTwoLineNoSolution, in.Perturber.Name, in.PressurePa)
	}

	// Van der Waals widths are exactly C_i·T^(−0.7) at fixed pressure.
	vdw := func(t Transition, T float64) float64 { return VanDerWaalsFWHMNM(t, in.Perturber, in.PressurePa, T) }
	model := func(x [2]float64) (sa, sb, va, vb float64) {
		ne, T := math.Exp(x[0]), math.Exp(x[1])
		return ra.WidthFromDensity(ne), rb.WidthFromDensity(ne), vdw(ha, T), vdw(hb, T)
	}
	resid := func(x [2]float64) [2]float64 {
		sa, sb, va, vb := model(x)
		return [2]float64{(sa + va - wa) / wa, (sb + vb - wb) / wb}
	}

	// Bracket along the Hβ curve: for each T, n_e follows from w_β.
	const nGrid = 400
	lt0, lt1 := math.Log(tMin), math.Log(tMax)
	var (
		brackets [][2]float64 // ln T intervals with a sign change
		prevG    float64
		prevLT   float64
		havePrev bool
	)
	for i := 0; i <= nGrid; i++ {
		lt := lt0 + (lt1-lt0)*float64(i)/nGrid
		T := math.Exp(lt)
		sb := wb - vdw(hb, T)
		if !(sb > 0) {
			havePrev = false
			continue
		}
		ne := rb.DensityFromLorentzianNM(sb)
		if ne < neMin || ne > neMax {
			havePrev = false
			continue
		}
		g := (ra.WidthFromDensity(ne) + vdw(ha, T) - wa) / wa
		if g == 0 {
			brackets = append(brackets, [2]float64{lt, lt})
		} else if havePrev && (g > 0) != (prevG > 0) && prevG != 0 {
			brackets = append(brackets, [2]float64{prevLT, lt})
		}
		prevG, prevLT, havePrev = g, lt, true
	}
	switch {
	case len(brackets) == 0:
		return TwoLineResult{}, fmt.Errorf("%w: Hα %.5g nm and Hβ %.5g nm cannot both be matched for n_e in %.1e–%.1e m⁻³ and T_g in %.0f–%.0f K",
			ErrTwoLineNoSolution, wa, wb, neMin, neMax, tMin, tMax)
	case len(brackets) > 1:
		return TwoLineResult{}, fmt.Errorf("%w: %d solutions", ErrTwoLineAmbiguous, len(brackets))
	}
	ltStart := 0.5 * (brackets[0][0] + brackets[0][1])
	x := [2]float64{math.Log(rb.DensityFromLorentzianNM(wb - vdw(hb, math.Exp(ltStart)))), ltStart}

	lo := [2]float64{math.Log(neMin), lt0}
	hi := [2]float64{math.Log(neMax), lt1}
	clamp := func(x [2]float64) [2]float64 {
		for k := range x {
			x[k] = math.Min(math.Max(x[k], lo[k]), hi[k])
		}
		return x
	}
	norm := func(r [2]float64) float64 { return math.Max(math.Abs(r[0]), math.Abs(r[1])) }

	r := resid(x)
	iter := 0
	converged := false
	for ; iter < 100; iter++ {
		if norm(r) < 1e-14 {
			converged = true
			break
		}
		sa, sb, va, vb := model(x)
		j := [2][2]float64{
			{ra.Exponent * sa / wa, vdWTempExponent * va / wa},
			{rb.Exponent * sb / wb, vdWTempExponent * vb / wb},
		}
		det := j[0][0]*j[1][1] - j[0][1]*j[1][0]
		if det == 0 || math.IsNaN(det) {
			return TwoLineResult{}, fmt.Errorf("%w: singular Jacobian at n_e = %.3e m⁻³, T_g = %.1f K", ErrTwoLineNoConvergence, math.Exp(x[0]), math.Exp(x[1]))
		}
		d := [2]float64{
			-(j[1][1]*r[0] - j[0][1]*r[1]) / det,
			-(-j[1][0]*r[0] + j[0][0]*r[1]) / det,
		}
		// Limit a step to a factor e in n_e or T_g.
		if s := norm(d); s > 1 {
			d[0], d[1] = d[0]/s, d[1]/s
		}
		// Backtrack until the residual decreases.
		step := 1.0
		var xn [2]float64
		var rn [2]float64
		for k := 0; k < 40; k++ {
			xn = clamp([2]float64{x[0] + step*d[0], x[1] + step*d[1]})
			rn = resid(xn)
			if norm(rn) < norm(r) {
				break
			}
			step /= 2
		}
		if norm(rn) >= norm(r) {
			// No descent possible: accept only if already at round-off.
			converged = norm(r) < 1e-10
			break
		}
		dx := math.Max(math.Abs(xn[0]-x[0]), math.Abs(xn[1]-x[1]))
		x, r = xn, rn
		if dx < 1e-13 && norm(r) < 1e-10 {
			converged = true
			iter++
			break
		}
	}
	if !converged {
		return TwoLineResult{}, fmt.Errorf("%w after %d iterations (residual %.2e at n_e = %.3e m⁻³, T_g = %.1f K)",
			ErrTwoLineNoConvergence, iter, norm(r), math.Exp(x[0]), math.Exp(x[1]))
	}
	for k := range x {
		if x[k] <= lo[k] || x[k] >= hi[k] {
			return TwoLineResult{}, fmt.Errorf("%w: the solution lies on the search bound (n_e = %.3e m⁻³, T_g = %.1f K)",
				ErrTwoLineNoSolution, math.Exp(x[0]), math.Exp(x[1]))
		}
	}

	sa, sb, va, vb := model(x)
	res := TwoLineResult{
		NeM3: math.Exp(x[0]), GasTempK: math.Exp(x[1]),
		StarkAlphaNM: sa, StarkBetaNM: sb, VanDerWaalsAlphaNM: va, VanDerWaalsBetaNM: vb,
		AlphaRelationID: ra.ID, BetaRelationID: rb.ID,
		Iterations: iter,
	}
	if in.AlphaSigmaNM > 0 || in.BetaSigmaNM > 0 {
		// Absolute Jacobian J = ∂(w_α, w_β)/∂(ln n_e, ln T_g) and its inverse.
		j := [2][2]float64{
			{ra.Exponent * sa, vdWTempExponent * va},
			{rb.Exponent * sb, vdWTempExponent * vb},
		}
		det := j[0][0]*j[1][1] - j[0][1]*j[1][0]
		inv := [2][2]float64{
			{j[1][1] / det, -j[0][1] / det},
			{-j[1][0] / det, j[0][0] / det},
		}
		s2 := [2]float64{in.AlphaSigmaNM * in.AlphaSigmaNM, in.BetaSigmaNM * in.BetaSigmaNM}
		var cov [2][2]float64
		for a := 0; a < 2; a++ {
			for b := 0; b < 2; b++ {
				for k := 0; k < 2; k++ {
					cov[a][b] += inv[a][k] * s2[k] * inv[b][k]
				}
			}
		}
		res.SigmaNeM3 = res.NeM3 * math.Sqrt(cov[0][0])
		res.SigmaGasTempK = res.GasTempK * math.Sqrt(cov[1][1])
		if cov[0][0] > 0 && cov[1][1] > 0 {
			res.Correlation = cov[0][1] / math.Sqrt(cov[0][0]*cov[1][1])
		}
	}
	return res, nil
}

// twoLineBound returns v, or def when v is 0.
func twoLineBound(v, def float64) float64 {
	if v == 0 {
		return def
	}
	return v
}
