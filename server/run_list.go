package server

import (
	"fmt"
	"net/http"
	"net/url"
	"strconv"
	"strings"
	"time"

	"github.com/labstack/echo/v4"

	"glowlog/store"
	"glowlog/views"
)

// runsPerPage is the run list's page size.
var runsPerPage = 50

// runCountCap bounds the run list's count: runs are counted up to this
// many past the page shown, and beyond that the page says "more than N
// runs" (an exact count of a broad filter over a million runs reads every
// one of them; the CSV export has them all).
var runCountCap = 10000

// runTextCountCap is the bound when the filter searches text (words or
// gas): such a filter is checked run by run, with no index to count from,
// so the count stops sooner.
var runTextCountCap = 1000

// runListForm is the run list's query string (a GET form, so that every
// filtered view is a shareable URL).
type runListForm struct {
	Query    string `query:"q"`
	Chamber  string `query:"chamber"`
	Recipe   string `query:"recipe"`
	Source   string `query:"source"`
	Gas      string `query:"gas"`
	From     string `query:"from"`
	To       string `query:"to"`
	Status   string `query:"status"`
	Tag      string `query:"tag"`
	Operator string `query:"operator"`
	Sort     string `query:"sort"`
	Page     string `query:"page"`
}

func bindRunListForm(c echo.Context) runListForm {
	q := c.QueryParams()
	return runListForm{Query: q.Get("q"), Chamber: q.Get("chamber"), Recipe: q.Get("recipe"), Source: q.Get("source"),
		Gas: q.Get("gas"), From: q.Get("from"), To: q.Get("to"), Status: q.Get("status"), Tag: q.Get("tag"),
		Operator: q.Get("operator"), Sort: q.Get("sort"), Page: q.Get("page")}
}

// sortKeys are the sortable columns of the run list.
var sortKeys = map[string]bool{"started": true, "texc": true, "ne": true, "title": true, "status": true}

// filter checks the form and turns it into a store filter (without paging).
func (f runListForm) filter() (store.RunFilter, error) {
	var rf store.RunFilter
	rf.Query, rf.Gas, rf.Tag = strings.TrimSpace(f.Query), strings.TrimSpace(f.Gas), strings.TrimSpace(f.Tag)
	id := func(name, v string) (int64, error) {
		v = strings.TrimSpace(v)
		if v == "" {
			return 0, nil
		}
		n, err := strconv.ParseInt(v, 10, 64)
		if err != nil || n <= 0 {
			return 0, badRequest("%s: %q is not a valid choice", name, v)
		}
		return n, nil
	}
	var err error
	if rf.ChamberID, err = id("chamber", f.Chamber); err != nil {
		return rf, err
	}
	if rf.RecipeID, err = id("recipe", f.Recipe); err != nil {
		return rf, err
	}
	if rf.OperatorID, err = id("operator", f.Operator); err != nil {
		return rf, err
	}
	if f.Source != "" {
		if store.SourceLabel(f.Source) == f.Source {
			return rf, badRequest("source type: unknown value %q", f.Source)
		}
		rf.SourceType = f.Source
	}
	if f.Status != "" {
		if !store.ValidStatus(f.Status) {
			return rf, badRequest("status: unknown value %q (one of %s)", f.Status, store.StatusKeys())
		}
		rf.Status = f.Status
	}
	date := func(name, v string) (time.Time, error) {
		v = strings.TrimSpace(v)
		if v == "" {
			return time.Time{}, nil
		}
		t, err := time.Parse("2006-01-02", v)
		if err != nil {
			return t, badRequest("%s date: %q is not a date like 2026-03-04", name, v)
		}
		return t, nil
	}
	if rf.From, err = date("from", f.From); err != nil {
		return rf, err
	}
	if rf.To, err = date("to", f.To); err != nil {
		return rf, err
	}
	if !rf.To.IsZero() {
		rf.To = rf.To.AddDate(0, 0, 1) // "to" is inclusive: runs before the next midnight (UTC)
	}
	if !rf.From.IsZero() && !rf.To.IsZero() && !rf.From.Before(rf.To) {
		return rf, badRequest("the from date (%s) is after the to date (%s)", f.From, f.To)
	}
	if f.Sort != "" {
		if !sortKeys[strings.TrimPrefix(f.Sort, "-")] {
			return rf, badRequest("sort: unknown column %q", f.Sort)
		}
		rf.Sort = f.Sort
	}
	return rf, nil
}

// values returns the form as a query string, without empty fields (and
// without the page), for links that keep the filters.
func (f runListForm) values() url.Values {
	v := url.Values{}
	for _, kv := range [][2]string{{"q", f.Query}, {"chamber", f.Chamber}, {"recipe", f.Recipe}, {"source", f.Source},
		{"gas", f.Gas}, {"from", f.From}, {"to", f.To}, {"status", f.Status}, {"tag", f.Tag}, {"operator", f.Operator},
		{"sort", f.Sort}} {
		if strings.TrimSpace(kv[1]) != "" {
			v.Set(kv[0], kv[1])
		}
	}
	return v
}

func (f runListForm) filtered() bool {
	v := f.values()
	v.Del("sort")
	return len(v) > 0
}

func hrefWith(path string, v url.Values) string {
	if len(v) == 0 {
		return path
	}
	return path + "?" + v.Encode()
}

