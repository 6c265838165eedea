package spectrum

import (
	"errors"
	"fmt"
	"math"

	"glowlog/diag"
	"glowlog/diag/linefit"
)

// PixelWidth returns the local pixel spacing of an ascending axis at
// index i: half the distance between the neighbours (one-sided at the
// ends). Counts per pixel divided by it are counts per unit of the axis.
func PixelWidth(x []float64, i int) float64 { return pixelWidth(x, i) }

func pixelWidth(x []float64, i int) float64 {
	n := len(x)
	switch {
	case i <= 0:
		return x[1] - x[0]
	case i >= n-1:
		return x[n-1] - x[n-2]
	}
	return (x[i+1] - x[i-1]) / 2
}

// index returns the first index with x[i] ≥ v (len(x) if none, as for a
// NaN v): sort.SearchFloat64s(x, v), by the same bisection without its
// call per step.
func index(x []float64, v float64) int {
	lo, hi := 0, len(x)
	for lo < hi {
		h := int(uint(lo+hi) >> 1)
		if !(x[h] >= v) {
			lo = h + 1
		} else {
			hi = h
		}
	}
	return lo
}

// candidates finds the Balmer members inside the range, estimates their
// peak, width and fit window, and marks those below the noise or touching
// the detector ceiling.
func (p *Pipeline) candidates(x, y []float64, sat []bool, noise float64, sp *Spectrum, opt Options) ([]balmerCandidate, error) {
	n := len(x)
	cond := opt.Conditions
	var out []balmerCandidate
	p.setBoxSums(y)
	for up := 3; up <= opt.MaxUpper; up++ {
		t, err := diag.Balmer(up, cond.Isotope)
		if err != nil {
			return nil, err
		}
		center := t.WavelengthAirNM
		ic := index(x, center)
		if ic < 3 || ic > n-4 {
			continue
		}
		c := balmerCandidate{t: t, center: center}
		c.search = LineSearch{UpperLevel: up, Name: t.Name(), ExpectedNM: center}
		c.instG, c.instL = cond.InstrumentGaussFWHMNM, cond.InstrumentLorentzFWHMNM
		if opt.Instrument != nil {
			c.instG, c.instL, _ = opt.Instrument.At(center)
		}
		px := pixelWidth(x, ic)
		switch {
		case c.instG > 0 && cond.GasTemperatureK > 0 && !cond.SolveGasTemperature:
			mass := diag.EmitterMassAMU(cond.Isotope)
			c.gauss = math.Hypot(c.instG, diag.DopplerFWHMNM(center, cond.GasTemperatureK, mass))
			c.gaussFix = true
		case c.instG > 0:
			c.gauss = c.instG
		default:
			c.gauss = 2 * px
		}
		// Peak near the expected centre, over a local low-percentile baseline.
		core := math.Max(3*c.gauss, 4*px)
		lo, hi := index(x, center-core), index(x, center+core)
		ip := lo
		for i := lo; i < hi && i < n; i++ {
			if y[i] > y[ip] {
				ip = i
			}
		}
		// The baseline is a straight line through the low percentiles of
		// the two outer halves of ±reach around the line (a flat low
		// percentile of the whole region lies below the continuum under
		// the line when the continuum slopes — in raw counts it follows
		// the spectrometer's response — and a weak member, or none, then
		// looks like a line whose half maximum is never reached); a line
		// much wider than that region gets a wider one (reach.go).
		reach := math.Max(math.Max(15*c.gauss, 40*px), 3)
		bl := p.baseline(x, y, center, reach)
		if wide := p.wideLine(x, y, ip, center, reach, px, balmerSpacing(up, cond.Isotope, center)); wide.grown {
			bl = wide
		}
		base := bl.at(x[ip])
		c.peak = y[ip] - base
		s := noise
		if opt.GainElectronsPerCount > 0 {
			s = p.s[ip]
		}
		c.search.PeakSNR = c.peak / s
		if !(c.search.PeakSNR >= opt.MinSNR) {
			c.search.Status = "not-detected"
			c.search.Reason = fmt.Sprintf("peak %.3g is %.1f× the noise, below the detection threshold %.0f×", c.peak, c.search.PeakSNR, opt.MinSNR)
			out = append(out, c)
			continue
		}
		// Rough FWHM: walk out to half maximum.
		l, r := halfMaxEdges(x, y, ip, bl, c.peak/2)
		c.width = math.Max(x[r]-x[l], c.gauss)
		if bl.grown {
			// A wide line: its FWHM from the smoothed data (single noisy
			// pixels would end the walk early).
			c.width = math.Max(bl.fwhm, c.gauss)
		}
		// Parabolic refinement of the peak position.
		c.peakX = x[ip]
		if ip > 0 && ip < n-1 {
			a, b, d := y[ip-1], y[ip], y[ip+1]
			if den := a - 2*b + d; den < 0 {
				c.peakX += 0.5 * (a - d) / den * (x[ip+1] - x[ip-1]) / 2
			}
		}
		c.base = bl.at(center)
		for i := l; i <= r; i++ {
			if sat[i] {
				c.sat = true
			}
		}
		if c.sat {
			c.search.Status = "saturated"
			c.search.Reason = "the line core reaches the detector ceiling"
		}
		p.setWindow(&c, x)
		out = append(out, c)
	}
	groupCandidates(out)
	return out, nil
}

