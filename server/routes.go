package server

import (
	"net/http"

	"github.com/labstack/echo/v4"

	"glowlog/static"
	"glowlog/store"
)

// routes registers every route of the application.
func (s *Server) routes() {
	e := s.Echo
	e.GET("/healthz", s.healthz)
	e.GET("/static/*", echo.WrapHandler(http.StripPrefix("/static/", staticHandler(static.FS))))

	// JSON API: bearer tokens, no CSRF (no cookies are used).
	api := e.Group("/api/v1", requireRole(store.RoleViewer), apiContentType)
	api.GET("/runs", s.apiListRuns)
	api.GET("/runs/:id", s.apiGetRun)
	api.GET("/trends", s.apiTrends)
	api.POST("/runs", s.apiCreateRun, requireRole(store.RoleOperator))
	api.POST("/runs/:id/measurements", s.apiAddMeasurement, requireRole(store.RoleOperator))

	// HTML pages: CSRF on every form.
	h := e.Group("", s.csrf())
	h.GET("/", func(c echo.Context) error { return c.Redirect(http.StatusSeeOther, "/board") })
	h.GET("/login", s.showLogin)
	h.POST("/login", s.login, loginLimiter(), s.auditSignIn)
	h.POST("/logout", s.logout)
	h.GET("/safety", s.showSafety)

	v := h.Group("", requireRole(store.RoleViewer))
	v.GET("/runs", s.listRuns)
	v.GET("/runs.csv", s.exportRuns)
	v.GET("/runs/:id", s.showRun)
	v.GET("/runs/:id/report", s.showReport)
	v.GET("/runs/:id/analysis.json", s.downloadAnalysisJSON)
	v.GET("/runs/:id/lines.csv", s.downloadLinesCSV)
	v.GET("/runs/:id/boltzmann.svg", s.figureBoltzmann)
	v.GET("/runs/:id/window.svg", s.figureWindow)
	v.GET("/runs/:id/spectrum.svg", s.figureSpectrum)
	v.GET("/runs/:id/whole.svg", s.figureWhole)
	v.GET("/trends", s.showTrends)
	v.GET("/trends.csv", s.exportTrends)
	v.GET("/planner", s.showPlanner)
	v.GET("/account", s.showAccount)
	v.POST("/account/tokens", s.createToken)
	v.POST("/account/tokens/:tid/revoke", s.revokeToken)
	v.POST("/account/password", s.changePassword)
	v.GET("/jobs/:jid", s.showJob)

	o := h.Group("", requireRole(store.RoleOperator))
	o.GET("/runs/new", s.newRun)
	o.POST("/runs", s.createRun)
	o.GET("/runs/:id/edit", s.editRun)
	o.POST("/runs/:id", s.updateRun)
	o.POST("/runs/:id/attachments", s.uploadAttachment)
	o.POST("/runs/:id/reanalyze", s.reanalyzeRun)
	o.POST("/runs/:id/submit", s.submitRun)
	o.POST("/runs/:id/comments", s.addComment)

	r := h.Group("", requireRole(store.RoleReviewer))
	r.GET("/review", s.showReviewQueue)
	r.POST("/runs/:id/signoff", s.signOffRun)
	r.POST("/runs/:id/return", s.returnRun)
	r.POST("/runs/:id/reopen", s.reopenRun)
	r.POST("/jobs/reanalyze", s.startBulkReanalysis)

	a := h.Group("/admin", requireRole(store.RoleAdmin))
	a.GET("/users", s.showUsers)
	a.POST("/users", s.createUserForm)
	a.POST("/users/:uid/role", s.setUserRole)
	a.GET("/audit", s.showAudit)
	a.GET("/audit.csv", s.exportAudit)
	a.POST("/users/:uid/disabled", s.setUserDisabled)
	a.POST("/users/:uid/sessions/end", s.endUserSessions)

	// Chamber board (the process engineer's home) and chamber events.
	v.GET("/board", s.showBoard)
	o.POST("/chamber-events", s.logChamberEvent)

	// Keep last. A group with middleware registers catch-all routes that
	// run its middleware, so an unknown path would answer with the last
	// group's role check ("needs the reviewer role"); unknown paths are
	// 404 for everyone.
	for _, p := range []string{"/*", "/api/v1", "/api/v1/*", "/admin", "/admin/*"} {
		e.RouteNotFound(p, echo.NotFoundHandler)
	}
}

func (s *Server) healthz(c echo.Context) error {
	if err := s.DB.Ping(c.Request().Context()); err != nil {
		return c.String(http.StatusServiceUnavailable, "database unreachable\n")
	}
	return c.String(http.StatusOK, "ok\n")
}
