package store

import (
	"context"
	"database/sql"
	"encoding/json"
	"fmt"
	"math"
	"regexp"
	"sort"
	"strconv"
	"strings"
	"time"
)

// The audit trail (migration 0006): triggers on the audited tables append
// a row to audit_log for every insert, update and delete — who (the actor
// of the write transaction, see WithActor), when, which record, the
// action, and the row before and after as JSON. Nothing in glowlog
// updates or deletes audit_log, and triggers refuse it.
//
// The triggers are generated here from each table's columns and put in
// place at Open (only when they differ from the ones in the database), so
// a column added by a later migration is audited without anyone having
// to remember to extend a trigger.

// Actor is who makes a change: a user (ID 0: none, e.g. a sign-in attempt
// or a command-line tool) and the way in.
type Actor struct {
	UserID int64
	Name   string
	// Via is how the change came in: "web", "api", "cli", "demo", "job".
	Via string
}

// Ways in (Actor.Via).
const (
	ViaWeb  = "web"
	ViaAPI  = "api"
	ViaCLI  = "cli"
	ViaDemo = "demo"
	ViaJob  = "job"
)

type actorKey struct{}

// WithActor returns ctx carrying the actor of the writes made with it.
// Every write transaction the store begins with that context records the
// actor in the audit trail; writes without one are logged with no actor
// ("system").
func WithActor(ctx context.Context, a Actor) context.Context {
	return context.WithValue(ctx, actorKey{}, a)
}

// ActorFrom returns the actor carried by ctx.
func ActorFrom(ctx context.Context) (Actor, bool) {
	a, ok := ctx.Value(actorKey{}).(Actor)
	return a, ok
}

// setActor writes the context's actor (or none) into audit_actor at the
// start of a write transaction, so that the audit triggers of the
// transaction's statements see it. It is written even when ctx carries
// no actor, so that a transaction never inherits the actor of an earlier
// one whose commit the store did not own (Begin).
func (d *DB) setActor(ctx context.Context, tx *sql.Tx) error {
	if !d.auditReady {
		return nil // during migrations: the table may not exist yet
	}
	a, _ := ActorFrom(ctx)
	var uid any
	if a.UserID != 0 {
		uid = a.UserID
	}
	if _, err := tx.StmtContext(ctx, d.actorSet).ExecContext(ctx, uid, a.Name, a.Via); err != nil {
		return fmt.Errorf("store: audit actor: %w", err)
	}
	return nil
}

// clearActor empties audit_actor before a commit the store owns, so that a
// write outside the store's transactions is logged without an actor
// rather than with the last one.
func (d *DB) clearActor(ctx context.Context, tx *sql.Tx) error {
	if !d.auditReady {
		return nil
	}
	if _, err := tx.StmtContext(ctx, d.actorClear).ExecContext(ctx); err != nil {
		return fmt.Errorf("store: audit actor: %w", err)
	}
	return nil
}

// exec runs one write statement in its own transaction with the
// context's actor recorded (use it instead of d.db.ExecContext for every
// write to an audited table).
func (d *DB) exec(ctx context.Context, query string, args ...any) (sql.Result, error) {
	var res sql.Result
	err := d.inTx(ctx, func(tx *sql.Tx) error {
		var err error
		res, err = tx.ExecContext(ctx, query, args...)
		return err
	})
	return res, err
}

// auditSpec says how one table is audited.
type auditSpec struct {
	table, kind string
	// rowID and runID are expressions over the row, R standing for NEW or
	// OLD; "" is NULL.
	rowID, runID string
	// actorFallback names the row's user column, used as the actor when
	// the transaction has none (a session is created by its own user
	// signing in).
	actorFallback string
	// secret columns show as "(hidden)" and, in an update, "(changed)".
	secret []string
	// ignore columns are left out of update records (bookkeeping that
	// changes without anyone changing the record, e.g. last use).
	ignore []string
	// deleteWhen limits which deletes are logged (R = OLD); "" logs all.
	deleteWhen string
	// insertAction and deleteAction name the actions ("" = insert/delete).
	insertAction, deleteAction string
	noUpdate, noDelete         bool
	// updateGroups are columns that statements set together, each audited
	// by its own update trigger (the other columns form one more group).
	// An UPDATE setting columns of several groups gives one record each.
	updateGroups []auditGroup
}

