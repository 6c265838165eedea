package store

import (
	"context"
	"database/sql"
	"encoding/hex"
	"io/fs"
	"os"
	"path/filepath"
	"regexp"
	"slices"
	"strings"
	"testing"
	"time"

	"glowlog/diag/calib"
	"glowlog/migrations"
)

// auditFind returns the newest entry of kind/action (and row when not 0).
func auditFind(t *testing.T, d *DB, kind, action string, row int64) AuditEntry {
	t.Helper()
	es, err := d.AuditLog(context.Background(), AuditFilter{Kind: kind, Action: action})
	if err != nil {
		t.Fatal(err)
	}
	for _, e := range es {
		if row == 0 || (e.RowID != nil && *e.RowID == row) {
			return e
		}
	}
	t.Fatalf("no audit entry %s/%s row %d; log has %d entries of that kind", kind, action, row, len(es))
	return AuditEntry{}
}

func change(e AuditEntry, field string) (AuditChange, bool) {
	for _, c := range e.Changes() {
		if c.Field == field {
			return c, true
		}
	}
	return AuditChange{}, false
}

func wantChange(t *testing.T, e AuditEntry, field, before, after string) {
	t.Helper()
	c, ok := change(e, field)
	if !ok {
		t.Errorf("%s/%s #%d: no field %s in %s → %s", e.Kind, e.Action, e.ID, field, e.Before, e.After)
		return
	}
	if c.Before != before || c.After != after {
		t.Errorf("%s/%s %s: %q → %q, want %q → %q", e.Kind, e.Action, field, c.Before, c.After, before, after)
	}
}

func wantActor(t *testing.T, e AuditEntry, id int64, name, via string) {
	t.Helper()
	if e.ActorID == nil || *e.ActorID != id || e.ActorName != name || e.Via != via {
		got := int64(0)
		if e.ActorID != nil {
			got = *e.ActorID
		}
		t.Errorf("%s/%s: actor %d %q via %q, want %d %q via %q", e.Kind, e.Action, got, e.ActorName, e.Via, id, name, via)
	}
}

