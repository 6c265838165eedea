package spectrum

// The Stark-shape correction of the Voigt window fit (shape.go) is measured
// here, on spectra made in Go from the Stehlé & Hutcheon (1999) profiles of
// package diag/sh99: one Balmer line per spectrum, the tabulated profile at
// (n_e, T_e = 1e4 K) convolved with the remaining Gaussian
// √(w_inst² + w_D(T_gas)² − w_D(T_e)²) — exactly Stark ⊗ Doppler(T_gas) ⊗
// instrument (diag/sh99 doc) — integrated over each pixel, on a flat
// continuum with Gaussian noise of a Poisson-like size. Its grid (n_e
// steps of 10^0.25, instrument widths, pixel sampling, gas temperatures,
// seeds) is our own and differs from testdata/sh99synth, the independent
// check, which is never used to set the correction.

import (
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"slices"
	"strings"
	"testing"

	"glowlog/diag"
	"glowlog/diag/sh99"
)

// shapeTe is the tables' temperature of the measurement, K (a variable:
// TestMeasureShapeTe changes it).
var shapeTe = 1e4

// shapeContMax is the largest continuum/peak of the lines measureShape
// makes (a variable: TestMeasureShapeTable raises it to
// shapeTableContMax, so that the table covers the weak upper members of
// dense survey spectra, which sit on a continuum several times their peak).
var shapeContMax = 0.6

// shapePeakCounts is the peak of measureShape's lines, counts per pixel
// (a variable: TestMeasureShapeSNR lowers it).
var shapePeakCounts = 30000.0

// shapeTableContMax is the largest continuum/peak of the table's
// measurement: Hε … H8 of dense survey spectra (surveyScene) reach q ≈ 8.
const shapeTableContMax = 10.0

// shapeTableReps is how many lines (each with its own continuum) the
// table's measurement makes per grid point.
const shapeTableReps = 3

// sh99Line makes a one-line spectrum: pixel centres x (uniform, step px),
// counts = area × pixel integral of the profile + base × px + noise.
// It returns nil when the tables do not cover the case.
func sh99Line(upper int, ne, instG, gasT, px, area, base float64, rng *rand.Rand) (*Spectrum, float64, error) {
	l, err := sh99.Balmer(upper)
	if err != nil {
		return nil, 0, err
	}
	tr, err := diag.Balmer(upper, diag.Hydrogen)
	if err != nil {
		return nil, 0, err
	}
	wD := diag.DopplerFWHMNM(tr.WavelengthAirNM, gasT, diag.EmitterMassAMU(diag.Hydrogen))
	g2 := instG*instG + wD*wD - math.Pow(l.DopplerFWHMNM(shapeTe), 2)
	if g2 <= 0 {
		return nil, 0, fmt.Errorf("instrument too narrow for the tables' Doppler")
	}
	wT, err := l.TableWidthNM(sh99.FWHM, ne, shapeTe)
	if err != nil {
		return nil, 0, err
	}
	wTot := diag.VoigtFWHM(math.Sqrt(g2+math.Pow(l.DopplerFWHMNM(shapeTe), 2)), wT)
	half := math.Max(14*wTot, 60*px)
	n := int(2*half/px) + 1
	if n > 6000 {
		n = 6000
	}
	c0 := tr.WavelengthAirNM
	x := make([]float64, n)
	for i := range x {
		x[i] = c0 + (float64(i)-float64(n-1)/2)*px + 0.137*px
	}
	// Fine grid over the pixels' span plus the kernel reach.
	gs := math.Sqrt(g2) / (2 * math.Sqrt(2*math.Ln2))
	h := math.Min(px/8, math.Min(wT, math.Sqrt(g2))/10)
	reach := 6 * gs
	lo := x[0] - px/2 - reach
	m := int((x[n-1]+px/2+reach-lo)/h) + 2
	fx := make([]float64, m)
	for i := range fx {
		fx[i] = lo + float64(i)*h - c0
	}
	prof := make([]float64, m)
	l.ProfileInto(prof, fx, ne, shapeTe)
	kh := int(reach / h)
	kern := make([]float64, 2*kh+1)
	ks := 0.0
	for j := range kern {
		d := float64(j-kh) * h
		kern[j] = math.Exp(-d * d / (2 * gs * gs))
		ks += kern[j]
	}
	conv := make([]float64, m)
	for i := kh; i < m-kh; i++ {
		s := 0.0
		for j, kv := range kern {
			s += kv * prof[i+j-kh]
		}
		conv[i] = s / ks
	}
	// Cumulative trapezoid, then pixel integrals by linear interpolation.
	cum := make([]float64, m)
	for i := 1; i < m; i++ {
		cum[i] = cum[i-1] + 0.5*h*(conv[i]+conv[i-1])
	}
	at := func(v float64) float64 {
		f := (v - c0 - fx[0]) / h
		i := int(f)
		return cum[i] + (f-float64(i))*(cum[i+1]-cum[i])
	}
	y := make([]float64, n)
	span := x[n-1] - x[0]
	slope := 0.6 * (rng.Float64() - 0.5)
	for i := range y {
		u := (x[i] - c0) / span
		s := area*(at(x[i]+px/2)-at(x[i]-px/2)) + base*px*(1+slope*u+0.5*slope*u*u)
		y[i] = s + math.Sqrt(math.Max(s, 1))*rng.NormFloat64()
	}
	return &Spectrum{WavelengthNM: x, Counts: y}, wTot, nil
}