// auditGroup is a named group of columns (auditSpec.updateGroups); a
// name ending in * stands for every column with that prefix.
type auditGroup struct {
	name string
	cols []string
}

// auditSpecs are the audited tables. BLOB columns (token and session
// hashes, file contents) are never copied into the log.
var auditSpecs = []auditSpec{
	{table: "runs", kind: AuditRun, rowID: "R.id", runID: "R.id", ignore: []string{"updated_at"},
		updateGroups: []auditGroup{
			{"summary", []string{"texc_k", "texc_unc_k", "ne_m3", "ne_unc_m3", "tgas_k", "n_warnings", "analysis_version"}},
			// with whatever sign-off / reopening columns later migrations add
			{"review", []string{"status", "signed_off_*", "reopen*"}},
		}},
	{table: "run_tags", kind: AuditRunTag, runID: "R.run_id", noUpdate: true},
	{table: "attachments", kind: AuditFile, rowID: "R.id", runID: "R.run_id"},
	{table: "analyses", kind: AuditAnalysis, rowID: "R.id", runID: "R.run_id"},
	{table: "status_events", kind: AuditReview, rowID: "R.id", runID: "R.run_id"},
	{table: "comments", kind: AuditComment, rowID: "R.id", runID: "R.run_id"},
	{table: "users", kind: AuditUser, rowID: "R.id", secret: []string{"password_hash"}},
	{table: "api_tokens", kind: AuditToken, rowID: "R.id", ignore: []string{"last_used_at"}},
	{table: "sessions", kind: AuditSession, actorFallback: "user_id", noUpdate: true,
		insertAction: "sign_in", deleteAction: "session_ended",
		// expired sessions purged later are not worth a record
		deleteWhen: "R.expires_at > unixepoch()"},
	{table: "instruments", kind: AuditInstrument, rowID: "R.id"},
	{table: "chambers", kind: AuditChamber, rowID: "R.id"},
	// a background job's start (bulk reanalysis: which runs, the new
	// settings, the reason); its progress is bookkeeping
	{table: "jobs", kind: AuditJob, rowID: "R.id", noUpdate: true, noDelete: true},
	{table: "recipes", kind: AuditRecipe, rowID: "R.id"},
}

// Kinds of audited record (audit_log.kind).
const (
	AuditRun        = "run"
	AuditRunTag     = "run_tag"
	AuditFile       = "file"
	AuditAnalysis   = "analysis"
	AuditReview     = "review"
	AuditComment    = "comment"
	AuditUser       = "user"
	AuditToken      = "token"
	AuditSession    = "session"
	AuditInstrument = "instrument"
	AuditChamber    = "chamber"
	AuditRecipe     = "recipe"
	AuditJob        = "job"
	AuditSchema     = "schema"
	AuditLog        = "audit"
)

// AuditKinds lists the kinds for filters, in display order.
func AuditKinds() []string {
	return []string{AuditRun, AuditRunTag, AuditFile, AuditAnalysis, AuditReview, AuditComment,
		AuditUser, AuditToken, AuditSession, AuditInstrument, AuditChamber, AuditRecipe, AuditJob, AuditSchema, AuditLog}
}

// AuditActions lists the actions for filters.
func AuditActions() []string {
	return []string{"insert", "update", "delete", "sign_in", "sign_in_failed", "session_ended", "log_started", "migration"}
}

// plainName is a column name that needs no quoting in SQL nor in JSON.
var plainName = regexp.MustCompile(`^[A-Za-z_][A-Za-z0-9_]*$`)

