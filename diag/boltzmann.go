package diag

import (
	"errors"
	"fmt"
	"math"

	"gonum.org/v1/gonum/stat/distuv"
)

// IntensityUnit says whether line intensities are photon rates or powers.
type IntensityUnit int

const (
	// PhotonUnits: intensities proportional to photons s⁻¹ (detector counts
	// after a photon-unit response calibration). The Boltzmann ordinate is
	// ln(I/(gA)).
	PhotonUnits IntensityUnit = iota
	// EnergyUnits: intensities proportional to W (radiance after an
	// energy-unit response calibration). The ordinate is ln(Iλ/(gA)).
	EnergyUnits
)

// String returns "photon" or "energy".
func (u IntensityUnit) String() string {
	if u == EnergyUnits {
		return "energy"
	}
	return "photon"
}

// ParseIntensityUnit accepts "photon" and "energy".
func ParseIntensityUnit(s string) (IntensityUnit, error) {
	switch s {
	case "photon":
		return PhotonUnits, nil
	case "energy":
		return EnergyUnits, nil
	}
	return 0, fmt.Errorf("unknown intensity unit %q (want \"photon\" or \"energy\")", s)
}

// BoltzmannPoint is one line on a Boltzmann plot.
type BoltzmannPoint struct {
	// Upper is the upper principal quantum number (for messages).
	Upper int
	// EnergyEV is the upper-level energy above the ground level, eV.
	EnergyEV float64
	// G is the upper-level statistical weight.
	G float64
	// A is the transition probability, s⁻¹.
	A float64
	// WavelengthNM is the line wavelength, used only in energy units.
	WavelengthNM float64
	// Intensity is the integrated line intensity (> 0), arbitrary but
	// common scale.
	Intensity float64
	// IntensityUnc is its 1σ uncertainty; 0 means not given.
	IntensityUnc float64
	// Excluded keeps the point on the plot but out of the fit.
	Excluded bool
}

// Ordinate returns the Boltzmann-plot ordinate y = ln(I/(gA)) (photon
// units) or ln(Iλ/(gA)) (energy units, λ in nm).
//
// The ratio is formed directly when it is a normal float64 (bit for bit as
// before) and as a sum of logarithms otherwise, so that any positive
// finite intensity — 1.7e308 or the subnormal 5e-324 — gives a finite
// ordinate instead of ln(+Inf) or ln(0).
func (p BoltzmannPoint) Ordinate(u IntensityUnit) float64 {
	v := p.Intensity / (p.G * p.A)
	if u == EnergyUnits {
		v *= p.WavelengthNM
	}
	if v >= minNormal && v <= math.MaxFloat64 {
		return math.Log(v)
	}
	y := logPos(p.Intensity) - math.Log(p.G) - math.Log(p.A)
	if u == EnergyUnits {
		y += math.Log(p.WavelengthNM)
	}
	return y
}

// minNormal is the smallest normal float64, 2⁻¹⁰²².
const minNormal = 0x1p-1022

// logPos is ln x for x > 0, exact for subnormal x too: math.Log's
// assembly version on amd64 reads the exponent bits directly and is off
// by several units for subnormals (ln 1.28e-312 comes out −709.09 instead
// of −718.16), so subnormals are scaled by 2⁵⁴ first.
func logPos(x float64) float64 {
	if x < minNormal {
		return math.Log(x*0x1p54) - 54*math.Ln2
	}
	return math.Log(x)
}

// Bounds on a point's relative intensity uncertainty σ_I/I. Below
// minRelIntensityUnc no intensity measurement is that precise (the best
// absolute radiometry reaches about 1e-4), and the fit weight 1/σ² would
// overflow; above maxRelIntensityUnc the value is a unit mistake, not an
// uncertainty. Common practice, no source: both are far outside any real
// measurement and only keep the arithmetic finite.
const (
	minRelIntensityUnc = 1e-12
	maxRelIntensityUnc = 1e12
)

