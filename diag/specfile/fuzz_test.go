package specfile

import (
	"bytes"
	"errors"
	"fmt"
	"maps"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"
)

// addFileSeeds adds every sample file in testdata whose name matches one
// of the patterns.
func addFileSeeds(f *testing.F, patterns ...string) {
	for _, p := range patterns {
		files, err := filepath.Glob(filepath.Join("testdata", p))
		if err != nil {
			f.Fatal(err)
		}
		for _, file := range files {
			if st, err := os.Stat(file); err == nil && st.IsDir() {
				continue // testdata/fuzz holds the fuzzer's own corpus
			}
			b, err := os.ReadFile(file)
			if err != nil {
				f.Fatal(err)
			}
			f.Add(b)
		}
	}
}

// checkInvariants asserts the reader contract: a valid spectrum, or a
// *ParseError with a line and message, never both, never neither.
func checkInvariants(t *testing.T, sp *Spectrum, err error, lim Limits) {
	t.Helper()
	lim = lim.withDefaults()
	if err != nil {
		var pe *ParseError
		if !errors.As(err, &pe) {
			t.Fatalf("error %v is %T, not *ParseError", err, err)
		}
		if pe.Msg == "" || pe.Line < 1 || pe.Err == nil || err.Error() == "" {
			t.Fatalf("incomplete error %#v", pe)
		}
		if sp != nil {
			t.Fatalf("both a spectrum and an error %v", err)
		}
		return
	}
	if sp == nil || sp.Meta == nil {
		t.Fatal("nil spectrum or Meta without error")
	}
	if len(sp.X) != len(sp.Y) || len(sp.X) < lim.MinPoints || len(sp.X) > lim.MaxPoints {
		t.Fatalf("len(X), len(Y) = %d, %d", len(sp.X), len(sp.Y))
	}
	for i := range sp.X {
		if !isFinite(sp.X[i]) || !isFinite(sp.Y[i]) {
			t.Fatalf("point %d = (%v, %v) not finite", i, sp.X[i], sp.Y[i])
		}
		if i > 0 && !(sp.X[i] > sp.X[i-1]) {
			t.Fatalf("X not strictly ascending at %d: %v after %v", i, sp.X[i], sp.X[i-1])
		}
	}
}

// checkRoundTrip writes a successfully read spectrum both ways and reads
// it back: CSV must reproduce X and Y exactly, JCAMP-DX within the
// precision WriteJCAMP documents.
func checkRoundTrip(t *testing.T, sp *Spectrum) {
	t.Helper()
	var b bytes.Buffer
	if err := WriteCSV(&b, sp); err != nil {
		t.Fatalf("WriteCSV: %v", err)
	}
	csv := b.String()
	back, err := ReadText("rt.csv", &b, TextOptions{})
	if err != nil {
		t.Fatalf("reading WriteCSV output: %v\n%s", err, csv)
	}
	if !slices.Equal(back.X, sp.X) || !slices.Equal(back.Y, sp.Y) || back.XUnit != sp.XUnit {
		t.Fatalf("CSV round trip changed the spectrum\n%s", csv)
	}

	b.Reset()
	if err := WriteJCAMP(&b, sp); err != nil {
		t.Fatalf("WriteJCAMP: %v", err)
	}
	jdx := b.String()
	back, err = ReadJCAMP("rt.jdx", &b)
	if err != nil {
		t.Fatalf("reading WriteJCAMP output: %v\n%s", err, jdx)
	}
	if len(back.X) != len(sp.X) || back.XUnit != sp.XUnit {
		t.Fatalf("JCAMP round trip: %d points, unit %v\n%s", len(back.X), back.XUnit, jdx)
	}
	n := len(sp.X)
	step := (sp.X[n-1] - sp.X[0]) / float64(n-1)
	maxAbs := 0.0
	for _, y := range sp.Y {
		maxAbs = math.Max(maxAbs, math.Abs(y))
	}
	for i := range sp.X {
		// See WriteJCAMP: X within 1e-6 of a step (plus float rounding of
		// the interpolation), Y within YFACTOR/2 ≈ 5e-10 max|y|.
		xtol := 1e-6*math.Abs(step) + 1e-12*math.Abs(sp.X[i])
		if !closeTo(back.X[i], sp.X[i], xtol) || !closeTo(back.Y[i], sp.Y[i], 1e-9*maxAbs) {
			t.Fatalf("JCAMP round trip: point %d = (%v, %v), want (%v, %v)\n%s", i, back.X[i], back.Y[i], sp.X[i], sp.Y[i], jdx)
		}
	}
}

var fuzzDelims = []rune{0, ',', ';', '\t', ' '}
var fuzzDecimals = []rune{0, '.', ','}

