package linefit

import (
	"math"
	"testing"

	"glowlog/diag/voigt"
)

// TestGaussLegendreRules: every rule integrates polynomials up to degree
// 2m − 1 exactly (mean of t^d over (−1, 1) is 1/(d+1) for even d, 0 for
// odd d) and its weights sum to 1.
func TestGaussLegendreRules(t *testing.T) {
	for _, m := range append(glTiers[:], 48) {
		tt, w := gaussLegendre(m)
		for d := 0; d <= 2*m-1; d++ {
			var s float64
			for j := range tt {
				s += w[j] * math.Pow(tt[j], float64(d))
			}
			want := 0.0
			if d%2 == 0 {
				want = 1 / float64(d+1)
			}
			if math.Abs(s-want) > 1e-13 {
				t.Errorf("m=%d: mean of t^%d = %.16g, want %.16g", m, d, s, want)
			}
		}
	}
}

// refPixelMeans returns the exact (48-node Gauss–Legendre per pixel) pixel
// means of A·V(x − c) on the pixels of x.
func refPixelMeans(x []float64, c, area, fg, fl float64) []float64 {
	lo, wd := make([]float64, len(x)), make([]float64, len(x))
	pixelEdges(x, lo, wd, make([]int, len(x)))
	tt, w := gaussLegendre(48)
	out := make([]float64, len(x))
	for i := range x {
		for j := range tt {
			out[i] += w[j] * area * voigt.Profile(lo[i]+wd[i]*(1+tt[j])/2-c, fg/voigt.FWHMPerSigma, fl/2)
		}
	}
	return out
}

// TestPixelSchemeAccuracy measures the worst quadrature error of the fit
// model (node tiers of nodesFor, one node beyond coreReach, the switch to
// plain centre sampling at 35 pixels included) against a 48-node reference,
// relative to the line's peak A·V(0), over Gaussian to Lorentzian shapes,
// FWHM from 0.7 to 130 pixels and sub-pixel line positions. It must stay
// below the design bound intTol at every switch-over.
func TestPixelSchemeAccuracy(t *testing.T) {
	worst := 0.0
	for _, lorFrac := range []float64{0, 0.3, 0.5, 0.7, 0.9, 1} {
		for r := 0.7; r <= 130; r *= 1.12 {
			for _, off := range []float64{0, 0.23, 0.5} {
				// Pixel width 1, FWHM r, window ±max(6 FWHM, 20 px).
				hw := math.Ceil(max(6*r, 20))
				n := int(2*hw) + 1
				x := make([]float64, n)
				for i := range x {
					x[i] = float64(i) - hw
				}
				// Split the FWHM into Gaussian and Lorentzian parts with
				// f_L = lorFrac·f_V (Olivero–Longbothum inverted).
				fl := lorFrac * r
				fg := math.Sqrt(max(0, (r-0.5346*fl)*(r-0.5346*fl)-0.2166*fl*fl))
				if fg == 0 {
					fg = 1e-9
				}
				p := &Problem{X: x, Y: make([]float64, n), Lines: []Line{{Center: off, Area: 1, GaussFWHM: fg, LorentzFWHM: fl}}}
				f := NewFitter(n, 1)
				f.setup(p)
				f.eval(p, f.theta, f.model, f.jac)
				ref := refPixelMeans(x, off, 1, fg, fl)
				peak := voigt.Profile(0, fg/voigt.FWHMPerSigma, fl/2)
				for i := range x {
					if e := math.Abs(f.model[i]-ref[i]) / peak; e > worst {
						worst = e
					}
					if e := math.Abs(f.model[i]-ref[i]) / peak; e > intTol {
						t.Errorf("f_L/f_V=%.1f FWHM=%.2f px offset %.2f: pixel %d error %.2g of the peak > %.0e (nodes %d)",
							lorFrac, r, off, i, e, intTol, f.nodes[0])
						break
					}
				}
			}
		}
	}
	t.Logf("worst quadrature error %.2g of the peak", worst)
}

