package specfile

import (
	"bytes"
	"errors"
	"math"
	"os"
	"path/filepath"
	"runtime"
	"slices"
	"testing"
)

// The sample files in testdata are invented. Expected values were written
// when the files were made (see the comments in each file's header) and
// checked by hand against the file text.
var sampleTests = []struct {
	file   string
	format Format
	unit   AxisUnit
	yunit  string
	title  string
	n      int
	x0, xn float64 // first and last X after reading (ascending)
	y0, yn float64
	tol    float64 // on x0, xn: XFACTOR = 0.01 products are inexact
	meta   map[string]string
	ys     []float64 // full ordinates, when known
}{
	{file: "halpha_nm.csv", format: FormatText, unit: NM, yunit: "counts",
		title: "Fenwick Hollow Plasma Lab, H-alpha, discharge 7", n: 20,
		x0: 654.78, xn: 657.63, y0: 1000, yn: 1000,
		meta: map[string]string{"integration_ms": "100", "x_column": "wavelength_nm"}, ys: hAlphaY},
	{file: "hbeta_semicolon.csv", format: FormatText, unit: NM, yunit: "counts", n: 24,
		x0: 485.50, xn: 486.65, y0: 804.2, yn: 831.7,
		meta: map[string]string{"slit_um": "25"}},
	{file: "hgamma_angstrom.txt", format: FormatText, unit: Angstrom, yunit: "counts", n: 16,
		x0: 4336.5, xn: 4344.0, y0: 500, yn: 500,
		meta: map[string]string{"grating": "1800 l/mm"}},
	// Descending wavenumbers in the file, reversed on reading.
	{file: "halpha_wavenumber.tsv", format: FormatText, unit: WavenumberPerCM, yunit: "a.u.", n: 16,
		x0: 15210, xn: 15270, y0: 0.1201, yn: 0.1200,
		meta: map[string]string{"exported": "channel order reversed"}},
	{file: "halpha_affn.jdx", format: FormatJCAMP, unit: NM, yunit: "COUNTS",
		title: "Fenwick Hollow Plasma Lab, H-alpha, discharge 7", n: 20,
		x0: 654.78, xn: 657.63, y0: 1000, yn: 1000, tol: 1e-9,
		meta: map[string]string{"JCAMP-DX": "4.24", "$INTEGRATION TIME": "100 ms", "DATA TYPE": "UV/VIS SPECTRUM"}, ys: hAlphaY},
	{file: "halpha_asdf.jdx", format: FormatJCAMP, unit: NM, yunit: "COUNTS",
		title: "Fenwick Hollow Plasma Lab, H-alpha, discharge 7", n: 20,
		x0: 654.78, xn: 657.63, y0: 1000, yn: 1000, tol: 1e-9,
		meta: map[string]string{"XYDATA": "(X++(Y..Y))"}, ys: hAlphaY},
	{file: "halpha_xypoints.jdx", format: FormatJCAMP, unit: NM, yunit: "COUNTS",
		title: "Fenwick Hollow Plasma Lab, H-alpha, discharge 7", n: 20,
		x0: 654.78, xn: 657.63, y0: 1000, yn: 1000,
		meta: map[string]string{"XYPOINTS": "(XY..XY)"}, ys: hAlphaY},
}

