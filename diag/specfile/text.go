package specfile

import (
	"errors"
	"fmt"
	"io"
	"math/bits"
	"strings"
	"unicode"
)

// ReadText reads a delimited-text spectrum (CSV and relatives) from r with
// the default [Limits]; use [Read] to change them. name is used only in
// error messages.
//
// The accepted layout, line by line:
//
//   - Blank lines, and lines holding only delimiters, are skipped.
//   - Lines starting with "#", "%" or "//" are comments, and so are lines
//     starting with ";" unless ';' is the delimiter. A comment of the form
//     "key: value" or "key = value" (key starting with a letter) is stored
//     in Spectrum.Meta; the key "title" (any case) also sets Title.
//   - The first non-comment line is a header row if none of its fields is
//     a number. Header names give the X unit ("wavelength_nm",
//     "Wavelength (nm)", "lambda [A]", "wavenumber/cm-1", "λ (Å)",
//     "wavelength_um") and the Y unit ("intensity (counts)", "counts").
//     A wavelength column without a unit gives UnknownUnit, never a guess.
//   - Every other line is a data row with the same number of columns as the
//     first data row. One trailing delimiter per row is ignored, and fields
//     may be wrapped in double quotes (delimiters inside quotes are not).
//   - Free-text preamble lines must be comments; there is no way to skip
//     arbitrary leading lines.
//
// A UTF-8 BOM and CRLF line ends are accepted. See [TextOptions] for how the
// delimiter, decimal separator, columns and unit are chosen; an explicit
// option always overrides detection, and a conflict between TextOptions.XUnit
// and the header's unit is an error (ErrUnitConflict) unless
// TextOptions.ForceXUnit is set.
//
// Values are decimal numbers ("656.28", "-1.5e3"; "656,28" with a decimal
// comma). NaN and infinities are rejected, as are hex floats and thousands
// separators. X must be strictly monotonic; descending data are returned
// reversed to ascending order.
//
// ReadText panics if opt is invalid: an unsupported Delimiter or Decimal, a
// negative column, or XColumn == YColumn != 0. Errors about the data are
// *ParseError values naming the line.
func ReadText(name string, r io.Reader, opt TextOptions) (*Spectrum, error) {
	lim := Limits{}.withDefaults()
	data, err := readAll(name, r, lim)
	if err != nil {
		return nil, err
	}
	return parseText(name, data, opt, lim, nil)
}

// textLine is a line of a file with its number.
type textLine struct {
	num  int
	s    string
	semi bool // starts with ';': a comment unless ';' is the delimiter
}

// contentLine is a non-blank, non-comment line of a text file, trimmed of
// white space: src[start:end] of the file's text src. It holds no pointer,
// so a file's worth of them costs the garbage collector nothing.
type contentLine struct {
	num        int
	start, end int
	semi       bool // starts with ';': a comment unless ';' is the delimiter
}

func (l contentLine) str(src string) string { return src[l.start:l.end] }

func checkTextOptions(opt TextOptions) {
	switch opt.Delimiter {
	case 0, ',', ';', '\t', ' ':
	default:
		panic(fmt.Sprintf("specfile: unsupported TextOptions.Delimiter %q", opt.Delimiter))
	}
	switch opt.Decimal {
	case 0, '.', ',':
	default:
		panic(fmt.Sprintf("specfile: unsupported TextOptions.Decimal %q", opt.Decimal))
	}
	if opt.Delimiter == ',' && opt.Decimal == ',' {
		panic("specfile: TextOptions: ',' cannot be both delimiter and decimal separator")
	}
	if opt.XColumn < 0 || opt.YColumn < 0 {
		panic("specfile: TextOptions: negative column")
	}
	if opt.XColumn != 0 && opt.XColumn == opt.YColumn {
		panic("specfile: TextOptions: XColumn == YColumn")
	}
}

// headLines bounds the content lines read before the delimiter, header,
// decimal separator and columns must be decided for the one-pass reading
// of the rest; a file that decides later is read with everything in
// memory first (the same result, more slowly).
const headLines = 8

func parseText(name string, data []byte, opt TextOptions, lim Limits, buf *Buffers) (*Spectrum, error) {
	checkTextOptions(opt)
	sc := newLineScanner(name, data, lim)
	sp, err := parseTextLines(sc, opt, lim, buf)
	if err != nil {
		// Every line's length is checked before anything else, as a first
		// pass over the file would: an over-long line after the one at
		// fault wins.
		if errors.Is(err, ErrLineTooLong) {
			return nil, err
		}
		for {
			_, ok, lerr := sc.next()
			if lerr != nil {
				return nil, lerr
			}
			if !ok {
				return nil, err
			}
		}
	}
	return sp, nil
}

