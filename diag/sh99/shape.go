package sh99

import "math"

// Shape is the interpolated profile of a line at one (n_e, T), prepared
// for fast repeated evaluation of its cumulative integral and of that
// integral's derivative with respect to ln n_e: the building block of a
// whole-profile fit, which needs the area of the profile between pixel
// (or fine-grid) edges many times per iteration.
//
// It is the same interpolation as Profile (the width-scaled bilinear
// average of the four surrounding node profiles, see the package doc):
//
//	p(Δλ) = Σ_c w_c (W_c/W) p̂_c(Δλ·W_c/W),
//
// so its cumulative integral is exactly
//
//	C(Δλ) = ½ + sign(Δλ) Σ_c w_c Ĉ_c(|Δλ|·W_c/W),
//
// with Ĉ_c the one-sided area of node profile c from the centre. Each
// node's Ĉ is tabulated once (on first use, then shared) on a dense grid
// in the reduced detuning x (uniform in the core, logarithmic in the
// wings: cumTable) together with its derivative, the node profile
// itself, and evaluated by cubic Hermite interpolation; beyond the dense
// grid the node's power-law wing is integrated analytically, so no area
// is lost however far the evaluation goes. Measured against Profile and its numerical integral in
// TestShapeCumulative.
//
// A Shape is a plain value; its methods do not allocate and are safe for
// concurrent use.
type Shape struct {
	n     int
	node  [4]*nodeProfile
	tab   [4]*cumTable
	wgt   [4]float64 // bilinear weight w_c
	dwgt  [4]float64 // d w_c / d ln n_e
	scale [4]float64 // W_c/W · x per nm at the corner: x = |Δλ|·scale
	norm  [4]float64 // 1/(2∫₀^∞P dx) at the corner
	// dlnW is d ln W / d ln n_e inside the cell.
	dlnW float64
	// Per-corner factors of Half: cv = w_c·norm, cp = cv·scale (of the
	// density), cd = norm·dw_c and ce = norm·w_c·dlnW (of the ln n_e
	// derivative).
	cv, cp, cd, ce [4]float64
	fwhm           float64
	upper          int
}

// Shape prepares the profile at (neM3, tK) for fast cumulative
// evaluation (see Shape). Outside the tabulated grid it returns an error
// wrapping ErrOutOfRange.
func (l *Line) Shape(neM3, tK float64) (Shape, error) {
	g := l.lw[FWHM][0]
	c, err := l.locate(neM3, tK, g, "profile")
	if err != nil {
		return Shape{}, err
	}
	dlne := l.lne[c.j+1] - l.lne[c.j]
	var s Shape
	var lW, dlW float64
	var js [4]int
	// Every corner of the cell that is tabulated, weights 0 included, so
	// that the derivative in ln n_e is one-sided-free at a node.
	for dj := range 2 {
		wj, dwj := 1-c.tj, -1/dlne
		if dj == 1 {
			wj, dwj = c.tj, 1/dlne
		}
		for dk := range 2 {
			wk := 1 - c.tk
			if dk == 1 {
				wk = c.tk
			}
			if wk == 0 {
				continue
			}
			j, k := c.j+dj, c.k+dk
			np, err := l.node(j, k)
			if err != nil {
				return Shape{}, err
			}
			if np == nil {
				// locate checked the corners of non-zero weight; a missing
				// corner of zero weight only loses the derivative there.
				continue
			}
			s.node[s.n] = np
			s.wgt[s.n] = wj * wk
			s.dwgt[s.n] = dwj * wk
			s.scale[s.n] = g[j][k] // ln W_c for now
			s.norm[s.n] = 0.5 / np.half
			s.tab[s.n] = np.cumTab()
			js[s.n] = j
			lW += wj * wk * g[j][k]
			dlW += dwj * wk * g[j][k]
			s.n++
		}
	}
	for i := range s.n {
		s.scale[i] = math.Exp(s.scale[i]-lW) * l.xPerNM[js[i]]
	}
	s.dlnW = dlW
	for i := range s.n {
		s.cv[i] = s.wgt[i] * s.norm[i]
		s.cp[i] = s.cv[i] * s.scale[i]
		s.cd[i] = s.norm[i] * s.dwgt[i]
		s.ce[i] = s.norm[i] * s.wgt[i] * s.dlnW
	}
	s.fwhm = math.Exp(lW)
	s.upper = l.upper
	return s, nil
}

