package calib

import (
	"bytes"
	"errors"
	"math"
	"strings"
	"testing"
)

func TestReadIrradiance(t *testing.T) {
	t.Parallel()
	irr := loadCertificate(t)
	if len(irr.WavelengthNM) != 46 || irr.WavelengthNM[0] != 350 || irr.WavelengthNM[45] != 800 {
		t.Fatalf("grid %v", irr.WavelengthNM)
	}
	// Row "500, 1.2345e-05"-style check against the generating formula of
	// the (invented) testdata file: 2.2e-8 B_λ(3050 K) (1 − 2e-4 (λ − 500)),
	// written to 7 significant digits.
	for i, l := range irr.WavelengthNM {
		want := 2.2e-8 * PlanckRadianceNM(l, 3050) * (1 - 2.0e-4*(l-500))
		if d := relDiff(irr.WPerM2NM[i], want); d > 1e-6 {
			t.Errorf("E(%g) = %g, want %g", l, irr.WPerM2NM[i], want)
		}
	}
	if irr.Meta["lab"] != "Fenwick Hollow Plasma Lab" || !strings.Contains(irr.Title, "INVENTED") {
		t.Errorf("meta %v title %q", irr.Meta, irr.Title)
	}
}

func TestReadIrradianceForms(t *testing.T) {
	t.Parallel()
	for _, tc := range []struct {
		name, text string
		wantWL     []float64
		wantErr    error // nil: must succeed
		msg        string
	}{
		{"no header", "400 1.0\n500 2.0\n", []float64{400, 500}, nil, ""},
		{"angstrom header", "lambda [A], E\n4000, 1.0\n5000, 2.0\n", []float64{400, 500}, nil, ""},
		{"negative", "# cert\n400, 1.0\n500, -2.0\n", nil, ErrBadTable, "at 500 nm"},
		{"zero", "400, 0\n500, 1\n", nil, ErrBadTable, "at 400 nm"},
	} {
		irr, err := ReadIrradiance(tc.name+".txt", strings.NewReader(tc.text))
		if tc.wantErr == nil {
			if err != nil {
				t.Errorf("%s: %v", tc.name, err)
				continue
			}
			for i, w := range tc.wantWL {
				if math.Abs(irr.WavelengthNM[i]-w) > 1e-12 {
					t.Errorf("%s: λ[%d] = %g, want %g", tc.name, i, irr.WavelengthNM[i], w)
				}
			}
			continue
		}
		if !errors.Is(err, tc.wantErr) || !strings.Contains(err.Error(), tc.name+".txt") || !strings.Contains(err.Error(), tc.msg) {
			t.Errorf("%s: error %v, want %v naming the file and %q", tc.name, err, tc.wantErr, tc.msg)
		}
	}
	if _, err := ReadIrradiance("one.txt", strings.NewReader("400, 1\n")); err == nil {
		t.Error("one-point table accepted")
	}
	if _, err := ReadIrradiance("junk.txt", strings.NewReader("400, abc\n500, 1\n")); err == nil {
		t.Error("non-numeric table accepted")
	}
}

// FuzzReadIrradiance: whatever the input, ReadIrradiance does not panic,
// and a table it accepts is a valid certificate for FromStandardLamp.
func FuzzReadIrradiance(f *testing.F) {
	f.Add([]byte("400 1\n500 2\n"))
	f.Add([]byte("# title: x\nwavelength_nm,E\n350,0.1\n360,0.2\n370,0.3\n"))
	f.Add([]byte("lambda [A];E\n4000;1,5\n5000;2,5\n"))
	f.Add([]byte("500 1\n400 2\n"))
	f.Fuzz(func(t *testing.T, data []byte) {
		irr, err := ReadIrradiance("fuzz.txt", bytes.NewReader(data))
		if err != nil {
			return
		}
		if err := checkTable(irr.WavelengthNM, irr.WPerM2NM, "irradiance"); err != nil {
			t.Fatalf("accepted an invalid table: %v", err)
		}
		lo, hi := irr.WavelengthNM[0], irr.WavelengthNM[len(irr.WavelengthNM)-1]
		if _, err := FromStandardLamp([]float64{lo, hi}, []float64{1, 1}, irr.WavelengthNM, irr.WPerM2NM, 0); err != nil {
			t.Fatalf("FromStandardLamp on an accepted table: %v", err)
		}
	})
}
