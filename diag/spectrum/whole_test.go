package spectrum

import (
	"math"
	"math/rand/v2"
	"testing"
)

// TestWholeSurveyOne: one survey spectrum from our SH99 generator
// (off-node n_e and T_exc): the whole route is reported at the top level,
// converges, and recovers n_e and T_exc (tolerances: 4 combined σ of
// the fit's own total uncertainty).
func TestWholeSurveyOne(t *testing.T) {
	g := wgen{lo: 375, hi: 700, npx: 2048, uppers: []int{3, 4, 5, 6, 7, 8, 9, 10}, texc: 5200, ne: 3.3e21, instG: 0.5, gasT: 600,
		peakCounts: 20000, baseFrac: 0.02, gain: 2, read: 10}
	sp, _, err := g.gen(rand.New(rand.NewPCG(1, 2)))
	if err != nil {
		t.Fatal(err)
	}
	res, err := NewPipeline(4096).Analyze(sp, g.wopt(ModelWhole))
	if err != nil {
		t.Fatal(err)
	}
	w := res.Whole
	if res.Model != ModelWhole || w == nil {
		t.Fatalf("model %q, whole %v, flags %v", res.Model, w, res.Warnings)
	}
	if !w.Converged || w.ReducedChi2 > 1.5 {
		t.Errorf("converged %v, reduced χ² %.3g", w.Converged, w.ReducedChi2)
	}
	ne, neU := deref(res.ElectronDensityM3), deref(res.ElectronDensityUncM3)
	te, teU := deref(res.ExcitationTemperatureK), deref(res.ExcitationTemperatureUncK)
	if math.Abs(ne-g.ne) > 4*neU || math.Abs(te-g.texc) > 4*teU {
		t.Errorf("n_e %.4g ± %.2g (true %.4g), T_exc %.0f ± %.0f (true %.0f)", ne, neU, g.ne, te, teU, g.texc)
	}
	if res.ElectronDensitySource == "" || w.LinesElectronDensityM3 == nil || w.NeDiffSigma == nil || len(w.Params) == 0 || len(w.Correlation) == 0 {
		t.Errorf("incomplete result: source %q, %+v", res.ElectronDensitySource, w)
	}
}

func deref(p *float64) float64 {
	if p == nil {
		return math.NaN()
	}
	return *p
}

// BenchmarkWhole2048 is the speed target of the whole-spectrum fit: a
// 2048-pixel survey spectrum (375–700 nm, 0.5 nm instrument) with Hα–Hε
// from our SH99 generator. "whole" times the whole fit alone (from the
// prepared data and the lines route's result), "pipeline+whole" the
// pipeline with the whole fit, "pipeline" the lines route alone, side by
// side.
func BenchmarkWhole2048(b *testing.B) {
	g := wgen{lo: 375, hi: 700, npx: 2048, uppers: []int{3, 4, 5, 6, 7}, texc: 5200, ne: 2.2e21, instG: 0.5, gasT: 600,
		peakCounts: 20000, baseFrac: 0.02, gain: 2, read: 10}
	sp, _, err := g.gen(rand.New(rand.NewPCG(5, 6)))
	if err != nil {
		b.Fatal(err)
	}
	p := NewPipeline(4096)
	opt := g.wopt(ModelWhole)
	opt.MaxUpper = 7
	if _, err := p.Analyze(sp, opt); err != nil {
		b.Fatal(err)
	}
	b.Run("whole", func(b *testing.B) {
		in := p.lastWhole
		b.ReportAllocs()
		for b.Loop() {
			if _, err := p.wholeFit(in, opt); err != nil {
				b.Fatal(err)
			}
		}
	})
	b.Run("pipeline+whole", func(b *testing.B) {
		b.ReportAllocs()
		for b.Loop() {
			if _, err := p.Analyze(sp, opt); err != nil {
				b.Fatal(err)
			}
		}
	})
	b.Run("pipeline", func(b *testing.B) {
		o := opt
		o.Model = ModelLines
		b.ReportAllocs()
		for b.Loop() {
			if _, err := p.Analyze(sp, o); err != nil {
				b.Fatal(err)
			}
		}
	})
}
