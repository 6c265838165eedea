package store

import (
	"context"
	"database/sql"
	"fmt"
	"strings"
)

// EnsureChamberTx is EnsureChamber inside the caller's transaction (a new
// chamber named on the run form is stored with the run or not at all).
func (d *DB) EnsureChamberTx(ctx context.Context, tx *sql.Tx, name string) (int64, error) {
	return ensureNamedTx(ctx, tx, "chambers", name)
}

// EnsureRecipeTx is EnsureRecipe inside the caller's transaction.
func (d *DB) EnsureRecipeTx(ctx context.Context, tx *sql.Tx, name string) (int64, error) {
	return ensureNamedTx(ctx, tx, "recipes", name)
}

func ensureNamedTx(ctx context.Context, tx *sql.Tx, table, name string) (int64, error) {
	name = strings.TrimSpace(name)
	if name == "" || len(name) > 100 {
		return 0, fmt.Errorf("%w: a %s name must have 1–100 characters", ErrInvalid, strings.TrimSuffix(table, "s"))
	}
	if _, err := tx.ExecContext(ctx, `INSERT INTO `+table+` (name) VALUES (?) ON CONFLICT(name) DO NOTHING`, name); err != nil {
		return 0, fmt.Errorf("store: add %s: %w", table, err)
	}
	var id int64
	if err := tx.QueryRowContext(ctx, `SELECT id FROM `+table+` WHERE name = ?`, name).Scan(&id); err != nil {
		return 0, fmt.Errorf("store: find %s: %w", table, err)
	}
	return id, nil
}

// RunTags returns the tags of every run that has any, by run id (for
// exports, which cannot query per row while EachRun iterates).
func (d *DB) RunTags(ctx context.Context) (map[int64][]string, error) {
	rows, err := d.db.QueryContext(ctx, `SELECT run_id, tag FROM run_tags ORDER BY run_id, tag`)
	if err != nil {
		return nil, fmt.Errorf("store: run tags: %w", err)
	}
	defer rows.Close()
	out := map[int64][]string{}
	for rows.Next() {
		var id int64
		var t string
		if err := rows.Scan(&id, &t); err != nil {
			return nil, err
		}
		out[id] = append(out[id], t)
	}
	return out, rows.Err()
}

// Tags lists every tag in use, alphabetically (for the run list's filter).
// The distinct tags are read by jumping from one to the next in the tag
// index, not by reading every tagged run.
func (d *DB) Tags(ctx context.Context) ([]string, error) {
	rows, err := d.db.QueryContext(ctx, `WITH RECURSIVE t(tag) AS (
		SELECT min(tag) FROM run_tags
		UNION ALL
		SELECT (SELECT min(tag) FROM run_tags WHERE tag > t.tag) FROM t WHERE t.tag IS NOT NULL)
		SELECT tag FROM t WHERE tag IS NOT NULL`)
	if err != nil {
		return nil, fmt.Errorf("store: tags: %w", err)
	}
	defer rows.Close()
	var out []string
	for rows.Next() {
		var t string
		if err := rows.Scan(&t); err != nil {
			return nil, err
		}
		out = append(out, t)
	}
	return out, rows.Err()
}
