package store

import (
	"context"
	"database/sql"
	"fmt"
	"strings"
	"time"
)

// Review states (keys of Statuses).
const (
	StatusDraft     = "draft"
	StatusSubmitted = "submitted"
	StatusReturned  = "returned"
	StatusSignedOff = "signed_off"
)

// ErrNotAllowed is returned (wrapped) when the user may not make a review
// transition although the transition itself is valid (a reviewer signing
// off their own run, an operator submitting someone else's). It wraps
// ErrConflict; handlers answer it with 403.
var ErrNotAllowed = fmt.Errorf("%w: not allowed", ErrConflict)

// MaxNoteLen bounds review notes and comments (characters).
const MaxNoteLen = 5000

// ReviewAction is a review transition.
type ReviewAction string

// The review actions: draft or returned → submitted; submitted →
// signed_off or returned; signed_off → returned (reopen, by a reviewer
// with a reason: the only way a signed-off run's numbers can change).
const (
	ActionSubmit  ReviewAction = "submit"
	ActionSignOff ReviewAction = "signoff"
	ActionReturn  ReviewAction = "return"
	ActionReopen  ReviewAction = "reopen"
)

var reviewRules = map[ReviewAction]struct {
	from []string
	to   string
}{
	ActionSubmit:  {[]string{StatusDraft, StatusReturned}, StatusSubmitted},
	ActionSignOff: {[]string{StatusSubmitted}, StatusSignedOff},
	ActionReturn:  {[]string{StatusSubmitted}, StatusReturned},
	ActionReopen:  {[]string{StatusSignedOff}, StatusReturned},
}

// StatusEvent is one review transition of a run.
type StatusEvent struct {
	ID       int64
	RunID    int64
	From, To string
	UserID   int64
	UserName string
	At       time.Time
	Note     string
	// AnalysisVersion is the run's analysis version at this step: for a
	// sign-off the version approved, for a reopen the one that had been
	// approved (0: not recorded, events before migration 0005).
	AnalysisVersion int
}

// MayReview reports whether user by may take action on a run operated by
// operatorID, and if not, why (a sentence for the user). It does not look
// at the run's state.
func MayReview(action ReviewAction, by User, operatorID int64) (bool, string) {
	switch action {
	case ActionSubmit:
		if by.ID != operatorID && !by.Role.Can(RoleAdmin) {
			return false, "only the run's operator or an admin can submit it for review"
		}
	case ActionSignOff:
		if !by.Role.Can(RoleReviewer) {
			return false, "signing off needs the reviewer role"
		}
		if by.ID == operatorID {
			return false, "you operated this run, so you cannot sign it off yourself: another reviewer has to"
		}
	case ActionReturn:
		if !by.Role.Can(RoleReviewer) {
			return false, "returning a run needs the reviewer role"
		}
	case ActionReopen:
		if !by.Role.Can(RoleReviewer) {
			return false, "reopening a signed-off run needs the reviewer role"
		}
	default:
		return false, "unknown review action"
	}
	return true, ""
}

// Review applies a review action to run runID by user by, with a note
// (required when returning or reopening), and records the transition in
// status_events in the same transaction. A transition that the run's state
// does not allow is ErrConflict; one the user may not make is
// ErrNotAllowed; a missing note is ErrInvalid. It returns the recorded
// event.
//
// Sign-off approves the run's current analysis version: it is recorded in
// runs.approved_version and stays what the run shows until a reopen, which
// makes the newest version current again.
func (d *DB) Review(ctx context.Context, runID int64, by User, action ReviewAction, note string) (StatusEvent, error) {
	return d.ReviewSeen(ctx, runID, by, action, note, 0)
}

