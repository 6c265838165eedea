package specfile

import (
	"bytes"
	"slices"
	"strings"
	"testing"
	"testing/iotest"
)

// textOKTests are inputs ReadText accepts, with the X and Y it must return.
var textOKTests = []struct {
	name  string
	in    string
	opt   TextOptions
	x, y  []float64 // first two points
	n     int
	unit  AxisUnit
	yunit string
	meta  map[string]string
}{
	// Delimiters and decimal separators.
	{name: "comma", in: rows(8, 1, ","), x: []float64{1, 2}, y: []float64{10, 11}, n: 8},
	{name: "comma+space", in: rows(8, 1, ", "), x: []float64{1, 2}, y: []float64{10, 11}, n: 8},
	{name: "semicolon", in: rows(8, 1, ";"), x: []float64{1, 2}, y: []float64{10, 11}, n: 8},
	{name: "tab", in: rows(8, 1, "\t"), x: []float64{1, 2}, y: []float64{10, 11}, n: 8},
	{name: "spaces", in: rows(8, 1, "   "), x: []float64{1, 2}, y: []float64{10, 11}, n: 8},
	{name: "semicolon decimal comma", in: "1,5;2,25\n" + rows(7, 2, ";"), x: []float64{1.5, 2}, y: []float64{2.25, 10}, n: 8},
	{name: "tab decimal comma", in: "1,5\t2,25\n" + rows(7, 2, "\t"), x: []float64{1.5, 2}, y: []float64{2.25, 10}, n: 8},
	{name: "space decimal comma", in: "1,5 2,25\n" + rows(7, 2, " "), x: []float64{1.5, 2}, y: []float64{2.25, 10}, n: 8},
	{name: "explicit delimiter and decimal", in: "1,5;2\n" + rows(7, 2, ";"), opt: TextOptions{Delimiter: ';', Decimal: ','},
		x: []float64{1.5, 2}, y: []float64{2, 10}, n: 8},
	{name: "explicit space delimiter", in: rows(8, 1, " \t "), opt: TextOptions{Delimiter: ' '}, x: []float64{1, 2}, y: []float64{10, 11}, n: 8},
	{name: "exponents and signs", in: "+1e0,-1.5E+2\n2.,.5\n" + rows(6, 3, ","), x: []float64{1, 2}, y: []float64{-150, 0.5}, n: 8},
	// Underflow rounds to zero rather than failing.
	{name: "underflow", in: "1,1e-400\n" + rows(7, 2, ","), x: []float64{1, 2}, y: []float64{0, 10}, n: 8},

	// Layout.
	{name: "BOM CRLF", in: "\uFEFFwavelength_nm,counts\r\n" + strings.ReplaceAll(rows(8, 1, ","), "\n", "\r\n"),
		x: []float64{1, 2}, y: []float64{10, 11}, n: 8, unit: NM, yunit: "counts"},
	{name: "no final newline", in: strings.TrimSuffix(rows(8, 1, ","), "\n"), x: []float64{1, 2}, y: []float64{10, 11}, n: 8},
	{name: "comments and blanks", in: "# title: Hα scan\n% operator = R. Quill\n// 3rd comment\n; semi: colon\n\n,,\n" + rows(4, 1, ",") + "\n# mid\n" + rows(4, 5, ","),
		x: []float64{1, 2}, y: []float64{10, 11}, n: 8,
		meta: map[string]string{"title": "Hα scan", "operator": "R. Quill", "semi": "colon"}},
	{name: "quoted fields", in: "\"wavelength (nm)\",\"counts\"\n\"1\",\"10\"\n" + rows(7, 2, ","), x: []float64{1, 2}, y: []float64{10, 10}, n: 8, unit: NM, yunit: "counts"},
	{name: "trailing delimiter", in: "lambda [A];counts;\n" + strings.ReplaceAll(rows(8, 1, ";"), "\n", ";\n"),
		x: []float64{1, 2}, y: []float64{10, 11}, n: 8, unit: Angstrom, yunit: "counts"},
	{name: "descending reversed", in: "8,1\n7,2\n6,3\n5,4\n4,5\n3,6\n2,7\n1,8\n", x: []float64{1, 2}, y: []float64{8, 7}, n: 8},

	// Column choice.
	{name: "label column skipped", in: strings.Repeat("", 0) + "Ha,1,10\nHa,2,11\nHa,3,12\nHa,4,13\nHa,5,14\nHa,6,15\nHa,7,16\nHa,8,17\n",
		x: []float64{1, 2}, y: []float64{10, 11}, n: 8},
	{name: "explicit columns", in: "1,5,10\n2,6,11\n3,7,12\n4,8,13\n5,9,14\n6,10,15\n7,11,16\n8,12,17\n",
		opt: TextOptions{XColumn: 2, YColumn: 3}, x: []float64{5, 6}, y: []float64{10, 11}, n: 8},
	{name: "only YColumn", in: "1,5,10\n2,6,11\n3,7,12\n4,8,13\n5,9,14\n6,10,15\n7,11,16\n8,12,17\n",
		opt: TextOptions{YColumn: 3}, x: []float64{1, 2}, y: []float64{10, 11}, n: 8},
	{name: "only XColumn", in: "1,5,10\n2,6,11\n3,7,12\n4,8,13\n5,9,14\n6,10,15\n7,11,16\n8,12,17\n",
		opt: TextOptions{XColumn: 2}, x: []float64{5, 6}, y: []float64{10, 11}, n: 8},

	// Header names and units.
	{name: "header nm", in: "Wavelength (nm),Intensity (counts)\n" + rows(8, 1, ","), x: []float64{1, 2}, y: []float64{10, 11}, n: 8, unit: NM, yunit: "counts"},
	{name: "header micrometre", in: "wavelength_um,signal [ADU]\n" + rows(8, 1, ","), x: []float64{1, 2}, y: []float64{10, 11}, n: 8, unit: Micrometer, yunit: "ADU"},
	{name: "header Å sign", in: "λ (Å)\tintensity\n" + rows(8, 1, "\t"), x: []float64{1, 2}, y: []float64{10, 11}, n: 8, unit: Angstrom},
	{name: "header wavenumber", in: "wavenumber/cm-1;counts\n" + rows(8, 1, ";"), x: []float64{1, 2}, y: []float64{10, 11}, n: 8, unit: WavenumberPerCM, yunit: "counts"},
	{name: "header a.u. is not Å", in: "x (a.u.),y\n" + rows(8, 1, ","), x: []float64{1, 2}, y: []float64{10, 11}, n: 8},
	{name: "header without unit", in: "wavelength,intensity\n" + rows(8, 1, ","), x: []float64{1, 2}, y: []float64{10, 11}, n: 8},
	{name: "header two units", in: "nm or cm-1,y\n" + rows(8, 1, ","), x: []float64{1, 2}, y: []float64{10, 11}, n: 8},
	{name: "whitespace header with brackets", in: "Wavelength (nm)   Intensity (counts)\n" + rows(8, 1, " "),
		x: []float64{1, 2}, y: []float64{10, 11}, n: 8, unit: NM, yunit: "counts"},
	{name: "whitespace header wide", in: "Wavelength nm   Intensity\n" + rows(8, 1, "   "),
		x: []float64{1, 2}, y: []float64{10, 11}, n: 8, unit: NM},
	{name: "whitespace header unmatched ignored", in: "Wavelength in nm Intensity\n" + rows(8, 1, " "),
		x: []float64{1, 2}, y: []float64{10, 11}, n: 8, meta: map[string]string{"header": "Wavelength in nm Intensity"}},
	{name: "option unit", in: rows(8, 1, ","), opt: TextOptions{XUnit: Angstrom}, x: []float64{1, 2}, y: []float64{10, 11}, n: 8, unit: Angstrom},
	{name: "option unit agrees", in: "wavelength_nm,counts\n" + rows(8, 1, ","), opt: TextOptions{XUnit: NM}, x: []float64{1, 2}, y: []float64{10, 11}, n: 8, unit: NM, yunit: "counts"},
	{name: "forced unit", in: "wavelength_nm,counts\n" + rows(8, 1, ","), opt: TextOptions{XUnit: Angstrom, ForceXUnit: true},
		x: []float64{1, 2}, y: []float64{10, 11}, n: 8, unit: Angstrom, yunit: "counts"},
	{name: "comma delimited ; comment", in: "; a comment, not data\n" + rows(8, 1, ","), x: []float64{1, 2}, y: []float64{10, 11}, n: 8},
}

