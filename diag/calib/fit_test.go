package calib

import (
	"errors"
	"math"
	"math/rand/v2"
	"strings"
	"testing"

	"glowlog/diag/voigt"
)

// Synthetic instrument: Gaussian and Lorentzian FWHMs varying linearly
// with wavelength (invented values, typical of a 0.5 m grating
// spectrometer with a narrow slit).
func synthG(l float64) float64 { return 0.050 + 0.4e-4*(l-400) } // nm
func synthL(l float64) float64 { return 0.045 + 0.3e-4*(l-400) } // nm

// synthLamp returns a lamp spectrum on [lo, hi] with pixel step (nm): each
// line a Voigt of the synthetic instrument widths, peak height peak, on a
// sloping background, plus seeded Gaussian noise of σ = noise counts. The
// line centres are shifted by shiftNM (a wavelength calibration error).
func synthLamp(lo, hi, step float64, lines []LampLine, peak, noise, shiftNM float64, seed uint64) (wl, y []float64) {
	wl = grid(lo, hi, step)
	y = make([]float64, len(wl))
	rng := rand.New(rand.NewPCG(seed, seed^0x9e3779b97f4a7c15))
	for i, l := range wl {
		y[i] = 200 + 0.1*(l-lo) + noise*rng.NormFloat64()
	}
	for _, ln := range lines {
		c := ln.WavelengthAirNM + shiftNM
		s, g := voigt.SigmaFromFWHM(synthG(c)), voigt.GammaFromFWHM(synthL(c))
		a := peak / voigt.Profile(0, s, g)
		for i, l := range wl {
			if math.Abs(l-c) < 5 {
				y[i] += a * voigt.Profile(l-c, s, g)
			}
		}
	}
	return wl, y
}

// TestFitInstrumentRecovers fits synthetic Hg and Ne lamp spectra and
// checks the widths against the generating values (analytic,
// synthG/synthL), the centre offsets against the imposed shift, and the
// interpolated widths between calibration lines.
//
// The split of a Voigt into Gaussian and Lorentzian parts is the least
// well determined thing in the fit: with these widths (w_L/w_G ≈ 0.9) and
// ~20 pixels per FWHM, the 1σ error of each part is about 1.1 % at
// SNR = peak/σ_noise = 200 and 0.22 % at SNR 1000 (measured over seeds
// 1–3; the fit's own error estimates agree). So the 2 % per-width
// tolerance is asserted at SNR 1000 (≈ 9σ); at SNR 200 the total Voigt
// FWHM is held to 2 % and each part to 4 reported σ.
func TestFitInstrumentRecovers(t *testing.T) {
	t.Parallel()
	lamps := Lamps()
	for _, tc := range []struct {
		lamp     string
		lo, hi   float64
		peak     float64
		noise    float64
		shift    float64
		seed     uint64
		tolWidth float64 // relative, per width (G and L)
		tolVoigt float64 // relative, total FWHM
		tolShift float64 // nm
	}{
		{"hg", 395, 590, 40000, 40, 0.012, 1, 0.02, 0.005, 0.001}, // SNR 1000
		{"ne", 530, 700, 20000, 20, -0.02, 2, 0.02, 0.005, 0.001}, // SNR 1000
		{"hg", 395, 590, 40000, 200, 0, 3, 0.05, 0.02, 0.002},     // SNR 200
		{"ar", 420, 700, 10000, 50, 0.005, 4, 0.05, 0.02, 0.002},  // SNR 200
	} {
		lines := lamps[tc.lamp]
		wl, y := synthLamp(tc.lo, tc.hi, 0.0025, lines, tc.peak, tc.noise, tc.shift, tc.seed)
		inst, reps, err := FitInstrument("fhpl-test-"+tc.lamp, wl, y, lines, FitOptions{})
		if err != nil {
			t.Fatalf("%s: %v", tc.lamp, err)
		}
		if err := inst.Validate(); err != nil {
			t.Fatalf("%s: %v", tc.lamp, err)
		}
		if len(inst.Points) != len(lines) {
			for _, r := range reps {
				t.Logf("%s %.4f accepted=%v %s", r.Line.Element, r.Line.WavelengthAirNM, r.Accepted, r.Reason)
			}
			t.Fatalf("%s: %d of %d lines accepted", tc.lamp, len(inst.Points), len(lines))
		}
		for _, r := range reps {
			c := r.Line.WavelengthAirNM + tc.shift
			if d := relDiff(r.GaussFWHMNM, synthG(c)); d > tc.tolWidth {
				t.Errorf("%s %.4f: Gaussian FWHM %.5f, want %.5f (rel %.3g > %g)", tc.lamp, r.Line.WavelengthAirNM, r.GaussFWHMNM, synthG(c), d, tc.tolWidth)
			}
			if d := relDiff(r.LorentzFWHMNM, synthL(c)); d > tc.tolWidth {
				t.Errorf("%s %.4f: Lorentzian FWHM %.5f, want %.5f (rel %.3g > %g)", tc.lamp, r.Line.WavelengthAirNM, r.LorentzFWHMNM, synthL(c), d, tc.tolWidth)
			}
			wv := voigt.OliveroFWHM(synthG(c), synthL(c))
			if d := relDiff(r.VoigtFWHMNM, wv); d > tc.tolVoigt {
				t.Errorf("%s %.4f: Voigt FWHM %.5f, want %.5f (rel %.3g > %g)", tc.lamp, r.Line.WavelengthAirNM, r.VoigtFWHMNM, wv, d, tc.tolVoigt)
			}
			if dl := math.Abs(r.LorentzFWHMNM - synthL(c)); dl > 4*r.LorentzUncNM+1e-5 {
				t.Errorf("%s %.4f: Lorentzian off by %.2g nm = %.1fσ", tc.lamp, r.Line.WavelengthAirNM, dl, dl/r.LorentzUncNM)
			}
			if math.Abs(r.OffsetNM-tc.shift) > tc.tolShift {
				t.Errorf("%s %.4f: offset %.5f nm, want %.5f", tc.lamp, r.Line.WavelengthAirNM, r.OffsetNM, tc.shift)
			}
			if r.SNR < 0.8*tc.peak/tc.noise {
				t.Errorf("%s %.4f: SNR %.1f, expected about %.0f", tc.lamp, r.Line.WavelengthAirNM, r.SNR, tc.peak/tc.noise)
			}
			// The reported 1σ errors should be honest: the deviation
			// within 4σ (seeded, so this is deterministic).
			if dg := math.Abs(r.GaussFWHMNM - synthG(c)); dg > 4*r.GaussUncNM+1e-5 {
				t.Errorf("%s %.4f: Gaussian off by %.2g nm = %.1fσ", tc.lamp, r.Line.WavelengthAirNM, dg, dg/r.GaussUncNM)
			}
		}
		// Interpolation between calibration lines: the generating widths
		// are linear in λ, so At must reproduce them midway too (2 %).
		for i := 1; i < len(inst.Points); i++ {
			m := 0.5 * (inst.Points[i-1].WavelengthNM + inst.Points[i].WavelengthNM)
			g, l, ext := inst.At(m)
			if ext {
				t.Errorf("At(%g) extrapolated inside the range", m)
			}
			if relDiff(g, synthG(m+tc.shift)) > tc.tolWidth || relDiff(l, synthL(m+tc.shift)) > tc.tolWidth {
				t.Errorf("%s At(%.3f) = (%.5f, %.5f), want (%.5f, %.5f)", tc.lamp, m, g, l, synthG(m+tc.shift), synthL(m+tc.shift))
			}
		}
		if !strings.Contains(inst.Source, "FitInstrument") {
			t.Errorf("Source %q", inst.Source)
		}
	}
}

