package spectrum

// Robustness of the line-by-line route on spectra where it used to fail:
// a Balmer line far wider than the instrument in a high-resolution window
// (the search's baseline sat inside the line), and dense survey spectra
// (weak, wide upper members on a steep response: a window fit whose width
// or area is implausible poisoned the weighted n_e and the Boltzmann
// slope). The spectra are made here in Go from the Stehlé & Hutcheon
// (1999) profiles of diag/sh99 (Stark ⊗ Doppler(T_e) tables convolved
// with the remaining Gaussian, integrated over each pixel), with our own
// grids and seeds; the independent check sets are not used to set
// anything here.

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

// sh99Scene is a multi-line SH99-shaped spectrum.
type sh99Scene struct {
	x          []float64 // pixel centres, nm (air), ascending
	uppers     []int
	tExc       float64 // sets the line ratios (LTE), K
	haArea     float64 // Hα signal (before the response), counts·nm per nm of pixel width... see counts
	ne, te     float64 // m⁻³, K (the tables' T)
	instG      float64 // instrument Gaussian FWHM, nm
	gasT       float64 // K
	contPerNM  float64 // continuum, counts per nm, at the range's centre
	contSlope  float64 // relative slope of the continuum over the range
	resp       func(lambda float64) float64
	gain, read float64 // e⁻/count, e⁻
	// neOf overrides ne for single lines (a line inconsistent with the
	// others, standing for a window fit gone wrong).
	neOf map[int]float64
}

// areas returns the LTE areas of the scene's lines (Hα = haArea).
func (s sh99Scene) areas(t testing.TB) []float64 {
	ha, _ := diag.Balmer(3, diag.Hydrogen)
	out := make([]float64, len(s.uppers))
	for k, n := range s.uppers {
		tr, err := diag.Balmer(n, diag.Hydrogen)
		if err != nil {
			t.Fatal(err)
		}
		out[k] = s.haArea * float64(tr.GUpper) * tr.EinsteinA / (float64(ha.GUpper) * ha.EinsteinA) *
			math.Exp(-(tr.UpperEnergyEV-ha.UpperEnergyEV)/(diag.BoltzmannEVPerK*s.tExc))
	}
	return out
}

// counts makes the scene's detector counts: for each pixel the per-nm
// signal (continuum + Σ area·⟨profile⟩_pixel) times the pixel width and
// the response, with Poisson-like noise (gain) and read noise.
func (s sh99Scene) counts(t testing.TB, rng *rand.Rand) []float64 {
	t.Helper()
	x := s.x
	n := len(x)
	sig := make([]float64, n)
	areas := s.areas(t)
	for k, up := range s.uppers {
		l, err := sh99.Balmer(up)
		if err != nil {
			t.Fatal(err)
		}
		tr, _ := diag.Balmer(up, diag.Hydrogen)
		c0 := tr.WavelengthAirNM
		wD := diag.DopplerFWHMNM(c0, s.gasT, diag.EmitterMassAMU(diag.Hydrogen))
		g2 := s.instG*s.instG + wD*wD - math.Pow(l.DopplerFWHMNM(s.te), 2)
		if g2 <= 0 {
			t.Fatalf("H%d: instrument ⊕ gas Doppler narrower than the tables' Doppler", up)
		}
		ne := s.ne
		if v, ok := s.neOf[up]; ok {
			ne = v
		}
		// The line as SynthesizeStark makes it (addStarkLine), with no
		// Lorentzian beyond the tables' Stark profile.
		sl := SynthLine{Upper: up, CenterNM: c0, Area: areas[k], GaussFWHMNM: math.Hypot(s.instG, wD)}
		if err := addStarkLine(sig, x, &sl, l, ne, s.te); err != nil {
			t.Fatalf("H%d: %v", up, err)
		}
	}
	mid, span := 0.5*(x[0]+x[n-1]), x[n-1]-x[0]
	y := make([]float64, n)
	for i := range x {
		v := (sig[i] + s.contPerNM*(1+s.contSlope*(x[i]-mid)/span)) * pixelWidth(x, i)
		if s.resp != nil {
			v *= s.resp(x[i])
		}
		if rng != nil {
			e := math.Max(v, 0)*s.gain + s.read*s.read
			v += math.Sqrt(e) / s.gain * rng.NormFloat64()
		}
		y[i] = v
	}
	return y
}