// setWindow sets the fit window of c: ±5 of its FWHM estimate (at least
// ±12 pixels), cut to the pipeline's window size.
func (p *Pipeline) setWindow(c *balmerCandidate, x []float64) {
	n := len(x)
	px := pixelWidth(x, min(max(index(x, c.center), 0), n-1))
	hw := math.Max(5*c.width, 12*px)
	c.lo, c.hi = index(x, c.center-hw), min(index(x, c.center+hw), n)
	if c.hi-c.lo > p.maxPix {
		mid := (c.lo + c.hi) / 2
		c.lo, c.hi = mid-p.maxPix/2, mid+p.maxPix/2
	}
}

// groupCandidates groups the detected lines whose windows overlap (they
// are fitted jointly).
func groupCandidates(out []balmerCandidate) {
	g := 0
	prev := -1
	for i := range out {
		c := &out[i]
		if c.search.Status == "not-detected" {
			c.group = -1
			continue
		}
		if prev >= 0 && overlaps(out[prev], *c) {
			c.group = out[prev].group
		} else {
			g++
			c.group = g
		}
		prev = i
	}
}

// windowGrowth is how much wider than the FWHM estimate its window was set
// for a fitted FWHM must be for the window to be set again and the lines
// refitted: at 1.2 the window still spans ±4.2 fitted FWHM. Common
// practice, no source.
const windowGrowth = 1.2

// growWindows widens the window of every fitted line whose fitted FWHM
// exceeds the estimate its window was made for by more than windowGrowth
// (a wide weak line on a noisy or sloping continuum is underestimated by
// the search; in a window of a few FWHM its wings and the baseline trade
// off, and the fit returns a narrow line with a wrong area). It reports
// whether any window changed; the candidates are then reset and regrouped
// for a new fit.
func (p *Pipeline) growWindows(cands []balmerCandidate, x []float64) bool {
	changed := false
	for i := range cands {
		c := &cands[i]
		if c.fit == nil || !(c.fit.VoigtFWHM > windowGrowth*c.width) {
			continue
		}
		lo, hi := c.lo, c.hi
		c.width = c.fit.VoigtFWHM
		p.setWindow(c, x)
		changed = changed || c.lo != lo || c.hi != hi
	}
	if !changed {
		return false
	}
	for i := range cands {
		c := &cands[i]
		c.fit = nil
		if c.group > 0 && c.search.Status != "saturated" {
			c.search.Status, c.search.Reason = "", ""
		}
	}
	groupCandidates(cands)
	p.chi2, p.keep, p.iters = p.chi2[:0], nil, p.iters[:0]
	return true
}

// halfMaxEdges walks out from the peak index ip to the first pixels at or
// below half over the baseline bl on either side.
func halfMaxEdges(x, y []float64, ip int, bl wideFit, half float64) (l, r int) {
	n := len(y)
	l, r = ip, ip
	for l > 0 && y[l]-bl.at(x[l]) > half {
		l--
	}
	for r < n-1 && y[r]-bl.at(x[r]) > half {
		r++
	}
	return l, r
}

func overlaps(a, b balmerCandidate) bool { return a.lo < b.hi && b.lo < a.hi }

// percentile returns the q-quantile of v (copied into work).
func percentile(v []float64, q float64, work []float64) float64 {
	w := append(work[:0], v...)
	k := 0
	for _, x := range w {
		if !math.IsNaN(x) {
			w[k] = x
			k++
		}
	}
	w = w[:k]
	if len(w) == 0 {
		return 0
	}
	return selectK(w, int(q*float64(len(w)-1)))
}

// windowStopDrop is the window fits' early stop (linefit.Problem.StopDrop):
// a last step predicted to lower χ² by less than 1e-6 of the reduced χ²
// (no parameter moves by more than ≈ 0.001σ) is not taken.
// TestWindowEarlyStop pins the results against iterating on.
var windowStopDrop = 1e-6

