package spectrum

import (
	"math"
	"math/rand/v2"
	"slices"
	"sort"
	"testing"
)

// TestIndexMatchesSearchFloat64s: index is sort.SearchFloat64s for every
// length from 0, duplicates, ±Inf and ±0 in x, and v below, between, on,
// above the values, ±Inf and NaN.
func TestIndexMatchesSearchFloat64s(t *testing.T) {
	rng := rand.New(rand.NewPCG(11, 13))
	for trial := range 3000 {
		n := trial % 70
		x := make([]float64, n)
		for i := range x {
			switch rng.IntN(12) {
			case 0:
				x[i] = math.Inf(1 - 2*rng.IntN(2))
			case 1:
				x[i] = math.Copysign(0, -1)
			case 2, 3:
				x[i] = float64(rng.IntN(5)) // duplicates
			default:
				x[i] = 380 + 320*rng.Float64()
			}
		}
		slices.Sort(x)
		vs := []float64{math.NaN(), math.Inf(1), math.Inf(-1), 0, math.Copysign(0, -1), 1000, -1}
		for range 10 {
			vs = append(vs, 370+340*rng.Float64())
		}
		for _, v := range x {
			vs = append(vs, v, math.Nextafter(v, math.Inf(1)), math.Nextafter(v, math.Inf(-1)))
		}
		for _, v := range vs {
			if got, want := index(x, v), sort.SearchFloat64s(x, v); got != want {
				t.Fatalf("x %v, v %v: index %d, SearchFloat64s %d", x, v, got, want)
			}
		}
	}
}
