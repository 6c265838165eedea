package server

import (
	"context"
	"math"
	"net/http"
	"net/url"
	"strings"
	"testing"

	"glowlog/store"
)

// lineTableValues is the README's worked example (testdata/example_hbeta.json)
// typed into the form's line table: Hα and Hβ with intensities, σ and FWHM.
func lineTableValues() url.Values {
	v := newRunValues()
	v.Set("instrument_fwhm_nm", "0.05")
	v.Set("pressure_pa", "101325")
	v.Set("perturber", "Ar")
	v["lt_unit"] = []string{"photon"}
	v["lt_upper"] = []string{"3", "4", "", ""}
	v["lt_intensity"] = []string{"1.0e5", "1.5e4", "", ""}
	v["lt_intensity_unc"] = []string{"2.0e3", "4.0e2", "", ""}
	v["lt_fwhm"] = []string{"0.21", "0.55", "", ""}
	v["lt_fwhm_unc"] = []string{"", "", "", ""}
	return v
}

// TestLineTableRows: the typed rows become a measurement set that is
// analysed like the JSON one (T_exc of the README's worked example), and
// the post redirects (303) to the run page.
func TestLineTableRows(t *testing.T) {
	f := newRunsFixture(t)
	_, sess := f.signIn("opal", store.RoleOperator)
	rec := f.postMultipart("/runs", sess, lineTableValues())
	if rec.Code != http.StatusSeeOther {
		t.Fatalf("status %d, want 303\n%s", rec.Code, rec.Body.String())
	}
	m := runLocation.FindStringSubmatch(rec.Header().Get("Location"))
	if m == nil {
		t.Fatalf("redirected to %q", rec.Header().Get("Location"))
	}
	r, err := f.db.GetRun(context.Background(), mustID(t, m[1]))
	if err != nil {
		t.Fatal(err)
	}
	// README worked example (the command's real output for the same two
	// lines): T_exc = 9394.79506794028 K.
	if r.TexcK == nil || math.Abs(*r.TexcK/9394.79506794028-1) > 1e-9 {
		t.Errorf("T_exc = %v, want 9394.795 K (README worked example)", r.TexcK)
	}
	atts, err := f.db.Attachments(context.Background(), r.ID)
	if err != nil || len(atts) != 1 || atts[0].Kind != store.KindLineTable {
		t.Fatalf("attachments %+v (%v), want one line table", atts, err)
	}
	full, err := f.db.AttachmentContent(context.Background(), atts[0].ID)
	if err != nil {
		t.Fatal(err)
	}
	for _, want := range []string{`"intensity_unit": "photon"`, `"upper_level": 4`, `"fwhm_nm": 0.55`, `"intensity_unc": 2000`} {
		if !strings.Contains(string(full.Content), want) {
			t.Errorf("stored line table lacks %s:\n%s", want, full.Content)
		}
	}
}

// TestLineTableAddRemoveWithoutScript: "Add a line" and "×" submit the
// form, which comes back with a row more or less and the typed values,
// storing nothing.
func TestLineTableAddRemoveWithoutScript(t *testing.T) {
	f := newRunsFixture(t)
	_, sess := f.signIn("opal", store.RoleOperator)
	body := f.get("/runs/new", sess).Body.String()
	if n := strings.Count(body, `data-testid="lt-row"`); n != newLineRows {
		t.Errorf("new form has %d line rows, want %d", n, newLineRows)
	}
	v := lineTableValues()
	v.Set("lt_add", "1")
	rec := f.postMultipart("/runs", sess, v)
	if rec.Code != http.StatusOK {
		t.Fatalf("add row: status %d", rec.Code)
	}
	body = rec.Body.String()
	if n := strings.Count(body, `data-testid="lt-row"`); n != 5 {
		t.Errorf("after 'Add a line' the form has %d rows, want 5", n)
	}
	if !strings.Contains(body, `value="1.5e4"`) || !strings.Contains(body, `value="Hβ window, cathode 2"`) {
		t.Error("the form did not keep the typed values")
	}
	v = lineTableValues()
	v.Set("lt_remove", "0")
	body = f.postMultipart("/runs", sess, v).Body.String()
	if n := strings.Count(body, `data-testid="lt-row"`); n != 3 {
		t.Errorf("after removing row 1 the form has %d rows, want 3", n)
	}
	if strings.Contains(body, `value="1.0e5"`) || !strings.Contains(body, `value="1.5e4"`) {
		t.Error("removing row 1 did not remove exactly the Hα row")
	}
	if n := f.count("runs"); n != 0 {
		t.Errorf("%d runs stored by the add/remove buttons, want 0", n)
	}
}

