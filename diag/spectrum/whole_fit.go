package spectrum

import (
	"errors"
	"fmt"
	"math"

	"gonum.org/v1/gonum/stat/distuv"

	"glowlog/diag"
	"glowlog/diag/linefit"
	"glowlog/diag/sh99"
)

func aboveBelow(d float64) string {
	if d > 0 {
		return "above"
	}
	return "below"
}

// lineInst returns a line's instrument Gaussian FWHM and gas temperature
// under the parameters th.
func (f *wholeFitter) lineInst(l *wline, th []float64) (float64, float64) {
	g, tg := l.instG, f.gasT
	if f.par.iIa >= 0 {
		g = th[f.par.iIa] + th[f.par.iIb]*(l.center-f.par.lamMid)
	}
	if f.par.iTg >= 0 {
		tg = th[f.par.iTg]
	}
	return math.Max(g, 0), math.Max(tg, diag.MinGasTemperatureK)
}

// areaOf returns line k's area under th.
func (f *wholeFitter) areaOf(k int, th []float64) float64 {
	if f.par.free {
		return th[f.par.iA+k]
	}
	l := f.lines[k]
	return th[f.par.iS] * math.Exp(l.lnF-th[f.par.iB]*l.dE)
}

// evalLines evaluates every line's unit profile at th (and the kernel
// derivative l.dg when the gas temperature or the instrument is free).
func (f *wholeFitter) evalLines(th []float64) error {
	for _, l := range f.lines {
		if err := f.evalLineAt(l, th); err != nil {
			return err
		}
	}
	return nil
}

// evalLineAt is evalLines for one line.
func (f *wholeFitter) evalLineAt(l *wline, th []float64) error {
	g, tg := f.lineInst(l, th)
	if f.par.iTg >= 0 || f.par.iIa >= 0 {
		// Derivative in G_extra² by a one-sided difference of the
		// kernel alone.
		if err := f.evalLine(l, th[f.par.iNe], th[f.par.iOff], g, tg, true); err != nil {
			return err
		}
		e2 := l.extra2
		de := math.Max(0.02*e2, math.Pow(0.3*l.h, 2))
		f.convolve(l, math.Sqrt(e2+de), l.kernL(), true)
		f.pixels(l, th[f.par.iOff], true)
		l.dg = grow(&l.dg, len(l.u))
		copy(l.dg, l.u)
		f.convolve(l, math.Sqrt(e2), l.kernL(), true)
		f.pixels(l, th[f.par.iOff], true)
		for i := range l.dg {
			l.dg[i] = (l.dg[i] - l.u[i]) / de
		}
		// Where G_extra² is clamped at 0 the model is flat in G; the
		// one-sided difference above 0 still points the fit out of
		// the clamp (a flat column would leave it singular).
		return nil
	}
	return f.evalLine(l, th[f.par.iNe], th[f.par.iOff], g, tg, true)
}

// eval computes the model and the Jacobian at th and returns χ².
func (f *wholeFitter) eval(th []float64) (float64, error) {
	f.nEval++
	if err := f.evalLines(th); err != nil {
		return 0, err
	}
	return f.assemble(th)
}

// assemble builds the model and the Jacobian at th from the lines' unit
// profiles as last evaluated (at th's n_e, offset and widths) and
// returns χ².
func (f *wholeFitter) assemble(th []float64) (float64, error) {
	pr := f.par
	n := len(f.x)
	np := pr.n
	mod := f.model
	jac := f.jac
	// The baseline columns are the pixels' Legendre values whatever th:
	// written once per setup; the other columns are cleared.
	iBase, nBase := pr.iBase, pr.nBase
	if !f.jacBaseOK {
		if nBase == 4 && iBase == 4 && !f.generic {
			// Each row written whole (the same values as below).
			l0, l1, l2, l3 := f.leg[0][:n], f.leg[1][:n], f.leg[2][:n], f.leg[3][:n]
			for i := range l0 {
				*(*[8]float64)(jac[8*i : 8*i+8]) = [8]float64{0, 0, 0, 0, l0[i], l1[i], l2[i], l3[i]}
			}
		} else {
			for i := range jac {
				jac[i] = 0
			}
			for i := range n {
				for b := range nBase {
					jac[i*np+iBase+b] = f.leg[b][i]
				}
			}
		}
		f.jacBaseOK = true
	}
	if tb := th[iBase : iBase+nBase]; !f.generic && nBase == 4 && iBase == 4 {
		// The common case (Boltzmann areas, a cubic baseline: a survey),
		// in one pass over the pixels: the columns before the baseline
		// cleared, the baseline summed term by term from 0 (the same
		// sums as the loops below).
		mod = mod[:n]
		l0, l1, l2, l3 := f.leg[0][:n], f.leg[1][:n], f.leg[2][:n], f.leg[3][:n]
		t0, t1, t2, t3 := tb[0], tb[1], tb[2], tb[3]
		for i := range mod {
			*(*[4]float64)(jac[i*np : i*np+4]) = [4]float64{}
			mod[i] = cubicSum(t0, t1, t2, t3, l0[i], l1[i], l2[i], l3[i])
		}
	} else {
		for i := range n {
			for k := i * np; k < i*np+iBase; k++ {
				jac[k] = 0
			}
		}
		// The baseline, term by term over all pixels (each pixel's sum
		// in the same order, from 0).
		for i := range mod {
			mod[i] = 0
		}
		for b, t := range tb {
			lb := f.leg[b][:len(mod)]
			for i, v := range lb {
				mod[i] += t * v
			}
		}
	}
	for k, l := range f.lines {
		a := f.areaOf(k, th)
		g, tg := f.lineInst(l, th)
		var dE2dTg, dE2dG float64
		if pr.iTg >= 0 {
			dd := diag.DopplerFWHMNM(l.center, tg, f.mass)
			dE2dTg = dd * dd / tg
		}
		if pr.iIa >= 0 {
			dE2dG = 2 * g
		}
		// The per-line factors of the pixels' Jacobian entries (the same
		// products as per pixel, hoisted).
		var eS, eB float64
		if !pr.free {
			eS = a / math.Max(th[pr.iS], math.SmallestNonzeroFloat64)
			if th[pr.iS] == 0 {
				eS = math.Exp(l.lnF - th[pr.iB]*l.dE)
			}
			eB = -l.dE * a
		}
		us, dns, dus := l.u[:l.phi-l.plo], l.dn[:l.phi-l.plo], l.du[:l.phi-l.plo]
		if !f.generic && !pr.free && pr.iTg < 0 && pr.iIa < 0 && pr.iS == 0 && pr.iB == 1 && pr.iNe == 2 && pr.iOff == 3 {
			// Boltzmann areas, nothing else free: the loop below with its
			// four columns at fixed places (the same operations).
			dns, dus = dns[:len(us)], dus[:len(us)]
			ms := mod[l.plo : l.plo+len(us)]
			for j, u := range us {
				ms[j] += a * u
				o := (l.plo + j) * np
				row := (*[4]float64)(jac[o : o+4])
				row[0] += eS * u
				row[1] += eB * u
				row[2] += a * dns[j]
				row[3] += a * dus[j]
			}
			continue
		}
		for j, u := range us {
			i := l.plo + j
			mod[i] += a * u
			row := jac[i*np : (i+1)*np]
			if pr.free {
				row[pr.iA+k] = u
			} else {
				row[pr.iS] += eS * u
				row[pr.iB] += eB * u
			}
			row[pr.iNe] += a * dns[j]
			row[pr.iOff] += a * dus[j]
			if pr.iTg >= 0 {
				row[pr.iTg] += a * l.dg[j] * dE2dTg
			}
			if pr.iIa >= 0 {
				row[pr.iIa] += a * l.dg[j] * dE2dG
				row[pr.iIb] += a * l.dg[j] * dE2dG * (l.center - pr.lamMid)
			}
		}
	}
	var chi2 float64
	ys, ss := f.y[:n], f.s[:n]
	mod = mod[:n]
	for i := range ys {
		r := (ys[i] - mod[i]) / ss[i]
		chi2 += r * r
	}
	if !finite(chi2) {
		return 0, errors.New("the model is not finite")
	}
	return chi2, nil
}

// normal builds JᵀWJ and JᵀW r at the current state. The baseline
// columns of J are the pixels' Legendre values whatever the state, so the
// baseline–baseline block of JᵀWJ is built once per setup (baseBlocks,
// the same sums in the same order) and copied in.
func (f *wholeFitter) normal(A, g []float64) {
	np := f.par.n
	iBase, nB := f.par.iBase, f.par.nBase
	f.baseBlocks()
	for i := range A {
		A[i] = 0
	}
	for i := range g {
		g[i] = 0
	}
	wt := f.wbuf[:len(f.x)]
	if np == 8 && iBase == 4 && !f.generic {
		// The common case (Boltzmann areas, a cubic baseline), unrolled:
		// the same products and sums in the same order as the loop below.
		f.normal8x4(A, g, wt)
	} else {
		f.normalRows(A, g, wt)
	}
	for a := range nB {
		copy(A[(iBase+a)*np+iBase+a:(iBase+a+1)*np], f.normBase[a*nB+a:(a+1)*nB])
	}
	for a := range np {
		for b := range a {
			A[a*np+b] = A[b*np+a]
		}
	}
}

