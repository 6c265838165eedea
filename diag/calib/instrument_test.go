package calib

import (
	"bytes"
	"errors"
	"math"
	"strings"
	"testing"
)

func testInstrument() *Instrument {
	return &Instrument{
		Name:   "fhpl-spectrometer-2400-slit20",
		Source: "test (invented values)",
		Points: []InstrumentPoint{
			{WavelengthNM: 435.8335, GaussFWHMNM: 0.040, GaussUncNM: 0.001, LorentzFWHMNM: 0.010, LorentzUncNM: 0.001, Element: "Hg I"},
			{WavelengthNM: 546.0750, GaussFWHMNM: 0.050, GaussUncNM: 0.001, LorentzFWHMNM: 0.020, LorentzUncNM: 0.001, Element: "Hg I"},
			{WavelengthNM: 640.2248, GaussFWHMNM: 0.045, GaussUncNM: 0.001, LorentzFWHMNM: 0.020, LorentzUncNM: 0.001, Element: "Ne I"},
		},
	}
}

func TestInstrumentAt(t *testing.T) {
	t.Parallel()
	in := testInstrument()
	mid := 0.5 * (435.8335 + 546.0750)
	for _, tc := range []struct {
		l      float64
		g, lor float64 // analytic: linear interpolation / end values
		ext    bool
	}{
		{435.8335, 0.040, 0.010, false},
		{mid, 0.045, 0.015, false},
		{546.0750, 0.050, 0.020, false},
		{593.1499, 0.0475, 0.020, false}, // midway 546.075–640.2248
		{400, 0.040, 0.010, true},
		{700, 0.045, 0.020, true},
	} {
		g, l, ext := in.At(tc.l)
		if math.Abs(g-tc.g) > 1e-9 || math.Abs(l-tc.lor) > 1e-9 || ext != tc.ext {
			t.Errorf("At(%g) = (%g, %g, %v), want (%g, %g, %v)", tc.l, g, l, ext, tc.g, tc.lor, tc.ext)
		}
	}
	one := &Instrument{Name: "one", Points: in.Points[1:2]}
	if _, _, ext := one.At(546.075); ext {
		t.Error("single point: extrapolated at the point itself")
	}
	if g, _, ext := one.At(600); !ext || g != 0.050 {
		t.Error("single point: not constant/extrapolated elsewhere")
	}
}

func TestInstrumentValidate(t *testing.T) {
	t.Parallel()
	if err := testInstrument().Validate(); err != nil {
		t.Fatal(err)
	}
	for name, mod := range map[string]func(*Instrument){
		"no name":      func(in *Instrument) { in.Name = "" },
		"no points":    func(in *Instrument) { in.Points = nil },
		"unsorted":     func(in *Instrument) { in.Points[1].WavelengthNM = 700 },
		"negative G":   func(in *Instrument) { in.Points[0].GaussFWHMNM = -0.01 },
		"NaN L":        func(in *Instrument) { in.Points[2].LorentzFWHMNM = math.NaN() },
		"both zero":    func(in *Instrument) { in.Points[0].GaussFWHMNM, in.Points[0].LorentzFWHMNM = 0, 0 },
		"negative unc": func(in *Instrument) { in.Points[0].LorentzUncNM = -1 },
		"zero λ":       func(in *Instrument) { in.Points[0].WavelengthNM = 0 },
	} {
		in := testInstrument()
		mod(in)
		if err := in.Validate(); !errors.Is(err, ErrInvalidInstrument) {
			t.Errorf("%s: Validate = %v", name, err)
		}
	}
}

func TestInstrumentJSONRoundTrip(t *testing.T) {
	t.Parallel()
	in := testInstrument()
	var buf bytes.Buffer
	if err := in.WriteJSON(&buf); err != nil {
		t.Fatal(err)
	}
	for _, key := range []string{`"name"`, `"points"`, `"wavelength_nm"`, `"gauss_fwhm_nm"`, `"lorentz_unc_nm"`, `"element"`} {
		if !strings.Contains(buf.String(), key) {
			t.Errorf("JSON lacks %s:\n%s", key, buf.String())
		}
	}
	out, err := ReadInstrument(&buf)
	if err != nil {
		t.Fatal(err)
	}
	if out.Name != in.Name || out.Source != in.Source || len(out.Points) != len(in.Points) {
		t.Fatalf("round trip: %+v", out)
	}
	for i := range in.Points {
		if out.Points[i] != in.Points[i] {
			t.Errorf("point %d: %+v, want %+v", i, out.Points[i], in.Points[i])
		}
	}
	if _, err := ReadInstrument(strings.NewReader(`{"name":"x","points":[{"wavelength_nm":500,"gauss_fwhm_nm":0.1}],"colour":1}`)); err == nil {
		t.Error("unknown field accepted")
	}
	if _, err := ReadInstrument(strings.NewReader(`{"name":"x","points":[]}`)); !errors.Is(err, ErrInvalidInstrument) {
		t.Errorf("empty points: %v", err)
	}
}
