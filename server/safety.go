package server

import (
	"net/http"

	"github.com/labstack/echo/v4"

	"glowlog/views"
)

// showSafety is the public safety page (no sign-in needed).
func (s *Server) showSafety(c echo.Context) error {
	return render(c, http.StatusOK, views.Safety(views.SafetyProps{Layout: s.layout(c, "Safety notes", "safety")}))
}