// Flag is a structured warning: a stable machine code, a plain-language
// message and a severity (problem, caution or note) set from the one
// table in severity.go when the result is finalised.
type Flag struct {
	Code     string   `json:"code"`
	Message  string   `json:"message"`
	Severity Severity `json:"severity"`
}

// Flag codes of the Boltzmann fit.
const (
	FlagTooFewLines      = "boltzmann_too_few_lines"
	FlagSlopeNotNegative = "boltzmann_slope_not_negative"
	FlagLowSensitivity   = "boltzmann_low_sensitivity"
	FlagSelfAbsorption   = "boltzmann_halpha_low"
	FlagPartialLTE       = "boltzmann_level_off_line"
	FlagScaledUnc        = "boltzmann_uncertainty_scaled"
	FlagNoIntensityUnc   = "boltzmann_no_intensity_uncertainty"
	FlagWideUncertainty  = "boltzmann_wide_uncertainty"
	FlagSlopeFlat        = "boltzmann_slope_flat"
)

// BoltzmannResult is the outcome of a weighted straight-line fit of a
// Boltzmann plot.
type BoltzmannResult struct {
	// N is the number of points in the fit.
	N int `json:"lines_fitted"`
	// Slope is dy/dE in eV⁻¹, SlopeUnc its reported 1σ.
	Slope    float64 `json:"slope_per_eV"`
	SlopeUnc float64 `json:"slope_unc_per_eV"`
	// Intercept is y at E = 0 and InterceptUnc its reported 1σ.
	Intercept    float64 `json:"intercept"`
	InterceptUnc float64 `json:"intercept_unc"`
	// Correlation is the correlation coefficient of slope and intercept.
	Correlation float64 `json:"slope_intercept_correlation"`
	// Defined is false when no temperature follows (fewer than two points,
	// or slope ≥ 0).
	Defined bool `json:"temperature_defined"`
	// TemperatureK is the excitation temperature −1/(k_B·slope).
	TemperatureK float64 `json:"excitation_temperature_K"`
	// TemperatureUncK is the reported 1σ: from the covariance, or the
	// χ²-scaled value when intensity uncertainties are missing or
	// understated (UncBasis says which).
	TemperatureUncK float64 `json:"excitation_temperature_unc_K"`
	// TemperatureUncCovK is the 1σ from the stated intensity
	// uncertainties alone (0 when they were not given).
	TemperatureUncCovK float64 `json:"excitation_temperature_unc_cov_K"`
	// TemperatureUncScaledK is the 1σ scaled by √(χ²/(N−2)) (0 when N ≤ 2).
	TemperatureUncScaledK float64 `json:"excitation_temperature_unc_scaled_K"`
	// UncBasis is "covariance", "chi2-scaled" or "none".
	UncBasis string `json:"uncertainty_basis"`
	// Chi2 is Σ w (y − ŷ)² (with unit weights when no σ was given) and
	// ReducedChi2 = Chi2/(N−2) (0 when N ≤ 2).
	Chi2        float64 `json:"chi2"`
	ReducedChi2 float64 `json:"reduced_chi2"`
	// R2 is the weighted coefficient of determination.
	R2 float64 `json:"r2"`
	// EnergySpreadEV is the spread of upper-level energies in the fit.
	EnergySpreadEV float64 `json:"energy_spread_eV"`
	// Points repeats the input with ordinate, σ of the ordinate, fitted
	// value and residual, in input order.
	Points []BoltzmannPlotPoint `json:"points"`
	// Flags are structured warnings.
	Flags []Flag `json:"flags"`
}

// BoltzmannPlotPoint is one point of the plot with its fit residual.
type BoltzmannPlotPoint struct {
	Upper    int     `json:"upper_level"`
	EnergyEV float64 `json:"energy_eV"`
	Y        float64 `json:"y"`
	YUnc     float64 `json:"y_unc"`
	Fitted   float64 `json:"y_fit"`
	Residual float64 `json:"residual"`
	// NormResidual is Residual/YUnc (0 when YUnc is unknown).
	NormResidual float64 `json:"normalized_residual"`
	Excluded     bool    `json:"excluded"`
}

