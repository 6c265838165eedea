package server

import (
	"context"
	"errors"
	"fmt"
	"net/http"
	"strconv"

	"github.com/labstack/echo/v4"

	"glowlog/store"
	"glowlog/views"
)

const reviewTime = "2006-01-02 15:04"

// runID reads the :id path parameter.
func runIDParam(c echo.Context) (int64, error) {
	id, err := strconv.ParseInt(c.Param("id"), 10, 64)
	if err != nil || id <= 0 {
		return 0, echo.NewHTTPError(http.StatusNotFound, "no such run")
	}
	return id, nil
}

// review applies a review action from a form (field "note") and goes back
// to the run page (or to "next" on this site, e.g. the queue).
func (s *Server) review(c echo.Context, action store.ReviewAction, done string) error {
	id, err := runIDParam(c)
	if err != nil {
		return err
	}
	seen := 0
	if v := c.FormValue("version"); v != "" && action == store.ActionSignOff {
		n, err := strconv.Atoi(v)
		if err != nil || n < 0 {
			return badRequest("version: %q is not an analysis version", v)
		}
		seen = n
	}
	_, err = s.DB.ReviewSeen(c.Request().Context(), id, *currentUser(c), action, c.FormValue("note"), seen)
	if errors.Is(err, store.ErrNotAllowed) {
		return &userError{http.StatusForbidden, trimStore(err)}
	}
	if errors.Is(err, store.ErrConflict) {
		return &userError{http.StatusConflict, trimStore(err)}
	}
	if err != nil {
		return err
	}
	flash(c, done)
	next := fmt.Sprintf("/runs/%d", id)
	if n := c.FormValue("next"); n != "" {
		next = safeNext(n)
	}
	return c.Redirect(http.StatusSeeOther, next)
}

// trimStore removes the store's prefixes from a user-facing store error.
func trimStore(err error) string {
	msg := err.Error()
	for _, p := range []string{"store: conflict: ", "not allowed: "} {
		if len(msg) >= len(p) && msg[:len(p)] == p {
			msg = msg[len(p):]
		}
	}
	return msg
}

// submitRun handles POST /runs/:id/submit: the run's operator (or an
// admin) sends a draft or returned run for review.
func (s *Server) submitRun(c echo.Context) error {
	return s.review(c, store.ActionSubmit, "Run submitted for review.")
}

// signOffRun handles POST /runs/:id/signoff (reviewers, not on their own runs).
func (s *Server) signOffRun(c echo.Context) error {
	return s.review(c, store.ActionSignOff, "Run signed off.")
}

// returnRun handles POST /runs/:id/return (reviewers; a note is required).
func (s *Server) returnRun(c echo.Context) error {
	return s.review(c, store.ActionReturn, "Run returned for rework.")
}

// reopenRun handles POST /runs/:id/reopen (reviewers; a reason is
// required): a signed-off run goes back to "returned for rework", its
// sign-off and approved version are cleared (recorded in the review
// history), and its newest analysis version becomes the one shown.
func (s *Server) reopenRun(c echo.Context) error {
	return s.review(c, store.ActionReopen, "Run reopened: its sign-off is withdrawn and its newest analysis version is shown.")
}

// addComment handles POST /runs/:id/comments (operators and above).
func (s *Server) addComment(c echo.Context) error {
	id, err := runIDParam(c)
	if err != nil {
		return err
	}
	if _, err := s.DB.AddComment(c.Request().Context(), id, currentUser(c).ID, c.FormValue("body")); err != nil {
		return err
	}
	flash(c, "Comment added.")
	return c.Redirect(http.StatusSeeOther, fmt.Sprintf("/runs/%d", id))
}

