package server

// Handlers not built yet. Each moves to its own file (run_list.go,
// run_show.go, …) when it is written; this file disappears when empty.

import (
	"context"
	"net/http"

	"github.com/labstack/echo/v4"
)

func notBuilt(c echo.Context) error {
	return echo.NewHTTPError(http.StatusNotImplemented, "this page is not built yet")
}

func (s *Server) apiListRuns(c echo.Context) error          { return notBuilt(c) }
func (s *Server) apiGetRun(c echo.Context) error            { return notBuilt(c) }
func (s *Server) apiTrends(c echo.Context) error            { return notBuilt(c) }
func (s *Server) apiCreateRun(c echo.Context) error         { return notBuilt(c) }
func (s *Server) apiAddMeasurement(c echo.Context) error    { return notBuilt(c) }
func (s *Server) showSafety(c echo.Context) error           { return notBuilt(c) }
func (s *Server) listRuns(c echo.Context) error             { return notBuilt(c) }
func (s *Server) exportRuns(c echo.Context) error           { return notBuilt(c) }
func (s *Server) showRun(c echo.Context) error              { return notBuilt(c) }
func (s *Server) showReport(c echo.Context) error           { return notBuilt(c) }
func (s *Server) downloadAnalysisJSON(c echo.Context) error { return notBuilt(c) }
func (s *Server) downloadLinesCSV(c echo.Context) error     { return notBuilt(c) }
func (s *Server) figureBoltzmann(c echo.Context) error      { return notBuilt(c) }
func (s *Server) figureWindow(c echo.Context) error         { return notBuilt(c) }
func (s *Server) showTrends(c echo.Context) error           { return notBuilt(c) }
func (s *Server) exportTrends(c echo.Context) error         { return notBuilt(c) }
func (s *Server) showPlanner(c echo.Context) error          { return notBuilt(c) }
func (s *Server) showAccount(c echo.Context) error          { return notBuilt(c) }
func (s *Server) createToken(c echo.Context) error          { return notBuilt(c) }
func (s *Server) revokeToken(c echo.Context) error          { return notBuilt(c) }
func (s *Server) showJob(c echo.Context) error              { return notBuilt(c) }
func (s *Server) newRun(c echo.Context) error               { return notBuilt(c) }
func (s *Server) createRun(c echo.Context) error            { return notBuilt(c) }
func (s *Server) editRun(c echo.Context) error              { return notBuilt(c) }
func (s *Server) updateRun(c echo.Context) error            { return notBuilt(c) }
func (s *Server) uploadAttachment(c echo.Context) error     { return notBuilt(c) }
func (s *Server) reanalyzeRun(c echo.Context) error         { return notBuilt(c) }
func (s *Server) submitRun(c echo.Context) error            { return notBuilt(c) }
func (s *Server) addComment(c echo.Context) error           { return notBuilt(c) }
func (s *Server) showReviewQueue(c echo.Context) error      { return notBuilt(c) }
func (s *Server) signOffRun(c echo.Context) error           { return notBuilt(c) }
func (s *Server) returnRun(c echo.Context) error            { return notBuilt(c) }
func (s *Server) startBulkReanalysis(c echo.Context) error  { return notBuilt(c) }
func (s *Server) showUsers(c echo.Context) error            { return notBuilt(c) }
func (s *Server) createUserForm(c echo.Context) error       { return notBuilt(c) }
func (s *Server) setUserRole(c echo.Context) error          { return notBuilt(c) }

// JobRunner runs background jobs (bulk reanalysis).
type JobRunner struct{ s *Server }

// NewJobRunner returns a runner for s.
func NewJobRunner(s *Server) *JobRunner { return &JobRunner{s: s} }

// Start starts the job workers.
func (j *JobRunner) Start(ctx context.Context) {}

// Wait waits for running jobs to stop.
func (j *JobRunner) Wait() {}

// DemoOptions sizes the demo scenario.
type DemoOptions struct{ Runs int }

// SeedDemo fills an empty database with the demo scenario.
func SeedDemo(ctx context.Context, s *Server, adminID int64, opt DemoOptions) error { return nil }
