package calib

import (
	"math"
	"strings"
	"testing"
)

func TestLampsWellFormed(t *testing.T) {
	t.Parallel()
	m := Lamps()
	for _, name := range []string{"hg", "ne", "ar", "he"} {
		lines := m[name]
		if len(lines) == 0 {
			t.Errorf("lamp %q missing", name)
		}
		for i, l := range lines {
			if l.WavelengthAirNM < 380 || l.WavelengthAirNM > 700 {
				t.Errorf("%s: %.4f nm outside 380–700 nm", name, l.WavelengthAirNM)
			}
			if i > 0 && !(l.WavelengthAirNM > lines[i-1].WavelengthAirNM) {
				t.Errorf("%s: not ascending at %.4f nm", name, l.WavelengthAirNM)
			}
			if l.Element == "" || l.Source == "" {
				t.Errorf("%s %.4f: empty element or source", name, l.WavelengthAirNM)
			}
			if !l.Verified && !strings.Contains(l.Source, "from memory, unverified") {
				t.Errorf("%s %.4f: unverified line without the label: %q", name, l.WavelengthAirNM, l.Source)
			}
			if l.Verified && !strings.Contains(l.Source, "NIST") {
				t.Errorf("%s %.4f: verified line does not name its NIST source", name, l.WavelengthAirNM)
			}
		}
	}
	// Copies: modifying the result must not change the built-in lists.
	m["hg"][0].WavelengthAirNM = 1
	if Lamps()["hg"][0].WavelengthAirNM == 1 {
		t.Error("Lamps returned the built-in slice")
	}
}

// TestHgValues pins the Hg I wavelengths to the values confirmed against
// a public copy of NIST ASD line output (observed air wavelengths; see
// lamps.go), to the 1e-4 nm they are given to.
func TestHgValues(t *testing.T) {
	t.Parallel()
	want := []float64{404.6565, 407.7837, 435.8335, 546.0750, 576.9610, 579.0670} // NIST ASD
	got := Lamps()["hg"]
	if len(got) != len(want) {
		t.Fatalf("%d Hg lines, want %d", len(got), len(want))
	}
	for i, w := range want {
		if math.Abs(got[i].WavelengthAirNM-w) > 5e-5 {
			t.Errorf("Hg line %d = %.4f nm, want %.4f nm", i, got[i].WavelengthAirNM, w)
		}
	}
}
