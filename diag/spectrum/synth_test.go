package spectrum

import (
	"math"
	"math/rand/v2"
	"testing"

	"glowlog/diag"
)

// TestSynthesizeAreaAndRoundTrip checks that the generator keeps each
// line's area (sum of counts over a wide grid) and that the pipeline
// recovers T_exc and n_e from a low-noise synthetic spectrum.
func TestSynthesizeAreaAndRoundTrip(t *testing.T) {
	cfg := SynthConfig{WavelengthNM: linspace(380, 700, 2048), Uppers: []int{3, 4, 5, 6},
		ExcitationTemperatureK: 7000, ElectronDensityM3: 1e22, GasTemperatureK: 1200, InstrumentFWHMNM: 0.2,
		HalphaArea: 1e5, BaselinePerNM: 20, NoisePerNM: 2, Rand: rand.New(rand.NewPCG(1, 2))}
	y, lines, err := Synthesize(cfg)
	if err != nil {
		t.Fatal(err)
	}
	if len(y) != 2048 || len(lines) != 4 {
		t.Fatalf("got %d pixels, %d lines", len(y), len(lines))
	}
	// Area of Hα alone, noise- and baseline-free, on a fine grid: the
	// Lorentz wings beyond ±30 nm hold about 2γ/(π·30) of the area.
	one := cfg
	one.Uppers, one.BaselinePerNM, one.NoisePerNM, one.Rand = []int{3}, 0, 0, nil
	one.WavelengthNM = linspace(626.28-30, 626.28+60, 20000)
	yy, ll, err := Synthesize(one)
	if err != nil {
		t.Fatal(err)
	}
	var sum float64
	for _, v := range yy {
		sum += v
	}
	tail := 2 * ll[0].LorentzFWHMNM / (math.Pi * 30)
	if rel := math.Abs(sum/ll[0].Area - 1); rel > tail+1e-3 {
		t.Errorf("Hα area kept to %.2g, want ≤ %.2g", rel, tail+1e-3)
	}
	res, err := NewPipeline(4096).Analyze(&Spectrum{Name: "synth", WavelengthNM: cfg.WavelengthNM, Counts: y},
		Options{LineShape: LineShapeVoigt, Conditions: diag.Measurement{InstrumentGaussFWHMNM: 0.2, GasTemperatureK: 1200}})
	if err != nil {
		t.Fatal(err)
	}
	if res.ElectronDensityM3 == nil || math.Abs(*res.ElectronDensityM3/1e22-1) > 0.05 {
		t.Errorf("n_e = %v, want 1e22 ± 5 %%", res.ElectronDensityM3)
	}
	if res.ExcitationTemperatureK == nil || math.Abs(*res.ExcitationTemperatureK/7000-1) > 0.05 {
		t.Errorf("T_exc = %v, want 7000 K ± 5 %%", res.ExcitationTemperatureK)
	}
}

func TestSynthesizeRejects(t *testing.T) {
	if _, _, err := Synthesize(SynthConfig{WavelengthNM: []float64{1}}); err == nil {
		t.Error("one pixel accepted")
	}
	if _, _, err := Synthesize(SynthConfig{WavelengthNM: []float64{2, 1}, ExcitationTemperatureK: 1, HalphaArea: 1, GasTemperatureK: 300}); err == nil {
		t.Error("descending grid accepted")
	}
	if _, err := SynthLines(SynthConfig{Uppers: []int{3}, HalphaArea: 1, GasTemperatureK: 300}); err == nil {
		t.Error("T_exc = 0 accepted")
	}
}
