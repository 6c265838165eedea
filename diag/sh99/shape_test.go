package sh99

import (
	"math"
	"testing"

	"gonum.org/v1/gonum/integrate/quad"
)

// TestShapeCumulative checks Shape against Profile, computed
// independently of it: the cumulative integral against adaptive-free
// Gauss–Legendre quadrature of Profile between off-node detunings
// (gonum's fixed-order rule on many sub-intervals), the density (the
// Hermite derivative) against Profile itself, the total area, and the ln
// n_e derivative against a central difference of Cumulative.
func TestShapeCumulative(t *testing.T) {
	cases := []struct {
		upper  int
		ne, tk float64
	}{
		{3, 3.7e21, 1e4}, {4, 2.3e20, 1e4}, {4, 6.1e22, 1.3e4}, {5, 1.7e21, 8000}, {6, 4.4e21, 1e4},
		{7, 9.1e20, 1e4}, {4, 1e21, 1e4}, // on a density node
	}
	for _, c := range cases {
		l, err := Balmer(c.upper)
		if err != nil {
			t.Fatal(err)
		}
		s, err := l.Shape(c.ne, c.tk)
		if err != nil {
			t.Fatalf("n=%d: %v", c.upper, err)
		}
		w := s.FWHMNM()
		if tw, _ := l.TableWidthNM(FWHM, c.ne, c.tk); math.Abs(tw/w-1) > 1e-12 {
			t.Errorf("n=%d: FWHM %g, TableWidthNM %g", c.upper, w, tw)
		}
		prof := func(d float64) float64 { v, _ := l.Profile(d, c.ne, c.tk); return v }
		// Integral from −w/3 outwards in sub-intervals of w/20 up to 8w.
		a := -w / 3
		acc := s.Cumulative(a)
		var worst, worstP float64
		for k := 1; k <= 160; k++ {
			b := a + w/20
			acc += quad.Fixed(prof, a, b, 12, quad.Legendre{}, 0)
			worst = math.Max(worst, math.Abs(acc-s.Cumulative(b)))
			a = b
		}
		// 1e-5 of the area: the nodes' own cumulative (8-point
		// Gauss–Legendre per tabulated segment, nodeProfile.cumAt) agrees
		// with the fine quadrature of Profile to a few 1e-6.
		if worst > 1e-5 {
			t.Errorf("n=%d n_e=%g: cumulative off the integral of Profile by %.2g", c.upper, c.ne, worst)
		}
		// Density: the derivative of the cumulative (by a small central
		// difference) against Profile.
		for _, f := range []float64{0, 0.13, 0.37, 0.5, 0.9, 2.3, 7.7, 40} {
			d := f * w
			hh := w * 1e-4
			num := (s.Cumulative(d+hh) - s.Cumulative(d-hh)) / (2 * hh)
			p := prof(d)
			worstP = math.Max(worstP, math.Abs(num/p-1))
			c1, p1, dc1 := s.Eval(d)
			c2, dc2 := s.CumulativeDeriv(d)
			worstP = math.Max(worstP, math.Abs(p1/p-1))
			if c1 != c2 || dc1 != dc2 {
				t.Errorf("n=%d: Eval and CumulativeDeriv differ at %g", c.upper, d)
			}
		}
		if worstP > 1e-4 {
			t.Errorf("n=%d n_e=%g: d(cumulative)/dλ off Profile by %.2g relative", c.upper, c.ne, worstP)
		}
		if v := s.Cumulative(1e6 * w); math.Abs(v-1) > 1e-6 {
			t.Errorf("n=%d: total area %v", c.upper, v)
		}
		if v := s.Cumulative(0); v != 0.5 {
			t.Errorf("n=%d: C(0) = %v", c.upper, v)
		}
		// ln n_e derivative (off-node cases only: at a node the central
		// difference straddles a kink).
		if c.ne == 1e21 {
			continue
		}
		const e = 1e-5
		sp, _ := l.Shape(c.ne*math.Exp(e), c.tk)
		sm, _ := l.Shape(c.ne*math.Exp(-e), c.tk)
		for _, f := range []float64{-3, -0.6, -0.2, 0.1, 0.45, 1.5, 12} {
			d := f * w
			_, an := s.CumulativeDeriv(d)
			num := (sp.Cumulative(d) - sm.Cumulative(d)) / (2 * e)
			if math.Abs(an-num) > 1e-5+1e-3*math.Abs(num) {
				t.Errorf("n=%d n_e=%g Δλ=%g: dC/dln n_e %g, central difference %g", c.upper, c.ne, d, an, num)
			}
		}
	}
}