// auditTriggers returns the trigger name → CREATE TRIGGER statement for
// one table with the given columns (name → declared type, in order).
func auditTriggers(sp auditSpec, cols []string, types map[string]string) map[string]string {
	secret := map[string]bool{}
	for _, c := range sp.secret {
		secret[c] = true
	}
	ignore := map[string]bool{}
	for _, c := range sp.ignore {
		ignore[c] = true
	}
	sub := func(expr, r string) string {
		if expr == "" {
			return "NULL"
		}
		return strings.ReplaceAll(expr, "R.", r+".")
	}
	// record builds json_object(...) of the whole row r (insert, delete).
	record := func(r string) string {
		var parts []string
		for _, c := range cols {
			if strings.EqualFold(types[c], "BLOB") {
				continue
			}
			v := r + "." + c
			if secret[c] {
				v = "'(hidden)'"
			}
			parts = append(parts, "'"+c+"', "+v)
		}
		return "json_object(" + strings.Join(parts, ", ") + ")"
	}
	actor := func(r string) (id, name string) {
		if sp.actorFallback == "" {
			return "a.user_id", "a.name"
		}
		f := r + "." + sp.actorFallback
		return "coalesce(a.user_id, " + f + ")",
			"coalesce(nullif(a.name, ''), (SELECT name FROM users WHERE id = coalesce(a.user_id, " + f + ")), '')"
	}
	const cols0 = "INSERT INTO audit_log (at, actor_id, actor_name, via, kind, row_id, run_id, action, before, after) "
	// audit_actor always has its one row (migration 0006 inserts it, a
	// trigger refuses deleting it, ensureAuditTriggers checks it), so a
	// plain FROM (cheaper to compile than a join) never loses a record.
	const from = " FROM audit_actor a"
	out := map[string]string{}
	action := func(a, def string) string {
		if a == "" {
			return def
		}
		return a
	}

	id, name := actor("NEW")
	n := "audit_" + sp.table + "_insert"
	out[n] = "CREATE TRIGGER " + n + " AFTER INSERT ON " + sp.table + " BEGIN " + cols0 +
		"SELECT unixepoch(), " + id + ", " + name + ", a.via, '" + sp.kind + "', " +
		sub(sp.rowID, "NEW") + ", " + sub(sp.runID, "NEW") + ", '" + action(sp.insertAction, "insert") + "', NULL, " + record("NEW") + from + "; END"

	if !sp.noDelete {
		id, name = actor("OLD")
		n = "audit_" + sp.table + "_delete"
		when := ""
		if sp.deleteWhen != "" {
			when = " WHEN " + sub(sp.deleteWhen, "OLD")
		}
		out[n] = "CREATE TRIGGER " + n + " AFTER DELETE ON " + sp.table + when + " BEGIN " + cols0 +
			"SELECT unixepoch(), " + id + ", " + name + ", a.via, '" + sp.kind + "', " +
			sub(sp.rowID, "OLD") + ", " + sub(sp.runID, "OLD") + ", '" + action(sp.deleteAction, "delete") + "', " + record("OLD") + ", NULL" + from + "; END"
	}

	if !sp.noUpdate {
		var audited []string
		for _, c := range cols {
			if !strings.EqualFold(types[c], "BLOB") && !ignore[c] {
				audited = append(audited, c)
			}
		}
		// One trigger per group of columns that statements set together,
		// each AFTER UPDATE OF its columns: SQLite compiles, with every
		// UPDATE statement, only the triggers of the columns it sets, so a
		// run's summary update does not pay for its conditions (and a
		// token's last use, an ignored column, compiles none).
		inGroup := map[string]bool{}
		type group struct {
			suffix string
			cols   []string
		}
		var groups []group
		for _, g := range sp.updateGroups {
			var gc []string
			for _, c := range audited {
				if inGroup[c] {
					continue
				}
				for _, p := range g.cols {
					if c == p || (strings.HasSuffix(p, "*") && strings.HasPrefix(c, strings.TrimSuffix(p, "*"))) {
						gc = append(gc, c)
						inGroup[c] = true
						break
					}
				}
			}
			if len(gc) > 0 {
				groups = append(groups, group{"_" + g.name, gc})
			}
		}
		var rest []string
		for _, c := range audited {
			if !inGroup[c] {
				rest = append(rest, c)
			}
		}
		if len(rest) > 0 {
			groups = append([]group{{"", rest}}, groups...)
		}
		id, name = actor("NEW")
		for _, g := range groups {
			// Only the changed columns, as JSON text built column by
			// column (json_quote gives each value's JSON form): no JSON
			// parsing; WHEN skips updates that change nothing audited.
			var changed, before, after []string
			for _, c := range g.cols {
				diff := "OLD." + c + " IS NOT NEW." + c
				changed = append(changed, diff)
				if secret[c] {
					before = append(before, "CASE WHEN "+diff+" THEN ',\""+c+"\":\"(hidden)\"' ELSE '' END")
					after = append(after, "CASE WHEN "+diff+" THEN ',\""+c+"\":\"(changed)\"' ELSE '' END")
					continue
				}
				before = append(before, "CASE WHEN "+diff+" THEN ',\""+c+"\":' || json_quote(OLD."+c+") ELSE '' END")
				after = append(after, "CASE WHEN "+diff+" THEN ',\""+c+"\":' || json_quote(NEW."+c+") ELSE '' END")
			}
			obj := func(parts []string) string {
				return "'{' || substr(" + strings.Join(parts, " || ") + ", 2) || '}'"
			}
			n := "audit_" + sp.table + "_update" + g.suffix
			out[n] = "CREATE TRIGGER " + n + " AFTER UPDATE OF " + strings.Join(g.cols, ", ") + " ON " + sp.table +
				" WHEN " + strings.Join(changed, " OR ") + " BEGIN " + cols0 +
				"SELECT unixepoch(), " + id + ", " + name + ", a.via, '" + sp.kind + "', " +
				sub(sp.rowID, "NEW") + ", " + sub(sp.runID, "NEW") + ", 'update', " + obj(before) + ", " + obj(after) + from + "; END"
		}
	}
	return out
}

