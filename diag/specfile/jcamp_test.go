package specfile

import (
	"slices"
	"strings"
	"testing"
)

// stdJDX is a minimal valid JCAMP-DX file with X = 1…10 and Y = 10…19.
// Its line numbers are fixed: 1 TITLE, 2 JCAMP-DX, 3 XUNITS, 4 YUNITS,
// 5 XFACTOR, 6 YFACTOR, 7 FIRSTX, 8 LASTX, 9 NPOINTS, 10 XYDATA, 11–12 data,
// 13 END.
const stdJDX = `##TITLE=t
##JCAMP-DX=5.01
##XUNITS=NANOMETERS
##YUNITS=COUNTS
##XFACTOR=1
##YFACTOR=1
##FIRSTX=1
##LASTX=10
##NPOINTS=10
##XYDATA=(X++(Y..Y))
1 10 11 12 13 14
6 15 16 17 18 19
##END=
`

// stdXYP is stdJDX as XYPOINTS: lines 1–9 as stdJDX, 10 XYPOINTS, 11–20
// data, 21 END.
var stdXYP = strings.Replace(stdJDX, "##XYDATA=(X++(Y..Y))\n1 10 11 12 13 14\n6 15 16 17 18 19\n",
	"##XYPOINTS=(XY..XY)\n1, 10\n2, 11\n3, 12\n4, 13\n5, 14\n6, 15\n7, 16\n8, 17\n9, 18\n10, 19\n", 1)

// withData replaces stdJDX's two data lines.
func withData(table string) string {
	return strings.Replace(stdJDX, "1 10 11 12 13 14\n6 15 16 17 18 19\n", table, 1)
}

// edit replaces old by new once in s, and panics if old is absent, so a
// typo in a test cannot silently test the unmodified file.
func edit(s, old, new string) string {
	if !strings.Contains(s, old) {
		panic("edit: " + old + " not found")
	}
	return strings.Replace(s, old, new, 1)
}

var stdX = []float64{1, 2, 3, 4, 5, 6, 7, 8, 9, 10}
var stdY = []float64{10, 11, 12, 13, 14, 15, 16, 17, 18, 19}

