package server

import (
	"context"

	"github.com/labstack/echo/v4"
)

func (s *Server) showTrends(c echo.Context) error          { return notBuilt(c) }
func (s *Server) exportTrends(c echo.Context) error        { return notBuilt(c) }
func (s *Server) showJob(c echo.Context) error             { return notBuilt(c) }
func (s *Server) submitRun(c echo.Context) error           { return notBuilt(c) }
func (s *Server) addComment(c echo.Context) error          { return notBuilt(c) }
func (s *Server) showReviewQueue(c echo.Context) error     { return notBuilt(c) }
func (s *Server) signOffRun(c echo.Context) error          { return notBuilt(c) }
func (s *Server) returnRun(c echo.Context) error           { return notBuilt(c) }
func (s *Server) startBulkReanalysis(c echo.Context) error { return notBuilt(c) }

// JobRunner runs background jobs (bulk reanalysis).
type JobRunner struct{ s *Server }

// NewJobRunner returns a runner for s.
func NewJobRunner(s *Server) *JobRunner { return &JobRunner{s: s} }

// Start starts the job workers.
func (j *JobRunner) Start(ctx context.Context) {}

// Wait waits for running jobs to stop.
func (j *JobRunner) Wait() {}