// fitAll fits every group of detected lines and returns the weighted mean
// wavelength offset (fitted − expected) and its 1σ.
func (p *Pipeline) fitAll(cands []balmerCandidate, x, y, sig []float64, opt Options, noise float64) (float64, float64, error) {
	groups := map[int][]int{}
	var order []int
	for i, c := range cands {
		if c.group <= 0 {
			continue
		}
		if _, ok := groups[c.group]; !ok {
			order = append(order, c.group)
		}
		groups[c.group] = append(groups[c.group], i)
	}
	var sw, swx float64
	for _, g := range order {
		idx := groups[g]
		lo, hi := cands[idx[0]].lo, cands[idx[0]].hi
		for _, i := range idx {
			lo, hi = min(lo, cands[i].lo), max(hi, cands[i].hi)
		}
		if hi-lo > p.maxPix {
			hi = lo + p.maxPix
		}
		// Window data without saturated or uncalibrated pixels.
		wx, wy, ws := p.problem.X[:0], p.problem.Y[:0], p.problem.Sigma[:0]
		for i := lo; i < hi; i++ {
			if p.sat[i] || math.IsNaN(y[i]) {
				continue
			}
			wx, wy, ws = append(wx, x[i]), append(wy, y[i]), append(ws, sig[i])
		}
		lines := p.lineBuf[:0]
		var fitted []int
		for _, i := range idx {
			c := &cands[i]
			if c.search.Status == "saturated" {
				continue
			}
			lor := 0.3 * c.width
			if c.width > c.gauss {
				if l, err := diag.LorentzFromVoigt(c.width, c.gauss); err == nil && l > 0 {
					lor = l
				}
			}
			// Start values: the refined peak position (when near the
			// expected centre) and the Voigt area peak·FWHM·k, with k from
			// 1.064 (Gaussian) to 1.571 (Lorentzian) by the width ratio.
			start := c.center
			if math.Abs(c.peakX-c.center) < c.width {
				start = c.peakX
			}
			fl := math.Min(1, lor/c.width)
			lines = append(lines, linefit.Line{Center: start, Area: c.peak * c.width * (1.064 + 0.507*fl),
				GaussFWHM: c.gauss, LorentzFWHM: lor, FixGauss: c.gaussFix})
			fitted = append(fitted, i)
			if len(lines) == maxWindowLines {
				break
			}
		}
		p.problem.X, p.problem.Y, p.problem.Sigma = wx, wy, ws
		if len(lines) == 0 {
			continue
		}
		// Fit in normalised units: the fit is invariant under a common
		// scale of data, σ and areas, but its sums of squares overflow or
		// underflow for values beyond about 1e±150 (spectra in W or in
		// photons per second). Scaling by a power of two is exact, and it
		// is 1 for windows whose values are already in range.
		scaleExp := windowScaleExp(wy)
		if scaleExp != 0 {
			for i := range wy {
				wy[i] = math.Ldexp(wy[i], -scaleExp)
				ws[i] = math.Ldexp(ws[i], -scaleExp)
			}
			for k := range lines {
				lines[k].Area = math.Ldexp(lines[k].Area, -scaleExp)
			}
		}
		if !validSigma(ws) {
			for _, i := range fitted {
				cands[i].search.Status = "fit-failed"
				cands[i].search.Reason = "the pixel uncertainties in this window are zero or beyond the range of the fit (check the noise model and the data's scale)"
			}
			continue
		}
		// Without a noise model the σ are the robust noise estimate and the
		// parameter errors are scaled by the residuals.
		prob := linefit.Problem{X: wx, Y: wy, Sigma: ws, Lines: lines, BaselineOrder: 1,
			SigmaAbsolute: opt.GainElectronsPerCount > 0, StopDrop: windowStopDrop}
		err := p.fitter.Fit(&p.fres, &prob)
		if err != nil && !errors.Is(err, linefit.ErrMaxIterations) {
			for _, i := range fitted {
				cands[i].search.Status = "fit-failed"
				cands[i].search.Reason = err.Error()
			}
			continue
		}
		// With a noise model, honour a poor fit by scaling the errors.
		scale := 1.0
		if prob.SigmaAbsolute && p.fres.DOF > 0 && p.fres.RedChi2 > 1+3*math.Sqrt(2/float64(p.fres.DOF)) {
			scale = math.Sqrt(p.fres.RedChi2)
		}
		for k, i := range fitted {
			lr := p.fres.Lines[k]
			if scaleExp != 0 {
				lr.Area, lr.AreaErr = math.Ldexp(lr.Area, scaleExp), math.Ldexp(lr.AreaErr, scaleExp)
				lr.Peak, lr.PeakErr = math.Ldexp(lr.Peak, scaleExp), math.Ldexp(lr.PeakErr, scaleExp)
			}
			lr.CenterErr *= scale
			lr.AreaErr *= scale
			lr.GaussFWHMErr *= scale
			lr.LorentzFWHMErr *= scale
			lr.VoigtFWHMErr *= scale
			lr.PeakErr *= scale
			c := &cands[i]
			if !finiteF(lr.Area) || math.IsInf(lr.AreaErr, 0) {
				c.search.Status = "fit-failed"
				c.search.Reason = "the fitted area is not a finite number: the window's values are beyond the range of the fit"
				continue
			}
			if !(lr.Area > 0) || lr.Area < 3*lr.AreaErr || math.IsNaN(lr.AreaErr) {
				c.search.Status = "not-detected"
				c.search.Reason = fmt.Sprintf("the fitted area %.3g ± %.2g is not significant (< 3σ)", lr.Area, lr.AreaErr)
				continue
			}
			c.search.Status = "fitted"
			c.fit = &lr
			if lr.CenterErr > 0 {
				w := 1 / (lr.CenterErr * lr.CenterErr)
				sw += w
				swx += w * (lr.Center - c.center)
			}
		}
		p.chi2 = append(p.chi2, groupChi2{g, p.fres.RedChi2})
		p.iters = append(p.iters, p.fres.Iterations)
		if opt.KeepWindows {
			win := Window{WavelengthNM: append([]float64(nil), wx...), Data: append([]float64(nil), wy...),
				Residual: append([]float64(nil), p.fres.Residuals...)}
			win.Model = make([]float64, len(wy))
			for i := range wy {
				win.Model[i] = wy[i] - win.Residual[i]
			}
			if scaleExp != 0 {
				for i := range wy {
					win.Data[i] = math.Ldexp(win.Data[i], scaleExp)
					win.Model[i] = math.Ldexp(win.Model[i], scaleExp)
					win.Residual[i] = math.Ldexp(win.Residual[i], scaleExp)
				}
			}
			for _, i := range fitted {
				win.Uppers = append(win.Uppers, cands[i].t.Upper)
			}
			p.keep = append(p.keep, win)
		}
	}
	if sw == 0 {
		return 0, 0, nil
	}
	return swx / sw, 1 / math.Sqrt(sw), nil
}

