package mset

import (
	"errors"
	"os"
	"path/filepath"
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
