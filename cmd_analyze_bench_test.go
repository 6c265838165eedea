package main

import (
	"io"
	"os"
	"path/filepath"
	"testing"
)

// BenchmarkAnalyzeFiles is the command-line path of .ci/bench in one
// process: glowlog analyze over 100 copies of the 2048-pixel benchmark
// spectrum, Hα–Hδ, output discarded, by the line-by-line route (lines:
// the route of .ci/bench's ratio) and the default route (default). One op
// is one batch of 100 files. Profile it with
//
//	go test . -run '^$' -bench AnalyzeFiles/lines -cpu 1 -cpuprofile cpu.out
func BenchmarkAnalyzeFiles(b *testing.B) {
	src, err := os.ReadFile("testdata/spectra/scipy_bench_2048.csv")
	if err != nil {
		b.Fatal(err)
	}
	dir := b.TempDir()
	args := []string{"--instrument-fwhm-nm", "0.35", "--gas-temperature-K", "1000", "--max-upper", "6"}
	const files = 100
	var names []string
	for i := range files {
		f := filepath.Join(dir, "s"+string(rune('a'+i/26))+string(rune('a'+i%26))+".csv")
		if err := os.WriteFile(f, src, 0o644); err != nil {
			b.Fatal(err)
		}
		names = append(names, f)
	}
	for _, route := range []struct{ name, flag string }{{"lines", "--model=lines"}, {"default", ""}} {
		b.Run(route.name, func(b *testing.B) {
			a := append([]string(nil), args...)
			if route.flag != "" {
				a = append(a, route.flag)
			}
			a = append(a, names...)
			b.ReportAllocs()
			for b.Loop() {
				if code := AnalyzeCommand(a, nil, io.Discard, io.Discard); code != ExitOK {
					b.Fatalf("exit %d", code)
				}
			}
			b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N*files), "ns/file")
		})
	}
}
