package voigt

import (
	"fmt"
	"math"
	"testing"
)

// TestProfileValues checks Profile against values of physics.md §6
// (scipy.special.voigt_profile; the first two also appear in the scipy
// documentation examples) and against the exact limits.
func TestProfileValues(t *testing.T) {
	t.Parallel()
	for _, test := range []struct {
		x, sigma, gamma, want, tol float64
	}{
		// physics.md §6, scipy.special.voigt_profile (scipy docs examples).
		{2, 1, 1, 0.09071519942627544, 1e-13},
		{0, 1, 1, 0.20870928052036772, 1e-13},
		// physics.md §6, scipy.special.voigt_profile.
		{5, 1, 1, 0.01388492128857125, 1e-13},
		// Analytic: Gaussian peak 1/(σ√(2π)), Lorentzian peak 1/(πγ).
		{0, 2, 0, 1 / (2 * math.Sqrt(2*math.Pi)), 1e-15},
		{0, 0, 0.5, 2 / math.Pi, 1e-15},
		// Analytic: Lorentzian at x = γ is half its peak.
		{0.5, 0, 0.5, 1 / math.Pi, 1e-15},
	} {
		got := Profile(test.x, test.sigma, test.gamma)
		if e := relErr(got, test.want); e > test.tol {
			t.Errorf("Profile(%v, %v, %v) = %.17g, want %.17g (rel err %.2e)", test.x, test.sigma, test.gamma, got, test.want, e)
		}
	}
	if v := Profile(0, 0, 0); !math.IsInf(v, 1) {
		t.Errorf("Profile(0, 0, 0) = %v, want +Inf", v)
	}
	if v := Profile(1, 0, 0); v != 0 {
		t.Errorf("Profile(1, 0, 0) = %v, want 0", v)
	}
}

// TestProfileScipy compares Profile and ProfileDeriv's value with
// scipy.special.voigt_profile on testdata/scipy/voigt_profile.csv (see its
// provenance header), which covers σ ∈ {0, 0.05, 1, 3},
// γ ∈ {0, 1e-6, 0.01, 0.5, 1, 10} and x ∈ [−40, 40].
func TestProfileScipy(t *testing.T) {
	t.Parallel()
	_, rows := readCSV(t, "../../testdata/scipy/voigt_profile.csv")
	w := worst{name: "Profile vs scipy voigt_profile (relative)", tol: 1e-12}
	wd := worst{name: "ProfileDeriv value vs scipy (relative)", tol: 1e-12}
	for _, r := range rows {
		x, sigma, gamma, want := r[0], r[1], r[2], r[3]
		where := fmt.Sprintf("V(%g; σ=%g, γ=%g) want %.17g", x, sigma, gamma, want)
		w.add(relErr(Profile(x, sigma, gamma), want), where)
		v, _, _, _ := ProfileDeriv(x, sigma, gamma)
		wd.add(relErr(v, want), where)
	}
	w.check(t)
	wd.check(t)
}

// TestProfileDeriv compares the analytic derivatives with fourth-order
// central finite differences (second-order one-sided at a zero width).
func TestProfileDeriv(t *testing.T) {
	t.Parallel()
	for _, test := range []struct{ x, sigma, gamma float64 }{
		{0.3, 1, 1}, {2, 1, 1}, {-5, 1, 1}, {0.7, 0.4, 0.05}, {3.1, 0.4, 0.05},
		{1.2, 1, 0}, {25, 0.5, 0.3}, {0.9, 2, 10}, {0.4, 1e-3, 0.2}, {0.4, 0, 0.2},
		{4, 1, 1e-7}, {-3.3, 0.6, 2},
	} {
		v, dx, ds, dg := ProfileDeriv(test.x, test.sigma, test.gamma)
		if want := Profile(test.x, test.sigma, test.gamma); relErr(v, want) > 1e-14 {
			t.Errorf("ProfileDeriv%v value %g, Profile %g", test, v, want)
		}
		// Step relative to the profile width; derivatives are compared on
		// the scale peak/width, since V' has zeros.
		width := test.sigma + test.gamma
		h := 1e-3 * width
		scale := Profile(0, test.sigma, test.gamma) / width
		f := func(dx, ds, dg float64) float64 {
			return Profile(test.x+dx, test.sigma+ds, test.gamma+dg)
		}
		central := func(g func(float64) float64) float64 {
			return (8*(g(h)-g(-h)) - (g(2*h) - g(-2*h))) / (12 * h)
		}
		oneSided := func(g func(float64) float64) float64 {
			return (-3*g(0) + 4*g(h) - g(2*h)) / (2 * h)
		}
		fdx := central(func(d float64) float64 { return f(d, 0, 0) })
		var fds, fdg float64
		tolS, tolG := 1e-8, 1e-8
		if test.sigma > 2*h {
			fds = central(func(d float64) float64 { return f(0, d, 0) })
		} else {
			fds = oneSided(func(d float64) float64 { return f(0, d, 0) })
			tolS = 1e-5 // O(h²) truncation of the one-sided formula
		}
		if test.gamma > 2*h {
			fdg = central(func(d float64) float64 { return f(0, 0, d) })
		} else {
			fdg = oneSided(func(d float64) float64 { return f(0, 0, d) })
			tolG = 1e-5
		}
		for _, c := range []struct {
			name      string
			got, want float64
			tol       float64
		}{{"∂V/∂x", dx, fdx, 1e-8}, {"∂V/∂σ", ds, fds, tolS}, {"∂V/∂γ", dg, fdg, tolG}} {
			if d := math.Abs(c.got-c.want) / scale; d > c.tol {
				t.Errorf("%s at (x=%v, σ=%v, γ=%v) = %.12g, finite difference %.12g (diff/scale %.1e)", c.name, test.x, test.sigma, test.gamma, c.got, c.want, d)
			}
		}
	}
}

