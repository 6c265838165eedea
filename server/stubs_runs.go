package server

import "github.com/labstack/echo/v4"

func (s *Server) listRuns(c echo.Context) error         { return notBuilt(c) }
func (s *Server) exportRuns(c echo.Context) error       { return notBuilt(c) }
func (s *Server) newRun(c echo.Context) error           { return notBuilt(c) }
func (s *Server) createRun(c echo.Context) error        { return notBuilt(c) }
func (s *Server) editRun(c echo.Context) error          { return notBuilt(c) }
func (s *Server) updateRun(c echo.Context) error        { return notBuilt(c) }
func (s *Server) uploadAttachment(c echo.Context) error { return notBuilt(c) }
func (s *Server) reanalyzeRun(c echo.Context) error     { return notBuilt(c) }
