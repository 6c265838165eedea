package server

import (
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"net/http"
	"runtime"
	"slices"
	"strconv"
	"strings"
	"sync"
	"time"

	"github.com/labstack/echo/v4"

	"glowlog/store"
	"glowlog/views"
)

// JobRunner runs background jobs (bulk reanalysis), one job at a time.
// A job analyses its runs with GOMAXPROCS workers outside the write lock
// (prepareReanalysis) and queues each run's version for the group
// committer as a latency-tolerant write (store.DB.BulkGroupTx) without
// waiting: the versions wait for one another and are stored several
// together, one transaction for many runs, each in its own savepoint,
// while the workers go on analysing. Web requests' writes do not wait
// for them (see store/group.go).
type JobRunner struct {
	s    *Server
	wake chan struct{}
	wg   sync.WaitGroup
}

// NewJobRunner returns a runner for s.
func NewJobRunner(s *Server) *JobRunner { return &JobRunner{s: s, wake: make(chan struct{}, 1)} }

// jobPoll is how often the worker looks for queued jobs without a wake-up.
const jobPoll = 5 * time.Second

// Start marks jobs left running by an earlier process as failed and
// starts the worker; it stops when ctx is cancelled.
func (j *JobRunner) Start(ctx context.Context) {
	if n, err := j.s.DB.FailStaleJobs(ctx, "stopped: the server restarted while this job was running; start it again"); err != nil {
		j.s.Log.Error("jobs: fail stale jobs", "err", err)
	} else if n > 0 {
		j.s.Log.Warn("jobs: marked jobs of an earlier process as failed", "n", n)
	}
	j.wg.Add(1)
	go func() {
		defer j.wg.Done()
		for {
			job, err := j.s.DB.ClaimNextJob(ctx)
			switch {
			case err == nil:
				j.run(ctx, job)
				continue
			case errors.Is(err, store.ErrNotFound):
			case ctx.Err() != nil:
				return
			default:
				j.s.Log.Error("jobs: claim", "err", err)
			}
			select {
			case <-ctx.Done():
				return
			case <-j.wake:
			case <-time.After(jobPoll):
			}
		}
	}()
}

// Wait waits for the worker to stop.
func (j *JobRunner) Wait() { j.wg.Wait() }

// notify wakes the worker for a new job.
func (j *JobRunner) notify() {
	select {
	case j.wake <- struct{}{}:
	default:
	}
}

// reanalyzeParams are a bulk reanalysis job's parameters (jobs.params).
type reanalyzeParams struct {
	RunIDs    []int64           `json:"run_ids"`
	Overrides settingsOverrides `json:"overrides"`
	Reason    string            `json:"reason"`
	UserID    int64             `json:"user_id"`
	Filter    map[string]string `json:"filter,omitempty"`
	// IncludeSignedOff is the reviewer's choice to give signed-off runs a
	// new version too; the store keeps their approved version as the one
	// shown (AddAnalysisTx). Without it they are left out of RunIDs, and
	// SkippedSignedOff counts them.
	IncludeSignedOff bool `json:"include_signed_off,omitempty"`
	SkippedSignedOff int  `json:"skipped_signed_off,omitempty"`
}

// settingsOverrides replace settings of each run's latest analysis; nil
// keeps the run's value.
type settingsOverrides struct {
	InstrumentFWHMNM *float64 `json:"instrument_fwhm_nm,omitempty"`
	GasTemperatureK  *float64 `json:"gas_temperature_K,omitempty"`
	PressurePa       *float64 `json:"pressure_Pa,omitempty"`
	Perturber        *string  `json:"perturber,omitempty"`
}

func (o settingsOverrides) apply(st *AnalysisSettings) {
	if o.InstrumentFWHMNM != nil {
		st.InstrumentFWHMNM = *o.InstrumentFWHMNM
	}
	if o.GasTemperatureK != nil {
		st.GasTemperatureK = *o.GasTemperatureK
	}
	if o.PressurePa != nil {
		st.PressurePa = *o.PressurePa
	}
	if o.Perturber != nil {
		st.Perturber = *o.Perturber
	}
}

// jobKindReanalyze is the kind of bulk reanalysis jobs.
const jobKindReanalyze = "reanalyze"

// jobProgressEvery is how often a running job records its progress.
const jobProgressEvery = 250 * time.Millisecond