// shapeSample is one measured case: the inferred ratio r = L/G of the raw
// Voigt fit, and the fit's Lorentzian over the true Stark width (FWHA for
// Hα, FWHM otherwise) and fitted over true area.
type shapeSample struct {
	upper       int
	r, q        float64
	wq, aq      float64
	ne, inst, g float64
	// sw, sa are the relative 1σ reported for the Lorentzian (the fit's)
	// and the area (the fit's; with the Stark shape, fit ⊕ shape).
	sw, sa float64
}

// measureShape runs the pipeline with the Voigt shape (no correction) on
// one generated line.
func measureShape(t testing.TB, p *Pipeline, upper int, ne, instG, gasT, pxPerFWHM float64, rng *rand.Rand) (shapeSample, bool) {
	return measureShapeWith(t, p, upper, ne, instG, gasT, pxPerFWHM, rng, LineShapeVoigt)
}

// measureShapeWith is measureShape with the given line shape; r and q are
// those of the Voigt fit (from its ProfileFit), wq and aq those reported.
func measureShapeWith(t testing.TB, p *Pipeline, upper int, ne, instG, gasT, pxPerFWHM float64, rng *rand.Rand, shape string) (shapeSample, bool) {
	return measureShapeCase(t, p, upper, ne, instG, gasT, pxPerFWHM, rng, shape, false)
}

// starkWidth is the true Stark width of measureShape (FWHA for Hα, FWHM
// otherwise) at shapeTe; an error where the tables give none (the Stark
// width lost in the tables' own Doppler core, e.g. Hα below 3×10²¹ m⁻³).
func starkWidth(upper int, ne float64) (float64, error) {
	l, err := sh99.Balmer(upper)
	if err != nil {
		return 0, err
	}
	kind := sh99.FWHM
	if upper == 3 {
		kind = sh99.FWHA
	}
	return l.StarkWidthNM(kind, ne, shapeTe)
}

