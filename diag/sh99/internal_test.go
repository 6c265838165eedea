package sh99

import (
	"bytes"
	"compress/gzip"
	"encoding/json"
	"math"
	"testing"
)

// rawFile decodes the embedded file again, independently of the prepared
// lines, for comparisons with the tabulated numbers.
func rawFile(t testing.TB) fileTables {
	t.Helper()
	zr, err := gzip.NewReader(bytes.NewReader(rawTables))
	if err != nil {
		t.Fatal(err)
	}
	var f fileTables
	if err := json.NewDecoder(zr).Decode(&f); err != nil {
		t.Fatal(err)
	}
	return f
}

func mustLine(t testing.TB, s *set, upper int) *Line {
	t.Helper()
	l, ok, err := s.line(upper)
	if !ok || err != nil {
		t.Fatalf("line n=%d: %v %v", upper, ok, err)
	}
	return l
}

// mustNodes returns the line's node profiles.
func mustNodes(t testing.TB, l *Line) [][]*nodeProfile {
	t.Helper()
	nodes, err := l.profiles()
	if err != nil {
		t.Fatal(err)
	}
	return nodes
}

func mustLoad(t testing.TB) *set {
	t.Helper()
	s, err := load()
	if err != nil {
		t.Fatal(err)
	}
	return s
}

// At every tabulated node, Profile at the tabulated detunings is the
// tabulated value times one constant (unit conversion 1/Hz → 1/nm and the
// renormalisation): the interpolation reproduces the table at its nodes.
func TestProfileReproducesNodes(t *testing.T) {
	s := mustLoad(t)
	f := rawFile(t)
	checked := 0
	for _, fl := range f.Lines {
		l := mustLine(t, s, fl.Upper)
		for j, ne := range fl.NeCM3 {
			for k, tk := range fl.TK {
				if fl.Profile[0][j][k] == 0 {
					continue
				}
				want := l.xPerNM[j] * 0.5 / mustNodes(t, l)[j][k].half // per-nm factor
				for i, x := range fl.X {
					dl := x / l.xPerNM[j]
					got, err := l.Profile(dl, ne*1e6, tk)
					if err != nil {
						t.Fatalf("n=%d node (%g, %g): %v", fl.Upper, ne, tk, err)
					}
					if r := got / fl.Profile[i][j][k] / want; math.Abs(r-1) > 1e-9 {
						t.Fatalf("n=%d ne=%g T=%g x=%g: profile/table ratio off by %g", fl.Upper, ne, tk, x, r-1)
					}
					checked++
				}
				// The tables' own area (two-sided integral of the
				// interpolant) is close to 1 where the Stark width is
				// reported; where the Doppler core falls between sparse
				// detuning nodes it depends on the interpolation
				// (trapezoidal rule and power-law segments differ by
				// up to 50 % there), and the profile is renormalised.
				a := 2 * mustNodes(t, l)[j][k].half * holtsmarkCGS * math.Pow(ne, 2.0/3.0)
				lo, hi := 0.8, 1.2
				if !math.IsNaN(l.lw[FWHM][1][j][k]) {
					lo, hi = 0.85, 1.07
				}
				if a < lo || a > hi {
					t.Errorf("n=%d ne=%g T=%g: tabulated area %g outside %g–%g", fl.Upper, ne, tk, a, lo, hi)
				}
			}
		}
	}
	if checked < 10000 {
		t.Fatalf("only %d node values checked", checked)
	}
}

