package server

import "github.com/labstack/echo/v4"

func (s *Server) showRun(c echo.Context) error              { return notBuilt(c) }
func (s *Server) showReport(c echo.Context) error           { return notBuilt(c) }
func (s *Server) downloadAnalysisJSON(c echo.Context) error { return notBuilt(c) }
func (s *Server) downloadLinesCSV(c echo.Context) error     { return notBuilt(c) }
func (s *Server) figureBoltzmann(c echo.Context) error      { return notBuilt(c) }
func (s *Server) figureWindow(c echo.Context) error         { return notBuilt(c) }