// parseTextLines reads the head of the file (comments and the content
// lines up to the first data row that decides the format), then the rest
// line by line, data rows of the usual two-column form without slicing
// them into lines first.
func parseTextLines(sc *lineScanner, opt TextOptions, lim Limits, buf *Buffers) (*Spectrum, error) {
	name := sc.name
	sp := &Spectrum{Meta: map[string]string{}, Format: FormatText}
	src := sc.data

	// The head: separate comments from content. ';'-prefixed lines are
	// kept aside until the delimiter is known. The head ends with the
	// content line that decides the format (or at the end of the file).
	content := make([]contentLine, 0, headLines)
	checking := true
	for {
		line, ok, err := sc.next()
		if err != nil {
			return nil, err
		}
		if !ok {
			break
		}
		t := strings.TrimSpace(line)
		switch {
		case onlyDelimiters(t):
			// blank, or delimiters only
		case t[0] == '#' || t[0] == '%' || strings.HasPrefix(t, "//"):
			addCommentMeta(sp, strings.TrimLeft(t, "#%/"))
		default:
			start := sc.start
			if len(t) != len(line) {
				start += strings.Index(line, t)
			}
			content = append(content, contentLine{num: sc.num, start: start, end: start + len(t), semi: t[0] == ';'})
			if checking {
				if len(content) > headLines {
					checking = false
				} else if headDecided(src, content, opt) {
					goto decided
				}
			}
		}
	}
decided:

	// Find the header candidate and the first data line among the
	// unambiguous lines, and detect the delimiter from the latter.
	delim := opt.Delimiter
	if delim == 0 {
		delim = detectDelimiterOf(src, content)
	}
	// ';' lines are comments unless ';' is the delimiter. Their text goes
	// into Meta after every '#' comment's, as in a reader that sorts the
	// lines first.
	var semiMeta []string
	if delim != ';' {
		kept := content[:0]
		for _, l := range content {
			if l.semi {
				semiMeta = append(semiMeta, strings.TrimLeft(l.str(src), ";"))
			} else {
				kept = append(kept, l)
			}
		}
		content = kept
	}

	var header *contentLine
	if len(content) > 0 && isHeaderLine(content[0].str(src)) {
		header = &content[0]
		content = content[1:]
	}
	sink := &pointSink{name: name, lim: lim}
	if len(content) == 0 {
		return nil, sink.finish(sc.lastLine())
	}

	dec := opt.Decimal
	if dec == 0 {
		var err error
		if dec, err = detectDecimal(name, src, content, delim); err != nil {
			return nil, err
		}
	}

	// Choose columns from the first data row.
	first := content[0]
	fields := splitFields(first.str(src), delim)
	ncols := len(fields)
	xc, yc := opt.XColumn-1, opt.YColumn-1
	for _, c := range []int{xc, yc} {
		if c >= ncols {
			return nil, errf(name, first.num, ErrSyntax, "column %d requested but the line has %d columns", c+1, ncols)
		}
	}
	if xc < 0 || yc < 0 {
		var numeric []int
		for i, f := range fields {
			if _, ok := parseField(f, dec); ok {
				numeric = append(numeric, i)
			}
		}
		if xc < 0 {
			for _, i := range numeric {
				if i != yc {
					xc = i
					break
				}
			}
		}
		if yc < 0 {
			for _, i := range numeric {
				if i > xc {
					yc = i
					break
				}
			}
		}
		if xc < 0 || yc < 0 {
			return nil, errf(name, first.num, ErrSyntax, "need two numeric columns, found %d", len(numeric))
		}
	}

	// Units from the header, if its columns line up with the data. The
	// header's Meta entries are set last, over any comment's.
	var headerUnit AxisUnit
	var headerMeta []string // header, x column, y column
	if header != nil {
		headerMeta = []string{header.str(src)}
		names := splitHeader(header.str(src), delim, ncols)
		switch {
		case len(names) == ncols:
			headerMeta = append(headerMeta, names[xc], names[yc])
			headerUnit = unitFromName(names[xc])
			sp.YUnit = yUnitFromName(names[yc])
		case delim != ' ':
			return nil, errf(name, header.num, ErrSyntax, "header has %d columns but data line %d has %d", len(names), first.num, ncols)
		}
	}
	sp.XUnit = headerUnit
	if opt.XUnit != UnknownUnit {
		if headerUnit != UnknownUnit && headerUnit != opt.XUnit && !opt.ForceXUnit {
			return nil, errf(name, header.num, ErrUnitConflict, "header declares x unit %s but %s was requested", headerUnit, opt.XUnit)
		}
		sp.XUnit = opt.XUnit
	}

	size := min(len(content)+sc.lineCountHint(), lim.MaxPoints)
	if buf != nil && cap(buf.X) >= size && cap(buf.Y) >= size {
		sink.x, sink.y = buf.X[:0], buf.Y[:0]
	} else {
		sink.x = make([]float64, 0, size)
		sink.y = make([]float64, 0, size)
	}
	row := func(l contentLine) error {
		if x, y, ok := fastRow(l.str(src), byte(delim), byte(dec), ncols, xc, yc); ok {
			return sink.add(x, y, l.num)
		}
		// The general path, which also words every error.
		fields := splitFields(l.str(src), delim)
		if len(fields) != ncols {
			return errf(name, l.num, ErrSyntax, "line has %d columns, expected %d as on line %d", len(fields), ncols, first.num)
		}
		x, err := fieldValue(name, l.num, fields[xc], dec, "x value")
		if err != nil {
			return err
		}
		y, err := fieldValue(name, l.num, fields[yc], dec, "intensity")
		if err != nil {
			return err
		}
		return sink.add(x, y, l.num)
	}
	for _, l := range content {
		if err := row(l); err != nil {
			return nil, err
		}
	}

	// The rest of the file, line by line. A line of exactly "number,
	// delimiter, number" (the usual two-column row) is read in place;
	// every other line takes the head's path.
	two := ncols == 2 && delim != ' '
	d, pt := byte(delim), byte(dec)
	for sc.pos < len(src) {
		if two {
			plainRows(sc, sink, d, pt, xc != 0)
			if sc.pos >= len(src) {
				break
			}
			if a, b, end, next, ok := plainPair(src, sc.pos, d, pt); ok && end-sc.pos <= sc.maxLen {
				x, y := a, b
				if xc != 0 {
					x, y = b, a
				}
				sc.num++
				sc.start, sc.pos = sc.pos, next
				if n := len(sink.x); n > 0 && n < lim.MaxPoints && (sink.dir > 0 && x > sink.x[n-1] || sink.dir < 0 && x < sink.x[n-1]) {
					sink.x = append(sink.x, x)
					sink.y = append(sink.y, y)
					sink.lastLine = sc.num
				} else if err := sink.add(x, y, sc.num); err != nil {
					return nil, err
				}
				continue
			}
		}
		line, ok, err := sc.next()
		if err != nil {
			return nil, err
		}
		if !ok {
			break
		}
		t := strings.TrimSpace(line)
		switch {
		case onlyDelimiters(t):
		case t[0] == '#' || t[0] == '%' || strings.HasPrefix(t, "//"):
			addCommentMeta(sp, strings.TrimLeft(t, "#%/"))
		case t[0] == ';' && delim != ';':
			semiMeta = append(semiMeta, strings.TrimLeft(t, ";"))
		default:
			start := sc.start
			if len(t) != len(line) {
				start += strings.Index(line, t)
			}
			if err := row(contentLine{num: sc.num, start: start, end: start + len(t), semi: t[0] == ';'}); err != nil {
				return nil, err
			}
		}
	}
	if err := sink.finish(sc.lastLine()); err != nil {
		return nil, err
	}
	for _, m := range semiMeta {
		addCommentMeta(sp, m)
	}
	if len(headerMeta) > 0 {
		sp.Meta["header"] = headerMeta[0]
		if len(headerMeta) == 3 {
			sp.Meta["x_column"] = headerMeta[1]
			sp.Meta["y_column"] = headerMeta[2]
		}
	}
	sp.X, sp.Y = sink.x, sink.y
	return sp, nil
}

