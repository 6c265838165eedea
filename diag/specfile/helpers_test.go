package specfile

import (
	"errors"
	"fmt"
	"math"
	"os"
	"strings"
	"testing"
)

// rows returns n data lines "x<sep>y" with x = x0+i and y = 10+i, the
// smallest valid text body for the default MinPoints of 8.
func rows(n int, x0 int, sep string) string {
	var b strings.Builder
	for i := range n {
		fmt.Fprintf(&b, "%d%s%d\n", x0+i, sep, 10+i)
	}
	return b.String()
}

// checkParseError asserts that err is a *ParseError on line wantLine,
// wrapping kind, whose message contains sub.
func checkParseError(t *testing.T, err error, file string, wantLine int, kind error, sub string) {
	t.Helper()
	var pe *ParseError
	if !errors.As(err, &pe) {
		t.Fatalf("error = %v (%T), want *ParseError", err, err)
	}
	if pe.File != file {
		t.Errorf("File = %q, want %q", pe.File, file)
	}
	if pe.Line != wantLine {
		t.Errorf("Line = %d, want %d (error %q)", pe.Line, wantLine, err)
	}
	if !errors.Is(err, kind) {
		t.Errorf("error %q does not wrap %v", err, kind)
	}
	if !strings.Contains(pe.Msg, sub) {
		t.Errorf("Msg = %q, want it to contain %q", pe.Msg, sub)
	}
	if want := fmt.Sprintf("%s:%d: %s", file, wantLine, pe.Msg); file != "" && err.Error() != want {
		t.Errorf("Error() = %q, want %q", err.Error(), want)
	}
}

// closeTo reports whether got and want agree to within tol, absolute.
func closeTo(got, want, tol float64) bool { return math.Abs(got-want) <= tol }

// readTestdata returns the contents of testdata/name.
func readTestdata(tb testing.TB, name string) []byte {
	tb.Helper()
	b, err := os.ReadFile("testdata/" + name)
	if err != nil {
		tb.Fatal(err)
	}
	return b
}

// hAlphaY are the ordinates of the invented H-alpha samples
// halpha_{nm.csv,affn.jdx,asdf.jdx,xypoints.jdx}, at x = 654.78 + 0.15 i nm.
var hAlphaY = []float64{1000, 1000, 1000, 1005, 1020, 1080, 1250, 1700, 2600, 3400,
	3650, 3400, 2600, 1700, 1250, 1080, 1020, 1005, 1000, 1000}
