package server

import (
	"context"
	"net/http"
	"net/http/httptest"
	"strings"
	"testing"
	"time"

	"glowlog/store"
)

// plannerServer returns a server on a fresh SQLite file and a session
// cookie of a signed-in viewer (session created directly: no password
// hashing, to keep the test fast).
func plannerServer(t *testing.T) (*Server, *http.Cookie) {
	t.Helper()
	ctx := context.Background()
	db := testDB(t)
	u, err := db.CreateUser(ctx, "ada-viewer", store.RoleViewer, "$argon2id$v=19$m=19456,t=2,p=1$x$y")
	if err != nil {
		t.Fatal(err)
	}
	tok, h := NewToken()
	if err := db.CreateSession(ctx, h, u.ID, time.Hour); err != nil {
		t.Fatal(err)
	}
	return New(db, Options{}), &http.Cookie{Name: sessionCookie, Value: tok}
}

func plannerGet(t *testing.T, s *Server, ck *http.Cookie, url string) (int, string) {
	t.Helper()
	req := httptest.NewRequest(http.MethodGet, url, nil)
	if ck != nil {
		req.AddCookie(ck)
	}
	rec := httptest.NewRecorder()
	s.ServeHTTP(rec, req)
	return rec.Code, rec.Body.String()
}

// testidText returns the text of the first element with data-testid id
// (up to its first closing tag), or "".
func testidText(body, id string) string {
	i := strings.Index(body, `data-testid="`+id+`"`)
	if i < 0 {
		return ""
	}
	rest := body[i:]
	j := strings.Index(rest, ">")
	k := strings.Index(rest, "</")
	if j < 0 || k < j {
		return ""
	}
	return rest[j+1 : k]
}

func TestPlannerDefaults(t *testing.T) {
	s, ck := plannerServer(t)
	code, body := plannerGet(t, s, ck, "/planner")
	if code != http.StatusOK {
		t.Fatalf("GET /planner = %d\n%s", code, body)
	}
	// physics.md §8 (computed): 1200 l/mm, m = 1, Hα Littrow θ = 23.189°,
	// shown to two decimals; dλ/dx = 1.532 nm/mm with f = 0.5 m.
	if got := testidText(body, "centre-angle"); !strings.Contains(got, "23.19°") {
		t.Errorf("centre angle %q, want θ = 23.19°", got)
	}
	if got := testidText(body, "centre-dispersion"); !strings.Contains(got, "1.532 nm/mm") {
		t.Errorf("centre dispersion %q, want 1.532 nm/mm", got)
	}
	ha := body[strings.Index(body, `data-testid="line-Hα"`):]
	ha = ha[:strings.Index(ha, "</tr>")]
	for _, want := range []string{"656.279", "23.19°", "1.532", "60000", "0.0109"} {
		if !strings.Contains(ha, want) {
			t.Errorf("Hα row lacks %q:\n%s", want, ha)
		}
	}
	for _, id := range []string{"line-Hβ", "line-Hγ", "line-Hδ", "line-Hε", "coverage", "stark-verdict", "planner-filter-advice"} {
		if !strings.Contains(body, `data-testid="`+id+`"`) {
			t.Errorf("page lacks %s", id)
		}
	}
	// Default Stark FWHM 0.1 nm vs the 20 µm slit-limited 0.0306 nm.
	if v := testidText(body, "stark-verdict"); !strings.HasPrefix(v, "Measurable.") {
		t.Errorf("Stark verdict %q", v)
	}
}

func TestPlannerOverlapTable(t *testing.T) {
	s, ck := plannerServer(t)
	code, body := plannerGet(t, s, ck, "/planner")
	if code != http.StatusOK {
		t.Fatalf("GET /planner = %d", code)
	}
	// physics.md §8 (computed, exact doubling): Cu I 327.396 nm in second
	// order appears at 654.792 nm, near Hα.
	var found bool
	for _, row := range strings.Split(body, `data-testid="overlap-row"`)[1:] {
		row = row[:strings.Index(row, "</tr>")]
		if strings.Contains(row, "Cu I") && strings.Contains(row, "327.396") {
			found = true
			for _, want := range []string{"654.79", "Hα", "from memory"} {
				if !strings.Contains(row, want) {
					t.Errorf("Cu I row lacks %q: %s", want, row)
				}
			}
		}
	}
	if !found {
		t.Errorf("overlap table lacks Cu I 327.396 nm")
	}
	if !strings.Contains(testidText(body, "planner-filter-advice"), "400 nm") {
		t.Errorf("filter advice lacks the 400 nm cut-on")
	}
}