// normalRows adds every pixel's products to A's rows of the parameters
// before the baseline and to g (normal).
func (f *wholeFitter) normalRows(A, g, wt []float64) {
	np := f.par.n
	iBase := f.par.iBase
	for i := range f.x {
		w := wt[i]
		r := (f.y[i] - f.model[i]) * w
		row := f.jac[i*np : (i+1)*np]
		for a, va := range row[:iBase] {
			if va == 0 {
				continue
			}
			g[a] += va * r
			wa := va * w
			rr := row[a:np]
			ar := A[a*np+a : (a+1)*np]
			ar = ar[:len(rr)]
			for b, v := range rr {
				ar[b] += wa * v
			}
		}
		for a, va := range row[iBase:] {
			if va == 0 {
				continue
			}
			g[iBase+a] += va * r
		}
	}
}

// normal8x4 is normalRows for np = 8, iBase = 4, unrolled: each
// element of A and g gets the same products, in the same pixel order.
func (f *wholeFitter) normal8x4(As, gs, wt []float64) {
	A := (*[64]float64)(As[:64])
	g := (*[8]float64)(gs[:8])
	ys, mod := f.y[:len(wt)], f.model[:len(wt)]
	jac := f.jac[:8*len(wt)]
	for i, w := range wt {
		r := (ys[i] - mod[i]) * w
		row := (*[8]float64)(jac[8*i : 8*i+8])
		if va := row[0]; va != 0 {
			g[0] += va * r
			wa := va * w
			A[0] += wa * row[0]
			A[1] += wa * row[1]
			A[2] += wa * row[2]
			A[3] += wa * row[3]
			A[4] += wa * row[4]
			A[5] += wa * row[5]
			A[6] += wa * row[6]
			A[7] += wa * row[7]
		}
		if va := row[1]; va != 0 {
			g[1] += va * r
			wa := va * w
			A[9] += wa * row[1]
			A[10] += wa * row[2]
			A[11] += wa * row[3]
			A[12] += wa * row[4]
			A[13] += wa * row[5]
			A[14] += wa * row[6]
			A[15] += wa * row[7]
		}
		if va := row[2]; va != 0 {
			g[2] += va * r
			wa := va * w
			A[18] += wa * row[2]
			A[19] += wa * row[3]
			A[20] += wa * row[4]
			A[21] += wa * row[5]
			A[22] += wa * row[6]
			A[23] += wa * row[7]
		}
		if va := row[3]; va != 0 {
			g[3] += va * r
			wa := va * w
			A[27] += wa * row[3]
			A[28] += wa * row[4]
			A[29] += wa * row[5]
			A[30] += wa * row[6]
			A[31] += wa * row[7]
		}
		if va := row[4]; va != 0 {
			g[4] += va * r
		}
		if va := row[5]; va != 0 {
			g[5] += va * r
		}
		if va := row[6]; va != 0 {
			g[6] += va * r
		}
		if va := row[7]; va != 0 {
			g[7] += va * r
		}
	}
}

// baseBlocks builds the pixels' weights 1/σ² (wholeFitter.wbuf) and the
// blocks of normal and linearAreas that depend on the pixels alone
// (wholeFitter.normBase, linBase, linBaseG), once per setup: each element is the same sum, in the same order, as the loops
// of normal and linearAreas make it.
func (f *wholeFitter) baseBlocks() {
	if f.baseOK {
		return
	}
	nB := f.par.nBase
	nb := grow(&f.normBase, nB*nB)
	lb := grow(&f.linBase, nB*nB)
	lg := grow(&f.linBaseG, nB)
	for i := range nb {
		nb[i], lb[i] = 0, 0
	}
	for i := range lg {
		lg[i] = 0
	}
	leg := f.leg[:nB]
	wt := grow(&f.wbuf, len(f.x))
	if nB == 4 && !f.generic {
		f.baseBlocks4(nb, lb, lg, wt)
		f.baseOK = true
		return
	}
	for i, s := range f.s {
		wt[i] = 1 / (s * s)
	}
	// Each element is its sum over the pixels in order (a zero Legendre
	// value adds a zero), four of them at a time in registers: nBase ≤ 4
	// (wholeBaselineOrder ≤ 3).
	n := len(f.x)
	row := func(b int) []float64 {
		if b < nB {
			return leg[b][:n]
		}
		return leg[0][:n] // padding, its sums unused
	}
	wa := grow(&f.mbuf, n)
	wt = wt[:len(wa)]
	for a := range nB {
		la := leg[a][:len(wa)]
		for i := range wa {
			wa[i] = la[i] * wt[i]
		}
		r0, r1, r2, r3 := row(a), row(a+1), row(a+2), row(a+3)
		r0, r1, r2, r3 = r0[:len(wa)], r1[:len(wa)], r2[:len(wa)], r3[:len(wa)]
		var s0, s1, s2, s3 float64
		switch nB - a {
		case 1:
			// The padding's sums left out (the used ones the same).
			for i, x := range wa {
				s0 += x * r0[i]
			}
		case 2:
			for i, x := range wa {
				s0 += x * r0[i]
				s1 += x * r1[i]
			}
		case 3:
			for i, x := range wa {
				s0 += x * r0[i]
				s1 += x * r1[i]
				s2 += x * r2[i]
			}
		default:
			for i, x := range wa {
				s0 += x * r0[i]
				s1 += x * r1[i]
				s2 += x * r2[i]
				s3 += x * r3[i]
			}
		}
		for k, v := range [4]float64{s0, s1, s2, s3} {
			if a+k < nB {
				nb[a*nB+a+k] = v
			}
		}
	}
	y, ws := f.y[:n], wt[:n]
	for b := range nB {
		l1 := leg[b][:n]
		r0, r1, r2, r3 := row(b), row(b+1), row(b+2), row(b+3)
		r0, r1, r2, r3 = r0[:len(l1)], r1[:len(l1)], r2[:len(l1)], r3[:len(l1)]
		y, ws := y[:len(l1)], ws[:len(l1)]
		var sg, s0, s1, s2, s3 float64
		switch nB - b {
		case 1:
			// The padding's sums left out (the used ones the same).
			for i, v := range l1 {
				sg += v * y[i] * ws[i]
				s0 += v * r0[i] * ws[i]
			}
		case 2:
			for i, v := range l1 {
				sg += v * y[i] * ws[i]
				s0 += v * r0[i] * ws[i]
				s1 += v * r1[i] * ws[i]
			}
		case 3:
			for i, v := range l1 {
				sg += v * y[i] * ws[i]
				s0 += v * r0[i] * ws[i]
				s1 += v * r1[i] * ws[i]
				s2 += v * r2[i] * ws[i]
			}
		default:
			for i, v := range l1 {
				sg += v * y[i] * ws[i]
				s0 += v * r0[i] * ws[i]
				s1 += v * r1[i] * ws[i]
				s2 += v * r2[i] * ws[i]
				s3 += v * r3[i] * ws[i]
			}
		}
		lg[b] = sg
		for k, v := range [4]float64{s0, s1, s2, s3} {
			if b+k < nB {
				lb[b*nB+b+k] = v
			}
		}
	}
	f.baseOK = true
}

// baseBlocks4 is baseBlocks for a cubic baseline (nBase 4) in two passes
// over the pixels instead of nine: the weights and the ten normal sums
// in the first, the four data sums and the linear sums in the second.
// Every sum is the same as in baseBlocks' loops, in pixel order, with
// the same products: Legendre's order 0 is 1 exactly, so its products
// (1·w, x·1, (1·y)·w, (1·l)·w) are the other factor exactly, and its
// linear row is the normal one ((1·l)·w = w·l). TestWholeBaselineSums
// pins them bitwise.
func (f *wholeFitter) baseBlocks4(nb, lb, lg, wt []float64) {
	n := len(f.x)
	ss, wt := f.s[:n], wt[:n]
	l1, l2, l3 := f.leg[1][:n], f.leg[2][:n], f.leg[3][:n]
	var n00, n01, n02, n03, n11, n12, n13, n22, n23, n33 float64
	for i, s := range ss {
		w := 1 / (s * s)
		wt[i] = w
		a1, a2, a3 := l1[i], l2[i], l3[i]
		n00 += w
		n01 += w * a1
		n02 += w * a2
		n03 += w * a3
		x1 := a1 * w
		n11 += x1 * a1
		n12 += x1 * a2
		n13 += x1 * a3
		x2 := a2 * w
		n22 += x2 * a2
		n23 += x2 * a3
		x3 := a3 * w
		n33 += x3 * a3
	}
	y := f.y[:n]
	var g0, g1, g2, g3, m11, m12, m13, m22, m23, m33 float64
	for i, w := range wt {
		a1, a2, a3, v := l1[i], l2[i], l3[i], y[i]
		g0 += v * w
		g1 += a1 * v * w
		g2 += a2 * v * w
		g3 += a3 * v * w
		m11 += a1 * a1 * w
		m12 += a1 * a2 * w
		m13 += a1 * a3 * w
		m22 += a2 * a2 * w
		m23 += a2 * a3 * w
		m33 += a3 * a3 * w
	}
	nb[0], nb[1], nb[2], nb[3] = n00, n01, n02, n03
	nb[5], nb[6], nb[7] = n11, n12, n13
	nb[10], nb[11] = n22, n23
	nb[15] = n33
	lb[0], lb[1], lb[2], lb[3] = n00, n01, n02, n03
	lb[5], lb[6], lb[7] = m11, m12, m13
	lb[10], lb[11] = m22, m23
	lb[15] = m33
	lg[0], lg[1], lg[2], lg[3] = g0, g1, g2, g3
}

