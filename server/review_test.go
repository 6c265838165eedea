package server

import (
	"context"
	"io"
	"log/slog"
	"net/http"
	"net/url"
	"os"
	"strings"
	"testing"
	"time"

	"glowlog/store"
)

// reviewFixture is a server with an operator, two reviewers and a viewer.
type reviewFixture struct {
	s                  *Server
	op, rev, rev2, vie store.User
}

func newReviewFixture(t *testing.T) *reviewFixture {
	t.Helper()
	ctx := context.Background()
	db := testDB(t)
	f := &reviewFixture{s: New(db, Options{Log: slog.New(slog.NewTextHandler(io.Discard, nil))})}
	for _, u := range []struct {
		p    *store.User
		name string
		role store.Role
	}{{&f.op, "ada.quill", store.RoleOperator}, {&f.rev, "bea.marsh", store.RoleReviewer},
		{&f.rev2, "cy.holt", store.RoleReviewer}, {&f.vie, "dee.fenn", store.RoleViewer}} {
		var err error
		if *u.p, err = db.CreateUser(ctx, u.name, u.role, "x"); err != nil {
			t.Fatal(err)
		}
	}
	return f
}

// client returns a signed-in client that already holds a CSRF token.
func (f *reviewFixture) client(t *testing.T, u store.User) *htmlClient {
	t.Helper()
	h := newHTMLClient(t, f.s, u)
	if code, _ := h.req(http.MethodGet, "/trends", nil); code != http.StatusOK {
		t.Fatalf("GET /trends as %s: %d", u.Name, code)
	}
	return h
}

// analysedRun creates a run of operator op with the Hβ test spectrum
// attached and analysed (instrument FWHM 0.05 nm, gas temperature 1200 K),
// all in one transaction as the upload form does.
func analysedRun(t *testing.T, s *Server, op store.User, title string, started time.Time, chamber *int64) int64 {
	t.Helper()
	ctx := context.Background()
	content, err := os.ReadFile("../testdata/spectra/scipy_hbeta_window_snr100.csv")
	if err != nil {
		t.Fatal(err)
	}
	tx, err := s.DB.Begin(ctx)
	if err != nil {
		t.Fatal(err)
	}
	defer tx.Rollback()
	id, err := s.DB.CreateRunTx(ctx, tx, op.ID, store.RunInput{Title: title, StartedAt: started, SourceType: "dc_glow", ChamberID: chamber,
		PressurePa: f64p(120)})
	if err != nil {
		t.Fatal(err)
	}
	const name = "scipy_hbeta_window_snr100.csv"
	aid, err := s.DB.AddAttachmentTx(ctx, tx, id, store.KindSpectrum, name, content)
	if err != nil {
		t.Fatal(err)
	}
	atts := []store.Attachment{{ID: aid, RunID: id, Kind: store.KindSpectrum, Name: name, Seq: 1, Content: content}}
	uid := op.ID
	if _, _, err := s.ReanalyzeRunTx(ctx, tx, id, atts, AnalysisSettings{InstrumentFWHMNM: 0.05, GasTemperatureK: 1200}, &uid, "first analysis"); err != nil {
		t.Fatal(err)
	}
	if err := tx.Commit(); err != nil {
		t.Fatal(err)
	}
	return id
}

func f64p(v float64) *float64 { return &v }

