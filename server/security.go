package server

import (
	"context"
	"fmt"
	"net"
	"net/http"
	"net/url"
	"os"
	"strings"
	"sync"
	"time"
	"unicode"
	"unicode/utf8"

	"github.com/labstack/echo/v4"

	"glowlog/server/passwords"
)

// ---- Trusted proxies ----

// ParseTrustedProxies reads proxy addresses or CIDR ranges ("10.0.0.5",
// "10.0.0.0/8", "fd00::/8"), comma-separated or one per element.
func ParseTrustedProxies(items []string) ([]*net.IPNet, error) {
	var out []*net.IPNet
	for _, item := range items {
		for _, s := range strings.Split(item, ",") {
			s = strings.TrimSpace(s)
			if s == "" {
				continue
			}
			if !strings.Contains(s, "/") {
				ip := net.ParseIP(s)
				if ip == nil {
					return nil, fmt.Errorf("trusted proxy %q is not an IP address or CIDR range (e.g. 10.0.0.0/8)", s)
				}
				bits := 128
				if ip.To4() != nil {
					ip, bits = ip.To4(), 32
				}
				out = append(out, &net.IPNet{IP: ip, Mask: net.CIDRMask(bits, bits)})
				continue
			}
			_, n, err := net.ParseCIDR(s)
			if err != nil {
				return nil, fmt.Errorf("trusted proxy %q is not an IP address or CIDR range (e.g. 10.0.0.0/8)", s)
			}
			out = append(out, n)
		}
	}
	return out, nil
}

// setProxyTrust makes echo read the client address (X-Forwarded-For) and
// scheme (X-Forwarded-Proto) only from requests whose direct peer is in
// one of the trusted ranges; with none, only the connection counts.
// X-Real-IP is never read.
func setProxyTrust(e *echo.Echo, trusted []*net.IPNet) {
	if len(trusted) == 0 {
		e.IPExtractor = echo.ExtractIPDirect()
		e.SchemeExtractor = echo.ExtractSchemeDirect()
		return
	}
	opts := []echo.TrustOption{echo.TrustLoopback(false), echo.TrustLinkLocal(false), echo.TrustPrivateNet(false)}
	for _, n := range trusted {
		opts = append(opts, echo.TrustIPRange(n))
	}
	e.IPExtractor = echo.ExtractIPFromXFFHeader(opts...)
	e.SchemeExtractor = echo.ExtractSchemeFromHeaders(opts...)
}

// secureRequest reports whether cookies set on this request get the
// Secure flag: --secure-cookies, a TLS connection, or a trusted proxy's
// X-Forwarded-Proto: https.
func (s *Server) secureRequest(c echo.Context) bool {
	return s.SecureCookies || c.Scheme() == "https"
}

// ---- Per-account sign-in backoff ----

// accountBackoff slows down password guessing against one account name
// from any number of addresses: the backoffFree-th failure in a row for a
// name locks it for backoffBase, and each further failure doubles the
// window (30 s, 1 min, 2 min … at most 15 min). Attempts are reserved
// before the password is checked, so parallel attempts cannot get more
// guesses than sequential ones. It keys on the name as typed
// (lower-cased), whether or not the account exists, so its answers do not
// tell which names exist. A successful sign-in clears the name.
type accountBackoff struct {
	mu  sync.Mutex
	now func() time.Time
	m   map[string]*backoffEntry
}

type backoffEntry struct {
	failures int
	inflight int       // attempts reserved and not yet ended
	until    time.Time // locked until
	last     time.Time // last failure
}

const (
	backoffFree    = 5
	backoffBase    = 30 * time.Second
	backoffMax     = 15 * time.Minute
	backoffForget  = time.Hour // a name with no failure for this long starts afresh
	backoffMaxKeys = 10000
)

func newAccountBackoff() *accountBackoff {
	return &accountBackoff{now: time.Now, m: map[string]*backoffEntry{}}
}

func backoffKey(name string) string { return strings.ToLower(strings.TrimSpace(name)) }

// begin reserves a sign-in attempt for name. It returns 0 when the
// attempt may go ahead (end or release must follow), else how long to
// wait: the rest of the lock window, or a second while the attempts the
// name has left are all under way.
func (b *accountBackoff) begin(name string) time.Duration {
	b.mu.Lock()
	defer b.mu.Unlock()
	now, k := b.now(), backoffKey(name)
	e := b.m[k]
	if e != nil && e.inflight == 0 && now.Sub(e.last) > backoffForget && !now.Before(e.until) {
		delete(b.m, k)
		e = nil
	}
	if e == nil {
		if len(b.m) >= backoffMaxKeys {
			b.prune(now)
		}
		e = &backoffEntry{}
		b.m[k] = e
	}
	if d := e.until.Sub(now); d > 0 {
		return d
	}
	if e.inflight >= max(1, backoffFree-e.failures) {
		return time.Second
	}
	e.inflight++
	return 0
}

