package sh99

import (
	"errors"
	"fmt"
	"math"
	"sort"
	"sync"
	"sync/atomic"
)

// WidthKind names a width of a line profile.
type WidthKind int

const (
	// FWHM is the full width at half maximum: the distance between the
	// outermost points where the profile falls to half of its largest
	// value. For lines with a central dip (Hβ and the other members with
	// even upper level) the largest value is the peaks', so the half
	// maximum is taken relative to the peaks, not to the centre.
	FWHM WidthKind = iota
	// FWHA is the full width at half area: the width of the central
	// interval that holds half of the profile's area.
	FWHA
	numKinds
)

// String returns "FWHM" or "FWHA".
func (k WidthKind) String() string {
	switch k {
	case FWHM:
		return "FWHM"
	case FWHA:
		return "FWHA"
	}
	return fmt.Sprintf("WidthKind(%d)", int(k))
}

// ErrOutOfRange is wrapped by every error about an (n_e, T) or a width
// outside the tables or outside the range where the Doppler part can be
// removed.
var ErrOutOfRange = errors.New("outside the Stehlé–Hutcheon tables")

// maxDopplerRatio bounds the ratio of the table's Doppler FWHM to the
// Stark-only width of the same kind for which a Stark-only width is
// reported. Beyond it the removal of the Doppler part depends too much on
// the shape of the Stark part (see the package doc and the measured
// uncertainty in TestDopplerRemovalUncertainty). glowlog's choice, no
// source.
const maxDopplerRatio = 1.0

// Line is one Balmer line n_u → 2 of the tables. Its methods are safe for
// concurrent use.
type Line struct {
	upper     int
	lambda0NM float64   // vacuum wavelength of the tables, nm
	lne, lt   []float64 // ln n_e (cm⁻³) and ln T (K) of the grid
	ne, t     []float64 // grid values
	// tab[j][k] is true where the tables hold a profile at ne[j], t[k].
	tab [][]bool
	// nodeAt[j][k] holds the profile at ne[j], t[k] once prepared (see
	// node): each is unpacked from packed (its values at nodeOff[j][k])
	// on its first use, so that a profile evaluation prepares only the
	// nodes around it.
	nodeAt  [][]atomic.Pointer[nodeProfile]
	nodeOff [][]int
	packed  string
	x       []float64 // reduced detuning grid of the node profiles
	// xPerNM[j] converts Δλ in nm to x at ne[j].
	xPerNM []float64
	// lw[kind][stark][j][k] is ln of the width in nm at node (j, k): table
	// width (stark = 0, Stark ⊗ Doppler at T) or Stark-only width
	// (stark = 1). NaN where not available.
	lw [numKinds][2][][]float64
	// unc[kind][j][k] is the relative uncertainty of the Doppler removal
	// at node (j, k) (starkEstimate).
	unc [numKinds][][]float64
	// starkOnce guards the lazy computation of lw[kind][1] and unc.
	starkOnce [numKinds]sync.Once
}

// starkWidths returns ln of the Stark-only widths of kind at every node
// (NaN where not available), computed on first use per line and kind
// (starkEstimate needs numerical convolutions: tens of milliseconds per
// line).
func (l *Line) starkWidths(kind WidthKind) [][]float64 {
	l.starkOnce[kind].Do(func() {
		if tab, ok := starkTable[starkKey{l.upper, kind}]; ok && len(tab) == len(l.ne) && len(tab[0]) == len(l.t) {
			// Precomputed by computeStarkWidths (stark_table.go, checked
			// by TestStarkTableGenerated): the numerical convolutions cost
			// ~0.1 s per line, paid by every process otherwise.
			g := l.lw[kind][1]
			l.unc[kind] = make([][]float64, len(l.ne))
			for j := range l.ne {
				l.unc[kind][j] = make([]float64, len(l.t))
				for k := range l.t {
					g[j][k], l.unc[kind][j][k] = tab[j][k][0], tab[j][k][1]
				}
			}
			return
		}
		lnW, unc := l.computeStarkWidths(kind)
		copy(l.lw[kind][1], lnW)
		l.unc[kind] = unc
	})
	return l.lw[kind][1]
}

// starkKey names one line's table of Stark-only widths of one kind.
type starkKey struct {
	upper int
	kind  WidthKind
}

