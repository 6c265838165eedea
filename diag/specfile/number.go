package specfile

import (
	"math"
	"strconv"
	"strings"
)

// scanDecimal scans a decimal number starting at s[i]:
//
//	[+-]? ( digits [ "." digits? ] | "." digits ) [ (e|E) [+-]? digits ]
//
// This is the AFFN ("ASCII free format numeric") form of JCAMP-DX and the
// form accepted in text files; hex floats, "Inf", "NaN" and underscores,
// which strconv.ParseFloat would take, are not numbers here. With asdf set,
// an exponent marker must be followed by a sign, because 'E' and 'e' are
// otherwise SQZ digits (+5, -5) in compressed JCAMP-DX data.
//
// It returns the end of the number, and res, the value of one unit in the
// last written digit (0.01 for "656.28", 100 for "6.5E+2"), which is the
// rounding resolution of the written value. ok is false if s[i:] does not
// start with a number.
func scanDecimal(s string, i int, asdf bool) (end int, res float64, ok bool) {
	j := i
	if j < len(s) && (s[j] == '+' || s[j] == '-') {
		j++
	}
	intDigits := 0
	for j < len(s) && isDigit(s[j]) {
		j++
		intDigits++
	}
	fracDigits := 0
	if j < len(s) && s[j] == '.' {
		j++
		for j < len(s) && isDigit(s[j]) {
			j++
			fracDigits++
		}
	}
	if intDigits+fracDigits == 0 {
		return i, 0, false
	}
	exp := 0
	if j < len(s) && (s[j] == 'e' || s[j] == 'E') {
		k := j + 1
		neg := false
		signed := false
		if k < len(s) && (s[k] == '+' || s[k] == '-') {
			neg = s[k] == '-'
			signed = true
			k++
		}
		if (signed || !asdf) && k < len(s) && isDigit(s[k]) {
			for k < len(s) && isDigit(s[k]) {
				if exp < 100000 {
					exp = exp*10 + int(s[k]-'0')
				}
				k++
			}
			if neg {
				exp = -exp
			}
			j = k
		}
	}
	return j, math.Pow10(exp - fracDigits), true
}

func isDigit(c byte) bool { return '0' <= c && c <= '9' }

// parseDecimal parses s, which must be exactly one number in the grammar
// of scanDecimal (asdf false). A value too large for float64 comes back as
// ±Inf, which callers reject as non-finite; one too small rounds to zero.
func parseDecimal(s string) (v, res float64, ok bool) {
	end, res, ok := scanDecimal(s, 0, false)
	if !ok || end != len(s) {
		return 0, 0, false
	}
	return atof(s), res, true
}

// atof converts a string already validated by scanDecimal. ParseFloat's
// range errors are folded into the value (±Inf or 0).
func atof(s string) float64 {
	v, _ := strconv.ParseFloat(s, 64)
	return v
}

// isFinite reports whether v is neither NaN nor ±Inf.
func isFinite(v float64) bool { return math.Float64bits(v)&(0x7ff<<52) != 0x7ff<<52 }

// pow10tab holds the powers of ten that are exact in float64 (10²² is the
// largest: 5²² < 2⁵³).
var pow10tab = [...]float64{1e0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10,
	1e11, 1e12, 1e13, 1e14, 1e15, 1e16, 1e17, 1e18, 1e19, 1e20, 1e21, 1e22}

// parseNumber parses s, which must be exactly one number in the grammar of
// scanDecimal (asdf false) with point as the decimal separator ('.' or
// ','), and returns the same value, bit for bit, as strconv.ParseFloat
// of s written with a '.' (range errors folded in: ±Inf or ±0). It
// allocates nothing unless it falls back to strconv.
func parseNumber(s string, point byte) (float64, bool) {
	v, end, ok := scanNumber(s, 0, point)
	if !ok || end != len(s) {
		return 0, false
	}
	return v, true
}

// scanNumber scans the longest number of scanDecimal's grammar (asdf
// false, point as the decimal separator) at s[i:] and returns its value,
// as parseNumber would give it, and its end. ok is false if s[i:] does not
// start with a number.
//
// Most spectrometer numbers have at most 19 digits and a small decimal
// exponent. Then the digits form an integer m ≤ 2⁵³, exact in float64,
// and so is 10^|e| for |e| ≤ 22; one IEEE multiplication or division of
// two exact values is correctly rounded, which is the value ParseFloat
// returns (Clinger's fast path: W. D. Clinger, "How to read floating point
// numbers accurately", PLDI 1990; strconv takes the same path first).
// Everything else goes to strconv.ParseFloat.
func scanNumber(s string, i int, point byte) (v float64, end int, ok bool) {
	start := i
	neg := false
	if i < len(s) && (s[i] == '+' || s[i] == '-') {
		neg = s[i] == '-'
		i++
	}
	mant, nd, frac, i := decimalDigits(s, i, point)
	if nd == 0 {
		return 0, start, false
	}
	exp := 0
	if i < len(s) && s[i]|0x20 == 'e' {
		k := i + 1
		eneg := false
		if k < len(s) && (s[k] == '+' || s[k] == '-') {
			eneg = s[k] == '-'
			k++
		}
		if k < len(s) && isDigit(s[k]) { // else the number ends before the 'e'
			for ; k < len(s) && isDigit(s[k]); k++ {
				if exp < 100000 {
					exp = exp*10 + int(s[k]-'0')
				}
			}
			if eneg {
				exp = -exp
			}
			i = k
		}
	}
	switch e := exp - frac; {
	case nd > 19 || mant > 1<<53 || (mant != 0 && (e < -22 || e > 22)):
		return atofPoint(s[start:i], point), i, true
	case mant == 0:
		v = 0
	case e >= 0:
		v = float64(mant) * pow10tab[e]
	default:
		v = float64(mant) / pow10tab[-e]
	}
	if neg {
		v = -v
	}
	return v, i, true
}

// decimalDigits reads the digits of a decimal at s[i:], with an optional
// point and fraction digits: their value as an integer mant (it
// overflows past 19 digits: nd counts them all), the number of digits
// nd, of fraction digits frac, and the end. Digits one byte at a time:
// spectrometer numbers have short digit runs ("380.156326", "8.40393"),
// for which this costs about half of eight-byte (SWAR) steps.
func decimalDigits(s string, i int, point byte) (mant uint64, nd, frac, end int) {
	d0 := i
	for ; i < len(s); i++ {
		c := s[i] - '0'
		if c > 9 {
			break
		}
		mant = mant*10 + uint64(c)
	}
	nd = i - d0
	if i < len(s) && s[i] == point {
		i++
		f0 := i
		for ; i < len(s); i++ {
			c := s[i] - '0'
			if c > 9 {
				break
			}
			mant = mant*10 + uint64(c)
		}
		frac = i - f0
		nd += frac
	}
	return mant, nd, frac, i
}

// atofPoint is atof of a number written with point as its decimal
// separator.
func atofPoint(s string, point byte) float64 {
	if point != '.' {
		s = strings.Replace(s, string(point), ".", 1)
	}
	return atof(s)
}
