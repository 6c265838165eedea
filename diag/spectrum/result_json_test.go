package spectrum

import (
	"bytes"
	"encoding/json"
	"flag"
	"fmt"
	"go/format"
	"math"
	"math/rand/v2"
	"os"
	"reflect"
	"slices"
	"sort"
	"strings"
	"testing"
	"unicode/utf8"

	"glowlog/diag"
)

var updateJSON = flag.Bool("update-json", false, "rewrite result_json.go from the result types")

var jsonMarshalerType = reflect.TypeFor[json.Marshaler]()

// jsonField is one field as encoding/json writes it: the Go access path,
// the JSON name, omitempty.
type jsonField struct {
	path      string // ".A.B"
	typ       reflect.Type
	name      string
	omitEmpty bool
	index     []int
	depth     int
	tagged    bool
	// guards are the embedded pointers on the path, which must be
	// non-nil for the field to be written.
	guards []string
}

// jsonFields lists the fields of struct t in encoding/json's order and
// with its rules for embedded structs (the shallowest field of a name
// wins; of several at that depth the tagged one, else none).
func jsonFields(t *testing.T, st reflect.Type) []jsonField {
	var all []jsonField
	var walk func(reflect.Type, string, []int, int, []string)
	walk = func(s reflect.Type, path string, index []int, depth int, guards []string) {
		for i := range s.NumField() {
			sf := s.Field(i)
			tag := sf.Tag.Get("json")
			if tag == "-" {
				continue
			}
			name, opts, _ := strings.Cut(tag, ",")
			idx := append(slices.Clone(index), i)
			if sf.Anonymous && name == "" {
				ft := sf.Type
				g := guards
				if ft.Kind() == reflect.Pointer {
					g = append(slices.Clone(guards), path+"."+sf.Name)
					ft = ft.Elem()
				}
				if ft.Kind() != reflect.Struct || ft.Implements(jsonMarshalerType) || reflect.PointerTo(ft).Implements(jsonMarshalerType) {
					t.Fatalf("%v.%s: embedded %v not supported by the generator", s, sf.Name, sf.Type)
				}
				walk(ft, path+"."+sf.Name, idx, depth+1, g)
				continue
			}
			if !sf.IsExported() {
				continue
			}
			for _, o := range strings.Split(opts, ",") {
				if o != "" && o != "omitempty" {
					t.Fatalf("%v.%s: json option %q not supported by the generator", s, sf.Name, o)
				}
			}
			tagged := name != ""
			if name == "" {
				name = sf.Name
			}
			all = append(all, jsonField{path: path + "." + sf.Name, typ: sf.Type, name: name,
				omitEmpty: strings.Contains(opts, "omitempty"), index: idx, depth: depth, tagged: tagged, guards: guards})
		}
	}
	walk(st, "", nil, 0, nil)
	byName := map[string][]jsonField{}
	for _, f := range all {
		byName[f.name] = append(byName[f.name], f)
	}
	var out []jsonField
	for _, fs := range byName {
		minD := fs[0].depth
		for _, f := range fs {
			minD = min(minD, f.depth)
		}
		var at []jsonField
		for _, f := range fs {
			if f.depth == minD {
				at = append(at, f)
			}
		}
		if len(at) > 1 {
			var tagged []jsonField
			for _, f := range at {
				if f.tagged {
					tagged = append(tagged, f)
				}
			}
			if len(tagged) != 1 {
				continue
			}
			at = tagged
		}
		out = append(out, at[0])
	}
	sort.Slice(out, func(i, j int) bool { return slices.Compare(out[i].index, out[j].index) < 0 })
	return out
}

// jsonGen writes the encoder functions.
type jsonGen struct {
	t     *testing.T
	b     strings.Builder
	names map[reflect.Type]string
	queue []reflect.Type
}

func (g *jsonGen) typeName(ty reflect.Type) string {
	switch ty.PkgPath() {
	case "glowlog/diag/spectrum":
		return ty.Name()
	case "glowlog/diag":
		return "diag." + ty.Name()
	}
	g.t.Fatalf("type %v from package %q not supported by the generator", ty, ty.PkgPath())
	return ""
}