func TestReadSamples(t *testing.T) {
	for _, tt := range sampleTests {
		t.Run(tt.file, func(t *testing.T) {
			data := readTestdata(t, tt.file)
			if got := Detect(tt.file, data); got != tt.format {
				t.Errorf("Detect = %v, want %v", got, tt.format)
			}
			sp, err := Read(tt.file, bytes.NewReader(data), Options{})
			if err != nil {
				t.Fatal(err)
			}
			if sp.Format != tt.format || sp.XUnit != tt.unit || sp.YUnit != tt.yunit || sp.Title != tt.title {
				t.Errorf("Format, XUnit, YUnit, Title = %v, %v, %q, %q; want %v, %v, %q, %q",
					sp.Format, sp.XUnit, sp.YUnit, sp.Title, tt.format, tt.unit, tt.yunit, tt.title)
			}
			if len(sp.X) != tt.n || len(sp.Y) != tt.n {
				t.Fatalf("len(X), len(Y) = %d, %d; want %d", len(sp.X), len(sp.Y), tt.n)
			}
			n := tt.n - 1
			if !closeTo(sp.X[0], tt.x0, tt.tol) || !closeTo(sp.X[n], tt.xn, tt.tol) {
				t.Errorf("X[0], X[n-1] = %v, %v; want %v, %v", sp.X[0], sp.X[n], tt.x0, tt.xn)
			}
			if sp.Y[0] != tt.y0 || sp.Y[n] != tt.yn {
				t.Errorf("Y[0], Y[n-1] = %v, %v; want %v, %v", sp.Y[0], sp.Y[n], tt.y0, tt.yn)
			}
			if tt.ys != nil && !slices.Equal(sp.Y, tt.ys) {
				t.Errorf("Y = %v\nwant %v", sp.Y, tt.ys)
			}
			for k, v := range tt.meta {
				if sp.Meta[k] != v {
					t.Errorf("Meta[%q] = %q, want %q", k, sp.Meta[k], v)
				}
			}
			// The format-specific reader agrees with Read.
			var sp2 *Spectrum
			if tt.format == FormatJCAMP {
				sp2, err = ReadJCAMP(tt.file, bytes.NewReader(data))
			} else {
				sp2, err = ReadText(tt.file, bytes.NewReader(data), TextOptions{})
			}
			if err != nil || !slices.Equal(sp2.X, sp.X) || !slices.Equal(sp2.Y, sp.Y) {
				t.Errorf("format reader disagrees with Read (err %v)", err)
			}
		})
	}
}

// TestSamplesAgree checks that the hand-encoded ASDF file, its AFFN and
// XYPOINTS twins and the CSV all decode to the same spectrum. The ASDF
// lines exercise SQZ, DIF, DUP and the Y-value check; any slip in
// decoding them changes at least one ordinate or breaks a check.
func TestSamplesAgree(t *testing.T) {
	ref, err := ReadText("halpha_nm.csv", bytes.NewReader(readTestdata(t, "halpha_nm.csv")), TextOptions{})
	if err != nil {
		t.Fatal(err)
	}
	for _, f := range []string{"halpha_affn.jdx", "halpha_asdf.jdx", "halpha_xypoints.jdx"} {
		sp, err := ReadJCAMP(f, bytes.NewReader(readTestdata(t, f)))
		if err != nil {
			t.Fatal(err)
		}
		if !slices.Equal(sp.Y, ref.Y) {
			t.Errorf("%s: Y = %v, want %v", f, sp.Y, ref.Y)
		}
		for i := range sp.X {
			// 1e-9 nm: X from FIRSTX/LASTX interpolation or XFACTOR=0.01
			// products differ from the decimal values by a few ulps.
			if !closeTo(sp.X[i], ref.X[i], 1e-9) {
				t.Errorf("%s: X[%d] = %v, want %v", f, i, sp.X[i], ref.X[i])
			}
		}
	}
}

func TestDetect(t *testing.T) {
	tests := []struct {
		name, head string
		want       Format
	}{
		{"a.jdx", "##TITLE=x\n", FormatJCAMP},
		{"a.txt", "\xEF\xBB\xBF\r\n$$ comment\r\n ##JCAMP-DX=5.01\n", FormatJCAMP},
		{"a.csv", "##title=lower case label\n", FormatJCAMP},
		{"a.csv", "## notes: a CSV comment with two hashes\n1,2\n", FormatText},
		{"a.jdx", "##NPOINTS=3\n", FormatText}, // must start with TITLE or JCAMP-DX
		{"a.csv", "656.3,1\n", FormatText},
		{"a.jdx", "", FormatJCAMP},
		{"A.DX", " \n\n", FormatJCAMP},
		{"a.csv", "", FormatText},
		{"", "", FormatText},
	}
	for _, tt := range tests {
		if got := Detect(tt.name, []byte(tt.head)); got != tt.want {
			t.Errorf("Detect(%q, %q) = %v, want %v", tt.name, tt.head, got, tt.want)
		}
	}
}

