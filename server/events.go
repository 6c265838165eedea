package server

import (
	"errors"
	"net/http"
	"regexp"
	"strconv"
	"strings"
	"time"

	"github.com/labstack/echo/v4"

	"glowlog/store"
)

// eventForm is the "log a chamber event" form (board, run page).
type eventForm struct {
	Chamber, At, Kind, Note, Back string
}

// eventBack is where the form may send the user back to: the board or a
// run page (never an address from outside).
var eventBack = regexp.MustCompile(`^/(board|runs/[0-9]{1,18})$`)

// logChamberEvent stores a chamber event and goes back to the page the
// form was on (303, so a refresh does not log it twice).
func (s *Server) logChamberEvent(c echo.Context) error {
	f := eventForm{Chamber: c.FormValue("chamber"), At: c.FormValue("at"), Kind: c.FormValue("kind"),
		Note: c.FormValue("note"), Back: c.FormValue("back")}
	var in store.ChamberEventInput
	var problems []string
	id, err := strconv.ParseInt(strings.TrimSpace(f.Chamber), 10, 64)
	if err != nil || id <= 0 {
		problems = append(problems, "chamber: choose a chamber")
	}
	in.ChamberID = id
	at, err := time.Parse("2006-01-02T15:04", strings.TrimSpace(f.At))
	if err != nil {
		problems = append(problems, "time: "+strconvQuote(f.At)+" is not a date and time like 2026-03-04T09:30 (UTC)")
	} else if at.After(s.DB.Now().Add(24 * time.Hour)) {
		problems = append(problems, "time: "+f.At+" is in the future; log events when they have happened")
	}
	in.At = at
	in.Kind = strings.TrimSpace(f.Kind)
	known := false
	for _, k := range store.EventKinds {
		known = known || k.Key == in.Kind
	}
	if !known {
		problems = append(problems, "kind: choose maintenance, electrode change, gas bottle change or other")
	}
	in.Note = f.Note
	if len(problems) > 0 {
		return badRequest("chamber event not logged: %s", strings.Join(problems, "; "))
	}
	if _, err := s.DB.AddChamberEvent(c.Request().Context(), currentUser(c).ID, in); err != nil {
		if errors.Is(err, store.ErrInvalid) {
			return badRequest("chamber event not logged: %s", strings.TrimPrefix(err.Error(), store.ErrInvalid.Error()+": "))
		}
		return err
	}
	flash(c, "Chamber event logged: "+store.EventKindLabel(in.Kind)+", "+in.At.Format("2006-01-02 15:04")+" UTC.")
	back := "/board"
	if eventBack.MatchString(f.Back) {
		back = f.Back
	}
	return c.Redirect(http.StatusSeeOther, back)
}

func strconvQuote(s string) string { return strconv.Quote(s) }
