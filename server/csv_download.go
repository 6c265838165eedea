package server

import (
	"encoding/csv"
	"net/http"

	"github.com/labstack/echo/v4"
)

// csvAttachment starts a streamed CSV download named filename (200, UTF-8)
// and returns the writer for its rows.
func csvAttachment(c echo.Context, filename string) *csv.Writer {
	h := c.Response().Header()
	h.Set(echo.HeaderContentType, "text/csv; charset=utf-8")
	h.Set(echo.HeaderContentDisposition, `attachment; filename="`+filename+`"`)
	c.Response().WriteHeader(http.StatusOK)
	return csv.NewWriter(c.Response())
}
