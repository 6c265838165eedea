package spectrum

import (
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"strconv"
	"testing"

	"glowlog/diag"
	"glowlog/diag/mset"
	"glowlog/diag/specfile"
)

// fuzzSpectrumText is a small synthetic Hβ spectrum (96 pixels, seeded
// noise) as a two-column text file, with every count multiplied by scale.
func fuzzSpectrumText(tb testing.TB, scale float64) []byte {
	tb.Helper()
	x := make([]float64, 96)
	for i := range x {
		x[i] = 484.6 + 0.05*float64(i)
	}
	y, _, err := Synthesize(SynthConfig{WavelengthNM: x, Uppers: []int{4}, ExcitationTemperatureK: 8000,
		ElectronDensityM3: 1e21, GasTemperatureK: 1000, InstrumentFWHMNM: 0.1, HalphaArea: 1e5,
		BaselinePerNM: 20, NoisePerNM: 5, Rand: rand.New(rand.NewPCG(7, 7))})
	if err != nil {
		tb.Fatal(err)
	}
	var b bytes.Buffer
	b.WriteString("wavelength_nm,counts\n")
	for i := range x {
		b.WriteString(strconv.FormatFloat(x[i], 'f', 3, 64) + "," + strconv.FormatFloat(y[i]*scale, 'g', -1, 64) + "\n")
	}
	return b.Bytes()
}

// fuzzAnalyzeOne runs what "glowlog analyze" runs on one file — a
// measurement set (decode, diag.Analyze) or a small text spectrum (read,
// pipeline) — and writes the result as JSON. It fails the test on a
// panic (by not recovering), on a result with a NaN or ±Inf, on a JSON
// encoding error, and on an error without a message.
func fuzzAnalyzeOne(t *testing.T, p *Pipeline, data []byte) {
	tt := t
	var v any
	var err error
	if t := bytes.TrimLeft(data, " \t\r\n"); len(t) > 0 && t[0] == '{' {
		var m diag.Measurement
		m, err = mset.Decode("fuzz.json", data)
		if err == nil {
			var r diag.Result
			r, err = diag.Analyze(m)
			v = r
		}
	} else {
		var sp *specfile.Spectrum
		sp, err = specfile.Read("fuzz.csv", bytes.NewReader(data), specfile.Options{Format: specfile.FormatText,
			Text: specfile.TextOptions{XUnit: specfile.NM}, Limits: specfile.Limits{MaxBytes: 64 << 10, MaxPoints: 512, MinPoints: MinPixels}})
		if err == nil {
			var wl, y []float64
			wl, y, err = sp.WavelengthNM()
			if err == nil {
				var r Result
				opt := Options{Conditions: diag.Measurement{InstrumentGaussFWHMNM: 0.1, GasTemperatureK: 1000, PressurePa: 1e3, Perturber: "Ar"},
					KeepWindows: true, MaxUpper: 6}
				r, err = p.Analyze(&Spectrum{Name: "fuzz.csv", WavelengthNM: wl, Counts: y}, opt)
				v = r
				if err == nil {
					// The whole-spectrum route on the same spectrum: the same
					// promises (it falls back to the lines result with a
					// flag when it cannot fit).
					opt.Model = ModelWhole
					var rw Result
					rw, err = p.Analyze(&Spectrum{Name: "fuzz.csv", WavelengthNM: wl, Counts: y}, opt)
					if err == nil {
						if err := diag.CheckFinite(rw); err != nil {
							tt.Fatalf("whole route: result accepted with a non-finite number: %v", err)
						}
						if _, err := json.Marshal(rw); err != nil {
							tt.Fatalf("whole route: JSON encoding failed: %v", err)
						}
					}
				}
			}
		}
	}
	if err != nil {
		if err.Error() == "" {
			t.Fatalf("error %T without a message", err)
		}
		return
	}
	if err := diag.CheckFinite(v); err != nil {
		t.Fatalf("result accepted with a non-finite number: %v", err)
	}
	out, err := json.Marshal(v)
	if err != nil {
		t.Fatalf("JSON encoding failed: %v", err)
	}
	// encoding/json refuses NaN and ±Inf, so a successful encoding holds
	// none (messages may still say "Inf" in words); check it decodes back.
	var back map[string]any
	if err := json.Unmarshal(out, &back); err != nil {
		t.Fatalf("encoded result does not decode: %v", err)
	}
}