// detectDelimiterOf picks the delimiter from the content lines: from the
// first line that is not ';'-prefixed, or the second if the first is a
// header; ' ' if there is none.
func detectDelimiterOf(src string, content []contentLine) rune {
	seenFirst := false
	for _, l := range content {
		if l.semi {
			continue
		}
		if !seenFirst {
			seenFirst = true
			if isHeaderLine(l.str(src)) {
				continue
			}
		}
		return detectDelimiter(l.str(src))
	}
	return ' '
}

// headDecided reports whether the content lines so far decide everything
// the rest of the file cannot change: the delimiter, the header, the
// first data row and the decimal separator.
func headDecided(src string, content []contentLine, opt TextOptions) bool {
	delim := opt.Delimiter
	var rest []contentLine // content lines after ';' comments are set aside
	if delim == 0 {
		seenFirst, found := false, false
		for _, l := range content {
			if l.semi {
				continue
			}
			if !seenFirst {
				seenFirst = true
				if isHeaderLine(l.str(src)) {
					continue
				}
			}
			found = true
			delim = detectDelimiter(l.str(src))
			break
		}
		if !found {
			return false
		}
	}
	for _, l := range content {
		if delim == ';' || !l.semi {
			rest = append(rest, l)
		}
	}
	if len(rest) > 0 && isHeaderLine(rest[0].str(src)) {
		rest = rest[1:]
	}
	if len(rest) == 0 {
		return false
	}
	if opt.Decimal != 0 || delim == ',' {
		return true
	}
	for _, l := range rest {
		if strings.ContainsAny(l.str(src), ".,") {
			return true
		}
	}
	return false
}

