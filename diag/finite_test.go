package diag

import (
	"errors"
	"math"
	"strings"
	"testing"
)

// TestCheckFinite: the final net finds a NaN or ±Inf anywhere encoding/json
// would look (nested structs, pointers, slices, maps, embedded fields) and
// names its JSON path; nil pointers (null) and json.Marshalers are fine.
func TestCheckFinite(t *testing.T) {
	type inner struct {
		V float64 `json:"v"`
	}
	type outer struct {
		A  *float64         `json:"a"`
		L  []inner          `json:"list"`
		M  map[int]float64  `json:"m"`
		P  *ProfileFit      `json:"profile"`
		H  float64          `json:"-"`
		h  float64          // unexported: not written
		MM map[string]inner `json:"mm"`
	}
	ok := outer{L: []inner{{1}, {2}}, M: map[int]float64{3: 1}, H: math.NaN(), h: math.Inf(1)}
	if err := CheckFinite(ok); err != nil {
		t.Errorf("finite value: %v", err)
	}
	bad := ok
	bad.L = []inner{{1}, {math.Inf(-1)}}
	var ne *NumericError
	if err := CheckFinite(bad); !errors.As(err, &ne) || ne.Field != "list[1].v" || !math.IsInf(ne.Value, -1) {
		t.Errorf("got %v, want list[1].v", err)
	}
	bad = ok
	bad.M = map[int]float64{4: math.NaN()}
	if err := CheckFinite(&bad); !errors.As(err, &ne) || ne.Field != "m[4]" {
		t.Errorf("got %v, want m[4]", err)
	}
	bad = ok
	bad.P = &ProfileFit{PeakSNR: math.Inf(1)}
	if err := CheckFinite(bad); !errors.As(err, &ne) || ne.Field != "profile.peak_snr" {
		t.Errorf("got %v, want profile.peak_snr", err)
	}
	// An embedded *ProfileFit in a line result is written inline.
	lr := LineResult{ProfileFit: &ProfileFit{FWHANM: math.NaN()}}
	if err := CheckFinite(Result{Lines: []LineResult{lr}}); !errors.As(err, &ne) || ne.Field != "lines[0].fwha_nm" {
		t.Errorf("got %v, want lines[0].fwha_nm", err)
	}
}

// TestLogPosSubnormal: the Boltzmann ordinate's logarithm is right for
// subnormal intensities (math.Log on amd64 is not).
func TestLogPosSubnormal(t *testing.T) {
	for _, x := range []float64{5e-324, 1.284274482554e-312, 1e-310, 0x1p-1022, 1, 1.7e308} {
		// ln x = ln(x·2¹⁰⁰⁰) − 1000 ln 2, with x·2¹⁰⁰⁰ normal (exact scaling).
		want := math.Log(math.Ldexp(x, 1000)) - 1000*math.Ln2
		if x > 1 {
			want = math.Log(x)
		}
		if got := logPos(x); math.Abs(got-want) > 1e-12*math.Abs(want) {
			t.Errorf("logPos(%v) = %v, want %v", x, got, want)
		}
	}
}

