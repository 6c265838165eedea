package server

import (
	"fmt"
	"net/http"

	"github.com/labstack/echo/v4"

	"glowlog/views"
)

// showReport handles GET /runs/:id/report: one printable page with the
// run's conditions, the selected version's results, figures, warnings,
// provenance and the review state.
func (s *Server) showReport(c echo.Context) error {
	p, err := s.loadRunPage(c)
	if err != nil {
		return err
	}
	base := fmt.Sprintf("/runs/%d", p.Run.ID)
	props := views.RunReportProps{
		Layout:   s.layout(c, "Report: "+p.Run.Title, "runs"),
		Header:   runHeader(p.Run),
		BackHref: base + p.query(),
	}
	props.Conditions, props.Spectrometer = conditionRows(p.Run)
	if p.Analysis != nil {
		props.Version = versionInfo(p.Analysis)
		props.Series = seriesRows(base, p)
		if r := p.selected(); r != nil {
			props.Result = resultView(base, p, r, true)
			if props.Result.Whole = wholeFitView(base, p, r, 0, 0, true); props.Result.Whole != nil {
				props.Result.Whole.Open = true
				props.Result.Whole.Zoom = nil
			}
		}
	}
	if p.Run.SignedOffBy != nil {
		if u, err := s.DB.UserByID(c.Request().Context(), *p.Run.SignedOffBy); err == nil {
			props.SignedOffBy = u.Name
		} else {
			props.SignedOffBy = fmt.Sprintf("user #%d", *p.Run.SignedOffBy)
		}
	}
	return render(c, http.StatusOK, views.RunReport(props))
}