// ReviewSeen is Review for a reviewer who looked at analysis version seen
// (0: not given): a sign-off is refused (ErrConflict) when the run's
// current version is no longer seen, so that nobody approves numbers they
// did not see.
func (d *DB) ReviewSeen(ctx context.Context, runID int64, by User, action ReviewAction, note string, seen int) (StatusEvent, error) {
	rule, ok := reviewRules[action]
	if !ok {
		return StatusEvent{}, fmt.Errorf("%w: unknown review action %q", ErrInvalid, action)
	}
	note = strings.TrimSpace(note)
	if action == ActionReturn && note == "" {
		return StatusEvent{}, fmt.Errorf("%w: a note is required when returning a run: say what needs rework", ErrInvalid)
	}
	if action == ActionReopen && note == "" {
		return StatusEvent{}, fmt.Errorf("%w: a reason is required when reopening a signed-off run: say why its approval is withdrawn", ErrInvalid)
	}
	if len([]rune(note)) > MaxNoteLen {
		return StatusEvent{}, fmt.Errorf("%w: the note is longer than %d characters", ErrInvalid, MaxNoteLen)
	}
	ev := StatusEvent{RunID: runID, To: rule.to, UserID: by.ID, UserName: by.Name, Note: note}
	err := d.inTx(ctx, func(tx *sql.Tx) error {
		var operator int64
		var current int
		var approved sql.NullInt64
		if err := tx.QueryRowContext(ctx, `SELECT status, operator_id, analysis_version, approved_version FROM runs WHERE id = ?`, runID).
			Scan(&ev.From, &operator, &current, &approved); err != nil {
			return errNoRows(err, fmt.Sprintf("run %d", runID))
		}
		ev.AnalysisVersion = current
		if ev.From == StatusSignedOff && approved.Valid {
			ev.AnalysisVersion = int(approved.Int64)
		}
		if ok, why := MayReview(action, by, operator); !ok {
			return fmt.Errorf("%w: %s", ErrNotAllowed, why)
		}
		allowed := false
		labels := make([]string, len(rule.from))
		for i, f := range rule.from {
			allowed = allowed || f == ev.From
			labels[i] = "“" + StatusLabel(f) + "”"
		}
		if !allowed {
			return fmt.Errorf("%w: run %d is “%s”; only runs that are %s can be moved to “%s”", ErrConflict, runID,
				StatusLabel(ev.From), strings.Join(labels, " or "), StatusLabel(rule.to))
		}
		if action == ActionSignOff && seen > 0 && seen != current {
			return fmt.Errorf("%w: run %d now shows analysis version %d, not the version %d you reviewed; look at version %d before signing off",
				ErrConflict, runID, current, seen, current)
		}
		now := d.now()
		ev.At = time.Unix(now, 0).UTC()
		var err error
		if action == ActionSignOff {
			_, err = tx.ExecContext(ctx, `UPDATE runs SET status = ?, signed_off_by = ?, signed_off_at = ?, approved_version = analysis_version,
				updated_at = ? WHERE id = ?`, rule.to, by.ID, now, now, runID)
		} else {
			_, err = tx.ExecContext(ctx, `UPDATE runs SET status = ?, signed_off_by = NULL, signed_off_at = NULL, approved_version = NULL,
				updated_at = ? WHERE id = ?`, rule.to, now, runID)
		}
		if err != nil {
			return fmt.Errorf("store: review: %w", err)
		}
		if action == ActionReopen {
			// Versions added while it was signed off become visible: the
			// newest is current again.
			if err := d.refreshSummaryTx(ctx, tx, runID); err != nil {
				return fmt.Errorf("store: reopen: %w", err)
			}
		}
		res, err := tx.ExecContext(ctx, `INSERT INTO status_events (run_id, from_status, to_status, user_id, at, note, analysis_version)
			VALUES (?, ?, ?, ?, ?, ?, ?)`, runID, ev.From, ev.To, by.ID, now, note, ev.AnalysisVersion)
		if err != nil {
			return fmt.Errorf("store: status event: %w", err)
		}
		ev.ID, _ = res.LastInsertId()
		return nil
	})
	if err != nil {
		return StatusEvent{}, err
	}
	return ev, nil
}

// StatusEvents returns a run's review history, oldest first.
func (d *DB) StatusEvents(ctx context.Context, runID int64) ([]StatusEvent, error) {
	rows, err := d.db.QueryContext(ctx, `SELECT e.id, e.run_id, e.from_status, e.to_status, e.user_id, u.name, e.at, e.note,
		coalesce(e.analysis_version, 0) FROM status_events e JOIN users u ON u.id = e.user_id WHERE e.run_id = ? ORDER BY e.at, e.id`, runID)
	if err != nil {
		return nil, fmt.Errorf("store: status events: %w", err)
	}
	defer rows.Close()
	var out []StatusEvent
	for rows.Next() {
		var e StatusEvent
		var at int64
		if err := rows.Scan(&e.ID, &e.RunID, &e.From, &e.To, &e.UserID, &e.UserName, &at, &e.Note, &e.AnalysisVersion); err != nil {
			return nil, err
		}
		e.At = time.Unix(at, 0).UTC()
		out = append(out, e)
	}
	return out, rows.Err()
}

// QueueItem is a run in the review queue or the recently signed-off list.
type QueueItem struct {
	Run Run
	// At is when it was submitted (queue) or signed off (recent list);
	// By is who did it.
	At time.Time
	By string
}

// ReviewQueue returns the runs awaiting review, oldest submission first,
// at most limit (0: 200).
func (d *DB) ReviewQueue(ctx context.Context, limit int) ([]QueueItem, error) {
	if limit <= 0 {
		limit = 200
	}
	return d.queue(ctx, `SELECT `+runCols+`, coalesce(e.at, r.updated_at), coalesce(eu.name, '')`+runFrom+`
		LEFT JOIN status_events e ON e.id = (SELECT max(id) FROM status_events WHERE run_id = r.id AND to_status = 'submitted')
		LEFT JOIN users eu ON eu.id = e.user_id
		WHERE r.status = 'submitted' ORDER BY coalesce(e.at, r.updated_at), r.id LIMIT ?`, limit)
}

// RecentlySignedOff returns the last limit (0: 20) runs signed off, newest first.
func (d *DB) RecentlySignedOff(ctx context.Context, limit int) ([]QueueItem, error) {
	if limit <= 0 {
		limit = 20
	}
	return d.queue(ctx, `SELECT `+runCols+`, r.signed_off_at, coalesce(su.name, '')`+runFrom+`
		LEFT JOIN users su ON su.id = r.signed_off_by
		WHERE r.status = 'signed_off' AND r.signed_off_at IS NOT NULL ORDER BY r.signed_off_at DESC, r.id DESC LIMIT ?`, limit)
}

func (d *DB) queue(ctx context.Context, query string, args ...any) ([]QueueItem, error) {
	rows, err := d.db.QueryContext(ctx, query, args...)
	if err != nil {
		return nil, fmt.Errorf("store: review queue: %w", err)
	}
	defer rows.Close()
	var out []QueueItem
	for rows.Next() {
		var it QueueItem
		var at int64
		r, err := scanRun(scanExtra{rows, []any{&at, &it.By}})
		if err != nil {
			return nil, err
		}
		it.Run, it.At = r, time.Unix(at, 0).UTC()
		out = append(out, it)
	}
	return out, rows.Err()
}

// scanExtra lets scanRun read rows that have extra columns after runCols.
type scanExtra struct {
	row   interface{ Scan(...any) error }
	extra []any
}

func (s scanExtra) Scan(dest ...any) error { return s.row.Scan(append(dest, s.extra...)...) }