// funcResponse is a response given by a function.
type funcResponse func(float64) float64

func (f funcResponse) At(l float64) (float64, error) { return f(l), nil }

func (s sh99Scene) options() Options {
	o := Options{Conditions: diag.Measurement{InstrumentGaussFWHMNM: s.instG, GasTemperatureK: s.gasT,
		ElectronTemperatureK: s.te}, GainElectronsPerCount: s.gain, ReadNoiseElectrons: s.read}
	if s.resp != nil {
		o.Response = funcResponse(s.resp)
		o.ResponseUnit = diag.PhotonUnits
	}
	return o
}

// TestWideLineDetected: Hβ at 1.6–2.5×10²³ m⁻³ (FWHM 7–11 nm) under a
// 0.04–0.05 nm instrument, in 100 nm and 130 nm windows of 4096 pixels, peak
// SNR about 30: the line is found and fitted, and its n_e lies within 15 %
// and 3σ of the truth. Before the search grew its baseline region for
// wide lines, every case ended in "no Balmer line detected".
func TestWideLineDetected(t *testing.T) {
	p := NewPipeline(8192)
	cases := 0
	for _, win := range [][2]float64{{440, 540}, {430, 560}} {
		for _, ne := range []float64{1.6e23, 2.0e23, 2.5e23} {
			for seed := uint64(1); seed <= 3; seed++ {
				rng := rand.New(rand.NewPCG(seed, 11))
				x := linspace(win[0], win[1], 4096)
				sc := sh99Scene{x: x, uppers: []int{4}, tExc: 8000, haArea: 3e6, ne: ne, te: 2e4,
					instG: 0.04 + 0.005*float64(seed), gasT: 2e4, contPerNM: 300, contSlope: 0.2, gain: 1, read: 5}
				y := sc.counts(t, rng)
				res, err := p.Analyze(&Spectrum{Name: "wide", WavelengthNM: x, Counts: y}, sc.options())
				cases++
				if err != nil {
					t.Errorf("%v n_e %.3g seed %d: %v", win, ne, seed, err)
					continue
				}
				got, unc := *res.ElectronDensityM3, *res.ElectronDensityUncM3
				t.Logf("%v n_e %.3g: %.3g ± %.2g (%s)", win, ne, got, unc, res.ElectronDensitySource)
				if d := math.Abs(got - ne); d > 0.15*ne || d > 3*unc {
					t.Errorf("%v n_e %.3g seed %d: got %.3g ± %.2g", win, ne, seed, got, unc)
				}
			}
		}
	}
	if cases != 18 {
		t.Fatalf("%d cases", cases)
	}
}

