package server

import (
	"bytes"
	"context"
	"encoding/csv"
	"encoding/json"
	"net/http"
	"net/http/httptest"
	"net/url"
	"regexp"
	"strings"
	"testing"
	"time"

	"glowlog/store"
)

var auditRowRe = regexp.MustCompile(`data-testid="audit-row"`)

func auditRows(body string) int { return len(auditRowRe.FindAllString(body, -1)) }

// auditEntries reads the log through the store with a filter.
func auditEntries(t *testing.T, db *store.DB, f store.AuditFilter) []store.AuditEntry {
	t.Helper()
	es, err := db.AuditLog(context.Background(), f)
	if err != nil {
		t.Fatal(err)
	}
	return es
}

func TestAuditTrailWeb(t *testing.T) {
	f := newRunsFixture(t)
	opal, owner := f.signIn("opal", store.RoleOperator)
	_, otto := f.signIn("otto", store.RoleOperator)
	vera, viewer := f.signIn("vera", store.RoleViewer)
	_, reviewer := f.signIn("rex", store.RoleReviewer)
	_, admin := f.signIn("ada", store.RoleAdmin)

	r := f.createTestRun(owner)
	path := "/runs/" + idStr(r.ID)
	v := newRunValues()
	v.Del("new_chamber")
	v.Set("chamber_id", idStr(*r.ChamberID))
	v.Set("title", "renamed run")
	if rec := f.postForm(path, owner, v); rec.Code != http.StatusSeeOther {
		t.Fatalf("update: %d %s", rec.Code, rec.Body.String())
	}
	if rec := f.postForm(path+"/comments", owner, url.Values{"body": {"window looks clean"}}); rec.Code != http.StatusSeeOther {
		t.Fatalf("comment: %d %s", rec.Code, rec.Body.String())
	}
	if rec := f.postForm(path+"/submit", owner, url.Values{}); rec.Code != http.StatusSeeOther {
		t.Fatalf("submit: %d %s", rec.Code, rec.Body.String())
	}
	other := f.createTestRun(otto)

	// The store's view: every change of the run by opal, through the web.
	kinds := map[string]bool{}
	for _, e := range auditEntries(t, f.db, store.AuditFilter{RunID: r.ID}) {
		kinds[e.Kind] = true
		if e.ActorID == nil || *e.ActorID != opal.ID || e.ActorName != "opal" || e.Via != store.ViaWeb {
			t.Errorf("%s/%s by %v %q via %q, want opal via web", e.Kind, e.Action, e.ActorID, e.ActorName, e.Via)
		}
	}
	for _, k := range []string{store.AuditRun, store.AuditRunTag, store.AuditFile, store.AuditAnalysis, store.AuditComment, store.AuditReview} {
		if !kinds[k] {
			t.Errorf("run %d has no %s entries (%v)", r.ID, k, kinds)
		}
	}

	// The run page shows the history, before → after.
	rec := f.get(path, viewer)
	body := rec.Body.String()
	if rec.Code != http.StatusOK || !strings.Contains(body, `data-testid="history"`) {
		t.Fatalf("run page: %d, history section missing", rec.Code)
	}
	for _, want := range []string{"Hβ window, cathode 2 → renamed run", "window looks clean", "hbeta.csv", "draft → submitted", "opal"} {
		if !strings.Contains(body, want) {
			t.Errorf("run page history lacks %q", want)
		}
	}
	if strings.Contains(body, `data-testid="history-all"`) {
		t.Errorf("a viewer gets the link to the admin audit page")
	}
	if body := f.get(path, admin).Body.String(); !strings.Contains(body, `href="/admin/audit?run=`+idStr(r.ID)+`"`) {
		t.Errorf("an admin gets no link to the run's audit entries")
	}
	if strings.Contains(body, `data-testid="history-more"`) {
		t.Errorf("a short history says entries are left out")
	}
	defer func(n int) { runHistoryLimit = n }(runHistoryLimit)
	runHistoryLimit = 3
	if body := f.get(path, viewer).Body.String(); auditRows(body) != 3 || !strings.Contains(body, `data-testid="history-more"`) {
		t.Errorf("a long history: %d rows shown, want 3 and a note", auditRows(body))
	}
	runHistoryLimit = 100

	// Only admins see the audit page and its export.
	for _, who := range []*http.Cookie{viewer, owner, reviewer} {
		for _, p := range []string{"/admin/audit", "/admin/audit.csv"} {
			if rec := f.get(p, who); rec.Code != http.StatusForbidden {
				t.Errorf("GET %s by a non-admin: %d, want 403", p, rec.Code)
			}
		}
	}
	if rec := f.get("/admin/audit.csv", nil); rec.Code != http.StatusSeeOther || !strings.HasPrefix(rec.Header().Get("Location"), "/login") {
		t.Errorf("export without signing in: %d %q", rec.Code, rec.Header().Get("Location"))
	}

	// Filters.
	page := func(q string) string {
		t.Helper()
		rec := f.get("/admin/audit?"+q, admin)
		if rec.Code != http.StatusOK {
			t.Fatalf("audit page ?%s: %d %s", q, rec.Code, rec.Body.String())
		}
		return rec.Body.String()
	}
	all := page("")
	byRun := page("run=" + idStr(r.ID))
	if n, m := auditRows(byRun), len(auditEntries(t, f.db, store.AuditFilter{RunID: r.ID})); n != m || n == 0 || n >= auditRows(all) {
		t.Errorf("run filter shows %d rows; the run has %d entries, the log %d", n, m, auditRows(all))
	}
	if strings.Contains(byRun, "run #"+idStr(other.ID)+"<") {
		t.Errorf("run filter shows the other run")
	}
	byOtto := page("actor=OTTO")
	if n, m := auditRows(byOtto), len(auditEntries(t, f.db, store.AuditFilter{Actor: "otto"})); n != m || n == 0 || strings.Contains(byOtto, ">opal") {
		t.Errorf("actor filter: %d rows, want %d, none by opal", n, m)
	}
	if n := auditRows(page("kind=comment")); n != 1 {
		t.Errorf("kind=comment: %d rows, want 1", n)
	}
	if n := auditRows(page("kind=run&action=update&run=" + idStr(r.ID))); n < 2 {
		t.Errorf("run updates of run %d: %d rows, want the rename and the submission at least", r.ID, n)
	}
	today := time.Now().UTC().Format("2006-01-02")
	tomorrow := time.Now().UTC().AddDate(0, 0, 1).Format("2006-01-02")
	yesterday := time.Now().UTC().AddDate(0, 0, -1).Format("2006-01-02")
	if n := auditRows(page("from=" + today + "&to=" + today)); n != auditRows(all) {
		t.Errorf("today's entries: %d, want all %d", n, auditRows(all))
	}
	for _, q := range []string{"from=" + tomorrow, "to=" + yesterday} {
		if body := page(q); auditRows(body) != 0 || !strings.Contains(body, `data-testid="audit-empty"`) {
			t.Errorf("?%s: %d rows, want none", q, auditRows(body))
		}
	}
	for q, msg := range map[string]string{
		"run=abc":                          "run: give a run number",
		"kind=bogus":                       "record: unknown kind",
		"action=erase":                     "action: unknown action",
		"from=2026-13-01":                  "from: give a date",
		"from=2026-03-02&to=2026-03-01":    "is after to",
		"before=-3":                        "before: give an entry number",
		"actor=" + strings.Repeat("x", 65): "at most 64 characters",
	} {
		rec := f.get("/admin/audit?"+q, admin)
		if rec.Code != http.StatusBadRequest || !strings.Contains(rec.Body.String(), msg) {
			t.Errorf("?%s: %d, want 400 with %q", q, rec.Code, msg)
		}
	}

	// CSV export with the same filters.
	rec = f.get("/admin/audit.csv?actor=opal&kind=run", admin)
	if rec.Code != http.StatusOK || !strings.HasPrefix(rec.Header().Get("Content-Type"), "text/csv") {
		t.Fatalf("export: %d %q", rec.Code, rec.Header().Get("Content-Type"))
	}
	recs, err := csv.NewReader(bytes.NewReader(rec.Body.Bytes())).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	if strings.Join(recs[0], ",") != strings.Join(auditCSVHeader, ",") {
		t.Errorf("CSV header %v", recs[0])
	}
	want := auditEntries(t, f.db, store.AuditFilter{Actor: "opal", Kind: store.AuditRun})
	if len(recs)-1 != len(want) || len(want) < 3 {
		t.Fatalf("CSV has %d entries, want %d (≥ 3)", len(recs)-1, len(want))
	}
	for i, row := range recs[1:] {
		if row[3] != "opal" || row[4] != "web" || row[5] != "run" || row[7] != idStr(r.ID) {
			t.Errorf("CSV row %d: %v", i, row)
		}
		if _, err := time.Parse(time.RFC3339, row[1]); err != nil {
			t.Errorf("CSV time %q: %v", row[1], err)
		}
		for _, js := range row[9:11] {
			if js != "" && !json.Valid([]byte(js)) {
				t.Errorf("CSV before/after is not JSON: %q", js)
			}
		}
	}
	if !strings.Contains(rec.Body.String(), `""title"":""renamed run""`) {
		t.Errorf("CSV lacks the rename's after value")
	}

	// Account changes by the admin, through the pages.
	if rec := f.postForm("/admin/users/"+idStr(vera.ID)+"/role", admin, url.Values{"role": {"operator"}}); rec.Code != http.StatusSeeOther {
		t.Fatalf("role change: %d", rec.Code)
	}
	es := auditEntries(t, f.db, store.AuditFilter{Kind: store.AuditUser, Action: "update"})
	if len(es) == 0 || es[0].ActorName != "ada" || *es[0].RowID != vera.ID || !strings.Contains(es[0].Before, `"viewer"`) || !strings.Contains(es[0].After, `"operator"`) {
		t.Errorf("role change entry: %+v", es)
	}
}

