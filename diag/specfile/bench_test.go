package specfile

import (
	"bytes"
	"fmt"
	"os"
	"testing"
)

// The benchmark inputs are the 2048-point golden files checked by
// TestBenchFiles; they are read once, outside the timed loop.

func BenchmarkReadText(b *testing.B) {
	data := readTestdata(b, "bench_2048.csv")
	b.SetBytes(int64(len(data)))
	b.ReportAllocs()
	for b.Loop() {
		if _, err := ReadText("bench_2048.csv", bytes.NewReader(data), TextOptions{}); err != nil {
			b.Fatal(err)
		}
	}
}

func BenchmarkReadJCAMP(b *testing.B) {
	data := readTestdata(b, "bench_2048.jdx")
	b.SetBytes(int64(len(data)))
	b.ReportAllocs()
	for b.Loop() {
		if _, err := ReadJCAMP("bench_2048.jdx", bytes.NewReader(data)); err != nil {
			b.Fatal(err)
		}
	}
}

func BenchmarkWriteJCAMP(b *testing.B) {
	sp := syntheticHAlpha()
	var buf bytes.Buffer
	b.ReportAllocs()
	for b.Loop() {
		buf.Reset()
		if err := WriteJCAMP(&buf, sp); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkReadTextScipy2048 reads the file of .ci/bench (2048 lines of
// "380.156326,8.40393": six-decimal wavelengths, five-digit counts).
func BenchmarkReadTextScipy2048(b *testing.B) {
	data, err := os.ReadFile("../../testdata/spectra/scipy_bench_2048.csv")
	if err != nil {
		b.Fatal(err)
	}
	b.SetBytes(int64(len(data)))
	b.ReportAllocs()
	for b.Loop() {
		if _, err := ReadText("scipy_bench_2048.csv", bytes.NewReader(data), TextOptions{}); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkReadBytesScipy2048 reads the same file as glowlog analyze does
// in a batch: from bytes in memory into reused point arrays.
func BenchmarkReadBytesScipy2048(b *testing.B) {
	data, err := os.ReadFile("../../testdata/spectra/scipy_bench_2048.csv")
	if err != nil {
		b.Fatal(err)
	}
	var buf Buffers
	b.SetBytes(int64(len(data)))
	b.ReportAllocs()
	for b.Loop() {
		if _, err := ReadBytes("scipy_bench_2048.csv", data, Options{}, &buf); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkReadBytesForms reads 2048-row files as ReadBytesScipy2048
// does, in the row forms spectrometer exports commonly use: whole-number
// counts ("656.2800,1234"), and the same with "\r\n" line ends.
func BenchmarkReadBytesForms(b *testing.B) {
	for _, form := range []struct{ name, eol string }{{"counts", "\n"}, {"counts-crlf", "\r\n"}} {
		var f bytes.Buffer
		f.WriteString("wavelength_nm,counts" + form.eol)
		for i := range 2048 {
			fmt.Fprintf(&f, "%.4f,%d%s", 380+0.1563*float64(i), 300+(i*7919)%4000, form.eol)
		}
		data := f.Bytes()
		b.Run(form.name, func(b *testing.B) {
			var buf Buffers
			b.SetBytes(int64(len(data)))
			b.ReportAllocs()
			for b.Loop() {
				if _, err := ReadBytes("counts.csv", data, Options{}, &buf); err != nil {
					b.Fatal(err)
				}
			}
		})
	}
}
