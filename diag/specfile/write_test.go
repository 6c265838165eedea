package specfile

import (
	"bytes"
	"flag"
	"math"
	"math/rand/v2"
	"os"
	"slices"
	"strings"
	"testing"
)

var update = flag.Bool("update", false, "rewrite the generated testdata/bench_2048.* files")

// syntheticHAlpha returns an invented 2048-point H-alpha scan: a
// Lorentzian of 5000 counts peak and 0.12 nm half width at 656.28 nm on a
// 200-count background, with seeded Poisson-like noise, sampled every
// 0.01 nm from 650 nm. Counts are whole numbers.
func syntheticHAlpha() *Spectrum {
	const n = 2048
	rng := rand.New(rand.NewPCG(1, 2))
	sp := &Spectrum{X: make([]float64, n), Y: make([]float64, n), XUnit: NM, YUnit: "COUNTS",
		Title: "Fenwick Hollow Plasma Lab, synthetic H-alpha", Meta: map[string]string{"integration_ms": "100"}}
	for i := range n {
		x := math.Round((650+0.01*float64(i))*100) / 100
		d := (x - 656.28) / 0.12
		mean := 200 + 5000/(1+d*d)
		sp.X[i] = x
		sp.Y[i] = math.Max(0, math.Round(mean+math.Sqrt(mean)*rng.NormFloat64()))
	}
	return sp
}

// TestBenchFiles checks the generated files used by the benchmarks and
// fuzz seeds against the writers' output (golden files; regenerate with
// go test -run TestBenchFiles -update).
func TestBenchFiles(t *testing.T) {
	sp := syntheticHAlpha()
	for _, c := range []struct {
		file  string
		write func(*bytes.Buffer) error
	}{
		{"bench_2048.csv", func(b *bytes.Buffer) error { return WriteCSV(b, sp) }},
		{"bench_2048.jdx", func(b *bytes.Buffer) error { return WriteJCAMP(b, sp) }},
	} {
		var b bytes.Buffer
		if err := c.write(&b); err != nil {
			t.Fatal(err)
		}
		if *update {
			if err := os.WriteFile("testdata/"+c.file, b.Bytes(), 0o644); err != nil {
				t.Fatal(err)
			}
		}
		if got := readTestdata(t, c.file); !bytes.Equal(got, b.Bytes()) {
			t.Errorf("testdata/%s differs from the writer's output; run go test -run TestBenchFiles -update if the change is intended", c.file)
		}
	}
}

// roundTripSpectra are the spectra the writers must reproduce.
func roundTripSpectra(t *testing.T) map[string]*Spectrum {
	t.Helper()
	out := map[string]*Spectrum{"synthetic": syntheticHAlpha()}
	for _, tt := range sampleTests {
		sp, err := Read(tt.file, bytes.NewReader(readTestdata(t, tt.file)), Options{})
		if err != nil {
			t.Fatal(err)
		}
		out[tt.file] = sp
	}
	// Uneven X, fractional Y spanning orders of magnitude.
	rng := rand.New(rand.NewPCG(3, 4))
	uneven := &Spectrum{XUnit: Angstrom, YUnit: "W m-2 sr-1 nm-1", Meta: map[string]string{}}
	x := 4000.0
	for range 300 {
		x += 0.1 + rng.Float64()
		uneven.X = append(uneven.X, x)
		uneven.Y = append(uneven.Y, (rng.Float64()-0.2)*math.Pow(10, 6*rng.Float64()-3))
	}
	out["uneven"] = uneven
	// Even X with fractional Y: compressed with YFACTOR < 1.
	frac := &Spectrum{XUnit: WavenumberPerCM, Meta: map[string]string{}}
	for i := range 100 {
		frac.X = append(frac.X, 15000+2.5*float64(i))
		frac.Y = append(frac.Y, 0.001*math.Sin(float64(i))+1e-4)
	}
	out["fractional"] = frac
	return out
}

func TestRoundTripCSV(t *testing.T) {
	for name, sp := range roundTripSpectra(t) {
		var b bytes.Buffer
		if err := WriteCSV(&b, sp); err != nil {
			t.Fatal(err)
		}
		got, err := ReadText(name+".csv", &b, TextOptions{})
		if err != nil {
			t.Fatalf("%s: %v", name, err)
		}
		// Shortest round-trip formatting: exact.
		if !slices.Equal(got.X, sp.X) || !slices.Equal(got.Y, sp.Y) {
			t.Errorf("%s: values changed", name)
		}
		if got.XUnit != sp.XUnit || got.YUnit != sp.YUnit || got.Title != sp.Title {
			t.Errorf("%s: XUnit, YUnit, Title = %v, %q, %q; want %v, %q, %q", name, got.XUnit, got.YUnit, got.Title, sp.XUnit, sp.YUnit, sp.Title)
		}
	}
}

