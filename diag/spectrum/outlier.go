package spectrum

import (
	"fmt"
	"math"

	"glowlog/diag"
)

// outlierSigma is how far, in combined 1σ, a line's electron density may
// lie from the inverse-variance mean of the other lines' densities before
// its width is withheld from the density. Common practice, no source (a
// 3σ rejection; with the lines' total σ, systematic parts included, it is
// conservative).
const outlierSigma = 3

// densityOutlier returns the line (upper level) whose density is furthest
// from the weighted mean of the others, on a log scale and in units of the
// combined relative total σ (the line's in quadrature with that of the
// others' mean),
// when that exceeds outlierSigma and at least three lines give a density
// (with two it cannot be told which one is wrong; diag.Analyze flags the
// pair).
//
// A window fit can return a width that the data do not support — a weak,
// wide member on a steep response slope whose wings traded against the
// baseline came out narrow, with a density 100× too low — and an
// inverse-variance mean gives such a value, whose σ scales with it, the
// largest weight. Its width is then withheld (the other lines' density
// stands; the line's area stays on the Boltzmann plot, where the
// analysis's own off-the-line rule judges it) and the result says so.
func densityOutlier(lines []diag.LineResult) (upper int, z, ne, neOthers, uncOthers float64, ok bool) {
	type d struct {
		upper          int
		ne, su, st, sy float64
	}
	var ds []d
	for _, lr := range lines {
		if lr.ElectronDensityM3 == nil || lr.ElectronDensityUncM3 == nil || lr.DensityLowerLimit {
			continue
		}
		u := *lr.ElectronDensityUncM3
		if !(u > 0 && finiteF(u) && finiteF(*lr.ElectronDensityM3)) {
			continue
		}
		e := d{upper: lr.UpperLevel, ne: *lr.ElectronDensityM3, su: u}
		if lr.ElectronDensityUncStatM3 != nil {
			e.st = *lr.ElectronDensityUncStatM3
		}
		if lr.ElectronDensityUncSysM3 != nil {
			e.sy = *lr.ElectronDensityUncSysM3
		}
		ds = append(ds, e)
	}
	if len(ds) < 3 {
		return 0, 0, 0, 0, 0, false
	}
	// On a log scale: the densities' errors come from the widths' (n_e ∝
	// w^(1/p)), relative and symmetric in ln n_e there, and a low value
	// does not earn a large weight by its proportionally small σ (which
	// would let the one wrong line pull the others' mean to itself and
	// make a right one look like the outlier).
	best := -1.0
	for i, a := range ds {
		// The others' mean as the analysis combines them (weights 1/σ²;
		// statistical parts independent, systematic parts fully
		// correlated: diag combineDensities), without its Birge scaling.
		var sw float64
		for j, b := range ds {
			if j != i {
				sw += 1 / (b.su * b.su / (b.ne * b.ne))
			}
		}
		var lm, st2, sy float64
		for j, b := range ds {
			if j != i {
				w := 1 / (b.su * b.su / (b.ne * b.ne)) / sw
				lm += w * math.Log(b.ne)
				st2 += w * w * b.st * b.st / (b.ne * b.ne)
				sy += w * b.sy / b.ne
			}
		}
		rm := math.Hypot(math.Sqrt(st2), sy)
		if zi := math.Abs(math.Log(a.ne)-lm) / math.Hypot(a.su/a.ne, rm); zi > best {
			best, upper, ne, neOthers, uncOthers = zi, a.upper, a.ne, math.Exp(lm), math.Exp(lm)*rm
		}
	}
	return upper, best, ne, neOthers, uncOthers, best > outlierSigma
}

// withholdDensityOutliers runs the analysis of m and, while a line's
// density is an outlier (densityOutlier), withholds that line's width and
// runs it again, returning the reasons (one per withheld line).
func withholdDensityOutliers(m diag.Measurement, ar diag.Result) (diag.Result, []string, error) {
	var reasons []string
	for range len(m.Lines) {
		up, z, ne, neO, uO, ok := densityOutlier(ar.Lines)
		if !ok {
			break
		}
		k := -1
		for i := range m.Lines {
			if m.Lines[i].Upper == up && m.Lines[i].LorentzFWHMNM > 0 {
				k = i
			}
		}
		if k < 0 {
			break
		}
		m.Lines[k].LorentzFWHMNM, m.Lines[k].LorentzFWHMUncNM = 0, 0
		next, err := diag.Analyze(m)
		if err != nil {
			return ar, reasons, err
		}
		name := fmt.Sprintf("H(%d→2)", up)
		if t, err := diag.Balmer(up, m.Isotope); err == nil {
			name = t.Name()
		}
		reasons = append(reasons, fmt.Sprintf(
			"%s width withheld from the electron density: its density %.3g m⁻³ is %.1fσ from the other lines' %.3g ± %.2g m⁻³ (its window fit is not trusted; its area is kept)",
			name, ne, z, neO, uO))
		ar = next
	}
	return ar, reasons, nil
}
