package specfile

import (
	"bytes"
	"math"
	"math/rand/v2"
	"slices"
	"strconv"
	"strings"
	"testing"
)

// refParseField is the text reader's number parsing before parseNumber:
// scanDecimal's grammar, then strconv.ParseFloat. parseNumber must agree
// with it on every input, bit for bit.
func refParseField(f string, dec rune) (float64, bool) {
	if dec == ',' {
		if strings.ContainsRune(f, '.') {
			return 0, false
		}
		f = strings.Replace(f, ",", ".", 1)
	}
	v, _, ok := parseDecimal(f)
	return v, ok
}

// checkNumber compares parseNumber with refParseField and, for accepted
// input, with strconv.ParseFloat directly, for both decimal separators.
func checkNumber(t *testing.T, s string) {
	t.Helper()
	for _, dec := range []rune{'.', ','} {
		in := s
		if dec == ',' {
			if strings.ContainsRune(s, ',') {
				continue
			}
			in = strings.Replace(s, ".", ",", 1)
		}
		got, ok := parseNumber(in, byte(dec))
		want, wantOK := refParseField(in, dec)
		if ok != wantOK || math.Float64bits(got) != math.Float64bits(want) {
			t.Fatalf("parseNumber(%q, %q) = %v (%#x), %v; want %v (%#x), %v",
				in, dec, got, math.Float64bits(got), ok, want, math.Float64bits(want), wantOK)
		}
		if ok {
			sv, _ := strconv.ParseFloat(s, 64) // range errors fold into ±Inf, ±0
			if math.Float64bits(got) != math.Float64bits(sv) {
				t.Fatalf("parseNumber(%q) = %v, strconv.ParseFloat = %v", in, got, sv)
			}
		}
		// The data loop's plain decimals (also followed by a delimiter,
		// so that eight-byte steps have room): where they answer, the
		// same value and end as scanNumber.
		for _, tail := range []string{"", ";", ";2.5\n", ",0000000000"} {
			txt := in + tail
			pv, pe, pok := plainNumber(txt, 0, byte(dec))
			sv, se, sok := scanNumber(txt, 0, byte(dec))
			if pe < len(txt) && txt[pe] != ';' && txt[pe] != ',' {
				continue // plainPair declines: the field goes on
			}
			if pok && (!sok || pe != se || math.Float64bits(pv) != math.Float64bits(sv)) {
				t.Fatalf("plainNumber(%q, %q) = %v, %d; scanNumber %v, %d, %v", txt, dec, pv, pe, sv, se, sok)
			}
		}
	}
}

var numberEdgeCases = []string{
	// Forms of the grammar.
	"0", "-0", "+0", "0.0", "-0.0", "-0e999", "0e-999999", "00000", ".5", "5.", "-.5", "+5.", "1e5", "1E5",
	"1e+5", "1e-5", "-1.5E+2", "+1e0", "656.28", "656.280000", "0656.28", "8.06677", "380.156326",
	// Exponents at and beyond the fast path's edge.
	"1e22", "1e23", "1e-22", "1e-23", "9e22", "123456789e22", "1.5e-22", "12345e-27", "1e308", "1.7976931348623157e308",
	"1.7976931348623159e308", "1e309", "1e999", "-1e999", "1e-400", "4.9e-324", "5e-324", "2e-324", "3e-324",
	"2.2250738585072011e-308", "2.2250738585072014e-308", "2.2250738585072012e-308", "1e-320", "1e000000000000005",
	"1e99999", "1e100000", "1e100001", "1e-100001", "0.000000000000000000000000000001e30",
	// Digit counts around 19 significant digits and 2⁵³.
	"9007199254740992", "9007199254740993", "9007199254740994", "9007199254740995", "18014398509481985",
	"1234567890123456789", "12345678901234567890", "1234567890.123456789", "1234567890.1234567890",
	"0.1234567890123456789", "0.12345678901234567891", "9999999999999999999", "99999999999999999999",
	"0.30000000000000004", "0.1", "0.2", "0.3", "3.14159265358979323846264338327950288", "1.00000000000000000000",
	"000000000000000000000000000000001", "100000000000000000000000", "7.2960774632124450e+00",
	"2.5e-1", "1.0000000000000002", "1.00000000000000011102230246251565404236316680908203125",
	// Rejected: not numbers here, although strconv takes some.
	"", "+", "-", ".", "+.", "e5", ".e5", "1e", "1e+", "1e-", "1ee5", "1e5e5", "1.2.3", "--1", "+-1", "1-",
	"inf", "Inf", "+Inf", "-inf", "infinity", "Infinity", "nan", "NaN", "0x10", "0x1p-2", "1_000", "1 000",
	" 1", "1 ", "1,5", "1.5,", "١", "1e٥", "\x00", "1\x00",
}

