package server

import (
	"context"
	"errors"
	"fmt"
	"net/http"
	"net/url"
	"slices"
	"strconv"
	"strings"
	"time"

	"github.com/a-h/templ"
	"github.com/labstack/echo/v4"

	"glowlog/store"
	"glowlog/views"
)

// The audit trail's pages: the actor of every request's writes (set after
// loadUser), the History section of the run page, the admin page
// /admin/audit with filters, and its CSV export /admin/audit.csv. The
// records themselves are written by the database (store/audit.go).

// auditActor puts the request's actor — the signed-in or token user, and
// whether it came through the web pages or the API — into the request's
// context, so that every write the request makes is recorded with it.
func (s *Server) auditActor(next echo.HandlerFunc) echo.HandlerFunc {
	return func(c echo.Context) error {
		a := store.Actor{Via: store.ViaWeb}
		if strings.HasPrefix(c.Request().URL.Path, "/api/") {
			a.Via = store.ViaAPI
		}
		if u := currentUser(c); u != nil {
			a.UserID, a.Name = u.ID, u.Name
		}
		r := c.Request()
		c.SetRequest(r.WithContext(store.WithActor(r.Context(), a)))
		return next(c)
	}
}

// jobActor is the actor of a background job's writes: the user who
// started it.
func jobActor(ctx context.Context, job store.Job) context.Context {
	a := store.Actor{Via: store.ViaJob}
	if job.CreatedBy != nil {
		a.UserID, a.Name = *job.CreatedBy, job.CreatedByName
	}
	return store.WithActor(ctx, a)
}

// auditSignIn records failed sign-ins (the name tried and the client
// address; never the password). Successful ones are recorded by the
// database when the session is stored.
func (s *Server) auditSignIn(next echo.HandlerFunc) echo.HandlerFunc {
	return func(c echo.Context) error {
		err := next(c)
		status := c.Response().Status
		if !c.Response().Committed {
			var he *echo.HTTPError
			var ue *userError
			switch {
			case errors.As(err, &he):
				status = he.Code
			case errors.As(err, &ue):
				status = ue.code
			}
		}
		if status == http.StatusUnauthorized {
			name := strings.TrimSpace(c.FormValue("name"))
			if r := []rune(name); len(r) > 64 {
				name = string(r[:64]) + "…"
			}
			if e := s.DB.RecordAuditEvent(c.Request().Context(), store.AuditSession, "sign_in_failed",
				map[string]any{"name": name, "address": c.RealIP()}); e != nil {
				s.Log.Error("audit: failed sign-in", "err", e)
			}
		}
		return err
	}
}

// auditLabels are the plain words for actions.
var auditLabels = map[string]string{
	"insert": "created", "update": "changed", "delete": "deleted",
	"sign_in": "signed in", "session_ended": "session ended", "sign_in_failed": "failed sign-in",
	"log_started": "audit trail started", "migration": "schema migrated",
}

// auditOpenFields is the most fields of a created or deleted record shown
// unfolded.
const auditOpenFields = 6

// maxAuditValue bounds one shown value (the CSV has them whole).
const maxAuditValue = 300

func cutAudit(s string) string {
	if r := []rune(s); len(r) > maxAuditValue {
		return string(r[:maxAuditValue]) + "…"
	}
	return s
}

// auditRow turns an entry into its display row.
func auditRow(e store.AuditEntry) views.AuditRow {
	r := views.AuditRow{ID: e.ID, At: e.At.UTC().Format(time.RFC3339), Via: e.Via, Action: auditLabels[e.Action]}
	if r.Action == "" {
		r.Action = e.Action
	}
	switch {
	case e.ActorName != "":
		r.Actor = e.ActorName
	case e.ActorID != nil:
		r.Actor = fmt.Sprintf("user #%d", *e.ActorID)
	case e.Via != "":
		r.Actor, r.Via = e.Via, ""
	default:
		r.Actor = "system"
	}
	r.Record = strings.ReplaceAll(e.Kind, "_", " ")
	if e.RowID != nil {
		r.Record += fmt.Sprintf(" #%d", *e.RowID)
	}
	if e.RunID != nil {
		r.RunID = *e.RunID
		r.RunHref = fmt.Sprintf("/runs/%d#history", *e.RunID)
	}
	for _, ch := range e.Changes() {
		r.Changes = append(r.Changes, views.AuditChangeView{Field: ch.Field, Before: cutAudit(ch.Before), After: cutAudit(ch.After)})
	}
	r.Collapse = (e.Before == "" || e.After == "") && len(r.Changes) > auditOpenFields
	return r
}

// runHistoryLimit is how many entries the run page shows.
var runHistoryLimit = 100

// runHistory is the run page's History section: the run's newest
// entries, and for admins a link to all of them on the audit page.
func (s *Server) runHistory(c echo.Context, runID int64) (templ.Component, error) {
	es, err := s.DB.AuditLog(c.Request().Context(), store.AuditFilter{RunID: runID, Limit: runHistoryLimit + 1})
	if err != nil {
		return nil, err
	}
	more := len(es) > runHistoryLimit
	if more {
		es = es[:runHistoryLimit]
	}
	rows := make([]views.AuditRow, 0, len(es))
	for _, e := range es {
		rows = append(rows, auditRow(e))
	}
	all := ""
	if u := currentUser(c); u != nil && u.Role.Can(store.RoleAdmin) {
		all = "/admin/audit?run=" + strconv.FormatInt(runID, 10)
	}
	return views.RunHistory(rows, more, all), nil
}

// auditForm is the admin page's (and the export's) filter.
type auditForm struct {
	Run, Actor, Kind, Action, From, To, Before string
}