// ErrBadPoint reports an impossible Boltzmann point.
var ErrBadPoint = errors.New("diag: Boltzmann point needs positive finite intensity, g, A and wavelength")

// BoltzmannOptions tunes FitBoltzmann.
type BoltzmannOptions struct {
	// Unit selects the ordinate.
	Unit IntensityUnit
	// ARelUnc is the relative 1σ of the A values, added in quadrature to the
	// intensity uncertainty. 0 is appropriate for the computed hydrogen
	// values (exact nonrelativistic theory, within 3e-5 of NIST).
	ARelUnc float64
}

// understatedQuantile is the χ² probability above which the intensity
// uncertainties are judged understated and the σ is scaled: the fit's χ²
// exceeds its 95 % quantile. Common practice, no source.
const understatedQuantile = 0.95

// FitBoltzmann fits y = ln(I/(gA)) [or ln(Iλ/(gA))] = −E/(k_B T) + c by
// weighted least squares with w_i = 1/σ_yi², σ_yi² = (σ_Ii/I_i)² + σ_A²:
//
//	S = Σw, Sx = Σwx, Sxx = Σwx², Sy = Σwy, Sxy = Σwxy, Δ = S·Sxx − Sx²
//	m = (S·Sxy − Sx·Sy)/Δ,  σ_m = √(S/Δ)
//	T = −1/(k_B m),          σ_T = k_B T² σ_m
//
// (Bevington & Robinson 2003, Data Reduction and Error Analysis for the
// Physical Sciences, 3rd ed., §6.4). When no point has an uncertainty, unit
// weights are used and σ comes only from the scatter, σ_m·√(χ²/(N−2)).
// When uncertainties are given but χ² exceeds its 95 % quantile for N−2
// degrees of freedom, the scaled σ is reported instead and flagged.
// Two points give the classical two-line ratio temperature.
//
// Points with non-positive or non-finite values return ErrBadPoint; all
// points either have uncertainties or none do (a mix is treated as
// missing for the points without, which are then given the mean relative
// uncertainty of the others).
func FitBoltzmann(pts []BoltzmannPoint, opt BoltzmannOptions) (BoltzmannResult, error) {
	res := BoltzmannResult{UncBasis: "none", Points: make([]BoltzmannPlotPoint, len(pts))}
	var relSum float64
	var nRel int
	for _, p := range pts {
		if !(p.Intensity > 0) || !(p.G > 0) || !(p.A > 0) || math.IsInf(p.Intensity, 0) ||
			(opt.Unit == EnergyUnits && !(p.WavelengthNM > 0)) || p.IntensityUnc < 0 || math.IsNaN(p.IntensityUnc) {
			return res, fmt.Errorf("%w (line n=%d)", ErrBadPoint, p.Upper)
		}
		if p.IntensityUnc > 0 {
			rel := p.IntensityUnc / p.Intensity
			if !(rel >= minRelIntensityUnc && rel <= maxRelIntensityUnc) {
				return res, relUncError(p, rel)
			}
			relSum += rel
			nRel++
		}
	}
	haveUnc := nRel > 0
	meanRel := 0.0
	if haveUnc {
		meanRel = relSum / float64(nRel)
	}
	x := make([]float64, 0, len(pts))
	y := make([]float64, 0, len(pts))
	w := make([]float64, 0, len(pts))
	for i, p := range pts {
		pp := &res.Points[i]
		pp.Upper, pp.EnergyEV, pp.Excluded = p.Upper, p.EnergyEV, p.Excluded
		pp.Y = p.Ordinate(opt.Unit)
		rel := meanRel
		if p.IntensityUnc > 0 {
			rel = p.IntensityUnc / p.Intensity
		}
		pp.YUnc = math.Hypot(rel, opt.ARelUnc)
		if p.Excluded {
			continue
		}
		x = append(x, p.EnergyEV)
		y = append(y, pp.Y)
		if haveUnc && pp.YUnc > 0 {
			w = append(w, 1/(pp.YUnc*pp.YUnc))
		} else {
			w = append(w, 1)
		}
	}
	res.N = len(x)
	if res.N > 0 {
		lo, hi := x[0], x[0]
		for _, v := range x {
			lo, hi = math.Min(lo, v), math.Max(hi, v)
		}
		res.EnergySpreadEV = hi - lo
	}
	if res.N < 2 || res.EnergySpreadEV == 0 {
		res.Flags = append(res.Flags, Flag{Code: FlagTooFewLines, Message: fmt.Sprintf("only %d line(s) with distinct upper levels in the Boltzmann plot: at least two are needed, so no excitation temperature is given", res.N)})
		return res, nil
	}
	line := fitLine(x, y, w)
	res.Slope, res.Intercept = line.m, line.c
	res.Chi2 = line.chi2
	dof := res.N - 2
	sigM, sigC := line.sigM, line.sigC
	scale := 1.0
	switch {
	case !haveUnc && dof > 0:
		scale = math.Sqrt(line.chi2 / float64(dof))
		res.UncBasis = "chi2-scaled"
		res.Flags = append(res.Flags, Flag{Code: FlagNoIntensityUnc, Message: "no intensity uncertainties were given: the temperature uncertainty is estimated from the scatter of the points about the line"})
	case !haveUnc:
		res.UncBasis = "none"
		res.Flags = append(res.Flags, Flag{Code: FlagNoIntensityUnc, Message: "no intensity uncertainties were given and two points leave no scatter to estimate one: the temperature has no uncertainty"})
	default:
		res.UncBasis = "covariance"
	}
	if dof > 0 {
		res.ReducedChi2 = line.chi2 / float64(dof)
		if haveUnc {
			limit := distuv.ChiSquared{K: float64(dof)}.Quantile(understatedQuantile)
			if line.chi2 > limit {
				scale = math.Sqrt(res.ReducedChi2)
				res.UncBasis = "chi2-scaled"
				res.Flags = append(res.Flags, Flag{Code: FlagScaledUnc, Message: fmt.Sprintf(
					"the points scatter more than their stated uncertainties allow (reduced χ² = %.2g with %d degrees of freedom): the uncertainty is scaled by √χ²ᵣ = %.2g", res.ReducedChi2, dof, scale)})
			}
		}
	}
	res.SlopeUnc, res.InterceptUnc = sigM*scale, sigC*scale
	if res.UncBasis == "none" {
		res.SlopeUnc, res.InterceptUnc = 0, 0
	}
	res.Correlation = line.corr
	res.R2 = line.r2
	for i := range res.Points {
		pp := &res.Points[i]
		pp.Fitted = line.c + line.m*pp.EnergyEV
		pp.Residual = pp.Y - pp.Fitted
		if haveUnc && pp.YUnc > 0 {
			pp.NormResidual = pp.Residual / pp.YUnc
		}
	}
	if res.Slope >= 0 {
		res.Flags = append(res.Flags, Flag{Code: FlagSlopeNotNegative, Message: fmt.Sprintf(
			"the Boltzmann slope is %+.3g eV⁻¹ (not negative): the upper levels are not Boltzmann-distributed and no excitation temperature is given", res.Slope)})
		return res, nil
	}
	t := -1 / (BoltzmannEVPerK * res.Slope)
	kT2 := BoltzmannEVPerK * t * t
	var uncK, covK, scaledK float64
	uncK = kT2 * res.SlopeUnc
	if haveUnc {
		covK = kT2 * sigM
	}
	if dof > 0 {
		scaledK = kT2 * sigM * math.Sqrt(res.ReducedChi2)
		if !haveUnc {
			scaledK = kT2 * sigM * scale
		}
	}
	if !finite(t) || !finite(uncK) || !finite(covK) || !finite(scaledK) {
		// A slope this close to zero is a flat plot: the temperature (or
		// its uncertainty) is beyond any float, and beyond physics.
		res.Flags = append(res.Flags, Flag{Code: FlagSlopeFlat, Message: fmt.Sprintf(
			"the Boltzmann slope is %.3g ± %.3g eV⁻¹, indistinguishable from a flat plot: the excitation temperature is unbounded and none is given", res.Slope, res.SlopeUnc)})
		return res, nil
	}
	res.Defined = true
	res.TemperatureK, res.TemperatureUncK, res.TemperatureUncCovK, res.TemperatureUncScaledK = t, uncK, covK, scaledK
	res.Flags = append(res.Flags, sensitivityFlags(res)...)
	res.Flags = append(res.Flags, offLineFlags(pts, res, opt, haveUnc)...)
	return res, nil
}

