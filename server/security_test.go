package server

import (
	"context"
	"io"
	"log/slog"
	"net/http"
	"net/http/httptest"
	"net/url"
	"strings"
	"sync"
	"testing"
	"time"

	"glowlog/store"
)

// browser is a cookie-keeping client for the sign-in flow that reports
// whole responses (status, headers, cookies).
type browser struct {
	t       *testing.T
	s       *Server
	remote  string            // RemoteAddr of its requests
	headers map[string]string // extra request headers
	cookies map[string]string
}

func newBrowser(t *testing.T, s *Server, remote string) *browser {
	return &browser{t: t, s: s, remote: remote, headers: map[string]string{}, cookies: map[string]string{}}
}

func (b *browser) do(method, path string, form url.Values) *httptest.ResponseRecorder {
	b.t.Helper()
	var body io.Reader
	if form != nil {
		if _, ok := form["_csrf"]; !ok {
			form.Set("_csrf", b.cookies["_csrf"])
		}
		body = strings.NewReader(form.Encode())
	}
	r := httptest.NewRequest(method, path, body)
	r.RemoteAddr = b.remote
	if form != nil {
		r.Header.Set("Content-Type", "application/x-www-form-urlencoded")
	}
	for k, v := range b.headers {
		r.Header.Set(k, v)
	}
	for k, v := range b.cookies {
		r.AddCookie(&http.Cookie{Name: k, Value: v})
	}
	w := httptest.NewRecorder()
	b.s.ServeHTTP(w, r)
	for _, c := range w.Result().Cookies() {
		if c.MaxAge < 0 {
			delete(b.cookies, c.Name)
		} else {
			b.cookies[c.Name] = c.Value
		}
	}
	return w
}

// login loads the sign-in page (for the CSRF cookie) and posts the form.
func (b *browser) login(name, password, next string) *httptest.ResponseRecorder {
	b.t.Helper()
	if _, ok := b.cookies["_csrf"]; !ok {
		if w := b.do(http.MethodGet, "/login", nil); w.Code != 200 {
			b.t.Fatalf("GET /login: %d", w.Code)
		}
	}
	return b.do(http.MethodPost, "/login", url.Values{"name": {name}, "password": {password}, "next": {next}})
}

func quietServer(t *testing.T, db *store.DB, opt Options) *Server {
	opt.Log = slog.New(slog.NewTextHandler(io.Discard, nil))
	return New(db, opt)
}

func cookieOf(w *httptest.ResponseRecorder, name string) *http.Cookie {
	for _, c := range w.Result().Cookies() {
		if c.Name == name {
			return c
		}
	}
	return nil
}

// Item 7: a client cannot escape the per-address sign-in limit by
// inventing X-Forwarded-For or X-Real-IP; behind a configured proxy the
// forwarded client address is what counts.
func TestLoginLimitIgnoresForgedForwardedHeaders(t *testing.T) {
	// The limiter allows a burst of 10 and refills at 0.5/s in real time,
	// so a slow machine may get a few more tries before the 429: allow up
	// to 24 (limited means limitedAt > 0); 12 distinct clients behind a
	// trusted proxy must never be limited.
	attempts := func(s *Server, remote string, n int, forwarded func(i int) string) (limitedAt int) {
		t.Helper()
		for i := 0; i < n; i++ {
			b := newBrowser(t, s, remote)
			b.headers["X-Forwarded-For"] = forwarded(i)
			b.headers["X-Real-IP"] = "198.51.100." + itoa64(int64(i+1))
			// A different name each time: the per-account backoff stays out of it.
			w := b.login("nobody-"+itoa64(int64(i)), "wrong-password-x", "")
			if w.Code == http.StatusTooManyRequests {
				return i + 1
			}
			if w.Code != http.StatusUnauthorized {
				t.Fatalf("attempt %d: %d", i+1, w.Code)
			}
		}
		return 0
	}
	distinct := func(i int) string { return "203.0.113." + itoa64(int64(i+1)) }
	same := func(int) string { return "203.0.113.77" }

	// No trusted proxy: the headers are ignored.
	s := quietServer(t, testDB(t), Options{})
	if n := attempts(s, "192.0.2.10:4000", 24, distinct); n < 11 {
		t.Errorf("no proxy, forged headers: limited at attempt %d, want from 11 on (burst of 10)", n)
	}
	// Trusted proxy: each forwarded client has its own allowance …
	trusted, err := ParseTrustedProxies([]string{"10.0.0.0/8, 192.168.7.7"})
	if err != nil || len(trusted) != 2 {
		t.Fatalf("parse: %v %v", trusted, err)
	}
	s = quietServer(t, testDB(t), Options{TrustedProxies: trusted})
	if n := attempts(s, "10.1.2.3:4000", 12, distinct); n != 0 {
		t.Errorf("trusted proxy, 12 clients: limited at attempt %d", n)
	}
	// … one forwarded client is limited …
	if n := attempts(s, "10.1.2.3:4000", 24, same); n < 11 {
		t.Errorf("trusted proxy, one client: limited at attempt %d, want from 11 on", n)
	}
	// … and a peer outside the trusted ranges is still judged by its own address.
	if n := attempts(s, "192.0.2.10:4000", 24, distinct); n < 11 {
		t.Errorf("untrusted peer with forged headers: limited at attempt %d, want from 11 on", n)
	}
	if _, err := ParseTrustedProxies([]string{"10.0.0.0/33"}); err == nil {
		t.Error("bad CIDR accepted")
	}
}