func TestAuditEveryTable(t *testing.T) {
	d, op := openRunsDB(t)
	admin, err := d.CreateUser(context.Background(), "ada", RoleAdmin, "$argon2id$secret-admin-hash")
	if err != nil {
		t.Fatal(err)
	}
	ctx := WithActor(context.Background(), Actor{UserID: op, Name: "opal", Via: ViaWeb})
	actx := WithActor(context.Background(), Actor{UserID: admin.ID, Name: "ada", Via: ViaWeb})

	// runs and tags
	ch, err := d.EnsureChamber(ctx, "chamber B", "")
	if err != nil {
		t.Fatal(err)
	}
	wantActor(t, auditFind(t, d, AuditChamber, "insert", ch), op, "opal", ViaWeb)
	in := RunInput{Title: "first", StartedAt: time.Date(2026, 3, 1, 9, 0, 0, 0, time.UTC), SourceType: "dc_glow", Tags: []string{"a"}}
	runID, err := d.CreateRun(ctx, op, in)
	if err != nil {
		t.Fatal(err)
	}
	e := auditFind(t, d, AuditRun, "insert", runID)
	wantActor(t, e, op, "opal", ViaWeb)
	wantChange(t, e, "title", "", "first")
	if e.RunID == nil || *e.RunID != runID {
		t.Errorf("run insert: run id %v", e.RunID)
	}
	in.Title, in.Tags = "second", []string{"b"}
	if err := d.UpdateRun(ctx, runID, in); err != nil {
		t.Fatal(err)
	}
	e = auditFind(t, d, AuditRun, "update", runID)
	wantChange(t, e, "title", "first", "second")
	if _, ok := change(e, "updated_at"); ok {
		t.Errorf("run update records updated_at: %s", e.After)
	}
	if _, ok := change(e, "source_type"); ok {
		t.Errorf("run update records an unchanged column: %s", e.After)
	}
	wantChange(t, auditFind(t, d, AuditRunTag, "delete", 0), "tag", "a", "")
	wantChange(t, auditFind(t, d, AuditRunTag, "insert", 0), "tag", "", "b")

	// files (through Begin, as the web handlers do) without their contents
	tx, err := d.Begin(ctx)
	if err != nil {
		t.Fatal(err)
	}
	attID, err := d.AddAttachmentTx(ctx, tx, runID, KindSpectrum, "shot1.csv", []byte("wl,counts\nUNIQUE-CONTENT-123,1\n"))
	if err != nil {
		t.Fatal(err)
	}
	if err := tx.Commit(); err != nil {
		t.Fatal(err)
	}
	e = auditFind(t, d, AuditFile, "insert", attID)
	wantActor(t, e, op, "opal", ViaWeb)
	wantChange(t, e, "name", "", "shot1.csv")
	wantChange(t, e, "size", "", "31")

	// analysis versions, and the run summary they update
	if _, err := d.AddAnalysis(ctx, runID, NewAnalysis{Settings: `{"instrument_fwhm_nm":0.05}`, EngineVersion: "t", CreatedBy: &op, Reason: "first analysis"}); err != nil {
		t.Fatal(err)
	}
	e = auditFind(t, d, AuditAnalysis, "insert", 0)
	wantChange(t, e, "reason", "", "first analysis")
	wantChange(t, e, "settings", "", `{"instrument_fwhm_nm":0.05}`)
	wantChange(t, e, "version", "", "1")

	// reviews
	if _, err := d.Review(ctx, runID, User{ID: op, Name: "opal", Role: RoleOperator}, ActionSubmit, ""); err != nil {
		t.Fatal(err)
	}
	wantChange(t, auditFind(t, d, AuditReview, "insert", 0), "to_status", "", "submitted")
	wantChange(t, auditFind(t, d, AuditRun, "update", runID), "status", "draft", "submitted")

	// comments
	c, err := d.AddComment(ctx, runID, op, "looks fine")
	if err != nil {
		t.Fatal(err)
	}
	wantChange(t, auditFind(t, d, AuditComment, "insert", c.ID), "body", "", "looks fine")

	// accounts and roles: password hashes never appear
	u, err := d.CreateUser(actx, "vera", RoleViewer, "$argon2id$secret-vera-hash-1")
	if err != nil {
		t.Fatal(err)
	}
	e = auditFind(t, d, AuditUser, "insert", u.ID)
	wantActor(t, e, admin.ID, "ada", ViaWeb)
	wantChange(t, e, "password_hash", "", "(hidden)")
	if err := d.SetUserRole(actx, u.ID, RoleOperator); err != nil {
		t.Fatal(err)
	}
	wantChange(t, auditFind(t, d, AuditUser, "update", u.ID), "role", "viewer", "operator")
	if err := d.SetUserPassword(actx, u.ID, "$argon2id$secret-vera-hash-2"); err != nil {
		t.Fatal(err)
	}
	wantChange(t, auditFind(t, d, AuditUser, "update", u.ID), "password_hash", "(hidden)", "(changed)")

	// tokens: creation and revocation, not their hash nor each use
	tokHash := []byte("0123456789abcdef0123456789abcdef")
	tok, err := d.CreateToken(actx, admin.ID, "lab script", tokHash)
	if err != nil {
		t.Fatal(err)
	}
	wantChange(t, auditFind(t, d, AuditToken, "insert", tok.ID), "name", "", "lab script")
	before := countAudit(t, d)
	if _, err := d.TokenUser(context.Background(), tokHash); err != nil {
		t.Fatal(err)
	}
	if n := countAudit(t, d); n != before {
		t.Errorf("a token use added %d audit entries", n-before)
	}
	if err := d.RevokeToken(actx, admin.ID, tok.ID); err != nil {
		t.Fatal(err)
	}
	e = auditFind(t, d, AuditToken, "update", tok.ID)
	if c, ok := change(e, "revoked_at"); !ok || c.Before != "null" || c.After == "null" {
		t.Errorf("token revocation: %+v", c)
	}

	// sessions: sign-in and its end, attributed to the session's user
	sh := []byte("session-hash-0123456789abcdef012")
	if err := d.CreateSession(context.Background(), sh, u.ID, time.Hour); err != nil {
		t.Fatal(err)
	}
	e = auditFind(t, d, AuditSession, "sign_in", 0)
	if e.ActorID == nil || *e.ActorID != u.ID || e.ActorName != "vera" {
		t.Errorf("sign-in actor %v %q, want %d vera", e.ActorID, e.ActorName, u.ID)
	}
	if err := d.DeleteSession(context.Background(), sh); err != nil {
		t.Fatal(err)
	}
	auditFind(t, d, AuditSession, "session_ended", 0)

	// instruments
	inst := &calib.Instrument{Name: "grating 1200", Source: "lamp", Points: []calib.InstrumentPoint{{WavelengthNM: 486, GaussFWHMNM: 0.05, GaussUncNM: 0.001}}}
	iid, err := d.SaveInstrument(actx, inst)
	if err != nil {
		t.Fatal(err)
	}
	wantChange(t, auditFind(t, d, AuditInstrument, "insert", iid), "name", "", "grating 1200")

	// the start of a background job, not its progress
	jid, err := d.CreateJob(actx, "reanalyze", `{"run_ids":[1],"reason":"new slit"}`, 1, admin.ID)
	if err != nil {
		t.Fatal(err)
	}
	e = auditFind(t, d, AuditJob, "insert", jid)
	wantActor(t, e, admin.ID, "ada", ViaWeb)
	wantChange(t, e, "params", "", `{"run_ids":[1],"reason":"new slit"}`)
	if err := d.JobProgress(context.Background(), jid, 1, 0, ""); err != nil {
		t.Fatal(err)
	}
	if es, _ := d.AuditLog(context.Background(), AuditFilter{Kind: AuditJob}); len(es) != 1 {
		t.Errorf("job entries: %d, want only the start", len(es))
	}

	// no secret and no file content anywhere in the log
	var all strings.Builder
	if err := d.EachAudit(context.Background(), AuditFilter{}, func(e AuditEntry) error {
		all.WriteString(e.Before + e.After + "\n")
		return nil
	}); err != nil {
		t.Fatal(err)
	}
	for _, secret := range []string{"secret-admin-hash", "secret-vera-hash", "secret-", hex.EncodeToString(tokHash), string(tokHash), "UNIQUE-CONTENT"} {
		if strings.Contains(all.String(), secret) {
			t.Errorf("the audit log contains %q", secret)
		}
	}

	// run history: only the run's records, newest first
	hist, err := d.AuditLog(context.Background(), AuditFilter{RunID: runID})
	if err != nil {
		t.Fatal(err)
	}
	kinds := map[string]bool{}
	for i, h := range hist {
		kinds[h.Kind] = true
		if i > 0 && h.ID > hist[i-1].ID {
			t.Errorf("history not newest first")
		}
	}
	for _, k := range []string{AuditRun, AuditRunTag, AuditFile, AuditAnalysis, AuditReview, AuditComment} {
		if !kinds[k] {
			t.Errorf("run history lacks %s records: %v", k, kinds)
		}
	}
	if kinds[AuditUser] {
		t.Errorf("run history shows account records")
	}
}