// FWHMNM returns the interpolated FWHM W of the shape (the tables' width,
// Stark ⊗ Doppler at the tables' T), nm.
func (s *Shape) FWHMNM() float64 { return s.fwhm }

// Cumulative returns ∫_{−∞}^{dlNM} p(Δλ) dΔλ of the unit-area profile: 0
// far to the blue, ½ at the centre, 1 far to the red.
func (s *Shape) Cumulative(dlNM float64) float64 {
	c, _ := s.cum(dlNM, false)
	return c
}

// CumulativeDeriv returns Cumulative(dlNM) and its derivative with
// respect to ln n_e at fixed T (exact for the interpolation: the bilinear
// weights and the interpolated width are linear in ln n_e inside a grid
// cell; at a node the derivative is that of the cell above).
func (s *Shape) CumulativeDeriv(dlNM float64) (c, dcdLnNe float64) {
	return s.cum(dlNM, true)
}

// Eval returns Cumulative(dlNM), the profile p(dlNM) (its derivative in
// Δλ, nm⁻¹, from the same Hermite interpolant) and the derivative of the
// cumulative with respect to ln n_e, in one pass.
func (s *Shape) Eval(dlNM float64) (c, p, dcdLnNe float64) {
	v, p, dv := s.Half(math.Abs(dlNM))
	if dlNM < 0 {
		return 0.5 - v, p, -dv
	}
	return 0.5 + v, p, dv
}

// Half is Eval on one side: for d ≥ 0 (nm) it returns v = Cumulative(d)
// − ½ (the profile is even, so Cumulative(−d) = ½ − v), p(d) = p(−d),
// and dv, the derivative of v with respect to ln n_e (that of
// Cumulative(−d) is −dv): what Eval(±d) gives, bit for bit, from one
// evaluation.
func (s *Shape) Half(d float64) (v, p, dv float64) {
	for i := range s.n {
		x := d * s.scale[i]
		cc, pp := s.tab[i].eval(s.node[i], x)
		v += s.cv[i] * cc
		p += s.cp[i] * pp
		// ∂/∂ln n_e of w_c·Ĉ_c(d·W_c/W): the weight's change and the
		// argument's (d ln(W_c/W) = −d ln W).
		dv += s.cd[i]*cc - s.ce[i]*pp*x
	}
	return v, p, dv
}

// HalfValue is Half without the derivative in ln n_e (v and p the same,
// bit for bit).
func (s *Shape) HalfValue(d float64) (v, p float64) {
	for i := range s.n {
		x := d * s.scale[i]
		cc, pp := s.tab[i].eval(s.node[i], x)
		v += s.cv[i] * cc
		p += s.cp[i] * pp
	}
	return v, p
}