// TestShapeOutOfRange: the same errors as Profile.
func TestShapeOutOfRange(t *testing.T) {
	l, _ := Balmer(4)
	if _, err := l.Shape(1e27, 1e4); err == nil {
		t.Error("no error above the tables")
	}
	if _, err := l.Shape(-1, 1e4); err == nil {
		t.Error("no error for n_e < 0")
	}
}

func BenchmarkShapeCumulativeDeriv(b *testing.B) {
	l, _ := Balmer(4)
	s, _ := l.Shape(2.3e21, 1e4)
	w := s.FWHMNM()
	var sink float64
	for i := 0; b.Loop(); i++ {
		c, d := s.CumulativeDeriv(w * float64(i%200-100) / 17)
		sink += c + d
	}
	_ = sink
}

// TestShapeHalfFactors: Half (per-corner factors prepared once, each
// table cell's Hermite interpolant as a polynomial in Horner form, the
// density by multiplication with the inverse cell width) gives the
// value, density and ln n_e derivative of the formulas it replaces (the
// factors multiplied out per call, the Hermite basis functions applied
// to the tabulated values and slopes, the density divided by the cell
// width) to rounding, 1e-13 of the largest of each over the profile (the
// two differ by ~3e-14: the cumulative's values near ½ carry 1e-16, which
// the far wing's slopes magnify), at and between nodes of n_e and T, from
// the centre to beyond the dense tables; and Eval agrees with Half on
// either side.
func TestShapeHalfFactors(t *testing.T) {
	ref := func(s *Shape, d float64) (v, p, dv float64) {
		for i := range s.n {
			x := d * s.scale[i]
			tb := s.tab[i]
			var cc, pp float64
			if x >= tb.xMax {
				cc, pp = s.node[i].cumAt(x), s.node[i].at(x)
			} else {
				cc, pp = refCumTable(tb, x)
			}
			v += s.wgt[i] * s.norm[i] * cc
			p += s.wgt[i] * s.norm[i] * pp * s.scale[i]
			dv += s.norm[i] * (s.dwgt[i]*cc - s.wgt[i]*pp*x*s.dlnW)
		}
		return v, p, dv
	}
	n := 0
	for _, up := range []int{3, 4, 6} {
		l, err := Balmer(up)
		if err != nil {
			t.Fatal(err)
		}
		for _, c := range []struct{ ne, tk float64 }{{1e21, 1e4}, {2.3e21, 1e4}, {3.7e21, 13000}, {1e22, 7000}} {
			s, err := l.Shape(c.ne, c.tk)
			if err != nil {
				continue
			}
			w := s.FWHMNM()
			type trip struct{ v, p, dv float64 }
			var got, want []trip
			var bv, bp, bd float64
			for k := range 400 {
				d := w * 1e-3 * math.Pow(1.04, float64(k)) // to ~1e4 widths
				v, p, dv := s.Half(d)
				rv, rp, rdv := ref(&s, d)
				got, want = append(got, trip{v, p, dv}), append(want, trip{rv, rp, rdv})
				bv, bp, bd = math.Max(bv, math.Abs(rv)), math.Max(bp, math.Abs(rp)), math.Max(bd, math.Abs(rdv))
				for _, sg := range []float64{1, -1} {
					c, pe, dc := s.Eval(sg * d)
					if c != 0.5+sg*v || pe != p || dc != sg*dv {
						t.Fatalf("n=%d: Eval(%g) differs from Half", up, sg*d)
					}
				}
				n++
			}
			for k := range got {
				if math.Abs(got[k].v-want[k].v) > 1e-13*bv || math.Abs(got[k].p-want[k].p) > 1e-13*bp || math.Abs(got[k].dv-want[k].dv) > 1e-13*bd {
					t.Errorf("n=%d n_e=%g T=%g point %d: Half %+v, formula %+v", up, c.ne, c.tk, k, got[k], want[k])
				}
			}
		}
	}
	if n == 0 {
		t.Fatal("no shape checked")
	}
}

