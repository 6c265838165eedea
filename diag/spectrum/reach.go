package spectrum

import (
	"math"

	"glowlog/diag"
)

// The line search (candidates, fit.go) takes the low percentile of ±reach
// around a line as its baseline, with reach set by the instrument and the
// pixels. A line much wider than that region — Stark-broadened Hβ at
// 2×10²³ m⁻³ has an FWHM near 8 nm under a 0.05 nm instrument — fills it:
// the baseline then sits inside the line, the line's peak over it looks
// like noise, and its fit window (5 FWHM of that estimate) cuts the line.
// wideLine finds such a line and the region its baseline must come from.
//
// It looks at the data smoothed by a centred box (an eighth of the region
// it tests: a quarter of the FWHM that triggers, too narrow to widen such a
// line noticeably, wide enough to average the noise of a line spread over
// hundreds of pixels) over a straight baseline through the low percentiles
// of the region's two outer halves (so that a sloping continuum does not
// look like a wide line). A line whose FWHM there exceeds half the region
// is wide; because a region inside a wide flat-topped or dipped line shows
// hardly any excess at all, twice and four times the starting region are
// tested too. The region of a wide line is then grown to baseReachFWHM
// FWHM (the box to an eighth of the FWHM) until the FWHM settles (it
// converges from below: a lower baseline gives a wider FWHM). A region
// never reaches past the neighbouring Balmer members (a line wider than
// the spacing of the series is merged with its neighbours, not resolvable
// by a window fit), nor past the range.

// baseReachFWHM is the half-width, in FWHM of the line, of the region a
// wide line's baseline is taken from: at 4 FWHM from the centre a
// Lorentzian is at 1.5 % of its peak (1/(1+64)). Common practice, no
// source.
const baseReachFWHM = 4

// maxReachSteps bounds the growth of the region (in practice two or three
// steps converge to 5 %).
const maxReachSteps = 8

// wideFit is what wideLine found.
type wideFit struct {
	grown bool
	// reach is the final half-width of the baseline region, nm; fwhm the
	// line's FWHM over the baseline, nm.
	reach, fwhm float64
	// The baseline is mid + slope·(λ − center).
	center, mid, slope float64
}

func (w wideFit) at(lambda float64) float64 { return w.mid + w.slope*(lambda-w.center) }

// balmerSpacing is the distance, nm, from the line to the nearest other
// Balmer member (on the air axis; the difference to vacuum is irrelevant
// here).
func balmerSpacing(up int, iso diag.Isotope, center float64) float64 {
	d := math.Inf(1)
	for _, k := range []int{up - 1, up + 1} {
		if k < 3 || k > diag.MaxLevel {
			continue
		}
		if t, err := diag.Balmer(k, iso); err == nil {
			d = math.Min(d, math.Abs(t.WavelengthAirNM-center))
		}
	}
	return d
}

// wideLine tests whether the line near center (highest pixel ip) is wider
// than 1/baseReachFWHM of the starting region ±reach0 (px the pixel width
// there, spacing the distance to the next Balmer member) and returns its
// baseline region and FWHM when it is.
func (p *Pipeline) wideLine(x, y []float64, ip int, center, reach0, px, spacing float64) wideFit {
	n := len(x)
	limit := math.Min(spacing, x[n-1]-x[0])
	// The trigger: the smoothed FWHM exceeds half the region (its half
	// maximum lies beyond ±reach/4; the search's own region is 15
	// instrument FWHM, so a line the instrument shapes never triggers).
	var f wideFit
	found := false
	for _, r := range []float64{reach0, 2 * reach0, 4 * reach0} {
		if r > limit {
			break
		}
		if f = p.probe(x, y, ip, center, r, int(r/(8*px)/2)); 2*f.fwhm > r {
			found = true
			break
		}
	}
	if !found {
		return wideFit{}
	}
	// Grow the region to baseReachFWHM FWHM, the box to an eighth of the
	// FWHM, until the FWHM grows by less than 5 %.
	for range maxReachSteps {
		r := math.Min(baseReachFWHM*f.fwhm, limit)
		g := p.probe(x, y, ip, center, r, int(f.fwhm/(8*px)/2))
		grew := g.fwhm > 1.05*f.fwhm
		f = g
		if !grew || r >= limit {
			break
		}
	}
	f.grown = true
	return f
}

// baseline is the straight line through the 20th percentiles of the two
// outer halves of ±r around center (of the one inside the range when the
// other is cut off; of the whole region when both are too short).
func (p *Pipeline) baseline(x, y []float64, center, r float64) wideFit {
	n := len(x)
	f := wideFit{reach: r, center: center}
	i0, i1 := index(x, center-r), index(x, center-r/2)
	i2, i3 := index(x, center+r/2), min(index(x, center+r), n)
	const minPix = 3
	left, right := i1-i0 >= minPix, i3-i2 >= minPix
	mean := func(a, b int) float64 { return 0.5 * (x[a] + x[b-1]) }
	switch {
	case left && right:
		yl := percentile(y[i0:i1], 0.2, p.work)
		yr := percentile(y[i2:i3], 0.2, p.work)
		xl, xr := mean(i0, i1), mean(i2, i3)
		f.slope = (yr - yl) / (xr - xl)
		f.mid = yl + f.slope*(center-xl)
		if !finiteF(f.slope) || !finiteF(f.mid) {
			// Values near the float range: a flat baseline.
			f.slope, f.mid = 0, math.Min(yl, yr)
		}
	case left:
		f.mid = percentile(y[i0:i1], 0.2, p.work)
	case right:
		f.mid = percentile(y[i2:i3], 0.2, p.work)
	default:
		f.mid = percentile(y[i0:i3], 0.2, p.work)
	}
	return f
}

// probe measures the FWHM of the line over the baseline of ±r around
// center, on the data smoothed by a box of 2hb+1 pixels.
func (p *Pipeline) probe(x, y []float64, ip int, center, r float64, hb int) wideFit {
	n := len(x)
	f := p.baseline(x, y, center, r)
	// The smoothed maximum within ±r/8: a line this wide may have a
	// central dip (Hβ, Hδ at high density), where the highest pixel of
	// the core then sits.
	jp, mx := ip, math.Inf(-1)
	for j := max(index(x, center-r/8), 0); j < min(index(x, center+r/8), n); j++ {
		if v := p.boxMean(j, hb) - f.at(x[j]); v > mx {
			mx, jp = v, j
		}
	}
	if math.IsInf(mx, -1) {
		mx = p.boxMean(ip, hb) - f.at(x[ip])
	}
	half := mx / 2
	l, rr := jp, jp
	for l > 0 && p.boxMean(l, hb)-f.at(x[l]) > half {
		l--
	}
	for rr < n-1 && p.boxMean(rr, hb)-f.at(x[rr]) > half {
		rr++
	}
	f.fwhm = x[rr] - x[l]
	return f
}

// setBoxSums prepares boxMean for y: prefix sums of y/n (each term at most
// the largest |y|/n, so the sums stay finite for any finite data).
func (p *Pipeline) setBoxSums(y []float64) {
	n := len(y)
	c := grow(&p.cum, n+1)
	c[0] = 0
	for i, v := range y {
		c[i+1] = c[i] + v/float64(n)
	}
}

// boxMean is the mean of y (given to setBoxSums) over [i−hb, i+hb], cut
// at the ends.
func (p *Pipeline) boxMean(i, hb int) float64 {
	n := len(p.cum) - 1
	lo, hi := max(i-hb, 0), min(i+hb, n-1)
	return (p.cum[hi+1] - p.cum[lo]) / float64(hi-lo+1) * float64(n)
}
