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
	return scanUser(d.db.QueryRowContext(ctx, `SELECT `+userColsU+`
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

// TokenAuth is what a token lookup finds: the token's user, the token's
// id and when its use was last stored (zero: never).
type TokenAuth struct {
	User       User
	TokenID    int64
	LastUsedAt time.Time
}

// LookupToken finds the enabled user of an unrevoked token. It only reads:
// recording the use is TouchToken, which callers do rarely and outside
// the request (a write per API request would queue behind every writer).
// An unknown, revoked or disabled token is ErrNotFound; any other error
// is the database's.
func (d *DB) LookupToken(ctx context.Context, tokenHash []byte) (TokenAuth, error) {
	var a TokenAuth
	var used sql.NullInt64
	var role string
	var created int64
	var disabled, mustChange int
	err := d.readStmt(qLookupToken).QueryRowContext(ctx, tokenHash).
		Scan(&a.TokenID, &used, &a.User.ID, &a.User.Name, &role, &a.User.PasswordHash, &created, &disabled, &mustChange)
	if errors.Is(err, sql.ErrNoRows) {
		return TokenAuth{}, fmt.Errorf("token: %w", ErrNotFound)
	}
	if err != nil {
		return TokenAuth{}, fmt.Errorf("store: token lookup: %w", err)
	}
	a.User.Role, a.User.CreatedAt = Role(role), time.Unix(created, 0)
	a.User.Disabled, a.User.MustChangePassword = disabled != 0, mustChange != 0
	if used.Valid {
		a.LastUsedAt = time.Unix(used.Int64, 0)
	}
	return a, nil
}

// TokenUser returns the enabled user of an unrevoked token (a read; see
// LookupToken).
func (d *DB) TokenUser(ctx context.Context, tokenHash []byte) (User, error) {
	a, err := d.LookupToken(ctx, tokenHash)
	return a.User, err
}

// TouchToken records that token id was used at t (never moving the stored
// time backwards).
func (d *DB) TouchToken(ctx context.Context, id int64, t time.Time) error {
	_, err := d.exec(ctx, `UPDATE api_tokens SET last_used_at = ? WHERE id = ? AND (last_used_at IS NULL OR last_used_at < ?)`,
		t.Unix(), id, t.Unix())
	return err
}

// RevokeUserTokens revokes all of a user's active tokens and returns how
// many there were.
func (d *DB) RevokeUserTokens(ctx context.Context, userID int64) (int, error) {
	res, err := d.exec(ctx, `UPDATE api_tokens SET revoked_at = ? WHERE user_id = ? AND revoked_at IS NULL`, d.now(), userID)
	if err != nil {
		return 0, err
	}
	n, _ := res.RowsAffected()
	return int(n), nil
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