// FuzzAnalyze: the whole analysis of a measurement set or a small text
// spectrum never panics, never yields NaN or ±Inf, and always encodes as
// JSON; what cannot be analysed is an error with a message.
func FuzzAnalyze(f *testing.F) {
	ms := func(lines string) []byte {
		return []byte(`{"intensity_unit":"photon","instrument_fwhm_nm":0.05,"gas_temperature_K":1000,"pressure_Pa":1e4,"perturber":"Ar","lines":[` + lines + `]}`)
	}
	// The extreme but valid values of issue 7 item 5.
	f.Add(ms(`{"upper_level":3,"intensity":1.7e308,"fwhm_nm":0.2},{"upper_level":4,"intensity":1e307,"fwhm_nm":0.3},{"upper_level":5,"intensity":1e306}`))
	f.Add(ms(`{"upper_level":3,"intensity":5e-324},{"upper_level":4,"intensity":1e-320},{"upper_level":5,"intensity":1e-322}`))
	f.Add(ms(`{"upper_level":3,"intensity":1,"intensity_unc":1e-160},{"upper_level":4,"intensity":0.2,"intensity_unc":0.01}`))
	f.Add([]byte(`{"intensity_unit":"energy","lines":[{"upper_level":3,"intensity":1.7e308,"intensity_unc":1e307},{"upper_level":4,"intensity":5e-324}]}`))
	f.Add(ms(`{"upper_level":3,"fwhm_nm":5e-324,"fwhm_unc_nm":1},{"upper_level":4,"lorentz_fwhm_nm":1e-300,"lorentz_fwhm_unc_nm":0.01}`))
	f.Add([]byte(`{"intensity_unit":"photon","solve_gas_temperature":true,"perturber":"He","pressure_Pa":1e5,"lines":[{"upper_level":3,"lorentz_fwhm_nm":0.08},{"upper_level":4,"lorentz_fwhm_nm":0.2}]}`))
	f.Add(fuzzSpectrumText(f, 1))
	f.Add(fuzzSpectrumText(f, 1e300))
	f.Add(fuzzSpectrumText(f, 1e-320))
	f.Add([]byte("wavelength_nm,counts\n" + fuzzRamp(16, "1.7e308")))
	p := NewPipeline(1024)
	f.Fuzz(func(t *testing.T, data []byte) {
		fuzzAnalyzeOne(t, p, data)
	})
}

func fuzzRamp(n int, v string) string {
	var b bytes.Buffer
	for i := range n {
		fmt.Fprintf(&b, "%.2f,%s\n", 485.5+0.05*float64(i), v)
	}
	return b.String()
}

// TestExtremeValuesAnalysed: intensities of 1.7e308 and 5e-324 are
// analysed (finite Boltzmann fit and JSON), and an intensity σ of 1e-160
// is an error naming the line, the field and the value — never NaN.
func TestExtremeValuesAnalysed(t *testing.T) {
	for _, tc := range []struct {
		lines string
		unit  string
	}{
		{`{"upper_level":3,"intensity":1.7e308},{"upper_level":4,"intensity":1e307},{"upper_level":5,"intensity":2e306}`, "photon"},
		{`{"upper_level":3,"intensity":1.7e308},{"upper_level":4,"intensity":1e307},{"upper_level":5,"intensity":2e306}`, "energy"},
		{`{"upper_level":3,"intensity":1e-300},{"upper_level":4,"intensity":1e-301},{"upper_level":5,"intensity":5e-324}`, "photon"},
	} {
		m, err := mset.Decode("x.json", []byte(`{"intensity_unit":"`+tc.unit+`","lines":[`+tc.lines+`]}`))
		if err != nil {
			t.Fatal(err)
		}
		r, err := diag.Analyze(m)
		if err != nil {
			t.Fatalf("%s: %v", tc.lines, err)
		}
		if r.Boltzmann.N != 3 || math.IsNaN(r.Boltzmann.Slope) || math.IsInf(r.Boltzmann.Intercept, 0) {
			t.Errorf("%s: fit %+v", tc.lines, r.Boltzmann)
		}
		if _, err := json.Marshal(r); err != nil {
			t.Errorf("%s: %v", tc.lines, err)
		}
	}
	// The ordinate is ln(I/(gA)) however it is computed: 1.7e308 and the
	// subnormal 1.7e308·2⁻²⁰⁶⁰ differ by 2060·ln 2 in y (up to the 28 bits
	// the subnormal keeps), and a common scale leaves T_exc unchanged.
	big, _ := diag.Analyze(mustDecode(t, `{"upper_level":3,"intensity":1.7e308},{"upper_level":4,"intensity":2e307}`))
	small, _ := diag.Analyze(mustDecode(t, `{"upper_level":3,"intensity":`+strconv.FormatFloat(math.Ldexp(1.7e308, -2060), 'g', -1, 64)+
		`},{"upper_level":4,"intensity":`+strconv.FormatFloat(math.Ldexp(2e307, -2060), 'g', -1, 64)+`}`))
	if d := big.Boltzmann.Points[0].Y - small.Boltzmann.Points[0].Y; math.Abs(d-2060*math.Ln2) > 1e-6 {
		t.Errorf("ordinate difference %v, want 2060·ln 2 = %v", d, 2060*math.Ln2)
	}
	if big.ExcitationTemperatureK == nil || small.ExcitationTemperatureK == nil ||
		math.Abs(*big.ExcitationTemperatureK / *small.ExcitationTemperatureK - 1) > 1e-6 {
		t.Errorf("T_exc %v vs %v: a common scale factor must not change it", big.ExcitationTemperatureK, small.ExcitationTemperatureK)
	}

	_, err := diag.Analyze(mustDecode(t, `{"upper_level":3,"intensity":1,"intensity_unc":1e-160},{"upper_level":4,"intensity":0.2,"intensity_unc":0.01},{"upper_level":5,"intensity":0.05,"intensity_unc":0.01}`))
	var ne *diag.NumericError
	var le *diag.LineError
	if !errors.As(err, &ne) || !errors.As(err, &le) || le.Index != 0 || ne.Upper != 3 || ne.Field != "intensity_unc" || ne.Value != 1e-160 {
		t.Fatalf("σ = 1e-160: got %v, want a NumericError on lines[0] intensity_unc", err)
	}
	if msg := err.Error(); !bytes.Contains([]byte(msg), []byte("lines[0]")) || !bytes.Contains([]byte(msg), []byte("1e-160")) {
		t.Errorf("message %q does not name the line and the value", msg)
	}
}