// refCumTable is cumTable.eval as it was: the cubic Hermite basis
// functions applied to the tabulated values and slopes, the density
// divided by the cell width.
func refCumTable(t *cumTable, x float64) (c, p float64) {
	s := x * t.inv0
	var i int
	var hh, u float64
	if s < 1 {
		i, hh, u = 0, t.x0, s
	} else {
		b := math.Float64bits(s)
		o := int(b>>52&0x7ff) - 1023
		m := b & (1<<52 - 1)
		sub := int(m >> (52 - cumTabShift))
		rest := m & (1<<(52-cumTabShift) - 1)
		i = 1 + o<<cumTabShift + sub
		hh = t.x0 * math.Float64frombits(uint64(o+1023)<<52) / cumTabPerOctave
		u = float64(rest) / (1 << (52 - cumTabShift))
	}
	c0, c1 := t.c[i], t.c[i+1]
	d0, d1 := t.p[i]*hh, t.p[i+1]*hh
	u2 := u * u
	u3 := u2 * u
	c = (2*u3-3*u2+1)*c0 + (u3-2*u2+u)*d0 + (-2*u3+3*u2)*c1 + (u3-u2)*d1
	dc := (6*u2-6*u)*c0 + (3*u2-4*u+1)*d0 + (-6*u2+6*u)*c1 + (3*u2-2*u)*d1
	return c, dc / hh
}

// TestShapeBatchHalves: the batch forms (HalfValues, Halves: corner by
// corner over all detunings, the table lookup inlined) give Half's and
// HalfValue's v, p and dv bit for bit, at and between nodes of n_e and
// T (two or four corners), from the centre through the dense tables to
// beyond them (the power-law wings), at detunings in any order.
func TestShapeBatchHalves(t *testing.T) {
	n, far := 0, 0
	for _, up := range []int{3, 4, 6} {
		l, err := Balmer(up)
		if err != nil {
			t.Fatal(err)
		}
		for _, c := range []struct{ ne, tk float64 }{{1e21, 1e4}, {2.3e21, 1e4}, {3.7e21, 13000}, {1e22, 7000}, {3e21, 20000}} {
			s, err := l.Shape(c.ne, c.tk)
			if err != nil {
				continue
			}
			w := s.FWHMNM()
			var ds []float64
			for k := range 600 {
				ds = append(ds, w*1e-4*math.Pow(1.05, float64(k))) // to ~5e8 widths
			}
			ds = append(ds, 0, 3*w, 0.5*w)
			v, p, dv := make([]float64, len(ds)), make([]float64, len(ds)), make([]float64, len(ds))
			v2, p2 := make([]float64, len(ds)), make([]float64, len(ds))
			s.Halves(ds, v, p, dv)
			s.HalfValues(ds, v2, p2)
			for k, d := range ds {
				rv, rp, rdv := s.Half(d)
				hv, hp := s.HalfValue(d)
				if math.Float64bits(v[k]) != math.Float64bits(rv) || math.Float64bits(p[k]) != math.Float64bits(rp) || math.Float64bits(dv[k]) != math.Float64bits(rdv) {
					t.Fatalf("n=%d n_e=%g T=%g d=%g: Halves (%v %v %v), Half (%v %v %v)", up, c.ne, c.tk, d, v[k], p[k], dv[k], rv, rp, rdv)
				}
				if math.Float64bits(v2[k]) != math.Float64bits(hv) || math.Float64bits(p2[k]) != math.Float64bits(hp) {
					t.Fatalf("n=%d n_e=%g T=%g d=%g: HalfValues (%v %v), HalfValue (%v %v)", up, c.ne, c.tk, d, v2[k], p2[k], hv, hp)
				}
				for i := range s.n {
					if d*s.scale[i] >= s.tab[i].xMax {
						far++
					}
				}
				n++
			}
		}
	}
	if n == 0 || far == 0 {
		t.Fatalf("not covered: %d points, %d beyond the dense tables", n, far)
	}
}