// plainRows reads the rows of the usual two-column form (plainPair; b
// before a if swap) from sc's position on, for as long as each continues
// the sink's known order within its point limit and its arrays' capacity:
// what the row loop of parseTextLines does with such rows, with its state
// in locals and the arrays written in place. It stops before the first
// row that needs more (not plain, too long, the first point, out of
// order, over the limit), which that loop then reads.
func plainRows(sc *lineScanner, sink *pointSink, d, pt byte, swap bool) {
	xs, ys := sink.x, sink.y
	n := len(xs)
	if n == 0 || sink.dir == 0 {
		return
	}
	src := sc.data
	pos, start, num := sc.pos, sc.start, sc.num
	last, asc, maxLen := xs[n-1], sink.dir > 0, sc.maxLen
	limit := min(sink.lim.MaxPoints, cap(xs), cap(ys))
	xs, ys = xs[:limit], ys[:limit]
	if asc && !swap && maxLen >= 34 {
		// The usual file first: its rows by ascRows, until one is not
		// of the fast form (or not in order, or over the limit), which
		// the loop below reads (or stops at) as before.
		var rows int
		pos, n, last, start, rows = ascRows(src, pos, n, xs, ys, last, start, d, pt)
		num += rows
	}
rows:
	for n < limit && pos < len(src) {
		// The usual row, two unsigned numbers with a point, is read here
		// as plainNum's first branch reads it (the same values, bit for
		// bit), every other row by plainNum.
		var a, b float64
		i, j := -1, -1
		if pos+34 <= len(src) {
			r := src[pos : pos+34]
			w := load8(r, 0)
			da := digitsIn(w)
			if da > 0 && da < 8 && r[da] == pt {
				w2 := load8(r[da+1:], 0)
				if fa := digitsIn(w2); fa < 8 && r[da+1+fa] == d {
					ma := int64(swarValue(w, da)*pow10u[fa] + swarValue(w2, fa))
					k := da + 2 + fa // b's start in r (≤ 17)
					w3 := load8(r[k:], 0)
					db := digitsIn(w3)
					if db > 0 && db < 8 && r[k+db] == pt {
						w4 := load8(r[k+db+1:], 0)
						if fb := digitsIn(w4); fb < 8 {
							mb := int64(swarValue(w3, db)*pow10u[fb] + swarValue(w4, fb))
							a, i = float64(ma)/pow10tab[fa&7], pos+da+1+fa
							b, j = float64(mb)/pow10tab[fb&7], pos+k+db+1+fb
						}
					}
				}
			}
		}
		if j < 0 {
			a, i = plainNum(src, pos, pt)
			if i < 0 || i >= len(src) || src[i] != d {
				break
			}
			b, j = plainNum(src, i+1, pt)
		}
		if j < 0 || j-pos > maxLen {
			break
		}
		next := j
		if j < len(src) {
			switch c := src[j]; {
			case c == '\n':
				next = j + 1
			case c == '\r' && (j+1 == len(src) || src[j+1] == '\n'):
				next = min(j+2, len(src))
			default:
				break rows
			}
		}
		x, y := a, b
		if swap {
			x, y = b, a
		}
		if asc && !(x > last) || !asc && !(x < last) {
			break
		}
		xs[n], ys[n] = x, y
		n++
		last = x
		num++
		start, pos = pos, next
	}
	if num != sc.num {
		sink.lastLine = num
	}
	sc.pos, sc.start, sc.num = pos, start, num
	sink.x, sink.y = xs[:n], ys[:n]
}