func (j *JobRunner) run(ctx context.Context, job store.Job) {
	ctx = jobActor(ctx, job)
	db := j.s.DB
	var p reanalyzeParams
	if job.Kind != jobKindReanalyze || json.Unmarshal([]byte(job.Params), &p) != nil {
		_ = db.FinishJob(ctx, job.ID, store.JobFailed, 0, 0, "unknown job kind or unreadable parameters")
		return
	}
	done, failed, spectra := 0, 0, 0
	var msgs []string
	note := func(id int64, msg string) {
		if len(msgs) < 20 {
			msgs = append(msgs, fmt.Sprintf("run %d: %s", id, msg))
		}
	}
	type outcome struct {
		id      int64
		spectra int
		err     error
		stored  <-chan error // the commit of its version (GroupTx)
	}
	ids := make(chan int64)
	// Workers analyse runs and queue their versions for the group
	// committer without waiting for the commit; the loop below waits for
	// each commit in turn. The buffer bounds the versions analysed but not
	// yet stored (each holds its results' JSON, ~50 kB per spectrum).
	outs := make(chan outcome, 16)
	go func() {
		defer close(ids)
		for _, id := range p.RunIDs {
			select {
			case ids <- id:
			case <-ctx.Done():
				return
			}
		}
	}()
	var workers sync.WaitGroup
	for range runtime.GOMAXPROCS(0) {
		workers.Add(1)
		go func() {
			defer workers.Done()
			for id := range ids {
				n, w, err := j.prepareOne(ctx, id, p)
				var stored <-chan error
				if err == nil {
					stored = db.BulkGroupTx(ctx, w.write(ctx))
				}
				outs <- outcome{id, n, err, stored}
			}
		}()
	}
	go func() { workers.Wait(); close(outs) }()
	start := time.Now()
	last := start
	for o := range outs {
		if o.stored != nil {
			o.err = <-o.stored
		}
		if err := o.err; err != nil {
			var ue *userError
			switch {
			case errors.As(err, &ue):
				note(o.id, ue.msg)
			case errors.Is(err, store.ErrNotFound):
				note(o.id, "no longer exists")
			case errors.Is(err, store.ErrInvalid):
				note(o.id, strings.TrimPrefix(err.Error(), "store: invalid: "))
			case ctx.Err() != nil:
				continue
			default:
				j.s.Log.Error("jobs: reanalyse run", "job", job.ID, "run", o.id, "err", err)
				note(o.id, "internal error (see the server log)")
			}
			failed++
		} else {
			done++
			spectra += o.spectra
		}
		if now := time.Now(); now.Sub(last) >= jobProgressEvery && ctx.Err() == nil {
			last = now
			if err := db.JobProgress(ctx, job.ID, done, failed, strings.Join(msgs, "\n")); err != nil && ctx.Err() == nil {
				j.s.Log.Error("jobs: progress", "job", job.ID, "err", err)
			}
			if err := db.JobRate(ctx, job.ID, spectra, now.Sub(start)); err != nil && ctx.Err() == nil {
				j.s.Log.Error("jobs: progress", "job", job.ID, "err", err)
			}
		}
	}
	fin := context.WithoutCancel(ctx)
	if err := db.JobRate(fin, job.ID, spectra, time.Since(start)); err != nil {
		j.s.Log.Error("jobs: rate", "job", job.ID, "err", err)
	}
	if ctx.Err() != nil {
		// The server is stopping: record how far the job came.
		_ = db.FinishJob(fin, job.ID, store.JobFailed, done, failed,
			fmt.Sprintf("stopped by a server shutdown after %d of %d runs", done+failed, len(p.RunIDs)))
		return
	}
	state := store.JobDone
	if failed > 0 && done == 0 {
		state = store.JobFailed
	}
	if err := db.FinishJob(fin, job.ID, state, done, failed, strings.Join(msgs, "\n")); err != nil {
		j.s.Log.Error("jobs: finish", "job", job.ID, "err", err)
	}
}