// surveyScene draws a dense survey spectrum: 2048 pixels over 376–700 nm,
// instrument 0.3–0.8 nm, n_e log-uniform 10²²–2×10²³ m⁻³ (T_e = 10⁴ K,
// 19 950 K above 10²³, where the tables start there; T_gas = T_e), T_exc
// 3000–15000 K, Hα peak SNR 30–3000, continuum 3 % of Hα's peak counts,
// and a response that falls steeply to the blue (Hδ–Hε sit on a slope of
// about 25 % per 10 nm). Members are put in while the tables cover them
// at that n_e (Hδ to 10²³, Hε to 3.16×10²², H8 to 10²² m⁻³).
func surveyScene(rng *rand.Rand) (sh99Scene, float64) {
	ne := math.Pow(10, 22+math.Log10(20)*rng.Float64())
	te := 1e4
	if ne > 1e23 {
		te = 19950
	}
	uppers := []int{3, 4, 5}
	if ne <= 1e23 {
		uppers = append(uppers, 6)
	}
	if ne <= 3.1e22 {
		uppers = append(uppers, 7)
	}
	if ne <= 1e22 {
		uppers = append(uppers, 8)
	}
	tExc := 3000 + 12000*rng.Float64()
	inst := 0.3 + 0.5*rng.Float64()
	snr := math.Pow(10, 1.5+2*rng.Float64())
	x := linspace(376, 700, 2048)
	// Hα's peak ≈ area / FWHM: its peak counts ≈ SNR² (Poisson, gain 2).
	haW := 0.5 + ne/1e23*2
	peakCounts := snr * snr
	px := x[1] - x[0]
	return sh99Scene{x: x, uppers: uppers, tExc: tExc, haArea: peakCounts / px * haW, ne: ne, te: te, instG: inst, gasT: te,
		contPerNM: 0.03 * peakCounts / px, contSlope: 0.3, gain: 2, read: 20,
		resp: func(l float64) float64 { return 0.05 + math.Exp(-math.Pow((l-600)/120, 2)) }}, snr
}

// TestDenseSurvey: on 24 seeded dense survey spectra (surveyScene) every
// spectrum gets n_e, and T_exc when two or more lines were fitted; n_e's median error is below 15 % and no
// n_e is off by more than 40 % (before the search's straight baseline,
// weak members on the response's slope were "detected" on the continuum
// with windows over the whole range, and their areas and narrow widths
// made n_e 5–100× too low and the Boltzmann slope positive); T_exc's
// median error is below 5 %; the truth lies within 2σ of n_e in at least
// 80 % of the spectra and of T_exc in at least 70 %. Measured 2026-12-02:
// n_e median 3.6 %, 24/24 within 2σ; T_exc (23 spectra) median 1.2 %,
// 19 within 2σ. With the Stark-shape table of three continuum/peak bins
// (measured to q ≈ 0.6, held above) T_exc was 2.8 % and 11: the weak
// members' corrected areas 3–7 % high (TestMeasureSurveyAreas).
func TestDenseSurvey(t *testing.T) {
	p := NewPipeline(8192)
	rng := rand.New(rand.NewPCG(99, 3))
	var neErr, tErr []float64
	ne2, t2, nT, fails := 0, 0, 0, 0
	const cases = 24
	for k := range cases {
		sc, snr := surveyScene(rng)
		y := sc.counts(t, rng)
		res, err := p.Analyze(&Spectrum{Name: "survey", WavelengthNM: sc.x, Counts: y}, sc.options())
		if err != nil {
			t.Errorf("%d: n_e %.3g: %v", k, sc.ne, err)
			fails++
			continue
		}
		if res.ElectronDensityM3 == nil {
			t.Errorf("%d: n_e %.3g: no n_e", k, sc.ne)
			continue
		}
		ne, neU := *res.ElectronDensityM3, *res.ElectronDensityUncM3
		e := ne/sc.ne - 1
		neErr = append(neErr, math.Abs(e))
		if math.Abs(ne-sc.ne) <= 2*neU {
			ne2++
		}
		ts := "no T_exc"
		if res.ExcitationTemperatureK != nil {
			te, teU := *res.ExcitationTemperatureK, *res.ExcitationTemperatureUncK
			tErr = append(tErr, math.Abs(te/sc.tExc-1))
			nT++
			if math.Abs(te-sc.tExc) <= 2*teU {
				t2++
			}
			ts = fmt.Sprintf("T_exc %.0f ± %.0f (true %.0f)", te, teU, sc.tExc)
		} else if fitted := countFitted(res.LineSearch); fitted >= 2 {
			t.Errorf("%d: %d lines fitted but no T_exc (%v)", k, fitted, res.Warnings)
		}
		t.Logf("%2d n_e %.3g inst %.2f SNR %4.0f: n_e %.3g ± %.2g (%+.0f %%), %s; %s %v", k, sc.ne, sc.instG, snr, ne, neU, 100*e, ts, res.ElectronDensitySource, res.PartialReasons)
		if math.Abs(e) > 0.4 {
			t.Errorf("%d: n_e %.3g ± %.2g, true %.3g", k, ne, neU, sc.ne)
		}
	}
	if len(neErr) == 0 || len(tErr) == 0 {
		t.Fatalf("no results")
	}
	mn, mt := median(neErr), median(tErr)
	t.Logf("%d spectra: n_e %d, median |error| %.1f %%, within 2σ %d; T_exc %d, median |error| %.1f %%, within 2σ %d",
		cases, len(neErr), 100*mn, ne2, nT, 100*mt, t2)
	if mn > 0.15 {
		t.Errorf("n_e median |error| %.1f %% > 15 %%", 100*mn)
	}
	if mt > 0.05 {
		t.Errorf("T_exc median |error| %.1f %% > 5 %%", 100*mt)
	}
	if f := float64(ne2) / cases; f < 0.8 {
		t.Errorf("n_e within 2σ in %d of %d", ne2, cases)
	}
	if f := float64(t2) / cases; f < 0.7 {
		t.Errorf("T_exc within 2σ in %d of %d", t2, cases)
	}
}