func TestParseNumberEdgeCases(t *testing.T) {
	for _, s := range numberEdgeCases {
		checkNumber(t, s)
	}
	// What the reader documents, spelled out.
	for _, s := range []string{"inf", "NaN", "0x10", "1_0", "1e", " 1"} {
		if _, ok := parseNumber(s, '.'); ok {
			t.Errorf("parseNumber(%q) accepted", s)
		}
	}
	if v, ok := parseNumber("-0", '.'); !ok || !math.Signbit(v) || v != 0 {
		t.Errorf("parseNumber(-0) = %v, %v; want negative zero", v, ok)
	}
	if v, ok := parseNumber("656,28", ','); !ok || v != 656.28 {
		t.Errorf("parseNumber(656,28, ',') = %v, %v", v, ok)
	}
}

// randomNumber writes a random string near the number grammar: mostly
// valid, with long digit runs, leading zeros, big exponents and now and
// then a stray character.
func randomNumber(r *rand.Rand) string {
	var b strings.Builder
	switch r.IntN(4) {
	case 0:
		b.WriteByte('-')
	case 1:
		b.WriteByte('+')
	}
	digits := func(max int) {
		n := r.IntN(max + 1)
		if r.IntN(4) == 0 {
			for range r.IntN(6) {
				b.WriteByte('0')
			}
		}
		for range n {
			b.WriteByte(byte('0' + r.IntN(10)))
		}
	}
	digits(22)
	if r.IntN(3) > 0 {
		b.WriteByte('.')
		digits(22)
	}
	if r.IntN(2) == 0 {
		b.WriteByte("eE"[r.IntN(2)])
		switch r.IntN(3) {
		case 0:
			b.WriteByte('-')
		case 1:
			b.WriteByte('+')
		}
		e := r.IntN(30)
		if r.IntN(5) == 0 {
			e = r.IntN(400)
		}
		b.WriteString(strconv.Itoa(e))
	}
	s := b.String()
	if r.IntN(20) == 0 && len(s) > 0 {
		i := r.IntN(len(s) + 1)
		s = s[:i] + string("x.e+-,_ 0"[r.IntN(9)]) + s[i:]
	}
	return s
}

func TestParseNumberRandom(t *testing.T) {
	r := rand.New(rand.NewPCG(11, 2048))
	for range 200_000 {
		checkNumber(t, randomNumber(r))
	}
	// Every float64 written shortest, and with a fixed number of digits,
	// as spectrometer software writes them; subnormals included.
	for range 50_000 {
		v := math.Float64frombits(r.Uint64())
		if !isFinite(v) {
			continue
		}
		checkNumber(t, strconv.FormatFloat(v, 'g', -1, 64))
		checkNumber(t, strconv.FormatFloat(v, 'e', r.IntN(20), 64))
		w := (r.Float64() - 0.5) * math.Pow(10, float64(r.IntN(16)-6))
		checkNumber(t, strconv.FormatFloat(w, 'f', r.IntN(12), 64))
		checkNumber(t, strconv.FormatFloat(w, 'g', r.IntN(19)+1, 64))
	}
}

func FuzzParseNumber(f *testing.F) {
	for _, s := range numberEdgeCases {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, s string) {
		checkNumber(t, s)
	})
}

// slowRow is the general path of the data loop: splitFields and
// fieldValue.
func slowRow(s string, delim, dec rune, ncols, xc, yc int) (x, y float64, ok bool) {
	fields := splitFields(s, delim)
	if len(fields) != ncols {
		return 0, 0, false
	}
	x, err := fieldValue("f", 1, fields[xc], dec, "x value")
	if err != nil {
		return 0, 0, false
	}
	y, err = fieldValue("f", 1, fields[yc], dec, "intensity")
	if err != nil {
		return 0, 0, false
	}
	return x, y, true
}

// checkRow asserts that fastRow gives the general path's values whenever
// it answers, and declines every line the general path rejects. It may
// decline a good line only if the line has non-ASCII bytes and is split
// at white space.
func checkRow(t *testing.T, s string, delim, dec rune, ncols, xc, yc int) {
	t.Helper()
	fx, fy, fok := fastRow(s, byte(delim), byte(dec), ncols, xc, yc)
	sx, sy, sok := slowRow(s, delim, dec, ncols, xc, yc)
	switch {
	case fok && !sok:
		t.Fatalf("fastRow(%q, %q, %q) accepted a line the general path rejects", s, delim, dec)
	case fok && (math.Float64bits(fx) != math.Float64bits(sx) || math.Float64bits(fy) != math.Float64bits(sy)):
		t.Fatalf("fastRow(%q) = %v, %v; general path %v, %v", s, fx, fy, sx, sy)
	case !fok && sok && (delim != ' ' || isASCII(s)):
		t.Fatalf("fastRow(%q, %q, %q) declined a good line", s, delim, dec)
	}
}

func isASCII(s string) bool {
	for i := 0; i < len(s); i++ {
		if s[i] >= 0x80 {
			return false
		}
	}
	return true
}