func TestReadForcedFormat(t *testing.T) {
	data := readTestdata(t, "halpha_affn.jdx")
	_, err := Read("halpha_affn.jdx", bytes.NewReader(data), Options{Format: FormatText})
	// Read as text, the labels are "#" comments and only the four AFFN
	// lines remain as data.
	checkParseError(t, err, "halpha_affn.jdx", 22, ErrTooFewPoints, "only 4 data points, need at least 8")

	csv := readTestdata(t, "halpha_nm.csv")
	_, err = Read("halpha_nm.csv", bytes.NewReader(csv), Options{Format: FormatJCAMP})
	checkParseError(t, err, "halpha_nm.csv", 1, ErrSyntax, "before the first ##TITLE=")
}

func TestWavelengthNM(t *testing.T) {
	tests := []struct {
		unit   AxisUnit
		x, y   []float64
		wl, wy []float64
	}{
		{NM, []float64{656, 657}, []float64{1, 2}, []float64{656, 657}, []float64{1, 2}},
		{Angstrom, []float64{6560, 6570}, []float64{1, 2}, []float64{656, 657}, []float64{1, 2}},
		{Micrometer, []float64{0.5, 0.6}, []float64{1, 2}, []float64{500, 600}, []float64{1, 2}},
		// 10⁷/20000 = 500 nm, 10⁷/25000 = 400 nm; order reversed with Y.
		{WavenumberPerCM, []float64{20000, 25000}, []float64{1, 2}, []float64{400, 500}, []float64{2, 1}},
	}
	for _, tt := range tests {
		sp := &Spectrum{X: tt.x, Y: tt.y, XUnit: tt.unit}
		wl, y, err := sp.WavelengthNM()
		if err != nil {
			t.Errorf("%v: %v", tt.unit, err)
			continue
		}
		for i := range wl {
			// 1e-12 relative: one division or multiplication.
			if !closeTo(wl[i], tt.wl[i], 1e-12*tt.wl[i]) || y[i] != tt.wy[i] {
				t.Errorf("%v: WavelengthNM = %v, %v; want %v, %v", tt.unit, wl, y, tt.wl, tt.wy)
				break
			}
		}
		if &y[0] == &sp.Y[0] {
			t.Errorf("%v: WavelengthNM returned the spectrum's own Y slice", tt.unit)
		}
	}
	if _, _, err := (&Spectrum{X: []float64{1}, Y: []float64{1}}).WavelengthNM(); !errors.Is(err, ErrUnknownUnit) {
		t.Errorf("unknown unit: err = %v, want ErrUnknownUnit", err)
	}
	if _, _, err := (&Spectrum{X: []float64{0, 1}, Y: []float64{1, 1}, XUnit: WavenumberPerCM}).WavelengthNM(); !errors.Is(err, ErrNonPositiveAxis) {
		t.Errorf("zero wavenumber: err = %v, want ErrNonPositiveAxis", err)
	}
	// Hα at 15237.4 cm⁻¹ in the wavenumber sample is 656.28… nm (vacuum).
	sp, err := ReadText("halpha_wavenumber.tsv", bytes.NewReader(readTestdata(t, "halpha_wavenumber.tsv")), TextOptions{})
	if err != nil {
		t.Fatal(err)
	}
	wl, _, err := sp.WavelengthNM()
	if err != nil {
		t.Fatal(err)
	}
	if !slices.IsSorted(wl) || !closeTo(wl[0], 1e7/15270, 1e-9) {
		t.Errorf("wavelengths %v not ascending from %v", wl, 1e7/15270)
	}
}

