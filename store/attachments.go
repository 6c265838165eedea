package store

import (
	"context"
	"database/sql"
	"errors"
	"fmt"
	"time"
)

// Attachment kinds.
const (
	KindSpectrum  = "spectrum"
	KindDark      = "dark"
	KindResponse  = "response"
	KindLineTable = "line_table"
)

// MaxAttachmentBytes bounds one stored file.
const MaxAttachmentBytes = 32 << 20

// Attachment is a file or line table attached to a run.
type Attachment struct {
	ID        int64
	RunID     int64
	Kind      string
	Name      string
	Seq       int
	Content   []byte // nil in listings
	Size      int
	CreatedAt time.Time
}

// AddAttachmentTx stores an attachment inside the caller's transaction;
// Seq is the next in the run for its kind.
func (d *DB) AddAttachmentTx(ctx context.Context, tx *sql.Tx, runID int64, kind, name string, content []byte) (int64, error) {
	switch kind {
	case KindSpectrum, KindDark, KindResponse, KindLineTable:
	default:
		return 0, fmt.Errorf("%w: unknown attachment kind %q", ErrInvalid, kind)
	}
	if len(content) == 0 {
		return 0, fmt.Errorf("%w: %s is empty", ErrInvalid, name)
	}
	if len(content) > MaxAttachmentBytes {
		return 0, fmt.Errorf("%w: %s is %d bytes, above the %d-byte limit", ErrInvalid, name, len(content), MaxAttachmentBytes)
	}
	// A signed-off run's files are what its reviewer approved: checked
	// here, inside the write transaction, so that a sign-off committed
	// after a handler's own check still wins.
	var status string
	if err := d.txQueryRow(ctx, tx, qRunStatus, []any{runID}, &status); err != nil {
		return 0, errNoRows(err, fmt.Sprintf("run %d", runID))
	}
	if status == StatusSignedOff {
		return 0, fmt.Errorf("%w: run %d is signed off: its files are locked until a reviewer reopens it", ErrConflict, runID)
	}
	var seq int
	if err := d.txQueryRow(ctx, tx, qNextSeq, []any{runID, kind}, &seq); err != nil {
		return 0, err
	}
	res, err := d.txExec(ctx, tx, qAddAttachment, runID, kind, name, seq, len(content), d.now())
	if err != nil {
		return 0, fmt.Errorf("store: add attachment: %w", err)
	}
	id, err := res.LastInsertId()
	if err != nil {
		return 0, err
	}
	if _, err := d.txExec(ctx, tx, qAddContent, id, content); err != nil {
		return 0, fmt.Errorf("store: add attachment content: %w", err)
	}
	return id, nil
}

// Attachments lists a run's attachments (without content) by kind and seq.
func (d *DB) Attachments(ctx context.Context, runID int64) ([]Attachment, error) {
	return listAttachments(ctx, stmtQuerier{d.readStmt(qListAttachments)}, runID)
}

// AttachmentsTx is Attachments inside the caller's transaction. Write
// transactions are immediate (they hold the write lock from BEGIN), so the
// list is every file committed before the transaction plus those it added
// itself, and no other writer can add one until it ends: an analysis
// version built from this list includes exactly the files committed before
// it.
func (d *DB) AttachmentsTx(ctx context.Context, tx *sql.Tx, runID int64) ([]Attachment, error) {
	st := d.txStmt(ctx, tx, qListAttachments)
	defer st.Close()
	return listAttachments(ctx, stmtQuerier{st}, runID)
}

// querier is what *sql.DB and *sql.Tx share.
type querier interface {
	QueryContext(ctx context.Context, query string, args ...any) (*sql.Rows, error)
	QueryRowContext(ctx context.Context, query string, args ...any) *sql.Row
}

// stmtQuerier runs a prepared statement as a querier (the query text
// given is that of the statement).
type stmtQuerier struct{ st *sql.Stmt }

func (q stmtQuerier) QueryContext(ctx context.Context, _ string, args ...any) (*sql.Rows, error) {
	return q.st.QueryContext(ctx, args...)
}

func (q stmtQuerier) QueryRowContext(ctx context.Context, _ string, args ...any) *sql.Row {
	return q.st.QueryRowContext(ctx, args...)
}

func listAttachments(ctx context.Context, q querier, runID int64) ([]Attachment, error) {
	rows, err := q.QueryContext(ctx, qListAttachments, runID)
	if err != nil {
		return nil, err
	}
	defer rows.Close()
	var out []Attachment
	for rows.Next() {
		var a Attachment
		var created int64
		if err := rows.Scan(&a.ID, &a.RunID, &a.Kind, &a.Name, &a.Seq, &a.Size, &created); err != nil {
			return nil, err
		}
		a.CreatedAt = time.Unix(created, 0).UTC()
		out = append(out, a)
	}
	return out, rows.Err()
}

// AttachmentContent returns one attachment with its content.
func (d *DB) AttachmentContent(ctx context.Context, id int64) (Attachment, error) {
	var a Attachment
	var created int64
	err := d.db.QueryRowContext(ctx, `SELECT a.id, a.run_id, a.kind, a.name, a.seq, c.content, a.created_at
		FROM attachments a JOIN attachment_contents c ON c.attachment_id = a.id WHERE a.id = ?`, id).
		Scan(&a.ID, &a.RunID, &a.Kind, &a.Name, &a.Seq, &a.Content, &created)
	if errors.Is(err, sql.ErrNoRows) {
		return a, fmt.Errorf("attachment %d: %w", id, ErrNotFound)
	}
	a.Size, a.CreatedAt = len(a.Content), time.Unix(created, 0).UTC()
	return a, err
}

// AttachmentContentTx returns an attachment's content inside the
// caller's write transaction: it sees the files the transaction added
// itself, and in a group commit (InGroupTx) those of the writes before
// it, which are not committed yet.
func (d *DB) AttachmentContentTx(ctx context.Context, tx *sql.Tx, id int64) ([]byte, error) {
	var b []byte
	if err := d.txQueryRow(ctx, tx, qContent, []any{id}, &b); err != nil {
		return nil, errNoRows(err, fmt.Sprintf("attachment %d", id))
	}
	return b, nil
}

// RunContents returns the content of every attachment of a run, by id,
// in one query (what a reanalysis of the whole run reads).
func (d *DB) RunContents(ctx context.Context, runID int64) (map[int64][]byte, error) {
	rows, err := d.readStmt(qRunContents).QueryContext(ctx, runID)
	if err != nil {
		return nil, err
	}
	defer rows.Close()
	out := map[int64][]byte{}
	for rows.Next() {
		var id int64
		var b []byte
		if err := rows.Scan(&id, &b); err != nil {
			return nil, err
		}
		out[id] = b
	}
	return out, rows.Err()
}

// Begin starts a transaction for requests that store several things
// atomically (a run with its attachments and first analysis); the
// context's actor is recorded for the audit trail.
func (d *DB) Begin(ctx context.Context) (*sql.Tx, error) {
	// The caller commits: the checkpoints of the transaction before this
	// one (checkpoint.go) are started here.
	d.afterCommit()
	d.restartWAL()
	tx, err := d.wdb.BeginTx(ctx, nil)
	if err != nil {
		return nil, err
	}
	if err := d.setActor(ctx, tx); err != nil {
		tx.Rollback()
		return nil, err
	}
	return tx, nil
}