// Item 7: failures for one account name, from any addresses, lock that
// name for a growing window; a name that does not exist behaves the same.
func TestAccountBackoff(t *testing.T) {
	s, _ := newAccountServer(t) // user "root", password "old-password-1"
	now := time.Date(2026, 5, 1, 12, 0, 0, 0, time.UTC)
	s.backoff.now = func() time.Time { return now }
	body := map[string]string{}
	for _, name := range []string{"root", "ghost"} {
		for i := 0; i < backoffFree; i++ {
			b := newBrowser(t, s, "192.0.2."+itoa64(int64(i+1))+":5000")
			if w := b.login(name, "guess-number-"+itoa64(int64(i)), ""); w.Code != http.StatusUnauthorized {
				t.Fatalf("%s failure %d: %d", name, i+1, w.Code)
			}
		}
		// Locked now, from a fresh address, even with the right password.
		b := newBrowser(t, s, "198.51.100.9:5000")
		w := b.login(name, "old-password-1", "")
		if w.Code != http.StatusTooManyRequests {
			t.Fatalf("%s after %d failures: %d, want 429", name, backoffFree, w.Code)
		}
		page := strings.ReplaceAll(w.Body.String(), b.cookies["_csrf"], "CSRF")
		body[name] = strings.ReplaceAll(page, name, "NAME")
	}
	if body["root"] != body["ghost"] {
		t.Error("the lock-out page differs between an existing and an unknown account")
	}
	// After the window the right password works (and clears the count).
	now = now.Add(backoffBase + time.Second)
	if w := newBrowser(t, s, "198.51.100.9:5000").login("root", "old-password-1", ""); w.Code != http.StatusSeeOther {
		t.Fatalf("after the window: %d", w.Code)
	}
	// The window grows with further failures: 30 s, 60 s, 120 s …
	var prev time.Duration
	for i := 0; i < backoffFree+3; i++ {
		now = now.Add(backoffMax) // past any lock
		if w := s.backoff.begin("Ghost2"); w != 0 {
			t.Fatalf("attempt %d refused after the window: %v", i+1, w)
		}
		s.backoff.end("Ghost2", false)
		d := s.backoff.locked("ghost2")
		if i < backoffFree-1 && d != 0 {
			t.Fatalf("locked after %d failures", i+1)
		}
		if i >= backoffFree && d != 2*prev {
			t.Errorf("failure %d: window %v, want %v", i+1, d, 2*prev)
		}
		prev = d
	}
}

// Item 7: parallel guesses get no more tries than sequential ones.
func TestAccountBackoffParallel(t *testing.T) {
	s, _ := newAccountServer(t)
	b := newBrowser(t, s, "192.0.2.1:1")
	b.do(http.MethodGet, "/login", nil)
	csrf := b.cookies["_csrf"]
	var wg sync.WaitGroup
	var mu sync.Mutex
	codes := map[int]int{}
	for i := 0; i < 16; i++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			c := newBrowser(t, s, "198.51.100."+itoa64(int64(i+1))+":1")
			c.cookies["_csrf"] = csrf
			w := c.do(http.MethodPost, "/login", url.Values{"name": {"root"}, "password": {"guess-" + itoa64(int64(i))}})
			mu.Lock()
			codes[w.Code]++
			mu.Unlock()
		}()
	}
	wg.Wait()
	if codes[http.StatusUnauthorized] > backoffFree || codes[http.StatusUnauthorized]+codes[http.StatusTooManyRequests] != 16 {
		t.Errorf("16 parallel guesses: %v; at most %d may be checked", codes, backoffFree)
	}
}

