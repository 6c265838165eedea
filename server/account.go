package server

import (
	"net/http"
	"strings"
	"time"

	"github.com/labstack/echo/v4"

	"glowlog/views"
)

// accountProps builds the account page for the current user.
func (s *Server) accountProps(c echo.Context) (views.AccountProps, error) {
	u := currentUser(c)
	p := views.AccountProps{Layout: s.layout(c, "Your account", ""), Name: u.Name, Role: string(u.Role),
		MustChangePassword: u.MustChangePassword}
	toks, err := s.DB.Tokens(c.Request().Context(), u.ID)
	if err != nil {
		return p, err
	}
	for _, t := range toks {
		row := views.TokenRow{ID: t.ID, Name: t.Name, Created: fmtTime(t.CreatedAt)}
		if t.LastUsedAt != nil {
			row.LastUsed = fmtTime(*t.LastUsedAt)
		}
		if t.RevokedAt != nil {
			row.Revoked = fmtTime(*t.RevokedAt)
		}
		p.Tokens = append(p.Tokens, row)
	}
	return p, nil
}

func fmtTime(t time.Time) string { return t.UTC().Format("2006-01-02 15:04") }

func (s *Server) showAccount(c echo.Context) error {
	p, err := s.accountProps(c)
	if err != nil {
		return err
	}
	if h := c.QueryParam("new_token"); h != "" {
		if tok, name, ok := s.newTokens.take(h, currentUser(c).ID, time.Now()); ok {
			p.NewToken, p.NewName = tok, name
		}
	}
	return render(c, http.StatusOK, views.Account(p))
}

// createToken makes a new API token and answers 303 to the account page,
// which shows it once: the redirect carries only a one-time handle
// (tokenStash), never the token, and no cookie holds it.
func (s *Server) createToken(c echo.Context) error {
	name := strings.TrimSpace(c.FormValue("name"))
	if name == "" || len([]rune(name)) > 100 {
		p, err := s.accountProps(c)
		if err != nil {
			return err
		}
		p.TokenError = "token name: give 1–100 characters, e.g. “acquisition PC, bay 2”"
		return render(c, http.StatusBadRequest, views.Account(p))
	}
	tok, h := NewToken()
	if _, err := s.DB.CreateToken(c.Request().Context(), currentUser(c).ID, name, h); err != nil {
		return err
	}
	handle := s.newTokens.put(currentUser(c).ID, tok, name, time.Now())
	return c.Redirect(http.StatusSeeOther, "/account?new_token="+handle+"#new-token")
}

func (s *Server) revokeToken(c echo.Context) error {
	id, err := pathID(c, "tid")
	if err != nil {
		return err
	}
	if err := s.DB.RevokeToken(c.Request().Context(), currentUser(c).ID, id); err != nil {
		return err
	}
	flash(c, "Token revoked.")
	return c.Redirect(http.StatusSeeOther, "/account")
}

// changePassword replaces the current user's password after checking the
// current one (and PasswordProblem); all sessions end, so the user signs
// in again; with the "revoke_tokens" box ticked all their API tokens are
// revoked too. It clears the must-change-password flag.
func (s *Server) changePassword(c echo.Context) error {
	u := currentUser(c)
	cur, next := c.FormValue("current"), c.FormValue("new")
	fail := func(msg string) error {
		p, err := s.accountProps(c)
		if err != nil {
			return err
		}
		p.PasswordError = msg
		return render(c, http.StatusBadRequest, views.Account(p))
	}
	if !CheckPassword(u.PasswordHash, cur) {
		return fail("the current password is wrong")
	}
	if msg := PasswordProblem(u.Name, next); msg != "" {
		return fail(msg)
	}
	if next == cur {
		return fail("the new password must differ from the current one")
	}
	hash, err := HashPassword(next)
	if err != nil {
		return err
	}
	revoke := c.FormValue("revoke_tokens") != ""
	if err := s.DB.ChangePassword(c.Request().Context(), u.ID, hash, revoke); err != nil {
		return err
	}
	c.SetCookie(&http.Cookie{Name: sessionCookie, Value: "", Path: "/", MaxAge: -1, HttpOnly: true, Secure: s.secureRequest(c)})
	if revoke {
		flash(c, "Password changed and all your API tokens revoked: sign in with the new password.")
	} else {
		flash(c, "Password changed: sign in with the new password.")
	}
	return c.Redirect(http.StatusSeeOther, "/login")
}
