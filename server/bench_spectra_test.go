package server

import (
	"encoding/json"
	"fmt"
	"math/rand/v2"
	"os"
	"testing"

	"glowlog/diag/spectrum"
	"glowlog/store"
)

// benchRoute is one analysis route the ingest and bulk reanalysis
// benchmarks time: the files each upload or run carries and the settings
// field that picks the route.
type benchRoute struct {
	// name is the sub-benchmark's route=… label.
	name string
	// files are the spectra (CSV) uploaded in turn: a batch of 20 carries
	// them all, one file per request cycles through them.
	files [][]byte
	// lineShape is the settings' line_shape ("" is the default, Stark).
	lineShape string
	// model is the route the stored results must say (Result.Model).
	model string
}

// benchRoutes are the two routes of the ingest and reanalysis benchmarks:
//
//   - whole: Stark-shaped spectra (spectrum.SynthesizeStark through the
//     demo's demoSpectrum: SH99 shapes, shot and read noise) with the
//     default settings, which take the default route for Stark-shaped
//     lines (spectrum.DefaultRoute): the whole-spectrum fit. This is what
//     an instrument of a real discharge uploads.
//   - lines: the Voigt-shaped bench spectrum (testdata/spectra/
//     scipy_bench_2048.csv) declared Voigt (line_shape voigt), which the
//     default route analyses line by line.
//
// Both are 2048-pixel spectra over 380–700 nm analysed with an
// instrument FWHM of 0.35 nm and a gas temperature of 1000 K (the
// benchmarks' run conditions, benchRunFWHM and benchRunTgas).
func benchRoutes(b testing.TB) []benchRoute {
	voigt, err := os.ReadFile("../testdata/spectra/scipy_bench_2048.csv")
	if err != nil {
		b.Fatal(err)
	}
	return []benchRoute{
		{name: "whole", files: benchStarkSpectra(b, 20), model: spectrum.ModelWhole},
		{name: "lines", files: [][]byte{voigt}, lineShape: spectrum.LineShapeVoigt, model: spectrum.ModelLines},
	}
}

const (
	benchRunFWHM = 0.35   // instrument FWHM of the benchmarks' runs, nm
	benchRunTgas = 1000.0 // gas temperature of the benchmarks' runs, K
)

// benchStarkSpectra returns n Stark-shaped 2048-pixel spectra (380–700
// nm, Hα–H10 as on the demo's survey spectrograph) of a microwave-torch
// like plasma, each with its own n_e, T_exc and noise, as the demo makes
// them (demoSpectrum, demoCSV).
func benchStarkSpectra(b testing.TB, n int) [][]byte {
	const npx = 2048
	grid := make([]float64, npx)
	for i := range grid {
		grid[i] = 380 + 320*float64(i)/(npx-1)
	}
	rng := rand.New(rand.NewPCG(11, 2026))
	out := make([][]byte, n)
	for k := range out {
		y, err := demoSpectrum(rng, grid, spectrum.SynthConfig{WavelengthNM: grid, Uppers: demoSurveyUppers,
			ExcitationTemperatureK: 7000 * (1 + 0.04*rng.NormFloat64()), ElectronDensityM3: 3e21 * (1 + 0.05*rng.NormFloat64()),
			GasTemperatureK: benchRunTgas, InstrumentFWHMNM: benchRunFWHM, HalphaArea: 1})
		if err != nil {
			b.Fatal(err)
		}
		out[k] = demoCSV(grid, y)
	}
	return out
}

// checkBenchModel fails b unless every result of an ingest answer (out,
// the measurements' JSON) was produced by the route rt names: a benchmark
// of one route must not silently time the other.
func checkBenchModel(b *testing.B, rt benchRoute, out []byte) {
	var ans struct {
		Measurements []struct {
			Model string `json:"model"`
		} `json:"measurements"`
		Model *string `json:"model"`
	}
	if err := json.Unmarshal(out, &ans); err != nil {
		b.Fatalf("route %s: answer: %v: %.300s", rt.name, err, out)
	}
	var models []string
	if ans.Model != nil {
		models = append(models, *ans.Model)
	}
	for _, m := range ans.Measurements {
		models = append(models, m.Model)
	}
	if len(models) == 0 {
		b.Fatalf("route %s: no result in the answer: %.300s", rt.name, out)
	}
	for _, m := range models {
		if m == "" {
			m = spectrum.ModelLines
		}
		if m != rt.model {
			b.Fatalf("route %s: a result of route %q: %.300s", rt.name, m, out)
		}
	}
}

// benchSettingsJSON is the settings of a benchmark run's earlier version
// for route rt (what a bulk reanalysis starts from).
func benchSettingsJSON(rt benchRoute) string {
	st := AnalysisSettings{InstrumentFWHMNM: benchRunFWHM, GasTemperatureK: benchRunTgas, LineShape: rt.lineShape}
	js, err := json.Marshal(st)
	if err != nil {
		panic(fmt.Sprint("bench settings: ", err))
	}
	return string(js)
}

// reportWrites reports bytes and calls, the write system calls of the
// timed part (procio.Writes' differences), per spectrum:
// written-kB/spectrum and write-calls/spectrum (the database's WAL,
// checkpoints and journals; in the ingest benchmark also the HTTP
// requests and answers). Unlike the times they do not depend on the
// machine's load.
func reportWrites(b *testing.B, bytes, calls int64, n float64) {
	if bytes > 0 {
		b.ReportMetric(float64(bytes)/1024/n, "written-kB/spectrum")
		b.ReportMetric(float64(calls)/n, "write-calls/spectrum")
	}
}

// reportCheckpoints reports the writer's share of the WAL checkpoints
// (store/checkpoint.go) over n spectra: restart-ms/spectrum is the time
// the writer spent in RESTART checkpoints, restarts-failed how many of
// them ran out of time waiting for readers.
func reportCheckpoints(b *testing.B, db *store.DB, n float64) {
	cs := db.CheckpointStats()
	b.ReportMetric(cs.RestartTime.Seconds()*1000/n, "restart-ms/spectrum")
	b.ReportMetric(float64(cs.RestartFails), "restarts-failed")
}
