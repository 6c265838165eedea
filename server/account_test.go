package server

import (
	"context"
	"io"
	"log/slog"
	"net/http"
	"net/http/httptest"
	"net/url"
	"regexp"
	"strconv"
	"strings"
	"testing"
	"time"

	"glowlog/store"
)

// htmlClient signs a user in through a session cookie and handles CSRF.
type htmlClient struct {
	t       *testing.T
	s       *Server
	session string
	csrf    string
	// location is the Location header of the last answer.
	location string
}

func newHTMLClient(t *testing.T, s *Server, u store.User) *htmlClient {
	t.Helper()
	tok, h := NewToken()
	if err := s.DB.CreateSession(context.Background(), h, u.ID, time.Hour); err != nil {
		t.Fatal(err)
	}
	return &htmlClient{t: t, s: s, session: tok}
}

func (h *htmlClient) req(method, path string, form url.Values) (int, string) {
	h.t.Helper()
	var body io.Reader
	if form != nil {
		form.Set("_csrf", h.csrf)
		body = strings.NewReader(form.Encode())
	}
	r := httptest.NewRequest(method, path, body)
	if form != nil {
		r.Header.Set("Content-Type", "application/x-www-form-urlencoded")
	}
	r.AddCookie(&http.Cookie{Name: sessionCookie, Value: h.session})
	if h.csrf != "" {
		r.AddCookie(&http.Cookie{Name: "_csrf", Value: h.csrf})
	}
	w := httptest.NewRecorder()
	h.s.ServeHTTP(w, r)
	h.location = w.Header().Get("Location")
	for _, c := range w.Result().Cookies() {
		if c.Name == "_csrf" && c.Value != "" {
			h.csrf = c.Value
		}
	}
	return w.Code, w.Body.String()
}

func newAccountServer(t *testing.T) (*Server, store.User) {
	t.Helper()
	ctx := context.Background()
	db := testDB(t)
	hash, _ := HashPassword("old-password-1")
	u, err := db.CreateUser(ctx, "root", store.RoleAdmin, hash)
	if err != nil {
		t.Fatal(err)
	}
	return New(db, Options{Log: slog.New(slog.NewTextHandler(io.Discard, nil))}), u
}

func TestAccountTokens(t *testing.T) {
	s, u := newAccountServer(t)
	h := newHTMLClient(t, s, u)
	if code, body := h.req(http.MethodGet, "/account", nil); code != 200 || !strings.Contains(body, `data-testid="no-tokens"`) {
		t.Fatalf("account page: %d", code)
	}
	// Post/redirect/get: the POST answers 303 to a page that shows the
	// token once; the redirect carries a one-time handle, not the token.
	code, body := h.req(http.MethodPost, "/account/tokens", url.Values{"name": {"bench PC"}})
	loc, _, _ := strings.Cut(h.location, "#") // browsers do not send the fragment
	if code != http.StatusSeeOther || !strings.HasPrefix(loc, "/account?new_token=") || strings.Contains(body, `data-testid="new-token"`) {
		t.Fatalf("create token: %d, Location %q", code, loc)
	}
	code, body = h.req(http.MethodGet, loc, nil)
	m := regexp.MustCompile(`data-testid="new-token">([A-Za-z0-9_-]+)<`).FindStringSubmatch(body)
	if code != 200 || m == nil {
		t.Fatalf("page after creating a token: %d, token shown: %v", code, m != nil)
	}
	tok := m[1]
	if strings.Contains(loc, tok) {
		t.Error("the redirect URL carries the token")
	}
	if _, body := h.req(http.MethodGet, loc, nil); strings.Contains(body, tok) {
		t.Error("token shown again on reloading the page after the redirect")
	}
	if _, err := s.DB.TokenUser(context.Background(), hashToken(tok)); err != nil {
		t.Errorf("shown token does not authenticate: %v", err)
	}
	if _, body := h.req(http.MethodGet, "/account", nil); strings.Contains(body, tok) {
		t.Error("token shown a second time")
	}
	if code, body := h.req(http.MethodPost, "/account/tokens", url.Values{"name": {"  "}}); code != 400 || !strings.Contains(body, "token-error") {
		t.Errorf("empty name: %d", code)
	}
	toks, _ := s.DB.Tokens(context.Background(), u.ID)
	if len(toks) != 1 {
		t.Fatalf("%d tokens, want 1", len(toks))
	}
	if code, _ := h.req(http.MethodPost, "/account/tokens/"+itoa64(toks[0].ID)+"/revoke", url.Values{}); code != http.StatusSeeOther {
		t.Errorf("revoke: %d", code)
	}
	if _, err := s.DB.TokenUser(context.Background(), hashToken(tok)); err == nil {
		t.Error("revoked token still works")
	}
	if code, _ := h.req(http.MethodPost, "/account/tokens/"+itoa64(toks[0].ID)+"/revoke", url.Values{}); code != 404 {
		t.Errorf("revoke twice: %d", code)
	}
	// Password change: wrong current password, then a good one.
	if code, body := h.req(http.MethodPost, "/account/password", url.Values{"current": {"nope"}, "new": {"new-password-22"}}); code != 400 || !strings.Contains(body, "wrong") {
		t.Errorf("wrong current password: %d", code)
	}
	if code, _ := h.req(http.MethodPost, "/account/password", url.Values{"current": {"old-password-1"}, "new": {"new-password-22"}}); code != http.StatusSeeOther {
		t.Errorf("change password: %d", code)
	}
	nu, _ := s.DB.UserByID(context.Background(), u.ID)
	if !CheckPassword(nu.PasswordHash, "new-password-22") {
		t.Error("password not changed")
	}
}