// clampParams keeps the parameters in their domain.
func (f *wholeFitter) clampParams(th []float64) {
	pr := f.par
	th[pr.iNe] = math.Min(math.Max(th[pr.iNe], f.lnLo), f.lnHi)
	if pr.iTg >= 0 {
		th[pr.iTg] = math.Min(math.Max(th[pr.iTg], 10), 1e5)
	}
	if pr.iIa >= 0 {
		th[pr.iIa] = math.Max(th[pr.iIa], 0)
	}
	// One offset bounded by a few pixels: beyond that the line search
	// would have found other centres.
	lim := 5 * f.lines[0].px
	th[pr.iOff] = math.Min(math.Max(th[pr.iOff], -lim), lim)
}

// levmar runs Levenberg–Marquardt from f.th.
func (f *wholeFitter) levmar() (iters int, converged bool, chi2 float64, err error) {
	np := f.par.n
	ws := grow(&f.ws, 2*np*np+3*np)
	A, M := ws[:np*np], ws[np*np:2*np*np]
	g, d, trial := ws[2*np*np:2*np*np+np], ws[2*np*np+np:2*np*np+2*np], ws[2*np*np+2*np:]
	// The lines were evaluated at f.th's shape parameters by setup.
	chi2, err = f.assemble(f.th)
	if err != nil {
		return 0, false, 0, err
	}
	lam := 1e-3
	f.atTh = false
	for iters = 1; iters <= wholeMaxIter; iters++ {
		f.normal(A, g)
		accepted, tried := false, false
		var newChi2 float64
		for lam < 1e12 {
			copy(M, A)
			for a := range np {
				dv := A[a*np+a]
				if !(dv > 0) {
					dv = 1e-300
					M[a*np+a] = dv
				}
				M[a*np+a] += lam * dv
			}
			copy(d, g)
			if !linefit.Cholesky(M, np, 1e-14) {
				lam *= 10
				continue
			}
			linefit.CholSolve(M, np, d)
			for a := range np {
				trial[a] = f.th[a] + d[a]
			}
			f.clampParams(trial)
			if !f.noEarlyStop && lam <= wholeStopLambda && f.unclamped(trial, d) && predictedDrop(A, g, d, np) <= wholeStopDrop {
				// An almost undamped step that the fit's linear model says
				// lowers χ² by less than wholeStopDrop: at the minimum
				// (see wholeStopDrop). The lines are put back to f.th if
				// a trial moved them.
				if tried {
					_, err = f.eval(f.th)
				}
				f.atTh = true // A and g are those at f.th (result reads them)
				return iters, true, chi2, err
			}
			tried = true
			c2, e := f.eval(trial)
			if e == nil && c2 <= chi2 {
				newChi2 = c2
				accepted = true
				break
			}
			lam *= 10
		}
		if !accepted {
			// No step lowers χ²: at the minimum within rounding.
			_, err = f.eval(f.th)
			f.atTh = true
			return iters, true, chi2, err
		}
		copy(f.th, trial)
		drop := chi2 - newChi2
		chi2 = newChi2
		lam = math.Max(lam/10, 1e-12)
		// χ² is in units of the pixel σ: a drop below 1e-4 moves no
		// parameter by a noticeable fraction of its σ (a 1σ change is a
		// drop of 1).
		if drop <= 1e-4+1e-12*chi2 {
			return iters, true, chi2, nil
		}
	}
	return wholeMaxIter, false, chi2, nil
}

// predictedDrop returns the fall of χ² that the linear model of the fit
// predicts for the step d: 2dᵀg − dᵀAd (A = JᵀWJ, g = JᵀWr).
func predictedDrop(A, g, d []float64, np int) float64 {
	var dg, dad float64
	for a := range np {
		dg += d[a] * g[a]
		var s float64
		for b := range np {
			s += A[a*np+b] * d[b]
		}
		dad += d[a] * s
	}
	return 2*dg - dad
}

// unclamped reports whether the trial parameters are f.th + d, not moved
// by clampParams.
func (f *wholeFitter) unclamped(trial, d []float64) bool {
	for a := range trial {
		if trial[a] != f.th[a]+d[a] {
			return false
		}
	}
	return true
}

// linearAreas solves the linear least-squares problem of free line
// areas and baseline at the current shapes; it returns the areas, their
// 1σ (scaled by the residuals when there is no noise model) and χ².
func (f *wholeFitter) linearAreas() (areas, sig []float64, chi2 float64, ok bool) {
	nl := len(f.lines)
	nb := f.par.nBase
	np := nl + nb
	f.baseBlocks()
	A := grow(&f.linA, np*np)
	g := grow(&f.linG, np)
	for i := range A {
		A[i] = 0
	}
	for i := range g {
		g[i] = 0
	}
	w := f.wbuf[:len(f.x)] // 1/σ² (baseBlocks)
	// Line–line, line–baseline and line–data blocks over each line's
	// pixel range.
	for a, la := range f.lines {
		// The line's data and baseline sums in registers (nb ≤ 4; rows
		// beyond nb are padding, their sums unused).
		leg := func(b int) []float64 {
			if b < nb {
				return f.leg[b][la.plo:la.phi]
			}
			return f.leg[0][la.plo:la.phi]
		}
		r0, r1, r2, r3 := leg(0), leg(1), leg(2), leg(3)
		ys, ws, us := f.y[la.plo:la.phi], w[la.plo:la.phi], la.u[:la.phi-la.plo]
		ys, ws = ys[:len(us)], ws[:len(us)]
		r0, r1, r2, r3 = r0[:len(us)], r1[:len(us)], r2[:len(us)], r3[:len(us)]
		var ga, s0, s1, s2, s3, saa float64
		b0 := a
		if f.generic {
			for i, u := range us {
				v := u * ws[i]
				ga += v * ys[i]
				s0 += v * r0[i]
				s1 += v * r1[i]
				s2 += v * r2[i]
				s3 += v * r3[i]
			}
		} else {
			// The line's own overlap sum (its diagonal element, the
			// same products in the same order as the loop below) in
			// this pass too.
			for i, u := range us {
				v := u * ws[i]
				ga += v * ys[i]
				s0 += v * r0[i]
				s1 += v * r1[i]
				s2 += v * r2[i]
				s3 += v * r3[i]
				saa += u * u * ws[i]
			}
			A[a*np+a] = saa
			b0 = a + 1
		}
		g[a] = ga
		for b, v := range [4]float64{s0, s1, s2, s3} {
			if b < nb {
				A[a*np+nl+b] = v
			}
		}
		for b := b0; b < nl; b++ {
			lb := f.lines[b]
			lo, hi := max(la.plo, lb.plo), min(la.phi, lb.phi)
			var s float64
			if lo < hi {
				ua, ub, ws := la.u[lo-la.plo:hi-la.plo], lb.u[lo-lb.plo:hi-lb.plo], w[lo:hi]
				ub = ub[:len(ua)]
				ws = ws[:len(ua)]
				for i := range ua {
					s += ua[i] * ub[i] * ws[i]
				}
			}
			A[a*np+b] = s
		}
	}
	// The baseline–baseline and baseline–data parts (baseBlocks).
	for b := range nb {
		g[nl+b] = f.linBaseG[b]
		for c := b; c < nb; c++ {
			A[(nl+b)*np+nl+c] = f.linBase[b*nb+c]
		}
	}
	for a := range np {
		for b := range a {
			A[a*np+b] = A[b*np+a]
		}
		if !(A[a*np+a] > 0) {
			A[a*np+a] = 1 // a line without pixels: area 0
		}
	}
	if !linefit.Cholesky(A, np, 1e-14) {
		return nil, nil, 0, false
	}
	sol := append(f.linSol[:0], g...)
	linefit.CholSolve(A, np, sol)
	inv := grow(&f.linInv, np*np)
	linefit.CholInverse(A, np, inv, grow(&f.linWork, np))
	mod := grow(&f.mbuf, len(f.x))
	if nb == 4 {
		// The loop below unrolled (the same sums).
		l0, l1, l2, l3 := f.leg[0][:len(mod)], f.leg[1][:len(mod)], f.leg[2][:len(mod)], f.leg[3][:len(mod)]
		t0, t1, t2, t3 := sol[nl], sol[nl+1], sol[nl+2], sol[nl+3]
		for i := range mod {
			mod[i] = cubicSum(t0, t1, t2, t3, l0[i], l1[i], l2[i], l3[i])
		}
	} else {
		for i := range mod {
			var m float64
			for b := range nb {
				m += sol[nl+b] * f.leg[b][i]
			}
			mod[i] = m
		}
	}
	for a, l := range f.lines {
		ms, us, sa := mod[l.plo:l.phi], l.u[:l.phi-l.plo], sol[a]
		us = us[:len(ms)]
		for i := range ms {
			ms[i] += sa * us[i]
		}
	}
	ys, ss := f.y[:len(mod)], f.s[:len(mod)]
	for i := range mod {
		r := (ys[i] - mod[i]) / ss[i]
		chi2 += r * r
	}
	scale := 1.0
	if dof := len(f.x) - np; dof > 0 && f.opt.GainElectronsPerCount <= 0 {
		scale = math.Sqrt(chi2 / float64(dof))
	}
	areas = append([]float64(nil), sol[:nl]...)
	sig = make([]float64, nl)
	for k := range nl {
		sig[k] = math.Sqrt(math.Max(inv[k*np+k], 0)) * scale
	}
	f.linSol = sol
	return areas, sig, chi2, true
}