func finiteF(v float64) bool { return !math.IsNaN(v) && !math.IsInf(v, 0) }

// validSigma reports whether every σ is positive and finite, as the fit
// requires.
func validSigma(ws []float64) bool {
	for _, s := range ws {
		if !(s > 0 && s <= math.MaxFloat64) {
			return false
		}
	}
	return true
}

// windowScaleExp returns k such that the window's values divided by 2^k
// have their largest magnitude near 1, or 0 when that magnitude already
// lies within 2^±100 (the fit is then done on the values as they are).
func windowScaleExp(wy []float64) int {
	var m float64
	for _, v := range wy {
		if a := math.Abs(v); a > m && a <= math.MaxFloat64 {
			m = a
		}
	}
	if m == 0 {
		return 0
	}
	_, e := math.Frexp(m)
	if e >= -100 && e <= 100 {
		return 0
	}
	return e
}

type groupChi2 struct {
	group int
	red   float64
}

func (p *Pipeline) groupChi2(_ []balmerCandidate, g int) float64 {
	for i := len(p.chi2) - 1; i >= 0; i-- {
		if p.chi2[i].group == g {
			return p.chi2[i].red
		}
	}
	return math.NaN()
}

func (p *Pipeline) windows(_ []balmerCandidate, _, _ []float64) []Window {
	return p.keep
}

// lastResolved returns the last member of the unbroken run of fitted lines
// from Hα upward when the spectrum reaches the next member and the lines
// are broad enough (FWHM above a third of the spacing to the next member)
// for Stark merging, rather than weakness, to end the series; 0 otherwise.
func lastResolved(cands []balmerCandidate, x []float64) int {
	last := -1
	for i, c := range cands {
		if c.t.Upper != 3+i || c.fit == nil {
			break
		}
		last = i
	}
	if last < 0 {
		return 0
	}
	c := cands[last]
	next, err := diag.Balmer(c.t.Upper+1, c.t.Isotope)
	if err != nil || next.WavelengthAirNM < x[0] {
		return 0
	}
	if c.fit.VoigtFWHM < (c.center-next.WavelengthAirNM)/3 {
		return 0
	}
	return c.t.Upper
}
