package server

import (
	"errors"
	"fmt"
	"net/http"
	"strings"

	"github.com/labstack/echo/v4"

	"glowlog/store"
	"glowlog/views"
)

var roleNames = []string{string(store.RoleViewer), string(store.RoleOperator), string(store.RoleReviewer), string(store.RoleAdmin)}

func (s *Server) adminUsersProps(c echo.Context) (views.AdminUsersProps, error) {
	p := views.AdminUsersProps{Layout: s.layout(c, "Accounts", "admin"), Roles: roleNames, NewRole: string(store.RoleOperator)}
	users, err := s.DB.Users(c.Request().Context())
	if err != nil {
		return p, err
	}
	me := currentUser(c).ID
	for _, u := range users {
		p.Users = append(p.Users, views.UserRow{ID: u.ID, Name: u.Name, Role: string(u.Role), Created: fmtTime(u.CreatedAt),
			Disabled: u.Disabled, Self: u.ID == me})
	}
	return p, nil
}

func (s *Server) showUsers(c echo.Context) error {
	p, err := s.adminUsersProps(c)
	if err != nil {
		return err
	}
	return render(c, http.StatusOK, views.AdminUsers(p))
}

// newUserForm is the admin's new-account form.
type newUserForm struct {
	Name     string `form:"name"`
	Role     string `form:"role"`
	Password string `form:"password"`
}

func (s *Server) createUserForm(c echo.Context) error {
	f := newUserForm{Name: strings.TrimSpace(c.FormValue("name")), Role: c.FormValue("role"), Password: c.FormValue("password")}
	fail := func(msg string) error {
		p, err := s.adminUsersProps(c)
		if err != nil {
			return err
		}
		p.NewName, p.NewRole, p.FormError = f.Name, f.Role, msg
		return render(c, http.StatusBadRequest, views.AdminUsers(p))
	}
	if f.Name == "" || len(f.Name) > 64 {
		return fail("user name: give 1–64 characters")
	}
	role, err := store.ParseRole(f.Role)
	if err != nil {
		return fail("role: choose viewer, operator, reviewer or admin")
	}
	if msg := PasswordProblem(f.Name, f.Password); msg != "" {
		return fail("initial password: " + msg)
	}
	hash, err := HashPassword(f.Password)
	if err != nil {
		return err
	}
	if _, err := s.DB.CreateUser(c.Request().Context(), f.Name, role, hash); err != nil {
		if errors.Is(err, store.ErrConflict) {
			return fail("user name: “" + f.Name + "” is taken")
		}
		if errors.Is(err, store.ErrInvalid) {
			return fail(PlainStoreError(err))
		}
		return err
	}
	flash(c, "Account "+f.Name+" created as "+string(role)+".")
	return c.Redirect(http.StatusSeeOther, "/admin/users")
}

// setUserRole changes a role; the last admin cannot be demoted.
func (s *Server) setUserRole(c echo.Context) error {
	id, err := pathID(c, "uid")
	if err != nil {
		return err
	}
	role, err := store.ParseRole(c.FormValue("role"))
	if err != nil {
		return badRequest("role: choose viewer, operator, reviewer or admin")
	}
	ctx := c.Request().Context()
	target, err := s.DB.UserByID(ctx, id)
	if err != nil {
		return err
	}
	if target.Role == store.RoleAdmin && role != store.RoleAdmin && !target.Disabled {
		admins, err := s.enabledAdmins(c)
		if err != nil {
			return err
		}
		if admins <= 1 {
			return &userError{http.StatusConflict, "“" + target.Name + "” is the last admin: make another account admin first"}
		}
	}
	if err := s.DB.SetUserRole(ctx, id, role); err != nil {
		return err
	}
	flash(c, target.Name+" is now "+string(role)+".")
	return c.Redirect(http.StatusSeeOther, "/admin/users")
}

// setUserDisabled disables (disabled=1) or re-enables (disabled=0) an
// account. Disabling ends its sessions and stops its API tokens at once;
// an admin cannot disable their own account, nor the last enabled admin.
func (s *Server) setUserDisabled(c echo.Context) error {
	id, err := pathID(c, "uid")
	if err != nil {
		return err
	}
	var disable bool
	switch c.FormValue("disabled") {
	case "1":
		disable = true
	case "0":
	default:
		return badRequest("disabled: give 1 (disable) or 0 (enable)")
	}
	ctx := c.Request().Context()
	target, err := s.DB.UserByID(ctx, id)
	if err != nil {
		return err
	}
	if disable {
		if target.ID == currentUser(c).ID {
			return &userError{http.StatusConflict, "you cannot disable your own account"}
		}
		if target.Role == store.RoleAdmin && !target.Disabled {
			n, err := s.enabledAdmins(c)
			if err != nil {
				return err
			}
			if n <= 1 {
				return &userError{http.StatusConflict, "“" + target.Name + "” is the last enabled admin: make another account admin first"}
			}
		}
	}
	if err := s.DB.SetUserDisabled(ctx, id, disable); err != nil {
		return err
	}
	if disable {
		flash(c, target.Name+" is disabled: their sessions ended and their API tokens stopped working.")
	} else {
		flash(c, target.Name+" is enabled again: they can sign in, and their unrevoked API tokens work again.")
	}
	return c.Redirect(http.StatusSeeOther, "/admin/users")
}

// endUserSessions signs a user out everywhere (their API tokens are kept).
func (s *Server) endUserSessions(c echo.Context) error {
	id, err := pathID(c, "uid")
	if err != nil {
		return err
	}
	ctx := c.Request().Context()
	target, err := s.DB.UserByID(ctx, id)
	if err != nil {
		return err
	}
	n, err := s.DB.EndSessions(ctx, id)
	if err != nil {
		return err
	}
	flash(c, fmt.Sprintf("Ended %d session(s) of %s.", n, target.Name))
	return c.Redirect(http.StatusSeeOther, "/admin/users")
}

func (s *Server) enabledAdmins(c echo.Context) (int, error) {
	users, err := s.DB.Users(c.Request().Context())
	if err != nil {
		return 0, err
	}
	n := 0
	for _, u := range users {
		if u.Role == store.RoleAdmin && !u.Disabled {
			n++
		}
	}
	return n, nil
}

// PlainStoreError strips the store's prefixes from a user-facing error
// (the web's forms and the commands show it).
func PlainStoreError(err error) string {
	m := err.Error()
	for _, p := range []string{"store: invalid: ", "store: conflict: "} {
		m = strings.TrimPrefix(m, p)
	}
	return m
}
