package spectrum

// How well the stated σ of a corrected line area (fit ⊕ Stark-shape part)
// and of the excitation temperature built from such areas describe the
// real errors, measured on our own Go generator (sh99Line, the Stehlé &
// Hutcheon 1999 profiles) with seeds and grids of its own — never on
// testdata/sh99synth, the independent check.

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

// covLine is one corrected line measured on a generated spectrum.
type covLine struct {
	upper     int
	te        float64 // tables' T_e the line was made with, K
	lnErr     float64 // ln(corrected area / true area)
	totRel    float64 // stated relative 1σ of the corrected area
	shapeRel  float64 // its Stark-shape part (starkShape's areaUncRel)
	scatRel   float64 // the shape part without the floor
	statRel   float64 // its fit part (√(tot² − shape²))
	intensity float64 // the corrected area
}

// covMeasureLine generates one Balmer line (tables at shapeTe) with a
// peak of about peakCounts counts per pixel on a continuum of baseCounts
// per pixel, pixel width px, and analyses it with the default line shape.
func covMeasureLine(t testing.TB, p *Pipeline, upper int, ne, instG, gasT, px, peakCounts, baseCounts float64, rng *rand.Rand) (covLine, bool) {
	l, _ := sh99.Balmer(upper)
	// The tables' profile width (Stark ⊗ Doppler at T_e) sets the peak.
	wS, err := l.TableWidthNM(sh99.FWHM, ne, shapeTe)
	if err != nil {
		return covLine{}, false
	}
	tr, _ := diag.Balmer(upper, diag.Hydrogen)
	g := math.Hypot(instG, diag.DopplerFWHMNM(tr.WavelengthAirNM, gasT, diag.EmitterMassAMU(diag.Hydrogen)))
	wTot := diag.VoigtFWHM(g, wS)
	// Area (counts·nm/px … the generator's unit) giving the wanted peak:
	// peak per pixel ≈ area·px/wTot.
	area := peakCounts * wTot / px
	sp, _, err := sh99Line(upper, ne, instG, gasT, px, area, baseCounts/px, rng)
	if err != nil {
		return covLine{}, false
	}
	res, err := p.Analyze(sp, Options{Conditions: diag.Measurement{InstrumentGaussFWHMNM: instG, GasTemperatureK: gasT},
		GainElectronsPerCount: 1})
	if err != nil {
		return covLine{}, false
	}
	for _, lr := range res.Lines {
		if lr.UpperLevel != upper || lr.Intensity == nil || lr.IntensityUnc == nil || lr.ProfileFit == nil || lr.StarkShapeAreaFactor == 0 {
			continue
		}
		r := math.Max(lr.VoigtLorentzFWHMNM, 0) / lr.GaussFWHMNM
		_, _, _, au := starkShape(upper, r, lr.ContinuumToPeak)
		tot := *lr.IntensityUnc / *lr.Intensity
		return covLine{upper: upper, te: shapeTe, lnErr: math.Log(*lr.Intensity / area), totRel: tot,
			shapeRel: au, scatRel: math.Sqrt(math.Max(au*au-shapeFloorAreaRel*shapeFloorAreaRel, 0)),
			statRel: math.Sqrt(math.Max(tot*tot-au*au, 0)), intensity: *lr.Intensity}, true
	}
	return covLine{}, false
}

// pullStats summarises errors e against stated σ s: the fraction within
// 1σ and 2σ and the rms of e/s.
func pullStats(e, s []float64) string {
	in1, in2, ss := 0, 0, 0.0
	for i := range e {
		z := math.Abs(e[i]) / s[i]
		if z <= 1 {
			in1++
		}
		if z <= 2 {
			in2++
		}
		ss += z * z
	}
	n := float64(len(e))
	return fmt.Sprintf("1σ %3.0f %%  2σ %3.0f %%  rms pull %.2f", 100*float64(in1)/n, 100*float64(in2)/n, math.Sqrt(ss/n))
}

