package sh99

import "math"

// broadened is a node profile (normalised to unit area, per nm) convolved
// with one more Gaussian of standard deviation sigma (nm). Convolution
// integrals use the trapezoidal rule over the Gaussian variable, which
// converges exponentially here because the node profile is smooth on the
// scale of its own Doppler part, at least as wide as the added Gaussian.
type broadened struct {
	np       *nodeProfile
	xnm, nrm float64
	ys, ws   []float64
}

func newBroadened(np *nodeProfile, xnm, extraFWHM float64) broadened {
	const h, tmax = 0.2, 6.0
	n := int(tmax / h)
	sigma := extraFWHM / (2 * math.Sqrt(2*math.Ln2))
	b := broadened{np: np, xnm: xnm, nrm: 0.5 / np.half}
	for i := -n; i <= n; i++ {
		t := float64(i) * h
		b.ys = append(b.ys, math.Sqrt2*sigma*t)
		b.ws = append(b.ws, math.Exp(-t*t)*h/math.SqrtPi)
	}
	return b
}

func (b broadened) pHat(d float64) float64 {
	return b.np.at(math.Abs(d)*b.xnm) * b.xnm * b.nrm
}

// cHat is the area of the node profile between 0 and d (odd in d).
func (b broadened) cHat(d float64) float64 {
	v := b.np.cumAt(math.Abs(d)*b.xnm) * b.nrm
	if d < 0 {
		return -v
	}
	return v
}

// at returns the broadened profile at detuning d (nm).
func (b broadened) at(d float64) float64 {
	var s float64
	for i, y := range b.ys {
		s += b.ws[i] * b.pHat(d-y)
	}
	return s
}

// mass returns the broadened profile's area between −a and a.
func (b broadened) mass(a float64) float64 {
	var s float64
	for i, y := range b.ys {
		s += b.ws[i] * (b.cHat(a-y) - b.cHat(-a-y))
	}
	return s
}

// fwhm returns the broadened profile's FWHM (relative to its largest
// value); w0 is the FWHM of the node profile itself.
func (b broadened) fwhm(w0 float64) float64 {
	// Peak: at the centre, or for a central dip near the node's peaks
	// (sampled, then golden-section refined).
	dpk, vpk := 0.0, b.at(0)
	const ns = 24
	// A profile whose largest tabulated value is at the centre is
	// unimodal; so is its convolution with a Gaussian.
	for i := 1; i <= ns && b.np.dip; i++ {
		d := 0.6 * w0 * float64(i) / ns
		if v := b.at(d); v > vpk {
			dpk, vpk = d, v
		}
	}
	if dpk > 0 {
		lo, hi := dpk-0.6*w0/ns, dpk+0.6*w0/ns
		const g = 0.6180339887498949
		for range 25 {
			m1, m2 := hi-g*(hi-lo), lo+g*(hi-lo)
			if b.at(m1) > b.at(m2) {
				hi = m2
			} else {
				lo = m1
			}
		}
		vpk = math.Max(vpk, b.at(0.5*(lo+hi)))
	}
	half := vpk / 2
	lo, hi := dpk, w0
	for b.at(hi) >= half {
		lo, hi = hi, 2*hi
	}
	for range 34 {
		m := 0.5 * (lo + hi)
		if b.at(m) >= half {
			lo = m
		} else {
			hi = m
		}
	}
	return lo + hi
}

// fwha returns the broadened profile's full width at half area; a0 is
// the FWHA of the node profile itself (a starting value).
func (b broadened) fwha(a0 float64) float64 {
	a := a0 / 2
	lo, hi := 0.0, math.Inf(1)
	for range 60 {
		f := b.mass(a) - 0.5
		if f < 0 {
			lo = a
		} else {
			hi = a
		}
		next := a - f/(2*b.at(a))
		if !(next > lo && next < hi) {
			if math.IsInf(hi, 1) {
				next = 2 * a
			} else {
				next = 0.5 * (lo + hi)
			}
		}
		if math.Abs(next-a) <= 1e-12*a {
			return 2 * next
		}
		a = next
	}
	return 2 * a
}

// starkEstimate returns the Stark-only width of kind at one node and the
// relative uncertainty of the Doppler removal.
//
// Base: the tables' Doppler FWHM wD is removed as from a Voigt profile
// whose Lorentzian part is the Stark part (starkFWHM, starkFWHA). Its
// error comes from the Stark part not being Lorentzian; for a smooth
// profile it grows as w_G², so the base removal is repeated on the node
// profile broadened by one more Gaussian of FWHM wD (total √2·w_D) and
// the two are extrapolated to w_G = 0 (Richardson):
//
//	S = 2·s(w_D) − s(√2·w_D)
//
// The same extrapolation from √2·w_D and √3·w_D gives S′ = 3·s(√2·w_D) −
// 2·s(√3·w_D). The returned uncertainty is max(|S − s(w_D)|, |S′ − S|)/S:
// the size of the shape correction or the disagreement of the two
// extrapolations, whichever is larger (Hβ's peaks, and Hα's sharp core,
// do not respond to a Gaussian as w_G² alone). Where the base correction
// is below 0.1 % the base value is used with that correction as its
// uncertainty. It returns s = 0 when the Doppler part cannot be removed.
func starkEstimate(kind WidthKind, np *nodeProfile, xnm, wTable, wD float64) (s, unc float64) {
	base := starkFWHM
	if kind == FWHA {
		base = starkFWHA
	}
	s0 := base(wTable, wD)
	if !(s0 > 0) {
		return 0, 0
	}
	if c := 1 - s0/wTable; c < 1e-3 {
		return s0, c
	}
	width := func(extra float64) float64 {
		b := newBroadened(np, xnm, extra)
		if kind == FWHA {
			return b.fwha(wTable)
		}
		return b.fwhm(wTable)
	}
	s1 := base(width(wD), math.Sqrt2*wD)
	s2 := base(width(math.Sqrt2*wD), math.Sqrt(3)*wD)
	if !(s1 > 0) || !(s2 > 0) {
		return 0, 0
	}
	s = 2*s0 - s1
	alt := 3*s1 - 2*s2
	return s, math.Max(math.Abs(s-s0), math.Abs(alt-s)) / s
}