// computeStarkWidths returns ln of the Stark-only widths of kind at every
// node (NaN where not available) and the relative σ of their Doppler
// removal, from the tabulated profiles.
func (l *Line) computeStarkWidths(kind WidthKind) (lnW, unc [][]float64) {
	nodes, err := l.profiles()
	if err != nil {
		panic(err) // the embedded tables are checked by TestLineTableGenerated
	}
	lnW = make([][]float64, len(l.ne))
	unc = make([][]float64, len(l.ne))
	for j := range l.ne {
		lnW[j] = make([]float64, len(l.t))
		unc[j] = make([]float64, len(l.t))
		for k, tk := range l.t {
			lnW[j][k] = math.NaN()
			np := nodes[j][k]
			if np == nil {
				continue
			}
			wD := l.DopplerFWHMNM(tk)
			s, u := starkEstimate(kind, np, l.xPerNM[j], math.Exp(l.lw[kind][0][j][k]), wD)
			if s > 0 && wD <= maxDopplerRatio*s {
				lnW[j][k] = math.Log(s)
				unc[j][k] = u
			}
		}
	}
	return lnW, unc
}

// Upper returns the upper principal quantum number n_u of the line n_u → 2.
func (l *Line) Upper() int { return l.upper }

// Lambda0NM returns the line's vacuum wavelength used by the tables, nm
// (the data file's lambda0_vac_angstrom).
func (l *Line) Lambda0NM() float64 { return l.lambda0NM }

// DopplerFWHMNM returns the FWHM in nm of the Doppler part built into the
// tables at temperature tK: the emitter (hydrogen, 1.00794 amu) at the
// table's T,
//
//	Δλ_D = 7.16233e-7 · λ₀ · √(T/M)
//
// (physics.md §5.1, computed from exact constants).
func (l *Line) DopplerFWHMNM(tK float64) float64 {
	return dopplerConst * l.lambda0NM * math.Sqrt(tK/hydrogenMassAMU)
}

// Grid returns copies of the tables' electron densities (m⁻³) and
// temperatures (K) for this line. Not every (n_e, T) pair is tabulated:
// see Tabulated.
func (l *Line) Grid() (neM3, tK []float64) {
	neM3 = make([]float64, len(l.ne))
	for j, v := range l.ne {
		neM3[j] = v * 1e6
	}
	return neM3, append([]float64(nil), l.t...)
}

// Tabulated reports whether the tables hold a profile at the grid node
// (neM3, tK), given as returned by Grid (matched to 1e-9 relative).
func (l *Line) Tabulated(neM3, tK float64) bool {
	find := func(g []float64, v float64) int {
		for i, x := range g {
			if math.Abs(v/x-1) <= 1e-9 {
				return i
			}
		}
		return -1
	}
	j, k := find(l.ne, neM3*1e-6), find(l.t, tK)
	return j >= 0 && k >= 0 && l.tab[j][k]
}

// name returns "Hα", "Hβ", … or "H(n→2)".
func (l *Line) name() string {
	if n := l.upper - 3; n >= 0 && n < 4 {
		return []string{"Hα", "Hβ", "Hγ", "Hδ"}[n]
	}
	return fmt.Sprintf("H(%d→2)", l.upper)
}

// cell locates v in the increasing grid g: index i and weight t ∈ [0, 1]
// with v = (1−t)·g[i] + t·g[i+1]. ok is false outside the grid.
func cell(g []float64, v float64) (i int, t float64, ok bool) {
	n := len(g)
	if !(v >= g[0] && v <= g[n-1]) {
		return 0, 0, false
	}
	i = sort.SearchFloat64s(g, v) - 1
	if i < 0 {
		i = 0
	}
	if i > n-2 {
		i = n - 2
	}
	return i, (v - g[i]) / (g[i+1] - g[i]), true
}

// corners is an interpolation cell in (ln n_e, ln T) with its four
// bilinear weights.
type corners struct {
	j, k   int
	tj, tk float64
}

func (c corners) each(f func(j, k int, w float64)) {
	for dj := range 2 {
		wj := c.tj
		if dj == 0 {
			wj = 1 - c.tj
		}
		if wj == 0 {
			continue
		}
		for dk := range 2 {
			wk := c.tk
			if dk == 0 {
				wk = 1 - c.tk
			}
			if wk == 0 {
				continue
			}
			f(c.j+dj, c.k+dk, wj*wk)
		}
	}
}

