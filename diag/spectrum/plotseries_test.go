package spectrum

import (
	"bytes"
	"fmt"
	"math"
	"math/rand/v2"
	"reflect"
	"slices"
	"strings"
	"testing"

	"glowlog/diag"
)

// checkSplit: AppendJSONSplit's placeholder JSON and series expand to
// AppendJSON's bytes exactly, or the split is refused (ErrSeriesSplit)
// only when the result's own text holds the placeholder. It returns the
// sizes (placeholder JSON, series form, AppendJSON).
func checkSplit(t *testing.T, r *Result, what string) (int, int, int) {
	t.Helper()
	want, werr := AppendJSON(nil, r)
	js, series, err := AppendJSONSplit([]byte("prefix"), nil, r)
	if err == ErrSeriesSplit {
		if !bytes.Contains(want, seriesPlaceholder) {
			t.Fatalf("%s: split refused without a placeholder in the text", what)
		}
		if _, _, full, err := AppendJSONSplitFull(nil, nil, []byte("f"), r); err != ErrSeriesSplit || string(full) != "f" {
			t.Fatalf("%s: AppendJSONSplitFull: %v, full %q", what, err, full)
		}
		return 0, 0, 0
	}
	if (err == nil) != (werr == nil) {
		t.Fatalf("%s: AppendJSONSplit error %v, AppendJSON %v", what, err, werr)
	}
	if err != nil {
		return 0, 0, 0
	}
	if !bytes.HasPrefix(js, []byte("prefix")) {
		t.Fatalf("%s: AppendJSONSplit did not append", what)
	}
	js = js[len("prefix"):]
	got, err := ExpandSeries([]byte("x"), string(js), series)
	if err != nil {
		t.Fatalf("%s: ExpandSeries: %v", what, err)
	}
	if got[0] != 'x' {
		t.Fatalf("%s: ExpandSeries did not append", what)
	}
	got = got[1:]
	if !bytes.Equal(got, want) {
		i := 0
		for i < len(got) && i < len(want) && got[i] == want[i] {
			i++
		}
		t.Fatalf("%s: expanded JSON differs from AppendJSON at byte %d:\n got …%s\nwant …%s", what, i,
			got[max(0, i-80):min(len(got), i+80)], want[max(0, i-80):min(len(want), i+80)])
	}
	// The same in one pass with the whole JSON beside.
	js2, series2, full, err := AppendJSONSplitFull([]byte("p"), []byte("s"), []byte("f"), r)
	if err != nil || string(js2[1:]) != string(js) || string(series2[1:]) != string(series) || string(full[1:]) != string(want) ||
		js2[0] != 'p' || series2[0] != 's' || full[0] != 'f' {
		t.Fatalf("%s: AppendJSONSplitFull differs from AppendJSONSplit and AppendJSON (%v)", what, err)
	}
	// The input is left alone.
	again, _ := AppendJSON(nil, r)
	if !bytes.Equal(again, want) {
		t.Fatalf("%s: AppendJSONSplit changed its input", what)
	}
	return len(js), len(series), len(want)
}