// Item 8: only same-site paths are followed after sign-in.
func TestSafeNext(t *testing.T) {
	hostile := []string{
		"", "runs", "//evil.example", "///evil.example", "/\\evil.example", "\\\\evil.example", "\\/evil.example",
		"/\t/evil.example/", "/\n/evil.example", "/\r\n/evil.example", "/\x00/evil.example", "/\x7f/evil",
		"/runs\\..\\..\\evil", "/ru\tns", "https://evil.example/", "http:evil.example", "javascript:alert(1)",
		"JavaScript:alert(1)", "data:text/html,x", " /runs", "\t/runs", "/\u200b/evil.example", "/\u2028/evil",
		"/\u00a0/evil", "/\xff", "https:/evil.example", "//@evil.example", "/" + strings.Repeat("a", 3000),
	}
	for _, n := range hostile {
		if got := safeNext(n); got != "/runs" {
			t.Errorf("safeNext(%q) = %q, want /runs", n, got)
		}
	}
	for _, n := range []string{"/runs", "/runs/5?tab=files", "/trends?x=started_at&y=texc_k#top", "/runs?q=a%2F%2Fb", "/%09/evil.example/"} {
		if got := safeNext(n); got != n {
			t.Errorf("safeNext(%q) = %q, want it kept", n, got)
		}
	}
	// Through the sign-in flow, as a browser sends it.
	s, _ := newAccountServer(t)
	b := newBrowser(t, s, "192.0.2.1:1")
	if w := b.do(http.MethodGet, "/login?next=/%09/evil.example/", nil); strings.Contains(w.Body.String(), "evil.example") {
		t.Error("the sign-in page carries the hostile next on")
	}
	w := b.login("root", "old-password-1", "/\t/evil.example/")
	if loc := w.Header().Get("Location"); w.Code != http.StatusSeeOther || loc != "/runs" {
		t.Errorf("after sign-in: %d Location %q, want /runs", w.Code, loc)
	}
}

// Item 9: a database failure while checking a credential is 503, not
// 401 (and not a redirect to the sign-in page).
func TestAuthDatabaseErrorIs503(t *testing.T) {
	f := newAPIFixture(t)
	tok, h := NewToken()
	if err := f.db.CreateSession(context.Background(), h, f.user.ID, time.Hour); err != nil {
		t.Fatal(err)
	}
	f.db.Close()
	code, out := f.do(http.MethodGet, "/api/v1/runs", f.token, "", nil)
	if code != http.StatusServiceUnavailable || !strings.Contains(out["error"].(string), "database") {
		t.Errorf("API with a valid token, database down: %d %v", code, out)
	}
	b := newBrowser(t, f.s, "192.0.2.1:1")
	b.cookies[sessionCookie] = tok
	if w := b.do(http.MethodGet, "/runs", nil); w.Code != http.StatusServiceUnavailable {
		t.Errorf("page with a session, database down: %d", w.Code)
	}
}