func TestReadTextOK(t *testing.T) {
	for _, tt := range textOKTests {
		t.Run(tt.name, func(t *testing.T) {
			sp, err := ReadText("t.csv", strings.NewReader(tt.in), tt.opt)
			if err != nil {
				t.Fatal(err)
			}
			if len(sp.X) != tt.n || !slices.Equal(sp.X[:2], tt.x) || !slices.Equal(sp.Y[:2], tt.y) {
				t.Errorf("got %d points starting %v, %v; want %d starting %v, %v", len(sp.X), sp.X[:2], sp.Y[:2], tt.n, tt.x, tt.y)
			}
			if sp.XUnit != tt.unit || sp.YUnit != tt.yunit {
				t.Errorf("XUnit, YUnit = %v, %q; want %v, %q", sp.XUnit, sp.YUnit, tt.unit, tt.yunit)
			}
			for k, v := range tt.meta {
				if sp.Meta[k] != v {
					t.Errorf("Meta[%q] = %q, want %q", k, sp.Meta[k], v)
				}
			}
			if tt.meta["title"] != "" && sp.Title != tt.meta["title"] {
				t.Errorf("Title = %q, want %q", sp.Title, tt.meta["title"])
			}
			if sp.Format != FormatText {
				t.Errorf("Format = %v", sp.Format)
			}
		})
	}
}