// ascRows is plainRows' loop for an ascending axis, x first and lines
// of up to 34 bytes allowed (maxLen ≥ 34), restricted to rows of its
// fast form ("I.F<d>I.F" or "I.F<d>I", 1–7 digits before each point,
// 0–7 after, ending with "\n" or "\r\n") that continue the order: the
// same values, bit for bit, by the same operations. With fewer variables live than plainRows' loop, the
// compiler keeps them in registers. From pos, with n points in xs and ys
// (whose length is the point limit) and last the last x, it reads rows
// until one is not of that form, is out of order, or would pass the
// limit, and returns the new pos, n, last, the start of the last row read
// (start if none) and the number of rows read.
func ascRows(src string, pos, n int, xs, ys []float64, last float64, start int, d, pt byte) (int, int, float64, int, int) {
	ys = ys[:len(xs)]
	rows := 0
	for n < len(xs) && pos+34 <= len(src) {
		r := src[pos : pos+34]
		// digits7 says 7 for eight digits, and the byte after the
		// seventh, a digit, then fails the test of the separator.
		w := load8(r, 0)
		da := digits7(w)
		if da == 0 || r[da] != pt {
			break
		}
		w2 := load8(r[da+1:], 0)
		fa := digits7(w2)
		if r[da+1+fa] != d {
			break
		}
		k := da + 2 + fa // b's start in r (≤ 16)
		w3 := load8(r[k:], 0)
		db := digits7(w3)
		if db == 0 {
			break
		}
		// b with a point and 0–7 digits after it, or a whole number (as
		// plainNum's second branch reads it, counts are often written
		// so: its value is the same with fb = 0, an exact division by 1).
		e := k + db // the end of b in r (≤ 31)
		fb, w4 := 0, uint64(0)
		if r[e] == pt {
			w4 = load8(r[e+1:], 0)
			fb = digits7(w4)
			e += 1 + fb
		}
		// The row ends with "\n" or "\r\n" (e then at its "\n"; e ≤ 31:
		// the masks only let the compiler see it).
		if c := r[e&31]; c != '\n' {
			if c != '\r' || r[e&31+1] != '\n' {
				break
			}
			e++
		}
		ma := int64(swarValue(w, da)*pow10u[fa] + swarValue(w2, fa))
		mb := int64(swarValue(w3, db)*pow10u[fb] + swarValue(w4, fb))
		x := float64(ma) / pow10tab[fa&7]
		if !(x > last) {
			break
		}
		xs[n], ys[n] = x, float64(mb)/pow10tab[fb&7]
		n++
		last = x
		rows++
		start, pos = pos, pos+e+1
	}
	return pos, n, last, start, rows
}

// plainPair reads a line at s[i:] of exactly "a<delim>b" followed by
// "\n", "\r\n", "\r" at the end of s, or the end of s, where a and b are
// plain decimals (sign, digits, point; no exponent) of at most 19 digits
// whose values are exact products or quotients of a mantissa up to 2⁵³
// and a power of ten up to 10²²: the values scanNumber gives, bit for
// bit, always finite. end is the end of the line's text and next the
// start of the next line. ok is false for any other line.
func plainPair(s string, i int, delim, point byte) (a, b float64, end, next int, ok bool) {
	a, i, ok = plainNumber(s, i, point)
	if !ok || i >= len(s) || s[i] != delim {
		return 0, 0, 0, 0, false
	}
	b, i, ok = plainNumber(s, i+1, point)
	if !ok {
		return 0, 0, 0, 0, false
	}
	switch {
	case i == len(s):
		return a, b, i, i, true
	case s[i] == '\n':
		return a, b, i, i + 1, true
	case s[i] == '\r' && (i+1 == len(s) || s[i+1] == '\n'):
		return a, b, i, min(i+2, len(s)), true
	}
	return 0, 0, 0, 0, false
}

// plainNumber scans a plain decimal for plainPair; ok is false if there
// is none or it is beyond the fast path.
func plainNumber(s string, i int, point byte) (v float64, end int, ok bool) {
	v, end = plainNum(s, i, point)
	if end < 0 {
		return 0, 0, false
	}
	return v, end, true
}

// plainNum is plainNumber with end −1 for no number.
func plainNum(s string, i int, point byte) (v float64, end int) {
	// Up to seven integer and seven fraction digits, eight bytes at a
	// time (the SWAR method of fast_float: Lemire, "Number parsing at a
	// gigabyte per second", Software: Practice and Experience 51, 2021).
	// With room for a sign and two words, one bounds test covers them:
	// the words are read from t, a slice of constant length, at offsets
	// the compiler can bound (d < 8), so that no other test is needed.
	if i >= 0 && i+17 <= len(s) {
		p := i
		c := s[p]
		neg := c == '-'
		if neg || c == '+' {
			p++
		}
		t := s[p : p+16]
		w := load8(t, 0)
		d := digitsIn(w)
		if d < 8 {
			if t[d] == point {
				w2 := load8(t[d+1:], 0)
				if f := digitsIn(w2); f < 8 && d+f > 0 {
					// At most 14 digits: exact in int64 and float64.
					m := int64(swarValue(w, d)*pow10u[f] + swarValue(w2, f))
					v = float64(m) / pow10tab[f&7]
					if neg {
						v = -v
					}
					return v, p + d + 1 + f
				}
			} else if d > 0 {
				v = float64(int64(swarValue(w, d)))
				if neg {
					v = -v
				}
				return v, p + d
			}
		}
	}
	neg := false
	if i < len(s) && (s[i] == '-' || s[i] == '+') {
		neg = s[i] == '-'
		i++
	}
	mant, nd, frac, i := decimalDigits(s, i, point)
	if nd == 0 || nd > 19 || mant > 1<<53 || frac > 22 {
		return 0, -1
	}
	v = float64(mant) / pow10tab[frac]
	if neg {
		v = -v
	}
	return v, i
}