func TestRoundTripJCAMP(t *testing.T) {
	for name, sp := range roundTripSpectra(t) {
		var b bytes.Buffer
		if err := WriteJCAMP(&b, sp); err != nil {
			t.Fatal(err)
		}
		text := b.String()
		for i, l := range strings.Split(text, "\n") {
			if len(l) > jcampLineLen {
				t.Errorf("%s: line %d has %d > 80 characters", name, i+1, len(l))
			}
		}
		got, err := ReadJCAMP(name+".jdx", &b)
		if err != nil {
			t.Fatalf("%s: %v\n%s", name, err, text)
		}
		if len(got.X) != len(sp.X) {
			t.Fatalf("%s: %d points, want %d", name, len(got.X), len(sp.X))
		}
		n := len(sp.X)
		step := (sp.X[n-1] - sp.X[0]) / float64(n-1)
		maxAbs := 0.0
		for _, y := range sp.Y {
			maxAbs = math.Max(maxAbs, math.Abs(y))
		}
		whole := !strings.Contains(text, "##YFACTOR=1E")
		for i := range sp.X {
			// XYDATA X is recomputed from FIRSTX/LASTX: within 1e-6 step
			// by the writer's evenness test (exact for XYPOINTS).
			// Whole-number Y are exact; scaled ones within YFACTOR/2 ≤
			// 5e-10 max|y|, plus rounding in the division.
			ytol := 0.0
			if !whole {
				ytol = 1e-9 * maxAbs
			}
			if !closeTo(got.X[i], sp.X[i], 1e-6*math.Abs(step)) || !closeTo(got.Y[i], sp.Y[i], ytol) {
				t.Fatalf("%s: point %d = (%v, %v), want (%v, %v)", name, i, got.X[i], got.Y[i], sp.X[i], sp.Y[i])
			}
		}
		if got.XUnit != sp.XUnit {
			t.Errorf("%s: XUnit = %v, want %v", name, got.XUnit, sp.XUnit)
		}
		if sp.YUnit != "" && got.YUnit != sp.YUnit {
			t.Errorf("%s: YUnit = %q, want %q", name, got.YUnit, sp.YUnit)
		}
		if sp.Title != "" && got.Title != sp.Title {
			t.Errorf("%s: Title = %q, want %q", name, got.Title, sp.Title)
		}
	}
}

func TestWriteJCAMPForms(t *testing.T) {
	sp := syntheticHAlpha()
	var b bytes.Buffer
	if err := WriteJCAMP(&b, sp); err != nil {
		t.Fatal(err)
	}
	out := b.String()
	for _, want := range []string{
		"##TITLE=Fenwick Hollow Plasma Lab, synthetic H-alpha\n##JCAMP-DX=5.01\n##DATA TYPE=UV/VIS SPECTRUM\n",
		"##$INTEGRATION_MS=100\n", "##XUNITS=NANOMETERS\n", "##YFACTOR=1\n", "##NPOINTS=2048\n",
		"##XYDATA=(X++(Y..Y))\n", "##END=\n",
	} {
		if !strings.Contains(out, want) {
			t.Errorf("output lacks %q", want)
		}
	}
	// A flat run must use DUP: 0,0,0,0 → "@" then "%" with DUP 3 ("U").
	flat := &Spectrum{X: []float64{1, 2, 3, 4, 5, 6, 7, 8}, Y: []float64{0, 0, 0, 0, 5, 3, 3, 1}}
	b.Reset()
	if err := WriteJCAMP(&b, flat); err != nil {
		t.Fatal(err)
	}
	// 0 →%U (three zero differences) → +5 N → −2 k → 0 % → −2 k; check line 8A1.
	if want := "\n1 @%UNk%k\n8 A\n"; !strings.Contains(b.String(), want) {
		t.Errorf("flat spectrum encoded as\n%s\nwant data %q", b.String(), want)
	}
	uneven := &Spectrum{X: []float64{1, 2, 4, 8, 16, 32, 64, 128}, Y: make([]float64, 8)}
	b.Reset()
	if err := WriteJCAMP(&b, uneven); err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(b.String(), "##XYPOINTS=(XY..XY)\n1, 0\n2, 0\n4, 0\n") {
		t.Errorf("uneven spectrum encoded as\n%s", b.String())
	}
}