// The node interpolation in x measures widths of known shapes sampled on
// the tables' own detuning grid: Lorentzian and Gaussian profiles placed
// where the grid is dense (≈ 5 points per decade) and where it is sparse.
func TestNodeInterpolationOnKnownShapes(t *testing.T) {
	s := mustLoad(t)
	x := mustNodes(t, mustLine(t, s, 4))[0][0].x
	for _, c := range []struct {
		gMin, gMax float64
		tolFWHM    float64
		tolFWHA    float64
	}{
		{1e9, 5e10, 1.5e-3, 1e-3}, // dense part of the grid
		{5e10, 5e12, 2.5e-2, 2.5e-2},
	} {
		for g := c.gMin; g < c.gMax; g *= 1.13 {
			p := make([]float64, len(x))
			for i, v := range x {
				p[i] = 1 / (1 + (v/g)*(v/g))
			}
			np, err := newNodeProfile(x, p)
			if err != nil {
				t.Fatal(err)
			}
			// Lorentzian of HWHM g: FWHM = FWHA = 2g.
			if e := np.fwhm()/(2*g) - 1; math.Abs(e) > c.tolFWHM {
				t.Errorf("Lorentzian g=%.3g: FWHM error %.2g", g, e)
			}
			if e := np.fwha()/(2*g) - 1; math.Abs(e) > c.tolFWHA {
				t.Errorf("Lorentzian g=%.3g: FWHA error %.2g", g, e)
			}
			for i, v := range x {
				p[i] = math.Max(math.Exp(-(v/g)*(v/g)), 1e-300)
			}
			if np, err = newNodeProfile(x, p); err != nil {
				t.Fatal(err)
			}
			// Gaussian exp(−(x/g)²): FWHM = 2g√ln2, FWHA = 2g·erfinv(½).
			if e := np.fwhm()/(2*g*math.Sqrt(math.Ln2)) - 1; math.Abs(e) > c.tolFWHM {
				t.Errorf("Gaussian g=%.3g: FWHM error %.2g", g, e)
			}
			if e := np.fwha()/(2*g*math.Erfinv(0.5)) - 1; math.Abs(e) > c.tolFWHA {
				t.Errorf("Gaussian g=%.3g: FWHA error %.2g", g, e)
			}
		}
	}
}

// The Voigt half-area width: the Lorentzian limit (FWHA = FWHM) and values of the independent
// implementation diag.FWHAFromVoigtExact (adaptive quadrature, stated
// accuracy 1e-6), and the ψ table's interpolation.
func TestVoigtFWHA(t *testing.T) {
	if got := voigtFWHA(1, 0); got != 1 {
		t.Errorf("Lorentzian: FWHA %g, want 1", got)
	}
	for _, c := range []struct{ wG, want float64 }{
		// diag.FWHAFromVoigtExact(wG, 1), glowlog diag/fwha.go.
		{0.3, 1.0318701226},
		{1, 1.2876881278},
		{2, 1.8001275742},
	} {
		if got := voigtFWHA(1, c.wG); math.Abs(got/c.want-1) > 2e-6 {
			t.Errorf("voigtFWHA(1, %g) = %.10f, want %.10f", c.wG, got, c.want)
		}
		if got := voigtFWHAFast(1, c.wG); math.Abs(got/c.want-1) > 3e-5 {
			t.Errorf("voigtFWHAFast(1, %g) = %.10f, want %.10f", c.wG, got, c.want)
		}
	}
	for r := 0.005; r < rhoMax; r += 0.0173 {
		if e := voigtFWHAFast(1, r)/voigtFWHA(1, r) - 1; math.Abs(e) > 3e-5 {
			t.Errorf("ψ table at ρ=%g: error %g", r, e)
		}
	}
	// The inversions recover the Lorentzian part of a Voigt profile.
	for _, wG := range []float64{0.1, 0.5, 0.9} {
		wA := voigtFWHA(1, wG)
		if got := starkFWHA(wA, wG); math.Abs(got-1) > 3e-5 {
			t.Errorf("starkFWHA(FWHA(1, %g), %g) = %g, want 1", wG, wG, got)
		}
		wV := olA + math.Sqrt(olB+wG*wG)
		if got := starkFWHM(wV, wG); math.Abs(got-1) > 1e-12 {
			t.Errorf("starkFWHM(w_V(1, %g), %g) = %g, want 1", wG, wG, got)
		}
	}
}