func mustDecode(t *testing.T, lines string) diag.Measurement {
	t.Helper()
	m, err := mset.Decode("x.json", []byte(`{"intensity_unit":"photon","lines":[`+lines+`]}`))
	if err != nil {
		t.Fatal(err)
	}
	return m
}

// TestPipelineScaleInvariant: the counts' scale is arbitrary (calibrated
// spectra come in W or photons per second), so a spectrum scaled by
// 1e-300 or 1e300 gives the same density and intensities scaled alike.
// Before the fit worked in normalised units, both failed ("fit-failed").
func TestPipelineScaleInvariant(t *testing.T) {
	x := make([]float64, 96)
	for i := range x {
		x[i] = 484.6 + 0.05*float64(i)
	}
	y, _, err := Synthesize(SynthConfig{WavelengthNM: x, Uppers: []int{4}, ExcitationTemperatureK: 8000,
		ElectronDensityM3: 1e21, GasTemperatureK: 1000, InstrumentFWHMNM: 0.1, HalphaArea: 1e5,
		BaselinePerNM: 20, NoisePerNM: 5, Rand: rand.New(rand.NewPCG(7, 7))})
	if err != nil {
		t.Fatal(err)
	}
	opt := Options{Conditions: diag.Measurement{InstrumentGaussFWHMNM: 0.1, GasTemperatureK: 1000}, KeepWindows: true}
	p := NewPipeline(1024)
	run := func(scale float64) Result {
		ys := make([]float64, len(y))
		for i := range y {
			ys[i] = y[i] * scale
		}
		r, err := p.Analyze(&Spectrum{Name: "s.csv", WavelengthNM: x, Counts: ys}, opt)
		if err != nil {
			t.Fatalf("scale %g: %v", scale, err)
		}
		if err := diag.CheckFinite(r); err != nil {
			t.Fatalf("scale %g: %v", scale, err)
		}
		return r
	}
	ref := run(1)
	for _, scale := range []float64{1e-300, 1e-200, 1e200, 1e300} {
		r := run(scale)
		if r.ElectronDensityM3 == nil || math.Abs(*r.ElectronDensityM3 / *ref.ElectronDensityM3 - 1) > 1e-9 {
			t.Errorf("scale %g: n_e %v, unscaled %v", scale, r.ElectronDensityM3, *ref.ElectronDensityM3)
		}
		if got, want := *r.Lines[0].Intensity/scale, *ref.Lines[0].Intensity; math.Abs(got/want-1) > 1e-9 {
			t.Errorf("scale %g: intensity/scale %v, unscaled %v", scale, got, want)
		}
		if got, want := r.Windows[0].Model[10]/scale, ref.Windows[0].Model[10]; math.Abs(got/want-1) > 1e-9 {
			t.Errorf("scale %g: window model/scale %v, unscaled %v", scale, got, want)
		}
	}
}
