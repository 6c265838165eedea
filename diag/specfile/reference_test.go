package specfile

import (
	"bytes"
	"maps"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"testing"
)

// parseTextReference is parseText as it was before the one-pass reader of
// the data rows (two passes over content lines): the reference that
// TestReadTextMatchesReference and FuzzReadText compare with, result and
// error alike.
func parseTextReference(name string, data []byte, opt TextOptions, lim Limits) (*Spectrum, error) {
	checkTextOptions(opt)
	sp := &Spectrum{Meta: map[string]string{}, Format: FormatText}
	sc := newLineScanner(name, data, lim)
	src := sc.data

	// Pass 1: separate comments from content. ';'-prefixed lines are kept
	// aside until the delimiter is known.
	content := make([]contentLine, 0, sc.lineCountHint())
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
		}
	}

	// Find the header candidate and the first data line among the
	// unambiguous lines, and detect the delimiter from the latter.
	delim := opt.Delimiter
	if delim == 0 {
		delim = ' '
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
			delim = detectDelimiter(l.str(src))
			break
		}
	}
	if delim != ';' {
		kept := content[:0]
		for _, l := range content {
			if l.semi {
				addCommentMeta(sp, strings.TrimLeft(l.str(src), ";"))
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

	// Units from the header, if its columns line up with the data.
	var headerUnit AxisUnit
	if header != nil {
		sp.Meta["header"] = header.str(src)
		names := splitHeader(header.str(src), delim, ncols)
		switch {
		case len(names) == ncols:
			sp.Meta["x_column"] = names[xc]
			sp.Meta["y_column"] = names[yc]
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

	sink.x = make([]float64, 0, min(len(content), lim.MaxPoints))
	sink.y = make([]float64, 0, min(len(content), lim.MaxPoints))
	for _, l := range content {
		if x, y, ok := fastRow(l.str(src), byte(delim), byte(dec), ncols, xc, yc); ok {
			if err := sink.add(x, y, l.num); err != nil {
				return nil, err
			}
			continue
		}
		// The general path, which also words every error.
		fields = splitFields(l.str(src), delim)
		if len(fields) != ncols {
			return nil, errf(name, l.num, ErrSyntax, "line has %d columns, expected %d as on line %d", len(fields), ncols, first.num)
		}
		x, err := fieldValue(name, l.num, fields[xc], dec, "x value")
		if err != nil {
			return nil, err
		}
		y, err := fieldValue(name, l.num, fields[yc], dec, "intensity")
		if err != nil {
			return nil, err
		}
		if err := sink.add(x, y, l.num); err != nil {
			return nil, err
		}
	}
	if err := sink.finish(sc.lastLine()); err != nil {
		return nil, err
	}
	sp.X, sp.Y = sink.x, sink.y
	return sp, nil
}

// checkMatchesReference asserts that parseText gives what
// parseTextReference gives for data: the same error text, or the same
// points (bit for bit), units, title and Meta.
func checkMatchesReference(t *testing.T, data []byte, opt TextOptions, lim Limits) {
	t.Helper()
	lim = lim.withDefaults()
	got, err := parseText("f.csv", bytes.Clone(data), opt, lim, nil)
	want, werr := parseTextReference("f.csv", bytes.Clone(data), opt, lim)
	if (err == nil) != (werr == nil) || err != nil && err.Error() != werr.Error() {
		t.Fatalf("%q %+v: error %v, reference %v", data, opt, err, werr)
	}
	if err != nil {
		return
	}
	same := func(a, b []float64) bool {
		if len(a) != len(b) {
			return false
		}
		for i := range a {
			if math.Float64bits(a[i]) != math.Float64bits(b[i]) {
				return false
			}
		}
		return true
	}
	if !same(got.X, want.X) || !same(got.Y, want.Y) || got.XUnit != want.XUnit || got.YUnit != want.YUnit ||
		got.Title != want.Title || !maps.Equal(got.Meta, want.Meta) || got.Format != want.Format {
		t.Fatalf("%q %+v: result differs from the reference:\n%+v\n%+v", data, opt, got, want)
	}
}

// TestReadTextMatchesReference: on every text file and test input, and
// on random edits of them (lines swapped, deleted, duplicated, made too
// long, given comments, ';' lines, CRLF, exponents, spaces, garbage), the
// one-pass reader gives the two-pass reference's result or error.
func TestReadTextMatchesReference(t *testing.T) {
	var inputs [][]byte
	for _, p := range []string{"*.csv", "*.txt", "*.tsv"} {
		files, _ := filepath.Glob(filepath.Join("testdata", p))
		for _, f := range files {
			inputs = append(inputs, readTestdata(t, filepath.Base(f)))
		}
	}
	if b, err := os.ReadFile("../../testdata/spectra/scipy_bench_2048.csv"); err == nil {
		inputs = append(inputs, b)
	}
	for _, tt := range textOKTests {
		inputs = append(inputs, []byte(tt.in))
	}
	for _, tt := range textErrorTests {
		inputs = append(inputs, []byte(tt.in))
	}
	opts := []TextOptions{{}, {Delimiter: ','}, {Delimiter: ';'}, {Delimiter: '\t'}, {Delimiter: ' '}, {Decimal: ','},
		{Decimal: '.'}, {XColumn: 2, YColumn: 1}, {YColumn: 2}, {XColumn: 1}}
	lims := []Limits{{}, {MaxLineLen: 4}, {MaxLineLen: 5}, {MaxLineLen: 12}, {MaxLineLen: 17}, {MaxLineLen: 18},
		{MaxPoints: 5}, {MaxPoints: 2047}, {MinPoints: 30}}
	// Comments whose keys collide, before, among and after the data:
	// '#' comments in file order, then ';' comments, then the header.
	inputs = append(inputs,
		[]byte("# a: 0\nx,y\n1,2\n; a: 1\n2,3\n# a: 2\n3,4\n; b: 1\n# b: 2\n4,5\n# header: h\n5,6\n6,7\n7,8\n8,9\n"),
		[]byte("; a: 1\n# a: 2\nx,y\n1,2\n2,3\n3,4\n4,5\n5,6\n6,7\n7,8\n; title: s\n# Title: t\n"),
		[]byte("1;2\n; a: 1\n2;3\n# a: 2\n3;4\n4;5\n5;6\n"))
	pieces := []string{"", "\n", "\r\n", "# a: 1\n", "; a: 2\n", ";x=3\n", "% title: t\n", "// c\n", " \t\n", ",,\n",
		"1e3,5\n", "2,3,4\n", "x,y\n", "\"7\",8\n", "nan,1\n", "1;2\n", "1.5,2,5\n", "9 9\n", strings.Repeat("1", 20) + ",2\n",
		"-0,0\n", "+.5,5.\n", "3\r", "0.00000000000000000000001,1\n", "\ufeff", "wavelength (nm),counts\n"}
	r := rand.New(rand.NewPCG(17, 2048))
	for _, in := range inputs {
		for _, opt := range opts {
			if opt.Delimiter == ',' && opt.Decimal == ',' {
				continue
			}
			for _, lim := range lims {
				checkMatchesReference(t, in, opt, lim)
			}
		}
		lines := strings.SplitAfter(string(in), "\n")
		for range 200 {
			ls := slices.Clone(lines)
			for range 1 + r.IntN(4) {
				if len(ls) == 0 {
					break
				}
				i := r.IntN(len(ls))
				switch r.IntN(6) {
				case 0:
					ls = slices.Delete(ls, i, i+1)
				case 1:
					ls = slices.Insert(ls, i, ls[r.IntN(len(ls))])
				case 2:
					ls = slices.Insert(ls, i, pieces[r.IntN(len(pieces))])
				case 3:
					j := r.IntN(len(ls))
					ls[i], ls[j] = ls[j], ls[i]
				case 4:
					ls[i] = strings.ReplaceAll(ls[i], "\n", "\r\n")
				case 5:
					if k := len(ls[i]); k > 0 {
						p := r.IntN(k)
						ls[i] = ls[i][:p] + pieces[r.IntN(len(pieces))] + ls[i][p:]
					}
				}
			}
			opt := opts[r.IntN(len(opts))]
			checkMatchesReference(t, []byte(strings.Join(ls, "")), opt, lims[r.IntN(len(lims))])
		}
	}
}

// TestPlainRowsMatchesReference: files of many rows of two plain
// decimals, as plainRows reads them two numbers at a time (zero to nine
// integer and fraction digits, signs, integers without a point, points
// without digits, the other decimal separator, CR LF ends, rows out of
// order, rows too long, another separator in a row, a last line with or
// without its end), give the two-pass
// reference reader's result or error, with and without limits.
func TestPlainRowsMatchesReference(t *testing.T) {
	r := rand.New(rand.NewPCG(34, 2048))
	digits := func(n int) string {
		b := make([]byte, n)
		for i := range b {
			b[i] = byte('0' + r.IntN(10))
		}
		return string(b)
	}
	// num writes a decimal whose digit counts favour the fast path but
	// reach past it.
	bare := false
	num := func(point byte) string {
		var s string
		switch r.IntN(20) {
		case 0:
			s = "-"
		case 1:
			s = "+"
		}
		ni, nf := r.IntN(10), r.IntN(10)
		if r.IntN(3) > 0 {
			ni, nf = 1+r.IntN(7), r.IntN(8)
		}
		s += digits(ni)
		if ni == 0 && (nf > 0 && r.IntN(2) == 0 || nf == 0 && (!bare || r.IntN(8) > 0)) {
			s += "0" // else ".5", or in some files "." alone, which is no number
		}
		if r.IntN(12) > 0 {
			s += string(point) + digits(nf)
		}
		return s
	}
	lims := []Limits{{}, {MaxLineLen: 17}, {MaxLineLen: 33}, {MaxPoints: 100}}
	read := 0
	for trial := range 400 {
		bare = trial%4 == 2
		point, delim := byte('.'), byte(',')
		opt := TextOptions{}
		if trial%5 == 4 {
			point, delim = ',', ';'
			opt = TextOptions{Delimiter: ';', Decimal: ','}
		}
		eol := "\n"
		if trial%3 == 2 {
			eol = "\r\n"
		}
		var b strings.Builder
		b.WriteString("wavelength_nm" + string(delim) + "counts" + eol)
		x := 100 + r.Float64()*500
		step := 1.0
		desc := trial%8 == 7 // a descending axis
		if desc {
			step = -1
		}
		rows := 20 + r.IntN(200)
		for i := range rows {
			// An axis written with six decimals, as spectrometers do,
			// now and then in another form.
			x += step * (0.001 + r.Float64())
			xs := strconv.FormatFloat(x, 'f', 6, 64)
			if point != '.' {
				xs = strings.Replace(xs, ".", string(point), 1)
			}
			if (trial%4 == 1 || bare) && r.IntN(40) == 0 { // most likely out of order
				xs = num(point)
			}
			sep := string(delim)
			if trial%4 == 0 && r.IntN(60) == 0 { // a row with another separator
				sep = string("x ;:|e\t"[r.IntN(7)])
			}
			ys := num(point)
			if r.IntN(50) == 0 { // a value the rows' path declines
				ys = []string{".", ".5", "-.5", "+.5", "-1.5", "+2", "5.", "0.", "-0"}[r.IntN(9)]
			}
			if desc && r.IntN(2) == 0 { // in order on a descending axis
				switch i {
				case rows - 2: // not the last row, which the rows' path leaves alone
					xs = []string{".", ".5", "+.5", "0.", "1."}[r.IntN(5)]
				case rows - 1:
					xs = "-7.25"
				}
			}
			if point != '.' {
				ys = strings.Replace(ys, ".", string(point), 1)
				xs = strings.Replace(xs, ".", string(point), 1)
			}
			b.WriteString(xs + sep + ys)
			if i < rows-1 || r.IntN(2) == 0 {
				b.WriteString(eol)
			}
		}
		data := []byte(b.String())
		for _, lim := range lims {
			checkMatchesReference(t, data, opt, lim)
		}
		if _, err := parseText("f.csv", bytes.Clone(data), opt, Limits{}.withDefaults(), nil); err == nil {
			read++
		}
	}
	// Most files are read in full (the others end in an error, also
	// compared): the rows' path is exercised, not only its way out.
	if read < 80 {
		t.Errorf("only %d of 400 files read without error", read)
	}
}