// wantAuditTriggers builds the audit triggers for the tables that exist.
func (d *DB) wantAuditTriggers(ctx context.Context, q interface {
	QueryContext(context.Context, string, ...any) (*sql.Rows, error)
}) (map[string]string, error) {
	want := map[string]string{}
	for _, sp := range auditSpecs {
		rows, err := q.QueryContext(ctx, `SELECT name, type FROM pragma_table_info(?) ORDER BY cid`, sp.table)
		if err != nil {
			return nil, err
		}
		var cols []string
		types := map[string]string{}
		for rows.Next() {
			var c, t string
			if err := rows.Scan(&c, &t); err != nil {
				rows.Close()
				return nil, err
			}
			cols = append(cols, c)
			types[c] = t
		}
		rows.Close()
		if err := rows.Err(); err != nil {
			return nil, err
		}
		if len(cols) == 0 {
			continue // table not in this schema
		}
		for _, c := range cols {
			if !plainName.MatchString(c) {
				return nil, fmt.Errorf("column %s.%q: the audit triggers need plain column names (letters, digits, _)", sp.table, c)
			}
		}
		for n, s := range auditTriggers(sp, cols, types) {
			want[n] = s
		}
	}
	return want, nil
}

// haveAuditTriggers reads the audit triggers in the database.
func haveAuditTriggers(ctx context.Context, q interface {
	QueryContext(context.Context, string, ...any) (*sql.Rows, error)
}) (map[string]string, error) {
	rows, err := q.QueryContext(ctx, `SELECT name, sql FROM sqlite_master WHERE type = 'trigger' AND name LIKE 'audit\_%' ESCAPE '\'
		AND name NOT LIKE 'audit\_log\_%' ESCAPE '\' AND name NOT LIKE 'audit\_actor\_%' ESCAPE '\'`)
	if err != nil {
		return nil, err
	}
	defer rows.Close()
	have := map[string]string{}
	for rows.Next() {
		var n, s string
		if err := rows.Scan(&n, &s); err != nil {
			return nil, err
		}
		have[n] = s
	}
	return have, rows.Err()
}