// load8 returns s[i:i+8] as a little-endian word.
func load8(s string, i int) uint64 {
	b := s[i : i+8]
	return uint64(b[0]) | uint64(b[1])<<8 | uint64(b[2])<<16 | uint64(b[3])<<24 |
		uint64(b[4])<<32 | uint64(b[5])<<40 | uint64(b[6])<<48 | uint64(b[7])<<56
}

// digitsIn returns the number of leading decimal digits (0–8) of the
// little-endian word w.
func digitsIn(w uint64) int {
	// With v = w ^ "00000000", a byte is a digit iff its v is below 10:
	// neither v nor v + 0x76 has its top bit. Carries only leave
	// non-digit bytes (v ≥ 0x8A), upwards: the lowest flagged byte is
	// the first non-digit.
	v := w ^ 0x3030303030303030
	t := (v + 0x7676767676767676 | v) & 0x8080808080808080
	return bits.TrailingZeros64(t) >> 3
}

// digits7 is digitsIn but 7 for 8 digits (min(digitsIn(w), 7)).
func digits7(w uint64) int {
	v := w ^ 0x3030303030303030
	t := (v + 0x7676767676767676 | v) & 0x8080808080808080
	return bits.TrailingZeros64(t|1<<63) >> 3
}

// swarValue returns the value of the d leading digits (0–7) of w.
func swarValue(w uint64, d int) uint64 {
	if d == 0 {
		return 0
	}
	// Digit values shifted up so that the unused high bytes become
	// leading zeros (d ≥ 1: the shift is below 64).
	x := (w - 0x3030303030303030) << ((64 - 8*uint(d)) & 63)
	x = x*10 + x>>8
	return ((x&0x000000FF000000FF)*(100+1000000<<32) + (x>>16&0x000000FF000000FF)*(1+10000<<32)) >> 32
}

// pow10u[d] is 10^d.
var pow10u = [...]uint64{1, 10, 100, 1000, 10000, 100000, 1000000, 10000000, 100000000}

// addCommentMeta stores "key: value" or "key = value" comment text.
func addCommentMeta(sp *Spectrum, text string) {
	text = strings.TrimSpace(text)
	i := strings.IndexAny(text, ":=")
	if i <= 0 {
		return
	}
	key := strings.TrimSpace(text[:i])
	val := strings.TrimSpace(text[i+1:])
	if key == "" || len(key) > 64 || !unicode.IsLetter([]rune(key)[0]) {
		return
	}
	sp.Meta[key] = val
	if strings.EqualFold(key, "title") {
		sp.Title = val
	}
}

// isHeaderLine reports whether no field of s is a number: fields split at
// , ; or tab when the line has any of them, else at spaces.
func isHeaderLine(s string) bool {
	// Split at the strong delimiters when the line has any, so that a
	// header field with spaces and digits ("intensity (W m-2 nm-1)") stays
	// one name; otherwise at white space.
	sep := func(r rune) bool { return r == ',' || r == ';' || r == '\t' }
	if !strings.ContainsAny(s, ",;\t") {
		sep = func(r rune) bool { return r == ' ' }
	}
	for f := range strings.FieldsFuncSeq(s, sep) {
		if _, _, ok := parseDecimal(unquote(strings.TrimSpace(f))); ok {
			return false
		}
	}
	return true
}

// detectDelimiter picks the delimiter of a data line; see TextOptions.
func detectDelimiter(s string) rune {
	switch {
	case strings.ContainsRune(s, '\t'):
		return '\t'
	case strings.ContainsRune(s, ';'):
		return ';'
	case strings.ContainsRune(s, ','):
		for f := range strings.SplitSeq(s, ",") {
			if strings.ContainsAny(strings.TrimSpace(f), " \t") {
				return ' ' // "656,28 1234,5": decimal commas
			}
		}
		return ','
	}
	return ' '
}

