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
	// A signed-off run in the same chamber: skipped unless included.
	signed := analysedRun(t, f.s, f.op, "signed-off Hβ run", t0.Add(4*time.Hour), &ch)
	signOff(t, f, signed)
	before, _ := f.s.DB.GetRun(ctx, signed)

	form := url.Values{"chamber": {itoa64(ch)}, "reason": {"new slit function"}, "instrument_fwhm_nm": {"0.06"}}
	// First the confirmation: counts, nothing queued yet.
	code, body := rev.req(http.MethodPost, "/jobs/reanalyze", form)
	if code != http.StatusOK || !strings.Contains(body, `data-testid="confirm-matching">4<`) ||
		!strings.Contains(body, `data-testid="confirm-signed-off">1<`) || !strings.Contains(body, `data-testid="confirm-touch">3<`) ||
		!strings.Contains(body, `name="confirm" value="1"`) || !strings.Contains(body, `name="instrument_fwhm_nm" value="0.06"`) {
		t.Fatalf("confirm step: %d %.2000s", code, body)
	}
	if _, err := f.s.DB.Job(ctx, 1); err == nil {
		t.Fatal("a job was queued before the confirmation")
	}
	form.Set("confirm", "1")
	code, _ = rev.req(http.MethodPost, "/jobs/reanalyze", form)
	if code != http.StatusSeeOther {
		t.Fatalf("start job: %d", code)
	}
	job := waitJob(t, f.s, 1)
	if job.State != store.JobDone || job.Total != 3 || job.Done != 2 || job.Failed != 1 || !strings.Contains(job.Message, "no spectrum") {
		t.Fatalf("job %+v", job)
	}
	// the versions went to the committer as bulk writes (BulkGroupTx),
	// which wait to be committed several at a time
	if bw, _ := f.s.DB.BulkGroupStats(); bw != 2 {
		t.Errorf("%d versions stored as bulk writes, want the job's 2", bw)
	}
	if as, _ := f.s.DB.Analyses(ctx, signed); len(as) != 1 {
		t.Errorf("signed-off run got %d versions from a job that skips it, want 1", len(as))
	}
	if _, body := f.client(t, f.vie).req(http.MethodGet, "/jobs/1", nil); !strings.Contains(body, `data-testid="job-skipped">1 signed-off`) {
		t.Errorf("job page does not say that a signed-off run was skipped: %.1500s", body)
	} else if job.Spectra != 2 || job.Elapsed <= 0 || !strings.Contains(body, `data-testid="job-rate">2 spectra analysed, `) {
		// the rate: one spectrum in each of the two runs done, over the job's time
		t.Errorf("job rate: %d spectra in %v; page %.1500s", job.Spectra, job.Elapsed, body)
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

	// Included by the reviewer: the signed-off run gets a version that is
	// not approved; everything shown stays the approved version.
	form.Set("include_signed_off", "1")
	form.Set("status", "signed_off")
	form.Set("reason", "slit check on approved runs")
	form.Del("confirm")
	if code, body := rev.req(http.MethodPost, "/jobs/reanalyze", form); code != http.StatusOK || !strings.Contains(body, `data-testid="confirm-touch">1<`) {
		t.Fatalf("confirm with signed-off included: %d %.1500s", code, body)
	}
	form.Set("confirm", "1")
	if code, _ := rev.req(http.MethodPost, "/jobs/reanalyze", form); code != http.StatusSeeOther {
		t.Fatalf("start job 2: %d", code)
	}
	if job := waitJob(t, f.s, 2); job.Done != 1 || job.Failed != 0 {
		t.Fatalf("job 2 %+v", job)
	}
	after, _ := f.s.DB.GetRun(ctx, signed)
	if as, _ := f.s.DB.Analyses(ctx, signed); len(as) != 2 || !strings.Contains(as[0].Reason, "not approved") {
		t.Errorf("included signed-off run: %d versions (want 2), newest reason %q", len(as), as[0].Reason)
	}
	if after.AnalysisVersion != 1 || *after.ApprovedVersion != 1 || *after.NeM3 != *before.NeM3 || after.Status != store.StatusSignedOff {
		t.Errorf("signed-off run changed: version %d approved %v n_e %v → %v status %s", after.AnalysisVersion, after.ApprovedVersion,
			*before.NeM3, *after.NeM3, after.Status)
	}
	if cur, _ := f.s.DB.AnalysisVersion(ctx, signed, 0); cur.Version != 1 {
		t.Errorf("current version of the signed-off run is %d, want the approved 1", cur.Version)
	}

	// The page, the polled fragment (no trigger once finished), and a
	// running job's fragment with the htmx poll.
	v := f.client(t, f.vie)
	code, body = v.req(http.MethodGet, "/jobs/1", nil)
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

// waitJob waits (bounded) for job id to finish.
func waitJob(t *testing.T, s *Server, id int64) store.Job {
	t.Helper()
	for range 2000 {
		job, err := s.DB.Job(context.Background(), id)
		if err != nil {
			t.Fatal(err)
		}
		if job.Finished() {
			return job
		}
		time.Sleep(10 * time.Millisecond)
	}
	t.Fatalf("job %d did not finish", id)
	return store.Job{}
}

// signOff submits run id (by its operator) and signs it off (by the
// fixture's reviewer) through the store.
func signOff(t *testing.T, f *reviewFixture, id int64) {
	t.Helper()
	ctx := context.Background()
	if _, err := f.s.DB.Review(ctx, id, f.op, store.ActionSubmit, ""); err != nil {
		t.Fatal(err)
	}
	if _, err := f.s.DB.Review(ctx, id, f.rev, store.ActionSignOff, "fine"); err != nil {
		t.Fatal(err)
	}
}