// dropAuditTriggers removes the generated audit triggers (before a
// migration; ensureAuditTriggers puts them back).
func dropAuditTriggers(ctx context.Context, tx *sql.Tx) error {
	have, err := haveAuditTriggers(ctx, tx)
	if err != nil {
		return err
	}
	for n := range have {
		if _, err := tx.ExecContext(ctx, `DROP TRIGGER "`+n+`"`); err != nil {
			return err
		}
	}
	return nil
}

// recordMigration notes an applied schema migration in the audit trail
// (once the trail exists): what a migration does to stored rows is not
// recorded row by row.
func recordMigration(ctx context.Context, tx *sql.Tx, name string) error {
	var n int
	if err := tx.QueryRowContext(ctx, `SELECT count(*) FROM sqlite_master WHERE type = 'table' AND name = 'audit_log'`).Scan(&n); err != nil || n == 0 {
		return err
	}
	_, err := tx.ExecContext(ctx, `INSERT INTO audit_log (at, kind, action, after) VALUES (unixepoch(), ?, 'migration', json_object('name', ?))`,
		AuditSchema, name)
	return err
}

// prepareActor prepares the two statements of every write transaction
// once (database/sql keeps them prepared on each connection).
func (d *DB) prepareActor(ctx context.Context) error {
	var err error
	if d.actorSet, err = d.wdb.PrepareContext(ctx, `UPDATE audit_actor SET user_id = ?, name = ?, via = ? WHERE id = 1`); err != nil {
		return fmt.Errorf("store: audit actor: %w", err)
	}
	if d.actorClear, err = d.wdb.PrepareContext(ctx, `UPDATE audit_actor SET user_id = NULL, name = '', via = '' WHERE id = 1`); err != nil {
		return fmt.Errorf("store: audit actor: %w", err)
	}
	return nil
}

// ensureAuditTriggers puts the audit triggers in place (after the
// migrations). Nothing is written when they are current.
func (d *DB) ensureAuditTriggers(ctx context.Context) error {
	same := func(want, have map[string]string) bool {
		if len(want) != len(have) {
			return false
		}
		for n, s := range want {
			if have[n] != s {
				return false
			}
		}
		return true
	}
	want, err := d.wantAuditTriggers(ctx, d.db)
	if err != nil {
		return fmt.Errorf("store: audit triggers: %w", err)
	}
	have, err := haveAuditTriggers(ctx, d.db)
	if err != nil {
		return fmt.Errorf("store: audit triggers: %w", err)
	}
	var actors int
	if err := d.db.QueryRowContext(ctx, `SELECT count(*) FROM audit_actor`).Scan(&actors); err != nil {
		return fmt.Errorf("store: audit actor: %w", err)
	}
	if same(want, have) && actors == 1 {
		return nil
	}
	err = d.inTx(ctx, func(tx *sql.Tx) error {
		if _, err := tx.ExecContext(ctx, `INSERT OR IGNORE INTO audit_actor (id) VALUES (1)`); err != nil {
			return err
		}
		// again inside the write lock: another process may have done it
		want, err := d.wantAuditTriggers(ctx, tx)
		if err != nil {
			return err
		}
		have, err := haveAuditTriggers(ctx, tx)
		if err != nil {
			return err
		}
		names := make([]string, 0, len(want))
		for n := range want {
			names = append(names, n)
		}
		sort.Strings(names)
		for n := range have {
			if _, ok := want[n]; !ok {
				if _, err := tx.ExecContext(ctx, `DROP TRIGGER "`+n+`"`); err != nil {
					return err
				}
			}
		}
		for _, n := range names {
			if have[n] == want[n] {
				continue
			}
			if _, err := tx.ExecContext(ctx, `DROP TRIGGER IF EXISTS "`+n+`"`); err != nil {
				return err
			}
			if _, err := tx.ExecContext(ctx, want[n]); err != nil {
				return fmt.Errorf("%w\n%s", err, want[n])
			}
		}
		return nil
	})
	if err != nil {
		return fmt.Errorf("store: audit triggers: %w", err)
	}
	return nil
}

