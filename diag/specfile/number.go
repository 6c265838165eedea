package specfile

import (
	"math"
	"strconv"
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
func isFinite(v float64) bool { return !math.IsNaN(v) && !math.IsInf(v, 0) }