// Item 9: a burst of API requests writes the token's last use at most
// once a minute, outside the requests.
func TestTokenUseWrittenRarely(t *testing.T) {
	f := newAPIFixture(t)
	sdb := f.db.SQL()
	for _, q := range []string{
		`CREATE TABLE touch_count (n INTEGER NOT NULL)`,
		`INSERT INTO touch_count VALUES (0)`,
		`CREATE TRIGGER touch_counter AFTER UPDATE OF last_used_at ON api_tokens BEGIN UPDATE touch_count SET n = n + 1; END`,
	} {
		if _, err := sdb.Exec(q); err != nil {
			t.Fatal(err)
		}
	}
	now := time.Date(2026, 5, 1, 12, 0, 0, 0, time.UTC)
	f.db.Now = func() time.Time { return now }
	burst := func() {
		var wg sync.WaitGroup
		for i := 0; i < 40; i++ {
			wg.Add(1)
			go func() {
				defer wg.Done()
				req := httptest.NewRequest(http.MethodGet, "/api/v1/runs", nil)
				req.Header.Set("Authorization", "Bearer "+f.token)
				w := httptest.NewRecorder()
				f.s.ServeHTTP(w, req)
				if w.Code != 200 {
					t.Errorf("request: %d", w.Code)
				}
			}()
		}
		wg.Wait()
		f.s.tokenUse.wait()
	}
	writes := func() int {
		var n int
		if err := sdb.QueryRow(`SELECT n FROM touch_count`).Scan(&n); err != nil {
			t.Fatal(err)
		}
		return n
	}
	burst()
	if n := writes(); n != 1 {
		t.Errorf("40 requests made %d writes of last_used_at, want 1", n)
	}
	toks, _ := f.db.Tokens(context.Background(), f.user.ID)
	if len(toks) != 1 || toks[0].LastUsedAt == nil || !toks[0].LastUsedAt.Equal(now) {
		t.Fatalf("last use not recorded: %+v", toks)
	}
	now = now.Add(30 * time.Second)
	burst()
	if n := writes(); n != 1 {
		t.Errorf("within the minute: %d writes, want still 1", n)
	}
	now = now.Add(tokenTouchEvery)
	burst()
	if n := writes(); n != 2 {
		t.Errorf("a minute later: %d writes, want 2", n)
	}
}

// Item 10: disabling an account stops its sessions and tokens at once;
// an admin can end a user's sessions; re-enabling brings tokens back.
func TestAdminDisableAndEndSessions(t *testing.T) {
	s, root := newAccountServer(t)
	ctx := context.Background()
	hash, _ := HashPassword("amber-lathe-42")
	kit, err := s.DB.CreateUser(ctx, "kit", store.RoleOperator, hash)
	if err != nil {
		t.Fatal(err)
	}
	tok, th := NewToken()
	if _, err := s.DB.CreateToken(ctx, kit.ID, "pc", th); err != nil {
		t.Fatal(err)
	}
	api := func() int {
		req := httptest.NewRequest(http.MethodGet, "/api/v1/runs", nil)
		req.Header.Set("Authorization", "Bearer "+tok)
		w := httptest.NewRecorder()
		s.ServeHTTP(w, req)
		return w.Code
	}
	kitPage := newHTMLClient(t, s, kit)
	admin := newHTMLClient(t, s, root)
	admin.req(http.MethodGet, "/admin/users", nil)
	if code, _ := kitPage.req(http.MethodGet, "/runs", nil); code != 200 || api() != 200 {
		t.Fatalf("before: page %d, api %d", code, api())
	}
	// End sessions: the page stops, the token works.
	if code, _ := admin.req(http.MethodPost, "/admin/users/"+itoa64(kit.ID)+"/sessions/end", url.Values{}); code != http.StatusSeeOther {
		t.Fatalf("end sessions: %d", code)
	}
	if code, _ := kitPage.req(http.MethodGet, "/runs", nil); code != http.StatusSeeOther || api() != 200 {
		t.Errorf("after ending sessions: page %d (want 303 to sign-in), api %d", code, api())
	}
	// Disable: a new session and the token stop at once.
	kitPage = newHTMLClient(t, s, kit)
	if code, _ := admin.req(http.MethodPost, "/admin/users/"+itoa64(kit.ID)+"/disabled", url.Values{"disabled": {"1"}}); code != http.StatusSeeOther {
		t.Fatalf("disable: %d", code)
	}
	if code, _ := kitPage.req(http.MethodGet, "/runs", nil); code != http.StatusSeeOther {
		t.Errorf("disabled user's session: %d", code)
	}
	if code := api(); code != http.StatusUnauthorized {
		t.Errorf("disabled user's token: %d", code)
	}
	if w := newBrowser(t, s, "192.0.2.1:1").login("kit", "amber-lathe-42", ""); w.Code != http.StatusUnauthorized {
		t.Errorf("disabled user signs in: %d", w.Code)
	}
	if _, body := admin.req(http.MethodGet, "/admin/users", nil); !strings.Contains(body, `data-testid="enable-user"`) {
		t.Error("admin page offers no Enable for the disabled account")
	}
	// Enable again: the token works.
	if code, _ := admin.req(http.MethodPost, "/admin/users/"+itoa64(kit.ID)+"/disabled", url.Values{"disabled": {"0"}}); code != http.StatusSeeOther || api() != 200 {
		t.Errorf("enable: %d, api %d", code, api())
	}
	// An admin cannot lock themselves out.
	if code, _ := admin.req(http.MethodPost, "/admin/users/"+itoa64(root.ID)+"/disabled", url.Values{"disabled": {"1"}}); code != http.StatusConflict {
		t.Errorf("disable self: %d", code)
	}
	// Only admins may do this.
	kitPage = newHTMLClient(t, s, kit)
	kitPage.req(http.MethodGet, "/runs", nil)
	if code, _ := kitPage.req(http.MethodPost, "/admin/users/"+itoa64(root.ID)+"/sessions/end", url.Values{}); code != http.StatusForbidden {
		t.Errorf("operator ends sessions: %d", code)
	}
}