// TestAppendJSONSplitRoundTrip: the placeholder JSON and the series form
// give back AppendJSON's bytes for real results of both routes (with
// window data and the whole fit's series: every spectrum in
// testdata/spectra, Stark-shaped spectra from SynthesizeStark), for 3000
// results filled at random, and for series of awkward values (zeros, −0,
// NaN, ±Inf, ties of the eighth digit, extreme magnitudes, sign and
// decade changes). The series form of a real whole-route result is less
// than half the size of the text it replaces.
func TestAppendJSONSplitRoundTrip(t *testing.T) {
	p := NewPipeline(8192)
	n, wholes := 0, 0
	for _, name := range []string{"bench_2048", "wide_snr1000", "wide_snr100", "wide_snr20",
		"hbeta_window_snr1000", "hbeta_window_snr100", "halpha_window_snr100"} {
		sp, tr := loadScipy(t, name)
		for _, keep := range []bool{false, true} {
			for _, shape := range []string{LineShapeStark, LineShapeVoigt} {
				opt := Options{LineShape: shape, KeepWindows: keep,
					Conditions: diag.Measurement{InstrumentGaussFWHMNM: tr.Inst, GasTemperatureK: tr.Tg}}
				res, err := p.Analyze(sp, opt)
				if err != nil {
					continue
				}
				checkSplit(t, &res, name)
				n++
			}
		}
	}
	grid := make([]float64, 2048)
	for i := range grid {
		grid[i] = 380 + 320*float64(i)/2047
	}
	for k := range 3 {
		y, _, err := SynthesizeStark(SynthConfig{WavelengthNM: grid, Uppers: []int{3, 4, 5, 6, 7},
			ExcitationTemperatureK: 7000, ElectronDensityM3: 3e21 * float64(k+1), GasTemperatureK: 1000,
			InstrumentFWHMNM: 0.35, HalphaArea: 1})
		if err != nil {
			t.Fatal(err)
		}
		rng := rand.New(rand.NewPCG(uint64(k), 7))
		for i := range y {
			y[i] = y[i]*1e5 + 50 + 3*rng.NormFloat64()
		}
		res, err := p.Analyze(&Spectrum{Name: "stark.csv", WavelengthNM: grid, Counts: y},
			Options{KeepWindows: true, Conditions: diag.Measurement{InstrumentGaussFWHMNM: 0.35, GasTemperatureK: 1000}})
		if err != nil {
			t.Fatal(err)
		}
		if res.Whole == nil || len(res.Whole.Data) == 0 {
			t.Fatalf("stark %d: no whole fit series", k)
		}
		js, series, full := checkSplit(t, &res, fmt.Sprintf("stark %d", k))
		text := full - js
		if series*2 > text {
			t.Errorf("stark %d: series form %d bytes for %d bytes of text", k, series, text)
		}
		t.Logf("stark %d: JSON %d bytes → %d + series %d", k, full, js, series)
		wholes++
		n++
	}
	if n < 8 || wholes < 3 {
		t.Fatalf("only %d real results compared", n)
	}
	r := rand.New(rand.NewPCG(5, 24334))
	for i := range 3000 {
		var res Result
		fillRandom(r, reflect.ValueOf(&res).Elem(), 0)
		checkSplit(t, &res, fmt.Sprintf("random result %d", i))
	}
	awkward := PlotFloats{0, math.Copysign(0, -1), math.NaN(), math.Inf(1), math.Inf(-1), 1, -1, 1.5, 0.1, 0.09, 10, 9.99999995,
		12345678.5, 1.23456785, -1.23456785e-3, 1e-15, 9e-16, 5e-324, 1e22, 1e21, math.MaxFloat64, -math.MaxFloat64, 123.456, 0.5}
	for range 2000 {
		awkward = append(awkward, (r.Float64()-0.5)*math.Pow(10, float64(r.IntN(40)-20)))
	}
	res := Result{Model: ModelWhole, Whole: &WholeFit{WavelengthNM: awkward, Data: awkward[:3], Residual: PlotFloats{}},
		Windows: []Window{{WavelengthNM: PlotFloats{}, Data: awkward}, {Model: PlotFloats{math.NaN()}}}}
	checkSplit(t, &res, "awkward")
}