// sensitivityFlags warns about a small energy spread and wide uncertainties.
func sensitivityFlags(res BoltzmannResult) []Flag {
	var out []Flag
	kT := BoltzmannEVPerK * res.TemperatureK
	// δT/T ≈ (k_BT/ΔE)·δ(ln I) for an error δ(ln I) between the extreme
	// lines (physics.md §2, pitfall 1).
	if ratio := res.EnergySpreadEV / kT; ratio < 3 {
		dT := res.TemperatureK * kT / res.EnergySpreadEV * 0.10
		out = append(out, Flag{Code: FlagLowSensitivity, Message: fmt.Sprintf(
			"the upper levels span only ΔE = %.3g eV = %.2g k_BT: a 10 %% relative intensity error between the extreme lines (e.g. a calibration tilt) moves the excitation temperature by about %s K", res.EnergySpreadEV, ratio, sci(dT, 2))})
	}
	if f, ok := WideUncertaintyFlag(res.TemperatureK, res.TemperatureUncK); ok {
		out = append(out, f)
	}
	return out
}

// WideUncertaintyFlag returns FlagWideUncertainty for an excitation
// temperature tK whose 1σ uncK is more than 20 % of it (ok false
// otherwise): the Boltzmann plot's, or the whole-spectrum fit's total.
func WideUncertaintyFlag(tK, uncK float64) (Flag, bool) {
	if !(uncK > 0.2*tK) {
		return Flag{}, false
	}
	return Flag{Code: FlagWideUncertainty, Message: fmt.Sprintf(
		"the excitation temperature is uncertain by more than 20 %% (%s ± %s K): quote at most two significant figures", sci(tK, 2), sci(uncK, 2))}, true
}