func TestStrings(t *testing.T) {
	for v, want := range map[fmtStringer]string{
		NM: "nm", Angstrom: "Å", Micrometer: "µm", WavenumberPerCM: "cm⁻¹", UnknownUnit: "unknown",
		AxisUnit(99): "AxisUnit(99)", FormatAuto: "auto", FormatText: "text", FormatJCAMP: "jcamp-dx",
		Format(7): "Format(7)",
	} {
		if got := v.String(); got != want {
			t.Errorf("String() = %q, want %q", got, want)
		}
	}
	e := &ParseError{Line: 3, Msg: "bad", Err: ErrSyntax}
	if got := e.Error(); got != "<input>:3: bad" {
		t.Errorf("Error() = %q", got)
	}
	if math.IsNaN(0) {
		t.Fatal()
	}
}

type fmtStringer interface{ String() string }

// TestReadBytes: ReadBytes gives Read's spectrum or error for every
// sample file and for errors of each kind (limits included), reuses lent
// arrays, and keeps nothing of the input's memory.
func TestReadBytes(t *testing.T) {
	files, err := filepath.Glob(filepath.Join("testdata", "*.*"))
	if err != nil || len(files) == 0 {
		t.Fatal("no sample files", err)
	}
	type tc struct {
		name string
		data []byte
		opt  Options
	}
	var cases []tc
	for _, f := range files {
		b, err := os.ReadFile(f)
		if err != nil {
			t.Fatal(err)
		}
		cases = append(cases, tc{f, b, Options{}}, tc{f + " (small limits)", b, Options{Limits: Limits{MaxBytes: 300, MaxPoints: 20, MaxLineLen: 40}}})
	}
	for _, tt := range textErrorTests {
		cases = append(cases, tc{"text error " + tt.in, []byte(tt.in), Options{Format: FormatText}})
	}
	for _, tt := range textOKTests {
		cases = append(cases, tc{"text " + tt.in, []byte(tt.in), Options{Format: FormatText}})
	}
	kinds := map[bool]int{}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			want, wantErr := Read("fuzz", bytes.NewReader(c.data), c.opt)
			kinds[wantErr == nil]++
			checkReadBytes(t, c.data, c.opt, want, wantErr)
		})
	}
	if kinds[true] == 0 || kinds[false] == 0 {
		t.Fatalf("cases: %d read, %d refused; want both", kinds[true], kinds[false])
	}

	// Arrays lent and large enough are used, file after file.
	b, err := os.ReadFile(filepath.Join("testdata", "bench_2048.csv"))
	if err != nil {
		t.Fatal(err)
	}
	var buf Buffers
	first, err := ReadBytes("a.csv", b, Options{}, &buf)
	if err != nil {
		t.Fatal(err)
	}
	x0 := &first.X[0]
	second, err := ReadBytes("b.csv", b, Options{}, &buf)
	if err != nil {
		t.Fatal(err)
	}
	if &second.X[0] != x0 || &buf.X[0] != x0 {
		t.Error("the second read did not reuse the lent arrays")
	}
	// The arrays (2 × 16 KB here) are not allocated again: a few small
	// allocations (the spectrum, its Meta, the head's lines) remain.
	var m0, m1 runtime.MemStats
	runtime.ReadMemStats(&m0)
	for range 10 {
		if _, err := ReadBytes("b.csv", b, Options{}, &buf); err != nil {
			t.Fatal(err)
		}
	}
	runtime.ReadMemStats(&m1)
	if per := (m1.TotalAlloc - m0.TotalAlloc) / 10; per > 8<<10 {
		t.Errorf("ReadBytes with lent arrays allocates %d bytes per file, want < 8 KB", per)
	}
}
