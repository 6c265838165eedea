package calib

import (
	"math"
	"testing"

	"glowlog/diag"
)

func relDiff(got, want float64) float64 {
	if want == 0 {
		return math.Abs(got)
	}
	return math.Abs(got-want) / math.Abs(want)
}

func TestRadiationConstants(t *testing.T) {
	t.Parallel()
	for _, tc := range []struct {
		name      string
		got, want float64
		tol       float64 // relative
	}{
		// physics.md §7 [C]: c₁ = 2hc² = 1.19104e-16 W m² sr⁻¹ (6 digits
		// quoted, so rel 5e-6).
		{"c1", PlanckC1, 1.19104e-16, 5e-6},
		// physics.md §7 [C]: c₂ = hc/k_B = 1.438777e-2 m K (7 digits).
		{"c2", PlanckC2, 1.438777e-2, 5e-7},
	} {
		if d := relDiff(tc.got, tc.want); d > tc.tol {
			t.Errorf("%s = %.10g, want %.10g (rel diff %.2g > %.2g)", tc.name, tc.got, tc.want, d, tc.tol)
		}
	}
}

// TestPlanckRatios checks the physics.md §7 check values [C] (computed
// there with Python/scipy CODATA 2018 constants). They are quoted to five
// decimals, so the tolerance is half a unit in the last place.
func TestPlanckRatios(t *testing.T) {
	t.Parallel()
	const hb, ha = 486.135, 656.279 // nm, the §7 check wavelengths
	for _, tc := range []struct {
		tempK  float64
		photon bool
		want   float64
		tol    float64 // absolute
	}{
		{3000, false, 0.34722, 5e-6}, // physics.md §7 [C]
		{2856, false, 0.30527, 5e-6}, // physics.md §7 [C]
		{3000, true, 0.25720, 5e-6},  // physics.md §7 [C], photon units
	} {
		f := PlanckRadianceNM
		if tc.photon {
			f = PlanckPhotonRadianceNM
		}
		got := f(hb, tc.tempK) / f(ha, tc.tempK)
		if d := math.Abs(got - tc.want); d > tc.tol {
			t.Errorf("B(%g)/B(%g) at %g K (photon=%v) = %.7f, want %.5f ± %g", hb, ha, tc.tempK, tc.photon, got, tc.want, tc.tol)
		}
	}
}

// TestPlanckLimits checks Planck's law against its analytic limits and the
// Wien displacement law, none of which is used in the implementation.
func TestPlanckLimits(t *testing.T) {
	t.Parallel()
	// Rayleigh–Jeans: B_λ → 2ckT/λ⁴ for c₂/(λT) → 0. At λ = 1e6 nm and
	// T = 1e5 K, x = 1.4e-4 and the relative correction is x/2 ≈ 7e-5.
	l, T := 1e6, 1e5
	rj := 2 * diag.SpeedOfLight * diag.Boltzmann * T / math.Pow(l*1e-9, 4) * 1e-9
	x := PlanckC2 / (l * 1e-9 * T)
	if d := relDiff(PlanckRadianceNM(l, T), rj*(1-x/2)); d > 1e-8 {
		t.Errorf("Rayleigh–Jeans limit: rel diff %g", d)
	}
	// Wien: B_λ → c₁/λ⁵ exp(−x) for x ≫ 1 (x ≈ 48 at 300 nm, 1000 K).
	l, T = 300, 1000
	x = PlanckC2 / (l * 1e-9 * T)
	w := PlanckC1 / math.Pow(l*1e-9, 5) * math.Exp(-x) * 1e-9
	if d := relDiff(PlanckRadianceNM(l, T), w); d > 1e-14 { // the exact relative difference is ≈ e^−x ≈ 1e-21
		t.Errorf("Wien limit: rel diff %g", d)
	}
	// Displacement law: the maximum of B_λ is at λT = c₂/x₀ where x₀
	// solves x = 5(1 − e^−x); find x₀ by fixed-point iteration and the
	// maximum by golden-section search.
	x0 := 5.0
	for range 100 {
		x0 = 5 * (1 - math.Exp(-x0))
	}
	T = 2856
	a, b := 500.0, 2000.0
	g := (math.Sqrt(5) - 1) / 2
	for range 200 {
		c, d := b-g*(b-a), a+g*(b-a)
		if PlanckRadianceNM(c, T) > PlanckRadianceNM(d, T) {
			b = d
		} else {
			a = c
		}
	}
	peak := 0.5 * (a + b)
	want := PlanckC2 / x0 / T * 1e9
	if d := relDiff(peak, want); d > 1e-6 {
		t.Errorf("Wien peak at %g K: %.6f nm, want %.6f nm", T, peak, want)
	}
}

func TestPlanckPanics(t *testing.T) {
	t.Parallel()
	for _, tc := range []struct{ l, T float64 }{{0, 3000}, {500, 0}, {-1, 3000}, {math.NaN(), 3000}, {500, math.Inf(1)}} {
		func() {
			defer func() {
				if recover() == nil {
					t.Errorf("PlanckRadianceNM(%g, %g) did not panic", tc.l, tc.T)
				}
			}()
			PlanckRadianceNM(tc.l, tc.T)
		}()
	}
}
