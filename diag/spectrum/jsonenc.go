package spectrum

import (
	"bytes"
	"encoding/binary"
	"encoding/json"
	"fmt"
	"math"
	"math/bits"
	"slices"
	"strconv"
	"strings"
	"unicode/utf8"
)

// AppendJSON appends the JSON encoding of r to b: byte for byte what
// encoding/json's Encoder with SetEscapeHTML(false) writes (without its
// newline), without reflection. The per-type code is generated from the
// types (result_json.go; TestResultJSONGenerated keeps it current, and
// TestAppendJSONMatchesEncodingJSON compares the output). A NaN or ±Inf
// anywhere gives an error, as encoding/json's does (the text differs:
// callers that report it re-encode with encoding/json).
func AppendJSON(b []byte, r *Result) ([]byte, error) {
	return appendJSONResult(b, r)
}

// jsonSafe[c] is true for the ASCII bytes that encoding/json writes
// unescaped in a string when HTML escaping is off.
var jsonSafe = func() (t [utf8.RuneSelf]bool) {
	for c := 0x20; c < utf8.RuneSelf; c++ {
		t[c] = c != '"' && c != '\\'
	}
	return t
}()

const jsonHex = "0123456789abcdef"

// appendJSONString is encoding/json's string encoding with HTML escaping
// off: control characters escaped, invalid UTF-8 as \ufffd, U+2028 and
// U+2029 escaped.
func appendJSONString(dst []byte, src string) []byte {
	dst = append(dst, '"')
	start := 0
	for i := 0; i < len(src); {
		// Eight safe ASCII bytes at a time (no control character, quote,
		// backslash or byte ≥ 0x80; the zero-byte test of Hacker's Delight
		// §6-1 on the word).
		for i+8 <= len(src) {
			b := src[i : i+8] // one bounds test: the compiler makes one load
			w := uint64(b[0]) | uint64(b[1])<<8 | uint64(b[2])<<16 | uint64(b[3])<<24 |
				uint64(b[4])<<32 | uint64(b[5])<<40 | uint64(b[6])<<48 | uint64(b[7])<<56
			const lo, hi = 0x0101010101010101, 0x8080808080808080
			q, bs := w^(0x22*lo), w^(0x5C*lo)
			if ((w-0x20*lo)|(q-lo)|(bs-lo)|w)&hi != 0 {
				break
			}
			i += 8
		}
		if i >= len(src) {
			break
		}
		if c := src[i]; c < utf8.RuneSelf {
			if jsonSafe[c] {
				i++
				continue
			}
			dst = append(dst, src[start:i]...)
			switch c {
			case '\\', '"':
				dst = append(dst, '\\', c)
			case '\b':
				dst = append(dst, '\\', 'b')
			case '\f':
				dst = append(dst, '\\', 'f')
			case '\n':
				dst = append(dst, '\\', 'n')
			case '\r':
				dst = append(dst, '\\', 'r')
			case '\t':
				dst = append(dst, '\\', 't')
			default:
				dst = append(dst, '\\', 'u', '0', '0', jsonHex[c>>4], jsonHex[c&0xF])
			}
			i++
			start = i
			continue
		}
		r, size := utf8.DecodeRuneInString(src[i:])
		if r == utf8.RuneError && size == 1 {
			dst = append(dst, src[start:i]...)
			dst = append(dst, `\ufffd`...)
			i += size
			start = i
			continue
		}
		if r == '\u2028' || r == '\u2029' {
			dst = append(dst, src[start:i]...)
			dst = append(dst, '\\', 'u', '2', '0', '2', jsonHex[r&0xF])
			i += size
			start = i
			continue
		}
		i += size
	}
	dst = append(dst, src[start:]...)
	return append(dst, '"')
}

