package specfile

import (
	"io"
	"math"
	"strings"
)

// ReadJCAMP reads a JCAMP-DX spectrum from r with the default [Limits]; use
// [Read] to change them. name is used only in error messages.
//
// Supported, per JCAMP-DX 4.24 and 5.01:
//
//   - Labels "##NAME=value". Names are compared ignoring case, blanks,
//     '-', '/' and '_' ("##DATA TYPE" = "##DATATYPE"); "$$" starts a
//     comment anywhere on a line. A value may continue on following lines.
//     Every label is copied to Spectrum.Meta under its name in upper case.
//   - ##TITLE (Spectrum.Title), ##JCAMP-DX (required), ##XUNITS
//     (NANOMETERS, ANGSTROMS, MICROMETERS, 1/CM and common variants; any
//     other gives UnknownUnit), ##YUNITS (Spectrum.YUnit as written),
//     ##XFACTOR and ##YFACTOR (default 1), ##FIRSTX, ##LASTX, ##DELTAX,
//     ##NPOINTS, ##FIRSTY.
//   - ##XYDATA=(X++(Y..Y)) in AFFN, PAC, SQZ, DIF and DUP forms, mixed
//     freely. FIRSTX, LASTX and NPOINTS are required.
//   - ##XYPOINTS=(XY..XY) and ##PEAK TABLE=(XY..XY) or (XYW..XYW) in AFFN:
//     x = XFACTOR·X, y = YFACTOR·Y (widths W are ignored).
//
// For XYDATA, point i = 0 … NPOINTS−1 with ordinate Y_i as written is
//
//	x_i = FIRSTX + i·(LASTX − FIRSTX)/(NPOINTS − 1)
//	y_i = YFACTOR·Y_i
//
// (FIRSTX and LASTX are actual values, not scaled by XFACTOR).
//
// Consistency checks, each an ErrInconsistent naming the line:
//
//   - the number of points must equal NPOINTS;
//   - each XYDATA line's abscissa times XFACTOR must lie within half a
//     point spacing, or half a unit of its last written digit if that is
//     coarser, of the x computed for its first ordinate; this checks FIRSTX
//     on the first line and LASTX on the last, and catches dropped or
//     doubled values;
//   - DELTAX, if given, must agree with (LASTX − FIRSTX)/(NPOINTS − 1) to
//     1 part in 1000;
//   - in DIF form the last ordinate of a line is repeated as the first of
//     the next (the Y-value check); the two must agree;
//   - XYPOINTS' FIRSTX and LASTX, if given, must lie within half a spacing
//     of the first and last X; FIRSTY, if given, must agree with the first
//     ordinate to 1 part in 10⁵ or one YFACTOR.
//
// Only the first block with data is read: in a linked file (##BLOCKS or
// ##DATA TYPE=LINK) nested blocks without data are skipped, and anything
// after the first data block's ##END= is ignored. ##NTUPLES and missing
// values ("?") give ErrUnsupported.
//
// In compressed data an unsigned exponent is ambiguous ("1.5E3" could be
// 1.5 followed by the SQZ value 53) and is rejected; "1.5E+3" is fine.
//
// Reference: R. S. McDonald and P. A. Wilks, "JCAMP-DX: A Standard Form for
// Exchange of Infrared Spectra in Computer Readable Form", Applied
// Spectroscopy 42(1), 151–162 (1988).
func ReadJCAMP(name string, r io.Reader) (*Spectrum, error) {
	lim := Limits{}.withDefaults()
	data, err := readAll(name, r, lim)
	if err != nil {
		return nil, err
	}
	return parseJCAMP(name, data, lim)
}

// jlabel is one "##KEY=value" label.
type jlabel struct {
	key  string // as written, upper case, trimmed
	val  string
	line int
}

// jblock is one ##TITLE ... ##END block.
type jblock struct {
	start    int
	labels   map[string]*jlabel // by normalised name
	order    []*jlabel
	last     *jlabel // label a continuation line belongs to
	table    *jtable // first data table
	inTable  bool    // lines go to table
	skipping bool    // inside a second data table, ignored
}

// jtable is a data table: its label and the non-blank lines under it.
type jtable struct {
	key   string // XYDATA, XYPOINTS or PEAKTABLE
	vars  string
	line  int
	lines []textLine
}

