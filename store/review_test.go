package store

import (
	"context"
	"errors"
	"strings"
	"testing"
	"time"
)

func TestReviewTransitions(t *testing.T) {
	ctx := context.Background()
	d, opID := openTrendDB(t)
	op, _ := d.UserByID(ctx, opID)
	rev, err := d.CreateUser(ctx, "bea.marsh", RoleReviewer, "x")
	if err != nil {
		t.Fatal(err)
	}
	other, _ := d.CreateUser(ctx, "cy.holt", RoleOperator, "x")
	selfRev, _ := d.CreateUser(ctx, "dee.fenn", RoleReviewer, "x")
	clock := time.Date(2026, 4, 2, 10, 0, 0, 0, time.UTC)
	d.Now = func() time.Time { clock = clock.Add(time.Minute); return clock }

	run, err := d.CreateRun(ctx, opID, RunInput{Title: "H₂ glow 120 Pa", StartedAt: clock, SourceType: "dc_glow"})
	if err != nil {
		t.Fatal(err)
	}
	own, _ := d.CreateRun(ctx, selfRev.ID, RunInput{Title: "own run", StartedAt: clock, SourceType: "rf_capacitive"})

	step := func(by User, a ReviewAction, note string, want error) {
		t.Helper()
		_, err := d.Review(ctx, run, by, a, note)
		if want == nil && err != nil || want != nil && !errors.Is(err, want) {
			t.Fatalf("%s by %s: error %v, want %v", a, by.Name, err, want)
		}
	}
	step(rev, ActionSignOff, "", ErrConflict)           // draft cannot be signed off
	step(other, ActionSubmit, "", ErrNotAllowed)        // not the operator
	step(op, ActionSubmit, "ready", nil)                // draft → submitted
	step(op, ActionSubmit, "", ErrConflict)             // already submitted
	step(op, ActionReturn, "no", ErrNotAllowed)         // operator cannot return
	step(rev, ActionReturn, "  ", ErrInvalid)           // return needs a note
	step(rev, ActionReturn, "check the dark file", nil) // submitted → returned
	step(rev, ActionSignOff, "", ErrConflict)           // returned cannot be signed off
	step(op, ActionSubmit, "dark fixed", nil)           // returned → submitted
	step(rev, ActionSignOff, "fine", nil)               // submitted → signed_off
	step(rev, ActionReturn, "late", ErrConflict)        // signed off is final

	r, _ := d.GetRun(ctx, run)
	if r.Status != StatusSignedOff || r.SignedOffBy == nil || *r.SignedOffBy != rev.ID || r.SignedOffAt == nil {
		t.Errorf("after sign-off: status %s by %v at %v", r.Status, r.SignedOffBy, r.SignedOffAt)
	}
	evs, err := d.StatusEvents(ctx, run)
	if err != nil {
		t.Fatal(err)
	}
	var got []string
	for _, e := range evs {
		got = append(got, e.From+">"+e.To+":"+e.UserName+":"+e.Note)
	}
	want := "draft>submitted:ada.quill:ready submitted>returned:bea.marsh:check the dark file " +
		"returned>submitted:ada.quill:dark fixed submitted>signed_off:bea.marsh:fine"
	if strings.Join(got, " ") != want {
		t.Errorf("events\n%s\nwant\n%s", strings.Join(got, " "), want)
	}

	// A reviewer may not sign off their own run, and the message says so.
	if _, err := d.Review(ctx, own, selfRev, ActionSubmit, ""); err != nil {
		t.Fatal(err)
	}
	_, err = d.Review(ctx, own, selfRev, ActionSignOff, "")
	if !errors.Is(err, ErrNotAllowed) || !strings.Contains(err.Error(), "cannot sign it off yourself") {
		t.Errorf("self sign-off: %v", err)
	}
	q, err := d.ReviewQueue(ctx, 0)
	if err != nil || len(q) != 1 || q[0].Run.ID != own || q[0].By != "dee.fenn" {
		t.Errorf("queue = %+v, %v", q, err)
	}
	rs, err := d.RecentlySignedOff(ctx, 0)
	if err != nil || len(rs) != 1 || rs[0].Run.ID != run || rs[0].By != "bea.marsh" {
		t.Errorf("recently signed off = %+v, %v", rs, err)
	}
	if _, err := d.Review(ctx, 424242, rev, ActionSignOff, ""); !errors.Is(err, ErrNotFound) {
		t.Errorf("unknown run: %v", err)
	}
}

