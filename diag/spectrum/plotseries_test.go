package spectrum

import (
	"bytes"
	"encoding/binary"
	"fmt"
	"math"
	"math/rand/v2"
	"reflect"
	"slices"
	"strconv"
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
		append([]byte{'G', 'S', 3}, series[3:]...), // other version
		{'G', 'S', 1, 1, 0xff},                     // length beyond the form
		{'G', 'S', 2, 1, 0xff},
		{'G', 'S', 2, 1, 1<<2 | 1, 5, 0}, // mantissa out of range
		{'G', 'S', 2, 1, 1<<2 | 2, 0},    // a residual without data and model
		{'G', 'S', 2, 1, 1<<2 | 3, 0},    // mode 3
		// a residual whose data and model have another length
		{'G', 'S', 2, 3, 1<<2 | 0, 2, 1<<2 | 0, 2, 2<<2 | 2, 2, 2},
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
// AppendJSON's text, whose series text is the value-at-a-time writer's.
func FuzzExpandSeries(f *testing.F) {
	res := Result{Model: ModelWhole, Whole: &WholeFit{WavelengthNM: PlotFloats{486.1, 486.2}, Data: PlotFloats{1, -2e-9}}}
	js, series, _ := AppendJSONSplit(nil, nil, &res)
	f.Add(string(js), series, 1.5, -3e-7)
	f.Add(`{"a":[null]}`, []byte{'G', 'S', 1, 1, 2, 3, 0, 0, 0, 0, 0, 0, 0, 0, 2}, 0.0, math.Inf(1))
	f.Add(`{"a":[null]}`, []byte{'G', 'S', 2, 1, 5, 1, 0x80, 0x84, 0xaf, 0x5f, 4, 4}, 0.0, 1e300)
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
		p := PlotFloats{a, b, a * b, -a, a / 3}
		if fast, each := appendPlotFloats(nil, p), appendPlotFloatsEach(nil, p); !bytes.Equal(fast, each) {
			t.Fatalf("%v %v: appendPlotFloats %s, appendPlotFloatsEach %s", a, b, fast, each)
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

// BenchmarkSeriesValues: the series form of a whole-route result's plot
// series (every window's and the whole fit's, the grid memo aside), and
// with their JSON text beside.
func BenchmarkSeriesValues(b *testing.B) {
	res := benchWholeResult(b)
	var list [][]float64
	for _, w := range res.Windows {
		list = append(list, w.WavelengthNM, w.Data, w.Model, w.Residual)
	}
	list = append(list, res.Whole.WavelengthNM, res.Whole.Data, res.Whole.Model, res.Whole.Residual)
	nv := 0
	for _, p := range list {
		nv += len(p)
	}
	for _, withText := range []bool{false, true} {
		b.Run(fmt.Sprintf("text=%v", withText), func(b *testing.B) {
			var form, text []byte
			var recs [3][]seriesDigit
			for b.Loop() {
				form, text = form[:0], text[:0]
				for k, p := range list {
					// wavelengths, data, model, residual (against
					// the two before it)
					var dm, mm []seriesDigit
					if k%4 == 3 {
						dm, mm = recs[(k-2)%3][:len(p)], recs[(k-1)%3][:len(p)]
					}
					r := slices.Grow(recs[k%3][:0], len(p))[:len(p)]
					recs[k%3] = r
					form, text = appendSeriesValues(form, text, withText, p, []int{seriesSecond, seriesFirst, seriesSecond, seriesResidual}[k%4], r, dm, mm)
				}
			}
			b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N*nv), "ns/value")
		})
	}
}

// digitsTestValues are values for the digit tests: random bit patterns
// (every magnitude), values spread over the magnitudes of plot series,
// the rounding ties of the eighth digit, their neighbours and values
// about the 1e-6 of a digit from them that plotDigits refuses, powers of
// ten and their neighbours (the decade boundaries the exponent table
// guesses across), values that carry into the next decade, small
// integers and their fractions, negatives, zeros, NaN and ±Inf.
func digitsTestValues() []float64 {
	r := rand.New(rand.NewPCG(81, 2026))
	var vs []float64
	for range 100000 {
		vs = append(vs, math.Float64frombits(r.Uint64()))
	}
	for range 200000 {
		vs = append(vs, (r.Float64()-0.3)*math.Pow(10, float64(r.IntN(36)-18)))
	}
	for e := -17; e <= 23; e++ {
		p := math.Pow(10, float64(e))
		for range 2000 {
			m := float64(10000000 + r.IntN(90000000))
			v := (m + 0.5) * p / 1e8
			vs = append(vs, v, math.Nextafter(v, 0), math.Nextafter(v, math.Inf(1)), -v)
			for _, d := range []float64{2e-7, 5e-7, 9e-7, 1.1e-6, 3e-6} { // near the refusal's edge
				vs = append(vs, (m+0.5+d)*p/1e8, (m+0.5-d)*p/1e8)
			}
		}
		for _, v := range []float64{p, math.Nextafter(p, 0), math.Nextafter(p, math.Inf(1)), 9.99999995 * p, 9.999999949 * p,
			9.99999996 * p, 9.9999999999 * p, 1.0000000001 * p} {
			vs = append(vs, v, -v)
		}
	}
	for be := 1; be < 2047; be++ { // each binade's ends
		lo := math.Float64frombits(uint64(be) << 52)
		vs = append(vs, lo, math.Nextafter(lo, 0), -lo)
	}
	for i := -20000; i <= 20000; i++ {
		vs = append(vs, float64(i), float64(i)/8, float64(i)*1e-3)
	}
	return append(vs, 0, math.Copysign(0, -1), 5e-324, math.MaxFloat64, -math.MaxFloat64, math.NaN(), math.Inf(1), math.Inf(-1),
		1e-15, math.Nextafter(1e-15, 0), 1e8, math.Nextafter(1e8, 0), 99999999.5, 99999999.49999, 1e21, 1e22)
}

// TestSeriesDigitsChunk: the fast digits of the series form are
// plotDigits' answer for every value (the same digits, or the same
// refusal), so the series form is what it was with plotDigits, and
// ExpandSeries (which writes the digits with appendDigits8 and refused
// values with appendFloat8) gives AppendJSON's text.
func TestSeriesDigitsChunk(t *testing.T) {
	vs := digitsTestValues()
	var digits [seriesChunk]seriesDigit
	fast := 0
	for i := 0; i < len(vs); i += seriesChunk {
		chunk := vs[i:min(i+seriesChunk, len(vs))]
		seriesDigitsChunk(digits[:], chunk)
		for j, v := range chunk {
			m, e10, ok := plotDigits(v)
			want := seriesDigit{int64(m), e10}
			if v < 0 {
				want.s = -want.s
			}
			if !ok {
				want = seriesDigit{0, noDigits}
			}
			if digits[j] != want {
				t.Fatalf("%v (bits %#x): seriesDigitsChunk %+v, plotDigits %d %d %v", v, math.Float64bits(v), digits[j], m, e10, ok)
			}
			if ok {
				fast++
			}
		}
	}
	if fast < len(vs)/3 {
		t.Fatalf("only %d of %d values have digits", fast, len(vs))
	}
}

// appendSeriesValuesRef is the series form as first written (the digits
// of each value from plotDigits, binary.AppendUvarint): the reference of
// TestSeriesFormUnchanged.
func appendSeriesValuesRef(b []byte, p []float64) []byte {
	b = binary.AppendUvarint(b, uint64(len(p)))
	var prevS int64
	prevE := 0
	for _, v := range p {
		m, e10, ok := plotDigits(v)
		if !ok {
			if math.IsNaN(v) || math.IsInf(v, 0) {
				b = append(b, 2)
				continue
			}
			b = append(b, 3)
			b = binary.LittleEndian.AppendUint64(b, math.Float64bits(v))
			continue
		}
		s := int64(m)
		if v < 0 {
			s = -s
		}
		if e10 == prevE {
			b = binary.AppendUvarint(b, zigzag(s-prevS)<<2)
		} else {
			b = binary.AppendUvarint(b, zigzag(int64(e10-prevE))<<2|1)
			b = binary.AppendUvarint(b, zigzag(s))
			prevE = e10
		}
		prevS = s
	}
	return b
}

// TestSeriesFormUnchanged: appendSeriesValues writes the series form of
// appendSeriesValuesRef byte for byte, and the text of
// appendPlotFloatsEach (as appendPlotFloats does), for the digit test
// values cut into series of many lengths (chunk boundaries included) and
// for the plot series of a real whole-route result.
func TestSeriesFormUnchanged(t *testing.T) {
	vs := digitsTestValues()
	var list [][]float64
	for i, n := 0, 0; i < len(vs); i, n = i+n, n*7%1031+1 {
		list = append(list, vs[i:min(i+n, len(vs))])
	}
	for _, n := range []int{seriesChunk - 1, seriesChunk, seriesChunk + 1, 3*seriesChunk + 5} {
		list = append(list, vs[1000:1000+n])
	}
	grid := make([]float64, 2048)
	for i := range grid {
		grid[i] = 380 + 320*float64(i)/2047
	}
	y, _, err := SynthesizeStark(SynthConfig{WavelengthNM: grid, Uppers: []int{3, 4, 5, 6, 7},
		ExcitationTemperatureK: 7000, ElectronDensityM3: 3e21, GasTemperatureK: 1000, InstrumentFWHMNM: 0.35, HalphaArea: 1})
	if err != nil {
		t.Fatal(err)
	}
	rng := rand.New(rand.NewPCG(9, 7))
	for i := range y {
		y[i] = y[i]*1e5 + 50 + 3*rng.NormFloat64()
	}
	res, err := NewPipeline(8192).Analyze(&Spectrum{Name: "stark.csv", WavelengthNM: grid, Counts: y},
		Options{KeepWindows: true, Conditions: diag.Measurement{InstrumentGaussFWHMNM: 0.35, GasTemperatureK: 1000}})
	if err != nil || res.Whole == nil || len(res.Windows) == 0 {
		t.Fatalf("no whole fit with windows: %v", err)
	}
	for _, w := range res.Windows {
		list = append(list, w.WavelengthNM, w.Data, w.Model, w.Residual)
	}
	list = append(list, res.Whole.WavelengthNM, res.Whole.Data, res.Whole.Model, res.Whole.Residual)
	for k, p := range list {
		// Version 2 without second differences codes the values as
		// version 1 did; only the header differs.
		ref := appendSeriesValuesRef(nil, p)
		_, n := binary.Uvarint(ref)
		want := binary.AppendUvarint([]byte("x"), uint64(len(p))<<2)
		want = append(want, ref[n:]...)
		got, text := appendSeriesValues([]byte("x"), []byte("y"), true, p, seriesFirst, nil, nil, nil)
		if !bytes.Equal(got, want) {
			t.Fatalf("series %d (%d values): form differs from the reference", k, len(p))
		}
		if wantText := appendPlotFloatsEach([]byte("y"), p); !bytes.Equal(text, wantText) {
			t.Fatalf("series %d (%d values): text differs from appendPlotFloatsEach", k, len(p))
		}
		if wantText := appendPlotFloatsEach(nil, p); !bytes.Equal(appendPlotFloats(nil, p), wantText) {
			t.Fatalf("series %d (%d values): appendPlotFloats differs from appendPlotFloatsEach", k, len(p))
		}
		if got2, _ := appendSeriesValues([]byte("x"), nil, false, p, seriesFirst, nil, nil, nil); !bytes.Equal(got2, want) {
			t.Fatalf("series %d (%d values): form without text differs", k, len(p))
		}
		// By second differences: the same text, and the values expand
		// to it.
		form2, text2 := appendSeriesValues(nil, []byte("y"), true, p, seriesSecond, nil, nil, nil)
		if !bytes.Equal(text2, text) {
			t.Fatalf("series %d (%d values): text by second differences differs", k, len(p))
		}
		for _, f := range [][]byte{form2, want[1:]} {
			blob := append(append(bytes.Clone(seriesMagic), 1), f...)
			if got, err := ExpandSeries(nil, "[null]", blob); err != nil || !bytes.Equal(got, text[1:]) {
				t.Fatalf("series %d (%d values): expansion differs (%v)", k, len(p), err)
			}
		}
	}
}

// splitV1 is AppendJSONSplit as format version 1 wrote it (every series
// by first differences, the header its length; appendSeriesValuesRef):
// what rows stored before version 2 hold. An error is AppendJSONSplit's.
func splitV1(r *Result) (js, series []byte, err error) {
	js, _, err = AppendJSONSplit(nil, nil, r)
	if err != nil {
		return nil, nil, err
	}
	var list []PlotFloats
	for _, w := range r.Windows {
		list = append(list, w.WavelengthNM, w.Data, w.Model, w.Residual)
	}
	if w := r.Whole; w != nil {
		list = append(list, w.WavelengthNM, w.Data, w.Model, w.Residual)
	}
	list = slices.DeleteFunc(list, func(p PlotFloats) bool { return len(p) == 0 })
	if len(list) == 0 {
		return js, nil, nil
	}
	series = binary.AppendUvarint(bytes.Clone(seriesMagicV1), uint64(len(list)))
	for _, p := range list {
		series = appendSeriesValuesRef(series, p)
	}
	return js, series, nil
}

// TestExpandSeriesV1: a form of version 1 (stored before version 2)
// still expands to AppendJSON's bytes: a literal one, and those of real
// whole-route results and of results filled at random. Version 2 is the
// smaller.
func TestExpandSeriesV1(t *testing.T) {
	// Written by version 1's encoder for a whole fit with wavelengths
	// {486.1, 486.2, 486.30001} and data {0, -2e-9, 1e30, 12.5}.
	const js = `{"whole_fit":{"wavelength_nm":[null],"data":[null]}}`
	v1 := []byte{'G', 'S', 1, 0x2, 0x3, 0x11, 0xa0, 0xeb, 0xad, 0x2e, 0x80, 0xf1, 0x4, 0x88, 0xf1, 0x4,
		0x4, 0x3, 0x0, 0x0, 0x0, 0x0, 0x0, 0x0, 0x0, 0x0, 0x45, 0xff, 0xb3, 0x89, 0x13,
		0x3, 0xea, 0x8c, 0xa0, 0x39, 0x59, 0x3e, 0x29, 0x46, 0x51, 0xc0, 0xf0, 0xf5, 0xb}
	got, err := ExpandSeries([]byte("x"), js, v1)
	const want = `x{"whole_fit":{"wavelength_nm":[486.1,486.2,486.30001],"data":[0,-2e-09,1e+30,12.5]}}`
	if err != nil || string(got) != want {
		t.Fatalf("literal version-1 form: %s, %v; want %s", got, err, want)
	}
	r := rand.New(rand.NewPCG(17, 4))
	results := []*Result{benchWholeResultT(t, 0), benchWholeResultT(t, 1)}
	for range 500 {
		var res Result
		fillRandom(r, reflect.ValueOf(&res).Elem(), 0)
		results = append(results, &res)
	}
	n := 0
	for i, res := range results {
		want, err := AppendJSON(nil, res)
		if err != nil {
			continue
		}
		js, series, err := splitV1(res)
		if err == ErrSeriesSplit {
			continue
		}
		if err != nil {
			t.Fatal(err)
		}
		n++
		got, err := ExpandSeries(nil, string(js), series)
		if err != nil || !bytes.Equal(got, want) {
			t.Fatalf("result %d: version-1 form expands to other bytes (%v)", i, err)
		}
		if i < 2 {
			_, s2, _ := AppendJSONSplit(nil, nil, res)
			if len(s2) >= len(series) {
				t.Errorf("result %d: version 2 %d bytes, version 1 %d", i, len(s2), len(series))
			}
			t.Logf("whole-route result %d: series form %d bytes (version 1: %d)", i, len(s2), len(series))
		}
	}
	if n < 100 {
		t.Fatalf("only %d results compared", n)
	}
}

// benchWholeResultT is a whole-route result of a Stark-shaped 2048-pixel
// spectrum with windows kept (noise seed k).
func benchWholeResultT(t *testing.T, k int) *Result {
	grid := make([]float64, 2048)
	for i := range grid {
		grid[i] = 380 + 320*float64(i)/2047
	}
	y, _, err := SynthesizeStark(SynthConfig{WavelengthNM: grid, Uppers: []int{3, 4, 5, 6, 7, 8, 9, 10},
		ExcitationTemperatureK: 7000, ElectronDensityM3: 3e21, GasTemperatureK: 1000, InstrumentFWHMNM: 0.35, HalphaArea: 1})
	if err != nil {
		t.Fatal(err)
	}
	rng := rand.New(rand.NewPCG(uint64(k), 4))
	for i := range y {
		y[i] = math.Round(y[i]*2e4 + 50 + 3*rng.NormFloat64())
	}
	res, err := NewPipeline(8192).Analyze(&Spectrum{Name: "stark.csv", WavelengthNM: grid, Counts: y},
		Options{KeepWindows: true, Conditions: diag.Measurement{InstrumentGaussFWHMNM: 0.35, GasTemperatureK: 1000}})
	if err != nil || res.Whole == nil || len(res.Windows) == 0 {
		t.Fatalf("no whole fit with windows: %v", err)
	}
	return &res
}

// TestSeriesResidual: a residual is coded against its data and model
// (mode 2) where that is the smaller, and expands to its text: for the
// whole fit and the windows of a real result (where it is chosen, and
// takes less than half the bytes of first differences), for residuals
// that are not data − model (first differences kept), and for data and
// models with nulls, values in bytes, zeros and changes of decade (no
// prediction for those values).
func TestSeriesResidual(t *testing.T) {
	res := benchWholeResultT(t, 2)
	type group struct{ d, m, r []float64 }
	var real []group
	real = append(real, group{res.Whole.Data, res.Whole.Model, res.Whole.Residual})
	for _, w := range res.Windows {
		real = append(real, group{w.Data, w.Model, w.Residual})
	}
	r := rand.New(rand.NewPCG(3, 9))
	noise := make([]float64, len(res.Whole.Data))
	for i := range noise {
		noise[i] = r.NormFloat64() * 30
	}
	awk := make([]float64, 400)
	awkM := make([]float64, 400)
	for i := range awk {
		awk[i] = (r.Float64() + 0.05) * math.Pow(10, float64(r.IntN(6)-2))
		awkM[i] = awk[i] * (1 + 0.01*r.NormFloat64())
		switch i % 37 {
		case 3:
			awk[i] = math.NaN()
		case 5:
			awkM[i] = 0
		case 7:
			awk[i] = 1e30
		case 11:
			awkM[i] = awk[i] // equal: no prediction
		case 13:
			awkM[i] = -awk[i] * 20 // another decade
		}
	}
	awkR := make([]float64, 400)
	for i := range awkR {
		awkR[i] = awk[i] - awkM[i]
	}
	cases := []struct {
		g        group
		residual bool // mode 2 expected
	}{{group{res.Whole.Data, res.Whole.Model, noise}, false}, {group{awk, awkM, awkR}, true}}
	for _, g := range real {
		cases = append(cases, struct {
			g        group
			residual bool
		}{g, true})
	}
	for k, c := range cases {
		dm, mm := make([]seriesDigit, len(c.g.d)), make([]seriesDigit, len(c.g.m))
		fd, td := appendSeriesValues(nil, nil, true, c.g.d, seriesFirst, dm, nil, nil)
		fm, tm := appendSeriesValues(nil, nil, true, c.g.m, seriesSecond, mm, nil, nil)
		fr, tr := appendSeriesValues(nil, nil, true, c.g.r, seriesResidual, nil, dm, mm)
		f0, _ := appendSeriesValues(nil, nil, false, c.g.r, seriesFirst, nil, nil, nil)
		// firstLonger counts f0's values: longer than one byte less
		// than they take, not longer than what they take.
		all := make([]seriesDigit, len(c.g.r)+seriesChunk)
		for i := 0; i < len(c.g.r); i += seriesChunk {
			seriesDigitsChunk(all[i:], c.g.r[i:min(i+seriesChunk, len(c.g.r))])
		}
		all = all[:len(c.g.r)]
		if _, h := binary.Uvarint(f0); !firstLonger(all, c.g.r, len(f0)-h-1) || firstLonger(all, c.g.r, len(f0)-h) {
			t.Errorf("case %d: firstLonger does not count the %d bytes of first differences", k, len(f0)-h)
		}
		h, _ := binary.Uvarint(fr)
		if mode := int(h & 3); (mode == seriesResidual) != c.residual {
			t.Errorf("case %d: mode %d", k, mode)
		}
		if len(fr) > len(f0) {
			t.Errorf("case %d: %d bytes, %d by first differences", k, len(fr), len(f0))
		}
		if c.residual && k >= 2 && 2*len(fr) > len(f0) {
			t.Errorf("case %d (real): residual %d bytes, %d by first differences", k, len(fr), len(f0))
		}
		blob := append(append(bytes.Clone(seriesMagic), 3), fd...)
		blob = append(append(blob, fm...), fr...)
		got, err := ExpandSeries(nil, "[null] [null] [null]", blob)
		if want := string(td) + " " + string(tm) + " " + string(tr); err != nil || string(got) != want {
			t.Fatalf("case %d: expansion differs (%v)", k, err)
		}
		if want := string(appendPlotFloatsEach(nil, c.g.r)); string(tr) != want {
			t.Fatalf("case %d: residual text differs from appendPlotFloatsEach", k)
		}
	}
}

// predictResidualRef is predictResidual as format version 2 first
// defined it (the digits of |D − M| by bit length and a power of ten,
// nine digits rounded half away from zero): rows stored since then
// expand through predictResidual, which must give its answer exactly.
func predictResidualRef(d, m seriesDigit) (p int64, eP int, ok bool) {
	if d.e10 == noDigits || m.e10 == noDigits || d.e10 != m.e10 || d.s == m.s {
		return 0, 0, false
	}
	diff := d.s - m.s
	a := diff
	if a < 0 {
		a = -a
	}
	nd := len(strconv.FormatInt(a, 10))
	eP = d.e10 - 8 + nd
	if nd <= 8 {
		for range 8 - nd {
			diff *= 10
		}
		return diff, eP, true
	}
	p = (a + 5) / 10
	if diff < 0 {
		p = -p
	}
	return p, eP, true
}

// TestPredictResidual: predictResidual is predictResidualRef for
// mantissas of every sign and size (differences of every number of
// digits, the powers of ten and their neighbours, nine digits and their
// rounding ties), equal mantissas, other exponents and values without
// digits.
func TestPredictResidual(t *testing.T) {
	r := rand.New(rand.NewPCG(12, 5))
	mant := func() int64 {
		m := int64(10000000 + r.IntN(90000000))
		if r.IntN(2) == 0 {
			m = -m
		}
		return m
	}
	check := func(d, m seriesDigit) {
		t.Helper()
		p, e, ok := predictResidual(d, m)
		rp, re, rok := predictResidualRef(d, m)
		if p != rp || e != re || ok != rok {
			t.Fatalf("predictResidual(%v, %v) = %d %d %v, want %d %d %v", d, m, p, e, ok, rp, re, rok)
		}
	}
	for range 200000 {
		e := r.IntN(40) - 20
		d := mant()
		check(seriesDigit{d, e}, seriesDigit{mant(), e})
		// differences of every length, and at powers of ten
		k := seriesPow10[r.IntN(9)]
		for _, diff := range []int64{int64(r.IntN(int(k))) + 1, k, k - 1, k + 1, -k, 5 + 10*int64(r.IntN(2e7)), -5 - 10*int64(r.IntN(2e7))} {
			check(seriesDigit{d, e}, seriesDigit{d - diff, e})
		}
		check(seriesDigit{d, e}, seriesDigit{d, e})
		check(seriesDigit{d, e}, seriesDigit{d, e + 1})
		check(seriesDigit{d, e}, seriesDigit{0, noDigits})
		check(seriesDigit{0, noDigits}, seriesDigit{d, e})
	}
	check(seriesDigit{0, noDigits}, seriesDigit{0, noDigits})
	check(seriesDigit{99999999, 3}, seriesDigit{-99999999, 3})
	check(seriesDigit{-99999999, 3}, seriesDigit{99999999, 3})
}

// TestPutUvarints: putUvarints writes binary.AppendUvarint's bytes for
// values of every bit length below 64 (the top bit marks a value without
// digits) and their neighbours (the ends of each uvarint length), and a
// value without digits as putNoDigits does, after what b holds.
func TestPutUvarints(t *testing.T) {
	r := rand.New(rand.NewPCG(6, 1))
	var us []uint64
	us = append(us, 1<<63-1)
	for l := range 9 { // the ends of each uvarint length
		us = append(us, 1<<(7*l), 1<<(7*l)-1, 1<<(7*l)+1)
	}
	for n := range 63 {
		for range 20 {
			u := r.Uint64() >> (64 - n) // n bits at most
			if n > 0 {
				u |= 1 << (n - 1)
			}
			us = append(us, u, max(u, 1)-1, u+1)
		}
	}
	chunk := []float64{math.NaN(), 1e300, 0, math.Inf(-1)}
	for i := range chunk {
		us = append(us[:len(us)/2+i], append([]uint64{seriesRaw | uint64(i)}, us[len(us)/2+i:]...)...)
	}
	for cut := 0; cut < len(us); cut += 97 {
		got := putUvarints([]byte("x"), us[cut:], chunk)
		want := []byte("x")
		for _, u := range us[cut:] {
			if u&seriesRaw != 0 && u&^seriesRaw < uint64(len(chunk)) {
				var tmp [9]byte
				want = append(want, tmp[:putNoDigits(tmp[:], chunk[u&^seriesRaw])]...)
				continue
			}
			want = binary.AppendUvarint(want, u)
		}
		if !bytes.Equal(got, want) {
			t.Fatalf("from %d: putUvarints differs from binary.AppendUvarint", cut)
		}
	}
}
