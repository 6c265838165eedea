package sh99

import (
	_ "embed"
	"fmt"
	"math"
	"sort"
	"strconv"
	"strings"
	"sync"
	"sync/atomic"

	"gonum.org/v1/gonum/integrate/quad"
)

// profileValues holds every tabulated profile value of the Stehlé &
// Hutcheon (1999) Balmer tables, packed by TestLineTableGenerated from
// the provenance copy data/stehle-hutcheon-1999-balmer.json.gz (see
// data/PROVENANCE.md), which it checks value for value, bit for bit. The
// tables print three significant digits, so each value is stored as its
// shortest decimal form: a 16-bit mantissa m and an 8-bit exponent e
// (m·10^e; 3 bytes, little-endian), line by line in lineTable's order,
// node by node (n_e, then T) where tabulated, detuning by detuning.
//
//go:embed data/sh99-profiles.bin
var profileValues string

// Physical constants.
const (
	// speedOfLight is c in m/s (exact, SI 2019).
	speedOfLight = 299792458.0
	// holtsmarkCGS is the Holtsmark normal field constant of the tables:
	// F₀ = 1.25e-9 n_e^(2/3), cgs with n_e in cm⁻³ (the data file's "F0"
	// field; Stehlé & Hutcheon 1999, and physics.md §4.2).
	holtsmarkCGS = 1.25e-9
	// dopplerConst is the Doppler FWHM constant Δλ_D = 7.16233e-7 · λ₀ ·
	// √(T/M), T in K, M in amu (computed from exact constants, physics.md
	// §5.1).
	dopplerConst = 7.16233e-7
	// hydrogenMassAMU is the standard atomic weight of hydrogen used for
	// the emitter mass of the tables' Doppler part (physics.md §5.1).
	hydrogenMassAMU = 1.00794
)

// lineData is one Balmer line of the tables as generated into
// line_table.go (TestLineTableGenerated): the grid, where profiles are
// tabulated, and the table widths measured on every node profile.
type lineData struct {
	upper     int
	lambda0NM float64   // vacuum wavelength of the tables, nm
	neCM3, tK []float64 // grid (cm⁻³, K)
	x         []float64 // reduced detuning grid Δν/F₀
	// tab[j][k] is '1' where a profile is tabulated at neCM3[j], tK[k].
	tab []string
	// lnW[kind][j][k] is ln of the table width (nm) of the node profile,
	// NaN where not tabulated or not measurable.
	lnW [numKinds][][]float64
}

// set holds every line of the tables.
type set struct {
	lines map[int]*Line
	order []int
}

// line returns the line with upper level upper; ok is false if the
// tables do not cover it.
func (s *set) line(upper int) (l *Line, ok bool, err error) {
	l, ok = s.lines[upper]
	return l, ok, nil
}

// load builds the set once; later calls return the same result.
var load = sync.OnceValues(decode)

// decode builds every line from the generated lineTable; each line's node
// profiles are unpacked from profileValues and prepared on first use
// (Line.profiles). Nothing here is slow: the widths are precomputed.
func decode() (*set, error) {
	s := &set{lines: make(map[int]*Line, len(lineTable))}
	off := 0
	for _, d := range lineTable {
		if _, dup := s.lines[d.upper]; dup {
			return nil, fmt.Errorf("sh99: embedded tables: line n=%d→2 twice", d.upper)
		}
		n := 0
		for _, row := range d.tab {
			n += strings.Count(row, "1")
		}
		size := n * len(d.x) * packedSize
		if off+size > len(profileValues) {
			return nil, fmt.Errorf("sh99: embedded tables: profile values end before line n=%d→2", d.upper)
		}
		l, err := lineFromData(d, profileValues[off:off+size])
		if err != nil {
			return nil, err
		}
		off += size
		s.lines[d.upper] = l
		s.order = append(s.order, d.upper)
	}
	if off != len(profileValues) {
		return nil, fmt.Errorf("sh99: embedded tables: %d bytes of profile values left over", len(profileValues)-off)
	}
	sort.Ints(s.order)
	if len(s.order) == 0 {
		return nil, fmt.Errorf("sh99: embedded tables hold no Balmer line")
	}
	return s, nil
}

// packedSize is the size of one packed profile value in profileValues.
const packedSize = 3