// end closes an attempt reserved by begin: a success clears the name, a
// failure counts and may lock it.
func (b *accountBackoff) end(name string, ok bool) {
	b.mu.Lock()
	defer b.mu.Unlock()
	now, k := b.now(), backoffKey(name)
	e := b.m[k]
	if e == nil {
		return
	}
	e.inflight--
	if ok {
		e.failures, e.until = 0, time.Time{}
		if e.inflight <= 0 {
			delete(b.m, k)
		}
		return
	}
	e.failures++
	e.last = now
	if over := e.failures - backoffFree; over >= 0 {
		d := backoffBase
		for i := 0; i < over && d < backoffMax; i++ {
			d *= 2
		}
		e.until = now.Add(min(d, backoffMax))
	}
}

// release gives back an attempt reserved by begin that checked nothing.
func (b *accountBackoff) release(name string) {
	b.mu.Lock()
	defer b.mu.Unlock()
	if e := b.m[backoffKey(name)]; e != nil {
		e.inflight--
	}
}

// locked returns how long name stays locked (0: not locked).
func (b *accountBackoff) locked(name string) time.Duration {
	b.mu.Lock()
	defer b.mu.Unlock()
	if e := b.m[backoffKey(name)]; e != nil {
		return max(0, e.until.Sub(b.now()))
	}
	return 0
}

// prune drops forgotten names, then (still full) unlocked ones, so that
// the map stays bounded; locked names and names with attempts under way
// are kept.
func (b *accountBackoff) prune(now time.Time) {
	for k, e := range b.m {
		if e.inflight == 0 && now.Sub(e.last) > backoffForget && !now.Before(e.until) {
			delete(b.m, k)
		}
	}
	for k, e := range b.m {
		if len(b.m) < backoffMaxKeys {
			return
		}
		if e.inflight == 0 && !now.Before(e.until) {
			delete(b.m, k)
		}
	}
}

// ---- Token use, recorded without a write per request ----

// tokenUse records when API tokens were used. A request only looks at
// memory: the stored last_used_at is written when it is more than
// tokenTouchEvery old and no write for the token happened (or is running)
// in the last tokenTouchEvery, in a goroutine outside the request, best
// effort (a failed write is logged and retried on a later request).
type tokenUse struct {
	mu      sync.Mutex
	written map[int64]time.Time // token id → time of the last write attempt
	wg      sync.WaitGroup
	write   func(ctx context.Context, id int64, t time.Time) error
	log     func(msg string, args ...any)
}

const tokenTouchEvery = time.Minute

func (u *tokenUse) record(id int64, stored, now time.Time) {
	if now.Sub(stored) < tokenTouchEvery {
		return
	}
	u.mu.Lock()
	if now.Sub(u.written[id]) < tokenTouchEvery {
		u.mu.Unlock()
		return
	}
	if len(u.written) > 10000 {
		for k, t := range u.written {
			if now.Sub(t) >= tokenTouchEvery {
				delete(u.written, k)
			}
		}
	}
	u.written[id] = now
	u.mu.Unlock()
	u.wg.Add(1)
	go func() {
		defer u.wg.Done()
		ctx, cancel := context.WithTimeout(context.Background(), 30*time.Second)
		defer cancel()
		if err := u.write(ctx, id, now); err != nil {
			u.log("recording API token use", "token_id", id, "err", err)
		}
	}()
}

// wait waits for the writes under way (tests, shutdown).
func (u *tokenUse) wait() { u.wg.Wait() }

// errAuthUnavailable answers a request whose credentials could not be
// checked because the database failed: 503, never 401.
func (s *Server) errAuthUnavailable(c echo.Context, err error) error {
	s.Log.Error("checking credentials", "method", c.Request().Method, "path", c.Request().URL.Path, "err", err)
	return &userError{http.StatusServiceUnavailable, "the database is busy or unavailable, so your credentials could not be checked: try again in a moment"}
}

// ---- Redirect targets ----

