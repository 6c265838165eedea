package linefit

import (
	"cmp"
	"math"
	"slices"

	"glowlog/diag/voigt"
)

// Pixel integration.
//
// A detector pixel records the spectrum integrated over its width, not
// sampled at its centre. The model value of point i is therefore the mean
// of the line profile over the pixel [e_i, e_{i+1}],
//
//	f_i = (1/Δ_i) ∫ [b(x) + Σ_k A_k V(x − c_k; σ_k, γ_k)] dx,   Δ_i = e_{i+1} − e_i,
//
// with the pixel edges e half-way between neighbouring centres (in sorted
// order of X); the outer edges of the first and last pixel lie half a
// neighbour spacing beyond their centres. On a uniform grid this is the
// usual pixel of width Δλ centred on its wavelength. The polynomial
// baseline is averaged exactly. Each line is integrated by Gauss–Legendre
// quadrature with m nodes per pixel, m chosen per line from its FWHM in
// pixels (nodesFor); pixels farther from the line centre than coreReach
// are evaluated with one node (the pixel midpoint). Both choices keep the
// quadrature error below intTol of the line's peak (TestPixelSchemeAccuracy
// measures it against a 48-node reference over Gaussian to Lorentzian
// shapes, FWHM from 0.7 to 130 pixels and sub-pixel offsets). The
// Jacobian is the same quadrature applied to the analytic derivatives, so
// model and derivatives are consistent.

// intTol is the design bound of the quadrature error of one pixel's model
// value relative to the line's peak value A·V(0). Common practice, no
// source: a model error of 3e-4 of the peak shifts a fitted width by at
// most a few 1e-4 of itself, several times below the statistical width
// error of a line at a peak S/N of 1000 and far below any Stark model's
// uncertainty.
const intTol = 3e-4

// glMaxNodes is the largest rule used by the fit.
const glMaxNodes = 12

// glTiers are the node counts the fit chooses from.
var glTiers = [...]int{1, 2, 3, 4, 6, 8, 12}

// glRule[m] holds the nodes t ∈ (−1, 1) and weights (summing to 1, that
// is the Gauss–Legendre weights halved) of the m-node rule for m in
// glTiers.
var glRule = func() (r [glMaxNodes + 1]struct{ t, w []float64 }) {
	for _, m := range glTiers {
		r[m].t, r[m].w = gaussLegendre(m)
	}
	return r
}()

// gaussLegendre returns the m nodes on (−1, 1) and the weights of the
// Gauss–Legendre rule, halved so that they sum to 1 (a mean over the
// interval). Nodes are the roots of the Legendre polynomial P_m found by
// Newton's method from the Tricomi estimate cos(π(j − 1/4)/(m + 1/2));
// weights 2/((1 − t²) P_m′(t)²) (Abramowitz & Stegun 25.4.29).
func gaussLegendre(m int) (t, w []float64) {
	t, w = make([]float64, m), make([]float64, m)
	for j := range m {
		x := math.Cos(math.Pi * (float64(j) + 0.75) / (float64(m) + 0.5))
		var dp float64
		for range 100 {
			p0, p1 := 1.0, x
			for k := 2; k <= m; k++ {
				p0, p1 = p1, (float64(2*k-1)*x*p1-float64(k-1)*p0)/float64(k)
			}
			if m == 1 {
				p0, p1 = 1, x
			}
			dp = float64(m) * (x*p1 - p0) / (x*x - 1)
			dx := p1 / dp
			x -= dx
			if math.Abs(dx) < 1e-16 {
				break
			}
		}
		// Recompute the derivative at the converged root.
		p0, p1 := 1.0, x
		for k := 2; k <= m; k++ {
			p0, p1 = p1, (float64(2*k-1)*x*p1-float64(k-1)*p0)/float64(k)
		}
		if m == 1 {
			p0, p1 = 1, x
		}
		dp = float64(m) * (x*p1 - p0) / (x*x - 1)
		t[j] = x
		w[j] = 1 / ((1 - x*x) * dp * dp) // 2/((1−x²)P′²), halved
	}
	return t, w
}

// nodesFor returns the number of Gauss–Legendre nodes per pixel for a line
// whose Voigt FWHM is r pixels (the widest pixel of the window), so that
// the quadrature error stays below intTol of the peak. The thresholds were
// measured by TestPixelSchemeAccuracy (worst case over Gaussian to
// Lorentzian shapes and sub-pixel line positions).
func nodesFor(r float64) int {
	switch {
	case r >= 35:
		return 1
	case r >= 4.6:
		return 2
	case r >= 2.9:
		return 3
	case r >= 1.75:
		return 4
	case r >= 1:
		return 6
	case r >= 0.6:
		return 8
	}
	return 12
}