// HalfValues is HalfValue at every detuning of ds (each ≥ 0): v[k], p[k]
// are HalfValue(ds[k]), bit for bit (the same products summed in the
// same corner order), computed corner by corner over all detunings, the
// table lookup (cumTable.eval) inlined. v and p must be at least as
// long as ds.
func (s *Shape) HalfValues(ds, v, p []float64) {
	v, p = v[:len(ds)], p[:len(ds)]
	for k := range ds {
		v[k], p[k] = 0, 0
	}
	for i := range s.n {
		np, t := s.node[i], s.tab[i]
		sc, cv, cp := s.scale[i], s.cv[i], s.cp[i]
		inv0, xMax, tk := t.inv0, t.xMax, t.k
		for k, d := range ds {
			x := d * sc
			var cc, pp float64
			if x >= xMax {
				cc, pp = np.cumAt(x), np.at(x)
			} else {
				// cumTable.eval, inlined.
				s := x * inv0
				var j int
				var ih, u float64
				if s < 1 {
					j, ih, u = 0, inv0, s
				} else {
					b := math.Float64bits(s)
					o := int(b>>52&0x7ff) - 1023
					m := b & (1<<52 - 1)
					sub := int(m >> (52 - cumTabShift))
					rest := m & (1<<(52-cumTabShift) - 1)
					j = 1 + o<<cumTabShift + sub
					ih = inv0 * cumTabPerOctave * math.Float64frombits(uint64(1023-o)<<52)
					u = float64(rest) / (1 << (52 - cumTabShift))
				}
				c := tk[4*j : 4*j+4 : 4*j+4]
				cc = c[0] + u*(c[1]+u*(c[2]+u*c[3]))
				pp = (c[1] + u*(2*c[2]+u*3*c[3])) * ih
			}
			v[k] += cv * cc
			p[k] += cp * pp
		}
	}
}

// Halves is Half at every detuning of ds (each ≥ 0): v[k], p[k], dv[k]
// are Half(ds[k]), bit for bit, computed corner by corner as HalfValues.
func (s *Shape) Halves(ds, v, p, dv []float64) {
	v, p, dv = v[:len(ds)], p[:len(ds)], dv[:len(ds)]
	for k := range ds {
		v[k], p[k], dv[k] = 0, 0, 0
	}
	for i := range s.n {
		np, t := s.node[i], s.tab[i]
		sc, cv, cp, cd, ce := s.scale[i], s.cv[i], s.cp[i], s.cd[i], s.ce[i]
		inv0, xMax, tk := t.inv0, t.xMax, t.k
		for k, d := range ds {
			x := d * sc
			var cc, pp float64
			if x >= xMax {
				cc, pp = np.cumAt(x), np.at(x)
			} else {
				// cumTable.eval, inlined.
				s := x * inv0
				var j int
				var ih, u float64
				if s < 1 {
					j, ih, u = 0, inv0, s
				} else {
					b := math.Float64bits(s)
					o := int(b>>52&0x7ff) - 1023
					m := b & (1<<52 - 1)
					sub := int(m >> (52 - cumTabShift))
					rest := m & (1<<(52-cumTabShift) - 1)
					j = 1 + o<<cumTabShift + sub
					ih = inv0 * cumTabPerOctave * math.Float64frombits(uint64(1023-o)<<52)
					u = float64(rest) / (1 << (52 - cumTabShift))
				}
				c := tk[4*j : 4*j+4 : 4*j+4]
				cc = c[0] + u*(c[1]+u*(c[2]+u*c[3]))
				pp = (c[1] + u*(2*c[2]+u*3*c[3])) * ih
			}
			v[k] += cv * cc
			p[k] += cp * pp
			dv[k] += cd*cc - ce*pp*x
		}
	}
}

func (s *Shape) cum(dl float64, deriv bool) (float64, float64) {
	d := math.Abs(dl)
	var v, dv float64
	for i := range s.n {
		x := d * s.scale[i]
		cc, p := s.tab[i].eval(s.node[i], x)
		v += s.cv[i] * cc
		if deriv {
			// As Half.
			dv += s.cd[i]*cc - s.ce[i]*p*x
		}
	}
	if dl < 0 {
		return 0.5 - v, -dv
	}
	return 0.5 + v, dv
}