func (b *jblock) isLink() bool {
	if b.labels["BLOCKS"] != nil {
		return true
	}
	t := b.labels["DATATYPE"]
	return t != nil && strings.EqualFold(strings.TrimSpace(t.val), "LINK")
}

// normLabel normalises a label name for comparison.
func normLabel(s string) string {
	return strings.Map(func(r rune) rune {
		switch r {
		case ' ', '\t', '-', '/', '_':
			return -1
		}
		return r
	}, strings.ToUpper(s))
}

// stripComment removes a "$$" comment.
func stripComment(s string) string {
	if i := strings.Index(s, "$$"); i >= 0 {
		return s[:i]
	}
	return s
}

// coreLabels may appear only once per block.
var coreLabels = map[string]bool{
	"TITLE": true, "JCAMPDX": true, "XUNITS": true, "YUNITS": true,
	"XFACTOR": true, "YFACTOR": true, "FIRSTX": true, "LASTX": true,
	"DELTAX": true, "NPOINTS": true, "FIRSTY": true,
}

func parseJCAMP(name string, data []byte, lim Limits) (*Spectrum, error) {
	sc := newLineScanner(name, data, lim)
	var outer, inner *jblock
	cur := func() *jblock {
		if inner != nil {
			return inner
		}
		return outer
	}
	for {
		raw, ok, err := sc.next()
		if err != nil {
			return nil, err
		}
		if !ok {
			break
		}
		t := strings.TrimSpace(stripComment(raw))
		if !strings.HasPrefix(t, "##") {
			b := cur()
			switch {
			case t == "":
			case b == nil:
				return nil, errf(name, sc.num, ErrSyntax, "text before the first ##TITLE=")
			case b.inTable:
				b.table.lines = append(b.table.lines, textLine{num: sc.num, s: t})
			case b.skipping:
			case b.last != nil:
				b.last.val = strings.TrimSpace(b.last.val + " " + t)
			}
			continue
		}
		eq := strings.IndexByte(t, '=')
		if eq < 0 {
			return nil, errf(name, sc.num, ErrSyntax, "label %q has no '='", clip(t))
		}
		key := strings.ToUpper(strings.TrimSpace(t[2:eq]))
		val := strings.TrimSpace(t[eq+1:])
		norm := normLabel(key)
		if norm == "" {
			return nil, errf(name, sc.num, ErrSyntax, "empty label name")
		}
		b := cur()
		if norm == "TITLE" {
			switch {
			case b == nil:
				outer = newBlock(sc.num)
			case b == outer && outer.isLink() && !outer.inTable:
				inner = newBlock(sc.num)
			default:
				return nil, errf(name, sc.num, ErrSyntax, "##TITLE= inside the block that starts on line %d (missing ##END=?)", b.start)
			}
			b = cur()
		} else if b == nil {
			return nil, errf(name, sc.num, ErrSyntax, "##%s= before the first ##TITLE=", key)
		}
		b.inTable, b.skipping, b.last = false, false, nil
		switch norm {
		case "END":
			if b.table != nil {
				var parent *jblock
				if b == inner {
					parent = outer
				}
				return decodeBlock(name, b, parent, sc.num, lim)
			}
			if b == inner {
				inner = nil // a nested block without data, e.g. a structure
				continue
			}
			if b.isLink() {
				return nil, errf(name, sc.num, ErrUnsupported, "linked file has no block with spectrum data")
			}
			return nil, errf(name, sc.num, ErrSyntax, "block has no ##XYDATA=, ##XYPOINTS= or ##PEAK TABLE=")
		case "NTUPLES":
			return nil, errf(name, sc.num, ErrUnsupported, "##NTUPLES= (multi-dimensional data) is not supported")
		case "XYDATA", "XYPOINTS", "PEAKTABLE":
			if b.table != nil {
				b.skipping = true
				continue
			}
			b.table = &jtable{key: norm, vars: val, line: sc.num}
			b.inTable = true
			b.order = append(b.order, &jlabel{key: key, val: val, line: sc.num})
		default:
			if prev := b.labels[norm]; prev != nil && coreLabels[norm] {
				return nil, errf(name, sc.num, ErrSyntax, "duplicate ##%s= (first on line %d)", key, prev.line)
			}
			l := &jlabel{key: key, val: val, line: sc.num}
			b.labels[norm] = l
			b.order = append(b.order, l)
			b.last = l
		}
	}
	if outer == nil {
		return nil, errf(name, sc.lastLine(), ErrSyntax, "no ##TITLE= found")
	}
	b := cur()
	return nil, errf(name, sc.lastLine(), ErrSyntax, "missing ##END= for the block that starts on line %d", b.start)
}

