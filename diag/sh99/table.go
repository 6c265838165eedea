package sh99

import (
	"bytes"
	"compress/gzip"
	_ "embed"
	"encoding/json"
	"fmt"
	"math"
	"sort"
	"sync"

	"gonum.org/v1/gonum/integrate/quad"
)

// rawTables is the Stehlé & Hutcheon (1999) Balmer data set, unchanged
// (see data/PROVENANCE.md).
//
//go:embed data/stehle-hutcheon-1999-balmer.json.gz
var rawTables []byte

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

// fileTables mirrors the JSON layout of the data file.
type fileTables struct {
	Lines []struct {
		Lower   int         `json:"lower"`
		Upper   int         `json:"upper"`
		TK      []float64   `json:"T_K"`
		NeCM3   []float64   `json:"ne_cm3"`
		X       []float64   `json:"delta_nu_over_F0"`
		Lambda0 [][]float64 `json:"lambda0_vac_angstrom"`
		// Profile[i][j][k] at X[i], NeCM3[j], TK[k]; 0 where not
		// tabulated.
		Profile [][][]float64 `json:"profile"`
	} `json:"lines"`
}

// set holds every line of the tables. The file is decoded once; each
// line's node profiles and widths are prepared on its first use.
type set struct {
	prep  map[int]func() (*Line, error)
	order []int
}

// line returns the prepared line with upper level upper; ok is false if
// the tables do not cover it.
func (s *set) line(upper int) (l *Line, ok bool, err error) {
	p, ok := s.prep[upper]
	if !ok {
		return nil, false, nil
	}
	l, err = p()
	return l, true, err
}

// load decodes the embedded tables once; later calls return the same
// result.
var load = sync.OnceValues(decode)

// decode unpacks the embedded file; each line's node profiles, areas and
// widths are prepared on first use (set.line).
func decode() (*set, error) {
	zr, err := gzip.NewReader(bytes.NewReader(rawTables))
	if err != nil {
		return nil, fmt.Errorf("sh99: embedded tables: %w", err)
	}
	var f fileTables
	if err := json.NewDecoder(zr).Decode(&f); err != nil {
		return nil, fmt.Errorf("sh99: embedded tables: %w", err)
	}
	s := &set{prep: make(map[int]func() (*Line, error))}
	for _, fl := range f.Lines {
		if fl.Lower != 2 {
			continue
		}
		if _, dup := s.prep[fl.Upper]; dup {
			return nil, fmt.Errorf("sh99: embedded tables: line n=%d→2 twice", fl.Upper)
		}
		s.prep[fl.Upper] = sync.OnceValues(func() (*Line, error) {
			return newLine(fl.Upper, fl.TK, fl.NeCM3, fl.X, fl.Lambda0, fl.Profile)
		})
		s.order = append(s.order, fl.Upper)
	}
	sort.Ints(s.order)
	if len(s.order) == 0 {
		return nil, fmt.Errorf("sh99: embedded tables hold no Balmer line")
	}
	return s, nil
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
