package store

import (
	"context"
	"fmt"
	"strings"
	"time"
)

// Comment is a remark on a run, by a user, at a time.
type Comment struct {
	ID         int64
	RunID      int64
	AuthorID   int64
	AuthorName string
	Body       string
	CreatedAt  time.Time
}

// AddComment stores a comment on run runID by authorID. An empty or too
// long body is ErrInvalid; an unknown run is ErrNotFound.
func (d *DB) AddComment(ctx context.Context, runID, authorID int64, body string) (Comment, error) {
	body = strings.TrimSpace(body)
	if body == "" {
		return Comment{}, fmt.Errorf("%w: the comment is empty", ErrInvalid)
	}
	if len([]rune(body)) > MaxNoteLen {
		return Comment{}, fmt.Errorf("%w: the comment is longer than %d characters", ErrInvalid, MaxNoteLen)
	}
	var n int
	if err := d.db.QueryRowContext(ctx, `SELECT count(*) FROM runs WHERE id = ?`, runID).Scan(&n); err != nil {
		return Comment{}, err
	}
	if n == 0 {
		return Comment{}, fmt.Errorf("run %d: %w", runID, ErrNotFound)
	}
	now := d.now()
	res, err := d.exec(ctx, `INSERT INTO comments (run_id, author_id, body, created_at) VALUES (?, ?, ?, ?)`,
		runID, authorID, body, now)
	if err != nil {
		return Comment{}, fmt.Errorf("store: add comment: %w", err)
	}
	id, _ := res.LastInsertId()
	return Comment{ID: id, RunID: runID, AuthorID: authorID, Body: body, CreatedAt: time.Unix(now, 0).UTC()}, nil
}

// Comments returns a run's comments, oldest first, with author names.
func (d *DB) Comments(ctx context.Context, runID int64) ([]Comment, error) {
	rows, err := d.db.QueryContext(ctx, `SELECT c.id, c.run_id, c.author_id, u.name, c.body, c.created_at
		FROM comments c JOIN users u ON u.id = c.author_id WHERE c.run_id = ? ORDER BY c.created_at, c.id`, runID)
	if err != nil {
		return nil, fmt.Errorf("store: comments: %w", err)
	}
	defer rows.Close()
	var out []Comment
	for rows.Next() {
		var c Comment
		var at int64
		if err := rows.Scan(&c.ID, &c.RunID, &c.AuthorID, &c.AuthorName, &c.Body, &at); err != nil {
			return nil, err
		}
		c.CreatedAt = time.Unix(at, 0).UTC()
		out = append(out, c)
	}
	return out, rows.Err()
}