func TestFitInstrumentNoLineInRange(t *testing.T) {
	t.Parallel()
	lines := Lamps()["ne"] // 540–693 nm
	wl, y := synthLamp(400, 500, 0.01, nil, 0, 5, 0, 7)
	_, reps, err := FitInstrument("fhpl-blue", wl, y, lines, FitOptions{})
	if !errors.Is(err, ErrNoUsableLine) {
		t.Fatalf("error %v, want ErrNoUsableLine", err)
	}
	msg := err.Error()
	for _, want := range []string{"400.000–500.000 nm", "Ne I 540.0562", "Ne I 692.9467", "outside the spectrum range"} {
		if !strings.Contains(msg, want) {
			t.Errorf("error %q does not mention %q", msg, want)
		}
	}
	if len(reps) != len(lines) {
		t.Errorf("%d reports, want %d", len(reps), len(lines))
	}
	// Empty list.
	_, _, err = FitInstrument("fhpl-blue", wl, y, nil, FitOptions{})
	if !errors.Is(err, ErrNoUsableLine) || !strings.Contains(err.Error(), "empty line list") {
		t.Errorf("empty list: %v", err)
	}
}

// TestFitInstrumentRejections covers the reasons a line is not used.
func TestFitInstrumentRejections(t *testing.T) {
	t.Parallel()
	hg := Lamps()["hg"]
	// Only 546.075 nm is present and strong; 435.83 nm is absent (noise
	// only); a fake catalogue line 0.1 nm from 546.075 nm makes a blend.
	present := []LampLine{hg[3]}
	wl, y := synthLamp(420, 560, 0.005, present, 30000, 50, 0, 11)
	lines := []LampLine{hg[2], hg[3], {WavelengthAirNM: 546.175, Element: "X I", Source: "test"}, hg[5]}
	_, reps, err := FitInstrument("fhpl", wl, y, lines, FitOptions{})
	if !errors.Is(err, ErrNoUsableLine) {
		t.Fatalf("err = %v", err)
	}
	want := map[float64]string{
		435.8335: "not found",
		546.0750: "blended",
		546.175:  "blended",
		579.0670: "outside the spectrum range",
	}
	for _, r := range reps {
		if r.Accepted || !strings.Contains(r.Reason, want[r.Line.WavelengthAirNM]) {
			t.Errorf("%.4f: accepted=%v reason %q, want %q", r.Line.WavelengthAirNM, r.Accepted, r.Reason, want[r.Line.WavelengthAirNM])
		}
	}
	// Without the fake neighbour 546.075 nm is accepted, and a low MinSNR
	// threshold is what keeps it.
	inst, _, err := FitInstrument("fhpl", wl, y, hg, FitOptions{})
	if err != nil || len(inst.Points) != 1 || inst.Points[0].WavelengthNM != 546.0750 {
		t.Fatalf("single line: %v %+v", err, inst)
	}
	_, reps, err = FitInstrument("fhpl", wl, y, hg[3:4], FitOptions{MinSNR: 5000})
	if !errors.Is(err, ErrNoUsableLine) || !strings.Contains(reps[0].Reason, "below MinSNR") {
		t.Errorf("MinSNR: %v / %q", err, reps[0].Reason)
	}
}

func BenchmarkFitInstrument(b *testing.B) {
	lines := Lamps()["hg"]
	wl, y := synthLamp(395, 590, 0.005, lines, 40000, 100, 0, 1)
	b.ReportAllocs()
	for b.Loop() {
		if _, _, err := FitInstrument("bench", wl, y, lines, FitOptions{}); err != nil {
			b.Fatal(err)
		}
	}
}
