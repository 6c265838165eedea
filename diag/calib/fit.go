package calib

import (
	"errors"
	"fmt"
	"math"
	"slices"
	"sort"
	"strings"

	"glowlog/diag/linefit"
)

// FitOptions controls FitInstrument. The zero value selects the defaults.
type FitOptions struct {
	// SearchNM is how far (nm) the observed peak may lie from the
	// catalogue wavelength; it bounds the wavelength-calibration error the
	// fit tolerates. 0 means 0.3 nm.
	SearchNM float64
	// WindowFWHM is the half width of the fit window in units of the
	// line's FWHM estimated from the data. The window must reach far into
	// the Lorentzian wings for the two widths to separate. 0 means 6.
	WindowFWHM float64
	// MinPoints is the fewest pixels a window may have. 0 means 15.
	MinPoints int
	// DetectSNR is the peak-to-noise ratio, with the noise estimated from
	// the whole spectrum, below which a line is reported as not found.
	// 0 means 10.
	DetectSNR float64
	// MinSNR is the fitted peak height divided by the RMS of the fit
	// residuals below which a fitted line is rejected. 0 means 30.
	MinSNR float64
	// MaxIter limits the Levenberg–Marquardt iterations per line; 0 means
	// the linefit default.
	MaxIter int
}

func (o FitOptions) withDefaults() FitOptions {
	if o.SearchNM == 0 {
		o.SearchNM = 0.3
	}
	if o.WindowFWHM == 0 {
		o.WindowFWHM = 6
	}
	if o.MinPoints == 0 {
		o.MinPoints = 15
	}
	if o.DetectSNR == 0 {
		o.DetectSNR = 10
	}
	if o.MinSNR == 0 {
		o.MinSNR = 30
	}
	return o
}

func (o FitOptions) check() {
	bad := func(name string, v float64) {
		panic(fmt.Sprintf("calib: FitOptions.%s = %g must be positive and finite (or 0 for the default)", name, v))
	}
	for _, f := range [...]struct {
		n string
		v float64
	}{{"SearchNM", o.SearchNM}, {"WindowFWHM", o.WindowFWHM}, {"DetectSNR", o.DetectSNR}, {"MinSNR", o.MinSNR}} {
		if !(f.v > 0) || math.IsInf(f.v, 0) {
			bad(f.n, f.v)
		}
	}
	if o.MinPoints < 6 {
		panic(fmt.Sprintf("calib: FitOptions.MinPoints = %d must be ≥ 6 (5 free parameters + 1)", o.MinPoints))
	}
	if o.MaxIter < 0 {
		panic("calib: FitOptions.MaxIter is negative")
	}
}

// LineReport is the outcome of fitting one lamp line.
type LineReport struct {
	// Line is the catalogue line.
	Line LampLine
	// Accepted reports that the line entered the instrument function;
	// otherwise Reason says why not.
	Accepted bool
	Reason   string
	// CenterNM is the fitted centre and CenterUncNM its 1σ error, nm.
	CenterNM, CenterUncNM float64
	// OffsetNM = CenterNM − Line.WavelengthAirNM is the wavelength
	// calibration error at this line, nm.
	OffsetNM float64
	// Fitted instrument widths (FWHM) and 1σ errors, nm.
	GaussFWHMNM, GaussUncNM     float64
	LorentzFWHMNM, LorentzUncNM float64
	// VoigtFWHMNM is the total FWHM (Olivero & Longbothum 1977), nm.
	VoigtFWHMNM float64
	// Peak is the fitted peak height above the baseline (counts).
	Peak float64
	// SNR is Peak divided by the RMS of the fit residuals.
	SNR float64
	// RedChi2 is the reduced χ² with unit weights (the residual variance).
	RedChi2 float64
	// Points is the number of pixels in the fit window; WindowLoNM and
	// WindowHiNM its ends, nm.
	Points                 int
	WindowLoNM, WindowHiNM float64
	// Iterations and Status are those of the Levenberg–Marquardt fit.
	Iterations int
	Status     string
}