// textErrorTests are inputs ReadText rejects, with the line and message.
var textErrorTests = []struct {
	name string
	in   string
	opt  TextOptions
	line int
	kind error
	msg  string
}{
	{name: "non-numeric intensity", in: "# h\n1;2\n" + rows(14, 2, ";") + "17;12,3,4\n", line: 17, kind: ErrSyntax, msg: `non-numeric intensity "12,3,4"`},
	{name: "non-numeric x", in: rows(3, 1, ",") + "4x,1\n", line: 4, kind: ErrSyntax, msg: `non-numeric x value "4x"`},
	{name: "hex float", in: rows(3, 1, ",") + "0x10,1\n", line: 4, kind: ErrSyntax, msg: `non-numeric x value "0x10"`},
	{name: "dot with decimal comma", in: "1,5;2\n" + "2;12.5\n", line: 2, kind: ErrSyntax, msg: `non-numeric intensity "12.5" (decimal separator is ',')`},
	{name: "comma with decimal dot", in: "1.5 2\n" + "2 12,5\n", line: 2, kind: ErrSyntax, msg: `non-numeric intensity "12,5" (decimal separator is '.')`},
	{name: "NaN", in: rows(3, 1, ",") + "4,NaN\n", line: 4, kind: ErrNotFinite, msg: `non-finite intensity "NaN"`},
	{name: "Inf x", in: rows(3, 1, ",") + "-Inf,1\n", line: 4, kind: ErrNotFinite, msg: `non-finite x value "-Inf"`},
	{name: "overflow", in: rows(3, 1, ",") + "4,1e999\n", line: 4, kind: ErrNotFinite, msg: `intensity "1e999" overflows float64`},
	{name: "empty intensity", in: "1,2,3\n2,,3\n", line: 2, kind: ErrSyntax, msg: "empty intensity"},
	{name: "column count", in: rows(4, 1, ",") + "5,1,2\n", line: 5, kind: ErrSyntax, msg: "line has 3 columns, expected 2 as on line 1"},
	{name: "header column count", in: "# c\nwavelength_nm,counts,extra\n" + rows(8, 1, ","), line: 2, kind: ErrSyntax, msg: "header has 3 columns but data line 3 has 2"},
	{name: "one numeric column", in: "# c\n656.3,abc\n", line: 2, kind: ErrSyntax, msg: "need two numeric columns, found 1"},
	{name: "column out of range", in: rows(8, 1, ","), opt: TextOptions{YColumn: 3}, line: 1, kind: ErrSyntax, msg: "column 3 requested but the line has 2 columns"},
	{name: "ambiguous decimal", in: "1 2\n1.5 2,5\n", line: 2, kind: ErrSyntax, msg: "ambiguous decimal separator"},
	{name: "unit conflict", in: "# c\nwavelength_nm,counts\n" + rows(8, 1, ","), opt: TextOptions{XUnit: Angstrom}, line: 2, kind: ErrUnitConflict, msg: "header declares x unit nm but Å was requested"},
	{name: "too few points", in: "x,y\n" + rows(7, 1, ",") + "\n# end\n", line: 10, kind: ErrTooFewPoints, msg: "only 7 data points, need at least 8"},
	{name: "empty file", in: "", line: 1, kind: ErrTooFewPoints, msg: "only 0 data points"},
	{name: "header only", in: "wavelength_nm,counts\n", line: 1, kind: ErrTooFewPoints, msg: "only 0 data points"},
	{name: "duplicate x", in: "1,1\n2,1\n2,1\n", line: 3, kind: ErrNotMonotonic, msg: "duplicate x value 2 (previous point on line 2)"},
	{name: "order broken", in: "1,1\n2,1\n3,1\n2.5,1\n", line: 4, kind: ErrNotMonotonic, msg: "x value 2.5 after 3 (line 3) breaks the ascending order"},
	{name: "descending broken", in: "3,1\n2,1\n2.5,1\n", line: 3, kind: ErrNotMonotonic, msg: "breaks the descending order"},
	{name: "semicolon line is data with ; delimiter", in: "1;2\n;5\n", line: 2, kind: ErrSyntax, msg: "empty x value"},
}