// AuditEntry is one record of the audit trail.
type AuditEntry struct {
	ID        int64
	At        time.Time
	ActorID   *int64
	ActorName string
	Via       string // "" = no actor known (the system)
	Kind      string
	RowID     *int64
	RunID     *int64
	Action    string
	Before    string // JSON object or ""
	After     string // JSON object or ""
}

// AuditChange is one field of an entry: its value before and after
// ("" where the side does not exist), as display text.
type AuditChange struct {
	Field, Before, After string
}

// Changes lists the entry's fields: for an update the changed ones, for
// an insert or delete the record's non-empty fields, in the order stored.
// Times (fields named …_at) show in RFC 3339.
func (e AuditEntry) Changes() []AuditChange {
	bk, bv := jsonFields(e.Before)
	ak, av := jsonFields(e.After)
	oneSided := e.Before == "" || e.After == ""
	var out []AuditChange
	seen := map[string]bool{}
	for _, k := range append(bk, ak...) {
		if seen[k] {
			continue
		}
		seen[k] = true
		b, a := bv[k], av[k]
		if oneSided && (b+a == "" || b+a == "null") {
			continue
		}
		if strings.HasSuffix(k, "_at") {
			b, a = auditTime(b), auditTime(a)
		}
		out = append(out, AuditChange{Field: k, Before: b, After: a})
	}
	return out
}

// auditTime shows a Unix-seconds value as RFC 3339 (UTC).
func auditTime(v string) string {
	n, err := strconv.ParseInt(v, 10, 64)
	if err != nil {
		return v
	}
	return time.Unix(n, 0).UTC().Format(time.RFC3339)
}

// jsonFields decodes a flat JSON object into its keys (in order) and
// display values.
func jsonFields(s string) ([]string, map[string]string) {
	vals := map[string]string{}
	if s == "" {
		return nil, vals
	}
	dec := json.NewDecoder(strings.NewReader(s))
	dec.UseNumber()
	var keys []string
	if t, err := dec.Token(); err != nil || t != json.Delim('{') {
		return nil, vals
	}
	for dec.More() {
		t, err := dec.Token()
		if err != nil {
			break
		}
		k, _ := t.(string)
		var v any
		if err := dec.Decode(&v); err != nil {
			break
		}
		keys = append(keys, k)
		vals[k] = auditValue(v)
	}
	return keys, vals
}

func auditValue(v any) string {
	switch x := v.(type) {
	case nil:
		return "null"
	case string:
		return x
	case json.Number:
		if i, err := x.Int64(); err == nil {
			return strconv.FormatInt(i, 10)
		}
		if f, err := x.Float64(); err == nil && !math.IsInf(f, 0) {
			return strconv.FormatFloat(f, 'g', -1, 64)
		}
		return x.String()
	default:
		b, _ := json.Marshal(x)
		return string(b)
	}
}

// AuditFilter selects audit entries; zero fields do not filter.
type AuditFilter struct {
	RunID  int64
	Actor  string // actor name, case-insensitive; "system" for none
	Kind   string
	Action string
	From   time.Time // inclusive
	To     time.Time // exclusive
	// BeforeID pages: only entries older than this id.
	BeforeID int64
	Limit    int // 0: no limit
}