// offLineFlags tests Hα (n = 3) and Hβ (n = 4) against the line through
// the other points (leave-one-out): Hα below it suggests self-absorption,
// and n = 3 or 4 off it in either direction suggests the levels are not in
// partial LTE with the higher ones. A point is "off" when it deviates by
// more than offLineSigmas combined standard deviations.
func offLineFlags(pts []BoltzmannPoint, full BoltzmannResult, opt BoltzmannOptions, haveUnc bool) []Flag {
	var out []Flag
	for _, target := range []int{3, 4} {
		idx := -1
		for i, p := range full.Points {
			if p.Upper == target && !p.Excluded {
				idx = i
			}
		}
		if idx < 0 {
			continue
		}
		var x, y, w []float64
		for i, p := range full.Points {
			if i == idx || p.Excluded {
				continue
			}
			x = append(x, p.EnergyEV)
			y = append(y, p.Y)
			if haveUnc && p.YUnc > 0 {
				w = append(w, 1/(p.YUnc*p.YUnc))
			} else {
				w = append(w, 1)
			}
		}
		if len(x) < 2 {
			continue
		}
		l := fitLine(x, y, w)
		if math.IsNaN(l.m) {
			continue
		}
		e := full.Points[idx].EnergyEV
		pred := l.c + l.m*e
		// Variance of the prediction from the covariance of (c, m).
		varPred := l.sigC*l.sigC + e*e*l.sigM*l.sigM + 2*e*l.corr*l.sigC*l.sigM
		sy := full.Points[idx].YUnc
		if !haveUnc {
			if len(x) < 3 {
				continue // no scale to judge "off the line"
			}
			s2 := l.chi2 / float64(len(x)-2)
			varPred *= s2
			sy = math.Sqrt(s2)
		}
		if haveUnc && len(x) > 2 {
			// Scatter of the other points beyond their stated σ widens
			// the test the same way it widens the fit's uncertainty.
			if s2 := l.chi2 / float64(len(x)-2); s2 > 1 {
				varPred *= s2
				sy *= math.Sqrt(s2)
			}
		}
		sigma := math.Sqrt(varPred + sy*sy)
		dev := full.Points[idx].Y - pred
		if sigma == 0 || math.Abs(dev) <= offLineSigmas*sigma {
			continue
		}
		name := map[int]string{3: "Hα", 4: "Hβ"}[target]
		pct := (math.Exp(dev) - 1) * 100
		if target == 3 && dev < 0 {
			out = append(out, Flag{Code: FlagSelfAbsorption, Message: fmt.Sprintf(
				"%s lies %s %% below the line through the other points (%.1fσ): suspect self-absorption of %s (n = 2 is strongly populated in many discharges), or n = 3 out of partial LTE; consider excluding it", name, sci(-pct, 2), -dev/sigma, name)})
			continue
		}
		out = append(out, Flag{Code: FlagPartialLTE, Message: fmt.Sprintf(
			"the n = %d point (%s) lies %s %% %s the line through the other points (%.1fσ): level n = %d may be over- or under-populated relative to the higher levels (not in partial LTE); consider excluding it", target, name, sci(math.Abs(pct), 2), aboveBelow(dev), math.Abs(dev)/sigma, target)})
	}
	return out
}