func countFitted(ls []LineSearch) int {
	k := 0
	for _, l := range ls {
		if l.Status == "fitted" {
			k++
		}
	}
	return k
}

func median(v []float64) float64 {
	s := slices.Clone(v)
	slices.Sort(s)
	if len(s)%2 == 1 {
		return s[len(s)/2]
	}
	return 0.5 * (s[len(s)/2-1] + s[len(s)/2])
}

// TestDensityOutlierWithheld: a survey spectrum (n_e 3×10²² m⁻³, Hα–Hε)
// whose Hδ alone is made at 1/30 of that density — standing for a window
// fit that returned a far too narrow width. Its density, many σ from the
// other lines', is withheld (and said so), and the combined n_e stays
// within 15 % of the truth; before, the inverse-variance mean, which
// gives a low value with its proportionally small σ the largest weight,
// was pulled far down.
func TestDensityOutlierWithheld(t *testing.T) {
	p := NewPipeline(8192)
	for seed := uint64(1); seed <= 4; seed++ {
		rng := rand.New(rand.NewPCG(seed, 5))
		x := linspace(376, 700, 2048)
		px := x[1] - x[0]
		const ne = 3e22
		sc := sh99Scene{x: x, uppers: []int{3, 4, 5, 6, 7}, tExc: 9000, haArea: 4e5 / px, ne: ne, te: 1e4,
			instG: 0.4, gasT: 1e4, contPerNM: 0.02 * 4e5 / px, gain: 2, read: 20, neOf: map[int]float64{6: ne / 30}}
		res, err := p.Analyze(&Spectrum{Name: "outlier", WavelengthNM: x, Counts: sc.counts(t, rng)}, sc.options())
		if err != nil {
			t.Fatal(err)
		}
		got, unc := *res.ElectronDensityM3, *res.ElectronDensityUncM3
		t.Logf("seed %d: n_e %.3g ± %.2g (%s); %v", seed, got, unc, res.ElectronDensitySource, res.PartialReasons)
		if math.Abs(got/ne-1) > 0.15 {
			t.Errorf("seed %d: n_e %.3g ± %.2g, true %.3g", seed, got, unc, ne)
		}
		said := false
		for _, r := range res.PartialReasons {
			said = said || strings.HasPrefix(r, "Hδ width withheld")
		}
		if !said || !hasFlag(res.Flags, FlagPartialResult) {
			t.Errorf("seed %d: Hδ's width not reported as withheld: %v", seed, res.PartialReasons)
		}
		for _, lr := range res.Lines {
			if lr.UpperLevel == 6 && (lr.ElectronDensityM3 != nil || lr.Intensity == nil) {
				t.Errorf("seed %d: Hδ should keep its area and give no density", seed)
			}
		}
	}
}

