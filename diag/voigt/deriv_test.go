package voigt

import (
	"math"
	"testing"
)

// TestDerivMatchesProfileDeriv: Deriv.At gives ProfileDeriv's four
// values bit for bit, over Gaussian, Lorentzian, Voigt and degenerate
// widths and offsets from the core to the far wings (every branch of
// Faddeeva), and NewDeriv panics where ProfileDeriv does.
func TestDerivMatchesProfileDeriv(t *testing.T) {
	widths := []float64{0, 1e-300, 1e-6, 0.003, 0.01, 0.149, 0.35, 1, 7.5, 1e3, math.Inf(1)}
	same := func(a, b float64) bool {
		return math.Float64bits(a) == math.Float64bits(b) || math.IsNaN(a) && math.IsNaN(b)
	}
	n := 0
	for _, sigma := range widths {
		for _, gamma := range widths {
			d := NewDeriv(sigma, gamma)
			for _, scale := range []float64{1e-3, 0.07, 0.5, 1, 2.3, 6, 9.7, 40, 1e4} {
				for _, u := range []float64{0, 0.3, 1, 1.7, 2.6, 4, 5.9, 8.2, 11, 30, math.NaN()} {
					for _, sign := range []float64{1, -1} {
						x := sign * u * scale * (sigma + gamma + 1e-3)
						v0, x0, s0, g0 := ProfileDeriv(x, sigma, gamma)
						v1, x1, s1, g1 := d.At(x)
						if !same(v0, v1) || !same(x0, x1) || !same(s0, s1) || !same(g0, g1) {
							t.Fatalf("σ=%g γ=%g x=%g: At (%v %v %v %v), ProfileDeriv (%v %v %v %v)",
								sigma, gamma, x, v1, x1, s1, g1, v0, x0, s0, g0)
						}
						n++
					}
				}
			}
		}
	}
	if n < 10000 {
		t.Fatalf("only %d points compared", n)
	}
	for _, w := range [][2]float64{{-1, 0.1}, {0.1, -1}, {math.NaN(), 0.1}, {0.1, math.NaN()}} {
		func() {
			defer func() {
				if recover() == nil {
					t.Errorf("NewDeriv(%v, %v) did not panic", w[0], w[1])
				}
			}()
			NewDeriv(w[0], w[1])
		}()
	}
}
