package server

import (
	"net/http"
	"regexp"
	"strconv"
	"strings"
	"testing"
)

// TestWarningSeverities: the run page lists problems and cautions with
// their severity word and puts the method notes in their own panel; the
// run log counts the distinct problem and caution codes only and colours
// the count by the worst of them.
func TestWarningSeverities(t *testing.T) {
	f := newShowFixture(t)
	code, _, body := f.get(t, f.path(""))
	if code != http.StatusOK {
		t.Fatalf("run page: %d", code)
	}
	items := regexp.MustCompile(`<li class="(\w+)" data-code="([a-z_]+)" data-severity="(\w+)"><span class="sev">(\w+):</span>`).
		FindAllStringSubmatch(testidInner(body, "warnings"), -1)
	codes := map[string]bool{}
	worst := ""
	for _, m := range items {
		sev, word := m[3], strings.ToLower(m[4])
		if sev != word || (sev != "problem" && sev != "caution") {
			t.Errorf("warning %s: severity %q shown as %q", m[2], sev, m[4])
		}
		codes[m[2]] = true
		if sev == "problem" || worst == "" {
			worst = sev
		}
	}
	t.Logf("warnings on the page: %v (worst %q)", codes, worst)
	notes := testidInner(body, "method-notes")
	if !strings.Contains(notes, `data-code="lte_density_same_spectrum"`) {
		t.Errorf("method notes lack the same-spectrum caveat:\n%s", notes)
	}
	if strings.Contains(testidInner(body, "warnings"), "lte_density_same_spectrum") {
		t.Errorf("the same-spectrum caveat is counted among the warnings")
	}
	code, _, list := f.get(t, "/runs")
	if code != http.StatusOK {
		t.Fatalf("run log: %d", code)
	}
	cell := testidInner(list, "run-warnings")
	if len(codes) == 0 {
		if strings.TrimSpace(cell) != "0" {
			t.Errorf("run log count %q, want 0", cell)
		}
		return
	}
	want := `class="warn-count ` + worst + `" data-worst="` + worst + `"`
	if !strings.Contains(cell, want) || !strings.Contains(cell, ">"+strconv.Itoa(len(codes))+"</span>") {
		t.Errorf("run log warnings cell %q, want %d coloured %s", cell, len(codes), worst)
	}
}