func TestAdminUsers(t *testing.T) {
	s, u := newAccountServer(t)
	h := newHTMLClient(t, s, u)
	if code, _ := h.req(http.MethodGet, "/admin/users", nil); code != 200 {
		t.Fatalf("admin page: %d", code)
	}
	if code, _ := h.req(http.MethodPost, "/admin/users", url.Values{"name": {"kit"}, "role": {"operator"}, "password": {"amber-lathe-42"}}); code != http.StatusSeeOther {
		t.Fatalf("create user: %d", code)
	}
	for _, f := range []url.Values{
		{"name": {"kit"}, "role": {"operator"}, "password": {"amber-lathe-42"}},
		{"name": {"lee"}, "role": {"boss"}, "password": {"lee-password-1"}},
		{"name": {"lee"}, "role": {"viewer"}, "password": {"short"}},
	} {
		if code, body := h.req(http.MethodPost, "/admin/users", f); code != 400 || !strings.Contains(body, "user-form-error") {
			t.Errorf("%v: %d", f, code)
		}
	}
	if n, _ := s.DB.CountUsers(context.Background()); n != 2 {
		t.Errorf("%d users, want 2", n)
	}
	kit, _ := s.DB.UserByName(context.Background(), "kit")
	if code, _ := h.req(http.MethodPost, "/admin/users/"+itoa64(kit.ID)+"/role", url.Values{"role": {"reviewer"}}); code != http.StatusSeeOther {
		t.Errorf("set role: %d", code)
	}
	if code, body := h.req(http.MethodPost, "/admin/users/"+itoa64(u.ID)+"/role", url.Values{"role": {"viewer"}}); code != 409 || !strings.Contains(body, "last admin") {
		t.Errorf("demote last admin: %d", code)
	}
	// A non-admin is refused.
	hk := newHTMLClient(t, s, kit)
	if code, _ := hk.req(http.MethodGet, "/admin/users", nil); code != 403 {
		t.Errorf("reviewer on admin page: %d", code)
	}
}

func itoa64(n int64) string { return strconv.FormatInt(n, 10) }

// TestNewTokenHandle: the one-time handle of a new token shows it to the
// user who made it (any of their sessions), never to another user.
func TestNewTokenHandle(t *testing.T) {
	s2, u2 := newAccountServer(t)
	h1 := newHTMLClient(t, s2, u2)
	h2 := newHTMLClient(t, s2, u2)
	h1.req(http.MethodGet, "/account", nil) // takes the CSRF token
	if code, _ := h1.req(http.MethodPost, "/account/tokens", url.Values{"name": {"second"}}); code != http.StatusSeeOther {
		t.Fatalf("create token: %d", code)
	}
	other, err := s2.DB.CreateUser(context.Background(), "someone", store.RoleViewer, "x")
	if err != nil {
		t.Fatal(err)
	}
	h3 := newHTMLClient(t, s2, other)
	loc2, _, _ := strings.Cut(h1.location, "#")
	if _, body := h3.req(http.MethodGet, loc2, nil); strings.Contains(body, `data-testid="new-token"`) {
		t.Error("another user was shown a new token")
	}
	if _, body := h2.req(http.MethodGet, loc2, nil); !strings.Contains(body, `data-testid="new-token"`) {
		t.Error("the same user's other session could not show the new token")
	}
}
