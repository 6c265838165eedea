package server

import (
	"context"
	"net/http"
	"net/url"
	"strings"
	"testing"
	"time"

	"glowlog/store"
)

func TestBulkReanalysis(t *testing.T) {
	f := newReviewFixture(t)
	ctx, cancel := context.WithCancel(context.Background())
	defer cancel()
	ch, _ := f.s.DB.EnsureChamber(ctx, "Bell jar B-2", "")
	t0 := time.Date(2026, 5, 1, 8, 0, 0, 0, time.UTC)
	var ids []int64
	for i := range 2 {
		ids = append(ids, analysedRun(t, f.s, f.op, "Hβ run", t0.Add(time.Duration(i)*time.Hour), &ch))
	}
	// A run without files in the same chamber fails, with a message.
	bare, _ := f.s.DB.CreateRun(ctx, f.op.ID, store.RunInput{Title: "no files", StartedAt: t0.Add(3 * time.Hour), SourceType: "dc_glow", ChamberID: &ch})
	f.s.Jobs.Start(ctx)

	rev := f.client(t, f.rev)
	code, _ := rev.req(http.MethodPost, "/jobs/reanalyze", url.Values{"chamber": {itoa64(ch)}, "reason": {""}})
	if code != http.StatusBadRequest {
		t.Errorf("without a reason: %d, want 400", code)
	}
	code, _ = rev.req(http.MethodPost, "/jobs/reanalyze", url.Values{"chamber": {itoa64(ch)}, "reason": {"x"}, "instrument_fwhm_nm": {"-1"}})
	if code != http.StatusBadRequest {
		t.Errorf("negative FWHM: %d, want 400", code)
	}
	if code, _ := f.client(t, f.op).req(http.MethodPost, "/jobs/reanalyze", url.Values{"reason": {"x"}}); code != http.StatusForbidden {
		t.Errorf("operator starting a job: %d, want 403", code)
	}
	code, _ = rev.req(http.MethodPost, "/jobs/reanalyze", url.Values{"chamber": {itoa64(ch)}, "reason": {"new slit function"},
		"instrument_fwhm_nm": {"0.06"}})
	if code != http.StatusSeeOther {
		t.Fatalf("start job: %d", code)
	}
	var job store.Job
	deadline := time.Now().Add(20 * time.Second)
	for {
		var err error
		if job, err = f.s.DB.Job(ctx, 1); err != nil {
			t.Fatal(err)
		}
		if job.Finished() || time.Now().After(deadline) {
			break
		}
		time.Sleep(20 * time.Millisecond)
	}
	if job.State != store.JobDone || job.Done != 2 || job.Failed != 1 || !strings.Contains(job.Message, "no spectrum") {
		t.Fatalf("job %+v", job)
	}
	for _, id := range ids {
		as, err := f.s.DB.Analyses(ctx, id)
		if err != nil || len(as) != 2 {
			t.Fatalf("run %d: %d versions, %v; want 2 (old kept)", id, len(as), err)
		}
		latest, _ := f.s.DB.AnalysisVersion(ctx, id, 0)
		first, _ := f.s.DB.AnalysisVersion(ctx, id, 1)
		if latest.Version != 2 || latest.Reason != "new slit function" || !strings.Contains(latest.Settings, `"instrument_fwhm_nm":0.06`) ||
			!strings.Contains(latest.Settings, `"gas_temperature_K":1200`) || !strings.Contains(first.Settings, `"instrument_fwhm_nm":0.05`) {
			t.Errorf("run %d: v%d %s / v1 %s", id, latest.Version, latest.Settings, first.Settings)
		}
		if latest.CreatedBy == nil || *latest.CreatedBy != f.rev.ID {
			t.Errorf("run %d: version by %v", id, latest.CreatedBy)
		}
	}
	_ = bare

	// The page, the polled fragment (no trigger once finished), and a
	// running job's fragment with the htmx poll.
	v := f.client(t, f.vie)
	code, body := v.req(http.MethodGet, "/jobs/1", nil)
	if code != http.StatusOK || !strings.Contains(body, `data-testid="job-bar"`) || strings.Contains(body, `hx-trigger`) {
		t.Errorf("finished job page: %d %.400s", code, body)
	}
	cancel() // stop the worker so that the next job stays queued
	f.s.Jobs.Wait()
	jid, _ := f.s.DB.CreateJob(context.Background(), "other", "{}", 3, f.rev.ID)
	code, body = v.req(http.MethodGet, "/jobs/"+itoa64(jid)+"?fragment=1", nil)
	if code != http.StatusOK || !strings.Contains(body, `hx-trigger="every 1s"`) || strings.Contains(body, "<html") {
		t.Errorf("queued job fragment: %d %.400s", code, body)
	}
	if code, _ := v.req(http.MethodGet, "/jobs/999", nil); code != http.StatusNotFound {
		t.Errorf("unknown job: %d", code)
	}
}

func TestStaleJobsFailOnStart(t *testing.T) {
	f := newReviewFixture(t)
	ctx, cancel := context.WithCancel(context.Background())
	id, _ := f.s.DB.CreateJob(ctx, jobKindReanalyze, `{"run_ids":[]}`, 0, f.rev.ID)
	if _, err := f.s.DB.ClaimNextJob(ctx); err != nil { // left running by a "previous process"
		t.Fatal(err)
	}
	f.s.Jobs.Start(ctx)
	cancel()
	f.s.Jobs.Wait()
	j, _ := f.s.DB.Job(context.Background(), id)
	if j.State != store.JobFailed || !strings.Contains(j.Message, "restarted") {
		t.Errorf("stale job %+v", j)
	}
}