// locate finds the interpolation cell of (neM3, tK) and checks that every
// corner with a non-zero weight has a finite value in grid g (nil: check
// that the profile is tabulated).
func (l *Line) locate(neM3, tK float64, g [][]float64, what string) (corners, error) {
	if !(neM3 > 0) || !(tK > 0) || math.IsInf(neM3, 0) || math.IsInf(tK, 0) {
		return corners{}, fmt.Errorf("sh99: %s: n_e = %g m⁻³ and T = %g K must be positive and finite", l.name(), neM3, tK)
	}
	j, tj, okj := cell(l.lne, math.Log(neM3*1e-6))
	k, tk, okk := cell(l.lt, math.Log(tK))
	c := corners{j, k, tj, tk}
	ok := okj && okk
	if ok {
		c.each(func(j, k int, _ float64) {
			if g == nil && !l.tab[j][k] || g != nil && math.IsNaN(g[j][k]) {
				ok = false
			}
		})
	}
	if !ok {
		return c, &cellError{l: l, what: what, neM3: neM3, tK: tK, g: g}
	}
	return c, nil
}

// cellError is locate's error outside the tables: its message (the range
// that is covered) is written only when asked for, since callers that
// probe the tables' reach read none.
type cellError struct {
	l        *Line
	what     string
	neM3, tK float64
	g        [][]float64
}

func (e *cellError) Error() string {
	return fmt.Sprintf("sh99: %s %s at n_e = %.4g m⁻³, T = %.4g K: %v (%s)", e.l.name(), e.what, e.neM3, e.tK, ErrOutOfRange, e.l.rangeText(e.tK, e.g))
}

func (e *cellError) Unwrap() error { return ErrOutOfRange }

// neRange returns the n_e range (m⁻³) at temperature tK in which every
// cell has its corners available in g (nil: tabulated profiles). ok is
// false when there is none.
func (l *Line) neRange(tK float64, g [][]float64) (lo, hi float64, ok bool) {
	jlo, jhi, ok := l.neRangeIdx(tK, g)
	if !ok {
		return 0, 0, false
	}
	return l.ne[jlo] * 1e6, l.ne[jhi] * 1e6, true
}

// neRangeIdx is neRange as grid indices.
func (l *Line) neRangeIdx(tK float64, g [][]float64) (jlo, jhi int, ok bool) {
	if !(tK > 0) {
		return 0, 0, false
	}
	k, tk, okk := cell(l.lt, math.Log(tK))
	if !okk {
		return 0, 0, false
	}
	avail := func(j int) bool {
		for dk := range 2 {
			if dk == 1 && tk == 0 || dk == 0 && tk == 1 {
				continue
			}
			if g == nil && !l.tab[j][k+dk] || g != nil && math.IsNaN(g[j][k+dk]) {
				return false
			}
		}
		return true
	}
	// The longest run of available nodes.
	bestLo, bestHi := -1, -1
	for j := 0; j < len(l.ne); {
		if !avail(j) {
			j++
			continue
		}
		s := j
		for j < len(l.ne) && avail(j) {
			j++
		}
		if j-1-s > bestHi-bestLo {
			bestLo, bestHi = s, j-1
		}
	}
	if bestLo < 0 || bestHi == bestLo {
		return 0, 0, false
	}
	return bestLo, bestHi, true
}

// rangeText describes the valid range at tK for an error message.
func (l *Line) rangeText(tK float64, g [][]float64) string {
	tr := fmt.Sprintf("tables: T %.4g–%.4g K", l.t[0], l.t[len(l.t)-1])
	if lo, hi, ok := l.neRange(tK, g); ok {
		return fmt.Sprintf("%s; at T = %.4g K n_e %.4g–%.4g m⁻³", tr, tK, lo, hi)
	}
	return fmt.Sprintf("%s, n_e %.4g–%.4g m⁻³; nothing available at T = %.4g K", tr, l.ne[0]*1e6, l.ne[len(l.ne)-1]*1e6, tK)
}

// widthName names a width in messages.
func widthName(kind WidthKind, stark int) string {
	return [2][numKinds]string{{"table FWHM", "table FWHA"}, {"Stark FWHM", "Stark FWHA"}}[stark][kind]
}

// grid returns the node widths (ln) of kind: table widths (stark = 0) or
// Stark-only widths (stark = 1).
func (l *Line) grid(kind WidthKind, stark int) [][]float64 {
	if kind < 0 || kind >= numKinds {
		panic(fmt.Sprintf("sh99: unknown width kind %d", int(kind)))
	}
	if stark == 1 {
		return l.starkWidths(kind)
	}
	return l.lw[kind][0]
}

// width interpolates ln w bilinearly in (ln n_e, ln T).
func (l *Line) width(kind WidthKind, stark int, neM3, tK float64) (float64, error) {
	if kind < 0 || kind >= numKinds {
		panic(fmt.Sprintf("sh99: unknown width kind %d", int(kind)))
	}
	g := l.grid(kind, stark)
	c, err := l.locate(neM3, tK, g, widthName(kind, stark))
	if err != nil {
		return 0, err
	}
	var s float64
	c.each(func(j, k int, w float64) { s += w * g[j][k] })
	return math.Exp(s), nil
}