func (f AuditFilter) where() (string, []any) {
	var conds []string
	var args []any
	if f.RunID != 0 {
		conds = append(conds, "run_id = ?")
		args = append(args, f.RunID)
	}
	if a := strings.TrimSpace(f.Actor); a != "" {
		if strings.EqualFold(a, "system") {
			conds = append(conds, "actor_id IS NULL AND actor_name = ''")
		} else {
			conds = append(conds, "actor_name = ? COLLATE NOCASE")
			args = append(args, a)
		}
	}
	if f.Kind != "" {
		conds = append(conds, "kind = ?")
		args = append(args, f.Kind)
	}
	if f.Action != "" {
		conds = append(conds, "action = ?")
		args = append(args, f.Action)
	}
	if !f.From.IsZero() {
		conds = append(conds, "at >= ?")
		args = append(args, f.From.Unix())
	}
	if !f.To.IsZero() {
		conds = append(conds, "at < ?")
		args = append(args, f.To.Unix())
	}
	if f.BeforeID != 0 {
		conds = append(conds, "id < ?")
		args = append(args, f.BeforeID)
	}
	if len(conds) == 0 {
		return "", nil
	}
	return " WHERE " + strings.Join(conds, " AND "), args
}

// AuditLog lists entries matching f, newest first.
func (d *DB) AuditLog(ctx context.Context, f AuditFilter) ([]AuditEntry, error) {
	var out []AuditEntry
	err := d.EachAudit(ctx, f, func(e AuditEntry) error {
		out = append(out, e)
		return nil
	})
	return out, err
}

// EachAudit calls fn for each entry matching f, newest first (for
// exports that should not hold the whole log in memory).
func (d *DB) EachAudit(ctx context.Context, f AuditFilter, fn func(AuditEntry) error) error {
	where, args := f.where()
	q := `SELECT id, at, actor_id, actor_name, via, kind, row_id, run_id, action, coalesce(before, ''), coalesce(after, '')
		FROM audit_log` + where + ` ORDER BY id DESC`
	if f.Limit > 0 {
		q += ` LIMIT ?`
		args = append(args, f.Limit)
	}
	rows, err := d.db.QueryContext(ctx, q, args...)
	if err != nil {
		return fmt.Errorf("store: audit log: %w", err)
	}
	defer rows.Close()
	for rows.Next() {
		var e AuditEntry
		var at int64
		var actor, row, run sql.NullInt64
		if err := rows.Scan(&e.ID, &at, &actor, &e.ActorName, &e.Via, &e.Kind, &row, &run, &e.Action, &e.Before, &e.After); err != nil {
			return err
		}
		e.At = time.Unix(at, 0).UTC()
		e.ActorID, e.RowID, e.RunID = nullI(actor), nullI(row), nullI(run)
		if err := fn(e); err != nil {
			return err
		}
	}
	return rows.Err()
}

func nullI(n sql.NullInt64) *int64 {
	if !n.Valid {
		return nil
	}
	v := n.Int64
	return &v
}

// RecordAuditEvent appends an event that is not a change of a stored
// record (a failed sign-in) to the audit trail, with the context's actor.
// details must not hold secrets.
func (d *DB) RecordAuditEvent(ctx context.Context, kind, action string, details map[string]any) error {
	b, err := json.Marshal(details)
	if err != nil {
		return err
	}
	a, _ := ActorFrom(ctx)
	var uid any
	if a.UserID != 0 {
		uid = a.UserID
	}
	_, err = d.exec(ctx, `INSERT INTO audit_log (at, actor_id, actor_name, via, kind, action, after) VALUES (unixepoch(), ?, ?, ?, ?, ?, ?)`,
		uid, a.Name, a.Via, kind, action, string(b))
	if err != nil {
		return fmt.Errorf("store: audit event: %w", err)
	}
	return nil
}