// A node made of a Voigt profile (a Lorentzian of FWHM L convolved with a
// Gaussian of FWHM w_D, sampled on the tables' detuning grid) must give
// back L as its Stark-only width, with a small removal uncertainty: the
// removal is exact for a Lorentzian Stark part.
func TestDopplerRemovalOnVoigtNode(t *testing.T) {
	s := mustLoad(t)
	x := mustNodes(t, mustLine(t, s, 4))[0][0].x
	const xnm = 1e10 // detuning units per nm
	for _, c := range []struct{ L, wD float64 }{{1, 0.3}, {1, 0.8}, {0.5, 0.5}, {2, 0.1}} {
		g := c.L / 2 * xnm
		p := make([]float64, len(x))
		for i, v := range x {
			p[i] = 1 / (1 + (v/g)*(v/g))
		}
		lor, err := newNodeProfile(x, p)
		if err != nil {
			t.Fatal(err)
		}
		b := newBroadened(lor, xnm, c.wD)
		for i, v := range x {
			p[i] = b.at(v / xnm)
		}
		vn, err := newNodeProfile(x, p)
		if err != nil {
			t.Fatal(err)
		}
		for kind := range numKinds {
			w := vn.fwhm() / xnm
			if kind == FWHA {
				w = vn.fwha() / xnm
			}
			got, unc := starkEstimate(kind, vn, xnm, w, c.wD)
			// Interpolation of the sampled Voigt node and the
			// Olivero–Longbothum formula leave ≲ 1 %.
			if math.Abs(got/c.L-1) > 0.01 || unc > 0.01 {
				t.Errorf("Voigt L=%g w_D=%g: Stark %v %.5g (uncertainty %.2g), want %g", c.L, c.wD, kind, got, unc, c.L)
			}
		}
	}
}

// The Doppler removal's reported uncertainty is small where the Stark
// part dominates and stays bounded where Stark widths are reported:
// below 2.5 % where the Doppler FWHM is under a tenth of the Stark width,
// and below 10 % everywhere (Doppler FWHM up to the Stark width). The
// values are logged per line for the notes.
func TestDopplerRemovalUncertainty(t *testing.T) {
	if testing.Short() {
		t.Skip("numerical convolution of every node")
	}
	s := mustLoad(t)
	for _, u := range s.order {
		l := mustLine(t, s, u)
		var worstDom, worstAll [numKinds]float64
		for kind := range numKinds {
			g := l.starkWidths(kind)
			for j := range l.ne {
				for k, tk := range l.t {
					if math.IsNaN(g[j][k]) {
						continue
					}
					r := l.DopplerFWHMNM(tk) / math.Exp(g[j][k])
					un := l.unc[kind][j][k]
					worstAll[kind] = math.Max(worstAll[kind], un)
					if r <= 0.1 {
						worstDom[kind] = math.Max(worstDom[kind], un)
						if un > 0.025 {
							t.Errorf("n=%d ne=%g T=%g %v: w_D/w_S = %.3f, removal uncertainty %.2f %%", u, l.ne[j], tk, kind, r, 100*un)
						}
					}
					if un > 0.10 {
						t.Errorf("n=%d ne=%g T=%g %v: w_D/w_S = %.3f, removal uncertainty %.2f %%", u, l.ne[j], tk, kind, r, 100*un)
					}
				}
			}
		}
		t.Logf("n=%d: removal uncertainty where w_D ≤ 0.1 w_S: FWHM ≤ %.2f %%, FWHA ≤ %.2f %%; anywhere: FWHM ≤ %.2f %%, FWHA ≤ %.2f %%",
			u, 100*worstDom[FWHM], 100*worstDom[FWHA], 100*worstAll[FWHM], 100*worstAll[FWHA])
	}
}

// BenchmarkDecodeJSON measures decoding the provenance JSON, which every
// process paid before the tables were generated (line_table.go).
func BenchmarkDecodeJSON(b *testing.B) {
	for b.Loop() {
		rawFile(b)
	}
}