// measureShapeCase is measureShapeWith; with areaOnly it also measures
// lines without a Stark width of the tables (the tables' profile FWHM
// then sets the pixels) and lines whose fitted Lorentzian ended at zero
// (r = 0): the area correction applies to them too. Their wq is NaN.
func measureShapeCase(t testing.TB, p *Pipeline, upper int, ne, instG, gasT, pxPerFWHM float64, rng *rand.Rand, shape string, areaOnly bool) (shapeSample, bool) {
	l, _ := sh99.Balmer(upper)
	wS, err := starkWidth(upper, ne)
	if err != nil && areaOnly {
		wS, err = l.TableWidthNM(sh99.FWHM, ne, shapeTe)
		wS = -wS
	}
	if err != nil {
		return shapeSample{}, false
	}
	noWidth := wS < 0
	wS = math.Abs(wS)
	tr, _ := diag.Balmer(upper, diag.Hydrogen)
	g := math.Hypot(instG, diag.DopplerFWHMNM(tr.WavelengthAirNM, gasT, diag.EmitterMassAMU(diag.Hydrogen)))
	wTot := diag.VoigtFWHM(g, wS)
	px := wTot / pxPerFWHM
	if px > g/2.2 {
		px = g / 2.2
	}
	const area = 4000.0
	peak := area / wTot
	// Continuum 0.2 % … shapeContMax of the line's peak (log-uniform),
	// with a slope and curvature: the continuum's noise sets how much the
	// wings weigh in the fit, and so the area bias.
	contFrac := 0.002 * math.Pow(shapeContMax/0.002, rng.Float64())
	sp, _, err := sh99Line(upper, ne, instG, gasT, px, area*(shapePeakCounts/(peak*px)), contFrac*shapePeakCounts/px, rng)
	if err != nil {
		return shapeSample{}, false
	}
	trueArea := area * (shapePeakCounts / (peak * px))
	res, err := p.Analyze(sp, Options{Conditions: diag.Measurement{InstrumentGaussFWHMNM: instG, GasTemperatureK: gasT},
		GainElectronsPerCount: 1, LineShape: shape})
	if err != nil {
		t.Logf("n=%d ne=%.3g inst=%.3g: %v", upper, ne, instG, err)
		return shapeSample{}, false
	}
	for _, lr := range res.Lines {
		if lr.UpperLevel != upper || lr.Intensity == nil {
			continue
		}
		var r float64
		switch {
		case lr.LorentzFWHMNM != nil:
			r = *lr.LorentzFWHMNM / g
		case areaOnly && lr.ProfileFit != nil && lr.LorentzAtBound:
			r = 0
		default:
			continue
		}
		if lr.ProfileFit != nil && lr.VoigtLorentzFWHMNM > 0 {
			r = lr.VoigtLorentzFWHMNM / g
		}
		wq := math.NaN()
		if lr.LorentzFWHMNM != nil && !noWidth {
			wq = *lr.LorentzFWHMNM / wS
		}
		s := shapeSample{upper: upper, r: r, q: lr.ContinuumToPeak, wq: wq,
			aq: *lr.Intensity / trueArea, ne: ne, inst: instG, g: g}
		if lr.IntensityUnc != nil {
			s.sa = *lr.IntensityUnc / *lr.Intensity
		}
		if lr.LorentzFWHMUncNM != nil {
			s.sw = *lr.LorentzFWHMUncNM / *lr.LorentzFWHMNM
		}
		return s, true
	}
	return shapeSample{}, false
}