// Item 10: a password change revokes the user's tokens when asked, and
// rejects weak passwords with a message.
func TestPasswordChangeRevokesTokensAndRejectsWeak(t *testing.T) {
	for _, revoke := range []bool{false, true} {
		s, u := newAccountServer(t)
		tok, th := NewToken()
		if _, err := s.DB.CreateToken(context.Background(), u.ID, "pc", th); err != nil {
			t.Fatal(err)
		}
		h := newHTMLClient(t, s, u)
		h.req(http.MethodGet, "/account", nil)
		for pw, want := range map[string]string{
			"password2026!":    "common",
			"qwertyuiop":       "common",
			"Root-is-strong-9": "user name",
			"aaaaabbbbbaaaaa":  "different characters",
			"short-1":          "10 characters",
		} {
			code, body := h.req(http.MethodPost, "/account/password", url.Values{"current": {"old-password-1"}, "new": {pw}})
			if code != 400 || !strings.Contains(body, want) {
				t.Errorf("new password %q: %d, want 400 mentioning %q", pw, code, want)
			}
		}
		form := url.Values{"current": {"old-password-1"}, "new": {"tidal-anvil-73"}}
		if revoke {
			form.Set("revoke_tokens", "1")
		}
		if code, _ := h.req(http.MethodPost, "/account/password", form); code != http.StatusSeeOther {
			t.Fatalf("change: %d", code)
		}
		_, err := s.DB.TokenUser(context.Background(), hashToken(tok))
		if revoke && err == nil {
			t.Error("token survives a change with revocation ticked")
		}
		if !revoke && err != nil {
			t.Errorf("token revoked without the box ticked: %v", err)
		}
	}
}

func TestPasswordProblem(t *testing.T) {
	for _, c := range []struct {
		name, pw string
		ok       bool
	}{
		{"kit", "tidal-anvil-73", true},
		{"kit", "Password1234", false},   // common + digits
		{"kit", "letmein!!!!!", false},   // common + symbols
		{"kit", "1234567890", false},     // common
		{"kit", "mykitpassword9", false}, // contains the name
		{"marguerite.lab", "Marguerite", false},
		{"jo", "jojojojojojo", false}, // few characters
		{"jo", "north-quay-5", true},
	} {
		if got := PasswordProblem(c.name, c.pw); (got == "") != c.ok {
			t.Errorf("PasswordProblem(%q, %q) = %q", c.name, c.pw, got)
		}
	}
}

