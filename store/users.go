package store

import (
	"context"
	"database/sql"
	"errors"
	"fmt"
	"strings"
	"time"
)

// Role is a user's role.
type Role string

// Roles, in increasing power: viewers read; operators create and edit
// their own runs; reviewers review and sign off; admins manage users.
const (
	RoleViewer   Role = "viewer"
	RoleOperator Role = "operator"
	RoleReviewer Role = "reviewer"
	RoleAdmin    Role = "admin"
)

// ParseRole checks a role name.
func ParseRole(s string) (Role, error) {
	switch r := Role(strings.ToLower(s)); r {
	case RoleViewer, RoleOperator, RoleReviewer, RoleAdmin:
		return r, nil
	}
	return "", fmt.Errorf("%w: unknown role %q (viewer, operator, reviewer or admin)", ErrInvalid, s)
}

// Can reports whether the role includes the powers of min.
func (r Role) Can(min Role) bool { return roleRank[r] >= roleRank[min] }

var roleRank = map[Role]int{RoleViewer: 1, RoleOperator: 2, RoleReviewer: 3, RoleAdmin: 4}

// User is an account.
type User struct {
	ID           int64
	Name         string
	Role         Role
	PasswordHash string
	CreatedAt    time.Time
	Disabled     bool
	// MustChangePassword is set for the account made at first start: every
	// page leads to the password form until the user sets their own.
	MustChangePassword bool
}

// CreateUser adds a user; a taken name is ErrConflict.
func (d *DB) CreateUser(ctx context.Context, name string, role Role, passwordHash string) (User, error) {
	return d.CreateUserMustChange(ctx, name, role, passwordHash, false)
}

// CreateUserMustChange adds a user whose password must be changed at
// first sign-in when mustChange (the account made at first start).
func (d *DB) CreateUserMustChange(ctx context.Context, name string, role Role, passwordHash string, mustChange bool) (User, error) {
	name = strings.TrimSpace(name)
	if name == "" || len(name) > 64 {
		return User{}, fmt.Errorf("%w: user name must be 1–64 characters", ErrInvalid)
	}
	if _, err := ParseRole(string(role)); err != nil {
		return User{}, err
	}
	now := d.now()
	res, err := d.exec(ctx, `INSERT INTO users (name, role, password_hash, created_at, must_change_password) VALUES (?, ?, ?, ?, ?)`,
		name, string(role), passwordHash, now, boolInt(mustChange))
	if err != nil {
		if strings.Contains(err.Error(), "UNIQUE") {
			return User{}, fmt.Errorf("%w: user %q exists", ErrConflict, name)
		}
		return User{}, fmt.Errorf("store: create user: %w", err)
	}
	id, _ := res.LastInsertId()
	return User{ID: id, Name: name, Role: role, PasswordHash: passwordHash, CreatedAt: time.Unix(now, 0), MustChangePassword: mustChange}, nil
}

const userCols = `id, name, role, password_hash, created_at, disabled, must_change_password`

// userColsU is userCols qualified by the alias u.
const userColsU = `u.id, u.name, u.role, u.password_hash, u.created_at, u.disabled, u.must_change_password`

func scanUser(row interface{ Scan(...any) error }) (User, error) {
	var u User
	var role string
	var created int64
	var disabled, mustChange int
	if err := row.Scan(&u.ID, &u.Name, &role, &u.PasswordHash, &created, &disabled, &mustChange); err != nil {
		if errors.Is(err, sql.ErrNoRows) {
			return u, fmt.Errorf("user: %w", ErrNotFound)
		}
		return u, err
	}
	u.Role, u.CreatedAt, u.Disabled, u.MustChangePassword = Role(role), time.Unix(created, 0), disabled != 0, mustChange != 0
	return u, nil
}

// UserByName finds a user by name (case-insensitive).
func (d *DB) UserByName(ctx context.Context, name string) (User, error) {
	return scanUser(d.db.QueryRowContext(ctx, `SELECT `+userCols+` FROM users WHERE name = ?`, strings.TrimSpace(name)))
}

// UserByID finds a user by id.
func (d *DB) UserByID(ctx context.Context, id int64) (User, error) {
	return scanUser(d.db.QueryRowContext(ctx, `SELECT `+userCols+` FROM users WHERE id = ?`, id))
}