// FitInstrument measures the instrument function from a low-pressure lamp
// spectrum (physics.md §5.5). wavelengthNM (strictly ascending, nm) and
// counts (dark-subtracted) are the lamp spectrum; lines are catalogue
// lines, for example Lamps()["hg"].
//
// The fitted model in each window is one Voigt with free centre c, area A,
// Gaussian and Lorentzian FWHMs w_G, w_L on a linear baseline,
//
//	f(λ) = A V(λ − c; σ, γ) + b₀ + b₁ (λ − λ_mid),
//	σ = w_G/(2√(2 ln 2)),  γ = w_L/2,
//
// fitted with package linefit (Levenberg–Marquardt). For each line inside
// the spectrum's range, FitInstrument
//
//  1. finds the highest pixel within opt.SearchNM of the catalogue
//     wavelength and requires it to stand opt.DetectSNR times above a
//     noise level estimated from the whole spectrum (the median absolute
//     pixel-to-pixel difference, scaled to a Gaussian σ);
//  2. estimates the FWHM from the half-maximum crossings and cuts a window
//     of ±opt.WindowFWHM FWHMs around the peak, rejecting the line if
//     another catalogue line falls inside the window (blend) or the window
//     has fewer than opt.MinPoints pixels;
//  3. fits f;
//  4. accepts the fit if it converged, the Gaussian width is positive and
//     away from its lower bound, the Lorentzian width is ≥ 0 (0 is
//     allowed: a purely Gaussian slit function), the centre lies within
//     opt.SearchNM of the catalogue value, and the peak exceeds opt.MinSNR
//     times the residual RMS.
//
// Lamp lines are narrow: Doppler FWHMs are about 1e-3 nm at room
// temperature and Hg isotope/hyperfine structure a few pm, far below
// grating instrument widths of ≳ 0.02 nm, so the fitted widths are taken
// as the instrument's own. (Were the lamp width not negligible its
// Gaussian part would have to be removed in quadrature.) The fit models
// point samples; the pixel's own width is absorbed into the fitted
// Gaussian, which is what an emission-line fit with the same pixels needs.
//
// The returned Instrument has one point per accepted line at the
// catalogue wavelength, with the fitted widths and their 1σ errors (scaled
// by √χ²_red, since unit weights are used). Every line of lines appears in
// the reports, in ascending wavelength, accepted or with the reason for
// rejection.
//
// FitInstrument returns an error wrapping ErrNoUsableLine, naming the
// spectrum's range and the lines looked for, if no line is accepted, and
// one wrapping ErrBadTable if the wavelengths are not strictly ascending
// and finite or a count is not finite. It panics if the slices differ in
// length, name is empty, or an option is invalid.
//
// Reference: J. J. Olivero and R. L. Longbothum, Empirical fits to the
// Voigt line width: a brief review, J. Quant. Spectrosc. Radiat. Transfer
// 17 (1977) 233–236 (total width in the reports).
func FitInstrument(name string, wavelengthNM, counts []float64, lines []LampLine, opt FitOptions) (*Instrument, []LineReport, error) {
	if len(wavelengthNM) != len(counts) {
		panic(fmt.Sprintf("calib: FitInstrument: len(wavelengthNM)=%d != len(counts)=%d", len(wavelengthNM), len(counts)))
	}
	if name == "" {
		panic("calib: FitInstrument: empty instrument name")
	}
	opt = opt.withDefaults()
	opt.check()
	if err := checkLampSpectrum(wavelengthNM, counts); err != nil {
		return nil, nil, fmt.Errorf("lamp spectrum for instrument %q: %w", name, err)
	}
	wl, y := wavelengthNM, counts
	n := len(wl)
	lo, hi := wl[0], wl[n-1]
	noise := diffNoise(y)

	sorted := slices.Clone(lines)
	sort.SliceStable(sorted, func(i, j int) bool { return sorted[i].WavelengthAirNM < sorted[j].WavelengthAirNM })
	reports := make([]LineReport, len(sorted))

	// First pass: locate lines and cut windows.
	type window struct{ i0, i1 int }
	wins := make([]window, len(sorted))
	maxPts := 0
	for k, line := range sorted {
		rep := &reports[k]
		rep.Line = line
		lam := line.WavelengthAirNM
		switch {
		case !(lam > 0) || math.IsInf(lam, 0):
			rep.Reason = fmt.Sprintf("catalogue wavelength %g nm is not positive and finite", lam)
			continue
		case k > 0 && lam == sorted[k-1].WavelengthAirNM:
			rep.Reason = "duplicate of the previous catalogue line"
			continue
		case lam < lo || lam > hi:
			rep.Reason = fmt.Sprintf("outside the spectrum range %.3f–%.3f nm", lo, hi)
			continue
		}
		s0 := sort.SearchFloat64s(wl, lam-opt.SearchNM)
		s1 := sort.SearchFloat64s(wl, lam+opt.SearchNM) // exclusive
		if s1-s0 < 3 {
			rep.Reason = fmt.Sprintf("fewer than 3 pixels within ±%.3g nm of the catalogue wavelength", opt.SearchNM)
			continue
		}
		ip := s0
		for i := s0; i < s1; i++ {
			if y[i] > y[ip] {
				ip = i
			}
		}
		if ip == 0 || ip == n-1 {
			rep.Reason = "peak at the edge of the spectrum"
			continue
		}
		base := y[s0]
		for i := s0; i < s1; i++ {
			base = min(base, y[i])
		}
		height := y[ip] - base
		rep.Peak = height
		if noise > 0 {
			rep.SNR = height / noise
		} else {
			rep.SNR = math.Inf(1)
		}
		if !(rep.SNR >= opt.DetectSNR) {
			rep.Reason = fmt.Sprintf("not found: peak %.3g above background is %.1f × the noise %.3g, below DetectSNR %g", height, rep.SNR, noise, opt.DetectSNR)
			continue
		}
		fw, ok := halfMaxWidth(wl, y, ip, base)
		if !ok {
			rep.Reason = "line does not fall to half maximum inside the spectrum"
			continue
		}
		half := opt.WindowFWHM * fw
		c := wl[ip]
		i0 := sort.SearchFloat64s(wl, c-half)
		i1 := sort.SearchFloat64s(wl, c+half)
		if i1 < n && wl[i1] == c+half {
			i1++
		}
		rep.WindowLoNM, rep.WindowHiNM = wl[i0], wl[i1-1]
		rep.Points = i1 - i0
		if c-half < lo || c+half > hi {
			rep.Reason = fmt.Sprintf("fit window ±%.4f nm runs past the spectrum's end", half)
			continue
		}
		if rep.Points < opt.MinPoints {
			rep.Reason = fmt.Sprintf("fit window has %d pixels, fewer than MinPoints %d (line under-sampled)", rep.Points, opt.MinPoints)
			continue
		}
		if other, blended := neighbour(sorted, k, c-half, c+half); blended {
			rep.Reason = fmt.Sprintf("blended: catalogue line %.4f nm lies inside the fit window %.3f–%.3f nm", other, c-half, c+half)
			continue
		}
		wins[k] = window{i0, i1}
		maxPts = max(maxPts, rep.Points)
	}

	// Second pass: fit.
	var fitter *linefit.Fitter
	if maxPts > 0 {
		fitter = linefit.NewFitter(maxPts, 1)
	}
	var res linefit.Result
	inst := &Instrument{Name: name}
	for k := range sorted {
		rep := &reports[k]
		if rep.Reason != "" {
			continue
		}
		w := wins[k]
		x, yy := wl[w.i0:w.i1], y[w.i0:w.i1]
		ip := w.i0
		for i := w.i0; i < w.i1; i++ {
			if y[i] > y[ip] {
				ip = i
			}
		}
		fw, _ := halfMaxWidth(wl, y, ip, minOf(yy))
		// Start values: split the estimated width between the two parts
		// so that the Voigt FWHM matches; area of a Voigt of that height.
		g0, l0 := 0.8*fw, 0.35*fw
		prob := linefit.Problem{
			X: x, Y: yy,
			Lines:         []linefit.Line{{Center: wl[ip], Area: rep.Peak * fw * 1.2, GaussFWHM: g0, LorentzFWHM: l0}},
			BaselineOrder: 1,
			MaxIter:       opt.MaxIter,
		}
		err := fitter.Fit(&res, &prob)
		rep.Iterations, rep.Status = res.Iterations, res.Status.String()
		lr := res.Lines[0]
		rep.CenterNM, rep.CenterUncNM = lr.Center, lr.CenterErr
		rep.OffsetNM = lr.Center - rep.Line.WavelengthAirNM
		rep.GaussFWHMNM, rep.GaussUncNM = lr.GaussFWHM, lr.GaussFWHMErr
		rep.LorentzFWHMNM, rep.LorentzUncNM = lr.LorentzFWHM, lr.LorentzFWHMErr
		rep.VoigtFWHMNM = lr.VoigtFWHM
		rep.Peak = lr.Peak
		rep.RedChi2 = res.RedChi2
		rms := math.Sqrt(res.RedChi2)
		if rms > 0 {
			rep.SNR = lr.Peak / rms
		} else {
			rep.SNR = math.Inf(1)
		}
		switch {
		case err != nil:
			rep.Reason = "fit failed: " + errText(err)
		case !finite(lr.Center, lr.GaussFWHM, lr.LorentzFWHM, lr.GaussFWHMErr, lr.LorentzFWHMErr, lr.Peak):
			rep.Reason = "fit gave non-finite parameters or errors"
		case !(lr.GaussFWHM > 1e-6*(x[len(x)-1]-x[0])):
			rep.Reason = fmt.Sprintf("Gaussian width %.3g nm at its lower bound (line narrower than the sampling?)", lr.GaussFWHM)
		case lr.LorentzFWHM < 0:
			rep.Reason = fmt.Sprintf("negative Lorentzian width %.3g nm", lr.LorentzFWHM)
		case !(lr.Peak > 0):
			rep.Reason = "fitted peak is not positive"
		case math.Abs(rep.OffsetNM) > opt.SearchNM:
			rep.Reason = fmt.Sprintf("fitted centre %.4f nm is %.4f nm from the catalogue value, beyond SearchNM %g", lr.Center, rep.OffsetNM, opt.SearchNM)
		case !(rep.SNR >= opt.MinSNR):
			rep.Reason = fmt.Sprintf("SNR %.1f below MinSNR %g", rep.SNR, opt.MinSNR)
		}
		if rep.Reason != "" {
			continue
		}
		rep.Accepted = true
		inst.Points = append(inst.Points, InstrumentPoint{
			WavelengthNM:  rep.Line.WavelengthAirNM,
			GaussFWHMNM:   lr.GaussFWHM,
			GaussUncNM:    lr.GaussFWHMErr,
			LorentzFWHMNM: lr.LorentzFWHM,
			LorentzUncNM:  lr.LorentzFWHMErr,
			Element:       rep.Line.Element,
		})
	}
	if len(inst.Points) == 0 {
		return nil, reports, fmt.Errorf("%w for instrument %q in %.3f–%.3f nm: looked for %s", ErrNoUsableLine, name, lo, hi, describe(reports))
	}
	var used []string
	for _, r := range reports {
		if r.Accepted {
			used = append(used, fmt.Sprintf("%s %.4f", r.Line.Element, r.Line.WavelengthAirNM))
		}
	}
	inst.Source = fmt.Sprintf("FitInstrument: %d of %d lamp lines (%s nm) fitted with a Voigt (free Gaussian and Lorentzian FWHM) on a linear baseline; lamp spectrum %d pixels %.3f–%.3f nm",
		len(inst.Points), len(reports), strings.Join(used, ", "), n, lo, hi)
	return inst, reports, nil
}