// unpack returns the profile value packed at b[0:3]: m·10^e, correctly
// rounded (the value ParseFloat gives for the decimal text).
func unpack(b string) float64 {
	m := int16(uint16(b[0]) | uint16(b[1])<<8)
	e := int(int8(b[2]))
	// m and 10^|e| ≤ 10²² are exact in float64, and one multiplication
	// or division of exact values is correctly rounded (Clinger's fast
	// path, as in strconv).
	switch {
	case e >= 0 && e < len(pow10):
		return float64(m) * pow10[e]
	case e < 0 && -e < len(pow10):
		return float64(m) / pow10[-e]
	}
	v, _ := strconv.ParseFloat(strconv.Itoa(int(m))+"e"+strconv.Itoa(e), 64)
	return v
}

// pow10 holds the powers of ten that are exact in float64.
var pow10 = [...]float64{1e0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10,
	1e11, 1e12, 1e13, 1e14, 1e15, 1e16, 1e17, 1e18, 1e19, 1e20, 1e21, 1e22}

// lineFromData builds a line from its generated data; packed holds its
// profile values, unpacked on the first use of the node profiles.
func lineFromData(d lineData, packed string) (*Line, error) {
	nx, nne, nt := len(d.x), len(d.neCM3), len(d.tK)
	if nx < 4 || nne < 2 || nt < 2 || len(d.tab) != nne || !(d.lambda0NM > 0) {
		return nil, fmt.Errorf("sh99: line n=%d→2: malformed grid", d.upper)
	}
	l := &Line{upper: d.upper, lambda0NM: d.lambda0NM, ne: d.neCM3, t: d.tK,
		lne: make([]float64, nne), lt: make([]float64, nt), xPerNM: make([]float64, nne),
		tab: make([][]bool, nne)}
	for j, v := range d.neCM3 {
		l.lne[j] = math.Log(v)
	}
	for k, v := range d.tK {
		l.lt[k] = math.Log(v)
	}
	for j, row := range d.tab {
		if len(row) != nt {
			return nil, fmt.Errorf("sh99: line n=%d→2: malformed grid", d.upper)
		}
		l.tab[j] = make([]bool, nt)
		for k := range nt {
			l.tab[j][k] = row[k] == '1'
		}
	}
	l.setXPerNM()
	for kind := range numKinds {
		if len(d.lnW[kind]) != nne {
			return nil, fmt.Errorf("sh99: line n=%d→2: malformed grid", d.upper)
		}
		l.lw[kind][0] = d.lnW[kind]
		l.lw[kind][1] = make([][]float64, nne)
		for j := range nne {
			if len(d.lnW[kind][j]) != nt {
				return nil, fmt.Errorf("sh99: line n=%d→2: malformed grid", d.upper)
			}
			l.lw[kind][1][j] = make([]float64, nt)
			for k := range nt {
				l.lw[kind][1][j][k] = math.NaN()
			}
		}
	}
	l.x, l.packed = d.x, packed
	l.nodeAt = make([][]atomic.Pointer[nodeProfile], nne)
	l.nodeOff = make([][]int, nne)
	off := 0
	for j := range nne {
		l.nodeAt[j] = make([]atomic.Pointer[nodeProfile], nt)
		l.nodeOff[j] = make([]int, nt)
		for k := range nt {
			l.nodeOff[j][k] = -1
			if l.tab[j][k] {
				l.nodeOff[j][k] = off
				off += nx * packedSize
			}
		}
	}
	return l, nil
}

// setXPerNM sets the conversion of Δλ in nm to x at every n_e of the grid.
func (l *Line) setXPerNM() {
	lam := l.lambda0NM * 1e-9
	for j, v := range l.ne {
		f0 := holtsmarkCGS * math.Pow(v, 2.0/3.0)
		// x = Δν/F₀, Δν = c Δλ/λ₀² (Δλ in m = 1e-9 Δλ[nm]).
		l.xPerNM[j] = speedOfLight / (lam * lam) * 1e-9 / f0
	}
}

// node returns the profile at ne[j], t[k] (nil where not tabulated),
// unpacked and prepared on its first use.
func (l *Line) node(j, k int) (*nodeProfile, error) {
	if np := l.nodeAt[j][k].Load(); np != nil {
		return np, nil
	}
	off := l.nodeOff[j][k]
	if off < 0 {
		return nil, nil
	}
	p := make([]float64, len(l.x))
	for i := range p {
		p[i] = unpack(l.packed[off : off+packedSize])
		off += packedSize
	}
	np, err := newNodeProfile(l.x, p)
	if err != nil {
		return nil, fmt.Errorf("sh99: line n=%d→2, n_e=%g cm⁻³, T=%g K: %w", l.upper, l.ne[j], l.t[k], err)
	}
	// Concurrent first uses prepare equal profiles; the first stored is
	// kept.
	l.nodeAt[j][k].CompareAndSwap(nil, np)
	return l.nodeAt[j][k].Load(), nil
}