// appendJSONFloat is encoding/json's float64 encoding (ES6 number form);
// NaN and ±Inf are an error.
func appendJSONFloat(b []byte, f float64) ([]byte, error) {
	if math.IsInf(f, 0) || math.IsNaN(f) {
		return b, fmt.Errorf("json: unsupported value: %s", strconv.FormatFloat(f, 'g', -1, 64))
	}
	abs := math.Abs(f)
	if abs < 1<<53 && f == math.Trunc(f) && (f != 0 || !math.Signbit(f)) {
		// An integer (0 included, −0 not): the digits 'f' would write,
		// without formatting a float.
		return strconv.AppendInt(b, int64(f), 10), nil
	}
	if abs != 0 && (abs < 1e-6 || abs >= 1e21) {
		b = strconv.AppendFloat(b, f, 'e', -1, 64)
		// e-09 → e-9
		if n := len(b); n >= 4 && b[n-4] == 'e' && b[n-3] == '-' && b[n-2] == '0' {
			b[n-2] = b[n-1]
			b = b[:n-1]
		}
		return b, nil
	}
	return appendShortestF(b, f), nil
}

// appendShortestF appends strconv.AppendFloat(b, f, 'f', -1, 64) for a
// finite f ≠ 0 with 1e-6 ≤ |f| < 1e21: the same shortest digits, taken
// from strconv's 'e' text (d.ddde±XX; its 'f' writer appends the
// fraction a byte at a time, about three times the instructions of the
// 'e' writer) and put in place with whole-word copies.
// TestAppendJSONFloatMatches compares the bytes with encoding/json's.
func appendShortestF(b []byte, f float64) []byte {
	var buf [48]byte // the 'e' text, and room to read words past it
	e := strconv.AppendFloat(buf[:0], f, 'e', -1, 64)
	neg := 0
	if e[0] == '-' {
		neg = 1
	}
	x := len(e) - 4 // the 'e': two exponent digits for these magnitudes
	if len(e) > len(buf)-16 || x < neg+1 || e[x] != 'e' {
		return strconv.AppendFloat(b, f, 'f', -1, 64) // not reached
	}
	exp := int(e[x+2]-'0')*10 + int(e[x+3]-'0')
	if e[x+1] == '-' {
		exp = -exp
	}
	d0 := e[neg] // the first digit; the others (nd−1 ≤ 16) from e[neg+2] on
	rest := buf[neg+2 : neg+2+16]
	r0, r1 := binary.LittleEndian.Uint64(rest), binary.LittleEndian.Uint64(rest[8:])
	nr := max(x-(neg+2), 0) // the other digits' number
	dp := exp + 1           // digits before the decimal point (−5 … 21)
	if cap(b)-len(b) < 64 {
		b = slices.Grow(b, 64)
	}
	n0 := len(b)
	out := b[n0 : n0+64]
	out[0] = '-'
	o := out[neg:]
	if dp <= 0 {
		// "0." and −dp zeros, then the digits.
		binary.LittleEndian.PutUint64(o, 0x3030303030302e30) // "0.000000"
		k := 2 - dp
		o[k] = d0
		binary.LittleEndian.PutUint64(o[k+1:], r0)
		binary.LittleEndian.PutUint64(o[k+9:], r1)
		return b[:n0+neg+k+1+nr]
	}
	// The first digit and the others, then (dp−1 of the others before
	// it) the point and the rest; or zeros up to dp.
	o[0] = d0
	binary.LittleEndian.PutUint64(o[1:], r0)
	binary.LittleEndian.PutUint64(o[9:], r1)
	if nr+1 <= dp {
		// An integer of dp digits (a float from 2⁵³ on): zeros past
		// the digits.
		for i := nr + 1; i < dp; i++ {
			o[i] = '0'
		}
		return b[:n0+neg+dp]
	}
	o[dp] = '.'
	tail := buf[neg+2+dp-1 : neg+2+dp-1+16]
	binary.LittleEndian.PutUint64(o[dp+1:], binary.LittleEndian.Uint64(tail))
	binary.LittleEndian.PutUint64(o[dp+9:], binary.LittleEndian.Uint64(tail[8:]))
	return b[:n0+neg+nr+2]
}