// runReviewPanel builds the review panel of run r for the current user
// (for the run page).
func (s *Server) runReviewPanel(ctx context.Context, c echo.Context, r store.Run) (views.RunReviewPanelProps, error) {
	p := views.RunReviewPanelProps{RunID: r.ID, Status: r.Status, StatusLabel: store.StatusLabel(r.Status)}
	if tok, ok := c.Get("csrf").(string); ok {
		p.CSRF = tok
	}
	evs, err := s.DB.StatusEvents(ctx, r.ID)
	if err != nil {
		return p, err
	}
	for _, e := range evs {
		ev := views.ReviewEventView{At: e.At.Format(reviewTime), By: e.UserName,
			From: store.StatusLabel(e.From), To: store.StatusLabel(e.To), Note: e.Note}
		switch {
		case e.To == store.StatusSignedOff:
			ev.Version = e.AnalysisVersion
		case e.From == store.StatusSignedOff:
			ev.Version, ev.Reopen = e.AnalysisVersion, true
		}
		p.Events = append(p.Events, ev)
	}
	if r.Status == store.StatusSignedOff && r.SignedOffAt != nil {
		by := ""
		for i := len(evs) - 1; i >= 0; i-- {
			if evs[i].To == store.StatusSignedOff {
				by = evs[i].UserName
				break
			}
		}
		p.SignedOff = fmt.Sprintf("by %s at %s UTC", by, r.SignedOffAt.Format(reviewTime))
	}
	if r.ApprovedVersion != nil {
		p.ApprovedVersion = *r.ApprovedVersion
	}
	p.CurrentVersion = r.AnalysisVersion
	cs, err := s.DB.Comments(ctx, r.ID)
	if err != nil {
		return p, err
	}
	for _, cm := range cs {
		p.Comments = append(p.Comments, views.CommentView{At: cm.CreatedAt.Format(reviewTime), Author: cm.AuthorName, Body: cm.Body})
	}
	u := currentUser(c)
	if u == nil {
		return p, nil
	}
	p.CanComment = u.Role.Can(store.RoleOperator)
	may := func(a store.ReviewAction) (bool, string) { return store.MayReview(a, *u, r.OperatorID) }
	switch r.Status {
	case store.StatusDraft, store.StatusReturned:
		p.CanSubmit, _ = may(store.ActionSubmit)
		p.CanSubmit = p.CanSubmit && u.Role.Can(store.RoleOperator)
	case store.StatusSubmitted:
		var why string
		p.CanSignOff, why = may(store.ActionSignOff)
		if !p.CanSignOff && u.Role.Can(store.RoleReviewer) {
			p.SignOffBlocked = "You " + why[len("you "):]
		}
		p.CanReturn, _ = may(store.ActionReturn)
	case store.StatusSignedOff:
		p.CanReopen, _ = may(store.ActionReopen)
	}
	return p, nil
}

// showReviewQueue handles GET /review: runs awaiting review, oldest
// submission first, and the runs signed off lately.
func (s *Server) showReviewQueue(c echo.Context) error {
	ctx := c.Request().Context()
	q, err := s.DB.ReviewQueue(ctx, 0)
	if err != nil {
		return err
	}
	recent, err := s.DB.RecentlySignedOff(ctx, 20)
	if err != nil {
		return err
	}
	row := func(it store.QueueItem) views.QueueRow {
		r := it.Run
		return views.QueueRow{RunID: r.ID, Title: r.Title, Operator: r.OperatorName, Chamber: orDash(r.ChamberName),
			Recipe: orDash(r.RecipeName), Started: r.StartedAt.Format(reviewTime), At: it.At.Format(reviewTime), By: it.By,
			Texc: withUnit(views.ValueUnc(r.TexcK, r.TexcUncK), "K"), Ne: withUnit(views.ValueUnc(r.NeM3, r.NeUncM3), "m⁻³"),
			Warnings: r.NWarnings}
	}
	p := views.ReviewQueueProps{Layout: s.layout(c, "Review queue", "review")}
	for _, it := range q {
		p.Queue = append(p.Queue, row(it))
	}
	for _, it := range recent {
		p.Recent = append(p.Recent, row(it))
	}
	return render(c, http.StatusOK, views.ReviewQueue(p))
}

func orDash(s string) string {
	if s == "" {
		return "—"
	}
	return s
}

func withUnit(v, unit string) string {
	if v == "—" {
		return v
	}
	return v + " " + unit
}
