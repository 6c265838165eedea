package mset

import (
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"runtime"
	"strings"
	"testing"

	"glowlog/diag"
)

// FuzzDecode: Decode never panics; it returns either a measurement whose
// analysis does not panic, or an *Error with a message.
func FuzzDecode(f *testing.F) {
	for _, p := range []string{"../../testdata/example_hbeta.json"} {
		if b, err := os.ReadFile(p); err == nil {
			f.Add(b)
		}
	}
	if ms, _ := filepath.Glob("../../testdata/synthetic/*[a-z0-9].json"); ms != nil {
		for _, p := range ms {
			if b, err := os.ReadFile(p); err == nil {
				f.Add(b)
			}
		}
	}
	f.Add([]byte(`{"intensity_unit":"energy","lines":[{"upper_level":3,"intensity":1},{"upper_level":4,"intensity":0.2,"fwhm_nm":0.3}]}`))
	f.Add([]byte(`{"intensity_unit":"photon","solve_gas_temperature":true,"perturber":"He","pressure_Pa":1e5,"lines":[{"upper_level":3,"lorentz_fwhm_nm":0.08},{"upper_level":4,"lorentz_fwhm_nm":0.2}]}`))
	f.Fuzz(func(t *testing.T, data []byte) {
		m, err := Decode("fuzz.json", data)
		if err != nil {
			var e *Error
			if !errors.As(err, &e) || e.Msg == "" {
				t.Fatalf("error %v is not a *mset.Error with a message", err)
			}
			return
		}
		if len(m.Lines) == 0 {
			t.Fatal("decoded a measurement without lines")
		}
		_, _ = diag.Analyze(m) // must not panic
	})
}

func TestDecodeLineNumbers(t *testing.T) {
	in := "{\n \"intensity_unit\": \"photon\",\n \"lines\": [\n  {\"upper_level\": 3, \"intensity\": 1},\n  {\"upper_level\": 4,\n   \"intensity\": -2}\n ]\n}\n"
	_, err := Decode("run.json", []byte(in))
	var e *Error
	if !errors.As(err, &e) || e.Line != 6 || e.Field != "lines[1].intensity" {
		t.Fatalf("got %#v, want line 6 field lines[1].intensity", err)
	}
	if got, want := e.Error(), "run.json:6: lines[1].intensity: must be a positive finite intensity, got -2"; got != want {
		t.Errorf("Error() = %q, want %q", got, want)
	}
}

// deepSet is a small measurement set whose "lines" value is nested depth
// arrays deep.
func deepSet(depth int) []byte {
	return []byte(`{"intensity_unit":"photon","lines":` + strings.Repeat("[", depth) + strings.Repeat("]", depth) + `}`)
}

// TestDecodeDeepNestingRejected: a 40 KB set nested 20 000 levels deep is
// rejected by the byte scan with a message about nesting, at a cost that
// does not grow with the depth (allocations bounded, the same as for a
// depth just over the limit).
func TestDecodeDeepNestingRejected(t *testing.T) {
	deep := deepSet(20000)
	if len(deep) < 40000 {
		t.Fatalf("input is %d bytes", len(deep))
	}
	_, err := Decode("deep.json", deep)
	var e *Error
	if !errors.As(err, &e) || e.Line != 1 || !strings.Contains(e.Msg, "nested more than 8 deep") {
		t.Fatalf("got %v, want a nesting error", err)
	}
	allocs := testing.AllocsPerRun(5, func() { _, _ = Decode("deep.json", deep) })
	shallow := testing.AllocsPerRun(5, func() { _, _ = Decode("deep.json", deepSet(MaxDepth)) })
	if allocs > 20 || allocs > shallow+5 {
		t.Errorf("rejecting 20 000 levels costs %v allocations (%v at depth %d): the scan must not decode", allocs, shallow, MaxDepth)
	}
	var ms runtime.MemStats
	runtime.ReadMemStats(&ms)
	before := ms.TotalAlloc
	_, _ = Decode("deep.json", deep)
	runtime.ReadMemStats(&ms)
	if got := ms.TotalAlloc - before; got > 64<<10 {
		t.Errorf("rejecting a %d-byte input allocated %d bytes", len(deep), got)
	}
	// Within the limit, nesting is not the error.
	_, err = Decode("ok.json", deepSet(MaxDepth-1))
	if err == nil || strings.Contains(err.Error(), "nested") {
		t.Errorf("depth %d: %v", MaxDepth-1, err)
	}
	// Brackets inside strings do not count.
	_, err = Decode("s.json", []byte(`{"intensity_unit":"photon","perturber":"`+strings.Repeat("[{", 100)+`","lines":[{"upper_level":3,"intensity":1}]}`))
	if err == nil || strings.Contains(err.Error(), "nested") {
		t.Errorf("brackets in a string: %v", err)
	}
}

