package store

import (
	"math"
)

// valCol is one value column of the trend column store (NaN: NULL),
// stored compactly and exactly: while the column holds at most 256
// distinct values (by bit pattern) a byte per run indexes a dictionary of
// them, up to 65 536 two bytes, and beyond that the values themselves
// (8 bytes). Run conditions are usually a few set points (a pressure, a
// power, a gap), so they take one or two bytes a run; analysis results
// (T_exc, n_e and their σ) are arbitrary doubles and keep 8. A float32
// would halve those but change the numbers that the trend CSV writes in
// full precision, so it is not used.
type valCol struct {
	f    []float64 // the values, when not dictionary-encoded
	c8   []uint8   // codes into dict (at most 256 distinct values)
	c16  []uint16  // codes into dict (at most 65 536)
	dict []float64
	code map[uint64]uint16 // dict's codes by bit pattern
}

// nanBits is the one NaN pattern the columns hold (NULL).
var nanBits = math.Float64bits(math.NaN())

func bitsOf(v float64) uint64 {
	if v != v {
		return nanBits
	}
	return math.Float64bits(v)
}

// newValCol returns an empty dictionary-encoded column with room for n.
func newValCol(n int) *valCol {
	return &valCol{c8: make([]uint8, 0, n), code: map[uint64]uint16{}}
}

func (v *valCol) len() int {
	switch {
	case v.f != nil:
		return len(v.f)
	case v.c16 != nil:
		return len(v.c16)
	}
	return len(v.c8)
}

// at returns the value at position i.
func (v *valCol) at(i int32) float64 {
	switch {
	case v.c8 != nil:
		return v.dict[v.c8[i]]
	case v.c16 != nil:
		return v.dict[v.c16[i]]
	}
	return v.f[i]
}

// codeFor returns x's dictionary code, widening the column (or giving up
// the dictionary) when x is one value too many; false: store x plainly.
func (v *valCol) codeFor(x float64) (uint16, bool) {
	if v.f != nil {
		return 0, false
	}
	b := bitsOf(x)
	if k, ok := v.code[b]; ok {
		return k, true
	}
	switch n := len(v.dict); {
	case n == 256 && v.c8 != nil:
		v.c16 = make([]uint16, len(v.c8), max(cap(v.c8), 1))
		for i, k := range v.c8 {
			v.c16[i] = uint16(k)
		}
		v.c8 = nil
	case n == 65536:
		v.toPlain()
		return 0, false
	}
	v.dict = append(v.dict, x)
	k := uint16(len(v.dict) - 1)
	v.code[b] = k
	return k, true
}

// toPlain stores the values themselves from now on.
func (v *valCol) toPlain() {
	n := v.len()
	f := make([]float64, n, max(n, cap(v.c8), cap(v.c16)))
	for i := range f {
		f[i] = v.at(int32(i))
	}
	v.f, v.c8, v.c16, v.dict, v.code = f, nil, nil, nil, nil
}

func (v *valCol) append(x float64) {
	k, ok := v.codeFor(x)
	switch {
	case !ok:
		v.f = append(v.f, x)
	case v.c8 != nil:
		v.c8 = append(v.c8, uint8(k))
	default:
		v.c16 = append(v.c16, k)
	}
}

func (v *valCol) set(i int, x float64) {
	k, ok := v.codeFor(x)
	switch {
	case !ok:
		v.f[i] = x
	case v.c8 != nil:
		v.c8[i] = uint8(k)
	default:
		v.c16[i] = k
	}
}

// insert opens position i holding x.
func (v *valCol) insert(i int, x float64) {
	k, ok := v.codeFor(x)
	switch {
	case !ok:
		v.f = insertAt(v.f, i, x)
	case v.c8 != nil:
		v.c8 = insertAt(v.c8, i, uint8(k))
	default:
		v.c16 = insertAt(v.c16, i, k)
	}
}

// insertAt inserts x at i growing the slice by a quarter when full (not
// doubling: the columns are large and new runs come one at a time).
func insertAt[T any](s []T, i int, x T) []T {
	if len(s) == cap(s) {
		g := make([]T, len(s), len(s)+len(s)/4+16)
		copy(g, s)
		s = g
	}
	s = s[:len(s)+1]
	copy(s[i+1:], s[i:])
	s[i] = x
	return s
}

// sortKey maps a value to an unsigned key in the order of cmp.Compare:
// NaN (NULL) first, −0 equal to +0.
func sortKey(x float64) uint64 {
	if x != x {
		return 0
	}
	if x == 0 {
		x = 0 // −0 sorts with +0
	}
	b := math.Float64bits(x)
	if b>>63 != 0 {
		return ^b // negative: larger magnitude first
	}
	return b | 1<<63
}

// radixOrder sorts the positions o (ascending, so equal values keep the
// id order) by x, as orderCmp orders them: a stable LSD radix sort on the
// values' sort keys, 11 bits a pass, skipping the passes where every key
// has the same digit (a column of a few set points takes one or two). A
// million positions take tens of milliseconds, against a few hundred for
// a comparison sort.
func radixOrder(o []int32, x func(int32) float64) []int32 {
	n := len(o)
	keys := make([]uint64, n)
	for k, i := range o {
		keys[k] = sortKey(x(i))
	}
	keys2 := make([]uint64, n)
	o2 := make([]int32, n)
	var count [1 << 11]int
	for shift := uint(0); shift < 64; shift += 11 {
		clear(count[:])
		for _, k := range keys {
			count[(k>>shift)&(1<<11-1)]++
		}
		if n == 0 || count[(keys[0]>>shift)&(1<<11-1)] == n {
			continue // one digit for all
		}
		sum := 0
		for d, c := range count {
			count[d] = sum
			sum += c
		}
		for k, key := range keys {
			d := (key >> shift) & (1<<11 - 1)
			keys2[count[d]], o2[count[d]] = key, o[k]
			count[d]++
		}
		keys, keys2 = keys2, keys
		o, o2 = o2, o
	}
	return o
}
