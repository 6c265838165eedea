package spectrum

import (
	"math"
	"testing"
)

// TestPixelCountsFastPath: the preprocessing loop's path for raw counts
// without a dark spectrum gives the error of the general path (taken
// here with a dark spectrum of zeros, which changes no value) for a
// pixel whose counts per nm overflow — the first, an inner one and the
// last — and the same result for good data.
func TestPixelCountsFastPath(t *testing.T) {
	const n = 40
	x := make([]float64, n)
	for i := range x {
		x[i] = 600 + 0.25*float64(i)
	}
	run := func(counts []float64, dark bool) (Result, error) {
		sp := &Spectrum{Name: "t.csv", WavelengthNM: x, Counts: counts}
		var opt Options
		if dark {
			opt.Dark = &Spectrum{Name: "d.csv", WavelengthNM: x, Counts: make([]float64, n)}
		}
		return NewPipeline(256).Analyze(sp, opt)
	}
	for _, bad := range []int{0, 1, 17, n - 2, n - 1} {
		counts := make([]float64, n)
		for i := range counts {
			counts[i] = 100 + float64(i%3)
		}
		counts[bad] = math.MaxFloat64
		_, errFast := run(counts, false)
		_, errGen := run(counts, true)
		if errFast == nil || errGen == nil || errFast.Error() != errGen.Error() {
			t.Errorf("bad pixel %d: fast path %v, general path %v", bad, errFast, errGen)
		}
	}
	counts := make([]float64, n)
	for i := range counts {
		counts[i] = 100 + float64(i%3)
	}
	r1, err1 := run(counts, false)
	r2, err2 := run(counts, true)
	if (err1 == nil) != (err2 == nil) || r1.NoiseSigma != r2.NoiseSigma {
		t.Errorf("good data: fast path (%v, noise %v), general path (%v, noise %v)", err1, r1.NoiseSigma, err2, r2.NoiseSigma)
	}
}
