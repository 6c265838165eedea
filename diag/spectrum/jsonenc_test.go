package spectrum

import (
	"math"
	"math/rand/v2"
	"strconv"
	"testing"
)

// TestAppendFloat8: appendFloat8 writes strconv's 'g' format with 8
// significant digits byte for byte: over random bit patterns (every
// magnitude, the strconv fall-backs included), values spread over the
// magnitudes of plot series, values next to the rounding boundaries of
// the eighth digit (ties, and 9.9999999…e±n that carry into the next
// power of ten), powers of ten and small integers, negatives and zeros.
// TestEightDigits: eightDigits gives the digits strconv writes (zero
// padded to eight) for every m whose upper or lower four digits (the two
// lanes it divides apart) take every value with the other at its ends,
// its middle and at random, and for random m. A quotient off by one for
// any lane value (a wrong constant or shift) fails.
func TestEightDigits(t *testing.T) {
	check := func(m uint64) {
		t.Helper()
		want := strconv.AppendUint(nil, m+100000000, 10)[1:]
		d := eightDigits(m)
		for i := range 8 {
			if got := byte(d>>(8*i)) + '0'; got != want[i] {
				t.Fatalf("eightDigits(%d) = %#x, want %s", m, d, want)
			}
		}
	}
	r := rand.New(rand.NewPCG(10, 4))
	others := []uint64{0, 1, 9, 10, 99, 100, 999, 1000, 5000, 9990, 9999}
	for range 5 {
		others = append(others, uint64(r.IntN(10000)))
	}
	for x := range uint64(10000) {
		for _, o := range others {
			check(x*10000 + o)
			check(o*10000 + x)
		}
	}
	for range 1000000 {
		check(uint64(r.IntN(100000000)))
	}
}

// TestAppendDigits8: appendDigits8 writes strconv's 'g' text with 8
// digits for digits of every exponent a series form may hold (ExpandSeries
// takes |e10| ≤ 400; exponents of three digits among them), appending
// to what b holds.
func TestAppendDigits8(t *testing.T) {
	r := rand.New(rand.NewPCG(11, 3))
	for e10 := -300; e10 <= 300; e10++ {
		for range 200 {
			m := uint64(10000000 + r.IntN(90000000))
			if r.IntN(4) == 0 {
				m -= m % 10000 // trailing zeros
			}
			neg := r.IntN(2) == 0
			txt := strconv.FormatUint(m, 10) + "e" + strconv.Itoa(e10-7)
			if neg {
				txt = "-" + txt
			}
			v, err := strconv.ParseFloat(txt, 64)
			if err != nil {
				t.Fatal(err)
			}
			want := strconv.AppendFloat([]byte("x"), v, 'g', 8, 64)
			if got := appendDigits8([]byte("x"), neg, m, e10); string(got) != string(want) {
				t.Fatalf("appendDigits8(%v, %d, %d) = %s, want %s", neg, m, e10, got, want)
			}
		}
	}
}

func TestAppendFloat8(t *testing.T) {
	check := func(v float64) {
		t.Helper()
		want := strconv.AppendFloat(nil, v, 'g', 8, 64)
		if got := appendFloat8(nil, v); string(got) != string(want) {
			t.Fatalf("%v (bits %#x): %s, want %s", v, math.Float64bits(v), got, want)
		}
	}
	r := rand.New(rand.NewPCG(8, 2026))
	for range 200000 {
		v := math.Float64frombits(r.Uint64())
		if math.IsNaN(v) || math.IsInf(v, 0) {
			continue
		}
		check(v)
	}
	for range 300000 {
		check((r.Float64() - 0.3) * math.Pow(10, float64(r.IntN(36)-18)))
	}
	for e := -17; e <= 23; e++ {
		p := math.Pow(10, float64(e))
		for range 3000 {
			// m.5 × 10^(e−8) and its neighbours: the rounding ties of
			// the eighth digit.
			m := float64(10000000 + r.IntN(90000000))
			v := (m + 0.5) * p / 1e8
			check(v)
			check(math.Nextafter(v, 0))
			check(math.Nextafter(v, math.Inf(1)))
			check(-v)
		}
		for _, v := range []float64{p, math.Nextafter(p, 0), math.Nextafter(p, math.Inf(1)), 9.99999995 * p, 9.999999949 * p, 9.99999996 * p} {
			check(v)
			check(-v)
		}
	}
	for i := -100000; i <= 100000; i++ {
		check(float64(i))
		check(float64(i) / 8)
		check(float64(i) * 1e-3)
	}
	for _, v := range []float64{0, math.Copysign(0, -1), 5e-324, math.MaxFloat64, -math.MaxFloat64, 123456785, 0.000123456785, 1e21, 1e22} {
		check(v)
	}
}

func BenchmarkAppendFloat8(b *testing.B) {
	r := rand.New(rand.NewPCG(1, 2))
	vs := make([]float64, 4096)
	for i := range vs {
		vs[i] = 400 + 300*r.Float64()
		if i%2 == 1 {
			vs[i] = 20000 * r.NormFloat64()
		}
	}
	buf := make([]byte, 0, 64)
	b.Run("appendFloat8", func(b *testing.B) {
		for b.Loop() {
			for _, v := range vs {
				buf = appendFloat8(buf[:0], v)
			}
		}
	})
	b.Run("strconv", func(b *testing.B) {
		for b.Loop() {
			for _, v := range vs {
				buf = strconv.AppendFloat(buf[:0], v, 'g', 8, 64)
			}
		}
	})
}
