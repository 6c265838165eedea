package server

import (
	"net/http"
	"strings"
	"testing"

	"glowlog/store"
)

// TestRunListCountCapped: past the count's bound the run list says "more
// than N runs", keeps a link to the next page and still serves pages
// beyond the bound; below it the count is exact.
func TestRunListCountCapped(t *testing.T) {
	f := newRunsFixture(t)
	op, sess := f.signIn("opal", store.RoleOperator)
	seedListRuns(t, f, op.ID) // five runs
	old := runCountCap
	runCountCap = 1
	t.Cleanup(func() { runCountCap = old })
	rec := f.get("/runs", sess)
	if rec.Code != http.StatusOK {
		t.Fatalf("status %d", rec.Code)
	}
	body := rec.Body.String()
	// five runs on one page of 50: the bound (50 + 1) is not reached.
	if !strings.Contains(body, "5 runs · showing 1–5") || strings.Contains(body, "more than") {
		t.Fatalf("exact count expected: %s", between(body, `data-testid="run-total"`, "</span>"))
	}
	// bound = end of the page (2) + 1: five runs exceed it
	old2 := runsPerPage
	runsPerPage = 2
	t.Cleanup(func() { runsPerPage = old2 })
	body = f.get("/runs", sess).Body.String()
	if !strings.Contains(body, "more than 3 runs · showing 1–2") || !strings.Contains(body, "page 1 of 2 or more") ||
		!strings.Contains(body, `data-testid="page-next"`) {
		t.Fatalf("capped count expected: %s", between(body, `data-testid="run-total"`, "</nav>"))
	}
	body = f.get("/runs?page=3", sess).Body.String()
	if got := listedIDs(body); len(got) != 1 || !strings.Contains(body, "5 runs · showing 5–5") {
		t.Fatalf("last page: runs %v, %s", got, between(body, `data-testid="run-total"`, "</span>"))
	}
	// A text search has its own, smaller bound.
	runCountCap, runsPerPage = 100, 50
	oldText := runTextCountCap
	runTextCountCap = 1
	t.Cleanup(func() { runTextCountCap = oldText })
	body = f.get("/runs?gas=H2", sess).Body.String()
	if !strings.Contains(body, "5 runs") || strings.Contains(body, "more than") {
		t.Fatalf("text search, page of 50 holds all: %s", between(body, `data-testid="run-total"`, "</span>"))
	}
	runsPerPage = 1
	body = f.get("/runs?gas=H2", sess).Body.String()
	if !strings.Contains(body, "more than 2 runs") {
		t.Fatalf("text search over its bound: %s", between(body, `data-testid="run-total"`, "</span>"))
	}
}

func between(s, from, to string) string {
	i := strings.Index(s, from)
	if i < 0 {
		return ""
	}
	s = s[i:]
	if j := strings.Index(s, to); j >= 0 {
		return s[:j]
	}
	return s
}
