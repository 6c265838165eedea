package spectrum

import (
	"encoding/json"
	"math/rand/v2"
	"reflect"
	"testing"

	"glowlog/diag"
)

// TestDropSeries: DropSeries of AppendJSONSplit's JSON is AppendJSON's
// result with the non-empty plot series of the windows and of the whole
// fit left out (compared as parsed JSON), for real results of both
// routes; and the key forms around a placeholder (first, last, only,
// nested) give valid JSON.
func TestDropSeries(t *testing.T) {
	cases := map[string]string{
		`{"a":[null],"b":1}`:                          `{"b":1}`,
		`{"b":1,"a":[null]}`:                          `{"b":1}`,
		`{"a":[null]}`:                                `{}`,
		`{"w":{"a":[null],"b":[null]},"c":2}`:         `{"w":{},"c":2}`,
		`[{"x":"[","a":[null],"y":[1]},{"a":[null]}]`: `[{"x":"[","y":[1]},{}]`,
		`{"no":"series"}`:                             `{"no":"series"}`,
	}
	for in, want := range cases {
		if got := string(DropSeries([]byte("p"), in)); got != "p"+want {
			t.Errorf("DropSeries(%s) = %s, want %s", in, got[1:], want)
		}
	}

	p := NewPipeline(8192)
	grid := make([]float64, 2048)
	for i := range grid {
		grid[i] = 380 + 320*float64(i)/2047
	}
	y, _, err := SynthesizeStark(SynthConfig{WavelengthNM: grid, Uppers: []int{3, 4, 5, 6},
		ExcitationTemperatureK: 8000, ElectronDensityM3: 5e21, GasTemperatureK: 1000,
		InstrumentFWHMNM: 0.35, HalphaArea: 1})
	if err != nil {
		t.Fatal(err)
	}
	rng := rand.New(rand.NewPCG(3, 9))
	for i := range y {
		y[i] = y[i]*1e5 + 50 + 3*rng.NormFloat64()
	}
	sp := &Spectrum{Name: "stark.csv", WavelengthNM: grid, Counts: y}
	for _, model := range []string{ModelWhole, ModelLines} {
		res, err := p.Analyze(sp, Options{KeepWindows: true, Model: model,
			Conditions: diag.Measurement{InstrumentGaussFWHMNM: 0.35, GasTemperatureK: 1000}})
		if err != nil {
			t.Fatal(err)
		}
		full, err := AppendJSON(nil, &res)
		if err != nil {
			t.Fatal(err)
		}
		js, _, err := AppendJSONSplit(nil, nil, &res)
		if err != nil {
			t.Fatal(err)
		}
		brief := DropSeries(nil, string(js))
		if !json.Valid(brief) {
			t.Fatalf("%s: DropSeries gave invalid JSON: %.300s", model, brief)
		}
		var got, want map[string]any
		if err := json.Unmarshal(brief, &got); err != nil {
			t.Fatal(err)
		}
		if err := json.Unmarshal(full, &want); err != nil {
			t.Fatal(err)
		}
		dropped := 0
		drop := func(o map[string]any) {
			for _, k := range []string{"wavelength_nm", "data", "model", "residual"} {
				if a, ok := o[k].([]any); ok && len(a) > 0 {
					delete(o, k)
					dropped++
				}
			}
		}
		ws, _ := want["windows"].([]any)
		for _, w := range ws {
			drop(w.(map[string]any))
		}
		if w, ok := want["whole_fit"].(map[string]any); ok {
			drop(w)
		}
		if dropped < 4 || (model == ModelWhole && want["whole_fit"] == nil) {
			t.Fatalf("%s: only %d series in the result", model, dropped)
		}
		if !reflect.DeepEqual(got, want) {
			t.Errorf("%s: DropSeries differs from the result without its series", model)
		}
		if len(brief) >= len(full) || (model == ModelWhole && len(brief)*3 > len(full)) {
			t.Errorf("%s: %d bytes without series, %d with", model, len(brief), len(full))
		}
		t.Logf("%s: %d bytes → %d without plot series (%d series)", model, len(full), len(brief), dropped)
	}
}