// TestWindowsCoverFittedWidth: Hβ at 3×10²¹–3×10²² m⁻³ in 40 nm windows
// of 4096 pixels at peak SNR 5–20, where the search's half-maximum walk
// over single noisy pixels stops early and underestimates the FWHM: every
// fitted line's window spans at least ±4 of its fitted FWHM (or reaches
// the range's end). On the base pipeline 8 of 21 fitted lines had
// narrower windows (down to ±0.51 FWHM); with the straight search baseline
// but without widening to the fitted FWHM and refitting, 4 of 27 (down to
// ±0.87 FWHM).
func TestWindowsCoverFittedWidth(t *testing.T) {
	p := NewPipeline(8192)
	narrow, fitted := 0, 0
	for seed := uint64(1); seed <= 30; seed++ {
		rng := rand.New(rand.NewPCG(seed, 17))
		ne := math.Pow(10, 21.5+rng.Float64())
		x := linspace(466, 506, 4096)
		sc := sh99Scene{x: x, uppers: []int{4}, tExc: 8000, haArea: 1.5e4 * (1 + 10*rng.Float64()), ne: ne, te: 1e4,
			instG: 0.04, gasT: 1000, contPerNM: 50, contSlope: 0.2, gain: 1, read: 5}
		res, err := p.Analyze(&Spectrum{Name: "win", WavelengthNM: x, Counts: sc.counts(t, rng)}, sc.options())
		if err != nil {
			continue // too weak to fit: not this test's concern
		}
		for _, lr := range res.Lines {
			f := lr.ProfileFit
			if f == nil {
				continue
			}
			fitted++
			left, right := f.CenterNM-f.WindowNM[0], f.WindowNM[1]-f.CenterNM
			cut := f.WindowNM[0] <= x[0] || f.WindowNM[1] >= x[len(x)-1]
			if h := math.Min(left, right) / f.TotalFWHMNM; h < 4 && !cut {
				narrow++
				t.Errorf("seed %d n_e %.3g: window ±%.2f fitted FWHM (%.3g nm, window %v)", seed, ne, h, f.TotalFWHMNM, f.WindowNM)
			}
		}
	}
	if fitted < 20 {
		t.Fatalf("only %d of 30 spectra fitted", fitted)
	}
	t.Logf("%d fitted, %d with windows narrower than ±4 fitted FWHM", fitted, narrow)
}