func FuzzReadText(f *testing.F) {
	addFileSeeds(f, "*.csv", "*.txt", "*.tsv")
	for _, tt := range textOKTests {
		f.Add([]byte(tt.in))
	}
	for _, tt := range textErrorTests {
		f.Add([]byte(tt.in))
	}
	// Whole-number counts, "\n" and "\r\n" (ascRows' other forms).
	for _, eol := range []string{"\n", "\r\n"} {
		var b strings.Builder
		b.WriteString("\x80wavelength_nm,counts" + eol)
		for i := range 8 {
			fmt.Fprintf(&b, "%.4f,%d%s", 656.1+0.0173*float64(i), 900+37*i*i, eol)
		}
		f.Add([]byte(b.String()))
	}
	f.Fuzz(func(t *testing.T, data []byte) {
		// The first byte, if any, picks the options; the rest is the file.
		var opt TextOptions
		if len(data) > 0 {
			opt.Delimiter = fuzzDelims[int(data[0])%len(fuzzDelims)]
			opt.Decimal = fuzzDecimals[int(data[0]/8)%len(fuzzDecimals)]
			if opt.Delimiter == ',' && opt.Decimal == ',' {
				opt.Decimal = 0
			}
			if data[0]&0x80 != 0 {
				opt = TextOptions{}
			}
			data = data[1:]
		}
		sp, err := ReadText("fuzz.csv", bytes.NewReader(data), opt)
		checkInvariants(t, sp, err, Limits{})
		// The one-pass reader gives what the two-pass reference gives,
		// also with limits small enough to be hit.
		checkMatchesReference(t, data, opt, Limits{})
		checkMatchesReference(t, data, opt, Limits{MaxLineLen: 16, MaxPoints: 6, MinPoints: 3})
		// CRLF line ends must not change the outcome.
		crlf := bytes.ReplaceAll(data, []byte("\n"), []byte("\r\n"))
		if !bytes.Contains(data, []byte("\r")) {
			sp2, err2 := ReadText("fuzz.csv", bytes.NewReader(crlf), opt)
			if (err == nil) != (err2 == nil) || err != nil && err.Error() != err2.Error() {
				t.Fatalf("LF: %v; CRLF: %v", err, err2)
			}
			if err == nil && (!slices.Equal(sp.X, sp2.X) || !slices.Equal(sp.Y, sp2.Y)) {
				t.Fatal("CRLF changed the values")
			}
		}
		if err == nil {
			checkRoundTrip(t, sp)
		}
	})
}

func FuzzReadJCAMP(f *testing.F) {
	addFileSeeds(f, "*.jdx")
	for _, tt := range jcampOKTests {
		f.Add([]byte(tt.in))
	}
	for _, tt := range jcampErrorTests {
		f.Add([]byte(tt.in))
	}
	f.Fuzz(func(t *testing.T, data []byte) {
		sp, err := ReadJCAMP("fuzz.jdx", bytes.NewReader(data))
		checkInvariants(t, sp, err, Limits{})
		if err == nil {
			checkRoundTrip(t, sp)
		}
	})
}

func FuzzRead(f *testing.F) {
	addFileSeeds(f, "*")
	f.Add([]byte("##TITLE=x\n1,2\n"))
	f.Add([]byte("## notes\n" + rows(8, 1, ",")))
	f.Fuzz(func(t *testing.T, data []byte) {
		// Small limits make the limit paths reachable.
		lim := Limits{MaxBytes: 4096, MaxPoints: 64, MaxLineLen: 256, MinPoints: 2}
		sp, err := Read("fuzz", bytes.NewReader(data), Options{Limits: lim})
		checkInvariants(t, sp, err, lim)
		// Read dispatches exactly as Detect says.
		format := FormatText
		if len(data) <= int(lim.MaxBytes) {
			format = Detect("fuzz", data[:min(len(data), 4096)])
		}
		sp2, err2 := Read("fuzz", bytes.NewReader(data), Options{Limits: lim, Format: format})
		if (err == nil) != (err2 == nil) || err != nil && err.Error() != err2.Error() {
			t.Fatalf("auto: %v; %v: %v", err, format, err2)
		}
		if err == nil && (sp.Format != format || !slices.Equal(sp.X, sp2.X) || !slices.Equal(sp.Y, sp2.Y)) {
			t.Fatalf("auto-detected read differs from %v read", format)
		}
		// ReadBytes, in place and into lent arrays holding an earlier
		// spectrum, gives what Read gives.
		checkReadBytes(t, data, Options{Limits: lim}, sp, err)
	})
}

// checkReadBytes asserts that ReadBytes of data gives want and wantErr
// (Read's outcome), with and without lent buffers that hold stale values,
// and that nothing of the spectrum or error refers to data afterwards.
func checkReadBytes(t *testing.T, data []byte, opt Options, want *Spectrum, wantErr error) {
	t.Helper()
	stale := &Buffers{X: make([]float64, 0, 4096), Y: make([]float64, 0, 4096)}
	for range 4096 {
		stale.X, stale.Y = append(stale.X, -1), append(stale.Y, math.NaN())
	}
	for _, buf := range []*Buffers{nil, {}, stale} {
		in := bytes.Clone(data)
		sp, err := ReadBytes("fuzz", in, opt, buf)
		if (err == nil) != (wantErr == nil) || err != nil && err.Error() != wantErr.Error() {
			t.Fatalf("Read: %v; ReadBytes: %v", wantErr, err)
		}
		var msg string
		if err != nil {
			msg = err.Error()
		}
		var meta map[string]string
		var title, yUnit string
		if sp != nil {
			meta, title, yUnit = maps.Clone(sp.Meta), strings.Clone(sp.Title), strings.Clone(sp.YUnit)
		}
		for i := range in {
			in[i] = 'Z'
		}
		if err != nil {
			if err.Error() != msg {
				t.Fatalf("the error changed with its input's memory: %q, now %q", msg, err.Error())
			}
			continue
		}
		if sp.Format != want.Format || sp.XUnit != want.XUnit || sp.YUnit != want.YUnit || sp.Title != want.Title ||
			!maps.Equal(sp.Meta, want.Meta) || !slices.Equal(sp.X, want.X) || !slices.Equal(sp.Y, want.Y) {
			t.Fatalf("ReadBytes read %+v, Read %+v", sp, want)
		}
		if !maps.Equal(sp.Meta, meta) || sp.Title != title || sp.YUnit != yUnit {
			t.Fatal("the spectrum's strings changed with its input's memory")
		}
		if buf != nil && sp.Format == FormatText && (&buf.X[:1][0] != &sp.X[0] || &buf.Y[:1][0] != &sp.Y[0]) {
			t.Fatal("ReadBytes did not leave the spectrum's arrays in the buffers")
		}
	}
}