// TableWidthNM returns the width (kind FWHM or FWHA) in nm of the
// tabulated profile at (neM3, tK): the Stark profile convolved with the
// Doppler profile of hydrogen at T, as the tables give it. Widths are
// measured on each tabulated node profile and interpolated linearly in
// (ln n_e, ln T) in ln w. Outside the tabulated grid it returns an error
// wrapping ErrOutOfRange.
func (l *Line) TableWidthNM(kind WidthKind, neM3, tK float64) (float64, error) {
	return l.width(kind, 0, neM3, tK)
}

// StarkWidthNM returns the Stark-only width (kind FWHM or FWHA) in nm at
// (neM3, tK): the table width with the tables' own Doppler part (hydrogen
// at T, DopplerFWHMNM) removed as from a Voigt profile whose Lorentzian
// part is the Stark part (FWHM: Olivero & Longbothum 1977 inverted; FWHA:
// the exact half-area width of the Voigt profile inverted). This is the
// width to compare with the Stark part of a measured line after its own
// Gaussian parts (instrument, Doppler at the gas temperature) are taken
// out. Where the Doppler FWHM exceeds the Stark-only width (low n_e, high
// T) it returns an error wrapping ErrOutOfRange.
func (l *Line) StarkWidthNM(kind WidthKind, neM3, tK float64) (float64, error) {
	return l.width(kind, 1, neM3, tK)
}

// DopplerRemovalUncRel returns the relative 1σ-like uncertainty of
// StarkWidthNM from the removal of the tables' Doppler part: at each grid
// node the larger of the shape correction beyond the Voigt-equivalent
// removal and the disagreement of two Richardson extrapolations (see the
// package doc), interpolated bilinearly in (ln n_e, ln T). It is below
// 1 % where the Doppler FWHM is under a tenth of the Stark width and grows
// to several per cent where they are comparable. Carry it as a
// systematic uncertainty of the SH99 Stark width.
func (l *Line) DopplerRemovalUncRel(kind WidthKind, neM3, tK float64) (float64, error) {
	g := l.grid(kind, 1)
	c, err := l.locate(neM3, tK, g, widthName(kind, 1))
	if err != nil {
		return 0, err
	}
	var u float64
	c.each(func(j, k int, w float64) { u += w * l.unc[kind][j][k] })
	return u, nil
}

// DensityFromStarkWidthM3 returns the electron density in m⁻³ whose
// Stark-only width (StarkWidthNM) of the given kind at temperature tK is
// widthNM. The width is piecewise linear in ln n_e on the grid at fixed
// T (bilinear interpolation in ln), and increasing (checked), so the root
// is found exactly on the bracketing segment. Widths outside the range
// available at tK return an error wrapping ErrOutOfRange that names the
// range.
func (l *Line) DensityFromStarkWidthM3(kind WidthKind, widthNM, tK float64) (float64, error) {
	return l.density(kind, 1, widthNM, tK)
}

// DensityFromTableWidthM3 is the inverse of TableWidthNM at fixed tK: the
// electron density whose table width (Stark ⊗ Doppler at tK) is widthNM.
// At low n_e, where the table width is the Doppler width and hardly
// depends on n_e (not even monotonically, within the interpolation's
// accuracy), it returns an error wrapping ErrOutOfRange: the inverse is
// defined only from the upper end of the grid down to where the width
// stops increasing with n_e.
func (l *Line) DensityFromTableWidthM3(kind WidthKind, widthNM, tK float64) (float64, error) {
	return l.density(kind, 0, widthNM, tK)
}