// TestMeasureShapeTable prints the correction table of shape.go from a
// fresh measurement (GLOWLOG_MEASURE_SHAPE=1; about 30 s on one core), as
// shapeTable's Go literal: per class and q bin the rows [0]–[3]. Only the
// area rows [2] and [3] of the 2026-12-02 print are in shape.go (the width
// rows are an earlier measurement: see shapeTable's comment).
func TestMeasureShapeTable(t *testing.T) {
	if os.Getenv("GLOWLOG_MEASURE_SHAPE") == "" {
		t.Skip("set GLOWLOG_MEASURE_SHAPE=1 to measure the Stark-shape correction table")
	}
	defer func(v float64) { shapeContMax = v }(shapeContMax)
	shapeContMax = shapeTableContMax
	rng := rand.New(rand.NewPCG(20261202, 7))
	rngArea := rand.New(rand.NewPCG(20261202, 8))
	p := NewPipeline(8192)
	var all []shapeSample
	astray := 0
	for upper := 3; upper <= 8; upper++ {
		for e := 19.75; e <= 23.01; e += 0.25 {
			for _, inst := range []float64{0.05, 0.07, 0.12, 0.2, 0.3, 0.5, 0.8} {
				for _, ppf := range []float64{3, 4.5, 6, 9, 12} {
					for range shapeTableReps {
						gasT := 400 + 2600*rng.Float64()
						// Lines without a Stark width of the tables take
						// their noise from rngArea (a stream of their own).
						r := rng
						if _, err := starkWidth(upper, math.Pow(10, e)); err != nil {
							r = rngArea
						}
						if s, ok := measureShapeCase(t, p, upper, math.Pow(10, e), inst, gasT, ppf, r, LineShapeVoigt, true); ok {
							// A fit that went astray (area off by more
							// than 2×, or Lorentzian 3× the Stark width:
							// on a continuum many times the peak, the
							// continuum's curvature taken as a line) is
							// not a shape bias: counted, not tabulated.
							if s.aq < 0.5 || s.aq > 2 || s.wq > 3 {
								astray++
								t.Logf("astray: H n=%d n_e %.3g inst %.2f px/FWHM %g: r %.2f q %.2f, area fit/true %.3f, Lorentzian/Stark %.3f", upper, s.ne, inst, ppf, s.r, s.q, s.aq, s.wq)
								continue
							}
							all = append(all, s)
						}
					}
				}
			}
		}
	}
	t.Logf("%d lines measured, %d fits astray left out", len(all), astray)
	var b, counted strings.Builder
	for class := range shapeClasses {
		b.WriteString("\t{\n")
		for qb := range shapeQEdges {
			var cs []shapeSample
			for _, s := range all {
				if shapeClass(s.upper) == class && shapeQBin(s.q) == qb {
					cs = append(cs, s)
				}
			}
			fmt.Fprintf(&b, "\t\t{ // %s, continuum/peak bin %d, %d cases\n", shapeClasses[class], qb, len(cs))
			var rows [4][]float64
			var counts []int
			for _, q := range []string{"width", "area"} {
				var mean, rms []float64
				for k := range shapeNodes {
					lo, hi := shapeNodes[max(k-1, 0)], shapeNodes[min(k+1, len(shapeNodes)-1)]
					if k == 0 && q == "area" {
						// The first node's area correction is held
						// below it: its bin takes those lines too.
						lo = 0
					}
					var v []float64
					for _, s := range cs {
						if s.r >= lo && s.r <= hi {
							x := s.wq
							if q == "area" {
								x = s.aq
							}
							if !math.IsNaN(x) {
								v = append(v, math.Log(x))
							}
						}
					}
					if q == "area" {
						counts = append(counts, len(v))
					}
					if len(v) < 3 {
						mean = append(mean, math.NaN())
						rms = append(rms, math.NaN())
						continue
					}
					slices.Sort(v)
					mu := 0.0
					for _, x := range v {
						mu += x
					}
					mu /= float64(len(v))
					ss := 0.0
					for _, x := range v {
						ss += (x - mu) * (x - mu)
					}
					mean = append(mean, mu)
					rms = append(rms, math.Sqrt(ss/float64(len(v)-1)))
				}
				if q == "width" {
					rows[0], rows[1] = mean, rms
				} else {
					rows[2], rows[3] = mean, residualScatter(cs, mean, true)
				}
			}
			// Nodes without a value hold their nearest neighbour's (as
			// shapeTable's comment says); the rows are shape.go's literal.
			for _, row := range rows {
				fmt.Fprintf(&b, "\t\t\t%s,\n", goSlice(holdNearest(row)))
			}
			fmt.Fprintf(&counted, "%s, q bin %d: area cases per node %v\n", shapeClasses[class], qb, counts)
			b.WriteString("\t\t},\n")
		}
		b.WriteString("\t},\n")
	}
	t.Log("\n" + b.String())
	t.Log("\n" + counted.String())
}

