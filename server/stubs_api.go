package server

import (
	"context"
	"io"

	"github.com/labstack/echo/v4"
)

func (s *Server) apiListRuns(c echo.Context) error       { return notBuilt(c) }
func (s *Server) apiGetRun(c echo.Context) error         { return notBuilt(c) }
func (s *Server) apiTrends(c echo.Context) error         { return notBuilt(c) }
func (s *Server) apiCreateRun(c echo.Context) error      { return notBuilt(c) }
func (s *Server) apiAddMeasurement(c echo.Context) error { return notBuilt(c) }
func (s *Server) showAccount(c echo.Context) error       { return notBuilt(c) }
func (s *Server) createToken(c echo.Context) error       { return notBuilt(c) }
func (s *Server) revokeToken(c echo.Context) error       { return notBuilt(c) }
func (s *Server) showUsers(c echo.Context) error         { return notBuilt(c) }
func (s *Server) createUserForm(c echo.Context) error    { return notBuilt(c) }
func (s *Server) setUserRole(c echo.Context) error       { return notBuilt(c) }

// UserCommand runs "glowlog user add NAME --role ROLE" (password on stdin).
func UserCommand(args []string, stdin io.Reader, stdout, stderr io.Writer) int { return ExitError }

// TokenCommand runs "glowlog token create NAME" (prints a new token once).
func TokenCommand(args []string, stdout, stderr io.Writer) int { return ExitError }

// DemoOptions sizes the demo scenario.
type DemoOptions struct{ Runs int }

// SeedDemo fills an empty database with the demo scenario.
func SeedDemo(ctx context.Context, s *Server, adminID int64, opt DemoOptions) error { return nil }