func TestAuditSignInAndAPI(t *testing.T) {
	f := newRunsFixture(t)
	hash, err := HashPassword("correct horse battery")
	if err != nil {
		t.Fatal(err)
	}
	u, err := f.db.CreateUser(context.Background(), "lena", store.RoleOperator, hash)
	if err != nil {
		t.Fatal(err)
	}
	login := func(pw string) *httptest.ResponseRecorder {
		return f.postForm("/login", nil, url.Values{"name": {"lena"}, "password": {pw}})
	}
	if rec := login("wrong password 12"); rec.Code != http.StatusUnauthorized {
		t.Fatalf("bad sign-in: %d", rec.Code)
	}
	es := auditEntries(t, f.db, store.AuditFilter{Action: "sign_in_failed"})
	if len(es) != 1 || !strings.Contains(es[0].After, `"name":"lena"`) || es[0].Via != store.ViaWeb {
		t.Fatalf("failed sign-in entries: %+v", es)
	}
	rec := login("correct horse battery")
	if rec.Code != http.StatusSeeOther {
		t.Fatalf("sign-in: %d", rec.Code)
	}
	es = auditEntries(t, f.db, store.AuditFilter{Action: "sign_in"})
	if len(es) != 1 || es[0].ActorID == nil || *es[0].ActorID != u.ID || es[0].ActorName != "lena" {
		t.Fatalf("sign-in entries: %+v", es)
	}
	var sess *http.Cookie
	for _, ck := range rec.Result().Cookies() {
		if ck.Name == sessionCookie {
			sess = ck
		}
	}
	// a token made and used through the API
	if rec := f.postForm("/account/tokens", sess, url.Values{"name": {"script"}}); rec.Code >= 400 {
		t.Fatalf("token: %d", rec.Code)
	}
	es = auditEntries(t, f.db, store.AuditFilter{Kind: store.AuditToken})
	if len(es) != 1 || es[0].ActorName != "lena" || !strings.Contains(es[0].After, `"name":"script"`) {
		t.Fatalf("token entries: %+v", es)
	}
	tok, h := NewToken()
	if _, err := f.db.CreateToken(context.Background(), u.ID, "api test", h); err != nil {
		t.Fatal(err)
	}
	req := httptest.NewRequest(http.MethodPost, "/api/v1/runs", strings.NewReader(`{"title":"from a script","started_at":"2026-03-04T14:05:00Z","source_type":"dc_glow"}`))
	req.Header.Set("Authorization", "Bearer "+tok)
	req.Header.Set("Content-Type", "application/json")
	rec = f.do(req, nil)
	if rec.Code != http.StatusCreated {
		t.Fatalf("API create: %d %s", rec.Code, rec.Body.String())
	}
	es = auditEntries(t, f.db, store.AuditFilter{Kind: store.AuditRun, Action: "insert"})
	if len(es) != 1 || es[0].ActorName != "lena" || es[0].Via != store.ViaAPI {
		t.Fatalf("API run entry: %+v", es)
	}
	if rec := f.postForm("/logout", sess, url.Values{}); rec.Code != http.StatusSeeOther {
		t.Fatalf("logout: %d", rec.Code)
	}
	es = auditEntries(t, f.db, store.AuditFilter{Action: "session_ended"})
	if len(es) != 1 || es[0].ActorName != "lena" {
		t.Fatalf("sign-out entries: %+v", es)
	}
	// nothing secret in the log
	var all strings.Builder
	f.db.EachAudit(context.Background(), store.AuditFilter{}, func(e store.AuditEntry) error {
		all.WriteString(e.Before + e.After)
		return nil
	})
	for _, s := range []string{"correct horse", "wrong password", hash, tok} {
		if strings.Contains(all.String(), s) {
			t.Errorf("the audit log holds %q", s)
		}
	}
}

