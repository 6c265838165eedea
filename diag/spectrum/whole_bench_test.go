package spectrum

import (
	"math"
	"math/rand/v2"
	"testing"

	"glowlog/diag"
)

// BenchmarkWholeSurvey times the whole-spectrum fit on survey spectra as
// the server's bulk reanalysis benchmark makes them (route=whole):
// 2048 pixels over 380–700 nm, Hα–H10 with SH99 shapes, instrument FWHM
// 0.35 nm, gas temperature 1000 K, T_e not given, shot and read noise,
// each of the four spectra with its own n_e and T_exc. Sub-benchmarks:
// whole (the fit from the lines route's result), result (the result and
// its systematic parts at the converged state) and pipeline+whole.
// Reported per spectrum.
func BenchmarkWholeSurvey(b *testing.B) {
	const nSpec = 4
	grid := make([]float64, 2048)
	for i := range grid {
		grid[i] = 380 + 320*float64(i)/2047
	}
	rng := rand.New(rand.NewPCG(11, 2026))
	opt := Options{Conditions: diag.Measurement{InstrumentGaussFWHMNM: 0.35, GasTemperatureK: 1000}}
	var sps []*Spectrum
	var ps []*Pipeline
	for range nSpec {
		y, _, err := SynthesizeStark(SynthConfig{WavelengthNM: grid, Uppers: []int{3, 4, 5, 6, 7, 8, 9, 10},
			ExcitationTemperatureK: 7000 * (1 + 0.04*rng.NormFloat64()), ElectronDensityM3: 3e21 * (1 + 0.05*rng.NormFloat64()),
			GasTemperatureK: 1000, InstrumentFWHMNM: 0.35, HalphaArea: 1})
		if err != nil {
			b.Fatal(err)
		}
		peak := 0.0
		for _, v := range y {
			peak = max(peak, v)
		}
		scale := (15000 + 30000*rng.Float64()) / peak
		offset := 300 + 300*rng.Float64()
		for i, v := range y {
			c := v*scale + offset
			y[i] = math.Round(c + math.Sqrt(c+36)*rng.NormFloat64())
		}
		sp := &Spectrum{Name: "survey.csv", WavelengthNM: grid, Counts: y}
		p := NewPipeline(4096)
		res, err := p.Analyze(sp, opt)
		if err != nil || res.Whole == nil || res.Model != ModelWhole {
			b.Fatalf("survey spectrum: not a whole-route result (%v)", err)
		}
		sps, ps = append(sps, sp), append(ps, p)
	}
	cpu := func(b *testing.B, f func()) {
		b.ReportAllocs()
		c0 := processCPU()
		for b.Loop() {
			f()
		}
		if c := processCPU() - c0; c > 0 {
			b.ReportMetric(float64(c.Nanoseconds())/float64(b.N*nSpec), "cpu-ns/spectrum")
		}
	}
	b.Run("whole", func(b *testing.B) {
		cpu(b, func() {
			for _, p := range ps {
				if _, err := p.wholeFit(p.lastWhole, opt); err != nil {
					b.Fatal(err)
				}
			}
		})
	})
	b.Run("result", func(b *testing.B) {
		type conv struct {
			it   int
			conv bool
			chi2 float64
		}
		cs := make([]conv, nSpec)
		for k, p := range ps {
			// The fit as wholeFit runs it (no restart past the tables'
			// end on these spectra).
			f := p.wfit
			in := p.lastWhole
			f.begin(in, opt)
			ne0 := *in.lines.ElectronDensityM3
			if err := f.setup(in, ne0); err != nil {
				b.Fatal(err)
			}
			it, cv, chi2, err := f.levmar()
			if err != nil {
				b.Fatal(err)
			}
			if _, ok := f.beyondEdge(); ok {
				b.Fatal("the fit restarts past the tables' end")
			}
			cs[k] = conv{it, cv, chi2}
		}
		cpu(b, func() {
			for k, p := range ps {
				if _, err := p.wfit.result(cs[k].it, cs[k].conv, cs[k].chi2, false, p.lastWhole); err != nil {
					b.Fatal(err)
				}
			}
		})
	})
	b.Run("pipeline+whole", func(b *testing.B) {
		cpu(b, func() {
			for k, p := range ps {
				if _, err := p.Analyze(sps[k], opt); err != nil {
					b.Fatal(err)
				}
			}
		})
	})
}
