package server

import (
	"bytes"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"testing"

	"glowlog/diag"
	"glowlog/diag/spectrum"
)

// TestEncodeSpectrumResultSameBytes checks that the stored JSON of a
// spectrum result, written with the windows' series appended by hand, is
// byte for byte what json.Encoder writes, for every spectrum in
// testdata/spectra and a sample of testdata/sh99synth, and for series with
// NaN, ±Inf, tiny, huge and negative values and windows without lines.
func TestEncodeSpectrumResultSameBytes(t *testing.T) {
	files, _ := filepath.Glob("../testdata/spectra/*.csv")
	more, _ := filepath.Glob("../testdata/sh99synth/*_t1.csv")
	files = append(files, more...)
	if len(files) < 5 {
		t.Fatalf("only %d test spectra found", len(files))
	}
	p := spectrum.NewPipeline(8192)
	withWindows := 0
	for _, f := range files {
		data, err := os.ReadFile(f)
		if err != nil {
			t.Fatal(err)
		}
		sp, err := ReadCurve(filepath.Base(f), data, CurveOptions{}, nil)
		if err != nil {
			t.Fatal(err)
		}
		opt := spectrum.Options{Conditions: diag.Measurement{InstrumentGaussFWHMNM: 0.05, GasTemperatureK: 1000}, KeepWindows: true}
		r, err := p.Analyze(sp, opt)
		if err != nil {
			continue // no result to store
		}
		if len(r.Windows) > 0 {
			withWindows++
		}
		sameEncoding(t, filepath.Base(f), &r)
		// odd values in the series and a window without lines
		odd := r
		odd.Windows = append([]spectrum.Window(nil), r.Windows...)
		odd.Windows = append(odd.Windows, spectrum.Window{
			WavelengthNM: spectrum.PlotFloats{math.NaN(), math.Inf(1), math.Inf(-1), 0, -0.0, 1e-300, -1.2345678901e22, 5e-324},
			Data:         spectrum.PlotFloats{}, Model: nil, Residual: spectrum.PlotFloats{math.MaxFloat64, 123456789012},
		})
		sameEncoding(t, filepath.Base(f)+" (odd values)", &odd)
	}
	if withWindows < 5 {
		t.Fatalf("only %d results with windows: the fast path was hardly tested", withWindows)
	}
	// no windows at all: the plain path
	sameEncoding(t, "no windows", &spectrum.Result{Source: "x"})
}

func sameEncoding(t *testing.T, name string, r *spectrum.Result) {
	t.Helper()
	var want, got bytes.Buffer
	if err := encodePlain(&want, r); err != nil {
		t.Fatal(err)
	}
	if err := encodeSpectrumResult(&got, r); err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(want.Bytes(), got.Bytes()) {
		i := 0
		for i < min(want.Len(), got.Len()) && want.Bytes()[i] == got.Bytes()[i] {
			i++
		}
		t.Errorf("%s: the encodings differ at byte %d of %d/%d:\nwant …%.120s\n got …%.120s", name, i, want.Len(), got.Len(),
			want.Bytes()[max(0, i-40):], got.Bytes()[max(0, i-40):])
	}
}

// BenchmarkEncodeSpectrumResult compares the stored JSON's encoding of the
// 2048-pixel bench spectrum's result: encoding/json (plain) and the
// generated encoder (fast).
//
//	go test ./server/ -run '^$' -bench EncodeSpectrumResult
func BenchmarkEncodeSpectrumResult(b *testing.B) {
	data, err := os.ReadFile("../testdata/spectra/scipy_bench_2048.csv")
	if err != nil {
		b.Fatal(err)
	}
	sp, err := ReadCurve("bench.csv", data, CurveOptions{}, nil)
	if err != nil {
		b.Fatal(err)
	}
	r, err := spectrum.NewPipeline(8192).Analyze(sp, spectrum.Options{
		Conditions: diag.Measurement{InstrumentGaussFWHMNM: 0.35, GasTemperatureK: 1000}, KeepWindows: true})
	if err != nil {
		b.Fatal(err)
	}
	for _, c := range []struct {
		name string
		enc  func(*bytes.Buffer, *spectrum.Result) error
	}{{"plain", func(buf *bytes.Buffer, r *spectrum.Result) error { return encodePlain(buf, r) }}, {"fast", encodeSpectrumResult}} {
		b.Run(c.name, func(b *testing.B) {
			var buf bytes.Buffer
			for b.Loop() {
				buf.Reset()
				if err := c.enc(&buf, &r); err != nil {
					b.Fatal(err)
				}
			}
			b.SetBytes(int64(buf.Len()))
		})
	}
}

// BenchmarkEncodeStored: a whole-route result of the bench Stark spectra
// encoded as bulk reanalysis stores it (encode: the placeholder JSON and
// the series form) and as an API upload answers it (encodeAnswer: the
// whole JSON too, its buffer put back as the answer's writer does), with
// the allocations; cpu-ns/op is the process's CPU time per result.
//
//	go test ./server/ -run '^$' -bench EncodeStored
func BenchmarkEncodeStored(b *testing.B) {
	sp, err := ReadCurve("s.csv", benchStarkSpectra(b, 1)[0], CurveOptions{}, nil)
	if err != nil {
		b.Fatal(err)
	}
	r, err := spectrum.NewPipeline(8192).Analyze(sp, spectrum.Options{KeepWindows: true,
		Conditions: diag.Measurement{InstrumentGaussFWHMNM: benchRunFWHM, GasTemperatureK: benchRunTgas}})
	if err != nil || r.Whole == nil {
		b.Fatalf("no whole fit: %v", err)
	}
	for _, answer := range []bool{false, true} {
		b.Run(fmt.Sprintf("answer=%v", answer), func(b *testing.B) {
			b.ReportAllocs()
			c0 := cpuTime()
			for b.Loop() {
				ra := RunAnalysis{Spectrum: &r}
				if answer {
					if err := ra.encodeAnswer(); err != nil {
						b.Fatal(err)
					}
					a := ra.answer[:0]
					resultBufPool.Put(&a)
				} else if err := ra.encode(); err != nil {
					b.Fatal(err)
				}
			}
			b.ReportMetric(float64(cpuTime()-c0)/float64(b.N), "cpu-ns/op")
		})
	}
}