// cumTable is a node profile's one-sided cumulative area Ĉ(x) = ∫₀^x P
// on a dense grid for cubic Hermite interpolation with the profile P =
// dĈ/dx as slopes. The grid is one cell [0, x₀] (x₀ = x_c/64, where the
// profile is flat) followed by octaves [x₀2^o, x₀2^(o+1)), each cut into
// cumTabPerOctave equal cells: uniform near the centre, logarithmic in
// the wings, and located from the bits of x/x₀ without a logarithm.
type cumTable struct {
	x0, inv0 float64 // x₀ and 1/x₀
	xMax     float64
	c, p     []float64 // Ĉ and P at the nodes
	// k holds each cell's cubic Hermite interpolant as a polynomial in
	// the position u ∈ [0, 1) in the cell, a₀ + a₁u + a₂u² + a₃u³ (four
	// values a cell), evaluated by Horner's rule.
	k []float64
}

// cumTabPerOctave is the number of cells per octave (a power of two):
// the Hermite interpolant's density is then within 1e-4 of the profile
// (TestShapeCumulative).
const (
	cumTabShift     = 5
	cumTabPerOctave = 1 << cumTabShift
)

// cumTabSpan is how far beyond the last tabulated detuning the dense
// table reaches (factor in x); beyond it the power-law wing is
// integrated analytically (nodeProfile.cumAt).
const cumTabSpan = 100

// cumTab returns the node's dense cumulative table, built on first use.
func (np *nodeProfile) cumTab() *cumTable {
	np.tabOnce.Do(func() {
		x0 := np.xc / 64
		octaves := int(math.Ceil(math.Log2(np.x[len(np.x)-1] * cumTabSpan / x0)))
		n := 2 + octaves*cumTabPerOctave
		t := &cumTable{x0: x0, inv0: 1 / x0, c: make([]float64, n), p: make([]float64, n)}
		t.xMax = x0 * math.Ldexp(1, octaves)
		for i := range n {
			var x float64
			if i > 0 {
				k := i - 1
				o, sub := k>>cumTabShift, k&(cumTabPerOctave-1)
				x = x0 * math.Ldexp(1+float64(sub)/cumTabPerOctave, o)
			}
			t.c[i] = np.cumAt(x)
			t.p[i] = np.at(x)
		}
		t.k = make([]float64, 4*(n-1))
		for i := range n - 1 {
			hh := x0
			if i > 0 {
				hh = x0 * math.Ldexp(1, (i-1)>>cumTabShift) / cumTabPerOctave
			}
			c0, c1, d0, d1 := t.c[i], t.c[i+1], t.p[i]*hh, t.p[i+1]*hh
			dc := c1 - c0
			t.k[4*i], t.k[4*i+1], t.k[4*i+2], t.k[4*i+3] = c0, d0, 3*dc-2*d0-d1, d0+d1-2*dc
		}
		np.tab = t
	})
	return np.tab
}

// eval returns Ĉ(x) and P(x) for x ≥ 0.
func (t *cumTable) eval(np *nodeProfile, x float64) (c, p float64) {
	if x >= t.xMax {
		return np.cumAt(x), np.at(x)
	}
	s := x * t.inv0
	var i int
	var ih, u float64
	if s < 1 {
		i, ih, u = 0, t.inv0, s
	} else {
		// s = 2^o · (1 + m/2⁵²): octave o, cell from the top mantissa
		// bits, position in the cell from the rest.
		b := math.Float64bits(s)
		o := int(b>>52&0x7ff) - 1023
		m := b & (1<<52 - 1)
		sub := int(m >> (52 - cumTabShift))
		rest := m & (1<<(52-cumTabShift) - 1)
		i = 1 + o<<cumTabShift + sub
		ih = t.inv0 * cumTabPerOctave * math.Float64frombits(uint64(1023-o)<<52) // 1/(cell width)
		u = float64(rest) / (1 << (52 - cumTabShift))
	}
	k := t.k[4*i : 4*i+4 : 4*i+4]
	c = k[0] + u*(k[1]+u*(k[2]+u*k[3]))
	p = (k[1] + u*(2*k[2]+u*3*k[3])) * ih
	return c, p
}
