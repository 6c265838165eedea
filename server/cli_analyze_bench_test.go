package server

import (
	"io"
	"os"
	"path/filepath"
	"testing"
)

// BenchmarkAnalyzeFiles is the command-line path of .ci/bench in one
// process: glowlog analyze over 100 copies of the 2048-pixel benchmark
// spectrum, Hα–Hδ, output discarded. One op is one file. Profile it with
//
//	go test ./server/ -run '^$' -bench AnalyzeFiles -cpu 1 -cpuprofile cpu.out
func BenchmarkAnalyzeFiles(b *testing.B) {
	src, err := os.ReadFile("../testdata/spectra/scipy_bench_2048.csv")
	if err != nil {
		b.Fatal(err)
	}
	dir := b.TempDir()
	args := []string{"--instrument-fwhm-nm", "0.35", "--gas-temperature-K", "1000", "--max-upper", "6"}
	const files = 100
	for i := range files {
		f := filepath.Join(dir, "s"+string(rune('a'+i/26))+string(rune('a'+i%26))+".csv")
		if err := os.WriteFile(f, src, 0o644); err != nil {
			b.Fatal(err)
		}
		args = append(args, f)
	}
	b.ReportAllocs()
	for b.Loop() {
		if code := AnalyzeCommand(args, nil, io.Discard, io.Discard); code != ExitOK {
			b.Fatalf("exit %d", code)
		}
	}
	b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N*files), "ns/file")
}