// detectDecimal decides the decimal separator from the first data line
// that contains a '.' or a ','.
func detectDecimal(name, src string, content []contentLine, delim rune) (rune, error) {
	if delim == ',' {
		return '.', nil
	}
	for _, l := range content {
		dot := strings.ContainsRune(l.str(src), '.')
		comma := strings.ContainsRune(l.str(src), ',')
		switch {
		case dot && comma:
			return 0, errf(name, l.num, ErrSyntax, "ambiguous decimal separator: line has both '.' and ','")
		case comma:
			return ',', nil
		case dot:
			return '.', nil
		}
	}
	return '.', nil
}

// splitFields splits a data line and trims and unquotes each field. One
// trailing empty field (a trailing delimiter) is dropped.
func splitFields(s string, delim rune) []string {
	if delim == ' ' {
		fs := strings.Fields(s)
		for i := range fs {
			fs[i] = unquote(fs[i])
		}
		return fs
	}
	fs := strings.Split(s, string(delim))
	for i := range fs {
		fs[i] = unquote(strings.TrimSpace(fs[i]))
	}
	if len(fs) > 1 && fs[len(fs)-1] == "" {
		fs = fs[:len(fs)-1]
	}
	return fs
}

// splitHeader splits a header row. For whitespace-delimited files, where
// names like "Wavelength (nm)" contain spaces, it tries runs of two or
// more blanks, then gluing "(unit)" and "[unit]" tokens to the name before.
func splitHeader(s string, delim rune, ncols int) []string {
	fs := splitFields(s, delim)
	if delim != ' ' || len(fs) == ncols {
		return fs
	}
	var wide []string
	for _, f := range strings.Split(strings.ReplaceAll(s, "\t", "  "), "  ") {
		if f = strings.TrimSpace(f); f != "" {
			wide = append(wide, unquote(f))
		}
	}
	if len(wide) == ncols {
		return wide
	}
	var glued []string
	for _, f := range fs {
		if len(glued) > 0 && f != "" && (f[0] == '(' || f[0] == '[') {
			glued[len(glued)-1] += " " + f
		} else {
			glued = append(glued, f)
		}
	}
	return glued
}

func unquote(f string) string {
	if len(f) >= 2 && f[0] == '"' && f[len(f)-1] == '"' {
		return strings.TrimSpace(f[1 : len(f)-1])
	}
	return f
}

// parseField parses a numeric field with the given decimal separator.
func parseField(f string, dec rune) (float64, bool) {
	return parseNumber(f, byte(dec))
}

// onlyDelimiters reports whether t holds nothing but ',', ';', tab and
// space: a blank line, or one of delimiters only.
func onlyDelimiters(t string) bool {
	for i := 0; i < len(t); i++ {
		switch t[i] {
		case ',', ';', '\t', ' ':
		default:
			return false
		}
	}
	return true
}

// fastRow reads the x and y columns of a data line without allocating. It
// gives the values splitFields and fieldValue would give, and ok false
// whenever those would report an error, or a whitespace-delimited line has
// bytes outside ASCII (white space is then Unicode's, which the general
// path handles). Every failure is left to the general path to word.
//
// A wanted field is first read in place: white space, a number, white
// space, then the delimiter or the end of the line. Anything else in it
// (quotes, a stray character) takes the field the long way: cut, trimmed,
// unquoted and parsed as splitFields and fieldValue do.
func fastRow(s string, delim, dec byte, ncols, xc, yc int) (x, y float64, ok bool) {
	if ncols == 2 && delim != ' ' {
		// The usual two-column line, "656.28,1234.5": a number, the
		// delimiter, a number. Both fields are then exactly the numbers.
		a, e, ok1 := scanNumber(s, 0, dec)
		if ok1 && e < len(s) && s[e] == delim {
			if b, e2, ok2 := scanNumber(s, e+1, dec); ok2 && e2 == len(s) && isFinite(a) && isFinite(b) {
				if xc == 0 {
					return a, b, true
				}
				return b, a, true
			}
		}
	}
	var v float64
	n := 0 // fields seen
	if delim == ' ' {
		// strings.Fields on ASCII: runs of ASCII white space separate.
		i := 0
		for {
			for i < len(s) && asciiSpace(s[i]) {
				i++
			}
			if i == len(s) {
				break
			}
			want := n == xc || n == yc
			end := 0
			if want {
				v, end, ok = scanNumber(s, i, dec)
			}
			if !want || !ok || end < len(s) && !asciiSpace(s[end]) {
				end = i
				for end < len(s) && !asciiSpace(s[end]) {
					if s[end] >= 0x80 {
						return 0, 0, false
					}
					end++
				}
				if want {
					if v, ok = parseNumber(unquote(s[i:end]), dec); !ok {
						return 0, 0, false
					}
				}
			}
			if n == xc {
				x = v
			} else if n == yc {
				y = v
			}
			n++
			i = end
		}
	} else {
		lastEmpty := false
		for start := 0; ; {
			want := n == xc || n == yc
			next := -1 // start of the next field, -1 at the end of the line
			if want {
				i := start
				for i < len(s) && s[i] != delim && asciiSpace(s[i]) {
					i++
				}
				end := 0
				v, end, ok = scanNumber(s, i, dec)
				for ok && end < len(s) && s[end] != delim && asciiSpace(s[end]) {
					end++
				}
				switch {
				case ok && end == len(s):
				case ok && s[end] == delim:
					next = end + 1
				default:
					ok = false
				}
			}
			if !want || !ok {
				end := strings.IndexByte(s[start:], delim)
				if end >= 0 {
					next = start + end + 1
					end += start
				} else {
					end = len(s)
				}
				f := unquote(strings.TrimSpace(s[start:end]))
				if want {
					if v, ok = parseNumber(f, dec); !ok {
						return 0, 0, false
					}
				}
				lastEmpty = f == ""
			} else {
				lastEmpty = false
			}
			if n == xc {
				x = v
			} else if n == yc {
				y = v
			}
			n++
			if next < 0 {
				break
			}
			start = next
		}
		if n > 1 && lastEmpty {
			n-- // one trailing delimiter
		}
	}
	if n != ncols || !isFinite(x) || !isFinite(y) {
		return 0, 0, false
	}
	return x, y, true
}