var jcampOKTests = []struct {
	name  string
	in    string
	x, y  []float64 // nil means stdX, stdY
	title string
	meta  map[string]string
}{
	{name: "AFFN", in: stdJDX},
	{name: "PAC", in: withData("1+10+11+12+13+14\n6+15+16+17+18+19\n")},
	{name: "SQZ", in: withData("1A0A1A2A3A4\n6A5A6A7A8A9\n")},
	// A0 = 10, then J = +1 four times; the next line repeats 14 as check.
	{name: "DIF with Y checks", in: withData("1A0JJJJ\n5A4JJJJJ\n10A9\n")},
	// W = DUP 5: the difference J occurs five times in all.
	{name: "DIF DUP", in: withData("1A0JW\n6A5JV\n10A9\n")},
	{name: "DIF without final check", in: withData("1A0JW\n6A5JV\n")},
	{name: "SQZ DUP", in: withData("1A0TA2A3A4\n6A5A6A7A8A9\n"), y: []float64{10, 10, 12, 13, 14, 15, 16, 17, 18, 19}},
	{name: "negative SQZ DIF", in: withData("1a0jjjj\n5a4jjjjj\n10a9\n"), y: []float64{-10, -11, -12, -13, -14, -15, -16, -17, -18, -19}},
	{name: "zero SQZ DIF", in: withData("1@%V\n5@%W\n"), y: make([]float64, 10)},
	{name: "mixed forms", in: withData("1 10,11 A2J\n4A3 14+15J\n7A6J 18 19\n")},
	{name: "signed exponent", in: withData("1 1.0E+1 1.1E+01 12 13 14\n6 15 16 17 18 19\n")},
	{name: "comments and blanks", in: withData("$$ data follow\n1 10 11 12 13 14 $$ five\n\n6 15 16 17 18 19\n")},
	{name: "descending", in: edit(edit(withData("10 19 18 17 16 15\n5 14 13 12 11 10\n"), "##FIRSTX=1", "##FIRSTX=10"), "##LASTX=10", "##LASTX=1")},
	{name: "factors", in: edit(edit(withData("2 5 5.5 6 6.5 7\n12 7.5 8 8.5 9 9.5\n"), "##XFACTOR=1", "##XFACTOR=0.5"), "##YFACTOR=1", "##YFACTOR=2")},
	{name: "DELTAX and FIRSTY", in: edit(stdJDX, "##NPOINTS=10", "##NPOINTS=10\n##DELTAX=1.0\n##FIRSTY=10")},
	{name: "label spelling", in: edit(edit(stdJDX, "##XUNITS=NANOMETERS", "##x_units = nanometers\n##Data-Type= UV/VIS SPECTRUM"), "##TITLE=t", "##title=t\n  continued"),
		title: "t continued", meta: map[string]string{"DATA-TYPE": "UV/VIS SPECTRUM", "X_UNITS": "nanometers"}},
	{name: "XYPOINTS", in: stdXYP},
	{name: "XYPOINTS groups", in: edit(stdXYP, "1, 10\n2, 11\n3, 12\n", "1,10;2,11 3,12\n")},
	{name: "XYPOINTS descending without optional labels", in: strings.NewReplacer("##FIRSTX=1\n", "", "##LASTX=10\n", "", "##NPOINTS=10\n", "",
		"1, 10\n2, 11\n3, 12\n4, 13\n5, 14\n6, 15\n7, 16\n8, 17\n9, 18\n10, 19\n",
		"10, 19\n9, 18\n8, 17\n7, 16\n6, 15\n5, 14\n4, 13\n3, 12\n2, 11\n1, 10\n").Replace(stdXYP)},
	{name: "PEAK TABLE XYW", in: edit(stdXYP, "##XYPOINTS=(XY..XY)\n1, 10\n2, 11\n3, 12\n4, 13\n5, 14\n6, 15\n7, 16\n8, 17\n9, 18\n10, 19\n",
		"##PEAK TABLE=(XYW..XYW)\n1, 10, 0.2\n2, 11, 0.2\n3, 12, 0.2\n4, 13, 0.2\n5, 14, 0.2\n6, 15, 0.2\n7, 16, 0.2\n8, 17, 0.2\n9, 18, 0.2\n10, 19, 0.2\n")},
	{name: "second table ignored", in: edit(stdJDX, "##END=", "##PEAK TABLE=(XY..XY)\nnot even numbers\n##END=")},
	{name: "later blocks ignored", in: stdJDX + "##TITLE=second\ngarbage\n"},
	{name: "linked", title: "spectrum", meta: map[string]string{"BLOCKS": "2", "DATA TYPE": "UV/VIS SPECTRUM"},
		in: "##TITLE=link\n##JCAMP-DX=5.01\n##DATA TYPE=LINK\n##BLOCKS=2\n##TITLE=structure\n##JCAMP-DX=5.01\n##END=\n" +
			edit(edit(stdJDX, "##TITLE=t", "##TITLE=spectrum\n##DATA TYPE=UV/VIS SPECTRUM"), "##JCAMP-DX=5.01\n", "") + "##END=\n"},
}