// TestMeasureSurveyAreas (GLOWLOG_MEASURE_SHAPE=1) prints, per line, the
// corrected and raw areas of 120 dense survey spectra (surveyScene, a seed
// of its own) against the truth, with the fit's r and q (and q₀, the
// search's q on the same spectrum without noise) and whether the line was
// fitted jointly, then means per line and Hα peak SNR. Measured
// 2026-12-02 (six-bin table): Hα −0.3 … −0.5 % (pull −0.5); Hβ +0.3 %
// at Hα SNR ≥ 150 but +4.1 % (pull +0.7) below it, where the search's
// continuum/peak is 23 % low (ln(q/q₀) −0.26: the low-percentile baseline
// sits below the continuum and the highest core pixel above the peak by
// a noise σ or more), which picks too small a correction; Hγ +1.8 … +2.4 %
// at Hα SNR ≥ 150. All SNR: Hβ +1.7 % (mean pull +0.45, 77 % within 1σ),
// Hγ +2.9 % (+0.52, 59 %), Hδ −2.0 % (−0.01, 55 %); with the three-bin
// table Hβ +3.7 % (+1.23, 38 %), Hγ +4.4 % (+1.14, 37 %), Hδ +2.0 %.
// T_exc (114 spectra): within 1σ 90, within 2σ 114, median pull +0.45
// (three-bin table: 39, 74, +1.53). The corrected Stark widths (width
// rows of 2026-12-01, kept) against the tables' (T_e 10⁴ K spectra):
// Hα +0.5 %, Hβ +5.2 %, Hγ +1.4 %, Hδ +0.7 %, H7 +4.0 %; with the width
// rows re-measured in six q bins (not taken, see shapeTable) +0.2, +2.8,
// −1.8, −4.3, −0.5 %.
func TestMeasureSurveyAreas(t *testing.T) {
	if os.Getenv("GLOWLOG_MEASURE_SHAPE") == "" {
		t.Skip("set GLOWLOG_MEASURE_SHAPE=1 to measure the corrected areas of dense survey spectra")
	}
	p := NewPipeline(8192)
	rng := rand.New(rand.NewPCG(4711, 9))
	var b strings.Builder
	type row struct {
		upper         int
		snr, raw, cor float64
		pull, lnQ     float64
	}
	var rows []row
	var nT, t1, t2 int
	var tz []float64
	widthErr := map[int][]float64{}
	for k := 0; k < 120; k++ {
		sc, snr := surveyScene(rng)
		y := sc.counts(t, rng)
		res, err := p.Analyze(&Spectrum{Name: "survey", WavelengthNM: sc.x, Counts: y}, sc.options())
		if err != nil {
			continue
		}
		if res.ExcitationTemperatureK != nil && res.ExcitationTemperatureUncK != nil {
			d := math.Abs(*res.ExcitationTemperatureK-sc.tExc) / *res.ExcitationTemperatureUncK
			nT++
			if d <= 1 {
				t1++
			}
			if d <= 2 {
				t2++
			}
			tz = append(tz, (*res.ExcitationTemperatureK-sc.tExc) / *res.ExcitationTemperatureUncK)
		}
		areas := sc.areas(t)
		// The same scene without noise: the search's continuum/peak
		// without the noise's bias.
		q0 := map[int]float64{}
		if r0, err := p.Analyze(&Spectrum{Name: "survey", WavelengthNM: sc.x, Counts: sc.counts(t, nil)}, sc.options()); err == nil {
			for _, lr := range r0.Lines {
				if lr.ProfileFit != nil {
					q0[lr.UpperLevel] = lr.ContinuumToPeak
				}
			}
		}
		for _, lr := range res.Lines {
			if lr.Intensity == nil || lr.ProfileFit == nil {
				continue
			}
			k := slices.Index(sc.uppers, lr.UpperLevel)
			if k < 0 {
				continue
			}
			f := lr.ProfileFit
			r := math.Max(f.VoigtLorentzFWHMNM, 0) / f.GaussFWHMNM
			hw := math.Min(f.CenterNM-f.WindowNM[0], f.WindowNM[1]-f.CenterNM) / f.TotalFWHMNM
			q0v := math.NaN()
			if v, ok := q0[lr.UpperLevel]; ok {
				q0v = v
			}
			fmt.Fprintf(&b, "SURV n=%d ne=%.3g inst=%.2f snr=%.0f r=%.3f q0=%.3f q=%.3f joint=%d hw=%.2f chi2=%.2f raw=%+.4f cor=%+.4f sig=%.4f\n",
				lr.UpperLevel, sc.ne, sc.instG, snr, r, q0v, f.ContinuumToPeak, len(f.JointWith), hw, f.ReducedChi2,
				math.Log(f.VoigtArea/areas[k]), math.Log(*lr.Intensity/areas[k]), *lr.IntensityUnc / *lr.Intensity)
			// The corrected Stark width against the tables' (T_e = 10⁴ K
			// spectra only: the tables' widths are taken at shapeTe).
			if lr.LorentzFWHMNM != nil && sc.te == shapeTe {
				if wS, err := starkWidth(lr.UpperLevel, sc.ne); err == nil {
					widthErr[lr.UpperLevel] = append(widthErr[lr.UpperLevel], math.Log(*lr.LorentzFWHMNM/wS))
				}
			}
			cor := math.Log(*lr.Intensity / areas[k])
			rows = append(rows, row{lr.UpperLevel, snr, math.Log(f.VoigtArea / areas[k]), cor,
				cor / (*lr.IntensityUnc / *lr.Intensity), math.Log(f.ContinuumToPeak / q0v)})
		}
	}
	fmt.Fprintf(&b, "T_exc: %d spectra, within 1σ %d, within 2σ %d, median (T − T_true)/σ %+.2f\n", nT, t1, t2, median(tz))
	// Per line and Hα peak SNR: means of ln(A/A_true) raw and corrected,
	// of the pull, the fraction within 1σ, and the mean ln(q/q₀) of the
	// search's continuum/peak against the noise-free spectrum's.
	for u := 3; u <= 8; u++ {
		for _, band := range [][2]float64{{0, 150}, {150, 600}, {600, math.Inf(1)}} {
			var n, in1, nq int
			var raw, cor, pull, lq float64
			for _, r := range rows {
				if r.upper != u || r.snr < band[0] || r.snr >= band[1] {
					continue
				}
				n++
				raw, cor, pull = raw+r.raw, cor+r.cor, pull+r.pull
				if math.Abs(r.pull) <= 1 {
					in1++
				}
				if !math.IsNaN(r.lnQ) && !math.IsInf(r.lnQ, 0) {
					lq += r.lnQ
					nq++
				}
			}
			if n < 3 {
				continue
			}
			fn := float64(n)
			fmt.Fprintf(&b, "n=%d Hα SNR %4.0f–%-4.0f %3d: ln(A/A_true) raw %+.4f corrected %+.4f, mean pull %+.2f, within 1σ %.0f %%, ln(q/q₀) %+.3f (%d)\n",
				u, band[0], band[1], n, raw/fn, cor/fn, pull/fn, 100*float64(in1)/fn, lq/math.Max(float64(nq), 1), nq)
		}
	}
	for u := 3; u <= 8; u++ {
		if v := widthErr[u]; len(v) >= 3 {
			m, q := 0.0, 0.0
			for _, e := range v {
				m, q = m+e, q+e*e
			}
			fmt.Fprintf(&b, "n=%d corrected Stark width (T_e 10⁴ K spectra) %3d: mean ln(w/w_true) %+.4f, rms %.4f\n", u, len(v), m/float64(len(v)), math.Sqrt(q/float64(len(v))))
		}
	}
	t.Log("\n" + b.String())
}

