package server

import (
	"bytes"
	"context"
	"errors"
	"log/slog"
	"net"
	"net/http"
	"net/url"
	"strings"
	"time"

	"github.com/a-h/templ"
	"github.com/labstack/echo/v4"
	"github.com/labstack/echo/v4/middleware"
	"golang.org/x/time/rate"

	"glowlog/diag"
	"glowlog/diag/mset"
	"glowlog/store"
	"glowlog/views"
)

// Server holds the web application's dependencies. Handlers are its
// methods, one file per page or action; routes are all in routes.go.
type Server struct {
	DB   *store.DB
	Log  *slog.Logger
	Echo *echo.Echo
	// Jobs runs background work (bulk reanalysis).
	Jobs *JobRunner
	// SessionTTL is the lifetime of a sign-in.
	SessionTTL time.Duration
	// SecureCookies marks cookies Secure (behind TLS).
	SecureCookies bool
	// TrustedProxies are the addresses whose X-Forwarded-For and
	// X-Forwarded-Proto are believed.
	TrustedProxies []*net.IPNet

	backoff   *accountBackoff
	tokenUse  *tokenUse
	newTokens *tokenStash
}

// Options configures New.
type Options struct {
	Log           *slog.Logger
	SecureCookies bool
	// TrustedProxies: see Server.TrustedProxies (none: forwarded headers
	// are ignored).
	TrustedProxies []*net.IPNet
}

// New builds the web application on db.
func New(db *store.DB, opt Options) *Server {
	if opt.Log == nil {
		opt.Log = slog.Default()
	}
	e := echo.New()
	e.HideBanner, e.HidePort = true, true
	s := &Server{DB: db, Log: opt.Log, Echo: e, SessionTTL: 12 * time.Hour, SecureCookies: opt.SecureCookies,
		TrustedProxies: opt.TrustedProxies, backoff: newAccountBackoff(), newTokens: newTokenStash()}
	s.tokenUse = &tokenUse{written: map[int64]time.Time{}, write: db.TouchToken, log: s.Log.Warn}
	setProxyTrust(e, opt.TrustedProxies)
	s.Jobs = NewJobRunner(s)
	e.HTTPErrorHandler = s.handleError
	e.Use(middleware.Recover())
	e.Use(middleware.SecureWithConfig(middleware.SecureConfig{
		ContentTypeNosniff: "nosniff", XFrameOptions: "DENY", HSTSMaxAge: 31536000, ReferrerPolicy: "same-origin",
		ContentSecurityPolicy: "default-src 'self'; script-src 'self'; style-src 'self'; style-src-attr 'unsafe-inline'; " +
			"img-src 'self' data:; object-src 'none'; base-uri 'none'; form-action 'self'; frame-ancestors 'none'",
	}))
	e.Use(middleware.BodyLimit(bodyLimit))
	e.Use(s.loadUser)
	e.Use(s.pageGuard)
	e.Use(s.auditActor)
	s.routes()
	return s
}

// bodyLimit bounds request bodies (spectrum uploads included).
const bodyLimit = "40M"

// ServeHTTP makes the Server an http.Handler.
func (s *Server) ServeHTTP(w http.ResponseWriter, r *http.Request) { s.Echo.ServeHTTP(w, r) }

// WaitBackground waits, after the HTTP server has shut down, for the
// background work that outlives requests: bulk jobs and the deferred
// writes of API token use.
func (s *Server) WaitBackground() {
	s.Jobs.Wait()
	s.tokenUse.wait()
}

// csrf is the CSRF middleware for the HTML routes (the API uses bearer
// tokens instead). Its cookie is Secure when secureRequest says so.
func (s *Server) csrf() echo.MiddlewareFunc {
	cfg := middleware.CSRFConfig{
		TokenLookup: "form:_csrf,header:X-CSRF-Token", CookiePath: "/", CookieHTTPOnly: true,
		CookieSameSite: http.SameSiteLaxMode,
	}
	plain := middleware.CSRFWithConfig(cfg)
	cfg.CookieSecure = true
	secure := middleware.CSRFWithConfig(cfg)
	return func(next echo.HandlerFunc) echo.HandlerFunc {
		p, sec := plain(next), secure(next)
		return func(c echo.Context) error {
			if s.secureRequest(c) {
				return sec(c)
			}
			return p(c)
		}
	}
}