// listRuns is GET /runs: the run log with search, filters, sort and pages.
func (s *Server) listRuns(c echo.Context) error {
	ctx := c.Request().Context()
	f := bindRunListForm(c)
	rf, err := f.filter()
	if err != nil {
		return err
	}
	page := 1
	if f.Page != "" {
		if page, err = strconv.Atoi(f.Page); err != nil || page < 1 {
			return badRequest("page: %q is not a page number", f.Page)
		}
	}
	rf.Limit, rf.Offset = runsPerPage, (page-1)*runsPerPage
	countCap := runCountCap
	if rf.Query != "" || rf.Gas != "" {
		countCap = runTextCountCap
	}
	runs, total, more, err := s.DB.ListRunsCapped(ctx, rf, countCap)
	if err != nil {
		return err
	}
	pages := max(1, (total+runsPerPage-1)/runsPerPage)
	if more {
		pages = (total + runsPerPage) / runsPerPage // at least total+1 runs
	}
	if page > pages && total > 0 {
		v := f.values()
		v.Set("page", strconv.Itoa(pages))
		return c.Redirect(http.StatusSeeOther, hrefWith("/runs", v))
	}
	p := views.RunListProps{Layout: s.layout(c, "Run log", "runs"), Sort: f.Sort, Total: total, More: more, Page: page, Pages: pages,
		Filter: views.RunListFilter{Query: f.Query, Chamber: f.Chamber, Recipe: f.Recipe, Source: f.Source, Gas: f.Gas,
			From: f.From, To: f.To, Status: f.Status, Tag: f.Tag, Operator: f.Operator},
		Filtered: f.filtered(), CSVHref: hrefWith("/runs.csv", f.values()), Headers: map[string]views.SortHeader{}}
	clear := url.Values{}
	if f.Sort != "" {
		clear.Set("sort", f.Sort)
	}
	p.ClearHref = hrefWith("/runs", clear)
	if total > 0 {
		p.First, p.Last = rf.Offset+1, rf.Offset+len(runs)
	}
	if err := s.runListChoices(c, &p); err != nil {
		return err
	}
	for _, r := range runs {
		p.Rows = append(p.Rows, views.RunRow{ID: r.ID, Started: r.StartedAt.UTC().Format("2006-01-02 15:04"), Title: r.Title,
			Chamber: r.ChamberName, Recipe: r.RecipeName, Source: store.SourceLabel(r.SourceType), Operator: r.OperatorName,
			Status: r.Status, StatusLabel: store.StatusLabel(r.Status), TexcK: r.TexcK, TexcUncK: r.TexcUncK,
			NeM3: r.NeM3, NeUncM3: r.NeUncM3, Warnings: r.NWarnings, WarnWorst: r.WarnWorst, Version: r.AnalysisVersion})
	}
	// Sort headers: a click on the current column flips its direction;
	// a new column starts descending for numbers and times, ascending
	// for text.
	cur := f.Sort
	if cur == "" {
		cur = "-started"
	}
	for _, h := range []struct {
		key, label string
		num        bool
	}{{"started", "Start (UTC)", true}, {"title", "Title", false}, {"status", "Status", false},
		{"texc", "T_exc ± total σ (K)", true}, {"ne", "n_e ± total σ (m⁻³)", true}} {
		sh := views.SortHeader{Key: h.key, Label: h.label, Num: h.num, Aria: "none"}
		next := h.key
		if h.num {
			next = "-" + h.key
		}
		switch cur {
		case h.key:
			sh.Arrow, sh.Aria, next = "▲", "ascending", "-"+h.key
		case "-" + h.key:
			sh.Arrow, sh.Aria, next = "▼", "descending", h.key
		}
		v := f.values()
		v.Set("sort", next)
		sh.Href = hrefWith("/runs", v)
		p.Headers[h.key] = sh
	}
	// Pager: first, last and two pages either side of the current one.
	link := func(n int) string {
		v := f.values()
		if n > 1 {
			v.Set("page", strconv.Itoa(n))
		}
		return hrefWith("/runs", v)
	}
	if page > 1 {
		p.PrevHref = link(page - 1)
	}
	if page < pages {
		p.NextHref = link(page + 1)
	}
	last := 0
	for n := 1; n <= pages; n++ {
		if n == 1 || n == pages || (n >= page-2 && n <= page+2) {
			if last != 0 && n > last+1 {
				p.PageLinks = append(p.PageLinks, views.PageLink{})
			}
			p.PageLinks = append(p.PageLinks, views.PageLink{N: n, Href: link(n), Current: n == page})
			last = n
		}
	}
	return render(c, http.StatusOK, views.RunList(p))
}

// runListChoices fills the filter form's select options.
func (s *Server) runListChoices(c echo.Context, p *views.RunListProps) error {
	ctx := c.Request().Context()
	chambers, err := s.DB.Chambers(ctx)
	if err != nil {
		return err
	}
	recipes, err := s.DB.Recipes(ctx)
	if err != nil {
		return err
	}
	users, err := s.DB.Users(ctx)
	if err != nil {
		return err
	}
	tags, err := s.DB.Tags(ctx)
	if err != nil {
		return err
	}
	p.Chambers, p.Recipes, p.Tags = namedOptions(chambers), namedOptions(recipes), tags
	for _, u := range users {
		if u.Role.Can(store.RoleOperator) {
			p.Operators = append(p.Operators, views.Option{Value: fmt.Sprint(u.ID), Label: u.Name})
		}
	}
	for _, st := range store.SourceTypes {
		p.Sources = append(p.Sources, views.Option{Value: st.Key, Label: st.Label})
	}
	for _, st := range store.Statuses {
		p.Statuses = append(p.Statuses, views.Option{Value: st.Key, Label: st.Label})
	}
	return nil
}

func namedOptions(ns []store.Named) []views.Option {
	out := make([]views.Option, 0, len(ns))
	for _, n := range ns {
		out = append(out, views.Option{Value: fmt.Sprint(n.ID), Label: n.Name})
	}
	return out
}