// appendJSONMapIntFloat is encoding/json's encoding of a map[int]float64:
// keys as strings, sorted as strings.
func appendJSONMapIntFloat(b []byte, m map[int]float64) ([]byte, error) {
	if m == nil {
		return append(b, "null"...), nil
	}
	keys := make([]int, 0, len(m))
	for k := range m {
		keys = append(keys, k)
	}
	slices.SortFunc(keys, func(x, y int) int { return strings.Compare(strconv.Itoa(x), strconv.Itoa(y)) })
	b = append(b, '{')
	for i, k := range keys {
		if i > 0 {
			b = append(b, ',')
		}
		b = append(b, '"')
		b = strconv.AppendInt(b, int64(k), 10)
		b = append(b, '"', ':')
		var err error
		if b, err = appendJSONFloat(b, m[k]); err != nil {
			return b, err
		}
	}
	return append(b, '}'), nil
}

// appendJSONMarshaler encodes v, which has its own MarshalJSON, through
// encoding/json (rare: window data).
func appendJSONMarshaler(b []byte, v json.Marshaler) ([]byte, error) {
	var buf bytes.Buffer
	enc := json.NewEncoder(&buf)
	enc.SetEscapeHTML(false)
	if err := enc.Encode(v); err != nil {
		return b, err
	}
	return append(b, bytes.TrimSuffix(buf.Bytes(), []byte{'\n'})...), nil
}

// plotPow10 are the powers of ten that float64 holds exactly.
var plotPow10 = [...]float64{1e0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10, 1e11,
	1e12, 1e13, 1e14, 1e15, 1e16, 1e17, 1e18, 1e19, 1e20, 1e21, 1e22}

// appendFloat8 appends v as strconv.AppendFloat(b, v, 'g', 8, 64) does,
// byte for byte, several times faster for the values of plot series: the
// eight significant digits come from one correctly rounded product or
// quotient with an exact power of ten, whose error (at most half a unit
// in the last place, below 1e-8 of a digit) can only change the rounding
// when the ninth digit and beyond are within 1e-6 of one half: those
// values, zeros, and magnitudes whose power of ten is not exact in
// float64 go through strconv (TestAppendFloat8 compares both).
func appendFloat8(b []byte, v float64) []byte {
	m, e10, ok := plotDigits(v)
	if !ok {
		return strconv.AppendFloat(b, v, 'g', 8, 64)
	}
	return appendDigits8(b, v < 0, m, e10)
}

// plotDigits returns the eight significant digits m (10⁷ ≤ m < 10⁸) and
// the decimal exponent e10 of |v| as appendFloat8 writes them (|v| ≈
// m·10^(e10−7)); ok is false for the values appendFloat8 leaves to
// strconv (zeros, NaN, ±Inf, magnitudes outside [1e-15, 1e22), and
// near-ties of the eighth digit).
func plotDigits(v float64) (m uint64, e10 int, ok bool) {
	a := math.Abs(v)
	if !(a >= 1e-15 && a < 1e22) {
		return 0, 0, false
	}
	e2 := int(math.Float64bits(a)>>52) - 1023 // a = 1.f·2^e2 (a is normal)
	e10 = (e2 * 78913) >> 18                  // ⌊e2·log₁₀2⌋ for |e2| < 2^10
	var x float64
	for range 3 {
		if k := 7 - e10; k >= 0 {
			if k >= len(plotPow10) {
				return 0, 0, false
			}
			x = a * plotPow10[k]
		} else {
			if -k >= len(plotPow10) {
				return 0, 0, false
			}
			x = a / plotPow10[-k]
		}
		switch {
		case x < 1e7:
			e10--
			continue
		case x >= 1e8:
			e10++
			continue
		}
		break
	}
	if !(x >= 1e7 && x < 1e8) {
		return 0, 0, false
	}
	m = uint64(x)
	frac := x - float64(m)
	if t := frac - 0.5; t < 1e-6 && t > -1e-6 { // |frac − ½| < 1e-6
		return 0, 0, false
	}
	if frac > 0.5 {
		m++
		if m == 100000000 {
			m, e10 = 10000000, e10+1
		}
	}
	return m, e10, true
}