func TestComments(t *testing.T) {
	ctx := context.Background()
	d, op := openTrendDB(t)
	run, _ := d.CreateRun(ctx, op, RunInput{Title: "jet", StartedAt: time.Now(), SourceType: "plasma_jet"})
	if _, err := d.AddComment(ctx, run, op, "   "); !errors.Is(err, ErrInvalid) {
		t.Errorf("empty comment: %v", err)
	}
	if _, err := d.AddComment(ctx, 999, op, "hello"); !errors.Is(err, ErrNotFound) {
		t.Errorf("unknown run: %v", err)
	}
	if _, err := d.AddComment(ctx, run, op, strings.Repeat("é", MaxNoteLen+1)); !errors.Is(err, ErrInvalid) {
		t.Errorf("long comment: %v", err)
	}
	c1, err := d.AddComment(ctx, run, op, " Hβ window clipped at 490 nm ")
	if err != nil {
		t.Fatal(err)
	}
	d.AddComment(ctx, run, op, "second")
	cs, err := d.Comments(ctx, run)
	if err != nil || len(cs) != 2 || cs[0].ID != c1.ID || cs[0].Body != "Hβ window clipped at 490 nm" || cs[0].AuthorName != "ada.quill" {
		t.Errorf("comments = %+v, %v", cs, err)
	}
}

func TestJobs(t *testing.T) {
	ctx := context.Background()
	d, op := openTrendDB(t)
	if _, err := d.ClaimNextJob(ctx); !errors.Is(err, ErrNotFound) {
		t.Errorf("empty queue: %v", err)
	}
	a, _ := d.CreateJob(ctx, "reanalyze", `{"a":1}`, 3, op)
	b, _ := d.CreateJob(ctx, "reanalyze", `{}`, 2, op)
	j, err := d.ClaimNextJob(ctx)
	if err != nil || j.ID != a || j.State != JobRunning || j.Total != 3 || j.Params != `{"a":1}` || j.CreatedByName != "ada.quill" {
		t.Fatalf("claimed %+v, %v", j, err)
	}
	if err := d.JobProgress(ctx, a, 2, 1, "run 7: no spectrum"); err != nil {
		t.Fatal(err)
	}
	// A restart finds job a still running: it is failed, b stays queued.
	n, err := d.FailStaleJobs(ctx, "stopped by a server restart")
	if err != nil || n != 1 {
		t.Errorf("FailStaleJobs = %d, %v", n, err)
	}
	j, _ = d.Job(ctx, a)
	if j.State != JobFailed || !j.Finished() || j.Done != 2 || j.Failed != 1 || j.FinishedAt == nil || j.Message != "stopped by a server restart" {
		t.Errorf("stale job %+v", j)
	}
	j, _ = d.ClaimNextJob(ctx)
	if j.ID != b {
		t.Errorf("next job %d, want %d", j.ID, b)
	}
	if err := d.FinishJob(ctx, b, JobDone, 2, 0, ""); err != nil {
		t.Fatal(err)
	}
	if err := d.FinishJob(ctx, b, JobQueued, 0, 0, ""); !errors.Is(err, ErrInvalid) {
		t.Errorf("finish as queued: %v", err)
	}
	if _, err := d.Job(ctx, 77); !errors.Is(err, ErrNotFound) {
		t.Errorf("unknown job: %v", err)
	}
}