func TestFastRowRandom(t *testing.T) {
	r := rand.New(rand.NewPCG(3, 656))
	pieces := []string{"", " ", "  ", "\t", "\"", "\u00a0", "\u2003", "x", "nan", "-inf", "1e999", "\v", "\r"}
	for range 100_000 {
		delim := []rune{',', ';', '\t', ' '}[r.IntN(4)]
		dec := '.'
		if delim != ',' && r.IntN(3) == 0 {
			dec = ','
		}
		ncols := 1 + r.IntN(4)
		var b strings.Builder
		n := ncols + r.IntN(3) - 1
		for i := range max(n, 0) {
			if i > 0 {
				b.WriteRune(delim)
			}
			f := randomNumber(r)
			if dec == ',' {
				f = strings.Replace(f, ".", ",", 1)
			}
			if r.IntN(8) == 0 {
				f = pieces[r.IntN(len(pieces))] + f + pieces[r.IntN(len(pieces))]
			}
			if r.IntN(10) == 0 {
				f = "\"" + f + "\""
			}
			b.WriteString(f)
		}
		if r.IntN(6) == 0 {
			b.WriteRune(delim)
		}
		xc, yc := r.IntN(ncols+1), r.IntN(ncols+1)
		if xc == yc || xc >= ncols || yc >= ncols {
			continue
		}
		checkRow(t, b.String(), delim, dec, ncols, xc, yc)
	}
}

func FuzzFastRow(f *testing.F) {
	f.Add("656.28,1234.5", byte(0))
	f.Add("1,5;2,25;", byte(5))
	f.Add("\"1\"\t 2 \t3", byte(2))
	f.Add("1\u00a02 3", byte(3))
	f.Fuzz(func(t *testing.T, s string, o byte) {
		delim := []rune{',', ';', '\t', ' '}[o%4]
		dec := '.'
		if delim != ',' && o&4 != 0 {
			dec = ','
		}
		ncols := 2 + int(o>>3)%3
		checkRow(t, s, delim, dec, ncols, 0, 1)
		checkRow(t, s, delim, dec, ncols, ncols-1, 0)
	})
}

// TestReadTextAllocs: reading the 2048-point benchmark file allocates a
// fixed handful of blocks (the file buffer, the line index, X and Y, the
// result), not several per line as splitting into strings did.
func TestReadTextAllocs(t *testing.T) {
	data := readTestdata(t, "bench_2048.csv")
	allocs := testing.AllocsPerRun(20, func() {
		if _, err := ReadText("bench_2048.csv", bytes.NewReader(data), TextOptions{}); err != nil {
			t.Fatal(err)
		}
	})
	if allocs > 16 {
		t.Errorf("ReadText of 2048 points: %v allocations, want ≤ 16", allocs)
	}
}

// TestToWavelengthNM: the in-place conversion gives WavelengthNM's values
// bit for bit and its errors, leaves s alone on error, and allocates
// nothing.
func TestToWavelengthNM(t *testing.T) {
	r := rand.New(rand.NewPCG(7, 8))
	for _, unit := range []AxisUnit{NM, Angstrom, Micrometer, WavenumberPerCM, UnknownUnit} {
		for _, desc := range []bool{false, true} {
			for _, bad := range []int{-1, 0, 5} {
				n := 12
				x, y := make([]float64, n), make([]float64, n)
				for i := range n {
					x[i] = 100 + float64(i) + r.Float64()/2
					y[i] = r.NormFloat64()
				}
				if desc {
					slices.Reverse(x)
				}
				if bad >= 0 {
					x[bad] = -x[bad] * float64(bad%2)
				}
				sp := &Spectrum{X: slices.Clone(x), Y: slices.Clone(y), XUnit: unit}
				wl, wy, err := sp.WavelengthNM()
				err2 := sp.ToWavelengthNM()
				if (err == nil) != (err2 == nil) || err != nil && err.Error() != err2.Error() {
					t.Fatalf("%v desc=%v bad=%d: WavelengthNM error %v, ToWavelengthNM %v", unit, desc, bad, err, err2)
				}
				if err != nil {
					if !slices.Equal(sp.X, x) || !slices.Equal(sp.Y, y) || sp.XUnit != unit {
						t.Fatalf("%v: ToWavelengthNM changed the spectrum on error", unit)
					}
					continue
				}
				for i := range wl {
					if math.Float64bits(sp.X[i]) != math.Float64bits(wl[i]) || math.Float64bits(sp.Y[i]) != math.Float64bits(wy[i]) {
						t.Fatalf("%v desc=%v: point %d = (%v, %v), WavelengthNM (%v, %v)", unit, desc, i, sp.X[i], sp.Y[i], wl[i], wy[i])
					}
				}
				if sp.XUnit != NM {
					t.Errorf("XUnit = %v after conversion", sp.XUnit)
				}
			}
		}
	}
	sp := &Spectrum{X: []float64{20000, 25000}, Y: []float64{1, 2}, XUnit: WavenumberPerCM}
	if a := testing.AllocsPerRun(10, func() { sp.XUnit = WavenumberPerCM; _ = sp.ToWavelengthNM() }); a != 0 {
		t.Errorf("ToWavelengthNM allocates %v times", a)
	}
}