// Users lists all users by name.
func (d *DB) Users(ctx context.Context) ([]User, error) {
	rows, err := d.db.QueryContext(ctx, `SELECT `+userCols+` FROM users ORDER BY name`)
	if err != nil {
		return nil, err
	}
	defer rows.Close()
	var out []User
	for rows.Next() {
		u, err := scanUser(rows)
		if err != nil {
			return nil, err
		}
		out = append(out, u)
	}
	return out, rows.Err()
}

// CountUsers returns the number of accounts.
func (d *DB) CountUsers(ctx context.Context) (int, error) {
	var n int
	err := d.db.QueryRowContext(ctx, `SELECT count(*) FROM users`).Scan(&n)
	return n, err
}

// SetUserRole changes a user's role.
func (d *DB) SetUserRole(ctx context.Context, id int64, role Role) error {
	if _, err := ParseRole(string(role)); err != nil {
		return err
	}
	res, err := d.exec(ctx, `UPDATE users SET role = ? WHERE id = ?`, string(role), id)
	if err != nil {
		return err
	}
	if n, _ := res.RowsAffected(); n == 0 {
		return fmt.Errorf("user %d: %w", id, ErrNotFound)
	}
	return nil
}

// SetUserPassword replaces a user's password hash and ends their sessions.
func (d *DB) SetUserPassword(ctx context.Context, id int64, hash string) error {
	return d.ChangePassword(ctx, id, hash, false)
}

// ChangePassword replaces a user's password hash, clears the
// must-change-password flag and ends the user's sessions; with
// revokeTokens it also revokes all their API tokens, in the same
// transaction.
func (d *DB) ChangePassword(ctx context.Context, id int64, hash string, revokeTokens bool) error {
	return d.inTx(ctx, func(tx *sql.Tx) error {
		res, err := tx.ExecContext(ctx, `UPDATE users SET password_hash = ?, must_change_password = 0 WHERE id = ?`, hash, id)
		if err != nil {
			return err
		}
		if n, _ := res.RowsAffected(); n == 0 {
			return fmt.Errorf("user %d: %w", id, ErrNotFound)
		}
		if _, err = tx.ExecContext(ctx, `DELETE FROM sessions WHERE user_id = ?`, id); err != nil {
			return err
		}
		if revokeTokens {
			_, err = tx.ExecContext(ctx, `UPDATE api_tokens SET revoked_at = ? WHERE user_id = ? AND revoked_at IS NULL`, d.now(), id)
		}
		return err
	})
}

// SetMustChangePassword sets or clears the must-change-password flag.
func (d *DB) SetMustChangePassword(ctx context.Context, id int64, must bool) error {
	res, err := d.exec(ctx, `UPDATE users SET must_change_password = ? WHERE id = ?`, boolInt(must), id)
	if err != nil {
		return err
	}
	if n, _ := res.RowsAffected(); n == 0 {
		return fmt.Errorf("user %d: %w", id, ErrNotFound)
	}
	return nil
}

// SetUserDisabled disables or re-enables an account. A disabled account's
// sessions are deleted and its tokens stop working at once (token and
// session lookups require an enabled user); re-enabling brings the tokens
// back but not the sessions.
func (d *DB) SetUserDisabled(ctx context.Context, id int64, disabled bool) error {
	return d.inTx(ctx, func(tx *sql.Tx) error {
		res, err := tx.ExecContext(ctx, `UPDATE users SET disabled = ? WHERE id = ?`, boolInt(disabled), id)
		if err != nil {
			return err
		}
		if n, _ := res.RowsAffected(); n == 0 {
			return fmt.Errorf("user %d: %w", id, ErrNotFound)
		}
		if disabled {
			_, err = tx.ExecContext(ctx, `DELETE FROM sessions WHERE user_id = ?`, id)
		}
		return err
	})
}

// EndSessions deletes all of a user's sessions and returns how many there
// were.
func (d *DB) EndSessions(ctx context.Context, userID int64) (int, error) {
	res, err := d.exec(ctx, `DELETE FROM sessions WHERE user_id = ?`, userID)
	if err != nil {
		return 0, err
	}
	n, _ := res.RowsAffected()
	return int(n), nil
}

func boolInt(b bool) int {
	if b {
		return 1
	}
	return 0
}