func TestReviewWorkflow(t *testing.T) {
	f := newReviewFixture(t)
	ctx := context.Background()
	run, err := f.s.DB.CreateRun(ctx, f.op.ID, store.RunInput{Title: "H₂/Ar glow", StartedAt: time.Now(), SourceType: "dc_glow"})
	if err != nil {
		t.Fatal(err)
	}
	own, _ := f.s.DB.CreateRun(ctx, f.rev.ID, store.RunInput{Title: "reviewer's own run", StartedAt: time.Now(), SourceType: "microwave"})
	op, rev, rev2, vie := f.client(t, f.op), f.client(t, f.rev), f.client(t, f.rev2), f.client(t, f.vie)
	path := func(id int64, action string) string { return "/runs/" + itoa64(id) + "/" + action }
	post := func(h *htmlClient, p string, form url.Values, want int, contains string) {
		t.Helper()
		if form == nil {
			form = url.Values{}
		}
		code, body := h.req(http.MethodPost, p, form)
		if code != want || !strings.Contains(body, contains) {
			t.Fatalf("POST %s: %d, want %d with %q; body %.300s", p, code, want, contains, body)
		}
	}
	post(rev, path(run, "signoff"), nil, http.StatusConflict, "only runs that are “Submitted”")
	post(rev2, path(run, "submit"), nil, http.StatusForbidden, "only the run&#39;s operator or an admin")
	post(vie, path(run, "comments"), url.Values{"body": {"hi"}}, http.StatusForbidden, "operator role")
	post(op, path(run, "submit"), url.Values{"note": {"ready"}}, http.StatusSeeOther, "")
	post(op, path(run, "submit"), nil, http.StatusConflict, "is “Submitted”")
	post(op, path(run, "signoff"), nil, http.StatusForbidden, "reviewer role")
	post(rev, path(run, "return"), url.Values{"note": {""}}, http.StatusBadRequest, "a note is required")
	post(rev, path(run, "return"), url.Values{"note": {"dark frame missing"}}, http.StatusSeeOther, "")
	post(op, path(run, "comments"), url.Values{"body": {"dark frame added"}}, http.StatusSeeOther, "")
	post(op, path(run, "comments"), url.Values{"body": {"  "}}, http.StatusBadRequest, "comment is empty")
	post(op, path(run, "submit"), nil, http.StatusSeeOther, "")

	// The queue lists the run with its submitter; the reviewer's own run
	// can be submitted but not signed off by them.
	post(rev, path(own, "submit"), nil, http.StatusSeeOther, "")
	post(rev, path(own, "signoff"), nil, http.StatusForbidden, "cannot sign it off yourself")
	code, body := rev.req(http.MethodGet, "/review", nil)
	if code != http.StatusOK || strings.Count(body, `data-testid="queue-row"`) != 2 || !strings.Contains(body, "H₂/Ar glow") {
		t.Fatalf("GET /review: %d %.500s", code, body)
	}
	if i, j := strings.Index(body, "H₂/Ar glow"), strings.Index(body, "reviewer&#39;s own run"); i < 0 || j < 0 || i > j {
		t.Errorf("queue not oldest first (%d, %d)", i, j)
	}
	if code, _ := op.req(http.MethodGet, "/review", nil); code != http.StatusForbidden {
		t.Errorf("operator GET /review: %d, want 403", code)
	}
	post(rev, path(run, "signoff"), url.Values{"next": {"/review"}}, http.StatusSeeOther, "")
	_, body = rev.req(http.MethodGet, "/review", nil)
	if !strings.Contains(body, `data-testid="recent"`) || !strings.Contains(body, "bea.marsh") {
		t.Errorf("recently signed off missing: %.500s", body)
	}

	r, _ := f.s.DB.GetRun(ctx, run)
	evs, _ := f.s.DB.StatusEvents(ctx, run)
	if r.Status != store.StatusSignedOff || r.SignedOffBy == nil || *r.SignedOffBy != f.rev.ID || len(evs) != 4 {
		t.Errorf("run %s signed by %v, %d events", r.Status, r.SignedOffBy, len(evs))
	}
	cs, _ := f.s.DB.Comments(ctx, run)
	if len(cs) != 1 || cs[0].AuthorName != "ada.quill" {
		t.Errorf("comments %+v", cs)
	}
}

func TestRunReviewPanel(t *testing.T) {
	f := newReviewFixture(t)
	ctx := context.Background()
	run, _ := f.s.DB.CreateRun(ctx, f.rev.ID, store.RunInput{Title: "jet", StartedAt: time.Now(), SourceType: "plasma_jet"})
	if _, err := f.s.DB.Review(ctx, run, f.rev, store.ActionSubmit, "please check"); err != nil {
		t.Fatal(err)
	}
	r, _ := f.s.DB.GetRun(ctx, run)
	c := f.s.Echo.NewContext(httptestRequest(), nil)
	c.Set("user", &f.rev)
	c.Set("csrf", "tok")
	p, err := f.s.runReviewPanel(ctx, c, r)
	if err != nil {
		t.Fatal(err)
	}
	if p.CanSignOff || !p.CanReturn || p.CanSubmit || !strings.Contains(p.SignOffBlocked, "You operated this run") ||
		len(p.Events) != 1 || p.Events[0].To != "Submitted" || p.CSRF != "tok" {
		t.Errorf("own run panel: %+v", p)
	}
	c.Set("user", &f.rev2)
	p, _ = f.s.runReviewPanel(ctx, c, r)
	if !p.CanSignOff || p.SignOffBlocked != "" {
		t.Errorf("other reviewer panel: %+v", p)
	}
}

func httptestRequest() *http.Request {
	r, _ := http.NewRequest(http.MethodGet, "/runs/1", nil)
	return r
}