// profiles returns every node profile of the line (nodes[j][k] at ne[j],
// t[k]; nil where not tabulated), preparing those not yet used.
func (l *Line) profiles() ([][]*nodeProfile, error) {
	nodes := make([][]*nodeProfile, len(l.ne))
	for j := range l.ne {
		nodes[j] = make([]*nodeProfile, len(l.t))
		for k := range l.t {
			np, err := l.node(j, k)
			if err != nil {
				return nil, err
			}
			nodes[j][k] = np
		}
	}
	return nodes, nil
}

// glNodes are 8-point Gauss–Legendre nodes and weights on [0, 1] used to
// integrate the node profiles segment by segment.
var glX, glW = func() ([]float64, []float64) {
	x, w := make([]float64, 8), make([]float64, 8)
	quad.Legendre{}.FixedLocations(x, w, 0, 1)
	return x, w
}()

// nodeProfile is the tabulated profile at one (n_e, T) node as a function
// of the reduced detuning x = Δν/F₀, interpolated by monotone cubic
// Hermite (Fritsch–Carlson, as in PCHIP) in ln P against
//
//	u = ½ ln(1 + x²/x_c²),
//
// with x_c a rough half width at half maximum of the node. Near the core
// u is close to linear in x² (the profile is even in x, and a Gaussian
// core is a straight line in (x², ln P)); in the wings u → ln x (the
// Stark wings are power laws in x). The interpolant passes through every
// tabulated value, has no overshoot (its maximum is the largest
// tabulated value) and is monotone between nodes. Beyond the last node
// the far wing is extrapolated as a power law.
type nodeProfile struct {
	x   []float64 // x_i (shared by the line)
	xc  float64   // x_c
	u   []float64 // u_i
	p   []float64 // P_i, 1/Hz
	lp  []float64 // ln P_i
	d   []float64 // d ln P/du at node i
	cum []float64 // ∫₀^{x_i} P dx
	// tailSlope is d ln P/d ln x beyond the last node.
	tailSlope float64
	half      float64 // ∫₀^∞ P dx (one side)
	// dip is true when the largest tabulated value is off the centre.
	dip bool
	// tab is the dense cumulative table of Shape, built on first use.
	tabOnce sync.Once
	tab     *cumTable
}

func newNodeProfile(x, p []float64) (*nodeProfile, error) {
	n := len(x)
	np := &nodeProfile{x: x, p: p, u: make([]float64, n), lp: make([]float64, n), d: make([]float64, n), cum: make([]float64, n)}
	imax := 0
	for i, v := range p {
		if !(v > 0) || math.IsInf(v, 0) {
			return nil, fmt.Errorf("profile value %g at x=%g is not positive", v, x[i])
		}
		np.lp[i] = math.Log(v)
		if v > p[imax] {
			imax = i
		}
	}
	np.dip = imax > 0
	// x_c: the first node beyond the peak below half maximum.
	np.xc = x[n-1]
	for i := imax; i < n; i++ {
		if p[i] < p[imax]/2 {
			np.xc = x[i]
			break
		}
	}
	for i, v := range x {
		np.u[i] = np.uOf(v)
	}
	u := np.u
	// Fritsch–Carlson slopes.
	sec := make([]float64, n)
	for i := range n - 1 {
		sec[i] = (np.lp[i+1] - np.lp[i]) / (u[i+1] - u[i])
	}
	for i := range n {
		switch {
		case i == 0:
			np.d[i] = 0 // even profile: flat at the centre
		case i == n-1:
			np.d[i] = sec[n-2]
		case sec[i-1]*sec[i] <= 0:
			np.d[i] = 0
		default:
			// Weighted harmonic mean (Fritsch & Butland 1984, as in
			// PCHIP).
			h0, h1 := u[i]-u[i-1], u[i+1]-u[i]
			w1, w2 := 2*h1+h0, h1+2*h0
			np.d[i] = (w1 + w2) / (w1/sec[i-1] + w2/sec[i])
		}
	}
	np.tailSlope = (np.lp[n-1] - np.lp[n-2]) / math.Log(x[n-1]/x[n-2])
	for i := range n - 1 {
		np.cum[i+1] = np.cum[i] + np.segIntegral(i, x[i+1])
	}
	np.half = np.cum[n-1]
	if s := np.tailSlope; s < -1 {
		np.half += p[n-1] * x[n-1] / (-s - 1)
	}
	return np, nil
}