func countAudit(t *testing.T, d *DB) int {
	t.Helper()
	var n int
	if err := d.SQL().QueryRow(`SELECT count(*) FROM audit_log`).Scan(&n); err != nil {
		t.Fatal(err)
	}
	return n
}

func TestAuditLogAppendOnly(t *testing.T) {
	d, _ := openRunsDB(t)
	if countAudit(t, d) < 2 {
		t.Fatal("expected the log-started and user records")
	}
	for _, q := range []string{
		`UPDATE audit_log SET actor_name = 'someone else'`,
		`UPDATE audit_log SET after = NULL WHERE id = 1`,
		`DELETE FROM audit_log`,
		`DELETE FROM audit_log WHERE id = 1`,
		`INSERT OR REPLACE INTO audit_log (id, at, kind, action) VALUES (1, 0, 'run', 'insert')`,
		`REPLACE INTO audit_log (id, at, kind, action) VALUES (2, 0, 'run', 'insert')`,
		`INSERT INTO audit_log (id, at, kind, action) VALUES (1, 0, 'run', 'insert') ON CONFLICT(id) DO UPDATE SET action = 'x'`,
	} {
		before := dumpAudit(t, d)
		_, err := d.SQL().Exec(q)
		if err == nil || !strings.Contains(err.Error(), "append-only") {
			t.Errorf("%s: err %v, want an append-only refusal", q, err)
		}
		if after := dumpAudit(t, d); after != before {
			t.Errorf("%s changed the log", q)
		}
	}
	if _, err := d.SQL().Exec(`DELETE FROM audit_actor`); err == nil {
		t.Errorf("the audit_actor row could be deleted (later records would have no actor row to read)")
	}
	// the start record is there
	e := auditFind(t, d, AuditLog, "log_started", 0)
	if e.ID != 1 {
		t.Errorf("log_started is entry %d, want 1", e.ID)
	}
}

func dumpAudit(t *testing.T, d *DB) string {
	t.Helper()
	var b strings.Builder
	rows, err := d.SQL().Query(`SELECT id, at, actor_name, kind, action, coalesce(before,''), coalesce(after,'') FROM audit_log ORDER BY id`)
	if err != nil {
		t.Fatal(err)
	}
	defer rows.Close()
	for rows.Next() {
		var id, at int64
		var a, k, ac, bf, af string
		if err := rows.Scan(&id, &at, &a, &k, &ac, &bf, &af); err != nil {
			t.Fatal(err)
		}
		b.WriteString(strings.Join([]string{a, k, ac, bf, af}, "|") + "\n")
	}
	return b.String()
}