func TestReadTextErrors(t *testing.T) {
	for _, tt := range textErrorTests {
		t.Run(tt.name, func(t *testing.T) {
			sp, err := ReadText("spectrum.csv", strings.NewReader(tt.in), tt.opt)
			if err == nil {
				t.Fatalf("no error; got %d points", len(sp.X))
			}
			checkParseError(t, err, "spectrum.csv", tt.line, tt.kind, tt.msg)
		})
	}
}

func TestReadTextReaderError(t *testing.T) {
	r := iotest.TimeoutReader(strings.NewReader("1,2\n3,4\n"))
	// TimeoutReader returns data on the first Read and an error on the
	// second, so the failure is reported after line 2.
	_, err := ReadText("up.csv", r, TextOptions{})
	checkParseError(t, err, "up.csv", 3, ErrRead, "read failed: timeout")
}

func TestReadTextBadOptionsPanic(t *testing.T) {
	for _, opt := range []TextOptions{
		{Delimiter: '|'}, {Decimal: ';'}, {Delimiter: ',', Decimal: ','},
		{XColumn: -1}, {XColumn: 2, YColumn: 2},
	} {
		func() {
			defer func() {
				if r := recover(); r == nil || !strings.HasPrefix(r.(string), "specfile: ") {
					t.Errorf("ReadText with %+v: recover() = %v, want a specfile panic", opt, r)
				}
			}()
			ReadText("x", bytes.NewReader(nil), opt)
		}()
	}
}
