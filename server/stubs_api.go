package server

import (
	"github.com/labstack/echo/v4"
)

func (s *Server) showAccount(c echo.Context) error    { return notBuilt(c) }
func (s *Server) createToken(c echo.Context) error    { return notBuilt(c) }
func (s *Server) revokeToken(c echo.Context) error    { return notBuilt(c) }
func (s *Server) showUsers(c echo.Context) error      { return notBuilt(c) }
func (s *Server) createUserForm(c echo.Context) error { return notBuilt(c) }
func (s *Server) setUserRole(c echo.Context) error    { return notBuilt(c) }