// coreReach returns the distance from the line centre beyond which one
// node per pixel meets intTol: the Gaussian core is gone beyond 7σ, and
// in the Lorentzian wing the midpoint error Δ²V″/24 relative to the peak
// is about Δ²γ²/(4x⁴), below intTol for x ≥ √(Δγ)/(4 intTol)^¼; the
// factor 1.5 on that distance covers the Voigt shapes in between
// (measured by TestPixelSchemeAccuracy).
func coreReach(sigma, gamma, pix float64) float64 {
	return max(7*sigma, 1.5*math.Sqrt(pix*gamma)/math.Sqrt(math.Sqrt(4*intTol)), 3*pix)
}

// pixelEdges fills lo[i] and wd[i] with the lower edge and width of the
// pixel of X[i] (edges half-way between neighbours in sorted order) and
// returns the largest width. order is scratch of len(x).
func pixelEdges(x, lo, wd []float64, order []int) float64 {
	n := len(x)
	asc, desc := true, true
	for i := 1; i < n; i++ {
		if x[i] < x[i-1] {
			asc = false
		}
		if x[i] > x[i-1] {
			desc = false
		}
	}
	order = order[:n]
	for i := range order {
		order[i] = i
	}
	switch {
	case asc:
	case desc:
		slices.Reverse(order)
	default:
		slices.SortStableFunc(order, func(a, b int) int { return cmp.Compare(x[a], x[b]) })
	}
	var wmax float64
	for r, i := range order {
		var l, h float64
		switch {
		case n == 1:
			l, h = x[i]-0.5, x[i]+0.5
		case r == 0:
			h = 0.5 * (x[i] + x[order[1]])
			l = x[i] - (h - x[i])
		case r == n-1:
			l = 0.5 * (x[order[r-1]] + x[i])
			h = x[i] + (x[i] - l)
		default:
			l = 0.5 * (x[order[r-1]] + x[i])
			h = 0.5 * (x[i] + x[order[r+1]])
		}
		lo[i], wd[i] = l, h-l
		wmax = max(wmax, h-l)
	}
	return wmax
}

// taylorMean returns the mean of the Voigt profile V(·; σ, γ) over
// [x − h, x + h] by its Taylor expansion about the midpoint,
//
//	⟨V⟩ ≈ V(x) + (h²/6) V″(x),
//
// (remainder h⁴V⁗/120, the size of the 2-node Gauss–Legendre error
// h⁴V⁗/135) together with its derivatives with respect to x, σ and γ,
// from one Faddeeva evaluation. With s = σ√2, c = 1/(σ√(2π)) and
// z = (x + iγ)/s, the x-derivatives are V⁽ⁿ⁾ = c Re w⁽ⁿ⁾(z)/sⁿ, with
// w′ = −2zw + 2i/√π, w″ = −2w − 2zw′ and w‴ = −4w′ − 2zw″ (Abramowitz &
// Stegun 7.1.20); ∂V″/∂γ = −c Im w‴/s³ and
// ∂V″/∂σ = −(3V″ + c Re(z w‴)/s²)/σ. σ must be positive.
func taylorMean(x, h, sigma, gamma float64) (v, dx, dsigma, dgamma float64) {
	t := newTaylor(sigma, gamma)
	return t.mean(x, h)
}

// taylor holds what taylorMean computes from σ and γ alone, for a fit
// that takes the mean over many pixels with one σ and γ per line:
// t.mean(x, h) is taylorMean(x, h, σ, γ) (the same operations, two
// divisions fewer per pixel).
type taylor struct {
	sigma, is, zi, c, is2 float64
}

func newTaylor(sigma, gamma float64) taylor {
	s := sigma * math.Sqrt2
	is := 1 / s
	return taylor{sigma: sigma, is: is, zi: gamma * is, c: 1 / (sigma * math.Sqrt(2*math.Pi)), is2: is * is}
}

// mean is taylorMean over [x − h, x + h].
func (t *taylor) mean(x, h float64) (v, dx, dsigma, dgamma float64) {
	sigma, is, c, is2 := t.sigma, t.is, t.c, t.is2
	z := complex(x*is, t.zi)
	w := voigt.Faddeeva(z)
	w1 := -2*z*w + complex(0, 2/math.SqrtPi)
	w2 := -2*w - 2*z*w1
	w3 := -4*w1 - 2*z*w2
	k := h * h / 6
	v0 := c * real(w)
	v2 := c * real(w2) * is2
	v = v0 + k*v2
	// First derivatives of V (as voigt.ProfileDeriv) and of V″.
	d0x := c * real(w1) * is
	d0g := -c * imag(w1) * is
	d0s := -c / sigma * (real(w) + real(z*w1))
	d2x := c * real(w3) * is2 * is
	d2g := -c * imag(w3) * is2 * is
	d2s := -(3*v2 + c*real(z*w3)*is2) / sigma
	return v, d0x + k*d2x, d0s + k*d2s, d0g + k*d2g
}
