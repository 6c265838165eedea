package server

import (
	"context"
	"crypto/rand"
	"crypto/sha256"
	"crypto/subtle"
	"encoding/base64"
	"errors"
	"fmt"
	"net/http"
	"net/url"
	"strings"
	"sync"

	"github.com/labstack/echo/v4"
	"golang.org/x/crypto/argon2"

	"glowlog/store"
	"glowlog/views"
)

// Password hashing: argon2id with the OWASP minimum parameters (m = 19 MiB,
// t = 2, p = 1), stored as a PHC string.
const (
	argonMemKiB = 19456
	argonTime   = 2
	argonPar    = 1
	argonKeyLen = 32
)

// HashPassword returns the PHC-format argon2id hash of password.
func HashPassword(password string) (string, error) {
	if len(password) < 10 {
		return "", fmt.Errorf("%w: the password must have at least 10 characters", store.ErrInvalid)
	}
	salt := make([]byte, 16)
	if _, err := rand.Read(salt); err != nil {
		return "", err
	}
	key := argon2.IDKey([]byte(password), salt, argonTime, argonMemKiB, argonPar, argonKeyLen)
	b := base64.RawStdEncoding
	return fmt.Sprintf("$argon2id$v=19$m=%d,t=%d,p=%d$%s$%s", argonMemKiB, argonTime, argonPar, b.EncodeToString(salt), b.EncodeToString(key)), nil
}

// CheckPassword reports whether password matches a HashPassword hash.
func CheckPassword(hash, password string) bool {
	parts := strings.Split(hash, "$")
	if len(parts) != 6 || parts[1] != "argon2id" {
		return false
	}
	var m, t uint32
	var p uint8
	if _, err := fmt.Sscanf(parts[3], "m=%d,t=%d,p=%d", &m, &t, &p); err != nil {
		return false
	}
	b := base64.RawStdEncoding
	salt, err1 := b.DecodeString(parts[4])
	key, err2 := b.DecodeString(parts[5])
	if err1 != nil || err2 != nil {
		return false
	}
	got := argon2.IDKey([]byte(password), salt, t, m, p, uint32(len(key)))
	return subtle.ConstantTimeCompare(got, key) == 1
}

// dummyHash is checked against when a user name is unknown, so that the
// time of a failed sign-in does not tell whether the name exists. It is
// made on first use, not at start-up: one Argon2id hash costs about 60 ms
// and 20 MB, which every command (glowlog analyze, version) would pay.
var dummyHash = sync.OnceValue(func() string {
	h, _ := HashPassword("not-a-real-password-0")
	return h
})

// NewToken returns a random token and its SHA-256 hash (what is stored).
func NewToken() (string, []byte) {
	raw := make([]byte, 32)
	if _, err := rand.Read(raw); err != nil {
		panic(err)
	}
	tok := base64.RawURLEncoding.EncodeToString(raw)
	return tok, hashToken(tok)
}

func hashToken(tok string) []byte {
	h := sha256.Sum256([]byte(tok))
	return h[:]
}

const sessionCookie = "glowlog_session"

// loadUser finds the session user (cookie) or API user (bearer token) and
// puts it in the context. An unknown credential leaves the request
// anonymous; a database error answers 503 (never "invalid token"). A
// token's use is recorded in memory and written rarely, outside the
// request (tokenUse).
func (s *Server) loadUser(next echo.HandlerFunc) echo.HandlerFunc {
	return func(c echo.Context) error {
		ctx := c.Request().Context()
		if strings.HasPrefix(c.Request().URL.Path, "/api/") {
			if h := c.Request().Header.Get("Authorization"); strings.HasPrefix(h, "Bearer ") {
				a, err := s.DB.LookupToken(ctx, hashToken(strings.TrimSpace(strings.TrimPrefix(h, "Bearer "))))
				switch {
				case err == nil:
					c.Set("user", &a.User)
					s.tokenUse.record(a.TokenID, a.LastUsedAt, s.DB.Now())
				case errors.Is(err, context.Canceled):
					return err
				case !errors.Is(err, store.ErrNotFound):
					return s.errAuthUnavailable(c, err)
				}
			}
			return next(c)
		}
		if ck, err := c.Cookie(sessionCookie); err == nil && ck.Value != "" {
			u, err := s.DB.SessionUser(ctx, hashToken(ck.Value))
			switch {
			case err == nil:
				c.Set("user", &u)
			case errors.Is(err, context.Canceled):
				return err
			case !errors.Is(err, store.ErrNotFound):
				return s.errAuthUnavailable(c, err)
			}
		}
		return next(c)
	}
}