func bindAuditForm(c echo.Context) auditForm {
	q := c.QueryParam
	return auditForm{Run: strings.TrimSpace(q("run")), Actor: strings.TrimSpace(q("actor")), Kind: q("kind"),
		Action: q("action"), From: strings.TrimSpace(q("from")), To: strings.TrimSpace(q("to")), Before: q("before")}
}

// auditDate reads a date (YYYY-MM-DD, UTC) or an RFC 3339 time.
func auditDate(field, v string) (time.Time, bool, error) {
	if v == "" {
		return time.Time{}, false, nil
	}
	if t, err := time.Parse("2006-01-02", v); err == nil {
		return t, true, nil
	}
	if t, err := time.Parse(time.RFC3339, v); err == nil {
		return t, false, nil
	}
	return time.Time{}, false, badRequest("%s: give a date as YYYY-MM-DD (or an RFC 3339 time), got %q", field, v)
}

// filter checks the form and returns the store filter.
func (f auditForm) filter() (store.AuditFilter, error) {
	var af store.AuditFilter
	if f.Run != "" {
		n, err := strconv.ParseInt(strings.TrimPrefix(f.Run, "#"), 10, 64)
		if err != nil || n <= 0 {
			return af, badRequest("run: give a run number (a positive whole number), got %q", f.Run)
		}
		af.RunID = n
	}
	if len(f.Actor) > 64 {
		return af, badRequest("by: a user name has at most 64 characters")
	}
	af.Actor = f.Actor
	if f.Kind != "" && !slices.Contains(store.AuditKinds(), f.Kind) {
		return af, badRequest("record: unknown kind %q (one of %s)", f.Kind, strings.Join(store.AuditKinds(), ", "))
	}
	af.Kind = f.Kind
	if f.Action != "" && !slices.Contains(store.AuditActions(), f.Action) {
		return af, badRequest("action: unknown action %q (one of %s)", f.Action, strings.Join(store.AuditActions(), ", "))
	}
	af.Action = f.Action
	from, _, err := auditDate("from", f.From)
	if err != nil {
		return af, err
	}
	to, day, err := auditDate("to", f.To)
	if err != nil {
		return af, err
	}
	if day {
		to = to.AddDate(0, 0, 1) // a date "to" includes that whole day
	}
	if !from.IsZero() && !to.IsZero() && !to.After(from) {
		return af, badRequest("from %s is after to %s", f.From, f.To)
	}
	af.From, af.To = from, to
	if f.Before != "" {
		n, err := strconv.ParseInt(f.Before, 10, 64)
		if err != nil || n <= 0 {
			return af, badRequest("before: give an entry number, got %q", f.Before)
		}
		af.BeforeID = n
	}
	return af, nil
}

// query returns the filter as a query string (without the page).
func (f auditForm) query() url.Values {
	v := url.Values{}
	for k, s := range map[string]string{"run": f.Run, "actor": f.Actor, "kind": f.Kind, "action": f.Action, "from": f.From, "to": f.To} {
		if s != "" {
			v.Set(k, s)
		}
	}
	return v
}

// auditPageSize is how many entries the admin page shows at once.
const auditPageSize = 200

// showAudit is GET /admin/audit.
func (s *Server) showAudit(c echo.Context) error {
	f := bindAuditForm(c)
	af, err := f.filter()
	if err != nil {
		return err
	}
	af.Limit = auditPageSize + 1
	es, err := s.DB.AuditLog(c.Request().Context(), af)
	if err != nil {
		return err
	}
	p := views.AdminAuditProps{Layout: s.layout(c, "Audit trail", "audit"), Run: f.Run, Actor: f.Actor, Kind: f.Kind,
		Action: f.Action, From: f.From, To: f.To, Kinds: store.AuditKinds(), Actions: store.AuditActions(), Limit: auditPageSize}
	q := f.query()
	p.CSVHref = "/admin/audit.csv"
	if len(q) > 0 {
		p.CSVHref += "?" + q.Encode()
	}
	if len(es) > auditPageSize {
		es = es[:auditPageSize]
		q.Set("before", strconv.FormatInt(es[len(es)-1].ID, 10))
		p.OlderHref = "/admin/audit?" + q.Encode()
	}
	for _, e := range es {
		p.Rows = append(p.Rows, auditRow(e))
	}
	return render(c, http.StatusOK, views.AdminAudit(p))
}

var auditCSVHeader = []string{"id", "time_utc", "actor_id", "actor", "via", "kind", "record_id", "run_id", "action", "before", "after"}

// exportAudit is GET /admin/audit.csv: every entry matching the page's
// filters, newest first, times in RFC 3339 (UTC), before and after as the
// stored JSON objects.
func (s *Server) exportAudit(c echo.Context) error {
	f := bindAuditForm(c)
	af, err := f.filter()
	if err != nil {
		return err
	}
	w := csvAttachment(c, "glowlog-audit.csv")
	w.UseCRLF = true
	if err := w.Write(auditCSVHeader); err != nil {
		return err
	}
	id := func(p *int64) string {
		if p == nil {
			return ""
		}
		return strconv.FormatInt(*p, 10)
	}
	err = s.DB.EachAudit(c.Request().Context(), af, func(e store.AuditEntry) error {
		return w.Write([]string{strconv.FormatInt(e.ID, 10), e.At.UTC().Format(time.RFC3339), id(e.ActorID), csvText(e.ActorName),
			e.Via, e.Kind, id(e.RowID), id(e.RunID), e.Action, csvText(e.Before), csvText(e.After)})
	})
	w.Flush()
	if err == nil {
		err = w.Error()
	}
	if err != nil {
		// the header is sent: the truncated file ends with the reason
		s.Log.Error("audit export", "err", err)
		fmt.Fprintf(c.Response(), "\r\nexport stopped: internal error\r\n")
	}
	return nil
}
