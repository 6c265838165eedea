package server

import (
	"context"
	"net/http"
	"regexp"
	"strconv"
	"strings"
	"testing"
	"time"

	"glowlog/store"
)

// TestRunPageSummaryAndSections: the run page opens with a summary of the
// numbers, the status and the problems; the review buttons are in it (not
// at the bottom); a list of links leads to every section, each of which
// exists; the lines table shows the key columns with the rest on demand;
// the whole uploaded spectrum is drawn with its lines marked; the owner
// sees an Edit link.
func TestRunPageSummaryAndSections(t *testing.T) {
	f := newShowFixture(t)
	code, _, body := f.get(t, f.path(""))
	if code != http.StatusOK {
		t.Fatalf("GET run page: %d\n%s", code, body)
	}
	sum := strings.Index(body, `data-testid="run-summary"`)
	results := strings.Index(body, `id="results"`)
	if sum < 0 || results < 0 || sum > results {
		t.Fatalf("summary at %d, results at %d: the summary must come first", sum, results)
	}
	block := body[sum:results]
	for _, id := range []string{"texc", "ne-m3", "tgas", "review-status", "summary-problems", "edit-link", "report-link", "review-submit"} {
		if !strings.Contains(block, `data-testid="`+id+`"`) {
			t.Errorf("summary block lacks %s", id)
		}
	}
	if !regexp.MustCompile(`1[12]\d{3} ± \d+ K`).MatchString(testidInner(block, "texc")) {
		t.Errorf("summary T_exc = %q", testidInner(block, "texc"))
	}
	if got := testidInner(block, "tgas"); !strings.Contains(got, "1500") || !strings.Contains(got, "K") {
		t.Errorf("summary T_g = %q, want the given 1500 K of version 2", got)
	}
	// The summary counts what the Warnings section lists as problems and
	// cautions (distinct codes), not the method notes.
	m := regexp.MustCompile(`(\d+) problems? or cautions?`).FindStringSubmatch(testidInner(block, "summary-problems"))
	codes := map[string]bool{}
	for _, c := range regexp.MustCompile(`data-code="([a-z_0-9]+)" data-severity="(?:problem|caution)"`).FindAllStringSubmatch(body, -1) {
		codes[c[1]] = true
	}
	if m == nil || m[1] != strconv.Itoa(len(codes)) {
		t.Errorf("summary problems = %q, want the %d problem and caution codes the Warnings section lists", testidInner(block, "summary-problems"), len(codes))
	}
	if !strings.Contains(block, `href="/runs/`+idStr(f.runID)+`/edit"`) {
		t.Errorf("summary has no edit link to /runs/%d/edit", f.runID)
	}
	// The review buttons are in the summary only.
	if n := strings.Count(body, `data-testid="review-submit"`); n != 1 {
		t.Errorf("the submit button appears %d times, want once (in the summary)", n)
	}

	// Section links: each target exists on the page.
	nav := testidInner(body, "section-nav")
	links := regexp.MustCompile(`href="#([\w-]+)"`).FindAllStringSubmatch(nav, -1)
	if len(links) < 8 {
		t.Fatalf("section list has %d links, want at least 8:\n%s", len(links), nav)
	}
	for _, l := range links {
		if !strings.Contains(body, `id="`+l[1]+`"`) {
			t.Errorf("section link #%s leads nowhere", l[1])
		}
	}

	// Lines: the key columns in a compact table, everything else on demand.
	key := testidInner(body, "lines-key")
	heads := regexp.MustCompile(`<th scope="col"[^>]*>(.*?)</th>`).FindAllStringSubmatch(key, -1)
	var names []string
	for _, h := range heads {
		names = append(names, regexp.MustCompile(`<[^>]+>`).ReplaceAllString(h[1], ""))
	}
	want := []string{"Line", "λ air (nm)", "Area ± σ (spectrum units · nm)", "Stark FWHM ± σ (nm)", "ne ± total σ (m⁻³)", "In fit"}
	if strings.Join(names, "|") != strings.Join(want, "|") {
		t.Errorf("key columns %q, want %q", names, want)
	}
	if n := strings.Count(key, `data-testid="line-ne"`); n < 5 {
		t.Errorf("key table has %d per-line n_e cells, want one per line (≥ 5)", n)
	}
	if !regexp.MustCompile(`(?s)<details class="all-columns" data-testid="lines-all">.*data-testid="lines"`).MatchString(body) {
		t.Error("the full lines table is not behind an 'all columns' details element")
	}

	// The whole spectrum with the fitted lines marked.
	fig := testidInner(body, "spectrum-figure")
	if !strings.Contains(fig, `<title>Whole spectrum: scipy_bench_2048.csv</title>`) {
		t.Errorf("no whole-spectrum figure:\n%.300s", fig)
	}
	for _, l := range []string{"Hα at 656", "Hβ at 486", "Hγ at 434"} {
		if !strings.Contains(fig, l) {
			t.Errorf("whole-spectrum figure does not mark %q", l)
		}
	}
	code, hdr, svg := f.get(t, f.path("/spectrum.svg"))
	if code != http.StatusOK || hdr.Get("Content-Type") != "image/svg+xml" || !strings.Contains(svg, "Whole spectrum") {
		t.Errorf("GET spectrum.svg: %d %s", code, hdr.Get("Content-Type"))
	}
}

// TestRunPageReviewerActions: a reviewer sees sign off and return in the
// summary (and no edit link: only the operator or an admin edits).
func TestRunPageReviewerActions(t *testing.T) {
	f := newShowFixture(t)
	ctx := context.Background()
	db := f.s.DB
	op, err := db.GetRun(ctx, f.runID)
	if err != nil {
		t.Fatal(err)
	}
	opUser, err := db.UserByName(ctx, op.OperatorName)
	if err != nil {
		t.Fatal(err)
	}
	if _, err := db.ReviewSeen(ctx, f.runID, opUser, store.ActionSubmit, "", 0); err != nil {
		t.Fatal(err)
	}
	rev, err := db.CreateUser(ctx, "bryn.tarrow", store.RoleReviewer, "not-a-hash")
	if err != nil {
		t.Fatal(err)
	}
	tok, hash := NewToken()
	if err := db.CreateSession(ctx, hash, rev.ID, time.Hour); err != nil {
		t.Fatal(err)
	}
	f.cookie = &http.Cookie{Name: sessionCookie, Value: tok}
	_, _, body := f.get(t, f.path(""))
	sum, results := strings.Index(body, `data-testid="run-summary"`), strings.Index(body, `id="results"`)
	if sum < 0 || results < sum {
		t.Fatal("no summary before the results")
	}
	block := body[sum:results]
	for _, id := range []string{"review-signoff", "review-return"} {
		if !strings.Contains(block, `data-testid="`+id+`"`) {
			t.Errorf("reviewer's summary lacks %s", id)
		}
		if strings.Count(body, `data-testid="`+id+`"`) != 1 {
			t.Errorf("%s appears more than once", id)
		}
	}
	if strings.Contains(body, `data-testid="edit-link"`) {
		t.Error("a reviewer who is not the operator sees an edit link")
	}
}