func currentUser(c echo.Context) *store.User {
	u, _ := c.Get("user").(*store.User)
	return u
}

// requireRole lets through signed-in users with at least role min; others
// go to the sign-in page (HTML) or get 401/403.
func requireRole(min store.Role) echo.MiddlewareFunc {
	return func(next echo.HandlerFunc) echo.HandlerFunc {
		return func(c echo.Context) error {
			u := currentUser(c)
			api := strings.HasPrefix(c.Request().URL.Path, "/api/")
			if u == nil {
				if api {
					return echo.NewHTTPError(http.StatusUnauthorized, "missing or invalid API token (Authorization: Bearer TOKEN)")
				}
				if c.Request().Method == http.MethodGet {
					return c.Redirect(http.StatusSeeOther, "/login?next="+url.QueryEscape(c.Request().URL.RequestURI()))
				}
				return echo.NewHTTPError(http.StatusUnauthorized, "sign in first")
			}
			if !u.Role.Can(min) {
				return echo.NewHTTPError(http.StatusForbidden, fmt.Sprintf("this needs the %s role or above; you are %s", min, u.Role))
			}
			return next(c)
		}
	}
}

func (s *Server) showLogin(c echo.Context) error {
	if currentUser(c) != nil {
		return c.Redirect(http.StatusSeeOther, "/runs")
	}
	return render(c, http.StatusOK, views.Login(views.LoginProps{Layout: s.layout(c, "Sign in", ""), Next: safeNext(c.QueryParam("next"))}))
}

func (s *Server) login(c echo.Context) error {
	name, pw, next := c.FormValue("name"), c.FormValue("password"), safeNext(c.FormValue("next"))
	ctx := c.Request().Context()
	if wait := s.backoff.begin(name); wait > 0 {
		p := s.layout(c, "Sign in", "")
		p.Error = fmt.Sprintf("too many failed sign-ins for this user name: try again in %d s", int(wait.Seconds())+1)
		c.Response().Header().Set("Retry-After", fmt.Sprint(int(wait.Seconds())+1))
		return render(c, http.StatusTooManyRequests, views.Login(views.LoginProps{Layout: p, Name: name, Next: next}))
	}
	ok, checked := false, false
	defer func() {
		if checked {
			s.backoff.end(name, ok)
		} else {
			s.backoff.release(name) // a database error is not a failed guess
		}
	}()
	u, err := s.DB.UserByName(ctx, name)
	switch {
	case err == nil && !u.Disabled:
		ok = CheckPassword(u.PasswordHash, pw)
	case errors.Is(err, store.ErrNotFound) || err == nil:
		CheckPassword(dummyHash(), pw)
	default:
		return err
	}
	checked = true
	if !ok {
		p := s.layout(c, "Sign in", "")
		p.Error = "user name or password is wrong"
		return render(c, http.StatusUnauthorized, views.Login(views.LoginProps{Layout: p, Name: name, Next: next}))
	}
	tok, h := NewToken()
	if err := s.DB.CreateSession(ctx, h, u.ID, s.SessionTTL); err != nil {
		return err
	}
	sec := s.secureRequest(c)
	c.SetCookie(&http.Cookie{Name: sessionCookie, Value: tok, Path: "/", HttpOnly: true, Secure: sec,
		SameSite: http.SameSiteLaxMode, MaxAge: int(s.SessionTTL.Seconds())})
	// A new CSRF token for the signed-in session: one learnt before
	// sign-in (e.g. planted in the browser) no longer works.
	csrfTok, _ := NewToken()
	c.SetCookie(&http.Cookie{Name: "_csrf", Value: csrfTok, Path: "/", HttpOnly: true, Secure: sec,
		SameSite: http.SameSiteLaxMode, MaxAge: 86400})
	if u.MustChangePassword {
		next = "/account#password"
	}
	return c.Redirect(http.StatusSeeOther, next)
}

func (s *Server) logout(c echo.Context) error {
	if ck, err := c.Cookie(sessionCookie); err == nil && ck.Value != "" {
		if err := s.DB.DeleteSession(c.Request().Context(), hashToken(ck.Value)); err != nil {
			return err
		}
	}
	c.SetCookie(&http.Cookie{Name: sessionCookie, Value: "", Path: "/", MaxAge: -1, HttpOnly: true, Secure: s.secureRequest(c)})
	return c.Redirect(http.StatusSeeOther, "/login")
}