// TestMeasureAreaPulls (GLOWLOG_MEASURE_SHAPE=1) prints, per line class
// and T_e of the tables, how the stated σ of the corrected area compares
// with its real error, and its parts.
func TestMeasureAreaPulls(t *testing.T) {
	if os.Getenv("GLOWLOG_MEASURE_SHAPE") == "" {
		t.Skip("set GLOWLOG_MEASURE_SHAPE=1 to measure the pulls of the corrected areas")
	}
	defer func(v float64) { shapeTe = v }(shapeTe)
	rng := rand.New(rand.NewPCG(424242, 31))
	p := NewPipeline(8192)
	var all []covLine
	for _, te := range []float64{5000, 1e4, 2e4} {
		shapeTe = te
		for k := 0; k < 150; k++ {
			upper := 3 + rng.IntN(5)
			ne := math.Pow(10, 20+2.75*rng.Float64())
			inst := 0.04 * math.Pow(12.5, rng.Float64())
			gasT := 400 + 2600*rng.Float64()
			g := math.Hypot(inst, diag.DopplerFWHMNM(500, gasT, 1.008))
			px := g / (2.2 + 4*rng.Float64())
			peak := 2000 * math.Pow(25, rng.Float64())
			base := peak * 0.002 * math.Pow(300, rng.Float64())
			if c, ok := covMeasureLine(t, p, upper, ne, inst, gasT, px, peak, base, rng); ok {
				all = append(all, c)
			}
		}
	}
	var b strings.Builder
	for _, te := range []float64{5000, 1e4, 2e4, 0} {
		for class := range shapeClasses {
			var e, tot, shp, sct, st []float64
			for _, c := range all {
				if shapeClass(c.upper) != class || (te != 0 && c.te != te) {
					continue
				}
				e = append(e, c.lnErr)
				tot = append(tot, c.totRel)
				shp = append(shp, c.shapeRel)
				sct = append(sct, math.Hypot(c.scatRel, c.statRel))
				st = append(st, c.statRel)
			}
			if len(e) == 0 {
				continue
			}
			mean, rms := 0.0, 0.0
			for _, v := range e {
				mean += v
				rms += v * v
			}
			mean /= float64(len(e))
			rms = math.Sqrt(rms / float64(len(e)))
			med := func(v []float64) float64 { s := slices.Clone(v); slices.Sort(s); return s[len(s)/2] }
			fmt.Fprintf(&b, "T_e %5.0f %-14s %3d: ln err mean %+.4f rms %.4f | median σ: total %.4f shape %.4f stat %.4f\n", te, shapeClasses[class], len(e), mean, rms, med(tot), med(shp), med(st))
			fmt.Fprintf(&b, "      total: %s | without floor: %s | stat only: %s\n", pullStats(e, tot), pullStats(e, sct), pullStats(e, st))
		}
	}
	t.Log("\n" + b.String())
	var e, s []float64
	for _, c := range all {
		e, s = append(e, c.lnErr), append(s, c.totRel)
	}
	if in2 := coveredWithin(e, s, 2); len(all) < 300 || in2 < 0.93 {
		t.Errorf("%d lines, corrected area within its stated 2σ in %.0f %%: want ≥ 300 lines and ≥ 93 %%", len(all), 100*in2)
	}
}

// coveredWithin is the fraction of |e_i| ≤ k·s_i.
func coveredWithin(e, s []float64, k float64) float64 {
	n := 0
	for i := range e {
		if math.Abs(e[i]) <= k*s[i] {
			n++
		}
	}
	return float64(n) / float64(len(e))
}