func TestPlannerImpossibleInput(t *testing.T) {
	s, ck := plannerServer(t)
	for _, c := range []struct {
		name, query, want string
	}{
		// 2400 l/mm: m λ/(2d) = 0.79 for Hα, but 1.08 for 900 nm.
		{"no Littrow order", "?grooves=2400&centre=900", "No diffraction order 1"},
		// 1200 l/mm, α = −60°: sin β = m λ/d − sin α = 0.7875 + 0.866 > 1.
		{"no order at angle", "?incidence=-60", "sin β would be"},
		{"zero grooves", "?grooves=0", "Groove density"},
		{"negative slit", "?slit=-10", "Slit width"},
		{"order zero", "?order=0", "Diffraction order"},
		{"not a number", "?focal=half", "Focal length"},
		{"bad angle", "?incidence=95", "Incidence angle"},
	} {
		code, body := plannerGet(t, s, ck, "/planner"+c.query)
		if code != http.StatusUnprocessableEntity {
			t.Errorf("%s: status %d, want 422", c.name, code)
			continue
		}
		if msg := testidText(body, "planner-error"); !strings.Contains(msg, c.want) {
			t.Errorf("%s: message %q lacks %q", c.name, msg, c.want)
		}
		if !strings.Contains(body, `data-testid="planner-form"`) {
			t.Errorf("%s: the form is not shown again", c.name)
		}
	}
}

func TestPlannerNeedsSignIn(t *testing.T) {
	s, _ := plannerServer(t)
	if code, _ := plannerGet(t, s, nil, "/planner"); code != http.StatusSeeOther {
		t.Errorf("GET /planner without sign-in = %d, want 303 to the sign-in page", code)
	}
}

func TestSafetyPublic(t *testing.T) {
	s, _ := plannerServer(t)
	code, body := plannerGet(t, s, nil, "/safety")
	if code != http.StatusOK {
		t.Fatalf("GET /safety without sign-in = %d", code)
	}
	limits := body[strings.Index(body, `data-testid="safety-h2-limits"`):]
	limits = limits[:strings.Index(limits, "</p>")]
	if !strings.Contains(limits, "4 %") || !strings.Contains(limits, "75 %") {
		t.Errorf("hydrogen limits %q lack 4 %% and 75 %%", limits)
	}
	prec := body[strings.Index(body, `data-testid="safety-precedence"`):]
	if !strings.Contains(prec[:400], "take precedence over anything on this page") {
		t.Errorf("precedence statement missing near the top")
	}
	for _, want := range []string{"ICNIRP", "IEEE C95.1", "IEC 62471", "ISO/TR 15916", "NFPA 2", "NFPA 55", "grounding", "one-hand", "25 %"} {
		if !strings.Contains(body, want) {
			t.Errorf("safety page lacks %q", want)
		}
	}
}

// TestPlannerUndersampled: the default set-up (20 µm slit on 13.5 µm
// pixels: instrument FWHM 1.5 pixels) is undersampled and says so; a
// 50 µm slit (3.7 pixels) is not.
func TestPlannerUndersampled(t *testing.T) {
	s, ck := plannerServer(t)
	_, body := plannerGet(t, s, ck, "/planner")
	if w := testidText(body, "sampling-warning"); !strings.Contains(w, "Undersampled") || !strings.Contains(w, "1.5 pixels") {
		t.Errorf("default set-up: sampling warning %q, want an undersampling warning at 1.5 pixels", w)
	}
	_, body = plannerGet(t, s, ck, "/planner?slit=50")
	if strings.Contains(body, `data-testid="sampling-warning"`) {
		t.Errorf("50 µm slit: unexpected sampling warning %q", testidText(body, "sampling-warning"))
	}
}