// linearBaseline sets the baseline parameters from the last linear solve.
func (f *wholeFitter) linearBaseline() {
	nl := len(f.lines)
	for b := range f.par.nBase {
		f.th[f.par.iBase+b] = f.linSol[nl+b]
	}
}

// boltzmannBeta fits ln(a_k/F_k) against E_k for the positive areas and
// returns β = 1/kT when the slope is negative.
func boltzmannBeta(lines []*wline, areas, sig []float64) (float64, bool) {
	var sw, sx, sy, sxx, sxy float64
	n := 0
	for k, l := range lines {
		if !(areas[k] > 0) || !(sig[k] > 0) || areas[k] < 2*sig[k] {
			continue
		}
		y := math.Log(areas[k]) - l.lnF
		w := math.Pow(areas[k]/sig[k], 2)
		sw += w
		sx += w * l.dE
		sy += w * y
		sxx += w * l.dE * l.dE
		sxy += w * l.dE * y
		n++
	}
	if n < 2 {
		return 0, false
	}
	den := sw*sxx - sx*sx
	if !(den > 0) {
		return 0, false
	}
	slope := (sw*sxy - sx*sy) / den
	if !(slope < 0) {
		return 0, false
	}
	return -slope, true
}

// scanDensity picks a starting n_e when the lines route gives none: the
// lowest χ² of the linear fit (free areas and baseline at the shapes of
// that density) over half-decade steps from 1e18 to 3.16e23 m⁻³.
func (f *wholeFitter) scanDensity(in wholeInput) float64 {
	best, bestChi := 1e21, math.Inf(1)
	// One scratch fitter for the scan, its buffers kept from density to
	// density (and from fit to fit); its lines are evaluated without
	// derivatives (the linear fit reads the pixel means alone, the same
	// bit for bit).
	if f.scanFit == nil {
		f.scanFit = &wholeFitter{}
	}
	g := f.scanFit
	for e := 18.0; e <= 23.5; e += 0.5 {
		ne := math.Pow(10, e)
		g.reset(f.opt, f.m)
		g.te, g.teRel, g.gasT, g.mass, g.pert, g.scanOnly = f.te, f.teRel, f.gasT, f.mass, f.pert, true
		if err := g.setup(in, ne); err != nil {
			continue
		}
		if _, _, chi, ok := g.linearAreas(); ok && chi < bestChi {
			best, bestChi = ne, chi
		}
	}
	return best
}