func newBlock(line int) *jblock {
	return &jblock{start: line, labels: map[string]*jlabel{}}
}

// blockDecoder turns a complete block into a Spectrum.
type blockDecoder struct {
	name   string
	b      *jblock
	lim    Limits
	endNum int
}

func decodeBlock(name string, b, parent *jblock, endNum int, lim Limits) (*Spectrum, error) {
	d := &blockDecoder{name: name, b: b, lim: lim, endNum: endNum}
	sp := &Spectrum{Meta: map[string]string{}, Format: FormatJCAMP}
	for _, blk := range []*jblock{parent, b} {
		if blk == nil {
			continue
		}
		for _, l := range blk.order {
			sp.Meta[l.key] = l.val
		}
		if l := blk.labels["TITLE"]; l != nil {
			sp.Title = l.val
		}
	}
	if b.labels["JCAMPDX"] == nil && (parent == nil || parent.labels["JCAMPDX"] == nil) {
		return nil, errf(name, b.start, ErrSyntax, "missing ##JCAMP-DX= label in the block that starts here")
	}
	if l := b.labels["XUNITS"]; l != nil {
		sp.XUnit = jcampUnit(l.val)
	}
	if l := b.labels["YUNITS"]; l != nil {
		sp.YUnit = l.val
	}
	xf, _, err := d.factor("XFACTOR")
	if err != nil {
		return nil, err
	}
	yf, _, err := d.factor("YFACTOR")
	if err != nil {
		return nil, err
	}
	sink := &pointSink{name: name, lim: lim}
	switch b.table.key {
	case "XYDATA":
		err = d.xyData(sink, xf, yf)
	default:
		err = d.xyPoints(sink, xf, yf)
	}
	if err != nil {
		return nil, err
	}
	if err := d.checkFirstY(sink, yf); err != nil {
		return nil, err
	}
	if err := sink.finish(d.lastTableLine()); err != nil {
		return nil, err
	}
	sp.X, sp.Y = sink.x, sink.y
	return sp, nil
}

// lastTableLine is the line to blame for problems found at a table's end.
func (d *blockDecoder) lastTableLine() int {
	t := d.b.table
	if len(t.lines) == 0 {
		return t.line
	}
	return t.lines[len(t.lines)-1].num
}

// number returns a numeric label, or ok=false if it is absent.
func (d *blockDecoder) number(norm string) (v float64, l *jlabel, ok bool, err error) {
	l = d.b.labels[norm]
	if l == nil {
		return 0, nil, false, nil
	}
	v, _, valid := parseDecimal(l.val)
	if !valid {
		return 0, l, false, errf(d.name, l.line, ErrSyntax, "##%s=: invalid number %q", l.key, clip(l.val))
	}
	if !isFinite(v) {
		return 0, l, false, errf(d.name, l.line, ErrNotFinite, "##%s=: %q overflows float64", l.key, clip(l.val))
	}
	return v, l, true, nil
}

// factor returns XFACTOR or YFACTOR, 1 if absent.
func (d *blockDecoder) factor(norm string) (float64, *jlabel, error) {
	v, l, ok, err := d.number(norm)
	if err != nil || !ok {
		return 1, l, err
	}
	if v == 0 {
		return 0, l, errf(d.name, l.line, ErrSyntax, "##%s= must not be zero", l.key)
	}
	return v, l, nil
}

// npoints returns NPOINTS, checked against the limits.
func (d *blockDecoder) npoints() (int, *jlabel, bool, error) {
	v, l, ok, err := d.number("NPOINTS")
	if err != nil || !ok {
		return 0, l, ok, err
	}
	if v != math.Trunc(v) || v < 1 {
		return 0, l, false, errf(d.name, l.line, ErrSyntax, "##%s=: %q is not a positive whole number", l.key, clip(l.val))
	}
	if v > float64(d.lim.MaxPoints) {
		return 0, l, false, errf(d.name, l.line, ErrTooManyPoints, "##%s=%s exceeds the limit of %d points", l.key, l.val, d.lim.MaxPoints)
	}
	if v < float64(d.lim.MinPoints) {
		return 0, l, false, errf(d.name, l.line, ErrTooFewPoints, "##%s=%s, need at least %d points", l.key, l.val, d.lim.MinPoints)
	}
	return int(v), l, true, nil
}

