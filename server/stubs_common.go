package server

import (
	"net/http"

	"github.com/labstack/echo/v4"
)

// notBuilt answers routes whose handlers are not written yet. The
// stubs_*.go files list them by owner; each disappears when empty.
func notBuilt(c echo.Context) error {
	return echo.NewHTTPError(http.StatusNotImplemented, "this page is not built yet")
}