// funcFor names the encoder of struct type ty, queueing it.
func (g *jsonGen) funcFor(ty reflect.Type) string {
	if n, ok := g.names[ty]; ok {
		return n
	}
	n := "appendJSON" + strings.ReplaceAll(strings.ReplaceAll(g.typeName(ty), "diag.", "Diag"), ".", "")
	g.names[ty] = n
	g.queue = append(g.queue, ty)
	return n
}

// value writes code appending x (of type ty) to b; x is addressable.
func (g *jsonGen) value(x string, ty reflect.Type, ind string) {
	w := func(format string, args ...any) { fmt.Fprintf(&g.b, ind+format+"\n", args...) }
	if ty == reflect.TypeFor[PlotFloats]() {
		// PlotFloats.MarshalJSON's bytes, appended in place (its output is
		// compact JSON, which encoding/json copies as it is).
		w("b = appendPlotFloats(b, %s)", x)
		return
	}
	if ty.Implements(jsonMarshalerType) {
		if ty.Kind() == reflect.Pointer {
			g.t.Fatalf("pointer Marshaler %v not supported by the generator", ty)
		}
		w("if b, err = appendJSONMarshaler(b, %s); err != nil {\n%s\treturn b, err\n%s}", x, ind, ind)
		return
	}
	switch ty.Kind() {
	case reflect.String:
		w("b = appendJSONString(b, string(%s))", x)
	case reflect.Bool:
		w("b = strconv.AppendBool(b, bool(%s))", x)
	case reflect.Int, reflect.Int8, reflect.Int16, reflect.Int32, reflect.Int64:
		w("b = strconv.AppendInt(b, int64(%s), 10)", x)
	case reflect.Uint, reflect.Uint16, reflect.Uint32, reflect.Uint64:
		w("b = strconv.AppendUint(b, uint64(%s), 10)", x)
	case reflect.Float64:
		w("if b, err = appendJSONFloat(b, float64(%s)); err != nil {\n%s\treturn b, err\n%s}", x, ind, ind)
	case reflect.Pointer:
		w("if %s == nil {\n%s\tb = append(b, \"null\"...)\n%s} else {", x, ind, ind)
		if ty.Elem().Kind() == reflect.Struct && !ty.Elem().Implements(jsonMarshalerType) {
			w("\tif b, err = %s(b, %s); err != nil {\n%s\t\treturn b, err\n%s\t}", g.funcFor(ty.Elem()), x, ind, ind)
		} else {
			g.value("(*"+x+")", ty.Elem(), ind+"\t")
		}
		w("}")
	case reflect.Struct:
		w("if b, err = %s(b, &%s); err != nil {\n%s\treturn b, err\n%s}", g.funcFor(ty), x, ind, ind)
	case reflect.Slice, reflect.Array:
		if ty.Elem().Kind() == reflect.Uint8 {
			g.t.Fatalf("byte slice %v not supported by the generator", ty)
		}
		if ty.Kind() == reflect.Slice {
			w("if %s == nil {\n%s\tb = append(b, \"null\"...)\n%s} else {", x, ind, ind)
		} else {
			w("{")
		}
		iv := fmt.Sprintf("i%d", len(ind))
		w("\tb = append(b, '[')")
		w("\tfor %s := range %s {", iv, x)
		w("\t\tif %s > 0 {\n%s\t\t\tb = append(b, ',')\n%s\t\t}", iv, ind, ind)
		g.value(x+"["+iv+"]", ty.Elem(), ind+"\t\t")
		w("\t}")
		w("\tb = append(b, ']')")
		w("}")
	case reflect.Map:
		if ty.Key().Kind() != reflect.Int || ty.Elem().Kind() != reflect.Float64 || ty.Name() != "" {
			g.t.Fatalf("map %v not supported by the generator", ty)
		}
		w("if b, err = appendJSONMapIntFloat(b, %s); err != nil {\n%s\treturn b, err\n%s}", x, ind, ind)
	default:
		g.t.Fatalf("kind %v (%v) not supported by the generator", ty.Kind(), ty)
	}
}