// TestTexcCoverageGenerated measures the 1σ and 2σ coverage of the
// excitation temperature built from corrected areas:
// per case one plasma (n_e, T_e of the tables 5000, 10⁴ or 2×10⁴ K, gas
// temperature, instrument, T_exc 3000–12 000 K), its Balmer lines
// (Hα, Hβ or Hα … Hε) each made by sh99Line with the Boltzmann ratio of
// photon areas at T_exc, a common pixel width and continuum, analysed
// one line per spectrum (the lines' windows are fitted separately, as in
// a spectrum where they do not overlap), then a Boltzmann fit of the
// corrected areas with their stated σ. Target as in issue 8 (and
// TestSH99SynthCoverage): the truth within 1σ in 68 % ± 8 % of cases and
// within 2σ in ≥ 93 %. Measured (600 plasmas, about 490 with a
// temperature): 67 % and 95 %; with the shape σ before the residual
// scatter and the rectangular T_e floor 72 % and 97 % (another seed,
// (31337, 5): 67 %/95 % against 71 %/98 %).
func TestTexcCoverageGenerated(t *testing.T) {
	if testing.Short() {
		t.Skip("about 2 s of line fits")
	}
	defer func(v float64) { shapeTe = v }(shapeTe)
	rng := rand.New(rand.NewPCG(9090, 17))
	p := NewPipeline(8192)
	type tally struct{ n, in1, in2 int }
	res := map[string]*tally{}
	add := func(key string, in1, in2 bool) {
		if res[key] == nil {
			res[key] = &tally{}
		}
		r := res[key]
		r.n++
		if in1 {
			r.in1++
		}
		if in2 {
			r.in2++
		}
	}
	for k := 0; k < 600; k++ {
		te := []float64{5000, 1e4, 2e4}[k%3]
		shapeTe = te
		set := []int{3, 4}
		if k%2 == 1 {
			set = []int{3, 4, 5, 6, 7}
		}
		ne := math.Pow(10, 20+2.5*rng.Float64())
		inst := 0.04 * math.Pow(10, rng.Float64())
		gasT := 400 + 2600*rng.Float64()
		texc := 3000 + 9000*rng.Float64()
		g := math.Hypot(inst, diag.DopplerFWHMNM(500, gasT, 1.008))
		px := g / (2.2 + 4*rng.Float64())
		peakMax := 2000 * math.Pow(25, rng.Float64())
		base := peakMax * 0.002 * math.Pow(300, rng.Float64())
		// Relative photon areas and the peaks they give.
		type lineIn struct {
			tr   diag.Transition
			peak float64
		}
		var ins []lineIn
		big := 0.0
		for _, u := range set {
			tr, _ := diag.Balmer(u, diag.Hydrogen)
			l, _ := sh99.Balmer(u)
			wS, err := l.TableWidthNM(sh99.FWHM, ne, te)
			if err != nil {
				continue
			}
			a := float64(tr.GUpper) * tr.EinsteinA * math.Exp(-tr.UpperEnergyEV/(diag.BoltzmannEVPerK*texc))
			gl := math.Hypot(inst, diag.DopplerFWHMNM(tr.WavelengthAirNM, gasT, diag.EmitterMassAMU(diag.Hydrogen)))
			pk := a / diag.VoigtFWHM(gl, wS)
			ins = append(ins, lineIn{tr, pk})
			big = math.Max(big, pk)
		}
		var pts []diag.BoltzmannPoint
		for _, in := range ins {
			c, ok := covMeasureLine(t, p, in.tr.Upper, ne, inst, gasT, px, peakMax*in.peak/big, base, rng)
			if !ok {
				continue
			}
			pts = append(pts, diag.BoltzmannPoint{Upper: in.tr.Upper, EnergyEV: in.tr.UpperEnergyEV, G: float64(in.tr.GUpper),
				A: in.tr.EinsteinA, WavelengthNM: in.tr.WavelengthVacNM, Intensity: c.intensity, IntensityUnc: c.totRel * c.intensity})
		}
		if len(pts) < 2 {
			continue
		}
		bz, err := diag.FitBoltzmann(pts, diag.BoltzmannOptions{Unit: diag.PhotonUnits})
		if err != nil || !bz.Defined || !(bz.TemperatureUncK > 0) {
			continue
		}
		d := math.Abs(bz.TemperatureK - texc)
		in1, in2 := d <= bz.TemperatureUncK, d <= 2*bz.TemperatureUncK
		add(fmt.Sprintf("%d lines", len(set)), in1, in2)
		add(fmt.Sprintf("T_e %5.0f", te), in1, in2)
		add("all", in1, in2)
	}
	var b strings.Builder
	keys := make([]string, 0, len(res))
	for k := range res {
		keys = append(keys, k)
	}
	slices.Sort(keys)
	for _, k := range keys {
		r := res[k]
		fmt.Fprintf(&b, "%-10s %3d cases: T_exc within 1σ %3d (%.0f %%), within 2σ %3d (%.0f %%)\n", k, r.n, r.in1, 100*float64(r.in1)/float64(r.n), r.in2, 100*float64(r.in2)/float64(r.n))
	}
	t.Log("\n" + b.String())
	all := res["all"]
	if all == nil || all.n < 400 {
		t.Fatalf("too few cases with a temperature: %v", all)
	}
	if f1, f2 := float64(all.in1)/float64(all.n), float64(all.in2)/float64(all.n); f1 < 0.60 || f1 > 0.76 || f2 < 0.93 {
		t.Errorf("T_exc within 1σ in %.0f %% and within 2σ in %.0f %% of %d cases: want 60–76 %% and ≥ 93 %%", 100*f1, 100*f2, all.n)
	}
}
