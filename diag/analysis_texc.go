package diag

import (
	"fmt"
	"math"
)

// texcSystematics fills the systematic and total σ of T_exc. Its one
// systematic part is the relative spectral-response calibration: with
// m.ResponseUncRel = ε (relative 1σ of the response ratio between the
// extreme fitted lines) the intensities are tilted by (1 ± ε)^s, s = 0 at
// the shortest and 1 at the longest fitted wavelength (a calibration
// error smooth in λ), the Boltzmann plot is refitted and σ_sys = |T(+ε) −
// T(−ε)|/2. Without ε the result says that the σ excludes calibration.
func texcSystematics(res *Result, pts []BoltzmannPoint, bz BoltzmannResult, m Measurement) {
	stat := 0.0
	if res.ExcitationTemperatureUncStatK != nil {
		stat = *res.ExcitationTemperatureUncStatK
	}
	eps := m.ResponseUncRel
	if !(eps > 0) {
		res.Flags = append(res.Flags, Flag{Code: FlagTexNoCalibrationUnc,
			Message: "no response_unc_rel was given: the σ of the excitation temperature is statistical only and excludes the relative-response calibration"})
		if res.ExcitationTemperatureUncStatK != nil {
			res.ExcitationTemperatureUncSysK = ptr(0)
		}
		return
	}
	lo, hi := math.Inf(1), math.Inf(-1)
	for _, p := range pts {
		if !p.Excluded {
			lo, hi = math.Min(lo, p.WavelengthNM), math.Max(hi, p.WavelengthNM)
		}
	}
	if !(hi > lo) {
		return
	}
	tAt := func(e float64) (float64, bool) {
		q := make([]BoltzmannPoint, len(pts))
		for i, p := range pts {
			f := math.Pow(1+e, (p.WavelengthNM-lo)/(hi-lo))
			p.Intensity *= f
			p.IntensityUnc *= f
			q[i] = p
		}
		b, err := FitBoltzmann(q, BoltzmannOptions{Unit: m.Unit})
		if err != nil || !b.Defined {
			return 0, false
		}
		return b.TemperatureK, true
	}
	tp, ok1 := tAt(eps)
	tm, ok2 := tAt(-math.Min(eps, 0.99))
	var sys float64
	switch {
	case ok1 && ok2:
		sys = math.Abs(tp-tm) / 2
	case ok1:
		sys = math.Abs(tp - bz.TemperatureK)
	case ok2:
		sys = math.Abs(tm - bz.TemperatureK)
	default:
		res.Flags = append(res.Flags, Flag{Code: FlagTexNoCalibrationUnc, Message: fmt.Sprintf(
			"with the response tilted by ±%.3g between the extreme lines the Boltzmann slope is no longer defined: the calibration dominates T_exc", eps)})
		return
	}
	res.ExcitationTemperatureUncSysK = ptr(sys)
	res.ExcitationTemperatureUncK = ptr(math.Hypot(stat, sys))
}