// result assembles the WholeFit from the converged state.
func (f *wholeFitter) result(iters int, conv bool, chi2 float64, teGiven bool, in wholeInput) (*WholeFit, error) {
	pr := f.par
	np := pr.n
	n := len(f.x)
	dof := n - np
	if dof <= 0 {
		return nil, errors.New("more parameters than pixels")
	}
	A := make([]float64, np*np)
	g := make([]float64, np)
	if f.atTh {
		// Levenberg–Marquardt stopped at f.th after building the normal
		// equations there (the lines are in the same state, bit for bit).
		copy(A, f.ws[:np*np])
		copy(g, f.ws[2*np*np:2*np*np+np])
	} else {
		f.normal(A, g)
	}
	th := f.th
	// At the end of the shapes' density range n_e is a limit: it is held
	// (its row and column taken out) and not reported.
	atBound := th[pr.iNe] <= f.lnLo+1e-6 || th[pr.iNe] >= f.lnHi-1e-6
	if atBound {
		for a := range np {
			A[a*np+pr.iNe], A[pr.iNe*np+a] = 0, 0
		}
		A[pr.iNe*np+pr.iNe] = 1
	}
	R := append([]float64(nil), A...)
	if !linefit.Cholesky(R, np, 1e-15) {
		return nil, errors.New("the fit's curvature matrix is singular (a parameter is not determined by the data)")
	}
	cov0 := make([]float64, np*np)
	linefit.CholInverse(R, np, cov0, make([]float64, np))
	red := chi2 / float64(dof)
	// Without a noise model the σ come from the residuals (χ²ᵣ scales
	// the covariance); with one, a fit worse than its noise (χ²ᵣ > 1: the
	// model's own small inaccuracies show at high signal) widens the σ
	// the same way, never narrows them (the Birge ratio, common practice,
	// no source).
	scale := math.Max(red, 1)
	if f.opt.GainElectronsPerCount <= 0 {
		scale = red
	}
	cov := make([]float64, np*np)
	for i := range cov {
		cov[i] = cov0[i] * scale
	}
	sd := func(i int) float64 { return math.Sqrt(math.Max(cov[i*np+i], 0)) }
	unsc := func(v float64) float64 { return math.Ldexp(v, f.scale) }

	wf := &WholeFit{Areas: WholeAreasBoltzmann, RangeNM: [2]float64{f.x[0], f.x[n-1]}, Pixels: n,
		ReducedChi2: red, DOF: dof, Iterations: iters, Converged: conv}
	if pr.free {
		wf.Areas = WholeAreasFree
	}
	// Significance of each line: its area over σ with every area free.
	linAreas, linSig, chiFree, ok := f.linearAreas()
	if !ok {
		return nil, errors.New("the free-area check fit is singular")
	}
	nSignal := 0
	for k, l := range f.lines {
		l.sig = 0
		if linSig[k] > 0 {
			l.sig = linAreas[k] / linSig[k]
		}
		if l.sig >= wholeSignalSigma {
			nSignal++
		}
	}
	if nSignal == 0 {
		return nil, errors.New("no line carries a significant signal in the whole model")
	}
	// "Two or more members carry signal jointly": two lines at ≥ 3σ each,
	// or the strongest at ≥ 3σ and the others together at ≥ 3σ — their
	// joint amplitude along the fitted Boltzmann areas t_k, from the
	// free areas A_k ± σ_k (correlations between the free areas left
	// out): z = Σ t_k A_k/σ_k² / √(Σ t_k²/σ_k²).
	jointTexc := nSignal >= 2
	if !jointTexc && !pr.free {
		strong := 0
		for k := range f.lines {
			if f.lines[k].sig > f.lines[strong].sig {
				strong = k
			}
		}
		var num, den float64
		for k := range f.lines {
			if k == strong || !(linSig[k] > 0) {
				continue
			}
			tk := f.areaOf(k, th)
			num += tk * linAreas[k] / (linSig[k] * linSig[k])
			den += tk * tk / (linSig[k] * linSig[k])
		}
		if den > 0 && num/math.Sqrt(den) >= wholeSignalSigma {
			jointTexc = true
		}
	}
	// Boltzmann test: the tied areas against free areas at the same
	// shapes (χ² of the free-area solve is at the fitted n_e and offset,
	// so Δχ² is conservative), k − 2 degrees of freedom for k lines.
	var birge float64 = 1
	var offTie string
	if !pr.free && len(f.lines) >= 3 {
		dchi := math.Max(chi2-chiFree, 0)
		kdof := len(f.lines) - 2
		wf.BoltzmannDeltaChi2, wf.BoltzmannDOF = dchi, kdof
		wf.BoltzmannP = distuv.ChiSquared{K: float64(kdof)}.Survival(dchi)
		if wf.BoltzmannP < wholeTieP {
			birge = math.Sqrt(dchi / float64(kdof))
			// The line farthest from the tie.
			worst, wz := -1, 0.0
			for k := range f.lines {
				if linSig[k] > 0 {
					if z := math.Abs(linAreas[k]-f.areaOf(k, th)) / linSig[k]; z > wz {
						worst, wz = k, z
					}
				}
			}
			if worst >= 0 {
				a := f.areaOf(worst, th)
				offTie = fmt.Sprintf("the line areas do not follow one Boltzmann distribution (Δχ² = %.1f for %d degrees of freedom, p = %.2g): %s's own area is %.0f %% %s the tied value (%.1fσ)",
					dchi, kdof, wf.BoltzmannP, f.lines[worst].t.Name(), 100*math.Abs(linAreas[worst]/a-1), aboveBelow(linAreas[worst]-a), wz)
			}
		}
	}
	ne := math.Exp(th[pr.iNe])
	weakNe := ""
	if !atBound {
		weakNe = f.weakDensity(th, ne)
	}

	// Parameters list.
	free := []WholeParam{}
	add := func(name, label, unit string, v, u float64, fixed bool) {
		free = append(free, WholeParam{Name: name, Label: label, Unit: unit, Value: v, Unc: u, Fixed: fixed})
	}
	var areaCov func(k int) float64
	if pr.free {
		for k, l := range f.lines {
			add(fmt.Sprintf("area_%d", l.t.Upper), "Area of "+l.t.Name(), "intensity·nm", unsc(th[pr.iA+k]), unsc(sd(pr.iA+k)), false)
		}
		areaCov = func(k int) float64 { return sd(pr.iA + k) }
	} else {
		beta := th[pr.iB]
		add("scale", "Area of "+f.lines[0].t.Name()+" (Boltzmann scale)", "intensity·nm", unsc(th[pr.iS]), unsc(sd(pr.iS)), false)
		tK, tU := math.Inf(1), 0.0
		if beta > 0 {
			tK = 1 / (diag.BoltzmannEVPerK * beta)
			tU = sd(pr.iB) / (diag.BoltzmannEVPerK * beta * beta)
		}
		if finite(tK) {
			add("T_exc", "Excitation temperature", "K", tK, tU, false)
		} else {
			add("T_exc", "Excitation temperature (slope not negative)", "K", 0, 0, false)
		}
		areaCov = func(k int) float64 {
			l := f.lines[k]
			a := f.areaOf(k, th)
			dS := a / th[pr.iS]
			dB := -l.dE * a
			v := dS*dS*cov[pr.iS*np+pr.iS] + dB*dB*cov[pr.iB*np+pr.iB] + 2*dS*dB*cov[pr.iS*np+pr.iB]
			return math.Sqrt(math.Max(v, 0))
		}
	}
	if atBound {
		add("n_e", "Electron density (a limit: the end of the line shapes' range)", "m⁻³", ne, 0, false)
	} else if weakNe != "" {
		add("n_e", "Electron density (fitted, not a measurement: reported as an upper limit)", "m⁻³", ne, ne*sd(pr.iNe), false)
	} else {
		add("n_e", "Electron density", "m⁻³", ne, ne*sd(pr.iNe), false)
	}
	add("offset", "Wavelength offset", "nm", th[pr.iOff], sd(pr.iOff), false)
	if pr.iTg >= 0 {
		add("T_gas", "Gas temperature", "K", th[pr.iTg], sd(pr.iTg), false)
	}
	if pr.iIa >= 0 {
		add("instrument_fwhm", "Instrument Gaussian FWHM at the range's middle", "nm", th[pr.iIa], sd(pr.iIa), false)
		add("instrument_fwhm_slope", "Instrument FWHM slope", "nm/nm", th[pr.iIb], sd(pr.iIb), false)
	}
	for b := range pr.nBase {
		add(fmt.Sprintf("baseline_%d", b), fmt.Sprintf("Baseline Legendre coefficient %d", b), "intensity/nm", unsc(th[pr.iBase+b]), unsc(sd(pr.iBase+b)), false)
	}
	// Fixed ones.
	fixed := []WholeParam{{Name: "T_e", Label: "Electron temperature of the Stark tables", Unit: "K", Value: f.te, Fixed: true}}
	if pr.iTg < 0 {
		fixed = append(fixed, WholeParam{Name: "T_gas", Label: "Gas temperature", Unit: "K", Value: f.gasT, Fixed: true})
	}
	if pr.iIa < 0 {
		fixed = append(fixed, WholeParam{Name: "instrument_fwhm", Label: "Instrument Gaussian FWHM at the range's middle", Unit: "nm", Value: f.instAt(pr.lamMid), Fixed: true})
	}
	// The free parameters in vector order for the correlation matrix.
	order := f.paramOrder()
	wf.Params = make([]WholeParam, 0, len(free)+len(fixed))
	byName := map[string]WholeParam{}
	for _, p := range free {
		byName[p.Name] = p
	}
	for _, name := range order {
		wf.Params = append(wf.Params, byName[name])
	}
	wf.Params = append(wf.Params, fixed...)
	wf.Correlation = make([][]float64, np)
	for a := range np {
		wf.Correlation[a] = make([]float64, np)
		for b := range np {
			den := math.Sqrt(cov0[a*np+a] * cov0[b*np+b])
			if den > 0 {
				wf.Correlation[a][b] = cov0[a*np+b] / den
			}
		}
	}

	// Lines.
	anyClamp := false
	var maxGap float64
	for k, l := range f.lines {
		sw := l.starkFWHM
		if l.shapeSH {
			sw = f.shStarkFWHM(l, th[pr.iNe])
		}
		wl := WholeLine{Upper: l.t.Upper, Name: l.t.Name(), Shape: "Voigt", Area: unsc(f.areaOf(k, th)), AreaUnc: unsc(areaCov(k)), StarkFWHMNM: sw}
		if l.shapeSH {
			wl.Shape = "SH99"
			wl.TableTemperatureK = f.tOf(l)
		}
		if l.clampGap2 > 0 {
			anyClamp = true
			maxGap = math.Max(maxGap, math.Sqrt(l.clampGap2))
		}
		a := f.areaOf(k, th)
		var c2 float64
		var cnt int
		var peak float64
		for i := l.plo; i < l.phi; i++ {
			if f.x[i] < l.win[0] || f.x[i] > l.win[1] {
				continue
			}
			r := (f.y[i] - f.model[i]) / f.s[i]
			c2 += r * r
			cnt++
			peak = math.Max(peak, a*l.u[i-l.plo]/f.s[i])
		}
		if cnt > 0 {
			wl.ReducedChi2 = c2 / float64(cnt)
			wl.ResidualRMS = math.Sqrt(c2 / float64(cnt))
		}
		wl.PeakSNR = peak
		wf.Lines = append(wf.Lines, wl)
		if l.shapeSH && l.rel.ID != "" && !atBound {
			te := f.tOf(l)
			kind := sh99.FWHM
			if l.rel.Kind == diag.FWHA {
				kind = sh99.FWHA
			}
			if w, err := l.sh.StarkWidthNM(kind, ne, te); err == nil {
				if n2, err := l.rel.DensityAt(w, te); err == nil && n2 > 0 && finite(n2) {
					wf.OtherModels = append(wf.OtherModels, WholeOtherModel{Upper: l.t.Upper, Name: l.t.Name(), Relation: l.rel.ID,
						StarkWidthNM: w, ElectronDensityM3: n2, RelDiff: n2/ne - 1})
				}
			}
		}
	}
	wf.DopplerNote = "the SH99 profiles include Doppler broadening at the tables' temperature T_e; each line was convolved with the Gaussian still missing, √(instrument² + Doppler(T_gas)² − Doppler(T_e)²)"
	if anyClamp {
		wf.DopplerNote += fmt.Sprintf("; for some lines the instrument ⊕ gas Doppler width is narrower than the tables' own Doppler width (by up to %.3g nm in quadrature): no Gaussian was added there and the model is slightly too wide, carried as a systematic σ of n_e (\"Doppler handling\")", maxGap)
	}
	for _, s := range f.notes {
		wf.DopplerNote += "; " + s
	}

	// Systematic parts (first-order responses of the fit; also when n_e
	// is at its range end, for T_exc).
	neParts, tParts := f.densitySys(ne, cov0)

	// T_exc.
	kB := diag.BoltzmannEVPerK
	var tExc, tStat float64
	tOK := false
	if pr.free {
		var pts []diag.BoltzmannPoint
		for k, l := range f.lines {
			a := th[pr.iA+k]
			if l.sig >= wholeSignalSigma && a > 0 {
				pts = append(pts, diag.BoltzmannPoint{Upper: l.t.Upper, EnergyEV: l.t.UpperEnergyEV, G: float64(l.t.GUpper), A: l.t.EinsteinA,
					WavelengthNM: l.t.WavelengthVacNM, Intensity: unsc(a), IntensityUnc: unsc(sd(pr.iA + k))})
			}
		}
		if len(pts) >= 2 {
			if bz, err := diag.FitBoltzmann(pts, diag.BoltzmannOptions{Unit: f.m.Unit}); err == nil && bz.Defined {
				tExc, tStat, tOK = bz.TemperatureK, bz.TemperatureUncK, true
			}
		}
	} else if beta := th[pr.iB]; beta > 0 && jointTexc {
		tExc = 1 / (kB * beta)
		// Scaled by the Birge ratio of the Boltzmann test when the tie is
		// rejected (as the lines route scales a scattered Boltzmann plot).
		tStat = sd(pr.iB) / (kB * beta * beta) * birge
		tOK = finite(tExc) && finite(tStat)
	}
	if tOK {
		wf.ExcitationTemperatureK = fptr(tExc)
		wf.ExcitationTemperatureUncStatK = fptr(tStat)
		resp := f.texcResponseSys(th, areaCov, unsc)
		if resp > 0 {
			tParts = append(tParts, diag.UncPart{Name: "response calibration", Sigma: resp})
		}
		if pr.free {
			tParts = tParts[:0] // the first-order responses are of β
			if resp > 0 {
				tParts = append(tParts, diag.UncPart{Name: "response calibration", Sigma: resp})
			}
		}
		var sys float64
		for _, pt := range tParts {
			sys = math.Hypot(sys, pt.Sigma)
		}
		wf.ExcitationTemperatureUncSysK = fptr(sys)
		wf.ExcitationTemperatureUncK = fptr(math.Hypot(tStat, sys))
		wf.ExcitationTemperatureUncParts = tParts
	}

	// n_e.
	neStat := ne * sd(pr.iNe)
	if atBound {
		// The fit ran into the end of the shapes' density range: its n_e
		// is a limit, not a measurement, and is not reported.
		wf.DopplerNote += fmt.Sprintf("; n_e ran to the end of the line shapes' range (%.3g m⁻³) and is not reported", ne)
	}
	if finite(neStat) && neStat > 0 && !atBound {
		parts := neParts
		var sys float64
		for _, pt := range parts {
			sys = math.Hypot(sys, pt.Sigma)
		}
		wf.ElectronDensityM3 = fptr(ne)
		wf.ElectronDensityUncStatM3 = fptr(neStat)
		wf.ElectronDensityUncSysM3 = fptr(sys)
		wf.ElectronDensityUncM3 = fptr(math.Hypot(neStat, sys))
		wf.ElectronDensityUncParts = parts
		if weakNe != "" {
			// Not a measurement: an upper limit, the value + 2 total σ.
			lim := ne + 2*math.Hypot(neStat, sys)
			wf.ElectronDensityUpperLimitM3 = fptr(lim)
			wf.ElectronDensityM3, wf.ElectronDensityUncStatM3, wf.ElectronDensityUncSysM3, wf.ElectronDensityUncM3 = nil, nil, nil, nil
			wf.weakNe = fmt.Sprintf("n_e is only an upper limit, below %s m⁻³ (the fitted %s m⁻³ + 2σ): %s", fmtG(lim), fmtG(ne), weakNe)
		}
	}
	if pr.iTg >= 0 {
		wf.GasTemperatureK = fptr(th[pr.iTg])
		wf.GasTemperatureUncK = fptr(sd(pr.iTg))
	}
	wf.offTie = offTie
	if pr.iTg >= 0 && pr.iIa >= 0 {
		wf.DopplerNote += "; the gas temperature and the instrument width were both free: both are Gaussian widths and nearly degenerate (see their correlation), so fix one of them for a usable value of the other"
	}
	if !conv {
		wf.DopplerNote += fmt.Sprintf("; the fit stopped after %d iterations without meeting its convergence test (χ² still falling by more than 1e-4 per step)", iters)
	}
	if f.opt.KeepWindows {
		wf.WavelengthNM = append(PlotFloats(nil), f.x...)
		wf.Data = make(PlotFloats, n)
		wf.Model = make(PlotFloats, n)
		wf.Residual = make(PlotFloats, n)
		if f.scale == 0 {
			// Ldexp by 0 is the identity, bit for bit.
			for i := range n {
				wf.Data[i] = f.y[i]
				wf.Model[i] = f.model[i]
				wf.Residual[i] = f.y[i] - f.model[i]
			}
		} else {
			for i := range n {
				wf.Data[i] = unsc(f.y[i])
				wf.Model[i] = unsc(f.model[i])
				wf.Residual[i] = unsc(f.y[i] - f.model[i])
			}
		}
	}
	return wf, nil
}