func (d *blockDecoder) require(norm, label string) (float64, *jlabel, error) {
	v, l, ok, err := d.number(norm)
	if err == nil && !ok {
		err = errf(d.name, d.b.table.line, ErrSyntax, "##XYDATA= requires ##%s=", label)
	}
	return v, l, err
}

// xyData decodes an (X++(Y..Y)) table.
func (d *blockDecoder) xyData(sink *pointSink, xf, yf float64) error {
	t := d.b.table
	if v := strings.ReplaceAll(t.vars, " ", ""); !strings.EqualFold(v, "(X++(Y..Y))") {
		return errf(d.name, t.line, ErrUnsupported, "unsupported ##XYDATA= variable list %q, want (X++(Y..Y))", clip(t.vars))
	}
	firstX, _, err := d.require("FIRSTX", "FIRSTX")
	if err != nil {
		return err
	}
	lastX, lastL, err := d.require("LASTX", "LASTX")
	if err != nil {
		return err
	}
	n, nl, ok, err := d.npoints()
	if err == nil && !ok {
		err = errf(d.name, t.line, ErrSyntax, "##XYDATA= requires ##NPOINTS=")
	}
	if err != nil {
		return err
	}
	if firstX == lastX {
		return errf(d.name, lastL.line, ErrInconsistent, "##LASTX= equals ##FIRSTX=")
	}
	span := lastX - firstX
	step := span / float64(n-1)
	if dx, l, ok, err := d.number("DELTAX"); err != nil {
		return err
	} else if ok && !(math.Abs(dx-step) <= 1e-3*math.Abs(step)) {
		return errf(d.name, l.line, ErrInconsistent, "##DELTAX=%s but (LASTX-FIRSTX)/(NPOINTS-1) = %g", l.val, step)
	}
	xAt := func(i int) float64 {
		if i == n-1 {
			return lastX
		}
		return firstX + span*float64(i)/float64(n-1)
	}

	sink.x = make([]float64, 0, n)
	sink.y = make([]float64, 0, n)
	count := 0
	checkPending := false
	var lastY float64
	var buf []float64
	for _, l := range t.lines {
		limit := n - count
		if checkPending {
			limit++
		}
		dl, le := decodeASDF(l.s, buf[:0], limit)
		if le == errTooManyOrdinates {
			return errf(d.name, l.num, ErrInconsistent, "more ordinates than ##%s=%d (line %d)", nl.key, n, nl.line)
		}
		if le != nil {
			return errf(d.name, l.num, le.kind, "%s", le.msg)
		}
		buf = dl.y
		if len(dl.y) == 0 {
			return errf(d.name, l.num, ErrSyntax, "abscissa %s has no ordinates", dl.xtok)
		}
		ys := dl.y
		first := count
		if checkPending {
			if !sameOrdinate(ys[0], lastY) {
				return errf(d.name, l.num, ErrInconsistent, "Y-value check failed: line starts with %g but the previous line ended with %g", ys[0], lastY)
			}
			ys = ys[1:]
			first = count - 1
		}
		ax, want := dl.x*xf, xAt(first)
		tol := 0.5*math.Max(math.Abs(step), dl.xres*math.Abs(xf)) + 1e-9*math.Abs(want)
		if !(math.Abs(ax-want) <= tol) {
			return errf(d.name, l.num, ErrInconsistent, "abscissa %s (x = %g) does not match x = %g of point %d given by ##FIRSTX=, ##LASTX= and ##NPOINTS=", dl.xtok, ax, want, first+1)
		}
		for _, y := range ys {
			if err := sink.add(xAt(count), y*yf, l.num); err != nil {
				return err
			}
			count++
		}
		lastY = dl.y[len(dl.y)-1]
		checkPending = dl.endDif
	}
	if count != n {
		return errf(d.name, d.lastTableLine(), ErrInconsistent, "data table has %d points but ##%s=%d (line %d)", count, nl.key, n, nl.line)
	}
	return nil
}

// sameOrdinate compares a Y-value check with the value it repeats. ASDF
// values are integers and compare exactly; decimals accumulated through
// DIF get a relative tolerance of 1e-9.
func sameOrdinate(a, b float64) bool {
	return math.Abs(a-b) <= 1e-9*math.Max(math.Abs(a), math.Abs(b))
}