// TestSelectK: selectK gives the k-th smallest element, as sorting does,
// for every k of random data, data with long runs of equal values, sorted
// and reversed data, and short slices.
func TestSelectK(t *testing.T) {
	r := rand.New(rand.NewPCG(11, 12))
	var cases [][]float64
	for _, n := range []int{1, 2, 3, 5, 13, 14, 40, 257, 2046} {
		u := make([]float64, n)
		for i := range u {
			u[i] = r.NormFloat64()
		}
		runs := make([]float64, n)
		for i := range runs {
			runs[i] = float64(r.IntN(3)) // three values, long runs
		}
		flat := make([]float64, n)
		sorted := slices.Clone(u)
		slices.Sort(sorted)
		rev := slices.Clone(sorted)
		slices.Reverse(rev)
		mostly := make([]float64, n) // mostly one value, a few others
		for i := range mostly {
			if r.IntN(20) == 0 {
				mostly[i] = r.Float64()
			}
		}
		cases = append(cases, u, runs, flat, sorted, rev, mostly)
	}
	for _, c := range cases {
		want := slices.Clone(c)
		slices.Sort(want)
		for k := range c {
			w := slices.Clone(c)
			if got := selectK(w, k); got != want[k] {
				t.Fatalf("n=%d: selectK(k=%d) = %v, want %v", len(c), k, got, want[k])
			}
			w2 := slices.Clone(w)
			slices.Sort(w2)
			if !slices.Equal(w2, want) {
				t.Fatalf("n=%d: selectK lost or changed elements", len(c))
			}
		}
	}
}