// nonEmpty is the Go condition under which encoding/json writes an
// omitempty field x of type ty.
func (g *jsonGen) nonEmpty(x string, ty reflect.Type) string {
	switch ty.Kind() {
	case reflect.String:
		return x + ` != ""`
	case reflect.Bool:
		return x
	case reflect.Int, reflect.Int8, reflect.Int16, reflect.Int32, reflect.Int64,
		reflect.Uint, reflect.Uint16, reflect.Uint32, reflect.Uint64, reflect.Float64:
		return x + " != 0"
	case reflect.Pointer, reflect.Interface:
		return x + " != nil"
	case reflect.Slice, reflect.Map, reflect.Array:
		return "len(" + x + ") != 0"
	case reflect.Struct:
		return "true"
	}
	g.t.Fatalf("omitempty on %v not supported by the generator", ty)
	return ""
}

func (g *jsonGen) structFunc(ty reflect.Type) {
	fmt.Fprintf(&g.b, "\nfunc %s(b []byte, v *%s) ([]byte, error) {\n\tvar err error\n\tb = append(b, '{')\n\tn0 := len(b)\n\t_ = n0\n", g.funcFor(ty), g.typeName(ty))
	for _, f := range jsonFields(g.t, ty) {
		x := "v" + f.path
		ind := "\t"
		var conds []string
		for _, gd := range f.guards {
			conds = append(conds, "v"+gd+" != nil")
		}
		if f.omitEmpty {
			conds = append(conds, g.nonEmpty(x, f.typ))
		}
		if len(conds) > 0 {
			fmt.Fprintf(&g.b, "\tif %s {\n", strings.Join(conds, " && "))
			ind = "\t\t"
		}
		key := string(appendJSONString(nil, f.name)) + ":"
		fmt.Fprintf(&g.b, "%sif len(b) > n0 {\n%s\tb = append(b, ',')\n%s}\n", ind, ind, ind)
		fmt.Fprintf(&g.b, "%sb = append(b, %q...)\n", ind, key)
		g.value(x, f.typ, ind)
		if len(conds) > 0 {
			g.b.WriteString("\t}\n")
		}
	}
	g.b.WriteString("\t_ = err\n\treturn append(b, '}'), nil\n}\n")
}

func generateResultJSON(t *testing.T) []byte {
	g := &jsonGen{t: t, names: map[reflect.Type]string{}}
	g.b.WriteString("// Code generated by go test -run TestResultJSONGenerated -update-json ./diag/spectrum/; DO NOT EDIT.\n\n")
	g.b.WriteString("package spectrum\n\nimport (\n\t\"strconv\"\n\n\t\"glowlog/diag\"\n)\n\nvar _ diag.Result\n")
	g.funcFor(reflect.TypeFor[Result]())
	for i := 0; i < len(g.queue); i++ {
		g.structFunc(g.queue[i])
	}
	src, err := format.Source([]byte(g.b.String()))
	if err != nil {
		t.Fatalf("%v\n%s", err, g.b.String())
	}
	return src
}

// TestResultJSONGenerated: result_json.go is what the generator writes
// for the current result types; -update-json rewrites it. A type the
// generator does not know (a map other than map[int]float64, an
// interface, a json option other than omitempty, …) fails here: extend
// the generator.
func TestResultJSONGenerated(t *testing.T) {
	src := generateResultJSON(t)
	if *updateJSON {
		if err := os.WriteFile("result_json.go", src, 0o644); err != nil {
			t.Fatal(err)
		}
		return
	}
	old, err := os.ReadFile("result_json.go")
	if err != nil || !bytes.Equal(old, src) {
		t.Fatalf("result_json.go is not what the result types give (%v): run go test -run TestResultJSONGenerated -update-json ./diag/spectrum/", err)
	}
}

// encodingJSON is the reference: encoding/json's Encoder without HTML
// escaping, newline dropped.
func encodingJSON(v any) ([]byte, error) {
	var buf bytes.Buffer
	enc := json.NewEncoder(&buf)
	enc.SetEscapeHTML(false)
	if err := enc.Encode(v); err != nil {
		return nil, err
	}
	return bytes.TrimSuffix(buf.Bytes(), []byte{'\n'}), nil
}