// offLineSigmas is the deviation, in combined standard deviations, beyond
// which a point counts as off the line. Common practice, no source.
const offLineSigmas = 2.5

type lineFit struct {
	m, c, sigM, sigC, corr, chi2, r2 float64
}

// fitLine is the closed-form weighted least-squares straight line
// (Bevington & Robinson 2003, eqs. 6.12 and 6.21).
func fitLine(x, y, w []float64) lineFit {
	if len(x) != len(y) || len(x) != len(w) {
		panic("diag: fitLine slice length mismatch")
	}
	var s, sx, sxx, sy, sxy float64
	for i := range x {
		s += w[i]
		sx += w[i] * x[i]
		sxx += w[i] * x[i] * x[i]
		sy += w[i] * y[i]
		sxy += w[i] * x[i] * y[i]
	}
	// Centre x for numerical stability: Δ = S·Sxx − Sx² = S·Σw(x−x̄)².
	xm := sx / s
	var sdd, sdy float64
	for i := range x {
		d := x[i] - xm
		sdd += w[i] * d * d
		sdy += w[i] * d * y[i]
	}
	var f lineFit
	f.m = sdy / sdd
	f.c = (sy - f.m*sx) / s
	delta := s * sdd
	f.sigM = math.Sqrt(s / delta)
	f.sigC = math.Sqrt(sxx / delta)
	f.corr = -sx / math.Sqrt(s*sxx)
	ym := sy / s
	var ssr, sst float64
	for i := range x {
		r := y[i] - (f.c + f.m*x[i])
		ssr += w[i] * r * r
		sst += w[i] * (y[i] - ym) * (y[i] - ym)
	}
	f.chi2 = ssr
	if sst > 0 {
		f.r2 = 1 - ssr/sst
	} else {
		f.r2 = 1
	}
	return f
}

// relUncError is the error for a point whose relative intensity
// uncertainty is outside [minRelIntensityUnc, maxRelIntensityUnc].
func relUncError(p BoltzmannPoint, rel float64) error {
	what := fmt.Sprintf("that is %.3g of the intensity %v; a relative 1σ below %.0e is beyond the precision of any intensity measurement (and overflows the fit weights): give a realistic uncertainty or leave it out",
		rel, p.Intensity, minRelIntensityUnc)
	if !(rel < maxRelIntensityUnc) {
		what = fmt.Sprintf("that is %.3g times the intensity %v (limit %.0e): check that both are in the same unit",
			rel, p.Intensity, maxRelIntensityUnc)
	}
	return &NumericError{Upper: p.Upper, Field: "intensity_unc", Value: p.IntensityUnc, Msg: what}
}

func aboveBelow(dev float64) string {
	if dev > 0 {
		return "above"
	}
	return "below"
}