// holdNearest returns v with every NaN replaced by its nearest non-NaN
// neighbour (the lower one first at equal distance).
func holdNearest(v []float64) []float64 {
	out := slices.Clone(v)
	for k := range out {
		if !math.IsNaN(v[k]) {
			continue
		}
		for d := 1; d < len(v); d++ {
			if k-d >= 0 && !math.IsNaN(v[k-d]) {
				out[k] = v[k-d]
				break
			}
			if k+d < len(v) && !math.IsNaN(v[k+d]) {
				out[k] = v[k+d]
				break
			}
		}
	}
	return out
}

// residualScatter is the scatter of the corrected values that the fit's
// own statistical σ does not explain, per node: the residuals e_i =
// ln(fit/true)_i − m(r_i) about the table's interpolated mean m (linear in
// ln r between nodes, as starkShape uses it) give at node k
//
//	σ_k² = Σ_i w_ik (e_i² − s_i²) / Σ_i w_ik,
//
// w_ik the weight of node k in the interpolation at r_i (hat functions in
// ln r) and s_i the fit's stated relative σ of the case: the variance
// beyond the statistical one, the part the shape correction must add.
// Unlike the sample standard deviation within a bin spanning two node
// intervals, it neither counts the mean's change across the bin nor the
// fit's noise, which the stated σ carries already. Nodes with less than
// 3 in total weight hold NaN; a negative estimate (the fit's σ explains
// all the scatter) gives 0.
func residualScatter(cs []shapeSample, mean []float64, area bool) []float64 {
	// Nodes without a mean hold their nearest neighbour's.
	m := holdNearest(mean)
	x := shapeNodes
	num := make([]float64, len(x))
	den := make([]float64, len(x))
	for _, s := range cs {
		v, sd := math.Log(s.wq), s.sw
		if area {
			v, sd = math.Log(s.aq), s.sa
		}
		if math.IsNaN(v) {
			continue
		}
		var i int
		var f float64
		switch {
		case !(s.r > x[0]):
			i, f = 0, 0
		case s.r >= x[len(x)-1]:
			i, f = len(x)-2, 1
		default:
			for s.r > x[i+1] {
				i++
			}
			f = math.Log(s.r/x[i]) / math.Log(x[i+1]/x[i])
		}
		e := v - (m[i] + f*(m[i+1]-m[i]))
		for k, w := range [2]float64{1 - f, f} {
			num[i+k] += w * (e*e - sd*sd)
			den[i+k] += w
		}
	}
	out := make([]float64, len(x))
	for k := range out {
		out[k] = math.NaN()
		if den[k] >= 3 {
			out[k] = math.Sqrt(math.Max(num[k], 0) / den[k])
		}
	}
	return out
}

func goSlice(v []float64) string {
	s := make([]string, len(v))
	for i, x := range v {
		s[i] = fmt.Sprintf("%.3f", x)
	}
	return "{" + strings.Join(s, ", ") + "}"
}

