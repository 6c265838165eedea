package server

import (
	"encoding/xml"
	"net/http"
	"regexp"
	"strings"
	"testing"

	"glowlog/store"
)

// TestSkipLinkAndFavicon: every page starts with a skip link to the main
// content and names our own SVG icon, which is served as SVG.
func TestSkipLinkAndFavicon(t *testing.T) {
	f := newRunsFixture(t)
	_, sess := f.signIn("opal", store.RoleOperator)
	for _, path := range []string{"/runs", "/runs/new", "/trends", "/login"} {
		who := sess
		if path == "/login" {
			who = nil // signed out
		}
		body := f.get(path, who).Body.String()
		if !regexp.MustCompile(`<body>\s*<a class="skip-link" href="#main"`).MatchString(body) {
			t.Errorf("%s: the skip link is not the first element of the body", path)
		}
		if !strings.Contains(body, `<main id="main"`) {
			t.Errorf("%s: no main#main for the skip link", path)
		}
		if !strings.Contains(body, `<link rel="icon" type="image/svg+xml" href="/static/glowlog-icon-1.svg">`) {
			t.Errorf("%s: no favicon link", path)
		}
	}
	rec := f.get("/static/glowlog-icon-1.svg", nil)
	if rec.Code != http.StatusOK || rec.Header().Get("Content-Type") != "image/svg+xml" {
		t.Fatalf("favicon: %d %q", rec.Code, rec.Header().Get("Content-Type"))
	}
	d := xml.NewDecoder(strings.NewReader(rec.Body.String()))
	for {
		if _, err := d.Token(); err != nil {
			if err.Error() != "EOF" {
				t.Errorf("favicon is not well-formed SVG: %v", err)
			}
			break
		}
	}
}