// TestDecodeDuplicateKeys: a key repeated in any object (top level, a line,
// stark_relations; also differing only in case) is an error naming the key
// and both lines, not "last wins".
func TestDecodeDuplicateKeys(t *testing.T) {
	cases := []struct {
		in         string
		line       int
		field, msg string
	}{
		{"{\"intensity_unit\":\"photon\",\n\"lines\":[{\"upper_level\":3,\"intensity\":1}],\n\"intensity_unit\":\"energy\"}", 3, "intensity_unit", `duplicate key "intensity_unit" in the top-level object (first given at line 1)`},
		{"{\"intensity_unit\":\"photon\",\"lines\":[\n{\"upper_level\":3,\"intensity\":1},\n{\"upper_level\":4,\"intensity\":2,\n\"intensity\":-3}]}", 4, "lines[1].intensity", `duplicate key "intensity" in lines[1] (first given at line 3)`},
		{"{\"intensity_unit\":\"photon\",\"lines\":[{\"upper_level\":3,\"intensity\":1,\n\"Intensity\":2}]}", 2, "lines[0].Intensity", `key "Intensity" repeats "intensity" in lines[0]`},
		{"{\"intensity_unit\":\"photon\",\"stark_relations\":{\"4\":\"a\",\n\"4\":\"b\"},\"lines\":[{\"upper_level\":3,\"intensity\":1}]}", 2, "stark_relations.4", `duplicate key "4" in stark_relations`},
	}
	for _, c := range cases {
		_, err := Decode("d.json", []byte(c.in))
		var e *Error
		if !errors.As(err, &e) || e.Line != c.line || e.Field != c.field || !strings.Contains(e.Msg, c.msg) {
			t.Errorf("%q:\n got %v\nwant line %d field %s msg %q", c.in, err, c.line, c.field, c.msg)
		}
	}
}

// lineList is a measurement set with n copies of one line.
func lineList(n int) []byte {
	var b strings.Builder
	b.WriteString(`{"intensity_unit":"photon","lines":[`)
	for i := range n {
		if i > 0 {
			b.WriteString(",")
		}
		b.WriteString(`{"upper_level":3,"intensity":1}`)
	}
	b.WriteString("]}")
	return []byte(b.String())
}

// wideRejected is a 1 MB set of 64×64 arrays of zeros in "lines": shallow
// but with half a million values.
func wideRejected() []byte {
	inner := "[" + strings.TrimSuffix(strings.Repeat("0,", 64), ",") + "]"
	mid := "[" + strings.TrimSuffix(strings.Repeat(inner+",", 64), ",") + "]"
	var b strings.Builder
	b.WriteString(`{"intensity_unit":"photon","lines":[`)
	for i := 0; b.Len()+len(mid)+3 < MaxBytes; i++ {
		if i > 0 {
			b.WriteString(",")
		}
		b.WriteString(mid)
	}
	b.WriteString("]}")
	return []byte(b.String())
}

// TestDecodeTooManyEntries: more values than any measurement set has are
// rejected by the byte scan (before the per-value token walk), and an
// array with more entries than lines can exist names its path.
func TestDecodeTooManyEntries(t *testing.T) {
	for _, in := range [][]byte{lineList(20000), wideRejected()} {
		_, err := Decode("many.json", in)
		var e *Error
		if !errors.As(err, &e) || !strings.Contains(e.Msg, "more than 4096 values") {
			t.Fatalf("got %v", err)
		}
		if a := testing.AllocsPerRun(3, func() { _, _ = Decode("many.json", in) }); a > 20 {
			t.Errorf("rejecting %d bytes took %v allocations", len(in), a)
		}
	}
	_, err := Decode("many.json", lineList(100))
	var e *Error
	if !errors.As(err, &e) || e.Field != "lines" || !strings.Contains(e.Msg, "more than 64 entries") {
		t.Fatalf("got %v", err)
	}
}