// TestNarrowLinePixelBias: a narrow line (total FWHM 1.5–3 pixels) made by
// exact pixel integration is fitted with unbiased area and widths by the
// pixel-integrated model, while the old centre-sampled model (PointSampled)
// misses the Lorentzian width by several of its own 1σ. Noise-free data
// with σ = peak/200 per pixel, so the fitted values are the model's
// asymptotic bias and the reported errors the σ of a peak S/N of 200.
func TestNarrowLinePixelBias(t *testing.T) {
	for _, tc := range []struct {
		name         string
		fg, fl, c    float64 // pixels
		fixG         bool
		oldBiasSigma float64 // the old model's f_L (free G: f_V) bias must exceed this many σ
	}{
		{"fixed-G FWHM 1.6 px", 1.2, 0.6, 0.3, true, 3},
		{"fixed-G FWHM 2.2 px", 1.6, 0.9, 0.0, true, 3},
		{"free-G FWHM 2.9 px", 2.2, 1.1, 0.45, false, 3},
	} {
		t.Run(tc.name, func(t *testing.T) {
			const n, area = 41, 10.0
			x := make([]float64, n)
			for i := range x {
				x[i] = 500 + 0.01*float64(i-n/2) // 0.01 nm pixels
			}
			px := 0.01
			c, fg, fl := 500+tc.c*px, tc.fg*px, tc.fl*px
			y := refPixelMeans(x, c, area, fg, fl)
			for i := range y {
				y[i] += 3 // flat baseline
			}
			peak := area * voigt.Profile(0, fg/voigt.FWHMPerSigma, fl/2)
			sig := constSigma(n, peak/200)
			fit := func(point bool) LineResult {
				p := &Problem{X: x, Y: y, Sigma: sig, SigmaAbsolute: true, BaselineOrder: 0, PointSampled: point,
					Lines: []Line{{Center: 500, Area: 0.8 * area, GaussFWHM: fg, LorentzFWHM: 2 * fl, FixGauss: tc.fixG}}}
				if !tc.fixG {
					p.Lines[0].GaussFWHM = 1.3 * fg
				}
				var res Result
				if err := NewFitter(n, 1).Fit(&res, p); err != nil {
					t.Fatalf("point=%v: %v", point, err)
				}
				return res.Lines[0]
			}
			nw, old := fit(false), fit(true)
			for _, q := range []struct {
				what            string
				got, err, truth float64
			}{
				{"area", nw.Area, nw.AreaErr, area},
				{"f_L", nw.LorentzFWHM, nw.LorentzFWHMErr, fl},
				{"f_V", nw.VoigtFWHM, nw.VoigtFWHMErr, voigt.OliveroFWHM(fg, fl)},
			} {
				if d := math.Abs(q.got-q.truth) / q.err; d > 0.05 {
					t.Errorf("pixel model: %s %.6g, truth %.6g: bias %.2gσ > 0.05σ", q.what, q.got, q.truth, d)
				}
			}
			if !tc.fixG {
				if d := math.Abs(nw.GaussFWHM-fg) / nw.GaussFWHMErr; d > 0.05 {
					t.Errorf("pixel model: f_G %.6g, truth %.6g: bias %.2gσ", nw.GaussFWHM, fg, d)
				}
			}
			oldBias := (old.LorentzFWHM - fl) / old.LorentzFWHMErr
			if !tc.fixG {
				// With a free Gaussian the bias goes into the total width.
				oldBias = (old.VoigtFWHM - voigt.OliveroFWHM(fg, fl)) / old.VoigtFWHMErr
			}
			t.Logf("f_L bias: pixel model %+.3gσ (%+.2g %%), centre sampling %+.3gσ; old tested width bias %+.3gσ (f_L %+.2g %%); area bias centre sampling %+.2g %%; f_V bias centre sampling %+.2g %%",
				(nw.LorentzFWHM-fl)/nw.LorentzFWHMErr, 100*(nw.LorentzFWHM/fl-1), (old.LorentzFWHM-fl)/old.LorentzFWHMErr, oldBias, 100*(old.LorentzFWHM/fl-1),
				100*(old.Area/area-1), 100*(old.VoigtFWHM/voigt.OliveroFWHM(fg, fl)-1))
			if !(math.Abs(oldBias) > tc.oldBiasSigma) {
				t.Errorf("centre sampling: f_L bias %.2gσ, expected beyond %gσ (the test would not show the old bias)", oldBias, tc.oldBiasSigma)
			}
		})
	}
}

// TestTaylorMeanDerivs: the derivatives of taylorMean match central
// finite differences, and its value the 48-node pixel mean for a wide line.
func TestTaylorMeanDerivs(t *testing.T) {
	for _, c := range [][4]float64{{0.3, 0.5, 1.0, 0.4}, {-2.1, 0.5, 0.7, 1.3}, {5, 0.5, 2, 0.01}, {0, 0.5, 3, 2}} {
		x, h, s, g := c[0], c[1], c[2], c[3]
		_, dx, ds, dg := taylorMean(x, h, s, g)
		const e = 1e-6
		num := func(f func(d float64) float64) float64 { return (f(e) - f(-e)) / (2 * e) }
		vx := num(func(d float64) float64 { v, _, _, _ := taylorMean(x+d, h, s, g); return v })
		vs := num(func(d float64) float64 { v, _, _, _ := taylorMean(x, h, s+d, g); return v })
		vg := num(func(d float64) float64 { v, _, _, _ := taylorMean(x, h, s, g+d); return v })
		peak := voigt.Profile(0, s, g)
		for _, q := range [][3]float64{{dx, vx, 0}, {ds, vs, 1}, {dg, vg, 2}} {
			if math.Abs(q[0]-q[1]) > 1e-7*peak/s {
				t.Errorf("%v: derivative %v = %.10g, finite difference %.10g", c, q[2], q[0], q[1])
			}
		}
	}
}