// TestStarkShapeCorrection: on fresh Go-made SH99 spectra (another seed,
// densities and instrument widths between the measurement's), the default
// line shape removes most of the Voigt fit's bias of the Stark width and
// of the area of Hβ, Hγ and Hδ, and the σ it states for the corrected
// values — for the width the shape part (which goes into n_e's σ_sys),
// for the area the reported total (fit ⊕ shape) — covers the truth in at
// least 60 % of cases.
func TestStarkShapeCorrection(t *testing.T) {
	rng := rand.New(rand.NewPCG(77, 2026))
	p := NewPipeline(8192)
	var rawW, corW, rawA, corA []float64
	in1W, in1A, nW, nA := 0, 0, 0, 0
	for _, upper := range []int{4, 5, 6} {
		for _, e := range []float64{20.6, 21.1, 21.6, 22.3} {
			for _, inst := range []float64{0.06, 0.15, 0.4} {
				ne := math.Pow(10, e)
				gasT := 400 + 2600*rng.Float64()
				seed := rng.Uint64()
				raw, ok := measureShape(t, p, upper, ne, inst, gasT, 5, rand.New(rand.NewPCG(seed, 1)))
				if !ok {
					continue
				}
				// The same spectrum with the default line shape.
				cor, ok := measureShapeWith(t, p, upper, ne, inst, gasT, 5, rand.New(rand.NewPCG(seed, 1)), "")
				if !ok {
					continue
				}
				_, _, wu, _ := starkShape(upper, raw.r, raw.q)
				rawW = append(rawW, math.Abs(math.Log(raw.wq)))
				corW = append(corW, math.Abs(math.Log(cor.wq)))
				rawA = append(rawA, math.Abs(math.Log(raw.aq)))
				corA = append(corA, math.Abs(math.Log(cor.aq)))
				nW++
				nA++
				if math.Abs(math.Log(cor.wq)) <= wu {
					in1W++
				}
				if math.Abs(math.Log(cor.aq)) <= cor.sa {
					in1A++
				}
			}
		}
	}
	if nW < 24 {
		t.Fatalf("only %d cases analysed", nW)
	}
	med := func(v []float64) float64 { s := slices.Clone(v); slices.Sort(s); return s[len(s)/2] }
	t.Logf("%d cases: median |ln(fit/true)| width raw %.3f corrected %.3f; area raw %.3f corrected %.3f; truth within the stated 1σ: width %d/%d, area %d/%d",
		nW, med(rawW), med(corW), med(rawA), med(corA), in1W, nW, in1A, nA)
	if !(med(rawW) > 0.1 && med(corW) < 0.05) {
		t.Errorf("Stark width: median error raw %.3f, corrected %.3f; want the correction to bring it from > 0.1 to < 0.05", med(rawW), med(corW))
	}
	if !(med(rawA) > 0.04 && med(corA) < 0.02) {
		t.Errorf("area: median error raw %.3f, corrected %.3f; want the correction to bring it from > 0.04 to < 0.02", med(rawA), med(corA))
	}
	for _, c := range []struct {
		name   string
		in, of int
	}{{"width", in1W, nW}, {"area", in1A, nA}} {
		// The stated σ includes the floors (shapeFloorWidthRel, shapeFloorAreaRel) for the T_e this generator does
		// not vary, so on its own spectra it may over-cover; under 60 % it is understated.
		if f := float64(c.in) / float64(c.of); f < 0.6 {
			t.Errorf("%s: truth within the stated σ in only %d of %d", c.name, c.in, c.of)
		}
	}
}

// TestMeasureShapeTe measures (GLOWLOG_MEASURE_SHAPE=1) what the
// correction, made at T_e = 1e4 K, leaves on lines shaped by the tables at
// T_e = 5000 K and 20 000 K: the rms of ln(corrected/true) of the Stark
// width and the area, per line class — the basis of shapeFloorWidthRel
// (shapeFloorAreaRel is measured paired, by TestMeasureShapeTeShift).
func TestMeasureShapeTe(t *testing.T) {
	if os.Getenv("GLOWLOG_MEASURE_SHAPE") == "" {
		t.Skip("set GLOWLOG_MEASURE_SHAPE=1 to measure the T_e dependence of the Stark-shape correction")
	}
	defer func(v float64) { shapeTe = v }(shapeTe)
	rng := rand.New(rand.NewPCG(5, 20000))
	p := NewPipeline(8192)
	for _, te := range []float64{5000, 1e4, 2e4} {
		shapeTe = te
		var b strings.Builder
		for class := range shapeClasses {
			var sw, sa, mw, ma float64
			n := 0
			for _, e := range []float64{20.7, 21.2, 21.7, 22.2} {
				for _, inst := range []float64{0.1, 0.25, 0.5} {
					s, ok := measureShapeWith(t, p, class+3, math.Pow(10, e), inst, 400+2600*rng.Float64(), 5, rng, "")
					if !ok {
						continue
					}
					lw, la := math.Log(s.wq), math.Log(s.aq)
					sw += lw * lw
					sa += la * la
					mw += lw
					ma += la
					n++
				}
			}
			if n > 0 {
				fmt.Fprintf(&b, "  %s (%d): width mean %+.3f rms %.3f; area mean %+.3f rms %.3f\n", shapeClasses[class], n,
					mw/float64(n), math.Sqrt(sw/float64(n)), ma/float64(n), math.Sqrt(sa/float64(n)))
			}
		}
		t.Logf("T_e = %g K, corrected/true:\n%s", te, b.String())
	}
}