// paramOrder names the free parameters in vector order.
func (f *wholeFitter) paramOrder() []string {
	pr := f.par
	out := make([]string, pr.n)
	if pr.free {
		for k, l := range f.lines {
			out[pr.iA+k] = fmt.Sprintf("area_%d", l.t.Upper)
		}
	} else {
		out[pr.iS], out[pr.iB] = "scale", "T_exc"
	}
	out[pr.iNe], out[pr.iOff] = "n_e", "offset"
	if pr.iTg >= 0 {
		out[pr.iTg] = "T_gas"
	}
	if pr.iIa >= 0 {
		out[pr.iIa], out[pr.iIb] = "instrument_fwhm", "instrument_fwhm_slope"
	}
	for b := range pr.nBase {
		out[pr.iBase+b] = fmt.Sprintf("baseline_%d", b)
	}
	return out
}

// texcResponseSys is the systematic σ of T_exc from the response
// calibration (Conditions.ResponseUncRel = ε): the fitted areas tilted by
// (1 ± ε)^s, s from 0 at the shortest to 1 at the longest line, through
// a Boltzmann plot (diag.FitBoltzmann, the lines route's convention):
// σ_sys = |T(+ε) − T(−ε)|/2. Without ε it is 0 (and the analysis flags
// that the σ excludes the calibration).
func (f *wholeFitter) texcResponseSys(th []float64, areaSig func(int) float64, unsc func(float64) float64) float64 {
	eps := f.m.ResponseUncRel
	if !(eps > 0) || len(f.lines) < 2 {
		return 0
	}
	lo, hi := math.Inf(1), math.Inf(-1)
	for _, l := range f.lines {
		lo, hi = math.Min(lo, l.t.WavelengthVacNM), math.Max(hi, l.t.WavelengthVacNM)
	}
	tAt := func(e float64) (float64, bool) {
		var pts []diag.BoltzmannPoint
		for k, l := range f.lines {
			a := unsc(f.areaOf(k, th))
			s := unsc(areaSig(k))
			if !(a > 0) || !(s > 0) || l.sig < wholeSignalSigma {
				continue
			}
			fac := math.Pow(1+e, (l.t.WavelengthVacNM-lo)/(hi-lo))
			pts = append(pts, diag.BoltzmannPoint{Upper: l.t.Upper, EnergyEV: l.t.UpperEnergyEV, G: float64(l.t.GUpper), A: l.t.EinsteinA,
				WavelengthNM: l.t.WavelengthVacNM, Intensity: a * fac, IntensityUnc: math.Max(s*fac, 1e-9*a*fac)})
		}
		b, err := diag.FitBoltzmann(pts, diag.BoltzmannOptions{Unit: f.m.Unit})
		if err != nil || !b.Defined {
			return 0, false
		}
		return b.TemperatureK, true
	}
	tp, ok1 := tAt(eps)
	tm, ok2 := tAt(-math.Min(eps, 0.99))
	if ok1 && ok2 {
		return math.Abs(tp-tm) / 2
	}
	return 0
}

