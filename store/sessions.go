package store

import (
	"context"
	"database/sql"
	"errors"
	"fmt"
	"time"
)

// CreateSession stores the hash of a new session token for user until ttl
// from now.
func (d *DB) CreateSession(ctx context.Context, tokenHash []byte, userID int64, ttl time.Duration) error {
	now := d.Now()
	_, err := d.exec(ctx, `INSERT INTO sessions (token_hash, user_id, created_at, expires_at) VALUES (?, ?, ?, ?)`,
		tokenHash, userID, now.Unix(), now.Add(ttl).Unix())
	if err != nil {
		return fmt.Errorf("store: create session: %w", err)
	}
	return nil
}

// SessionUser returns the enabled user of an unexpired session.
func (d *DB) SessionUser(ctx context.Context, tokenHash []byte) (User, error) {
	return scanUser(d.db.QueryRowContext(ctx, `SELECT u.id, u.name, u.role, u.password_hash, u.created_at, u.disabled
		FROM sessions s JOIN users u ON u.id = s.user_id
		WHERE s.token_hash = ? AND s.expires_at > ? AND u.disabled = 0`, tokenHash, d.now()))
}

// DeleteSession ends a session (logout); deleting an unknown one is not an
// error.
func (d *DB) DeleteSession(ctx context.Context, tokenHash []byte) error {
	_, err := d.exec(ctx, `DELETE FROM sessions WHERE token_hash = ?`, tokenHash)
	return err
}

// PurgeSessions deletes expired sessions.
func (d *DB) PurgeSessions(ctx context.Context) error {
	_, err := d.exec(ctx, `DELETE FROM sessions WHERE expires_at <= ?`, d.now())
	return err
}

// Token is an API token's record (the token itself is shown once and
// stored only as a hash).
type Token struct {
	ID         int64
	UserID     int64
	Name       string
	CreatedAt  time.Time
	LastUsedAt *time.Time
	RevokedAt  *time.Time
}

// CreateToken stores the hash of a new API token.
func (d *DB) CreateToken(ctx context.Context, userID int64, name string, tokenHash []byte) (Token, error) {
	now := d.now()
	res, err := d.exec(ctx, `INSERT INTO api_tokens (user_id, name, token_hash, created_at) VALUES (?, ?, ?, ?)`,
		userID, name, tokenHash, now)
	if err != nil {
		return Token{}, fmt.Errorf("store: create token: %w", err)
	}
	id, _ := res.LastInsertId()
	return Token{ID: id, UserID: userID, Name: name, CreatedAt: time.Unix(now, 0)}, nil
}

// TokenUser returns the enabled user of an unrevoked token and records
// its use.
func (d *DB) TokenUser(ctx context.Context, tokenHash []byte) (User, error) {
	var id int64
	err := d.db.QueryRowContext(ctx, `SELECT t.id FROM api_tokens t JOIN users u ON u.id = t.user_id
		WHERE t.token_hash = ? AND t.revoked_at IS NULL AND u.disabled = 0`, tokenHash).Scan(&id)
	if errors.Is(err, sql.ErrNoRows) {
		return User{}, fmt.Errorf("token: %w", ErrNotFound)
	}
	if err != nil {
		return User{}, err
	}
	if _, err := d.db.ExecContext(ctx, `UPDATE api_tokens SET last_used_at = ? WHERE id = ?`, d.now(), id); err != nil {
		return User{}, err
	}
	return scanUser(d.db.QueryRowContext(ctx, `SELECT u.id, u.name, u.role, u.password_hash, u.created_at, u.disabled
		FROM api_tokens t JOIN users u ON u.id = t.user_id WHERE t.id = ?`, id))
}

// Tokens lists a user's tokens, newest first.
func (d *DB) Tokens(ctx context.Context, userID int64) ([]Token, error) {
	rows, err := d.db.QueryContext(ctx, `SELECT id, user_id, name, created_at, last_used_at, revoked_at
		FROM api_tokens WHERE user_id = ? ORDER BY id DESC`, userID)
	if err != nil {
		return nil, err
	}
	defer rows.Close()
	var out []Token
	for rows.Next() {
		var t Token
		var created int64
		var used, revoked sql.NullInt64
		if err := rows.Scan(&t.ID, &t.UserID, &t.Name, &created, &used, &revoked); err != nil {
			return nil, err
		}
		t.CreatedAt = time.Unix(created, 0)
		if used.Valid {
			u := time.Unix(used.Int64, 0)
			t.LastUsedAt = &u
		}
		if revoked.Valid {
			r := time.Unix(revoked.Int64, 0)
			t.RevokedAt = &r
		}
		out = append(out, t)
	}
	return out, rows.Err()
}

// RevokeToken revokes one of a user's tokens.
func (d *DB) RevokeToken(ctx context.Context, userID, tokenID int64) error {
	res, err := d.exec(ctx, `UPDATE api_tokens SET revoked_at = ? WHERE id = ? AND user_id = ? AND revoked_at IS NULL`,
		d.now(), tokenID, userID)
	if err != nil {
		return err
	}
	if n, _ := res.RowsAffected(); n == 0 {
		return fmt.Errorf("token %d: %w", tokenID, ErrNotFound)
	}
	return nil
}
