package spectrum

import (
	"math"
	"testing"
)

// TestWindowEarlyStop: the line-by-line window fits stopped before a last
// step predicted to lower χ² by less than windowStopDrop of the reduced
// χ² give, for both routes (the whole fit starts from them), n_e, T_exc
// and their σ within 1 % of σ of the fits iterated to the relative tests
// alone, each line's n_e too, in fewer iterations.
func TestWindowEarlyStop(t *testing.T) {
	cases := earlyStopCases(t)
	defer func(v float64) { windowStopDrop = v }(windowStopDrop)
	var itEarly, itFull, compared int
	for k, c := range cases {
		windowStopDrop = 1e-6
		p := NewPipeline(4096)
		early, err := p.Analyze(c.sp, c.opt)
		if err != nil {
			t.Fatal(err)
		}
		for _, n := range p.iters {
			itEarly += n
		}
		windowStopDrop = 0
		q := NewPipeline(4096)
		full, err := q.Analyze(c.sp, c.opt)
		if err != nil {
			t.Fatal(err)
		}
		for _, n := range q.iters {
			itFull += n
		}
		if early.Whole == nil || full.Whole == nil {
			t.Fatalf("case %d: no whole fit", k)
		}
		e, f := early.Whole, full.Whole
		type pair struct {
			name         string
			a, ua, b, ub *float64
		}
		vs := []pair{
			{"whole n_e", e.ElectronDensityM3, e.ElectronDensityUncM3, f.ElectronDensityM3, f.ElectronDensityUncM3},
			{"whole T_exc", e.ExcitationTemperatureK, e.ExcitationTemperatureUncK, f.ExcitationTemperatureK, f.ExcitationTemperatureUncK},
			{"lines n_e", e.LinesElectronDensityM3, e.LinesElectronDensityUncM3, f.LinesElectronDensityM3, f.LinesElectronDensityUncM3},
			{"lines T_exc", e.LinesExcitationTemperatureK, e.LinesExcitationTemperatureUncK, f.LinesExcitationTemperatureK, f.LinesExcitationTemperatureUncK},
		}
		if len(early.Lines) != len(full.Lines) {
			t.Fatalf("case %d: %d lines with the early stop, %d without", k, len(early.Lines), len(full.Lines))
		}
		for i := range early.Lines {
			a, b := &early.Lines[i], &full.Lines[i]
			if a.ElectronDensityUncM3 != nil || b.ElectronDensityUncM3 != nil {
				vs = append(vs, pair{a.Name + " n_e", a.ElectronDensityM3, a.ElectronDensityUncM3, b.ElectronDensityM3, b.ElectronDensityUncM3})
			}
		}
		for _, v := range vs {
			if (v.a == nil) != (v.b == nil) || (v.ua == nil) != (v.ub == nil) {
				t.Errorf("case %d %s: reported %v/%v with the early stop, %v/%v without", k, v.name, v.a != nil, v.ua != nil, v.b != nil, v.ub != nil)
				continue
			}
			if v.a == nil || v.ua == nil || !(*v.ub > 0) {
				continue
			}
			s := *v.ub
			if d := math.Abs(*v.a-*v.b) / s; !(d < 0.01) {
				t.Errorf("case %d %s: %.6g with the early stop, %.6g without: %.3g of σ", k, v.name, *v.a, *v.b, d)
			}
			if d := math.Abs(*v.ua-*v.ub) / s; !(d < 0.01) {
				t.Errorf("case %d %s σ: %.6g with the early stop, %.6g without: %.3g of σ", k, v.name, *v.ua, *v.ub, d)
			}
			compared++
		}
	}
	t.Logf("%d values compared; %d window iterations with the early stop, %d without", compared, itEarly, itFull)
	if compared < 4*len(cases)-4 || !(itEarly < itFull) {
		t.Errorf("%d values compared; %d window iterations with the early stop, %d without", compared, itEarly, itFull)
	}
}