// prepareOne analyses one run with its latest settings and the job's
// overrides (outside the write lock), and returns how many spectra it
// analysed and the version to store.
func (j *JobRunner) prepareOne(ctx context.Context, id int64, p reanalyzeParams) (int, *reanalysisWrite, error) {
	s := j.s
	r, err := s.DB.GetRunUntagged(ctx, id) // its fields, not its tags
	if err != nil {
		return 0, nil, err
	}
	atts, err := s.DB.Attachments(ctx, id)
	if err != nil {
		return 0, nil, err
	}
	if !analysable(atts) {
		return 0, nil, badRequest("no spectrum or line table to analyse")
	}
	st := DefaultSettings(r)
	if sj, err := s.DB.LatestSettings(ctx, id); err == nil {
		var prev AnalysisSettings
		if json.Unmarshal([]byte(sj), &prev) == nil {
			st = prev
		}
	} else if !errors.Is(err, store.ErrNotFound) {
		return 0, nil, err
	}
	p.Overrides.apply(&st)
	uid := p.UserID
	reason := p.Reason
	if r.Status == store.StatusSignedOff && p.IncludeSignedOff && r.ApprovedVersion != nil {
		reason += fmt.Sprintf(" (added after sign-off, not approved: the run still shows approved version %d)", *r.ApprovedVersion)
	}
	// Inside its transaction the reanalysis refuses a run signed off since
	// the job was queued, unless the reviewer included signed-off runs.
	w, err := s.prepareReanalysis(ctx, id, atts, st, &uid, reason, p.IncludeSignedOff)
	if err != nil {
		return 0, nil, err
	}
	n := 0
	for _, a := range atts {
		if a.Kind == store.KindSpectrum {
			n++
		}
	}
	return n, w, nil
}

// startBulkReanalysis handles POST /jobs/reanalyze: the run-list filters
// plus settings overrides and a reason; it queues a job and shows it.
func (s *Server) startBulkReanalysis(c echo.Context) error {
	ctx := c.Request().Context()
	f := runListForm{Query: c.FormValue("q"), Chamber: c.FormValue("chamber"), Recipe: c.FormValue("recipe"),
		Source: c.FormValue("source"), Gas: c.FormValue("gas"), From: c.FormValue("from"), To: c.FormValue("to"),
		Status: c.FormValue("status"), Tag: c.FormValue("tag"), Operator: c.FormValue("operator")}
	rf, err := f.filter()
	if err != nil {
		return err
	}
	var o settingsOverrides
	num := func(name, label string, max float64) (*float64, error) {
		v := strings.TrimSpace(c.FormValue(name))
		if v == "" {
			return nil, nil
		}
		x, err := strconv.ParseFloat(v, 64)
		if err != nil || !(x >= 0 && x <= max) {
			return nil, badRequest("%s: %q must be a number from 0 to %g", label, v, max)
		}
		return &x, nil
	}
	if o.InstrumentFWHMNM, err = num("instrument_fwhm_nm", "instrument FWHM (nm)", 50); err != nil {
		return err
	}
	if o.GasTemperatureK, err = num("gas_temperature_k", "gas temperature (K)", 1e6); err != nil {
		return err
	}
	if o.PressurePa, err = num("pressure_pa", "pressure (Pa)", 1e8); err != nil {
		return err
	}
	if v := strings.TrimSpace(c.FormValue("perturber")); v != "" {
		check := AnalysisSettings{Perturber: v}
		if err := check.Validate(); err != nil {
			return err
		}
		o.Perturber = &v
	}
	reason := strings.TrimSpace(c.FormValue("reason"))
	if reason == "" || len(reason) > 500 {
		return badRequest("reason: say in up to 500 characters why these runs are reanalysed (it is stored with each new version)")
	}
	ids, err := s.DB.RunIDs(ctx, rf)
	if err != nil {
		return err
	}
	if len(ids) == 0 {
		return badRequest("no run matches these filters: nothing to reanalyse")
	}
	signed := map[int64]bool{}
	if rf.Status == "" || rf.Status == store.StatusSignedOff {
		sf := rf
		sf.Status = store.StatusSignedOff
		sids, err := s.DB.RunIDs(ctx, sf)
		if err != nil {
			return err
		}
		for _, id := range sids {
			signed[id] = true
		}
	}
	include := c.FormValue("include_signed_off") != ""
	touch := ids
	if !include {
		touch = make([]int64, 0, len(ids))
		for _, id := range ids {
			if !signed[id] {
				touch = append(touch, id)
			}
		}
	}
	fv := map[string]string{}
	for k, v := range f.values() {
		fv[k] = v[0]
	}
	// First a confirmation: how many runs the job will touch, and how many
	// signed-off runs it leaves alone.
	if c.FormValue("confirm") != "1" {
		cp := views.JobConfirmProps{Layout: s.layout(c, "Confirm bulk reanalysis", ""), Matching: len(ids),
			SignedOff: len(signed), Touch: len(touch), Include: include, Reason: reason, Changes: o.words()}
		for k, v := range fv {
			cp.Hidden = append(cp.Hidden, views.HiddenField{Name: k, Value: v})
		}
		for _, k := range []string{"instrument_fwhm_nm", "gas_temperature_k", "pressure_pa", "perturber", "reason"} {
			if v := strings.TrimSpace(c.FormValue(k)); v != "" {
				cp.Hidden = append(cp.Hidden, views.HiddenField{Name: k, Value: v})
			}
		}
		if include {
			cp.Hidden = append(cp.Hidden, views.HiddenField{Name: "include_signed_off", Value: "1"})
		}
		slices.SortFunc(cp.Hidden, func(a, b views.HiddenField) int { return strings.Compare(a.Name, b.Name) })
		return render(c, http.StatusOK, views.JobConfirm(cp))
	}
	if len(touch) == 0 {
		return badRequest("all %d matching runs are signed off and were left out: nothing to reanalyse (tick “include signed-off runs” to add versions to them)", len(ids))
	}
	u := currentUser(c)
	params, err := json.Marshal(reanalyzeParams{RunIDs: touch, Overrides: o, Reason: reason, UserID: u.ID, Filter: fv,
		IncludeSignedOff: include, SkippedSignedOff: len(ids) - len(touch)})
	if err != nil {
		return err
	}
	jid, err := s.DB.CreateJob(ctx, jobKindReanalyze, string(params), len(touch), u.ID)
	if err != nil {
		return err
	}
	s.Jobs.notify()
	msg := fmt.Sprintf("Reanalysis of %d runs queued.", len(touch))
	if n := len(ids) - len(touch); n > 0 {
		msg += fmt.Sprintf(" %d signed-off runs are left as approved.", n)
	}
	flash(c, msg)
	return c.Redirect(http.StatusSeeOther, fmt.Sprintf("/jobs/%d", jid))
}