// describe lists the lines looked for and why each was not used.
func describe(reps []LineReport) string {
	if len(reps) == 0 {
		return "no lines (empty line list)"
	}
	parts := make([]string, len(reps))
	for i, r := range reps {
		parts[i] = fmt.Sprintf("%s %.4f nm (%s)", r.Line.Element, r.Line.WavelengthAirNM, r.Reason)
	}
	return strings.Join(parts, "; ")
}

// diffNoise estimates the per-pixel noise σ of y from the median absolute
// first difference, σ ≈ 1.4826 · median|y_{i+1} − y_i| / √2, which line
// profiles spanning several pixels barely affect.
func diffNoise(y []float64) float64 {
	if len(y) < 2 {
		return 0
	}
	d := make([]float64, len(y)-1)
	for i := range d {
		d[i] = math.Abs(y[i+1] - y[i])
	}
	slices.Sort(d)
	m := len(d) / 2
	med := d[m]
	if len(d)%2 == 0 {
		med = 0.5 * (d[m-1] + d[m])
	}
	return 1.4826 * med / math.Sqrt2
}

// halfMaxWidth returns the full width at half maximum of the peak at ip
// above the level base, from linearly interpolated crossings.
func halfMaxWidth(x, y []float64, ip int, base float64) (float64, bool) {
	h := base + 0.5*(y[ip]-base)
	l := ip
	for l > 0 && y[l] > h {
		l--
	}
	r := ip
	for r < len(y)-1 && y[r] > h {
		r++
	}
	if y[l] > h || y[r] > h {
		return 0, false
	}
	xl := x[l] + (h-y[l])/(y[l+1]-y[l])*(x[l+1]-x[l])
	xr := x[r-1] + (y[r-1]-h)/(y[r-1]-y[r])*(x[r]-x[r-1])
	w := xr - xl
	// At least one pixel spacing, so that very under-sampled lines still
	// get a window.
	return max(w, x[min(ip+1, len(x)-1)]-x[max(ip-1, 0)]), true
}

// neighbour reports another catalogue line (not k) inside [a, b].
func neighbour(lines []LampLine, k int, a, b float64) (float64, bool) {
	for j, l := range lines {
		if j != k && l.WavelengthAirNM != lines[k].WavelengthAirNM && l.WavelengthAirNM >= a && l.WavelengthAirNM <= b {
			return l.WavelengthAirNM, true
		}
	}
	return 0, false
}

func minOf(s []float64) float64 {
	m := s[0]
	for _, v := range s {
		m = min(m, v)
	}
	return m
}

func finite(v ...float64) bool {
	for _, x := range v {
		if math.IsNaN(x) || math.IsInf(x, 0) {
			return false
		}
	}
	return true
}

func errText(err error) string {
	for _, e := range []error{linefit.ErrMaxIterations, linefit.ErrSingular, linefit.ErrNoProgress, linefit.ErrNotFinite, linefit.ErrTooFewPoints} {
		if errors.Is(err, e) {
			return strings.TrimPrefix(e.Error(), "linefit: ")
		}
	}
	return err.Error()
}