// Item 10: the account made at first start must change its password
// before anything else; its API tokens are not affected.
func TestFirstStartPasswordMustChange(t *testing.T) {
	s := quietServer(t, testDB(t), Options{})
	var out strings.Builder
	if err := s.Bootstrap(context.Background(), false, &out); err != nil {
		t.Fatal(err)
	}
	pw := strings.Fields(strings.SplitAfter(out.String(), "one-time password ")[1])[0]
	b := newBrowser(t, s, "192.0.2.1:1")
	w := b.login("admin", pw, "/trends")
	if loc := w.Header().Get("Location"); w.Code != http.StatusSeeOther || loc != "/account#password" {
		t.Fatalf("first sign-in: %d → %q", w.Code, loc)
	}
	for _, p := range []string{"/runs", "/trends", "/admin/users", "/runs/new"} {
		if w := b.do(http.MethodGet, p, nil); w.Code != http.StatusSeeOther || w.Header().Get("Location") != "/account#password" {
			t.Errorf("GET %s before the change: %d → %q", p, w.Code, w.Header().Get("Location"))
		}
	}
	if w := b.do(http.MethodPost, "/admin/users", url.Values{"name": {"x"}, "role": {"viewer"}, "password": {"tidal-anvil-73"}}); w.Code != http.StatusSeeOther || w.Header().Get("Location") != "/account#password" {
		t.Errorf("POST before the change: %d", w.Code)
	}
	if w := b.do(http.MethodGet, "/account", nil); w.Code != 200 || !strings.Contains(w.Body.String(), "must-change-password") {
		t.Errorf("account page: %d", w.Code)
	}
	admin, _ := s.DB.UserByName(context.Background(), "admin")
	tok, th := NewToken()
	s.DB.CreateToken(context.Background(), admin.ID, "t", th)
	req := httptest.NewRequest(http.MethodGet, "/api/v1/runs", nil)
	req.Header.Set("Authorization", "Bearer "+tok)
	rec := httptest.NewRecorder()
	s.ServeHTTP(rec, req)
	if rec.Code != 200 {
		t.Errorf("API before the change: %d", rec.Code)
	}
	if w := b.do(http.MethodPost, "/account/password", url.Values{"current": {pw}, "new": {"tidal-anvil-73"}}); w.Code != http.StatusSeeOther {
		t.Fatalf("change: %d %s", w.Code, w.Body.String())
	}
	if w := b.login("admin", "tidal-anvil-73", "/trends"); w.Header().Get("Location") != "/trends" {
		t.Errorf("after the change: → %q", w.Header().Get("Location"))
	}
	if w := b.do(http.MethodGet, "/runs", nil); w.Code != 200 {
		t.Errorf("GET /runs after the change: %d", w.Code)
	}
}

// Item 11: API bodies must be JSON (the measurement upload also takes
// multipart).
func TestAPIUnsupportedContentType(t *testing.T) {
	f := newAPIFixture(t)
	for _, ct := range []string{"text/plain", "", "application/x-www-form-urlencoded", "multipart/form-data; boundary=x"} {
		if code, out := f.do(http.MethodPost, "/api/v1/runs", f.token, ct, strings.NewReader(runJSON)); code != http.StatusUnsupportedMediaType {
			t.Errorf("POST /runs as %q: %d %v", ct, code, out)
		}
	}
	if code, _ := f.do(http.MethodPost, "/api/v1/runs", f.token, "application/json; charset=utf-8", strings.NewReader(runJSON)); code != http.StatusCreated {
		t.Errorf("POST /runs as JSON with charset: %d", code)
	}
	if code, _ := f.do(http.MethodPost, "/api/v1/runs/1/measurements", f.token, "text/csv", strings.NewReader("1,2\n")); code != http.StatusUnsupportedMediaType {
		t.Errorf("upload as text/csv: %d", code)
	}
	if a, n := f.counts(); a != 0 || n != 0 {
		t.Errorf("a rejected request stored %d files, %d analyses", a, n)
	}
}

// Item 11: unknown paths are 404 for every role (and for nobody).
func TestUnknownPaths404(t *testing.T) {
	s, _ := newAccountServer(t)
	ctx := context.Background()
	var clients []*htmlClient
	var tokens []string
	for _, r := range []store.Role{store.RoleViewer, store.RoleOperator, store.RoleReviewer, store.RoleAdmin} {
		u, err := s.DB.CreateUser(ctx, "u-"+string(r), r, "x")
		if err != nil {
			t.Fatal(err)
		}
		clients = append(clients, newHTMLClient(t, s, u))
		tok, th := NewToken()
		s.DB.CreateToken(ctx, u.ID, "t", th)
		tokens = append(tokens, tok)
	}
	clients = append(clients, &htmlClient{t: t, s: s}) // signed out
	tokens = append(tokens, "")
	for i, h := range clients {
		for _, p := range []string{"/no-such-page", "/runs/1/no-such-thing", "/admin/no-such-page", "/admin", "/review/x/y", "/account/x"} {
			if code, _ := h.req(http.MethodGet, p, nil); code != http.StatusNotFound {
				t.Errorf("client %d GET %s: %d", i, p, code)
			}
		}
		for _, p := range []string{"/api/v1/no-such-thing", "/api/v1", "/api/v1/runs/1/x"} {
			req := httptest.NewRequest(http.MethodGet, p, nil)
			if tokens[i] != "" {
				req.Header.Set("Authorization", "Bearer "+tokens[i])
			}
			w := httptest.NewRecorder()
			s.ServeHTTP(w, req)
			if w.Code != http.StatusNotFound {
				t.Errorf("client %d GET %s: %d", i, p, w.Code)
			}
		}
	}
	// Known routes still check the role.
	if code, _ := clients[0].req(http.MethodGet, "/review", nil); code != http.StatusForbidden {
		t.Errorf("viewer on /review: %d", code)
	}
}