// appendDigits8 appends the value −m·10^(e10−7) (neg) or m·10^(e10−7) as
// strconv's 'g' format with 8 significant digits writes it, for m and
// e10 from plotDigits (|e10| < 1000).
func appendDigits8(b []byte, neg bool, m uint64, e10 int) []byte {
	if cap(b)-len(b) < 24 {
		b = slices.Grow(b, 24)
	}
	n0 := len(b)
	return b[:n0+putDigits8((*[24]byte)(b[n0:n0+24]), neg, m, e10)]
}

// putDigits8 writes appendDigits8's text at the start of out and
// returns its length; the bytes of out past the text are scratch (the
// text is written with whole-word stores).
func putDigits8(out *[24]byte, neg bool, m uint64, e10 int) int {
	// The eight digits as one little-endian word (d[0] the lowest byte);
	// nd is their number without trailing zeros (strconv's nd; m ≥ 10⁷,
	// so the first digit is not '0').
	d := eightDigits(m)
	nd := 8 - bits.LeadingZeros64(d)/8
	const zeros = 0x3030303030303030 // "00000000"
	w := d | zeros
	n := 0
	if neg {
		out[0] = '-'
		n = 1
	}
	dp := e10 + 1 // digits before the decimal point
	eprec := 8
	if eprec > nd && nd >= dp {
		eprec = nd
	}
	if e10 < -4 || e10 >= eprec {
		// %e with nd digits: d, then "." and the other nd−1 digits.
		out[n] = byte(w)
		n++
		if nd > 1 {
			out[n] = '.'
			binary.LittleEndian.PutUint64(out[n+1:], w>>8)
			n += nd
		}
		out[n] = 'e'
		n++
		exp := e10
		if exp < 0 {
			out[n] = '-'
			exp = -exp
		} else {
			out[n] = '+'
		}
		n++
		if exp >= 100 {
			out[n] = byte('0' + exp/100%10)
			exp %= 100
			n++
		}
		out[n], out[n+1] = digitPairs[2*exp], digitPairs[2*exp+1]
		return n + 2
	}
	// %f with max(nd-dp, 0) decimals (0 < dp < 8 or dp ≤ 0 here).
	if dp > 0 {
		// The digits before the point (zeros past nd), then, when there
		// are decimals, "." and the rest.
		binary.LittleEndian.PutUint64(out[n:], w)
		if nd > dp {
			out[n+dp] = '.'
			binary.LittleEndian.PutUint64(out[n+dp+1:], w>>(8*uint(dp)))
			return n + nd + 1
		}
		return n + dp
	}
	// dp ≥ −3 (e10 ≥ −4): "0." and −dp zeros before the digits.
	binary.LittleEndian.PutUint64(out[n:], 0x3030303030302e30) // "0.000000"
	n += 2 - dp
	binary.LittleEndian.PutUint64(out[n:], w)
	return n + nd
}

// eightDigits returns the eight decimal digits of m < 10⁸ as the bytes
// of one little-endian word, the first digit in the lowest byte, each
// byte the digit's value (0–9): without a division or a table, by
// dividing the lanes of a word at once (SWAR). m/10⁴ and m%10⁴ go to two
// 32-bit lanes, each lane is cut by 100 into two 16-bit lanes, and each
// of those by 10 into two bytes. A lane's quotient by 100 is
// ⌊x·10486/2²⁰⌋ for x < 10⁴ (the product's excess over x/100 is below
// 0.003, less than any remainder's distance to the next integer) and by
// 10 is ⌊x·103/2¹⁰⌋ for x < 100 (excess below 0.06); the products stay
// in their lanes (below 2²⁷ and 2¹⁴). TestEightDigits compares every
// m's digits with strconv's.
func eightDigits(m uint64) uint64 {
	x := m/10000 | m%10000<<32
	q := x * 10486 >> 20 & 0x0000007f0000007f
	x = q | (x-q*100)<<16
	q = x * 103 >> 10 & 0x000f000f000f000f
	return q | (x-q*10)<<8
}

// digitPairs are "00" … "99".
var digitPairs = func() (t [200]byte) {
	for i := range 100 {
		t[2*i], t[2*i+1] = byte('0'+i/10), byte('0'+i%10)
	}
	return t
}()