func checkAppendJSON(t *testing.T, r *Result, what string) {
	t.Helper()
	want, werr := encodingJSON(r)
	got, err := AppendJSON(nil, r)
	if (err == nil) != (werr == nil) {
		t.Fatalf("%s: AppendJSON error %v, encoding/json %v", what, err, werr)
	}
	if err == nil && !bytes.Equal(got, want) {
		i := 0
		for i < len(got) && i < len(want) && got[i] == want[i] {
			i++
		}
		t.Fatalf("%s: AppendJSON differs from encoding/json at byte %d:\n got …%s\nwant …%s", what, i,
			got[max(0, i-80):min(len(got), i+80)], want[max(0, i-80):min(len(want), i+80)])
	}
}

// fillRandom sets every field reachable in v to random values: nil or
// empty or filled slices, maps and pointers, awkward strings and floats.
func fillRandom(r *rand.Rand, v reflect.Value, depth int) {
	strs := []string{"", "Hα", "a\"b\\c", "tab\tnew\nline\r", "\x00\x1f\x7f", "bad \xff utf8", "\u2028\u2029",
		"<html>&amp;", "n_e ≥ 1e20 m⁻³", "plain"}
	floats := []float64{0, math.Copysign(0, -1), 1, -1.5, 1e-7, 1e-6, 9.99999e-7, 1e21, 1e20, 123456789.125,
		6.02214076e23, 5e-324, math.MaxFloat64, 1.0 / 3, -2.5e-9}
	switch v.Kind() {
	case reflect.String:
		v.SetString(strs[r.IntN(len(strs))])
	case reflect.Bool:
		v.SetBool(r.IntN(2) == 0)
	case reflect.Int, reflect.Int8, reflect.Int16, reflect.Int32, reflect.Int64:
		v.SetInt([]int64{0, 1, -3, 12, 1 << 40}[r.IntN(5)] % (1 << (v.Type().Bits() - 1)))
	case reflect.Float64:
		v.SetFloat(floats[r.IntN(len(floats))])
	case reflect.Pointer:
		if r.IntN(3) == 0 || depth > 6 {
			v.SetZero()
			return
		}
		p := reflect.New(v.Type().Elem())
		fillRandom(r, p.Elem(), depth+1)
		v.Set(p)
	case reflect.Slice:
		switch k := r.IntN(4); {
		case k == 0 || depth > 6:
			v.SetZero()
		default:
			n := r.IntN(3) * (k - 1)
			s := reflect.MakeSlice(v.Type(), n, n)
			for i := range n {
				fillRandom(r, s.Index(i), depth+1)
			}
			v.Set(s)
		}
	case reflect.Array:
		for i := range v.Len() {
			fillRandom(r, v.Index(i), depth+1)
		}
	case reflect.Map:
		if r.IntN(3) == 0 {
			v.SetZero()
			return
		}
		m := reflect.MakeMap(v.Type())
		for range r.IntN(12) {
			k := reflect.New(v.Type().Key()).Elem()
			k.SetInt(int64(r.IntN(25) - 2))
			e := reflect.New(v.Type().Elem()).Elem()
			fillRandom(r, e, depth+1)
			m.SetMapIndex(k, e)
		}
		v.Set(m)
	case reflect.Struct:
		for i := range v.NumField() {
			if v.Type().Field(i).IsExported() || v.Type().Field(i).Anonymous {
				fillRandom(r, v.Field(i), depth+1)
			}
		}
	}
}

// TestAppendJSONMatchesEncodingJSON: AppendJSON writes encoding/json's
// bytes for real results (every spectrum in testdata/spectra, with and
// without window data) and for 3000 results filled at random (nil, empty
// and filled slices, maps and pointers; control characters, invalid
// UTF-8, U+2028, HTML characters; floats at the format switches); both
// refuse NaN and ±Inf.
func TestAppendJSONMatchesEncodingJSON(t *testing.T) {
	p := NewPipeline(8192)
	n := 0
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
				checkAppendJSON(t, &res, name)
				n++
			}
		}
	}
	if n < 4 {
		t.Fatalf("only %d real results compared", n)
	}
	r := rand.New(rand.NewPCG(5, 24333))
	for i := range 3000 {
		var res Result
		fillRandom(r, reflect.ValueOf(&res).Elem(), 0)
		checkAppendJSON(t, &res, fmt.Sprintf("random result %d", i))
	}
	var res Result
	res.NoiseSigma = math.NaN()
	if _, err := AppendJSON(nil, &res); err == nil {
		t.Error("AppendJSON accepted NaN")
	}
	if !utf8.ValidString(string(appendJSONString(nil, "bad \xff"))) {
		t.Error("invalid UTF-8 written through")
	}
}

