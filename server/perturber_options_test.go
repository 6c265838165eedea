package server

import (
	"regexp"
	"strings"
	"testing"

	"glowlog/store"
)

// selectValues returns the option values of the select named name.
func selectValues(t *testing.T, body, name string) []string {
	t.Helper()
	m := regexp.MustCompile(`(?s)<select name="` + name + `"[^>]*>(.*?)</select>`).FindStringSubmatch(body)
	if m == nil {
		t.Fatalf("no select %q", name)
	}
	var out []string
	for _, o := range regexp.MustCompile(`<option value="([^"]*)"`).FindAllStringSubmatch(m[1], -1) {
		if o[1] != "" {
			out = append(out, o[1])
		}
	}
	return out
}

// TestOnePerturberList: "Log a run", the run page's reanalysis and the
// bulk reanalysis on the trends page offer the same perturbers, from one
// list (the bulk form used to take free text).
func TestOnePerturberList(t *testing.T) {
	f := newRunsFixture(t)
	_, op := f.signIn("opal", store.RoleOperator)
	run := f.createTestRun(op)
	_, rev := f.signIn("rhodri", store.RoleReviewer)
	var want []string
	for _, o := range perturberOptions() {
		want = append(want, o.Value)
	}
	if len(want) < 3 {
		t.Fatalf("perturberOptions has %d entries", len(want))
	}
	pages := map[string]string{
		"log a run":       f.get("/runs/new", op).Body.String(),
		"run page":        f.get("/runs/"+idStr(run.ID), op).Body.String(),
		"bulk reanalysis": f.get("/trends", rev).Body.String(),
	}
	for what, body := range pages {
		if got := selectValues(t, body, "perturber"); strings.Join(got, ",") != strings.Join(want, ",") {
			t.Errorf("%s offers perturbers %v, want %v", what, got, want)
		}
	}
}