// densitySys returns the systematic parts of n_e: the response of the
// fit to each fixed input moved by its 1σ, δθ = (JᵀWJ)⁻¹JᵀW·∂m/∂input·σ
// (first order; the model change ∂m is computed by re-evaluating the
// lines: the kernel alone for the instrument width, the gas temperature
// and the Doppler handling, the tables at the other T_e for the
// electron temperature), and the SH99 tables' accuracy. The state at the
// solution (the lines' pixel means, the model and the Jacobian) is left
// as it was.
//
// The same responses of β (Boltzmann mode) give the parts of T_exc,
// tParts (K): the brief's minimum for T_exc is the response calibration
// (texcResponseSys), but a wrong instrument width or T_e moves the areas
// too, and leaving that out made T_exc's total σ cover 33 % instead of
// 68 % on spectra whose instrument width was off by its stated σ.
func (f *wholeFitter) densitySys(ne float64, cov0 []float64) (parts, tParts []diag.UncPart) {
	pr := f.par
	np := pr.n
	th := f.th
	boltz := !pr.free && th[pr.iB] > 0
	tPer := 0.0 // K per unit β
	if boltz {
		tPer = 1 / (diag.BoltzmannEVPerK * th[pr.iB] * th[pr.iB])
	}
	add := func(name string, v [2]float64) {
		if n := ne * v[0]; n > 0 && finite(n) {
			parts = append(parts, diag.UncPart{Name: name, Sigma: n})
		}
		if t := tPer * v[1]; boltz && t > 0 && finite(t) {
			tParts = append(tParts, diag.UncPart{Name: name, Sigma: t})
		}
	}
	half := func(a, b [2]float64) [2]float64 { return [2]float64{0.5 * (a[0] + b[0]), 0.5 * (a[1] + b[1])} }
	// Rows of (JᵀWJ)⁻¹ of ln n_e and β, times JᵀW: the sensitivity of
	// each to a model change at each pixel.
	sens := grow(&f.sens, 2*len(f.x))
	sensB := sens[len(f.x):]
	sens = sens[:len(f.x)]
	cNe := cov0[pr.iNe*np : pr.iNe*np+np]
	var cB []float64
	if boltz {
		cB = cov0[pr.iB*np : pr.iB*np+np]
	}
	// The pixels' weights 1/σ² (baseBlocks' wbuf: the same quotients).
	f.baseBlocks()
	ws := f.wbuf[:len(sens)]
	sensB = sensB[:len(sens)]
	for i := range sens {
		row := f.jac[i*np : (i+1)*np]
		cNe := cNe[:len(row)]
		var v, vb float64
		if boltz {
			cB := cB[:len(row)]
			for b, j := range row {
				v += cNe[b] * j
				vb += cB[b] * j
			}
		} else {
			for b, j := range row {
				v += cNe[b] * j
			}
		}
		w := ws[i]
		sens[i], sensB[i] = v*w, vb*w
	}
	// Saved pixel means of every line at the solution (in the fitter's
	// buffers: one block for every line's u). Nothing here changes the
	// derivatives du and dn (every evaluation below is without deriv).
	nSave := 0
	for _, l := range f.lines {
		nSave += len(l.u)
	}
	block := grow(&f.saveBuf, nSave)
	if cap(f.saveRows) < len(f.lines) {
		f.saveRows = make([][]float64, len(f.lines))
	}
	saved := f.saveRows[:len(f.lines)]
	take := func(src []float64) []float64 {
		dst := block[:len(src):len(src)]
		block = block[len(src):]
		copy(dst, src)
		return dst
	}
	for k, l := range f.lines {
		saved[k] = take(l.u)
	}
	// shiftFor returns |δ ln n_e| and |δβ| from the lines' current u
	// (changed by the caller) against the saved ones, and restores
	// nothing.
	var shiftOf func(um func(*wline) []float64) [2]float64
	shiftFor := func() [2]float64 { return shiftOf(func(l *wline) []float64 { return l.u }) }
	// shiftOf is shiftFor with the pixel means of each line given by um.
	shiftOf = func(um func(*wline) []float64) [2]float64 {
		var d, db float64
		for k, l := range f.lines {
			a := f.areaOf(k, th)
			ss, sb := sens[l.plo:l.phi], sensB[l.plo:l.phi]
			us, sv := um(l)[:len(ss)], saved[k][:len(ss)]
			sb = sb[:len(ss)]
			for i := range ss {
				dm := a * (us[i] - sv[i])
				d += ss[i] * dm
				db += sb[i] * dm
			}
		}
		return [2]float64{math.Abs(d), math.Abs(db)}
	}
	// shiftOf2 is shiftOf for two sets of means at once (the same sums,
	// their chains interleaved).
	shiftOf2 := func(um1, um2 func(*wline) []float64) (r1, r2 [2]float64) {
		var d, db, d2, db2 float64
		for k, l := range f.lines {
			a := f.areaOf(k, th)
			ss, sb := sens[l.plo:l.phi], sensB[l.plo:l.phi]
			us, us2, sv := um1(l)[:len(ss)], um2(l)[:len(ss)], saved[k][:len(ss)]
			sb = sb[:len(ss)]
			for i := range ss {
				dm := a * (us[i] - sv[i])
				dm2 := a * (us2[i] - sv[i])
				d += ss[i] * dm
				db += sb[i] * dm
				d2 += ss[i] * dm2
				db2 += sb[i] * dm2
			}
		}
		return [2]float64{math.Abs(d), math.Abs(db)}, [2]float64{math.Abs(d2), math.Abs(db2)}
	}
	restore := func() {
		for k, l := range f.lines {
			copy(l.u, saved[k])
		}
	}
	// Kernel-only changes: the masses at the solution are kept.
	var kernelL func(dInst, dGas float64, dL func(*wline) float64) [2]float64
	kernel := func(dInst, dGas float64) [2]float64 { return kernelL(dInst, dGas, nil) }
	kernelL = func(dInst, dGas float64, dL func(*wline) float64) [2]float64 {
		for _, l := range f.lines {
			g, tg := f.lineInst(l, th)
			g += dInst
			tg += dGas
			dg := diag.DopplerFWHMNM(l.center, tg, f.mass)
			e2 := g*g + dg*dg
			if l.shapeSH {
				e2 -= math.Pow(l.sh.DopplerFWHMNM(f.tOf(l)), 2)
			}
			kl := l.kernL()
			if dL != nil {
				kl = math.Max(kl+dL(l), 0)
			}
			f.convolve(l, math.Sqrt(math.Max(e2, 0)), kl, false)
			f.pixels(l, th[pr.iOff], false)
		}
		d := shiftFor()
		restore()
		return d
	}
	// The non-Stark Lorentzians' own uncertainties, as the line-by-line
	// route carries them (diag.densityUnc): the van der Waals width with
	// the other convention of its constant (physics.md §10 item 7) and
	// the resonance width ± diag.AliGriemRelUnc (item 9). Zero at low
	// pressure, where both widths are.
	var anyVdW, anyRes bool
	for _, l := range f.lines {
		anyVdW = anyVdW || l.vdw > 0
		anyRes = anyRes || l.res > 0
	}
	if anyVdW {
		add("van der Waals constant convention", kernelL(0, 0, func(l *wline) float64 { return l.vdw * (1/diag.VdWConventionRatio - 1) }))
	}
	if anyRes {
		add("resonance (Ali–Griem) constant", half(kernelL(0, 0, func(l *wline) float64 { return l.res * diag.AliGriemRelUnc }),
			kernelL(0, 0, func(l *wline) float64 { return -l.res * diag.AliGriemRelUnc })))
	}
	if s := f.m.InstrumentFWHMUncNM; s > 0 && pr.iIa < 0 {
		add("instrument width", half(kernel(s, 0), kernel(-math.Min(s, f.minInst()), 0)))
	}
	if s := f.m.GasTemperatureUncK; s > 0 && pr.iTg < 0 {
		add("gas temperature", half(kernel(0, s), kernel(0, -math.Min(s, f.gasT-diag.MinGasTemperatureK))))
	}
	// Doppler handling: a clamped line is too wide by the variance gap;
	// the model change that would remove it, extrapolated linearly in
	// the Gaussian variance from adding the same variance.
	clamped := false
	for _, l := range f.lines {
		if l.clampGap2 > 0 && l.shapeSH {
			clamped = true
			f.convolve(l, math.Sqrt(l.clampGap2), l.kernL(), false)
			f.pixels(l, th[pr.iOff], false)
		}
	}
	if clamped {
		add("Doppler handling (tables' Doppler wider than instrument ⊕ gas Doppler)", shiftFor())
		restore()
	}
	// Electron temperature of the tables (the lines re-evaluated).
	// Each line's tables move by its own T_e σ (teRel; larger for a line
	// whose tables stand in at a nearby temperature), all in the same
	// direction. The lines' shapes at the solution (what lineShape
	// prepared there) are kept and put back after.
	if cap(f.saveShapes) < len(f.lines) {
		f.saveShapes = make([]lineShapeState, len(f.lines))
	}
	shapes := f.saveShapes[:len(f.lines)]
	for k, l := range f.lines {
		shapes[k] = lineShapeState{shp: l.shp, held: l.held, extra2: l.extra2, clampGap2: l.clampGap2, kL: l.kL}
	}
	// teGrid evaluates every tabulated line's grid at the moved T_e; the
	// Voigt fallback's shape does not depend on T_e: its means stay the
	// saved ones (re-evaluated, they were the same bit for bit).
	teGrid := func(sign float64) bool {
		f.teSign = sign
		defer func() { f.teSign = 0 }()
		for _, l := range f.lines {
			if !l.shapeSH {
				continue
			}
			g, tg := f.lineInst(l, th)
			if err := f.evalGrid(l, th[pr.iNe], g, tg, false); err != nil {
				return false
			}
		}
		return true
	}
	if f.generic {
		// The general form (TestWholeFastPaths): each sign's lines
		// evaluated in full (evalLine) and their means put back.
		teShift := func(sign float64) ([2]float64, bool) {
			f.teSign = sign
			defer func() { f.teSign = 0 }()
			for _, l := range f.lines {
				if !l.shapeSH {
					continue
				}
				g, tg := f.lineInst(l, th)
				if err := f.evalLine(l, th[pr.iNe], th[pr.iOff], g, tg, false); err != nil {
					return [2]float64{}, false
				}
			}
			return shiftFor(), true
		}
		d1, ok1 := teShift(1)
		d2, ok2 := teShift(-1)
		f.teOK = [2]bool{ok1, ok2}
		restore()
		switch {
		case ok1 && ok2:
			add("electron temperature of the tables", half(d1, d2))
		case ok1:
			add("electron temperature of the tables", d1)
		case ok2:
			add("electron temperature of the tables", d2)
		}
	} else {
		// Both signs' grids, then both signs' pixel means in one pass
		// (pixelsPair: the same means, bit for bit, as pixels from each).
		ok1 := teGrid(1)
		if ok1 {
			for _, l := range f.lines {
				if l.shapeSH {
					l.stashGrid()
				}
			}
		}
		ok2 := teGrid(-1)
		f.teOK = [2]bool{ok1, ok2}
		if ok2 && !ok1 {
			// Kept as a stand-in for the state that failed (its means
			// are not used).
			for _, l := range f.lines {
				if l.shapeSH {
					l.stashGrid()
				}
			}
		}
		if ok1 || ok2 {
			for _, l := range f.lines {
				if l.shapeSH {
					f.pixelsPair(l, th[pr.iOff])
				}
			}
		}
		teMeans := func(alt bool) func(*wline) []float64 {
			return func(l *wline) []float64 {
				switch {
				case !l.shapeSH:
					return l.u // the saved means
				case alt:
					return l.uAlt
				}
				return l.uCur
			}
		}
		switch {
		case ok1 && ok2:
			add("electron temperature of the tables", half(shiftOf2(teMeans(true), teMeans(false))))
		case ok1:
			add("electron temperature of the tables", shiftOf(teMeans(true)))
		case ok2:
			add("electron temperature of the tables", shiftOf(teMeans(false)))
		}
	}
	// Back to the solution: the shapes (the grid's masses are rebuilt by
	// the next evaluation; the pixel means were not changed).
	for k, l := range f.lines {
		st := &shapes[k]
		l.shp, l.held, l.extra2, l.clampGap2, l.kL = st.shp, st.held, st.extra2, st.clampGap2, st.kL
	}
	// Accuracy of the line widths the model takes from the tables (or a
	// relation), in two parts: one common to every line (a reading of
	// the tables that is too wide or too narrow everywhere) and one of
	// each line on its own (each line's tables are interpolated between
	// their own nodes, independently). A relative width error r of line
	// k is the model change of ln n_e by r/p_k on that line alone, p_k
	// the local exponent d ln w/d ln n_e of the width the model uses
	// (for tabulated lines the tables' width with their own Doppler
	// part, which is what is read: where that Doppler part dominates,
	// p_k is small and a small reading error moves n_e far). The model
	// change, through l.dn, is projected on ln n_e and β by the fit's
	// sensitivities: the common part coherently over the lines, the
	// line part in quadrature.
	// r is wholeReadNodeRel + wholeReadMidRel × the line's distance from
	// the tables' nodes (sh99 NodeDistance: 0 at a node, 1 midway), for
	// each part; a relation's width takes wholeRelationRel.
	var cn, cb, sn, sb, rMin, rMax, vn, vb float64
	rMin = math.Inf(1)
	anySH, anyStandIn := false, false
	for k, l := range f.lines {
		pk, ok := f.lineReadExponent(l, ne)
		if !ok || !(pk > 0) {
			continue
		}
		if !l.shapeSH && f.opt.LineShape != LineShapeVoigt {
			// A Voigt standing in for a Stark-shaped line: its n_e
			// shifts by wholeVoigtStandInRel (the width by that × p_k),
			// the same way for every such line.
			anyStandIn = true
			a := f.areaOf(k, th)
			for i := l.plo; i < l.phi; i++ {
				dm := a * l.dn[i-l.plo] * wholeVoigtStandInRel
				vn += sens[i] * dm
				vb += sensB[i] * dm
			}
		}
		r := wholeRelationRel
		if l.shapeSH {
			anySH = true
			r = wholeReadNodeRel + wholeReadMidRel*l.sh.NodeDistance(ne, f.tOf(l))
		}
		rMin, rMax = math.Min(rMin, r), math.Max(rMax, r)
		a := f.areaOf(k, th)
		var d, db float64
		for i := l.plo; i < l.phi; i++ {
			dm := a * l.dn[i-l.plo] * r / pk
			d += sens[i] * dm
			db += sensB[i] * dm
		}
		cn += d
		cb += db
		sn += d * d
		sb += db * db
	}
	if anyStandIn {
		add(fmt.Sprintf("Voigt standing in for the Stark shape outside the SH99 tables (n_e ±%.0f %%)", 100*wholeVoigtStandInRel), [2]float64{math.Abs(vn), math.Abs(vb)})
	}
	if rMax == 0 {
		return parts, tParts
	}
	span := fmt.Sprintf("±%.2g %%", 100*rMax)
	if rMax-rMin > 5e-5 {
		span = fmt.Sprintf("±%.2g … %.2g %%", 100*rMin, 100*rMax)
	}
	if len(f.lines) > 1 {
		add("line widths of the tables, line by line (widths "+span+" each)", [2]float64{math.Sqrt(sn), math.Sqrt(sb)})
	}
	name := "SH99 tables as read, all lines (widths " + span + ")"
	if !anySH {
		name = "Stark relation accuracy (widths " + span + ")"
	}
	add(name, [2]float64{math.Abs(cn), math.Abs(cb)})
	return parts, tParts
}