func TestWriteErrors(t *testing.T) {
	for _, sp := range []*Spectrum{
		{},
		{X: []float64{1, math.NaN()}, Y: []float64{1, 2}},
		{X: []float64{1, 2}, Y: []float64{1, math.Inf(1)}},
	} {
		if err := WriteCSV(&bytes.Buffer{}, sp); err == nil {
			t.Errorf("WriteCSV(%v): no error", sp)
		}
		if err := WriteJCAMP(&bytes.Buffer{}, sp); err == nil {
			t.Errorf("WriteJCAMP(%v): no error", sp)
		}
	}
	defer func() {
		if r := recover(); r == nil {
			t.Error("WriteCSV with len(X) != len(Y) did not panic")
		}
	}()
	WriteCSV(&bytes.Buffer{}, &Spectrum{X: []float64{1}})
}

func TestJCAMPKey(t *testing.T) {
	for k, want := range map[string]string{
		"DATA TYPE": "DATA TYPE", "$INTEGRATION TIME": "$INTEGRATION TIME",
		"integration_ms": "$INTEGRATION_MS", "slit µm": "$SLIT__M", "A$B": "$A_B",
	} {
		if got := jcampKey(k); got != want {
			t.Errorf("jcampKey(%q) = %q, want %q", k, got, want)
		}
	}
}

// TestRoundTripJCAMPExtremes covers magnitudes where YFACTOR scaling or the
// FIRSTX/LASTX interpolation could lose precision; the writer must then
// fall back to exact XYPOINTS, and every case must read back within the
// documented 1e-9 max|y|.
func TestRoundTripJCAMPExtremes(t *testing.T) {
	mk := func(f func(i float64) (x, y float64)) *Spectrum {
		sp := &Spectrum{Meta: map[string]string{}}
		for i := range 10 {
			x, y := f(float64(i))
			sp.X, sp.Y = append(sp.X, x), append(sp.Y, y)
		}
		return sp
	}
	cases := map[string]*Spectrum{
		"subnormal y":      mk(func(i float64) (float64, float64) { return i, 1e-320*(i+1) + 5e-324 }),
		"subnormal steps":  mk(func(i float64) (float64, float64) { return i, 1.5e-310 * i }),
		"huge y":           mk(func(i float64) (float64, float64) { return i, 1.7e308 * math.Mod(i, 2) }),
		"huge negative y":  mk(func(i float64) (float64, float64) { return i, -1.7e308 + i*1e300 }),
		"huge whole y":     mk(func(i float64) (float64, float64) { return i, 9e18 * math.Mod(i, 3) }),
		"2^53 whole y":     mk(func(i float64) (float64, float64) { return i, 1<<53 - i }),
		"x span overflows": mk(func(i float64) (float64, float64) { return 1.7e308 * (i/4.5 - 1), 1 }),
		"x step near ulp":  mk(func(i float64) (float64, float64) { return 1e15 + i*0.125, 1 }),
		"y over 600 decades": mk(func(i float64) (float64, float64) {
			return i, []float64{1e-300, 1e300, 0.5, -3, 7, 8, 9, 10, 11, 12}[int(i)]
		}),
	}
	for name, sp := range cases {
		var b bytes.Buffer
		if err := WriteJCAMP(&b, sp); err != nil {
			t.Fatalf("%s: %v", name, err)
		}
		text := b.String()
		back, err := ReadJCAMP(name, &b)
		if err != nil {
			t.Fatalf("%s: %v\n%s", name, err, text)
		}
		maxAbs := 0.0
		for _, y := range sp.Y {
			maxAbs = math.Max(maxAbs, math.Abs(y))
		}
		for i := range sp.Y {
			if !closeTo(back.Y[i], sp.Y[i], 1e-9*maxAbs) || !closeTo(back.X[i], sp.X[i], 1e-6*math.Abs(sp.X[1]-sp.X[0])) {
				t.Errorf("%s: point %d = (%v, %v), want (%v, %v)\n%s", name, i, back.X[i], back.Y[i], sp.X[i], sp.Y[i], text)
				break
			}
		}
	}
}