func TestReadJCAMPOK(t *testing.T) {
	for _, tt := range jcampOKTests {
		t.Run(tt.name, func(t *testing.T) {
			sp, err := ReadJCAMP("t.jdx", strings.NewReader(tt.in))
			if err != nil {
				t.Fatal(err)
			}
			wx, wy := tt.x, tt.y
			if wx == nil {
				wx = stdX
			}
			if wy == nil {
				wy = stdY
			}
			if !slices.Equal(sp.X, wx) || !slices.Equal(sp.Y, wy) {
				t.Errorf("X, Y = %v, %v\nwant %v, %v", sp.X, sp.Y, wx, wy)
			}
			title := tt.title
			if title == "" {
				title = "t"
			}
			if sp.Title != title || sp.XUnit != NM || sp.YUnit != "COUNTS" || sp.Format != FormatJCAMP {
				t.Errorf("Title, XUnit, YUnit, Format = %q, %v, %q, %v", sp.Title, sp.XUnit, sp.YUnit, sp.Format)
			}
			for k, v := range tt.meta {
				if sp.Meta[k] != v {
					t.Errorf("Meta[%q] = %q, want %q", k, sp.Meta[k], v)
				}
			}
		})
	}
}

var jcampErrorTests = []struct {
	name string
	in   string
	line int
	kind error
	msg  string
}{
	// Block structure.
	{"text before title", "junk\n" + stdJDX, 1, ErrSyntax, "text before the first ##TITLE="},
	{"label without =", edit(stdJDX, "##XUNITS=", "##XUNITS "), 3, ErrSyntax, `label "##XUNITS NANOMETERS" has no '='`},
	{"empty label", edit(stdJDX, "##XUNITS=", "## -=_"), 3, ErrSyntax, "empty label name"},
	{"label before title", strings.TrimPrefix(stdJDX, "##TITLE=t\n"), 1, ErrSyntax, "##JCAMP-DX= before the first ##TITLE="},
	{"nested title", edit(stdJDX, "##XUNITS=NANOMETERS", "##TITLE=again"), 3, ErrSyntax, "##TITLE= inside the block that starts on line 1 (missing ##END=?)"},
	{"missing end", strings.TrimSuffix(stdJDX, "##END=\n"), 12, ErrSyntax, "missing ##END= for the block that starts on line 1"},
	{"no title", "$$ only a comment\n\n", 2, ErrSyntax, "no ##TITLE= found"},
	{"empty", "", 1, ErrSyntax, "no ##TITLE= found"},
	{"no data", "##TITLE=t\n##JCAMP-DX=5\n##END=\n", 3, ErrSyntax, "block has no ##XYDATA="},
	{"link without data", "##TITLE=l\n##JCAMP-DX=5\n##BLOCKS=1\n##TITLE=s\n##END=\n##END=\n", 6, ErrUnsupported, "linked file has no block with spectrum data"},
	{"ntuples", edit(stdJDX, "##XYDATA=(X++(Y..Y))", "##NTUPLES=NMR SPECTRUM"), 10, ErrUnsupported, "##NTUPLES="},
	{"duplicate label", edit(stdJDX, "##LASTX=10", "##LASTX=10\n##NPOINTS=10"), 10, ErrSyntax, "duplicate ##NPOINTS= (first on line 9)"},
	{"missing version", edit(stdJDX, "##JCAMP-DX=5.01\n", ""), 1, ErrSyntax, "missing ##JCAMP-DX="},

	// Header values.
	{"bad XFACTOR", edit(stdJDX, "##XFACTOR=1", "##XFACTOR=abc"), 5, ErrSyntax, `##XFACTOR=: invalid number "abc"`},
	{"zero XFACTOR", edit(stdJDX, "##XFACTOR=1", "##XFACTOR=0.0"), 5, ErrSyntax, "##XFACTOR= must not be zero"},
	{"huge YFACTOR", edit(stdJDX, "##YFACTOR=1", "##YFACTOR=1E999"), 6, ErrNotFinite, `##YFACTOR=: "1E999" overflows float64`},
	{"variable list", edit(stdJDX, "(X++(Y..Y))", "(R++(A..A))"), 10, ErrUnsupported, `unsupported ##XYDATA= variable list "(R++(A..A))"`},
	{"missing FIRSTX", edit(stdJDX, "##FIRSTX=1\n", ""), 9, ErrSyntax, "##XYDATA= requires ##FIRSTX="},
	{"missing LASTX", edit(stdJDX, "##LASTX=10\n", ""), 9, ErrSyntax, "##XYDATA= requires ##LASTX="},
	{"missing NPOINTS", edit(stdJDX, "##NPOINTS=10\n", ""), 9, ErrSyntax, "##XYDATA= requires ##NPOINTS="},
	{"fractional NPOINTS", edit(stdJDX, "##NPOINTS=10", "##NPOINTS=10.5"), 9, ErrSyntax, `"10.5" is not a positive whole number`},
	{"zero NPOINTS", edit(stdJDX, "##NPOINTS=10", "##NPOINTS=0"), 9, ErrSyntax, "not a positive whole number"},
	{"huge NPOINTS", edit(stdJDX, "##NPOINTS=10", "##NPOINTS=2000000"), 9, ErrTooManyPoints, "##NPOINTS=2000000 exceeds the limit of 1000000 points"},
	{"small NPOINTS", edit(stdJDX, "##NPOINTS=10", "##NPOINTS=4"), 9, ErrTooFewPoints, "##NPOINTS=4, need at least 8 points"},
	{"FIRSTX = LASTX", edit(stdJDX, "##LASTX=10", "##LASTX=1"), 8, ErrInconsistent, "##LASTX= equals ##FIRSTX="},
	{"DELTAX", edit(stdJDX, "##NPOINTS=10", "##NPOINTS=10\n##DELTAX=1.1"), 10, ErrInconsistent, "##DELTAX=1.1 but (LASTX-FIRSTX)/(NPOINTS-1) = 1"},
	{"FIRSTY", edit(stdJDX, "##NPOINTS=10", "##NPOINTS=10\n##FIRSTY=12"), 10, ErrInconsistent, "##FIRSTY=12 but the first ordinate is 10"},

	// XYDATA consistency.
	{"first abscissa", withData("2 10 11 12 13 14\n6 15 16 17 18 19\n"), 11, ErrInconsistent, "abscissa 2 (x = 2) does not match x = 1 of point 1"},
	{"abscissa", withData("1 10 11 12 13 14\n7 15 16 17 18 19\n"), 12, ErrInconsistent, "abscissa 7 (x = 7) does not match x = 6 of point 6"},
	{"dropped value", withData("1 10 11 12 13\n6 15 16 17 18 19\n"), 12, ErrInconsistent, "does not match x = 5 of point 5"},
	{"too many ordinates", withData("1 10 11 12 13 14\n6 15 16 17 18 19 20\n"), 12, ErrInconsistent, "more ordinates than ##NPOINTS=10 (line 9)"},
	{"too many by DUP", withData("1 10 11 12 13 14\n6 15 16 17 18 19Z\n"), 12, ErrInconsistent, "more ordinates than ##NPOINTS=10 (line 9)"},
	{"huge DUP", withData("1 10 11 12 13 14\n6 15 16 17 18 19Z99999999999\n"), 12, ErrInconsistent, "more ordinates than ##NPOINTS=10"},
	{"too few ordinates", withData("1 10 11 12 13 14\n6 15 16 17 18\n"), 12, ErrInconsistent, "data table has 9 points but ##NPOINTS=10 (line 9)"},
	{"empty table", withData(""), 10, ErrInconsistent, "data table has 0 points"},
	{"Y check", withData("1A0JJJJ\n5A5JJJJJ\n"), 12, ErrInconsistent, "Y-value check failed: line starts with 15 but the previous line ended with 14"},

	// ASDF tokens.
	{"DIF first", withData("1JJJJJ\n"), 11, ErrSyntax, `DIF value "JJJJJ" has no preceding ordinate`},
	{"DUP first", withData("1T\n"), 11, ErrSyntax, `DUP count "T" does not follow a value`},
	{"DUP DUP", withData("1A0TT\n"), 11, ErrSyntax, `DUP count "T" does not follow a value`},
	{"missing value", withData("1 10 ? 12 13 14\n"), 11, ErrUnsupported, "missing value '?' is not supported"},
	{"bad character", withData("1 10 11 ! 12\n"), 11, ErrSyntax, "unexpected character '!' in data"},
	{"ambiguous exponent", withData("1 1.0E1 11 12 13 14\n"), 11, ErrSyntax, `ambiguous exponent in "1.0E1 11 12 13 14"`},
	{"ambiguous abscissa exponent", withData("1.0E0 10\n"), 11, ErrSyntax, "ambiguous exponent"},
	{"lone sign", withData("1 10 + 12\n"), 11, ErrSyntax, `malformed number "+ 12"`},
	{"abscissa only", withData("1 10 11 12 13 14\n6\n"), 12, ErrSyntax, "abscissa 6 has no ordinates"},
	{"no abscissa", withData("A0 A1\n"), 11, ErrSyntax, `expected an abscissa at the start of the data line, found "A0 A1"`},
	{"overflow", edit(stdJDX, "##YFACTOR=1", "##YFACTOR=1E+308"), 11, ErrNotFinite, "intensity is not finite (+Inf)"},

	// XYPOINTS.
	{"XYPOINTS variables", edit(stdXYP, "(XY..XY)", "(XYW..XYW)"), 10, ErrUnsupported, `unsupported variable list "(XYW..XYW)"`},
	{"XYPOINTS number", edit(stdXYP, "3, 12", "3, 1x2"), 13, ErrSyntax, `invalid number "1x2"`},
	{"XYPOINTS incomplete", edit(stdXYP, "10, 19", "10,"), 20, ErrSyntax, "incomplete group of 1 values"},
	{"XYPOINTS NPOINTS short", edit(stdXYP, "##NPOINTS=10", "##NPOINTS=11"), 20, ErrInconsistent, "data table has 10 points but ##NPOINTS=11 (line 9)"},
	{"XYPOINTS NPOINTS long", edit(stdXYP, "##NPOINTS=10", "##NPOINTS=9"), 20, ErrInconsistent, "more points than ##NPOINTS=9 (line 9)"},
	{"XYPOINTS FIRSTX", edit(stdXYP, "##FIRSTX=1", "##FIRSTX=1.6"), 7, ErrInconsistent, "##FIRSTX=1.6 but the data table's first x is 1"},
	{"XYPOINTS LASTX", edit(stdXYP, "##LASTX=10", "##LASTX=9"), 8, ErrInconsistent, "##LASTX=9 but the data table's last x is 10"},
	{"XYPOINTS missing", edit(stdXYP, "3, 12", "3, ?"), 13, ErrUnsupported, "missing value"},
	{"XYPOINTS duplicate x", edit(stdXYP, "3, 12", "2, 12"), 13, ErrNotMonotonic, "duplicate x value 2 (previous point on line 12)"},
}

func TestReadJCAMPErrors(t *testing.T) {
	for _, tt := range jcampErrorTests {
		t.Run(tt.name, func(t *testing.T) {
			sp, err := ReadJCAMP("spectrum.jdx", strings.NewReader(tt.in))
			if err == nil {
				t.Fatalf("no error; got %v, %v", sp.X, sp.Y)
			}
			checkParseError(t, err, "spectrum.jdx", tt.line, tt.kind, tt.msg)
		})
	}
}

func TestJCAMPUnits(t *testing.T) {
	for v, want := range map[string]AxisUnit{
		"NANOMETERS": NM, "nm": NM, "ANGSTROMS": Angstrom, "MICROMETERS": Micrometer, "MICRONS": Micrometer,
		"1/CM": WavenumberPerCM, "cm-1": WavenumberPerCM, "SECONDS": UnknownUnit, "ARBITRARY UNITS": UnknownUnit,
	} {
		if got := jcampUnit(v); got != want {
			t.Errorf("jcampUnit(%q) = %v, want %v", v, got, want)
		}
	}
}
