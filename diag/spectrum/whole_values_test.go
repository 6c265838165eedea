package spectrum

import (
	"math"
	"math/rand/v2"
	"slices"
	"testing"

	"glowlog/diag"
)

// TestEvalLineValuesOnly: the σ_sys parts re-evaluate the lines without
// their derivatives (evalLine, convolve and pixels without deriv); the
// pixel means are then the same, bit for bit, as a full evaluation's, and
// the derivatives are left alone. A line's means at the fitted parameters
// are also what the fit left (densitySys' saved state), so the Voigt
// fallback lines, whose shape does not depend on T_e, are not re-evaluated
// for the T_e part.
func TestEvalLineValuesOnly(t *testing.T) {
	voigtLines, shLines, checked := 0, 0, 0
	type tcase struct {
		sp  *Spectrum
		opt Options
	}
	var cases []tcase
	for k, g := range []wgen{
		{lo: 375, hi: 700, npx: 2048, uppers: []int{3, 4, 5, 6, 7}, texc: 5200, ne: 2.2e21, instG: 0.5, gasT: 600,
			peakCounts: 20000, baseFrac: 0.02, gain: 2, read: 10},
		{lo: 375, hi: 700, npx: 2048, uppers: []int{3, 4, 5, 6, 7, 8}, texc: 9000, ne: 3e22, instG: 0.2, gasT: 1500,
			peakCounts: 5000, baseFrac: 0.05, gain: 2, read: 10},
		{lo: 640, hi: 670, npx: 1024, uppers: []int{3}, texc: 5200, ne: 8e20, instG: 0.03, gasT: 600,
			peakCounts: 20000, baseFrac: 0.02, gain: 2, read: 10},
	} {
		sp, _, err := g.gen(rand.New(rand.NewPCG(uint64(k), 6)))
		if err != nil {
			t.Fatal(err)
		}
		cases = append(cases, tcase{sp, g.wopt(ModelWhole)})
	}
	// Hα and Hβ beyond their tables: the Voigt fallback (as
	// TestWholeVoigtFallback: at 3000 K no temperature node within a
	// factor 2 covers 3.1e22 m⁻³).
	x := linspace(470, 670, 2048)
	y, _, err := Synthesize(SynthConfig{WavelengthNM: x, Uppers: []int{3, 4}, ExcitationTemperatureK: 7000,
		ElectronDensityM3: 3.1e22, GasTemperatureK: 800, InstrumentFWHMNM: 0.4, HalphaArea: 2e5, BaselinePerNM: 100,
		NoisePerNM: 30, Rand: rand.New(rand.NewPCG(21, 22))})
	if err != nil {
		t.Fatal(err)
	}
	cases = append(cases, tcase{&Spectrum{Name: "v", WavelengthNM: x, Counts: y}, Options{Model: ModelWhole, LineShape: LineShapeVoigt, MaxUpper: 4,
		Conditions: diag.Measurement{InstrumentGaussFWHMNM: 0.4, GasTemperatureK: 800, ElectronTemperatureK: 3000}}})
	for k, c := range cases {
		p := NewPipeline(4096)
		res, err := p.Analyze(c.sp, c.opt)
		if err != nil {
			t.Fatal(err)
		}
		if res.Whole == nil {
			t.Fatalf("case %d: no whole fit", k)
		}
		f := p.wfit
		th := f.th
		for _, l := range f.lines {
			if l.shapeSH {
				shLines++
			} else {
				voigtLines++
			}
			gi, tg := f.lineInst(l, th)
			atFit := slices.Clone(l.u)
			if err := f.evalLine(l, th[f.par.iNe], th[f.par.iOff], gi, tg, true); err != nil {
				t.Fatal(err)
			}
			if !slices.Equal(l.u, atFit) {
				t.Errorf("case %d %s: means at the fitted parameters differ from the fit's", k, l.t.Name())
			}
			for _, fac := range []float64{1, math.Exp(0.2), math.Exp(-0.2)} {
				save := f.te
				f.te *= fac
				if err := f.evalLine(l, th[f.par.iNe], th[f.par.iOff], gi, tg, true); err != nil {
					f.te = save
					continue // outside the tables at this T_e (densitySys leaves the part out)
				}
				checked++
				u, du, dn := slices.Clone(l.u), slices.Clone(l.du), slices.Clone(l.dn)
				for i := range l.u {
					l.u[i] = math.NaN()
				}
				if err := f.evalLine(l, th[f.par.iNe], th[f.par.iOff], gi, tg, false); err != nil {
					t.Fatal(err)
				}
				if !slices.Equal(l.u, u) || !slices.Equal(l.du, du) || !slices.Equal(l.dn, dn) {
					t.Errorf("case %d %s T_e ×%.3g: values-only evaluation differs", k, l.t.Name(), fac)
				}
				// The kernel alone, wider (the instrument part).
				e := math.Sqrt(l.extra2) + 0.05
				f.convolve(l, e, l.kernL(), true)
				f.pixels(l, th[f.par.iOff], true)
				u, du, dn = slices.Clone(l.u), slices.Clone(l.du), slices.Clone(l.dn)
				f.convolve(l, e, l.kernL(), false)
				f.pixels(l, th[f.par.iOff], false)
				if !slices.Equal(l.u, u) || !slices.Equal(l.du, du) || !slices.Equal(l.dn, dn) {
					t.Errorf("case %d %s T_e ×%.3g: values-only kernel change differs", k, l.t.Name(), fac)
				}
				f.te = save
			}
		}
	}
	if voigtLines == 0 || shLines == 0 || checked < 2*shLines {
		t.Fatalf("%d Voigt-fallback and %d SH99 lines, %d evaluations checked", voigtLines, shLines, checked)
	}
}