// BenchmarkDecode measures the one-time building of the lines from the
// generated tables (node profiles not yet unpacked).
func BenchmarkDecode(b *testing.B) {
	for b.Loop() {
		if _, err := decode(); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkPrepareHbeta measures the one-time preparation of Hβ's node
// profiles (on the first use of its profile).
func BenchmarkPrepareHbeta(b *testing.B) {
	for b.Loop() {
		b.StopTimer()
		s, err := decode()
		if err != nil {
			b.Fatal(err)
		}
		b.StartTimer()
		mustNodes(b, mustLine(b, s, 4))
	}
}

// BenchmarkStarkWidthsHbeta measures the one-time, per-line computation
// of the Stark-only widths (both kinds) of Hβ with their Doppler-removal
// uncertainty.
func BenchmarkStarkWidthsHbeta(b *testing.B) {
	for b.Loop() {
		b.StopTimer()
		s, err := decode()
		if err != nil {
			b.Fatal(err)
		}
		l := mustLine(b, s, 4)
		b.StartTimer()
		l.starkWidths(FWHM)
		l.starkWidths(FWHA)
	}
}

// Leave-one-out check of the interpolation between nodes: a tabulated
// node is predicted from its two neighbours in n_e (or in T), twice as
// far apart as the interpolation ever reaches, with the same rules as
// TableWidthNM and Profile (linear in ln n_e or ln T, widths in ln w,
// profiles scaled to the interpolated FWHM), and compared with the node
// itself. Errors of the real interpolation (half the step) are expected
// to be about a quarter of these (second-order errors). Asserted, for
// Hα … Hδ at every interior node with n_e ≥ 3×10²⁰ m⁻³ and T ≤ 4×10⁴ K
// where Stark-only widths are reported: Stark widths within 4 % (where
// the Doppler removal is certain to 1 %; its own noise would dominate
// elsewhere), profiles within 10 % of the peak (largest in the
// Stark–Doppler transition and for Hβ's peaks). The worst values are
// logged for the notes.
func TestInterpolationLeaveOneOut(t *testing.T) {
	s := mustLoad(t)
	worstW, worstP := 0.0, 0.0
	for _, u := range []int{3, 4, 5, 6} {
		l := mustLine(t, s, u)
		nodes := mustNodes(t, l)
		for j := 1; j < len(l.ne)-1; j++ {
			if l.ne[j] < 3e14 {
				continue
			}
			for k := 1; k < len(l.t)-1; k++ {
				if l.t[k] > 4e4 {
					continue
				}
				for _, dir := range [][2][2]int{{{j - 1, k}, {j + 1, k}}, {{j, k - 1}, {j, k + 1}}} {
					a, b := dir[0], dir[1]
					na, nb, nc := nodes[a[0]][a[1]], nodes[b[0]][b[1]], nodes[j][k]
					if na == nil || nb == nil || nc == nil {
						continue
					}
					// Interpolation weight of b in ln n_e or ln T.
					var f float64
					if a[0] != b[0] {
						f = (l.lne[j] - l.lne[a[0]]) / (l.lne[b[0]] - l.lne[a[0]])
					} else {
						f = (l.lt[k] - l.lt[a[1]]) / (l.lt[b[1]] - l.lt[a[1]])
					}
					for kind := range numKinds {
						g := l.starkWidths(kind)
						if math.IsNaN(g[a[0]][a[1]]) || math.IsNaN(g[b[0]][b[1]]) || math.IsNaN(g[j][k]) {
							continue
						}
						// Where the Doppler removal itself is uncertain,
						// its noise would dominate the comparison.
						if u := l.unc[kind]; u[a[0]][a[1]] > 0.01 || u[b[0]][b[1]] > 0.01 || u[j][k] > 0.01 {
							continue
						}
						pred := math.Exp((1-f)*g[a[0]][a[1]] + f*g[b[0]][b[1]])
						e := pred/math.Exp(g[j][k]) - 1
						worstW = math.Max(worstW, math.Abs(e))
						if math.Abs(e) > 0.04 {
							t.Errorf("n=%d ne=%g T=%g Stark %v: width %.4g predicted from neighbours, node %.4g (%.1f %%)",
								u, l.ne[j], l.t[k], kind, pred, math.Exp(g[j][k]), 100*e)
						}
					}
					if math.IsNaN(l.starkWidths(FWHM)[a[0]][a[1]]) {
						continue // profile checked where the Stark part matters
					}
					g := l.lw[FWHM][0]
					lW := (1-f)*g[a[0]][a[1]] + f*g[b[0]][b[1]]
					W := math.Exp(g[j][k])
					var peak, dev float64
					for d := 0.0; d <= 3*W; d += W / 100 {
						var v float64
						for _, c := range []struct {
							jj, kk int
							w      float64
						}{{a[0], a[1], 1 - f}, {b[0], b[1], f}} {
							sc := math.Exp(g[c.jj][c.kk] - lW)
							xn := l.xPerNM[c.jj]
							v += c.w * sc * xn * 0.5 / nodes[c.jj][c.kk].half * nodes[c.jj][c.kk].at(d*sc*xn)
						}
						node := l.xPerNM[j] * 0.5 / nc.half * nc.at(d*l.xPerNM[j])
						peak = math.Max(peak, node)
						dev = math.Max(dev, math.Abs(v-node))
					}
					worstP = math.Max(worstP, dev/peak)
					if dev/peak > 0.10 {
						t.Errorf("n=%d ne=%g T=%g: profile predicted from neighbours off by %.1f %% of the peak", u, l.ne[j], l.t[k], 100*dev/peak)
					}
				}
			}
		}
	}
	t.Logf("leave-one-out: widths within %.2f %%, profiles within %.2f %% of the peak", 100*worstW, 100*worstP)
}

// TestNodesPreparedOnDemand: a profile evaluation prepares only the nodes
// around it; concurrent first uses give the sequential values.
func TestNodesPreparedOnDemand(t *testing.T) {
	s, err := decode()
	if err != nil {
		t.Fatal(err)
	}
	l := mustLine(t, s, 4)
	prepared := func() int {
		n := 0
		for j := range l.nodeAt {
			for k := range l.nodeAt[j] {
				if l.nodeAt[j][k].Load() != nil {
					n++
				}
			}
		}
		return n
	}
	if n := prepared(); n != 0 {
		t.Fatalf("%d nodes prepared before any profile", n)
	}
	const ne, tk = 1e22, 1e4
	done := make(chan float64)
	for range 8 {
		go func() {
			v, err := l.Profile(0.01, ne, tk)
			if err != nil {
				t.Error(err)
			}
			done <- v
		}()
	}
	var vs []float64
	for range 8 {
		vs = append(vs, <-done)
	}
	if n := prepared(); n < 1 || n > 4 {
		t.Errorf("%d nodes prepared for one (n_e, T), want the ≤ 4 corners", n)
	}
	ref, err := Balmer(4)
	if err != nil {
		t.Fatal(err)
	}
	want, err := ref.Profile(0.01, ne, tk)
	if err != nil {
		t.Fatal(err)
	}
	for _, v := range vs {
		if math.Float64bits(v) != math.Float64bits(want) {
			t.Fatalf("concurrent first use gave %v, want %v", v, want)
		}
	}
}

// BenchmarkFirstProfileHbeta measures the first profile evaluation of Hβ
// in a process: the corner nodes are unpacked and prepared.
func BenchmarkFirstProfileHbeta(b *testing.B) {
	for b.Loop() {
		b.StopTimer()
		s, err := decode()
		if err != nil {
			b.Fatal(err)
		}
		l := mustLine(b, s, 4)
		b.StartTimer()
		if _, err := l.Profile(0.01, 1e22, 1e4); err != nil {
			b.Fatal(err)
		}
	}
}