// A transaction whose commit the store does not own (Begin) leaves its
// actor in audit_actor; the next write without an actor must not inherit it.
func TestAuditActorNotInherited(t *testing.T) {
	d, op := openRunsDB(t)
	ctx := WithActor(context.Background(), Actor{UserID: op, Name: "opal", Via: ViaAPI})
	tx, err := d.Begin(ctx)
	if err != nil {
		t.Fatal(err)
	}
	if _, err := tx.Exec(`INSERT INTO chambers (name) VALUES ('c1')`); err != nil {
		t.Fatal(err)
	}
	if err := tx.Commit(); err != nil {
		t.Fatal(err)
	}
	wantActor(t, auditFind(t, d, AuditChamber, "insert", 0), op, "opal", ViaAPI)
	id, err := d.EnsureChamber(context.Background(), "c2", "")
	if err != nil {
		t.Fatal(err)
	}
	e := auditFind(t, d, AuditChamber, "insert", id)
	if e.ActorID != nil || e.ActorName != "" || e.Via != "" {
		t.Errorf("write without an actor logged as %v %q via %q", e.ActorID, e.ActorName, e.Via)
	}
}

// A column added by a later migration is audited after the next start;
// a start with nothing to change writes nothing to the schema.
func TestAuditNewColumn(t *testing.T) {
	ctx := context.Background()
	path := filepath.Join(t.TempDir(), "a.db")
	d, err := Open(ctx, path)
	if err != nil {
		t.Fatal(err)
	}
	version := func(d *DB) int {
		var v int
		if err := d.SQL().QueryRow(`PRAGMA schema_version`).Scan(&v); err != nil {
			t.Fatal(err)
		}
		return v
	}
	v0 := version(d)
	d.Close()
	if d, err = Open(ctx, path); err != nil {
		t.Fatal(err)
	}
	if v := version(d); v != v0 {
		t.Errorf("reopening changed the schema (version %d → %d): the triggers were rewritten", v0, v)
	}
	if _, err := d.SQL().Exec(`ALTER TABLE users ADD COLUMN note TEXT NOT NULL DEFAULT ''`); err != nil {
		t.Fatal(err)
	}
	d.Close()
	d, err = Open(ctx, path)
	if err != nil {
		t.Fatal(err)
	}
	defer d.Close()
	u, err := d.CreateUser(ctx, "nia", RoleViewer, "h")
	if err != nil {
		t.Fatal(err)
	}
	if _, err := d.exec(ctx, `UPDATE users SET note = 'on leave' WHERE id = ?`, u.ID); err != nil {
		t.Fatal(err)
	}
	wantChange(t, auditFind(t, d, AuditUser, "update", u.ID), "note", "", "on leave")
}

// Every write to an audited table in the store goes through a transaction
// that records the actor (inTx, Begin or exec), not a bare d.db.ExecContext.
func TestAuditWritesCarryActor(t *testing.T) {
	files, err := filepath.Glob("*.go")
	if err != nil {
		t.Fatal(err)
	}
	audited := map[string]auditSpec{}
	for _, sp := range auditSpecs {
		audited[sp.table] = sp
	}
	bare := regexp.MustCompile("d\\.db\\.ExecContext\\(ctx,\\s*`\\s*(INSERT INTO|UPDATE|DELETE FROM|REPLACE INTO)\\s+(\\w+)(?:\\s+SET\\s+(\\w+))?")
	for _, f := range files {
		if strings.HasSuffix(f, "_test.go") {
			continue
		}
		src, err := os.ReadFile(f)
		if err != nil {
			t.Fatal(err)
		}
		for _, m := range bare.FindAllStringSubmatch(string(src), -1) {
			sp, ok := audited[m[2]]
			switch {
			case !ok:
				continue
			case m[1] == "UPDATE" && (sp.noUpdate || slices.Contains(sp.ignore, m[3])):
				continue // not audited (e.g. a token's last use, a job's progress)
			case m[1] == "DELETE FROM" && sp.noDelete:
				continue
			}
			t.Errorf("%s: %q writes audited table %s outside an actor-recording transaction; use d.exec or d.inTx", f, m[0], m[2])
		}
	}
}

