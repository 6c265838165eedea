package store

import (
	"bytes"
	"cmp"
	"math"
	"math/rand/v2"
	"slices"
	"testing"
)

// TestFoldScan: the anchored search finds the first match of a word
// (ASCII letters in either case) as a plain search of the lowered text
// does, over random texts of a small alphabet (many near matches), for
// every anchor byte, and a pass of successive finds visits every match.
func TestFoldScan(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 5))
	alpha := []byte("aAbB9 %\x00é")
	rnd := func(n int) []byte {
		b := make([]byte, n)
		for i := range b {
			b[i] = alpha[rng.IntN(len(alpha))]
		}
		return b
	}
	lower := func(b []byte) []byte {
		out := make([]byte, len(b))
		for i, c := range b {
			out[i] = lowerASCII(c)
		}
		return out
	}
	for range 3000 {
		s, w := rnd(rng.IntN(60)), rnd(1+rng.IntN(4))
		ls, lw := lower(s), lower(w)
		for a := range w {
			fw := foldWord{w: lw, anchor: a, lo: lw[a], up: upperASCII(lw[a])}
			if got, want := fw.index(s), bytes.Index(ls, lw); got != want {
				t.Fatalf("%q in %q (anchor %d): %d, want %d", w, s, a, got, want)
			}
			sc := foldScan{fw: &fw, s: s}
			var got, want []int
			for p := sc.find(0); p >= 0; p = sc.find(p + 1) {
				got = append(got, p)
			}
			for p := 0; p <= len(ls); p++ {
				if bytes.HasPrefix(ls[p:], lw) {
					want = append(want, p)
				}
			}
			if !slices.Equal(got, want) {
				t.Fatalf("%q in %q (anchor %d): matches %v, want %v", w, s, a, got, want)
			}
		}
	}
}

// TestRadixOrder: the radix sort orders positions as orderCmp does
// (NaN first, −0 with +0, ties by position), over random values with
// many ties, negatives and infinities.
func TestRadixOrder(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	vals := []float64{math.NaN(), math.Inf(-1), -1e300, -2.5, math.Copysign(0, -1), 0, 1e-300, 3, 3.5, 1e21, math.Inf(1)}
	for _, n := range []int{0, 1, 7, 5000} {
		xs := make([]float64, n)
		for i := range xs {
			if rng.IntN(3) == 0 {
				xs[i] = rng.NormFloat64() * 1e5
			} else {
				xs[i] = vals[rng.IntN(len(vals))]
			}
		}
		o := make([]int32, n)
		for i := range o {
			o[i] = int32(i)
		}
		x := func(i int32) float64 { return xs[i] }
		want := slices.Clone(o)
		slices.SortStableFunc(want, func(a, b int32) int { return cmp.Compare(x(a), x(b)) })
		if got := radixOrder(slices.Clone(o), x); !slices.Equal(got, want) {
			t.Fatalf("n %d: radix order differs from the comparison sort", n)
		}
	}
}