// Item 11: sign-in gives a new CSRF token; /static/ lists nothing;
// signed-in pages are not cached; cookies are Secure with
// --secure-cookies or behind a trusted proxy that says https.
func TestSmallHardening(t *testing.T) {
	s, u := newAccountServer(t)
	b := newBrowser(t, s, "192.0.2.1:1")
	b.do(http.MethodGet, "/login", nil)
	before := b.cookies["_csrf"]
	if before == "" {
		t.Fatal("no CSRF cookie")
	}
	if w := b.login("root", "old-password-1", ""); w.Code != http.StatusSeeOther {
		t.Fatalf("sign-in: %d", w.Code)
	}
	if after := b.cookies["_csrf"]; after == "" || after == before {
		t.Error("the CSRF token did not change at sign-in")
	}
	// The old token no longer passes.
	if w := b.do(http.MethodPost, "/logout", url.Values{"_csrf": {before}}); w.Code != http.StatusForbidden {
		t.Errorf("POST with the pre-sign-in token: %d, want 403", w.Code)
	}

	for _, p := range []string{"/static/", "/static", "/static/./"} {
		w := httptest.NewRecorder()
		s.ServeHTTP(w, httptest.NewRequest(http.MethodGet, p, nil))
		if w.Code != http.StatusNotFound && w.Code != http.StatusMovedPermanently {
			t.Errorf("GET %s: %d", p, w.Code)
		}
		if strings.Contains(w.Body.String(), `href="glowlog-2.css"`) {
			t.Errorf("GET %s lists files", p)
		}
	}
	w := httptest.NewRecorder()
	s.ServeHTTP(w, httptest.NewRequest(http.MethodGet, "/static/glowlog-2.css", nil))
	if w.Code != 200 {
		t.Errorf("asset: %d", w.Code)
	}

	h := newHTMLClient(t, s, u)
	for _, p := range []string{"/runs", "/account", "/admin/users"} {
		r := httptest.NewRequest(http.MethodGet, p, nil)
		r.AddCookie(&http.Cookie{Name: sessionCookie, Value: h.session})
		w := httptest.NewRecorder()
		s.ServeHTTP(w, r)
		if w.Code != 200 || w.Header().Get("Cache-Control") != "no-store" {
			t.Errorf("GET %s: %d, Cache-Control %q", p, w.Code, w.Header().Get("Cache-Control"))
		}
	}

	trusted, _ := ParseTrustedProxies([]string{"10.0.0.0/8"})
	for _, c := range []struct {
		opt    Options
		remote string
		secure bool
	}{
		{Options{}, "192.0.2.1:1", false},
		{Options{}, "10.0.0.2:1", false}, // forwarded proto from an unconfigured peer
		{Options{SecureCookies: true}, "192.0.2.1:1", true},
		{Options{TrustedProxies: trusted}, "10.0.0.2:1", true},
		{Options{TrustedProxies: trusted}, "192.0.2.1:1", false},
	} {
		s.SecureCookies, s.TrustedProxies = c.opt.SecureCookies, c.opt.TrustedProxies
		setProxyTrust(s.Echo, c.opt.TrustedProxies)
		b := newBrowser(t, s, c.remote)
		b.headers["X-Forwarded-Proto"] = "https"
		w := b.login("root", "old-password-1", "")
		sc, cc := cookieOf(w, sessionCookie), cookieOf(w, "_csrf")
		if sc == nil || cc == nil {
			t.Fatalf("%+v: cookies missing (%d)", c, w.Code)
		}
		if sc.Secure != c.secure || cc.Secure != c.secure {
			t.Errorf("%+v from %s: session Secure=%v, csrf Secure=%v, want %v", c.opt, c.remote, sc.Secure, cc.Secure, c.secure)
		}
	}
}
