package specfile

import (
	"bytes"
	"math"
	"math/bits"
	"os"
	"testing"
)

// floorScan is a lower bound on reading the file of .ci/bench, not a
// reader: it knows the format ("380.156326,8.40393" rows after three
// comment/header lines), checks nothing but what it needs to stay in
// bounds, and converts each number as mantissa ÷ 10^decimals (one
// correctly rounded division of two exact values: exact to the bit for
// at most 15 digits, as these are). It fills x and y and returns the
// number of rows, or −1 when a row is not of that form.
func floorScan(data []byte, x, y []float64) int {
	i := 0
	for range 3 { // two comment lines and the column header
		j := bytes.IndexByte(data[i:], '\n')
		if j < 0 {
			return -1
		}
		i += j + 1
	}
	n := 0
	for i < len(data) && n < len(x) {
		var v [2]float64
		for c := range 2 {
			var m uint64
			d := -1
			for ; i < len(data); i++ {
				b := data[i]
				if b-'0' < 10 {
					m = m*10 + uint64(b-'0')
					if d >= 0 {
						d++
					}
					continue
				}
				if b == '.' && d < 0 {
					d = 0
					continue
				}
				break
			}
			if i >= len(data) || d < 0 || d > 15 {
				return -1
			}
			v[c] = float64(m) / floorPow10[d]
			i++ // the ',' or '\n'
		}
		x[n], y[n] = v[0], v[1]
		n++
	}
	return n
}

var floorPow10 = [...]float64{1e0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10, 1e11, 1e12, 1e13, 1e14, 1e15}

// BenchmarkFloorScipy2048 times floorScan on the file of .ci/bench, to
// set against BenchmarkReadBytesScipy2048 (the reader glowlog analyze
// uses, with every check, limit and error message): how far the reader
// is from the cost of the bytes themselves. The values are checked, bit
// for bit, against ReadBytes' before timing.
func BenchmarkFloorScipy2048(b *testing.B) {
	data, err := os.ReadFile("../../testdata/spectra/scipy_bench_2048.csv")
	if err != nil {
		b.Fatal(err)
	}
	sp, err := ReadBytes("scipy_bench_2048.csv", data, Options{}, nil)
	if err != nil {
		b.Fatal(err)
	}
	x, y := make([]float64, len(sp.X)), make([]float64, len(sp.X))
	if n := floorScan(data, x, y); n != len(sp.X) {
		b.Fatalf("floorScan read %d rows, ReadBytes %d", n, len(sp.X))
	}
	for i := range x {
		if math.Float64bits(x[i]) != math.Float64bits(sp.X[i]) || math.Float64bits(y[i]) != math.Float64bits(sp.Y[i]) {
			b.Fatalf("row %d: floorScan (%v, %v), ReadBytes (%v, %v)", i, x[i], y[i], sp.X[i], sp.Y[i])
		}
	}
	b.SetBytes(int64(len(data)))
	for b.Loop() {
		floorScan(data, x, y)
	}
}

// floorIndexScan is floorScan in two passes, to measure how much of the
// reading time is the chain from one number's end to the next one's
// start: first the positions of every ',' and '\n' from eight-byte words
// (independent words, no chain), then each field converted on its own
// (fields at most 15 bytes: two eight-byte loads; digits by the SWAR of
// digitsIn and swarValue). data must have 16 bytes of padding after its
// text (zeros, which are no field ends): the loads of the last field stay
// inside it. Same values as floorScan on the benchmark file; −1 for any
// other form.
func floorIndexScan(data []byte, x, y []float64, ends []int32) int {
	i := 0
	for range 3 {
		j := bytes.IndexByte(data[i:], '\n')
		if j < 0 {
			return -1
		}
		i += j + 1
	}
	body := data[i:]
	ne := 0
	const lo7, hi = 0x7F7F7F7F7F7F7F7F, 0x8080808080808080
	w := 0
	for ; w+8 <= len(body) && ne+8 <= len(ends); w += 8 {
		v := load8b(body[w : w+8])
		c, nl := v^(0x2C*0x0101010101010101), v^(0x0A*0x0101010101010101)
		// Exact zero-byte masks (no false positives).
		zc := ^(((c & lo7) + lo7) | c) & hi
		zn := ^(((nl & lo7) + lo7) | nl) & hi
		// Fields are at least 3 bytes with their end, so a word holds at
		// most three ends: written without branches (a missing end
		// writes 8 past the word and does not advance ne).
		m := zc | zn
		if bits.OnesCount64(m) > 3 {
			return -1
		}
		for range 3 {
			ends[ne] = int32(w + bits.TrailingZeros64(m)>>3)
			ne += int(uint64(m|-m) >> 63)
			m &= m - 1
		}
	}
	for ; w < len(body); w++ {
		if (body[w] == ',' || body[w] == '\n') && ne < len(ends) {
			ends[ne] = int32(w)
			ne++
		}
	}
	n := min(ne/2, len(x))
	s := 0
	for k := range 2 * n {
		e := int(ends[k])
		f := body[s:e]
		if len(f) < 3 || len(f) > 15 || s+16 > len(body) {
			return -1
		}
		w1 := load8b(body[s : s+8])
		di := digitsIn(w1)
		if di == 0 || di >= len(f)-1 || f[di] != '.' {
			return -1
		}
		w2 := load8b(body[s+di+1 : s+di+9])
		df := len(f) - di - 1
		if digitsIn(w2) < df || df > 7 {
			return -1
		}
		m := swarValue(w1, di)*pow10u[df] + swarValue(w2, df)
		v := float64(m) / floorPow10[df]
		if k&1 == 0 {
			x[k>>1] = v
		} else {
			y[k>>1] = v
		}
		s = e + 1
	}
	return n
}

// BenchmarkFloorIndexScipy2048 times floorIndexScan as
// BenchmarkFloorScipy2048 times floorScan (values checked against
// ReadBytes first).
func BenchmarkFloorIndexScipy2048(b *testing.B) {
	data, err := os.ReadFile("../../testdata/spectra/scipy_bench_2048.csv")
	if err != nil {
		b.Fatal(err)
	}
	sp, err := ReadBytes("scipy_bench_2048.csv", data, Options{}, nil)
	if err != nil {
		b.Fatal(err)
	}
	x, y := make([]float64, len(sp.X)), make([]float64, len(sp.X))
	ends := make([]int32, 2*len(sp.X)+16)
	data = append(data[:len(data):len(data)], make([]byte, 16)...)
	if n := floorIndexScan(data, x, y, ends); n != len(sp.X) {
		b.Fatalf("floorIndexScan read %d rows, ReadBytes %d", n, len(sp.X))
	}
	for i := range x {
		if math.Float64bits(x[i]) != math.Float64bits(sp.X[i]) || math.Float64bits(y[i]) != math.Float64bits(sp.Y[i]) {
			b.Fatalf("row %d: floorIndexScan (%v, %v), ReadBytes (%v, %v)", i, x[i], y[i], sp.X[i], sp.Y[i])
		}
	}
	b.SetBytes(int64(len(data)))
	for b.Loop() {
		floorIndexScan(data, x, y, ends)
	}
}

// load8b is load8 of a byte slice of length ≥ 8.
func load8b(b []byte) uint64 {
	b = b[:8]
	return uint64(b[0]) | uint64(b[1])<<8 | uint64(b[2])<<16 | uint64(b[3])<<24 |
		uint64(b[4])<<32 | uint64(b[5])<<40 | uint64(b[6])<<48 | uint64(b[7])<<56
}
