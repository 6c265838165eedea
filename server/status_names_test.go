package server

import (
	"context"
	"encoding/csv"
	"encoding/json"
	"net/http"
	"net/http/httptest"
	"regexp"
	"strconv"
	"strings"
	"testing"

	"glowlog/store"
)

// sameName folds a state name as a page, a CSV file or the API writes it
// ("Signed off", "signed_off") to one form.
func sameName(s string) string {
	return strings.ReplaceAll(strings.ToLower(strings.TrimSpace(s)), "_", " ")
}

// TestOneNamePerState: every review state has one name, the same on the
// pages, in the CSV export and in the API; a page shows the key in words.
func TestOneNamePerState(t *testing.T) {
	for _, st := range store.Statuses {
		if sameName(st.Label) != sameName(st.Key) {
			t.Errorf("state %q is shown as %q: two names for one state", st.Key, st.Label)
		}
		if !store.ValidStatus(st.Key) {
			t.Errorf("ValidStatus(%q) = false", st.Key)
		}
	}
	if store.ValidStatus("approved") || store.ValidStatus("") {
		t.Error("ValidStatus accepts a name that is not a state")
	}

	f := newRunsFixture(t)
	op, sess := f.signIn("opal", store.RoleOperator)
	ids := seedListRuns(t, f, op.ID)
	// One run in each state (the seed has draft, submitted, signed_off).
	if _, err := f.db.SQL().Exec(`UPDATE runs SET status = 'returned' WHERE id = ?`, ids[3]); err != nil {
		t.Fatal(err)
	}
	want := map[string]string{} // run id → state key
	for i, k := range []string{"draft", "submitted", "signed_off", "returned", "draft"} {
		want[idStr(ids[i])] = k
	}

	// Run log page.
	body := f.get("/runs", sess).Body.String()
	rows := regexp.MustCompile(`(?s)data-run-id="(\d+)".*?data-testid="run-status">([^<]*)<`).FindAllStringSubmatch(body, -1)
	if len(rows) != len(ids) {
		t.Fatalf("run log shows %d status badges, want %d", len(rows), len(ids))
	}
	for _, r := range rows {
		if sameName(r[2]) != sameName(want[r[1]]) {
			t.Errorf("run log: run %s shows %q, its state is %q", r[1], r[2], want[r[1]])
		}
	}
	// The status filter offers the same names.
	for _, st := range store.Statuses {
		if !strings.Contains(body, `<option value="`+st.Key+`">`+st.Label+`</option>`) {
			t.Errorf("status filter lacks the option %s = %s", st.Key, st.Label)
		}
	}
	// Run page and review panel.
	for id, k := range want {
		page := f.get("/runs/"+id, sess).Body.String()
		for _, tid := range []string{"run-status", "review-status"} {
			if got := testidInner(page, tid); sameName(got) != sameName(k) {
				t.Errorf("run page %s: %s = %q, its state is %q", id, tid, got, k)
			}
		}
	}

	// CSV export.
	rec := f.get("/runs.csv", sess)
	recs, err := csv.NewReader(rec.Body).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	col := -1
	for i, h := range recs[0] {
		if h == "status" {
			col = i
		}
	}
	if col < 0 {
		t.Fatal("CSV has no status column")
	}
	for _, r := range recs[1:] {
		if r[col] != want[r[0]] {
			t.Errorf("CSV: run %s has status %q, want %q", r[0], r[col], want[r[0]])
		}
	}

	// API.
	tok, h := NewToken()
	if _, err := f.db.CreateToken(context.Background(), op.ID, "t", h); err != nil {
		t.Fatal(err)
	}
	req := httptest.NewRequest(http.MethodGet, "/api/v1/runs?limit=100", nil)
	req.Header.Set("Authorization", "Bearer "+tok)
	arec := httptest.NewRecorder()
	f.s.ServeHTTP(arec, req)
	var out struct {
		Items []struct {
			ID     int64  `json:"id"`
			Status string `json:"status"`
		} `json:"items"`
	}
	if err := json.Unmarshal(arec.Body.Bytes(), &out); err != nil || len(out.Items) != len(ids) {
		t.Fatalf("API list: %v, %d items\n%s", err, len(out.Items), arec.Body.String())
	}
	for _, it := range out.Items {
		if k := want[strconv.FormatInt(it.ID, 10)]; it.Status != k {
			t.Errorf("API: run %d has status %q, want %q", it.ID, it.Status, k)
		}
	}
	// An unknown state is refused with the list of names.
	req = httptest.NewRequest(http.MethodGet, "/api/v1/runs?status=approved", nil)
	req.Header.Set("Authorization", "Bearer "+tok)
	arec = httptest.NewRecorder()
	f.s.ServeHTTP(arec, req)
	if arec.Code != http.StatusBadRequest || !strings.Contains(arec.Body.String(), "draft, submitted, returned or signed_off") {
		t.Errorf("API status=approved: %d %s", arec.Code, arec.Body.String())
	}
}
