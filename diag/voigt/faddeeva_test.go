package voigt

import (
	"bufio"
	"fmt"
	"math"
	"math/cmplx"
	"os"
	"strconv"
	"strings"
	"testing"
)

// readCSV reads a numeric CSV file written by testdata/scipy/voigt_ref.py:
// '#' lines are provenance comments, the first other line is the column
// header, and every further line holds len(header) floats.
func readCSV(tb testing.TB, path string) (header []string, rows [][]float64) {
	tb.Helper()
	f, err := os.Open(path)
	if err != nil {
		tb.Fatalf("reference data missing (run /usr/bin/python3 testdata/scipy/voigt_ref.py): %v", err)
	}
	defer f.Close()
	sc := bufio.NewScanner(f)
	for sc.Scan() {
		line := strings.TrimSpace(sc.Text())
		if line == "" || strings.HasPrefix(line, "#") {
			continue
		}
		fields := strings.Split(line, ",")
		if header == nil {
			header = fields
			continue
		}
		if len(fields) != len(header) {
			tb.Fatalf("%s: %q: want %d fields", path, line, len(header))
		}
		row := make([]float64, len(fields))
		for i, s := range fields {
			v, err := strconv.ParseFloat(s, 64)
			if err != nil {
				tb.Fatalf("%s: %v", path, err)
			}
			row[i] = v
		}
		rows = append(rows, row)
	}
	if err := sc.Err(); err != nil {
		tb.Fatal(err)
	}
	return header, rows
}

// relErr is |got − want|/|want|, or |got| when want is zero (values that
// underflow, such as Re w(±30) = exp(−900)).
func relErr(got, want float64) float64 {
	if want == 0 {
		return math.Abs(got)
	}
	return math.Abs(got-want) / math.Abs(want)
}

// worst tracks the largest error seen in one region and where it occurred.
type worst struct {
	name  string
	tol   float64
	err   float64
	where string
	n     int
}

func (w *worst) add(err float64, where string) {
	w.n++
	if err > w.err || math.IsNaN(err) {
		w.err, w.where = err, where
	}
}

func (w *worst) check(t *testing.T) {
	t.Helper()
	t.Logf("%-44s %5d points, worst %.2e at %s", w.name, w.n, w.err, w.where)
	if !(w.err <= w.tol) {
		t.Errorf("%s: worst error %.3e at %s exceeds %.1e", w.name, w.err, w.where, w.tol)
	}
}

// TestFaddeevaValues checks the reference values of physics.md §6
// (mpmath at 30 digits, agreeing with scipy.special.wofz to ≤ 7e-15).
func TestFaddeevaValues(t *testing.T) {
	t.Parallel()
	for _, test := range []struct {
		z, want complex128
		tol     float64
	}{
		// physics.md §6, mpmath 30 digits / scipy docs.
		{1 + 1i, 0.30474420525691259 + 0.20821893820283163i, 1e-13},
		{1i, 0.42758357615580700, 1e-13}, // erfcx(1)
		{1 + 0.5i, 0.35490033286757783 + 0.34287171913110075i, 1e-13},
		{2 + 0.1i, 0.04020139816145130 + 0.33158268733456315i, 1e-13},
		{5 + 0.01i, 2.4080339195118e-4 + 0.11524544620269582i, 1e-12}, // Re given to 14 digits
		// Analytic: w(0) = 1, w(x) = exp(−x²) + i(2/√π)F(x).
		{0, 1, 1e-15},
	} {
		got := Faddeeva(test.z)
		if e := relErr(real(got), real(test.want)); e > test.tol {
			t.Errorf("Re Faddeeva(%v) = %.17g, want %.17g (rel err %.2e)", test.z, real(got), real(test.want), e)
		}
		if e := relErr(imag(got), imag(test.want)); e > test.tol {
			t.Errorf("Im Faddeeva(%v) = %.17g, want %.17g (rel err %.2e)", test.z, imag(got), imag(test.want), e)
		}
	}
	// H(a, v) = Re w(v + ia), physics.md §6 (mpmath, quoted to 12 decimal
	// places, hence the absolute tolerance of half a unit in the last place).
	for _, test := range []struct{ a, v, want float64 }{
		{0.5, 0, 0.615690344193},
		{0.1, 1, 0.373170148311},
		{0.01, 2, 0.020620065446},
	} {
		got := real(Faddeeva(complex(test.v, test.a)))
		if e := math.Abs(got - test.want); e > 5e-13 {
			t.Errorf("H(%v, %v) = %.15g, want %.12g", test.a, test.v, got, test.want)
		}
	}
}

// region classifies a reference point for error reporting.
func region(x, y float64) string {
	ax := math.Abs(x)
	switch {
	case y < 0:
		return "y < 0 (error relative to |w|)"
	case x*x+y*y >= asymR2:
		return "y >= 0, |z| >= 8 (asymptotic)"
	case math.Abs(y) < stripY && ax >= stripX:
		return "y >= 0, |y| < 0.1, |x| >= 2.5 (strip)"
	default:
		return "y >= 0, |z| < 8 (Weideman)"
	}
}