// TestLineTableRowErrors: a bad row is refused with its row and field
// named, and nothing is stored.
func TestLineTableRowErrors(t *testing.T) {
	f := newRunsFixture(t)
	_, sess := f.signIn("opal", store.RoleOperator)
	for _, tc := range []struct {
		name string
		edit func(url.Values)
		want string
	}{
		{"not a number", func(v url.Values) { v["lt_intensity"][1] = "lots" }, `line table, row 2: intensity: &#34;lots&#34; is not a number`},
		{"no line", func(v url.Values) { v["lt_upper"][1] = "" }, "line table, row 2: choose the line"},
		{"twice", func(v url.Values) { v["lt_upper"][1] = "3" }, "line table, row 2: the line n = 3 is already in row 1"},
		{"not Balmer", func(v url.Values) { v["lt_upper"][0] = "2" }, "line table, row 1: &#34;2&#34; is not a Balmer upper level"},
		{"both", func(v url.Values) { v.Set("line_table", `{"intensity_unit":"photon","lines":[]}`) }, "fill in the rows or paste JSON, not both"},
	} {
		v := lineTableValues()
		tc.edit(v)
		rec := f.postMultipart("/runs", sess, v)
		if rec.Code != http.StatusUnprocessableEntity || !strings.Contains(rec.Body.String(), tc.want) {
			t.Errorf("%s: status %d, want 422 with %q", tc.name, rec.Code, tc.want)
		}
	}
	if n := f.count("runs"); n != 0 {
		t.Errorf("%d runs stored, want 0", n)
	}
}

func mustID(t *testing.T, s string) int64 {
	t.Helper()
	var id int64
	for _, c := range s {
		if c < '0' || c > '9' {
			t.Fatalf("%q is not an id", s)
		}
		id = id*10 + int64(c-'0')
	}
	return id
}

// TestLineTableRowsOnUpload: the run page's "Add data" form offers the
// same rows, and typed rows are added to the run as a line table and
// analysed as a new version (303 to it).
func TestLineTableRowsOnUpload(t *testing.T) {
	f := newRunsFixture(t)
	_, owner := f.signIn("opal", store.RoleOperator)
	r := f.createTestRun(owner)
	page := f.get("/runs/"+idStr(r.ID), owner).Body.String()
	up := testidInner(page, "upload-form")
	if n := strings.Count(page, `data-testid="lt-row"`); n != newLineRows || !strings.Contains(up, `name="lt_upper"`) {
		t.Errorf("upload form has %d line rows, want %d", n, newLineRows)
	}
	v := url.Values{"lt_unit": {"photon"}, "lt_upper": {"4", ""}, "lt_intensity": {"", ""}, "lt_intensity_unc": {"", ""},
		"lt_fwhm": {"0.40", ""}, "lt_fwhm_unc": {"0.01", ""}}
	rec := f.postMultipart("/runs/"+idStr(r.ID)+"/attachments", owner, v)
	if rec.Code != http.StatusSeeOther || !strings.HasSuffix(rec.Header().Get("Location"), "?v=2") {
		t.Fatalf("upload rows: %d → %q %s", rec.Code, rec.Header().Get("Location"), rec.Body.String())
	}
	atts, err := f.db.Attachments(context.Background(), r.ID)
	var typed int
	for _, a := range atts {
		if a.Kind == store.KindLineTable && a.Name == "typed-line-table.json" {
			typed++
		}
	}
	if err != nil || len(atts) != 2 || typed != 1 {
		t.Fatalf("attachments after upload: %+v (%v), want the spectrum and one typed line table", atts, err)
	}
}
