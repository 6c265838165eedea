package diag

import (
	"math"
	"testing"
)

// fwhaReference is an independent slow evaluation of the FWHA: adaptive
// Simpson quadrature of the central mass over the Gaussian variable and
// bisection on h.
func fwhaReference(wG, wL float64) float64 {
	sigma := wG / (2 * math.Sqrt(2*math.Ln2))
	gamma := wL / 2
	mass := func(h float64) float64 {
		f := func(g float64) float64 {
			return math.Exp(-g*g/(2*sigma*sigma)) / (sigma * math.Sqrt(2*math.Pi)) *
				(math.Atan((h-g)/gamma) + math.Atan((h+g)/gamma)) / math.Pi
		}
		lim := 12 * sigma
		var sum float64
		const k = 48
		for i := range k {
			a := -lim + 2*lim*float64(i)/k
			b := a + 2*lim/k
			sum += simpson(f, a, b, 1e-14, 40)
		}
		return sum
	}
	lo, hi := 0.0, 0.6745*sigma+gamma
	for mass(hi) < 0.5 {
		lo, hi = hi, 2*hi
	}
	for range 200 {
		mid := (lo + hi) / 2
		if mass(mid) < 0.5 {
			lo = mid
		} else {
			hi = mid
		}
		if hi-lo < 1e-13*hi {
			break
		}
	}
	return lo + hi
}

func simpson(f func(float64) float64, a, b, tol float64, depth int) float64 {
	m := (a + b) / 2
	fa, fm, fb := f(a), f(m), f(b)
	return simpsonStep(f, a, b, fa, fm, fb, (b-a)/6*(fa+4*fm+fb), tol, depth)
}

func simpsonStep(f func(float64) float64, a, b, fa, fm, fb, whole, tol float64, depth int) float64 {
	m := (a + b) / 2
	lm, rm := (a+m)/2, (m+b)/2
	flm, frm := f(lm), f(rm)
	left := (m - a) / 6 * (fa + 4*flm + fm)
	right := (b - m) / 6 * (fm + 4*frm + fb)
	if depth <= 0 || math.Abs(left+right-whole) <= 15*tol {
		return left + right + (left+right-whole)/15
	}
	return simpsonStep(f, a, m, fa, flm, fm, left, tol/2, depth-1) + simpsonStep(f, m, b, fm, frm, fb, right, tol/2, depth-1)
}

// TestFWHAAgainstReference compares the fast FWHA with the slow adaptive
// reference over the whole range of Lorentzian fractions, including the
// switch between the two quadratures at γ = σ.
func TestFWHAAgainstReference(t *testing.T) {
	for _, ratio := range []float64{1e-3, 0.01, 0.1, 0.3, 0.5, 0.84, 0.85, 0.86, 1, 2, 5, 20, 100, 1000} {
		wG := 1.0
		wL := ratio * wG
		got, want := FWHAFromVoigtExact(wG, wL), fwhaReference(wG, wL)
		if r := math.Abs(got-want) / want; r > 1e-6 {
			t.Errorf("wL/wG = %g: FWHA %.12f, reference %.12f (rel %.2g)", ratio, got, want, r)
		}
	}
}

// TestFWHATable: the interpolated FWHA agrees with the exact one between
// the table nodes (at 1000 Lorentzian fractions), and the limits hold.
func TestFWHATable(t *testing.T) {
	worst := 0.0
	for k := range 1000 {
		rho := (float64(k) + 0.5) / 1000
		wG, wL := 0.3*(1-rho), 0.3*rho
		got, want := FWHAFromVoigt(wG, wL), FWHAFromVoigtExact(wG, wL)
		worst = math.Max(worst, math.Abs(got-want)/want)
	}
	if worst > 1e-6 {
		t.Errorf("worst relative error of the table %.2g > 1e-6", worst)
	}
	// Pure Gaussian: 2·0.67449σ = 0.572858·FWHM; pure Lorentzian: FWHM.
	if g := FWHAFromVoigt(1, 0); math.Abs(g-0.5728582) > 1e-6 {
		t.Errorf("Gaussian FWHA %.7f, want 0.5728582", g)
	}
	if l := FWHAFromVoigt(0, 0.7); l != 0.7 {
		t.Errorf("Lorentzian FWHA %g, want 0.7", l)
	}
}

func BenchmarkFWHAExact(b *testing.B) {
	for b.Loop() {
		FWHAFromVoigtExact(0.35, 0.6)
	}
}

func BenchmarkFWHA(b *testing.B) {
	for b.Loop() {
		FWHAFromVoigt(0.35, 0.6)
	}
}