func benchResult(b *testing.B) Result {
	sp, tr := loadScipy(b, "bench_2048")
	res, err := NewPipeline(4096).Analyze(sp, Options{MaxUpper: 6,
		Conditions: diag.Measurement{InstrumentGaussFWHMNM: tr.Inst, GasTemperatureK: tr.Tg}})
	if err != nil {
		b.Fatal(err)
	}
	return res
}

// BenchmarkAppendJSON encodes the benchmark spectrum's result.
func BenchmarkAppendJSON(b *testing.B) {
	res := benchResult(b)
	buf := make([]byte, 0, 1<<16)
	b.ReportAllocs()
	for b.Loop() {
		var err error
		if buf, err = AppendJSON(buf[:0], &res); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkEncodingJSON is BenchmarkAppendJSON through encoding/json.
func BenchmarkEncodingJSON(b *testing.B) {
	res := benchResult(b)
	var buf bytes.Buffer
	enc := json.NewEncoder(&buf)
	enc.SetEscapeHTML(false)
	b.ReportAllocs()
	for b.Loop() {
		buf.Reset()
		if err := enc.Encode(&res); err != nil {
			b.Fatal(err)
		}
	}
}

// TestAppendJSONFloatMatches: appendJSONFloat writes encoding/json's
// bytes for integers (its fast path), −0, the 'e' range edges and
// random values of every magnitude.
// float32ToFloat is v rounded to float32 (fewer shortest digits).
func float32ToFloat(v float64) float64 { return float64(float32(v)) }

func TestAppendJSONFloatMatches(t *testing.T) {
	vals := []float64{0, math.Copysign(0, -1), 1, -1, 2, 7, -42, 1e6, 1e15, 1e20, 1e21, 1e22, 123456789012345,
		1 << 53, 1<<53 + 2, -(1 << 53), 1<<53 - 1, 0.5, -0.5, 1e-6, 1e-7, 9.999999e-7, 2.5e-300, 5e-324,
		math.MaxFloat64, -math.MaxFloat64, 4503599627370495.5, 11242.972725906215}
	r := rand.New(rand.NewPCG(1, 2))
	for range 20000 {
		v := math.Float64frombits(r.Uint64())
		if math.IsNaN(v) || math.IsInf(v, 0) {
			continue
		}
		vals = append(vals, v, math.Trunc(v), math.Round(v*1e3)/1e3, float64(r.Int64N(1<<54)-1<<53))
	}
	// The 'f' form (1e-6 ≤ |v| < 1e21, not an integer below 2⁵³) with
	// every number of digits and every place of the decimal point, and
	// its ends.
	for range 100000 {
		e := math.Pow(10, float64(r.IntN(28)-6))
		v := (r.Float64() - 0.5) * 20 * e
		vals = append(vals, v, math.Round(v*1e4)/1e4, math.Round(v/e*1e3)*e/1e3, float32ToFloat(v))
	}
	for _, v := range []float64{1e-6, math.Nextafter(1e-6, 1), 1.5e-6, 0.1, 0.25, 1e20 + 1<<17, 1e21 - 1<<17, math.Nextafter(1e21, 0), 9.999999999999999e20, 123.456, 1 << 53 * 1.5} {
		vals = append(vals, v, -v)
	}
	for _, v := range vals {
		if math.IsInf(v, 0) {
			continue // v·1e3 overflowed
		}
		got, err := appendJSONFloat(nil, v)
		want, werr := json.Marshal(v)
		if err != nil || werr != nil || string(got) != string(want) {
			t.Fatalf("appendJSONFloat(%v) = %q, %v; encoding/json %q, %v", v, got, err, want, werr)
		}
	}
}
