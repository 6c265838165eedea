package linefit

import (
	"math"
	"math/rand/v2"
	"testing"
)

// TestStopDrop: with Problem.StopDrop the fit ends before a last step
// predicted to lower χ² by less than StopDrop × χ²_red, as converged, in
// fewer iterations in total, with every parameter and 1σ within
// 2√StopDrop of its σ of the fit iterated to the relative tests alone
// (absolute and scaled σ, free and fixed Gaussian width).
func TestStopDrop(t *testing.T) {
	const drop = 1e-6
	var itStop, itFull, compared int
	rng := rand.New(rand.NewPCG(3, 4))
	for k := range 40 {
		w := halpha
		w.lines = []Line{{Center: 656.279, Area: 2.0, GaussFWHM: 0.02 * (1 + 0.5*rng.Float64()), LorentzFWHM: 0.02 + 0.08*rng.Float64(), FixGauss: k%2 == 0}}
		w.snr = 30 + 200*rng.Float64()
		x, y0, s := w.make()
		y := make([]float64, len(x))
		noisy(rng, y0, s, y)
		var rs, rf Result
		for _, c := range []struct {
			drop float64
			res  *Result
		}{{drop, &rs}, {0, &rf}} {
			p := &Problem{X: x, Y: y, Sigma: constSigma(len(x), s), SigmaAbsolute: k%4 < 2,
				Lines: []Line{start(w.lines[0])}, BaselineOrder: 1, StopDrop: c.drop}
			if err := NewFitter(300, 4).Fit(c.res, p); err != nil {
				t.Fatalf("case %d, StopDrop %g: %v", k, c.drop, err)
			}
		}
		if rs.Status != Converged {
			t.Errorf("case %d: status %v with StopDrop", k, rs.Status)
		}
		itStop += rs.Iterations
		itFull += rf.Iterations
		a, b := rs.Lines[0], rf.Lines[0]
		for _, v := range []struct {
			name         string
			x, ux, y, uy float64
		}{
			{"centre", a.Center, a.CenterErr, b.Center, b.CenterErr},
			{"area", a.Area, a.AreaErr, b.Area, b.AreaErr},
			{"f_L", a.LorentzFWHM, a.LorentzFWHMErr, b.LorentzFWHM, b.LorentzFWHMErr},
			{"f_G", a.GaussFWHM, a.GaussFWHMErr, b.GaussFWHM, b.GaussFWHMErr},
			{"b0", rs.Baseline[0], rs.BaselineErr[0], rf.Baseline[0], rf.BaselineErr[0]},
		} {
			if v.uy == 0 {
				continue
			}
			lim := 2 * math.Sqrt(drop) * v.uy
			if d := math.Abs(v.x - v.y); !(d <= lim) {
				t.Errorf("case %d %s: %.9g with StopDrop, %.9g without: %.2g of σ", k, v.name, v.x, v.y, d/v.uy)
			}
			if d := math.Abs(v.ux - v.uy); !(d <= lim) {
				t.Errorf("case %d %s σ: %.9g with StopDrop, %.9g without: %.2g of σ", k, v.name, v.ux, v.uy, d/v.uy)
			}
			compared++
		}
	}
	t.Logf("%d values compared; %d iterations with StopDrop, %d without", compared, itStop, itFull)
	if compared < 4*40 || !(itStop < itFull) {
		t.Errorf("%d values compared; %d iterations with StopDrop, %d without", compared, itStop, itFull)
	}
}