// words describes the overrides for people ("instrument FWHM 0.06 nm").
func (o settingsOverrides) words() []string {
	var out []string
	if o.InstrumentFWHMNM != nil {
		out = append(out, "instrument FWHM "+views.SigFig(*o.InstrumentFWHMNM, 4)+" nm")
	}
	if o.GasTemperatureK != nil {
		out = append(out, "gas temperature "+views.SigFig(*o.GasTemperatureK, 4)+" K")
	}
	if o.PressurePa != nil {
		out = append(out, "pressure "+views.SigFig(*o.PressurePa, 4)+" Pa")
	}
	if o.Perturber != nil {
		out = append(out, "perturber "+*o.Perturber)
	}
	return out
}

// showJob handles GET /jobs/:jid: a progress page; with ?fragment=1 only
// the progress block (what htmx polls every second while the job runs).
func (s *Server) showJob(c echo.Context) error {
	id, err := strconv.ParseInt(c.Param("jid"), 10, 64)
	if err != nil || id <= 0 {
		return echo.NewHTTPError(http.StatusNotFound, "no such job")
	}
	job, err := s.DB.Job(c.Request().Context(), id)
	if err != nil {
		return err
	}
	var p reanalyzeParams
	_ = json.Unmarshal([]byte(job.Params), &p)
	jp := views.JobProgressProps{ID: job.ID, State: job.State, Total: job.Total, Done: job.Done, Failed: job.Failed,
		Finished: job.Finished(), Message: job.Message, Reason: p.Reason, By: job.CreatedByName,
		Created: job.CreatedAt.Format(reviewTime), Spectra: job.Spectra, SpectraPerSecond: job.SpectraPerSecond()}
	if job.Total > 0 {
		jp.Percent = 100 * (job.Done + job.Failed) / job.Total
	}
	if job.FinishedAt != nil {
		jp.FinishedAt = job.FinishedAt.Format(reviewTime)
	}
	jp.Changes = p.Overrides.words()
	jp.SkippedSignedOff, jp.IncludeSignedOff = p.SkippedSignedOff, p.IncludeSignedOff
	if c.QueryParam("fragment") == "1" {
		return render(c, http.StatusOK, views.JobProgress(jp))
	}
	return render(c, http.StatusOK, views.JobPage(views.JobPageProps{Layout: s.layout(c, fmt.Sprintf("Job %d", job.ID), ""), Job: jp}))
}