// xyPoints decodes an (XY..XY) or (XYW..XYW) table.
func (d *blockDecoder) xyPoints(sink *pointSink, xf, yf float64) error {
	t := d.b.table
	group := 0
	switch v := strings.ToUpper(strings.ReplaceAll(t.vars, " ", "")); {
	case v == "(XY..XY)":
		group = 2
	case v == "(XYW..XYW)" && t.key == "PEAKTABLE":
		group = 3
	default:
		return errf(d.name, t.line, ErrUnsupported, "unsupported variable list %q, want (XY..XY)", clip(t.vars))
	}
	n, nl, haveN, err := d.npoints()
	if err != nil {
		return err
	}
	var vals [3]float64
	k, groupLine := 0, 0
	for _, l := range t.lines {
		s := l.s
		for i := 0; i < len(s); {
			c := s[i]
			if c == ' ' || c == '\t' || c == ',' || c == ';' {
				i++
				continue
			}
			if c == '?' {
				return errf(d.name, l.num, ErrUnsupported, "missing value '?' is not supported")
			}
			end, _, ok := scanDecimal(s, i, false)
			if !ok || (end < len(s) && !strings.ContainsRune(" \t,;", rune(s[end]))) {
				j := i + strings.IndexAny(s[i:]+" ", " \t,;")
				return errf(d.name, l.num, ErrSyntax, "invalid number %q", clip(s[i:j]))
			}
			if k == 0 {
				groupLine = l.num
			}
			vals[k] = atof(s[i:end])
			k++
			i = end
			if k == group {
				k = 0
				if haveN && len(sink.x) == n {
					return errf(d.name, l.num, ErrInconsistent, "more points than ##%s=%d (line %d)", nl.key, n, nl.line)
				}
				if err := sink.add(vals[0]*xf, vals[1]*yf, groupLine); err != nil {
					return err
				}
			}
		}
	}
	if k != 0 {
		return errf(d.name, d.lastTableLine(), ErrSyntax, "incomplete group of %d values at the end of the table", k)
	}
	if haveN && len(sink.x) != n {
		return errf(d.name, d.lastTableLine(), ErrInconsistent, "data table has %d points but ##%s=%d (line %d)", len(sink.x), nl.key, n, nl.line)
	}
	m := len(sink.x)
	if m < 2 {
		return nil // too few points; reported by finish
	}
	for _, c := range []struct {
		label        string
		got, nearest float64
	}{{"FIRSTX", sink.x[0], sink.x[1]}, {"LASTX", sink.x[m-1], sink.x[m-2]}} {
		v, l, ok, err := d.number(c.label)
		if err != nil {
			return err
		}
		if ok && !(math.Abs(v-c.got) <= 0.5*math.Abs(c.nearest-c.got)+1e-9*math.Abs(c.got)) {
			return errf(d.name, l.line, ErrInconsistent, "##%s=%s but the data table's %s x is %g", l.key, l.val, strings.ToLower(c.label[:len(c.label)-1]), c.got)
		}
	}
	return nil
}

// checkFirstY compares FIRSTY, if given, with the first ordinate.
func (d *blockDecoder) checkFirstY(sink *pointSink, yf float64) error {
	v, l, ok, err := d.number("FIRSTY")
	if err != nil || !ok || len(sink.y) == 0 {
		return err
	}
	got := sink.y[0] // before any reversal: the first ordinate in the file
	if !(math.Abs(v-got) <= 1e-5*math.Max(math.Abs(v), math.Abs(got))+math.Abs(yf)) {
		return errf(d.name, l.line, ErrInconsistent, "##%s=%s but the first ordinate is %g", l.key, l.val, got)
	}
	return nil
}

// jcampUnit maps an ##XUNITS= value to an AxisUnit.
func jcampUnit(v string) AxisUnit {
	switch strings.ToLower(strings.ReplaceAll(strings.TrimSpace(v), " ", "")) {
	case "nanometers", "nanometer", "nanometres", "nanometre", "nm":
		return NM
	case "angstroms", "angstrom", "a", "å":
		return Angstrom
	case "micrometers", "micrometer", "micrometres", "micrometre", "microns", "micron", "um", "µm", "μm":
		return Micrometer
	case "1/cm", "cm-1", "cm^-1", "cm**-1", "cm⁻¹", "wavenumbers":
		return WavenumberPerCM
	}
	return UnknownUnit
}