// Writes outside web requests name their source: a bulk reanalysis job
// its starter, the command line "cli".
func TestAuditJobActor(t *testing.T) {
	f := newReviewFixture(t)
	ctx, cancel := context.WithCancel(context.Background())
	defer cancel()
	id := analysedRun(t, f.s, f.op, "Hβ run", time.Date(2026, 5, 1, 8, 0, 0, 0, time.UTC), nil)
	params, _ := json.Marshal(reanalyzeParams{RunIDs: []int64{id}, Reason: "new slit function", UserID: f.rev.ID})
	jid, err := f.s.DB.CreateJob(ctx, jobKindReanalyze, string(params), 1, f.rev.ID)
	if err != nil {
		t.Fatal(err)
	}
	f.s.Jobs.Start(ctx)
	deadline := time.Now().Add(20 * time.Second)
	for {
		job, err := f.s.DB.Job(ctx, jid)
		if err != nil {
			t.Fatal(err)
		}
		if job.Finished() {
			if job.State != store.JobDone {
				t.Fatalf("job %+v", job)
			}
			break
		}
		if time.Now().After(deadline) {
			t.Fatal("job did not finish")
		}
		time.Sleep(20 * time.Millisecond)
	}
	cancel()
	f.s.Jobs.Wait()
	es := auditEntries(t, f.s.DB, store.AuditFilter{RunID: id, Kind: store.AuditAnalysis})
	if len(es) != 2 || !strings.Contains(es[0].After, "new slit function") {
		t.Fatalf("analysis entries of run %d: %+v", id, es)
	}
	if e := es[0]; e.ActorID == nil || *e.ActorID != f.rev.ID || e.ActorName != f.rev.Name || e.Via != store.ViaJob {
		t.Errorf("job's analysis version logged by %v %q via %q, want %s via job", e.ActorID, e.ActorName, e.Via, f.rev.Name)
	}

}