// asciiSpace reports whether c is white space to strings.Fields.
func asciiSpace(c byte) bool {
	return c == ' ' || c == '\t' || c == '\n' || c == '\v' || c == '\f' || c == '\r'
}

// fieldValue parses the field f of line num, describing failures as the
// quantity what.
func fieldValue(name string, num int, f string, dec rune, what string) (float64, error) {
	if f == "" {
		return 0, errf(name, num, ErrSyntax, "empty %s", what)
	}
	v, ok := parseField(f, dec)
	if !ok {
		bare := strings.ToLower(strings.TrimLeft(f, "+-"))
		if bare == "nan" || bare == "inf" || bare == "infinity" {
			return 0, errf(name, num, ErrNotFinite, "non-finite %s %q", what, f)
		}
		hint := ""
		if dec == ',' && strings.ContainsRune(f, '.') {
			hint = " (decimal separator is ',')"
		} else if dec == '.' && strings.ContainsRune(f, ',') {
			hint = " (decimal separator is '.')"
		}
		return 0, errf(name, num, ErrSyntax, "non-numeric %s %q%s", what, f, hint)
	}
	if !isFinite(v) {
		return 0, errf(name, num, ErrNotFinite, "%s %q overflows float64", what, f)
	}
	return v, nil
}

// unitFromName infers an axis unit from a column name. It returns
// UnknownUnit unless exactly one unit is indicated.
func unitFromName(name string) AxisUnit {
	l := strings.ToLower(name)
	var found uint // bit u: unit u named
	for _, p := range []string{"cm-1", "cm^-1", "cm**-1", "cm⁻¹", "1/cm", "wavenumber", "wave number"} {
		if strings.Contains(l, p) {
			found |= 1 << WavenumberPerCM
		}
	}
	tokens := strings.FieldsFunc(l, func(r rune) bool { return !unicode.IsLetter(r) })
	for i, t := range tokens {
		switch t {
		case "nm", "nanometer", "nanometers", "nanometre", "nanometres":
			found |= 1 << NM
		case "å", "angstrom", "angstroms", "ångström", "ångströms", "ang":
			found |= 1 << Angstrom
		case "a":
			// "lambda [A]", but not "x (a.u.)".
			if i > 0 && i == len(tokens)-1 {
				found |= 1 << Angstrom
			}
		case "um", "µm", "μm", "micrometer", "micrometers", "micrometre", "micrometres", "micron", "microns":
			found |= 1 << Micrometer
		}
	}
	if bits.OnesCount(found) != 1 {
		return UnknownUnit
	}
	return AxisUnit(bits.TrailingZeros(found))
}

func yUnitFromName(name string) string {
	for _, br := range []string{"()", "[]"} {
		i := strings.IndexByte(name, br[0])
		j := strings.LastIndexByte(name, br[1])
		if i >= 0 && j > i {
			return strings.TrimSpace(name[i+1 : j])
		}
	}
	switch strings.ToLower(name) {
	case "counts", "count", "cps", "adu", "a.u.", "au", "arb", "arb. units", "arbitrary units":
		return name
	}
	return ""
}