// Rows removed by a cascade (a run's tags and comments when the run goes)
// are recorded too, with the actor of the deleting transaction.
func TestAuditCascadeDelete(t *testing.T) {
	d, op := openRunsDB(t)
	ctx := WithActor(context.Background(), Actor{UserID: op, Name: "opal", Via: ViaCLI})
	id, err := d.CreateRun(ctx, op, RunInput{Title: "gone", StartedAt: time.Date(2026, 3, 1, 0, 0, 0, 0, time.UTC), SourceType: "dc_glow", Tags: []string{"t"}})
	if err != nil {
		t.Fatal(err)
	}
	if _, err := d.AddComment(ctx, id, op, "note"); err != nil {
		t.Fatal(err)
	}
	if _, err := d.exec(ctx, `DELETE FROM runs WHERE id = ?`, id); err != nil {
		t.Fatal(err)
	}
	for _, k := range []string{AuditRun, AuditRunTag, AuditComment} {
		e := auditFind(t, d, k, "delete", 0)
		wantActor(t, e, op, "opal", ViaCLI)
		if e.RunID == nil || *e.RunID != id {
			t.Errorf("%s delete: run %v", k, e.RunID)
		}
	}
}

// A migration may drop an audited column: the audit triggers are taken
// out during migrations and rebuilt from the new columns; each applied
// migration is noted in the trail.
func TestAuditMigrationDropsColumn(t *testing.T) {
	ctx := context.Background()
	path := filepath.Join(t.TempDir(), "m.db")
	d, err := Open(ctx, path)
	if err != nil {
		t.Fatal(err)
	}
	es, err := d.AuditLog(ctx, AuditFilter{Kind: AuditSchema, Action: "migration"})
	// The audit log's own migration and every later one are noted.
	names, _ := fs.Glob(migrations.FS, "*.sql")
	var want []string
	for _, n := range names {
		if n >= "0006_audit_log.sql" {
			want = append(want, n)
		}
	}
	if err != nil || len(es) != len(want) {
		t.Errorf("migration entries %+v, %v; want one per migration from 0006 on (%v)", es, err, want)
	}
	for _, n := range want {
		found := false
		for _, e := range es {
			found = found || strings.Contains(e.After, n)
		}
		if !found {
			t.Errorf("no audit entry for migration %s", n)
		}
	}
	if _, err := d.SQL().Exec(`ALTER TABLE instruments DROP COLUMN created_at`); err == nil {
		t.Fatal("dropping a column that the audit triggers name succeeded; the test no longer shows why they are dropped first")
	}
	if err := d.inTx(ctx, func(tx *sql.Tx) error {
		if err := dropAuditTriggers(ctx, tx); err != nil {
			return err
		}
		_, err := tx.Exec(`ALTER TABLE instruments DROP COLUMN created_at`)
		return err
	}); err != nil {
		t.Fatal(err)
	}
	d.Close()
	if d, err = Open(ctx, path); err != nil {
		t.Fatal(err)
	}
	defer d.Close()
	if _, err := d.exec(ctx, `INSERT INTO instruments (name, definition) VALUES ('i', '{}')`); err != nil {
		t.Fatal(err)
	}
	e := auditFind(t, d, AuditInstrument, "insert", 0)
	if _, ok := change(e, "created_at"); ok || !strings.Contains(e.After, `"name":"i"`) {
		t.Errorf("instrument entry after the column went: %s", e.After)
	}
}

// A sign-off column added later joins the review group: one sign-off,
// one record.
func TestAuditReviewGroup(t *testing.T) {
	ctx := context.Background()
	path := filepath.Join(t.TempDir(), "g.db")
	d, err := Open(ctx, path)
	if err != nil {
		t.Fatal(err)
	}
	if _, err := d.SQL().Exec(`ALTER TABLE runs ADD COLUMN signed_off_version INTEGER`); err != nil {
		t.Fatal(err)
	}
	d.Close()
	if d, err = Open(ctx, path); err != nil {
		t.Fatal(err)
	}
	defer d.Close()
	u, err := d.CreateUser(ctx, "rex", RoleReviewer, "h")
	if err != nil {
		t.Fatal(err)
	}
	id, err := d.CreateRun(ctx, u.ID, RunInput{Title: "r", StartedAt: time.Date(2026, 3, 1, 0, 0, 0, 0, time.UTC), SourceType: "dc_glow"})
	if err != nil {
		t.Fatal(err)
	}
	if _, err := d.exec(ctx, `UPDATE runs SET status = 'signed_off', signed_off_by = ?, signed_off_at = 5, signed_off_version = 1 WHERE id = ?`, u.ID, id); err != nil {
		t.Fatal(err)
	}
	es, err := d.AuditLog(ctx, AuditFilter{RunID: id, Action: "update"})
	if err != nil || len(es) != 1 {
		t.Fatalf("sign-off gave %d update records (%v), want 1", len(es), err)
	}
	wantChange(t, es[0], "signed_off_version", "null", "1")
	wantChange(t, es[0], "status", "draft", "signed_off")
}