// TestMeasureShapeSNR (GLOWLOG_MEASURE_SHAPE=1) measures how the Voigt
// fit's area bias on Stark-shaped lines (ln(A_fit/A), uncorrected) and
// the corrected area's pull depend on the peak counts: the table is
// measured at a 30 000-count peak; the same lines (class, n_e 10^21.5 …
// 10^22.8 m⁻³, instrument 0.3–0.8 nm, continuum/peak ≤ 1) are made at
// peaks of 30 000, 3000, 1000 and 300 counts. Measured 2026-12-02: no
// dependence — Hα raw +0.031 at every peak, corrected −0.002 ± 0.001…0.007;
// Hβ raw +0.088 … +0.083, corrected −0.003 ± 0.001…0.005; Hγ corrected
// +0.001 … −0.003. (The +4 % of weak Hβ in low-SNR survey spectra comes
// from the search's continuum/peak, biased low by noise there, not from
// the fit: see TestMeasureSurveyAreas.)
func TestMeasureShapeSNR(t *testing.T) {
	if os.Getenv("GLOWLOG_MEASURE_SHAPE") == "" {
		t.Skip("set GLOWLOG_MEASURE_SHAPE=1 to measure the SNR dependence of the Stark-shape area bias")
	}
	defer func(v, c float64) { shapePeakCounts, shapeContMax = v, c }(shapePeakCounts, shapeContMax)
	shapeContMax = 1
	p := NewPipeline(8192)
	var b strings.Builder
	for _, upper := range []int{3, 4, 5} {
		for _, peak := range []float64{30000, 3000, 1000, 300} {
			shapePeakCounts = peak
			rng := rand.New(rand.NewPCG(31, uint64(upper)))
			var raw, cor, pull []float64
			for k := 0; k < 60; k++ {
				ne := math.Pow(10, 21.5+1.3*rng.Float64())
				inst := 0.3 + 0.5*rng.Float64()
				gasT := 400 + 2600*rng.Float64()
				seed := rng.Uint64()
				rv, ok := measureShapeWith(t, p, upper, ne, inst, gasT, 4, rand.New(rand.NewPCG(seed, 1)), LineShapeVoigt)
				if !ok {
					continue
				}
				cv, ok := measureShapeWith(t, p, upper, ne, inst, gasT, 4, rand.New(rand.NewPCG(seed, 1)), "")
				if !ok {
					continue
				}
				raw = append(raw, math.Log(rv.aq))
				cor = append(cor, math.Log(cv.aq))
				pull = append(pull, math.Log(cv.aq)/cv.sa)
			}
			mean := func(v []float64) float64 {
				s := 0.0
				for _, x := range v {
					s += x
				}
				return s / float64(len(v))
			}
			fmt.Fprintf(&b, "H n=%d peak %5.0f: %2d lines, ln(A_fit/A) raw %+.4f, corrected %+.4f ± %.4f (se), mean pull %+.2f\n",
				upper, peak, len(raw), mean(raw), mean(cor), math.Sqrt(variance(cor)/float64(len(cor))), mean(pull))
		}
	}
	t.Log("\n" + b.String())
}

func variance(v []float64) float64 {
	m := 0.0
	for _, x := range v {
		m += x
	}
	m /= float64(len(v))
	s := 0.0
	for _, x := range v {
		s += (x - m) * (x - m)
	}
	return s / float64(len(v)-1)
}
