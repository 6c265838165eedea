package store

import (
	"context"
	"database/sql"
	"fmt"
	"strings"
)

// The statements of the ingest path (a file and its analysis version),
// prepared once: preparing compiles the audit triggers into every write
// statement, which cost about as much as running it. database/sql keeps a
// prepared statement on each pooled connection it has run on.
const (
	qRunStatus = `SELECT status FROM runs WHERE id = ?`
	// RunStatusTx (the signed-off check of uploads and reanalyses)
	qRunStatusApproved = `SELECT status, approved_version FROM runs WHERE id = ?`
	qNextSeq           = `SELECT coalesce(max(seq), 0) + 1 FROM attachments WHERE run_id = ? AND kind = ?`
	qAddAttachment     = `INSERT INTO attachments (run_id, kind, name, seq, size, created_at) VALUES (?, ?, ?, ?, ?, ?)`
	qAddContent        = `INSERT INTO attachment_contents (attachment_id, content) VALUES (?, ?)`
	qNextVersion       = `SELECT coalesce(max(version), 0) + 1 FROM analyses WHERE run_id = ?`
	qAddAnalysis       = `INSERT INTO analyses (run_id, version, settings, engine_version, created_by, created_at, reason)
		VALUES (?, ?, ?, ?, ?, ?, ?)`
	qAddResult = `INSERT INTO analysis_results (analysis_id, attachment_id, result, series, error, texc_k, texc_unc_k,
		ne_m3, ne_unc_m3, tgas_k, n_warnings, warn_worst, same_as) VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?)`
	qSetSummary = `UPDATE runs SET texc_k = ?, texc_unc_k = ?, ne_m3 = ?, ne_unc_m3 = ?, tgas_k = ?,
		n_warnings = ?, warn_worst = ?, analysis_version = ?, updated_at = ? WHERE id = ?`
	qLatestSettings = `SELECT settings FROM analyses WHERE run_id = ? ORDER BY version DESC LIMIT 1`
	qLatestAnalysis = `SELECT id, settings, engine_version FROM analyses WHERE run_id = ? ORDER BY version DESC LIMIT 1`
	qLatestResults  = `SELECT attachment_id, coalesce(same_as, id), coalesce(error, ''), texc_k, texc_unc_k,
		ne_m3, ne_unc_m3, tgas_k, n_warnings, warn_worst FROM analysis_results WHERE analysis_id = ?`
	qListAttachments = `SELECT id, run_id, kind, name, seq, size, created_at FROM attachments
		WHERE run_id = ? ORDER BY kind, seq`
	qContent = `SELECT content FROM attachment_contents WHERE attachment_id = ?`
	// pruneRunChangesTx (trends.go)
	qPruneChanges = `DELETE FROM run_changes WHERE seq < min(
		(SELECT max(seq) FROM run_changes) - ?, max(?, (SELECT max(seq) FROM run_changes) - ?))`
	// a group commit's savepoints (group.go)
	qSavepoint  = `SAVEPOINT group_write`
	qRelease    = `RELEASE group_write`
	qRollbackTo = `ROLLBACK TO group_write`
)

var hotQueries = []string{qRunStatus, qRunStatusApproved, qNextSeq, qAddAttachment, qAddContent, qNextVersion, qAddAnalysis, qAddResult, qAddResults,
	qSetSummary, qLatestSettings, qLatestAnalysis, qLatestResults, qListAttachments, qContent,
	qSavepoint, qRelease, qRollbackTo, qPruneChanges}

// Reads of the ingest path on the read pool, prepared once (database/sql
// prepares them again on each pooled connection the first time it is used
// there).
var (
	qGetRun  = `SELECT ` + runCols + runFrom + ` WHERE r.id = ?`
	qRunTags = `SELECT tag FROM run_tags WHERE run_id = ? ORDER BY tag`
	// LookupToken (every API request)
	qLookupToken = `SELECT t.id, t.last_used_at, ` + userColsU + `
		FROM api_tokens t JOIN users u ON u.id = t.user_id
		WHERE t.token_hash = ? AND t.revoked_at IS NULL AND u.disabled = 0`

	// RunContents (every reanalysis reads its run's files)
	qRunContents = `SELECT a.id, c.content FROM attachments a
		JOIN attachment_contents c ON c.attachment_id = a.id WHERE a.run_id = ?`

	readQueries = []string{qGetRun, qRunTags, qLatestSettings, qListAttachments, qLookupToken, qRunContents}
)

// addResultsRows is the number of rows of qAddResults.
const addResultsRows = 8

// qAddResults is qAddResult for addResultsRows rows at once (a version
// repeats every earlier file of its run: one statement instead of one per
// file).
var qAddResults = `INSERT INTO analysis_results (analysis_id, attachment_id, result, series, error, texc_k, texc_unc_k,
		ne_m3, ne_unc_m3, tgas_k, n_warnings, warn_worst, same_as) VALUES ` +
	strings.TrimSuffix(strings.Repeat("(?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?), ", addResultsRows), ", ")

// prepareHot prepares hotQueries (after the migrations and triggers: a
// later schema change makes SQLite compile a statement again by itself).
func (d *DB) prepareHot(ctx context.Context) error {
	d.hot = make(map[string]*sql.Stmt, len(hotQueries))
	for _, q := range hotQueries {
		st, err := d.wdb.PrepareContext(ctx, q)
		if err != nil {
			return fmt.Errorf("store: prepare %q: %w", q, err)
		}
		d.hot[q] = st
	}
	d.rhot = make(map[string]*sql.Stmt, len(readQueries))
	for _, q := range readQueries {
		st, err := d.db.PrepareContext(ctx, q)
		if err != nil {
			return fmt.Errorf("store: prepare %q: %w", q, err)
		}
		d.rhot[q] = st
	}
	return nil
}

// readStmt returns the read pool's prepared statement of query q (one of
// readQueries).
func (d *DB) readStmt(q string) *sql.Stmt {
	st, ok := d.rhot[q]
	if !ok {
		panic("store: statement not prepared: " + q)
	}
	return st
}

// txStmt returns the prepared statement of query q (one of hotQueries)
// for use in tx; the caller closes it (which keeps the prepared statement
// on the connection for the next transaction).
func (d *DB) txStmt(ctx context.Context, tx *sql.Tx, q string) *sql.Stmt {
	st, ok := d.hot[q]
	if !ok {
		panic("store: statement not prepared: " + q)
	}
	return tx.StmtContext(ctx, st)
}

// txExec runs a prepared hot statement in tx.
func (d *DB) txExec(ctx context.Context, tx *sql.Tx, q string, args ...any) (sql.Result, error) {
	st := d.txStmt(ctx, tx, q)
	defer st.Close()
	return st.ExecContext(ctx, args...)
}

// txQueryRow scans one row of a prepared hot statement in tx.
func (d *DB) txQueryRow(ctx context.Context, tx *sql.Tx, q string, args []any, dest ...any) error {
	st := d.txStmt(ctx, tx, q)
	defer st.Close()
	return st.QueryRowContext(ctx, args...).Scan(dest...)
}