// xcFactor scales x_c from the first node below half maximum.
var xcFactor = 3.0

// uOf maps x to the interpolation variable u − ln x_c (log1p keeps the
// tiny u of the core distinct).
func (np *nodeProfile) uOf(x float64) float64 {
	r := x / np.xc
	return 0.5 * math.Log1p(r*r)
}

// segLog evaluates ln P at u inside segment i (u_i ≤ u ≤ u_{i+1}).
func (np *nodeProfile) segLog(i int, u float64) float64 {
	h := np.u[i+1] - np.u[i]
	t := (u - np.u[i]) / h
	t2, t3 := t*t, t*t*t
	return (2*t3-3*t2+1)*np.lp[i] + (t3-2*t2+t)*h*np.d[i] + (-2*t3+3*t2)*np.lp[i+1] + (t3-t2)*h*np.d[i+1]
}

// segIntegral returns ∫ P dx from x_i to xe (x_i ≤ xe ≤ x_{i+1}).
func (np *nodeProfile) segIntegral(i int, xe float64) float64 {
	h := xe - np.x[i]
	var s float64
	for k, t := range glX {
		x := np.x[i] + h*t
		s += glW[k] * math.Exp(np.segLog(i, np.uOf(x)))
	}
	return s * h
}

// seg returns the segment i with x_i ≤ x ≤ x_{i+1}, for x inside the grid.
func (np *nodeProfile) seg(x float64) int {
	i := sort.SearchFloat64s(np.x, x) - 1
	return max(0, min(i, len(np.x)-2))
}

// at returns P(x) for x ≥ 0.
func (np *nodeProfile) at(x float64) float64 {
	n := len(np.x)
	if x >= np.x[n-1] {
		return np.p[n-1] * math.Pow(x/np.x[n-1], np.tailSlope)
	}
	return math.Exp(np.segLog(np.seg(x), np.uOf(x)))
}

// cumAt returns ∫₀^x P dx.
func (np *nodeProfile) cumAt(x float64) float64 {
	n := len(np.x)
	if x >= np.x[n-1] {
		s := np.tailSlope
		return np.cum[n-1] + np.p[n-1]*np.x[n-1]/(s+1)*(math.Pow(x/np.x[n-1], s+1)-1)
	}
	i := np.seg(x)
	return np.cum[i] + np.segIntegral(i, x)
}

// fwhm returns the full width at half maximum in x units: the outermost
// points where P falls to half of its largest value. For lines with a
// central dip (Hβ) the maximum is the peaks', so the half maximum is
// relative to the peaks, not to the centre value.
func (np *nodeProfile) fwhm() float64 {
	imax := 0
	for i, v := range np.p {
		if v > np.p[imax] {
			imax = i
		}
	}
	half := np.p[imax] / 2
	last := imax
	for i := imax; i < len(np.p); i++ {
		if np.p[i] >= half {
			last = i
		}
	}
	if last == len(np.p)-1 {
		return math.NaN()
	}
	// Bisection in u on the monotone segment [u_last, u_last+1].
	lh := math.Log(half)
	a, b := np.u[last], np.u[last+1]
	for range 60 {
		m := 0.5 * (a + b)
		if np.segLog(last, m) >= lh {
			a = m
		} else {
			b = m
		}
	}
	u := 0.5 * (a + b)
	return 2 * np.xc * math.Sqrt(math.Expm1(2*u))
}

// fwha returns the full width at half area in x units: 2a with ∫₀^a P dx
// = ½∫₀^∞ P dx.
func (np *nodeProfile) fwha() float64 {
	target := np.half / 2
	i := sort.Search(len(np.cum), func(k int) bool { return np.cum[k] >= target }) - 1
	if i < 0 || i >= len(np.cum)-1 {
		return math.NaN()
	}
	// Safeguarded Newton on [x_i, x_{i+1}]: the cumulative area F(x) is
	// increasing with F′ = P.
	a, b := np.x[i], np.x[i+1]
	x := a + (b-a)*(target-np.cum[i])/(np.cum[i+1]-np.cum[i])
	for range 60 {
		f := np.cum[i] + np.segIntegral(i, x) - target
		if f < 0 {
			a = x
		} else {
			b = x
		}
		next := x - f/np.at(x)
		if !(next > a && next < b) {
			next = 0.5 * (a + b)
		}
		if math.Abs(next-x) <= 1e-13*x {
			x = next
			break
		}
		x = next
	}
	return 2 * x
}