// TestExpandSeriesCorrupt: a series form that does not fit its JSON is an
// error, never a wrong expansion; an empty one leaves the JSON (a result
// stored whole, as before the series were split off) unchanged.
func TestExpandSeriesCorrupt(t *testing.T) {
	res := Result{Model: ModelWhole, Whole: &WholeFit{WavelengthNM: PlotFloats{486.1, 486.2}, Data: PlotFloats{1, 2}}}
	js, series, err := AppendJSONSplit(nil, nil, &res)
	if err != nil {
		t.Fatal(err)
	}
	if got, err := ExpandSeries(nil, `{"a":[1,2]}`, nil); err != nil || string(got) != `{"a":[1,2]}` {
		t.Errorf("empty series form: %s, %v", got, err)
	}
	bad := [][]byte{
		series[:len(series)-1],                     // truncated
		append(bytes.Clone(series), 0),             // trailing byte
		append([]byte{'G', 'S', 2}, series[3:]...), // other version
		{'G', 'S', 1, 1, 0xff},                     // offset beyond the JSON
	}
	for i, b := range bad {
		if _, err := ExpandSeries(nil, string(js), b); err == nil {
			t.Errorf("corrupt form %d accepted", i)
		}
	}
	if _, err := ExpandSeries(nil, string(bytes.Replace(js, seriesPlaceholder, []byte("[1.5 ]"), 1)), series); err == nil {
		t.Error("series form accepted for JSON without its placeholder")
	}
	if _, err := ExpandSeries(nil, string(js)+"[null]", series); err == nil {
		t.Error("series form accepted for JSON with a placeholder too many")
	}
	// An edit of the JSON's other text (not done by glowlog: results are
	// never rewritten) leaves the series in their places.
	edited := strings.Replace(string(js), `"model":"whole"`, `"model":"whole", "note":"edited"`, 1)
	got, err := ExpandSeries(nil, edited, series)
	want, _ := AppendJSON(nil, &res)
	if err != nil || string(got) != strings.Replace(string(want), `"model":"whole"`, `"model":"whole", "note":"edited"`, 1) {
		t.Errorf("edited JSON: %s, %v", got, err)
	}
	// A "[null]" of the result's own text makes the split refuse.
	res.Source = "[null]"
	if _, _, err := AppendJSONSplit(nil, nil, &res); err != ErrSeriesSplit {
		t.Errorf("placeholder in the text: %v, want ErrSeriesSplit", err)
	}
	checkSplit(t, &res, "placeholder in the text")
}

// FuzzExpandSeries: any series form and JSON give an error or an
// expansion, never a panic; a series of any float64 values round-trips to
// AppendJSON's text.
func FuzzExpandSeries(f *testing.F) {
	res := Result{Model: ModelWhole, Whole: &WholeFit{WavelengthNM: PlotFloats{486.1, 486.2}, Data: PlotFloats{1, -2e-9}}}
	js, series, _ := AppendJSONSplit(nil, nil, &res)
	f.Add(string(js), series, 1.5, -3e-7)
	f.Add(`{"a":[null]}`, []byte{'G', 'S', 1, 1, 2, 3, 0, 0, 0, 0, 0, 0, 0, 0, 2}, 0.0, math.Inf(1))
	f.Fuzz(func(t *testing.T, js string, series []byte, a, b float64) {
		ExpandSeries(nil, js, series)
		r := Result{Windows: []Window{{Data: PlotFloats{a, b, a * b}, Residual: PlotFloats{b}}}}
		want, _ := AppendJSON(nil, &r)
		j, s, err := AppendJSONSplit(nil, nil, &r)
		if err != nil {
			t.Fatal(err)
		}
		got, err := ExpandSeries(nil, string(j), s)
		if err != nil || !bytes.Equal(got, want) {
			t.Fatalf("%v %v: %s, %v; want %s", a, b, got, err, want)
		}
	})
}