// TestFaddeevaScipy compares Faddeeva with scipy.special.wofz on the grid of
// testdata/scipy/wofz.csv (see the provenance header there) and with mpmath
// at 40 digits on testdata/scipy/wofz_mpmath.csv.
func TestFaddeevaScipy(t *testing.T) {
	t.Parallel()
	for _, file := range []string{"wofz.csv", "wofz_mpmath.csv"} {
		_, rows := readCSV(t, "../../testdata/scipy/"+file)
		regions := map[string]*worst{}
		var order []string
		get := func(name string, tol float64) *worst {
			w, ok := regions[name]
			if !ok {
				w = &worst{name: name, tol: tol}
				regions[name] = w
				order = append(order, name)
			}
			return w
		}
		for _, r := range rows {
			x, y, want := r[0], r[1], complex(r[2], r[3])
			got := Faddeeva(complex(x, y))
			where := fmt.Sprintf("z = %g%+gi: got %.17g%+.17gi, want %.17g%+.17gi", x, y, real(got), imag(got), real(want), imag(want))
			name := region(x, y)
			if y < 0 {
				get(name, 1e-12).add(cmplx.Abs(got-want)/cmplx.Abs(want), where)
				continue
			}
			// Both parts relative, the demanding measure for Re w near the
			// real axis where Re w ≪ |w|.
			get("Re "+name, 1e-9).add(relErr(real(got), real(want)), where)
			get("Im "+name, 1e-9).add(relErr(imag(got), imag(want)), where)
		}
		t.Logf("%s:", file)
		for _, name := range order {
			regions[name].check(t)
		}
	}
}

// TestFaddeevaSymmetry checks w(−z̄) = conj w(z) and, in the upper half plane
// away from overflow, the reflection w(z) + w(−z) = 2 exp(−z²) (Abramowitz &
// Stegun 7.1.11).
func TestFaddeevaSymmetry(t *testing.T) {
	t.Parallel()
	for _, z := range []complex128{0.3 + 0.2i, 3 + 0.05i, 6 + 1e-5i, 2 - 0.5i, 10 + 3i, 1e3 + 1i, 0.5 + 50i} {
		a := Faddeeva(z)
		b := Faddeeva(complex(-real(z), imag(z)))
		if a != cmplx.Conj(b) {
			t.Errorf("w(%v) = %v, conj w(−z̄) = %v", z, a, cmplx.Conj(b))
		}
		s := a + Faddeeva(-z)
		e := 2 * cmplx.Exp(-z*z)
		if d := cmplx.Abs(s - e); d > 1e-12*(cmplx.Abs(e)+cmplx.Abs(a)) {
			t.Errorf("w(z) + w(−z) − 2exp(−z²) = %v at z = %v", s-e, z)
		}
	}
}

// TestFaddeevaSpecial checks NaN propagation, large arguments and the
// real-axis identity Re w(x) = exp(−x²) (exact by construction).
func TestFaddeevaSpecial(t *testing.T) {
	t.Parallel()
	if w := Faddeeva(complex(math.NaN(), 1)); !cmplx.IsNaN(w) {
		t.Errorf("Faddeeva(NaN+1i) = %v, want NaN", w)
	}
	for _, x := range []float64{0.5, 2.6, 4, 5.5, 7.9, 8.1, 20} {
		if got, want := real(Faddeeva(complex(x, 0))), math.Exp(-x*x); relErr(got, want) > 1e-14 {
			t.Errorf("Re w(%v) = %g, want exp(−x²) = %g", x, got, want)
		}
	}
	// Leading asymptotic term w ≈ i/(√π z) for huge |z|.
	for _, z := range []complex128{1e10 + 1i, 1e200 + 1e180i, 3e5i} {
		got, want := Faddeeva(z), 1i/(sqrtPi*z)
		if cmplx.Abs(got-want) > 1e-9*cmplx.Abs(want) {
			t.Errorf("Faddeeva(%v) = %v, want ≈ %v", z, got, want)
		}
	}
	if w := Faddeeva(complex(math.Inf(1), 0)); w != 0 {
		t.Errorf("Faddeeva(+Inf) = %v, want 0", w)
	}
}

func BenchmarkFaddeeva(b *testing.B) {
	for _, bc := range []struct {
		name string
		z    complex128
	}{
		{"Weideman", 1.3 + 0.7i},
		{"Strip", 4.1 + 0.01i},
		{"Asymptotic8", 8.1 + 0.5i},
		{"Asymptotic12", 12 + 0.5i},
		{"Asymptotic30", 30 + 0.5i},
	} {
		b.Run(bc.name, func(b *testing.B) {
			var s complex128
			for b.Loop() {
				s += Faddeeva(bc.z)
			}
			_ = s
		})
	}
}