// TestBoltzmannExtremes: extreme but valid inputs give finite fits or
// typed errors, never NaN.
func TestBoltzmannExtremes(t *testing.T) {
	pt := func(n int, i, u float64) BoltzmannPoint {
		tr, _ := Balmer(n, Hydrogen)
		return BoltzmannPoint{Upper: n, EnergyEV: tr.UpperEnergyEV, G: float64(tr.GUpper), A: tr.EinsteinA,
			WavelengthNM: tr.WavelengthVacNM, Intensity: i, IntensityUnc: u}
	}
	for _, unit := range []IntensityUnit{PhotonUnits, EnergyUnits} {
		r, err := FitBoltzmann([]BoltzmannPoint{pt(3, 1.7e308, 1e307), pt(4, 5e-324, 1e-324), pt(5, 1e-200, 1e-201)}, BoltzmannOptions{Unit: unit})
		if err != nil {
			t.Fatal(err)
		}
		if err := CheckFinite(r); err != nil {
			t.Errorf("%v: %v", unit, err)
		}
	}
	// σ_I/I = 1e-160: a typed error naming line, field and value.
	_, err := FitBoltzmann([]BoltzmannPoint{pt(3, 1, 1e-160), pt(4, 0.2, 0.01)}, BoltzmannOptions{})
	var ne *NumericError
	if !errors.As(err, &ne) || ne.Upper != 3 || ne.Field != "intensity_unc" || ne.Value != 1e-160 {
		t.Fatalf("got %v", err)
	}
	// σ_I/I = 1e13: a unit mistake.
	_, err = FitBoltzmann([]BoltzmannPoint{pt(3, 1, 0.1), pt(4, 1e-300, 1e-287)}, BoltzmannOptions{})
	if !errors.As(err, &ne) || ne.Upper != 4 || !strings.Contains(ne.Msg, "same unit") {
		t.Fatalf("got %v", err)
	}
}

// TestAnalyzeTinyWidths: widths near the smallest float64 with ordinary
// uncertainties neither panic (the numerical derivative once stepped below
// zero) nor return NaN; the unbounded density uncertainty is an error on
// the line.
func TestAnalyzeTinyWidths(t *testing.T) {
	m := Measurement{Unit: PhotonUnits, ResponseCorrected: true, Lines: []MeasuredLine{
		{Upper: 3, Intensity: 1, FWHMNM: 3e-303, FWHMUncNM: 1e-20},
		{Upper: 4, Intensity: 0.2, LorentzFWHMNM: 0.2, LorentzFWHMUncNM: 1.7e308},
	}}
	_, err := Analyze(m)
	var le *LineError
	var ne *NumericError
	if !errors.As(err, &le) || !errors.As(err, &ne) || le.Index != 1 || ne.Field != "lorentz_fwhm_unc_nm" || ne.Value != 1.7e308 ||
		!strings.Contains(err.Error(), "lines[1] (n=4): lorentz_fwhm_unc_nm = 1.7e+308") {
		t.Fatalf("got %v, want a NumericError on lines[1]", err)
	}
	m.Lines[1].LorentzFWHMUncNM = 0.01
	if r, err := Analyze(m); err != nil || CheckFinite(r) != nil {
		t.Fatalf("3e-303 nm with a 1σ of 1e-20 nm: %v", err)
	}
	m.GasTemperatureK, m.PressurePa, m.Perturber = 5e-324, 1e5, "Ar"
	m.Lines[0].FWHMUncNM, m.Lines[1].LorentzFWHMUncNM = 0, 0
	if _, err := Analyze(m); !errors.As(err, &ne) || ne.Field != "gas_temperature_K" {
		t.Fatalf("gas temperature 5e-324 K: got %v", err)
	}
}

// TestBoltzmannFlatSlope: a slope so close to zero that T_exc or its σ
// would be infinite (here −1e-153 eV⁻¹ from synthetic points 1e153 eV
// apart) gives no temperature and a flag, not +Inf.
func TestBoltzmannFlatSlope(t *testing.T) {
	pts := []BoltzmannPoint{
		{Upper: 3, EnergyEV: 0, G: 1, A: 1, Intensity: 1, IntensityUnc: 1},
		{Upper: 4, EnergyEV: 1e153, G: 1, A: 1, Intensity: math.Exp(-1), IntensityUnc: math.Exp(-1)},
	}
	r, err := FitBoltzmann(pts, BoltzmannOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if r.Defined || r.TemperatureK != 0 || !(r.Slope < 0) || CheckFinite(r) != nil {
		t.Errorf("slope %v: defined %v, T %v", r.Slope, r.Defined, r.TemperatureK)
	}
	found := false
	for _, f := range r.Flags {
		found = found || f.Code == FlagSlopeFlat
	}
	if !found {
		t.Errorf("flags %v lack %s", r.Flags, FlagSlopeFlat)
	}
}
