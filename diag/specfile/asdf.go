package specfile

import (
	"fmt"
	"strconv"
)

// ASDF ("ASCII squeezed difference form") is the compressed encoding of
// JCAMP-DX ordinates (McDonald & Wilks 1988, section 5.9). A value is
// written as its leading digit replaced by a pseudo-digit, followed by the
// remaining digits:
//
//	SQZ  absolute value   @=0  A..I = +1..+9  a..i = −1..−9
//	DIF  difference from  %=0  J..R = +1..+9  j..r = −1..−9
//	     the previous value
//	DUP  repeat count     S..Z = 1..8  s = 9
//
// so 1234 is "A234", −50 is "e0", a difference of +12 is "J2", and "T" after
// a value or difference means it occurs twice in all. AFFN (decimal
// numbers separated by blanks) and PAC (numbers separated by their own
// sign, "12+34-5") may appear in the same table.

// sqzDigit decodes SQZ pseudo-digits.
func sqzDigit(c byte) (d byte, neg, ok bool) {
	switch {
	case c == '@':
		return 0, false, true
	case 'A' <= c && c <= 'I':
		return c - 'A' + 1, false, true
	case 'a' <= c && c <= 'i':
		return c - 'a' + 1, true, true
	}
	return 0, false, false
}

// difDigit decodes DIF pseudo-digits.
func difDigit(c byte) (d byte, neg, ok bool) {
	switch {
	case c == '%':
		return 0, false, true
	case 'J' <= c && c <= 'R':
		return c - 'J' + 1, false, true
	case 'j' <= c && c <= 'r':
		return c - 'j' + 1, true, true
	}
	return 0, false, false
}

// dupDigit decodes DUP pseudo-digits.
func dupDigit(c byte) (d byte, ok bool) {
	switch {
	case 'S' <= c && c <= 'Z':
		return c - 'S' + 1, true
	case c == 's':
		return 9, true
	}
	return 0, false
}

// asdfLine is one decoded line of an (X++(Y..Y)) table.
type asdfLine struct {
	x      float64 // abscissa as written (before XFACTOR)
	xtok   string  // abscissa token, for messages
	xres   float64 // rounding resolution of the abscissa as written
	y      []float64
	endDif bool // the last ordinate was a DIF (or a DUP of one)
}

// lineError is a decoding error without file and line.
type lineError struct {
	kind error
	msg  string
}

func lineErrf(kind error, format string, args ...any) *lineError {
	return &lineError{kind: kind, msg: fmt.Sprintf(format, args...)}
}

// errTooManyOrdinates is returned by decodeASDF when a line would hold
// more than limit ordinates; the caller words the message.
var errTooManyOrdinates = &lineError{kind: ErrInconsistent}

// decodeASDF decodes one line of an (X++(Y..Y)) table, appending the
// ordinates to buf. At most limit ordinates are produced.
func decodeASDF(s string, buf []float64, limit int) (asdfLine, *lineError) {
	var out asdfLine
	i := skipBlanks(s, 0)
	end, res, ok := scanDecimal(s, i, true)
	if !ok {
		return out, lineErrf(ErrSyntax, "expected an abscissa at the start of the data line, found %q", clip(s[i:]))
	}
	if e := ambiguousExponent(s, i, end); e != nil {
		return out, e
	}
	out.xtok, out.x, out.xres = s[i:end], atof(s[i:end]), res
	i = end

	const (
		none = iota
		abs
		dif
	)
	last := none
	afterDup := false
	var prev, delta float64
	y := buf
	for i < len(s) {
		c := s[i]
		if c == ' ' || c == '\t' || c == ',' {
			i++
			continue
		}
		dup := false
		switch {
		case c == '?':
			return out, lineErrf(ErrUnsupported, "missing value '?' is not supported")
		case c == '+' || c == '-' || c == '.' || isDigit(c):
			end, _, ok := scanDecimal(s, i, true)
			if !ok {
				return out, lineErrf(ErrSyntax, "malformed number %q", clip(s[i:]))
			}
			if e := ambiguousExponent(s, i, end); e != nil {
				return out, e
			}
			prev = atof(s[i:end])
			y = append(y, prev)
			last, i = abs, end
		default:
			if d, neg, ok := sqzDigit(c); ok {
				var v float64
				v, i = pseudoNumber(s, i, d, neg)
				prev = v
				y = append(y, prev)
				last = abs
			} else if d, neg, ok := difDigit(c); ok {
				if last == none {
					return out, lineErrf(ErrSyntax, "DIF value %q has no preceding ordinate on the line; a line must start with an absolute value", clip(s[i:]))
				}
				delta, i = pseudoNumber(s, i, d, neg)
				prev += delta
				y = append(y, prev)
				last = dif
			} else if d, ok := dupDigit(c); ok {
				if last == none || afterDup {
					return out, lineErrf(ErrSyntax, "DUP count %q does not follow a value", clip(s[i:]))
				}
				j := i + 1
				for j < len(s) && isDigit(s[j]) {
					j++
				}
				if j-i > 9 {
					return out, errTooManyOrdinates
				}
				n, _ := strconv.Atoi(string('0'+d) + s[i+1:j])
				if len(y)-len(buf)+n-1 > limit {
					return out, errTooManyOrdinates
				}
				for range n - 1 {
					if last == dif {
						prev += delta
					}
					y = append(y, prev)
				}
				i, dup = j, true
			} else {
				return out, lineErrf(ErrSyntax, "unexpected character %q in data", rune(c))
			}
		}
		afterDup = dup
		if len(y)-len(buf) > limit {
			return out, errTooManyOrdinates
		}
	}
	out.y = y
	out.endDif = last == dif
	return out, nil
}

// pseudoNumber decodes an SQZ or DIF token whose pseudo-digit at s[i]
// stands for the digit d with sign neg; following digits continue it.
func pseudoNumber(s string, i int, d byte, neg bool) (float64, int) {
	j := i + 1
	for j < len(s) && isDigit(s[j]) {
		j++
	}
	v := atof(string('0'+d) + s[i+1:j])
	if neg {
		v = -v
	}
	return v, j
}

// ambiguousExponent rejects "1.5E3": in compressed data E3 would be the
// SQZ value 53, yet a writer of decimals most likely meant 1500. Signed
// exponents ("1.5E+3") are unambiguous and accepted.
func ambiguousExponent(s string, start, end int) *lineError {
	if end < len(s) && (s[end] == 'E' || s[end] == 'e') {
		for k := start; k < end; k++ {
			if s[k] == '.' {
				return lineErrf(ErrSyntax, "ambiguous exponent in %q: write the exponent with a sign (E+n, E-n)", clip(s[start:]))
			}
		}
	}
	return nil
}

func skipBlanks(s string, i int) int {
	for i < len(s) && (s[i] == ' ' || s[i] == '\t') {
		i++
	}
	return i
}

// clip shortens s for quoting in a message.
func clip(s string) string {
	const n = 24
	if len(s) > n {
		return s[:n] + "…"
	}
	return s
}