// loginLimiter limits sign-in attempts per client address (c.RealIP:
// the connection's address, or the X-Forwarded-For client of a trusted
// proxy; setProxyTrust).
func loginLimiter() echo.MiddlewareFunc {
	return middleware.RateLimiterWithConfig(middleware.RateLimiterConfig{
		Skipper: func(c echo.Context) bool { return c.Request().Method == http.MethodGet },
		Store: middleware.NewRateLimiterMemoryStoreWithConfig(middleware.RateLimiterMemoryStoreConfig{
			Rate: rate.Limit(0.5), Burst: 10, ExpiresIn: 10 * time.Minute}),
		DenyHandler: func(c echo.Context, _ string, _ error) error {
			return echo.NewHTTPError(http.StatusTooManyRequests, "too many sign-in attempts: wait a minute and try again")
		},
	})
}

// render writes a templ component with status code, through a buffer so
// that a failing component never leaves half a page.
func render(c echo.Context, code int, comp templ.Component) error {
	var buf bytes.Buffer
	if err := comp.Render(c.Request().Context(), &buf); err != nil {
		return err
	}
	return c.HTMLBlob(code, buf.Bytes())
}

// layout returns the page frame for the current request.
func (s *Server) layout(c echo.Context, title, current string) views.LayoutProps {
	p := views.LayoutProps{Title: title, Current: current, Version: diag.EngineVersion}
	if tok, ok := c.Get(middleware.DefaultCSRFConfig.ContextKey).(string); ok {
		p.CSRF = tok
	}
	if u := currentUser(c); u != nil {
		p.User = &views.UserView{Name: u.Name, Role: string(u.Role), CanEdit: u.Role.Can(store.RoleOperator),
			CanReview: u.Role.Can(store.RoleReviewer), IsAdmin: u.Role.Can(store.RoleAdmin)}
	}
	if f, err := c.Cookie("flash"); err == nil && f.Value != "" {
		if msg, err := url.QueryUnescape(f.Value); err == nil {
			p.Flash = msg
		}
		c.SetCookie(&http.Cookie{Name: "flash", Value: "", Path: "/", MaxAge: -1})
	}
	return p
}

// flash sets a one-time message shown on the next page.
func flash(c echo.Context, msg string) {
	sec, _ := c.Get(ctxSecureCookies).(bool)
	c.SetCookie(&http.Cookie{Name: "flash", Value: url.QueryEscape(msg), Path: "/", MaxAge: 60, HttpOnly: true,
		SameSite: http.SameSiteLaxMode, Secure: sec})
}

// ctxSecureCookies is the context key of secureRequest's answer (set by
// pageGuard) for helpers without the Server.
const ctxSecureCookies = "secure_cookies"

// userError is an error whose message is safe to show.
type userError struct {
	code int
	msg  string
}

func (e *userError) Error() string { return e.msg }

// badRequest returns a 400 (or the given code) with a message for the user.
func badRequest(format string, a ...any) error {
	return &userError{http.StatusBadRequest, sprintf(format, a...)}
}

// handleError is the one place that turns errors into responses: JSON for
// the API, an HTML page otherwise. Internal errors are logged and shown
// only as "internal error".
func (s *Server) handleError(err error, c echo.Context) {
	if c.Response().Committed {
		return
	}
	code, msg := http.StatusInternalServerError, "internal error"
	var he *echo.HTTPError
	var ue *userError
	var ne *diag.NumericError
	var me *mset.Error
	switch {
	case errors.As(err, &ue):
		code, msg = ue.code, ue.msg
	case errors.As(err, &ne), errors.As(err, &me):
		// Input the analysis cannot use (a value out of range, a
		// measurement set that is too deep or repeats a key): the
		// message names the line and the value.
		code, msg = http.StatusUnprocessableEntity, strings.TrimPrefix(err.Error(), "diag: ")
	case errors.As(err, &he):
		code = he.Code
		if m, ok := he.Message.(string); ok {
			msg = m
		} else {
			msg = http.StatusText(code)
		}
	case errors.Is(err, store.ErrNotFound):
		code, msg = http.StatusNotFound, "not found"
	case errors.Is(err, store.ErrInvalid), errors.Is(err, store.ErrConflict):
		code, msg = http.StatusBadRequest, strings.TrimPrefix(err.Error(), "store: ")
		if errors.Is(err, store.ErrConflict) {
			code = http.StatusConflict
		}
	case errors.Is(err, context.Canceled):
		return
	}
	if code >= 500 {
		s.Log.Error("request failed", "method", c.Request().Method, "path", c.Request().URL.Path, "err", err)
	}
	if strings.HasPrefix(c.Request().URL.Path, "/api/") || strings.Contains(c.Request().Header.Get("Accept"), "application/json") {
		_ = c.JSON(code, map[string]string{"error": msg})
		return
	}
	if c.Request().Method == http.MethodHead {
		_ = c.NoContent(code)
		return
	}
	_ = render(c, code, views.ErrorPage(views.ErrorProps{Layout: s.layout(c, http.StatusText(code), ""), Status: code, Message: msg}))
}
