package server

import "github.com/labstack/echo/v4"

func (s *Server) showPlanner(c echo.Context) error { return notBuilt(c) }
func (s *Server) showSafety(c echo.Context) error  { return notBuilt(c) }