// minInst is the smallest instrument FWHM of the lines.
func (f *wholeFitter) minInst() float64 {
	m := math.Inf(1)
	for _, l := range f.lines {
		g, _ := f.lineInst(l, f.th)
		m = math.Min(m, g)
	}
	return m
}

// lineReadExponent is d ln w / d ln n_e of the width the model takes
// for line l at ne: for a tabulated line the tables' FWHM as tabulated
// (Stark ⊗ Doppler at the tables' temperature), which is what a reading
// error of the tables scales; for a relation its exponent. False for a
// tabulated line whose tables do not give the width at ne.
func (f *wholeFitter) lineReadExponent(l *wline, ne float64) (float64, bool) {
	if !l.shapeSH {
		return l.rel.Exponent, true
	}
	// Central difference, one-sided at the tables' edge.
	hi, lo := ne*1.05, ne/1.05
	te := f.tOf(l)
	w1, e1 := l.sh.TableWidthNM(sh99.FWHM, hi, te)
	if e1 != nil {
		hi = ne
		w1, e1 = l.sh.TableWidthNM(sh99.FWHM, hi, te)
	}
	w0, e0 := l.sh.TableWidthNM(sh99.FWHM, lo, te)
	if e0 != nil {
		lo = ne
		w0, e0 = l.sh.TableWidthNM(sh99.FWHM, lo, te)
	}
	if e1 != nil || e0 != nil || !(hi > lo) || !(w1 > w0) {
		return 0, false
	}
	return math.Log(w1/w0) / math.Log(hi/lo), true
}

// weakDensity returns why the fitted n_e is not a measurement ("" when
// it is): the Stark part widens no line carrying signal (≥
// wholeSignalSigma) beyond its Gaussian, instrument ⊕ Doppler(T_gas), by
// more than wholeWeakExcessSigma × the Gaussian's relative accuracy (the
// instrument σ given, else wholeGaussRelDefault). The widening is the
// Voigt FWHM of the Stark FWHM and the Gaussian over the Gaussian, − 1
// (Olivero & Longbothum 1977); a tabulated line whose Stark width is
// below the tables' own Doppler width has none.
func (f *wholeFitter) weakDensity(th []float64, ne float64) string {
	best, bestName, bestRatio := -1.0, "", 0.0
	for _, l := range f.lines {
		if !(l.sig >= wholeSignalSigma) {
			continue
		}
		g, tg := f.lineInst(l, th)
		gauss := math.Hypot(g, diag.DopplerFWHMNM(l.center, tg, f.mass))
		if !(gauss > 0) {
			continue
		}
		stark := 0.0
		if !l.shapeSH {
			stark = l.rel.LorentzianWidthNM(l.rel.WidthFromDensity(ne))
		} else if w, err := l.sh.StarkWidthNM(sh99.FWHM, ne, f.tOf(l)); err == nil {
			stark = w
		} else if wt, err := l.sh.TableWidthNM(sh99.FWHM, ne, f.tOf(l)); err == nil {
			// Outside the range of the tables' Stark-only widths: the
			// Lorentzian that, with the tables' Doppler width, makes
			// their FWHM (a Voigt reading of the tabulated profile).
			if w, err := diag.LorentzFromVoigt(wt, l.sh.DopplerFWHMNM(f.tOf(l))); err == nil {
				stark = w
			}
		}
		excess := 0.0
		if stark > 0 {
			excess = diag.VoigtFWHM(gauss, stark)/gauss - 1
		}
		if excess > best {
			best, bestName, bestRatio = excess, l.t.Name(), stark/gauss
		}
	}
	if best < 0 {
		return ""
	}
	rel, what := wholeGaussRelDefault, "assumed: no instrument σ was given"
	if s, i := f.m.InstrumentFWHMUncNM, f.minInst(); s > 0 && i > 0 {
		rel, what = s/i, "from the instrument σ given"
	}
	need := wholeWeakExcessSigma * rel
	if best >= need {
		return ""
	}
	return fmt.Sprintf("the Stark broadening widens no line enough to measure it — the most, %s (its Stark FWHM %.2g %% of its instrument ⊕ Doppler Gaussian), by %.2g %%, under %g × the Gaussian width's accuracy (%.2g %%, %s); a Gaussian wrong by that much would move n_e by more than the fit measures. A narrower instrument, or higher Balmer members in the range (their Stark widths are larger), would give a measured n_e",
		bestName, 100*bestRatio, 100*best, wholeWeakExcessSigma, 100*rel, what)
}

// cubicSum is a cubic Legendre baseline at one pixel, Σ t_b·P_b summed
// from 0 in the order b = 0…3: the same sums as the general loops over
// the baseline's terms (kept inlinable for the unrolled fast paths).
func cubicSum(t0, t1, t2, t3, p0, p1, p2, p3 float64) float64 {
	m := 0.0
	m += t0 * p0
	m += t1 * p1
	m += t2 * p2
	m += t3 * p3
	return m
}