// TestProfileNormalised checks the invariant ∫V dx = 1. The substitution
// x = s tan θ maps the real line onto (−π/2, π/2), where the integrand
// V(s tan θ) s sec²θ is bounded even for Lorentzian wings; the composite
// Simpson rule on 40 000 panels is then accurate to better than 1e-10.
func TestProfileNormalised(t *testing.T) {
	t.Parallel()
	for _, test := range []struct{ sigma, gamma float64 }{
		{1, 0}, {1, 1}, {0, 1}, {0.3, 2}, {2, 0.01}, {1e-3, 1},
	} {
		s := test.sigma + test.gamma
		const n = 40000
		a, b := -math.Pi/2, math.Pi/2
		h := (b - a) / n
		g := func(th float64) float64 {
			if math.Abs(th) >= math.Pi/2 {
				// Limit θ → ±π/2: V ~ γ/(π x²), times s sec²θ → γ/(π s).
				return test.gamma / (math.Pi * s)
			}
			c := math.Cos(th)
			return Profile(s*math.Tan(th), test.sigma, test.gamma) * s / (c * c)
		}
		sum := g(a) + g(b)
		for i := 1; i < n; i++ {
			wt := 2.0
			if i%2 == 1 {
				wt = 4
			}
			sum += wt * g(a+float64(i)*h)
		}
		if got := sum * h / 3; math.Abs(got-1) > 1e-10 {
			t.Errorf("∫V(x; %v, %v) dx = %.15g, want 1", test.sigma, test.gamma, got)
		}
	}
}

// TestOliveroFWHM checks the exact FWHM against physics.md §6 (1.6375954 for
// f_G = f_L = 1, computed there) and the Olivero–Longbothum formula against
// the exact width (maximum relative error about 2.4e-4, physics.md §5.6).
func TestOliveroFWHM(t *testing.T) {
	t.Parallel()
	sigma, gamma := SigmaFromFWHM(1), GammaFromFWHM(1)
	if got := FWHM(sigma, gamma); math.Abs(got-1.6375954) > 1e-7 {
		t.Errorf("FWHM(f_G = f_L = 1) = %.9f, want 1.6375954", got)
	}
	if got := OliveroFWHM(1, 1); math.Abs(got-1.6375959) > 1e-7 {
		t.Errorf("OliveroFWHM(1, 1) = %.9f, want 1.6375959", got)
	}
	var maxErr, at float64
	for r := 0.01; r < 100; r *= 1.05 {
		exact := FWHM(SigmaFromFWHM(1), GammaFromFWHM(r))
		e := math.Abs(OliveroFWHM(1, r)-exact) / exact
		if e > maxErr {
			maxErr, at = e, r
		}
	}
	t.Logf("Olivero–Longbothum max relative error %.2e at f_L/f_G = %.3f", maxErr, at)
	if maxErr > 3e-4 {
		t.Errorf("Olivero–Longbothum max relative error %.2e at f_L/f_G = %.3f, want ≤ 3e-4", maxErr, at)
	}
	// The half maximum really is at FWHM/2.
	for _, w := range []struct{ sigma, gamma float64 }{{1, 0.3}, {0.2, 5}, {1, 1e-9}} {
		f := FWHM(w.sigma, w.gamma)
		if d := Profile(f/2, w.sigma, w.gamma)/Profile(0, w.sigma, w.gamma) - 0.5; math.Abs(d) > 1e-13 {
			t.Errorf("V(FWHM/2)/V(0) − 1/2 = %.2e for σ=%v γ=%v", d, w.sigma, w.gamma)
		}
	}
	if got := GaussianFWHM(SigmaFromFWHM(0.7)); math.Abs(got-0.7) > 1e-16 {
		t.Errorf("GaussianFWHM(SigmaFromFWHM(0.7)) = %v", got)
	}
	if got := LorentzianFWHM(GammaFromFWHM(0.7)); got != 0.7 {
		t.Errorf("LorentzianFWHM(GammaFromFWHM(0.7)) = %v", got)
	}
}

func TestProfilePanics(t *testing.T) {
	t.Parallel()
	for _, c := range []struct{ sigma, gamma float64 }{{-1, 1}, {1, -1}, {math.NaN(), 1}} {
		func() {
			defer func() {
				if r := recover(); r == nil {
					t.Errorf("Profile(0, %v, %v) did not panic", c.sigma, c.gamma)
				}
			}()
			Profile(0, c.sigma, c.gamma)
		}()
	}
}

func BenchmarkProfileDeriv(b *testing.B) {
	// A Balmer-like line: σ = 0.01 nm, γ = 0.02 nm, 200 pixels of 0.002 nm.
	const n = 200
	var sum float64
	for b.Loop() {
		for i := range n {
			v, dx, ds, dg := ProfileDeriv(float64(i-n/2)*0.002, 0.01, 0.02)
			sum += v + dx + ds + dg
		}
	}
	b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N*n), "ns/point")
	_ = sum
}