func (l *Line) density(kind WidthKind, stark int, widthNM, tK float64) (float64, error) {
	if kind < 0 || kind >= numKinds {
		panic(fmt.Sprintf("sh99: unknown width kind %d", int(kind)))
	}
	what := widthName(kind, stark)
	if !(widthNM > 0) || math.IsInf(widthNM, 0) {
		return 0, fmt.Errorf("sh99: %s %s = %g nm: width must be positive and finite", l.name(), what, widthNM)
	}
	g := l.grid(kind, stark)
	jlo, jhi, ok := l.neRangeIdx(tK, g)
	if !ok {
		return 0, fmt.Errorf("sh99: %s %s at T = %.4g K: %w (%s)", l.name(), what, tK, ErrOutOfRange, l.rangeText(tK, g))
	}
	hi := l.ne[jhi] * 1e6
	k, tk, _ := cell(l.lt, math.Log(tK))
	at := func(j int) float64 {
		switch tk {
		case 0:
			return g[j][k]
		case 1:
			return g[j][k+1]
		}
		return (1-tk)*g[j][k] + tk*g[j][k+1]
	}
	// The inverse is defined on the widest range below the upper end in
	// which the width increases strictly with n_e. Below it (table
	// widths in the Doppler-dominated regime, which hardly depend on
	// n_e) the width does not determine n_e.
	jstart := jhi
	for jstart > jlo && at(jstart-1) < at(jstart) {
		jstart--
	}
	if jstart == jhi {
		return 0, fmt.Errorf("sh99: %s %s at T = %.4g K does not increase with n_e near %.4g m⁻³: %w",
			l.name(), what, tK, hi, ErrOutOfRange)
	}
	lwant := math.Log(widthNM)
	// Widths computed here at the range ends may differ from the node
	// values by rounding.
	const eps = 1e-12
	if lwant < at(jstart) && lwant > at(jstart)-eps {
		lwant = at(jstart)
	}
	if lwant > at(jhi) && lwant < at(jhi)+eps {
		lwant = at(jhi)
	}
	wlo, whi := math.Exp(at(jstart)), math.Exp(at(jhi))
	if lwant < at(jstart) || lwant > at(jhi) {
		return 0, fmt.Errorf("sh99: %s %s = %.4g nm at T = %.4g K: %w (widths %.4g–%.4g nm for n_e %.4g–%.4g m⁻³)",
			l.name(), what, widthNM, tK, ErrOutOfRange, wlo, whi, l.ne[jstart]*1e6, hi)
	}
	for j := jstart; j < jhi; j++ {
		a, b := at(j), at(j+1)
		if lwant <= b {
			f := (lwant - a) / (b - a)
			return math.Exp(l.lne[j]+f*(l.lne[j+1]-l.lne[j])) * 1e6, nil
		}
	}
	return hi, nil
}

// StarkRange returns the electron-density range (m⁻³) and the matching
// Stark-only widths (nm) of the given kind available at temperature tK.
// ok is false when there is none.
func (l *Line) StarkRange(kind WidthKind, tK float64) (neLo, neHi, wLo, wHi float64, ok bool) {
	neLo, neHi, ok = l.neRange(tK, l.grid(kind, 1))
	if !ok {
		return 0, 0, 0, 0, false
	}
	wLo, _ = l.StarkWidthNM(kind, neLo, tK)
	wHi, _ = l.StarkWidthNM(kind, neHi, tK)
	return neLo, neHi, wLo, wHi, true
}

// ProfileRange returns the electron-density range (m⁻³) in which Profile
// and TableWidthNM work at temperature tK; ok is false when there is none.
func (l *Line) ProfileRange(tK float64) (neLo, neHi float64, ok bool) {
	return l.neRange(tK, nil)
}

// NodeDistance says how far (neM3, tK) lies from the tables' nodes, for
// the accuracy of interpolating between them: 4t(1−t) of the cell weight
// t in ln n_e and in ln T, the larger of the two — 0 at a node (in both
// variables), 1 midway between two nodes in either. Outside the grid it
// is 1.
func (l *Line) NodeDistance(neM3, tK float64) float64 {
	if !(neM3 > 0) || !(tK > 0) {
		return 1
	}
	_, tj, okj := cell(l.lne, math.Log(neM3*1e-6))
	_, tk, okk := cell(l.lt, math.Log(tK))
	if !okj || !okk {
		return 1
	}
	return math.Max(4*tj*(1-tj), 4*tk*(1-tk))
}

// CoveringTemperature returns the tables' temperature (K) nearest to tK
// (in ln T) at which Profile covers neM3: tK itself when it does,
// otherwise the nearest temperature node at which the density lies
// within ProfileRange. ok is false when no temperature of the tables
// covers neM3. The tables cover fewer densities at some temperatures
// (SH99 give the highest densities only from 10⁴ K or 19 950 K up), so a
// T_e between two nodes may miss a density that a node beside it has.
func (l *Line) CoveringTemperature(neM3, tK float64) (float64, bool) {
	covers := func(t float64) bool {
		lo, hi, ok := l.neRange(t, nil)
		return ok && neM3 >= lo && neM3 <= hi
	}
	if !(tK > 0) || math.IsInf(tK, 0) {
		return 0, false
	}
	if covers(tK) {
		return tK, true
	}
	best, bestD := 0.0, math.Inf(1)
	lt := math.Log(tK)
	for k, t := range l.t {
		if d := math.Abs(l.lt[k] - lt); d < bestD && covers(t) {
			best, bestD = t, d
		}
	}
	return best, best > 0
}