// TestCheckJSON: the shared shape check used for other JSON bodies.
func TestCheckJSON(t *testing.T) {
	if err := CheckJSON("body", []byte(`{"a":[1,2],"b":{"c":"{[["}}`), 4); err != nil {
		t.Errorf("valid body: %v", err)
	}
	if err := CheckJSON("body", []byte(`{"a":1,"b":2,"a":3}`), 4); err == nil || !strings.Contains(err.Error(), `duplicate key "a"`) {
		t.Errorf("duplicate: %v", err)
	}
	if err := CheckJSON("body", []byte(strings.Repeat("[", 5)+strings.Repeat("]", 5)), 4); err == nil || !strings.Contains(err.Error(), "nested more than 4") {
		t.Errorf("deep: %v", err)
	}
	if err := CheckJSON("body", []byte(`{"a":`), 4); err != nil {
		t.Errorf("malformed JSON is the decoder's to report, got %v", err)
	}
}

// worstAccepted is the costliest measurement set Decode accepts: every
// Balmer line 3…40 with every field, numbers written with hundreds of
// digits, padded with white space up to MaxBytes.
func worstAccepted() []byte {
	var b strings.Builder
	b.WriteString(`{"intensity_unit":"energy","isotope":"H","instrument_fwhm_nm":0.05,"gas_temperature_K":1000,"gas_temperature_unc_K":50,"pressure_Pa":1e4,"perturber":"Ar","ground_state_density_m3":1e20,"last_resolved_upper_level":12,"lines":[`)
	digits := "1." + strings.Repeat("0", 400) + "1"
	for n := 3; n <= diag.MaxLevel; n++ {
		if n > 3 {
			b.WriteString(",\n")
		}
		fmt.Fprintf(&b, `{"upper_level":%d,"intensity":%se%d,"intensity_unc":%se%d,"fwhm_nm":0.%d,"fwhm_unc_nm":0.01,"instrument_fwhm_nm":0.05,"exclude_from_boltzmann":false}`,
			n, digits, 5-n/10, digits, 3-n/10, n+10)
	}
	b.WriteString("]")
	b.WriteString(strings.Repeat(" ", MaxBytes-b.Len()-1))
	b.WriteString("}")
	return []byte(b.String())
}

// BenchmarkDecodeWorstAccepted is the cost of the worst accepted input
// (target: under 100 ms and 50 MB).
func BenchmarkDecodeWorstAccepted(b *testing.B) {
	data := worstAccepted()
	if _, err := Decode("worst.json", data); err != nil {
		b.Fatal(err)
	}
	b.SetBytes(int64(len(data)))
	b.ReportAllocs()
	for b.Loop() {
		_, _ = Decode("worst.json", data)
	}
}

// BenchmarkDecodeWideRejected is the cost of rejecting 1 MB of shallow
// arrays holding half a million values.
func BenchmarkDecodeWideRejected(b *testing.B) {
	data := wideRejected()
	b.ReportAllocs()
	for b.Loop() {
		_, _ = Decode("wide.json", data)
	}
}

// BenchmarkDecodeDeepRejected is the cost of rejecting 20 000 levels.
func BenchmarkDecodeDeepRejected(b *testing.B) {
	data := deepSet(20000)
	b.ReportAllocs()
	for b.Loop() {
		_, _ = Decode("deep.json", data)
	}
}

// TestDecodeLongNameNotEchoed: a long string where a name belongs is an
// error that does not repeat it.
func TestDecodeLongNameNotEchoed(t *testing.T) {
	long := strings.Repeat("x", 100000)
	_, err := Decode("n.json", []byte(`{"intensity_unit":"photon","perturber":"`+long+`","lines":[{"upper_level":3,"intensity":1}]}`))
	if err == nil || len(err.Error()) > 200 || !strings.Contains(err.Error(), "perturber") {
		t.Errorf("got %.300v", err)
	}
}

// BenchmarkAnalyzeWorstAccepted is decoding plus the whole analysis of the
// worst accepted input (target: under 100 ms and 50 MB).
func BenchmarkAnalyzeWorstAccepted(b *testing.B) {
	data := worstAccepted()
	b.ReportAllocs()
	for b.Loop() {
		m, err := Decode("worst.json", data)
		if err != nil {
			b.Fatal(err)
		}
		if _, err := diag.Analyze(m); err != nil {
			b.Fatal(err)
		}
	}
}