// safeNext returns n when it is a path on this site, else "/runs": it
// must start with a single "/" (not "//" or "/\"), contain no backslash,
// no control or other invisible character anywhere (browsers drop tabs
// and newlines, so "/\t/evil.example" becomes "//evil.example"), no
// scheme and no host.
func safeNext(n string) string {
	const def = "/runs"
	if len(n) == 0 || len(n) > 2048 || n[0] != '/' || !utf8.ValidString(n) {
		return def
	}
	if len(n) > 1 && (n[1] == '/' || n[1] == '\\') {
		return def
	}
	for _, r := range n {
		if r == '\\' || unicode.IsControl(r) || (unicode.IsSpace(r) && r != ' ') || unicode.Is(unicode.Cf, r) {
			return def
		}
	}
	u, err := url.Parse(n)
	if err != nil || u.Scheme != "" || u.Host != "" || u.User != nil || u.Opaque != "" {
		return def
	}
	return n
}

// ---- Password rules ----

// PasswordProblem returns why password is not acceptable for user name
// (a sentence for the user), or "" when it is: at least 10 characters,
// not a common password (passwords/common.txt, also with digits or
// symbols added at the end), at least 5 different characters, and not
// similar to the user name (containing it, or contained in it, ignoring
// case; names shorter than 3 characters are only checked the second way).
func PasswordProblem(name, password string) string {
	if utf8.RuneCountInString(password) < 10 {
		return "the password must have at least 10 characters"
	}
	lower := strings.ToLower(password)
	if passwords.IsCommon(lower) {
		return "this password is on the list of the most common passwords: choose another"
	}
	if base := strings.TrimRight(lower, "0123456789!@#$%^&*()_-+=.,?~ "); base != lower && len(base) >= 4 && passwords.IsCommon(base) {
		return "this password is a common password with digits or symbols added: choose another"
	}
	distinct := map[rune]bool{}
	for _, r := range lower {
		distinct[r] = true
	}
	if len(distinct) < 5 {
		return "the password needs at least 5 different characters"
	}
	n := strings.ToLower(strings.TrimSpace(name))
	if n != "" && ((len(n) >= 3 && strings.Contains(lower, n)) || strings.Contains(n, lower)) {
		return "the password must not contain the user name (or be part of it)"
	}
	return ""
}

// ---- Middleware ----

// pageGuard runs after loadUser on every request: for a signed-in user
// it marks the answer Cache-Control: no-store (pages show personal and
// unpublished data) and, while the account must change its password,
// sends every page but the account page, its password form and sign-out
// to the password form. API requests are not redirected.
func (s *Server) pageGuard(next echo.HandlerFunc) echo.HandlerFunc {
	return func(c echo.Context) error {
		c.Set(ctxSecureCookies, s.secureRequest(c))
		u := currentUser(c)
		if u == nil {
			return next(c)
		}
		path := c.Request().URL.Path
		if !strings.HasPrefix(path, "/static/") {
			c.Response().Header().Set("Cache-Control", "no-store")
		}
		if u.MustChangePassword && !strings.HasPrefix(path, "/api/") && !strings.HasPrefix(path, "/static/") {
			switch path {
			case "/account", "/account/password", "/logout", "/healthz":
			default:
				return c.Redirect(http.StatusSeeOther, "/account#password")
			}
		}
		return next(c)
	}
}

// apiContentType answers 415 to an API request with a body whose
// Content-Type is not JSON; the measurement upload also takes
// multipart/form-data (README, "JSON API").
func apiContentType(next echo.HandlerFunc) echo.HandlerFunc {
	return func(c echo.Context) error {
		r := c.Request()
		switch r.Method {
		case http.MethodPost, http.MethodPut, http.MethodPatch:
		default:
			return next(c)
		}
		ct := strings.ToLower(strings.TrimSpace(strings.Split(r.Header.Get(echo.HeaderContentType), ";")[0]))
		if ct == echo.MIMEApplicationJSON {
			return next(c)
		}
		upload := strings.HasSuffix(strings.TrimSuffix(r.URL.Path, "/"), "/measurements")
		if upload && ct == echo.MIMEMultipartForm {
			return next(c)
		}
		msg := "Content-Type must be application/json"
		if upload {
			msg += " (a measurement set) or multipart/form-data (field \"file\")"
		}
		if ct == "" {
			msg += "; the request has none"
		} else {
			msg += "; the request has " + ct
		}
		return &userError{http.StatusUnsupportedMediaType, msg}
	}
}

// EnvList splits a comma-separated environment variable.
func EnvList(k string) []string {
	if v := os.Getenv(k); v != "" {
		return []string{v}
	}
	return nil
}
