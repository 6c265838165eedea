package server

import (
	"math"
	"net/http"
	"strings"
	"testing"

	"glowlog/store"
)

// TestPressureUnits: a pressure typed in mbar or Torr is stored in Pa for
// the analysis and shown as entered (with Pa beside it); the edit form
// gives it back in its unit; an unknown unit is refused.
func TestPressureUnits(t *testing.T) {
	f := newRunsFixture(t)
	_, sess := f.signIn("opal", store.RoleOperator)
	for _, tc := range []struct {
		value, unit string
		pa          float64 // 1 mbar = 100 Pa; 1 Torr = 101325/760 Pa (by definition)
		shown       string
	}{
		{"5", "mbar", 500, "5 mbar (500 Pa)"},
		{"0.5", "Torr", 0.5 * 101325 / 760, "0.5 Torr (66.6612 Pa)"},
		{"300", "Pa", 300, "300 Pa"},
	} {
		v := newRunValues()
		v.Del("pressure_pa")
		v.Set("pressure", tc.value)
		v.Set("pressure_unit", tc.unit)
		rec := f.postMultipart("/runs", sess, v, formFile{"spectra", "hbeta.csv", hbetaSpectrum(t)})
		if rec.Code != http.StatusSeeOther {
			t.Fatalf("%s %s: status %d\n%s", tc.value, tc.unit, rec.Code, rec.Body.String())
		}
		loc := rec.Header().Get("Location")
		r, err := f.db.GetRun(t.Context(), mustID(t, strings.TrimPrefix(loc, "/runs/")))
		if err != nil {
			t.Fatal(err)
		}
		if r.PressurePa == nil || math.Abs(*r.PressurePa/tc.pa-1) > 1e-12 || r.PressureUnit != tc.unit {
			t.Errorf("%s %s: stored %v Pa, unit %q; want %g Pa, %s", tc.value, tc.unit, r.PressurePa, r.PressureUnit, tc.pa, tc.unit)
		}
		page := f.get(loc, sess).Body.String()
		if !strings.Contains(page, "<td>"+tc.shown+"</td>") {
			t.Errorf("run page does not show the pressure as %q", tc.shown)
		}
		edit := f.get(loc+"/edit", sess).Body.String()
		if !strings.Contains(edit, `name="pressure" inputmode="decimal" value="`+tc.value+`"`) ||
			!strings.Contains(edit, `<option value="`+tc.unit+`" selected>`) {
			t.Errorf("edit form does not give back %s %s", tc.value, tc.unit)
		}
	}
	v := newRunValues()
	v.Set("pressure", "5")
	v.Set("pressure_unit", "psi")
	rec := f.postMultipart("/runs", sess, v, formFile{"spectra", "hbeta.csv", hbetaSpectrum(t)})
	if rec.Code != http.StatusUnprocessableEntity || !strings.Contains(rec.Body.String(), "pressure unit: &#34;psi&#34; is not Pa, mbar or Torr") {
		t.Errorf("unit psi: status %d, want 422 naming the unit", rec.Code)
	}
}