// TestGridMemo: results whose whole fits share a wavelength grid give
// AppendJSON's bytes whether the grid's form is written anew or copied
// (lastGrid), with and without the whole JSON, in either order; a grid
// that differs in one value's last bit, in the sign of a zero or in its
// length is written anew.
func TestGridMemo(t *testing.T) {
	grid := make(PlotFloats, 300)
	for i := range grid {
		grid[i] = 380 + 320*float64(i)/299
	}
	grid[7] = 0
	res := func(g PlotFloats, k int) *Result {
		data := make(PlotFloats, len(g))
		for i := range data {
			data[i] = float64((i*37+k*11)%1000) + 0.25*float64(k)
		}
		return &Result{Model: ModelWhole, Whole: &WholeFit{WavelengthNM: g, Data: data, Model: data[:len(g)/2]},
			Windows: []Window{{WavelengthNM: g[:10], Data: data[:10]}}}
	}
	ulp := slices.Clone(grid)
	ulp[150] = math.Nextafter(ulp[150], 1000)
	negZero := slices.Clone(grid)
	negZero[7] = math.Copysign(0, -1)
	for round, g := range []PlotFloats{grid, grid, ulp, grid, negZero, grid[:299], grid, grid} {
		r := res(g, round)
		want, err := AppendJSON(nil, r)
		if err != nil {
			t.Fatal(err)
		}
		check := func(how string, js, series []byte) {
			t.Helper()
			got, err := ExpandSeries(nil, string(js), series)
			if err != nil || !bytes.Equal(got, want) {
				t.Fatalf("round %d (%s): expanded JSON differs from AppendJSON (%v)", round, how, err)
			}
		}
		if round%2 == 0 {
			js, series, err := AppendJSONSplit(nil, nil, r)
			if err != nil {
				t.Fatal(err)
			}
			check("split", js, series)
		}
		js, series, full, err := AppendJSONSplitFull(nil, nil, nil, r)
		if err != nil || !bytes.Equal(full, want) {
			t.Fatalf("round %d: whole JSON differs from AppendJSON (%v)", round, err)
		}
		check("full", js, series)
		js2, series2, err := AppendJSONSplit(nil, nil, r)
		if err != nil || !bytes.Equal(js2, js) || !bytes.Equal(series2, series) {
			t.Fatalf("round %d: split after full differs (%v)", round, err)
		}
		if m := lastGrid.Load(); m == nil || !sameBits(m.values, g) {
			t.Fatalf("round %d: the grid is not the one kept", round)
		}
	}
	if sameBits(PlotFloats{math.NaN()}, PlotFloats{math.Float64frombits(0x7ff8000000000002)}) || !sameBits(PlotFloats{math.NaN()}, PlotFloats{math.NaN()}) ||
		sameBits(PlotFloats{0}, PlotFloats{math.Copysign(0, -1)}) || sameBits(PlotFloats{1}, PlotFloats{1, 2}) {
		t.Error("sameBits does not compare bit patterns")
	}
}

// benchWholeResult is the whole-route result of a Stark-shaped 2048-pixel
// spectrum (the whole fit's plot series, windows kept).
func benchWholeResult(b *testing.B) *Result {
	grid := make([]float64, 2048)
	for i := range grid {
		grid[i] = 380 + 320*float64(i)/2047
	}
	y, _, err := SynthesizeStark(SynthConfig{WavelengthNM: grid, Uppers: []int{3, 4, 5, 6, 7, 8, 9, 10},
		ExcitationTemperatureK: 7000, ElectronDensityM3: 3e21, GasTemperatureK: 1000, InstrumentFWHMNM: 0.35, HalphaArea: 1})
	if err != nil {
		b.Fatal(err)
	}
	rng := rand.New(rand.NewPCG(3, 4))
	for i := range y {
		y[i] = math.Round(y[i]*2e4 + 50 + 3*rng.NormFloat64())
	}
	res, err := NewPipeline(8192).Analyze(&Spectrum{Name: "stark.csv", WavelengthNM: grid, Counts: y},
		Options{KeepWindows: true, Conditions: diag.Measurement{InstrumentGaussFWHMNM: 0.35, GasTemperatureK: 1000}})
	if err != nil || res.Whole == nil {
		b.Fatal(err)
	}
	return &res
}

// BenchmarkAppendJSONSplit: a whole-route result's placeholder JSON and
// series form (what is stored: split), and with the whole JSON beside
// (an API answer: full).
func BenchmarkAppendJSONSplit(b *testing.B) {
	res := benchWholeResult(b)
	b.Run("split", func(b *testing.B) {
		var js, series []byte
		for range b.N {
			var err error
			if js, series, err = AppendJSONSplit(js[:0], series[:0], res); err != nil {
				b.Fatal(err)
			}
		}
	})
	b.Run("full", func(b *testing.B) {
		var js, series, full []byte
		for range b.N {
			var err error
			if js, series, full, err = AppendJSONSplitFull(js[:0], series[:0], full[:0], res); err != nil {
				b.Fatal(err)
			}
		}
	})
}
