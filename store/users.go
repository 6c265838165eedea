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
}

// CreateUser adds a user; a taken name is ErrConflict.
func (d *DB) CreateUser(ctx context.Context, name string, role Role, passwordHash string) (User, error) {
	name = strings.TrimSpace(name)
	if name == "" || len(name) > 64 {
		return User{}, fmt.Errorf("%w: user name must be 1–64 characters", ErrInvalid)
	}
	if _, err := ParseRole(string(role)); err != nil {
		return User{}, err
	}
	now := d.now()
	res, err := d.exec(ctx, `INSERT INTO users (name, role, password_hash, created_at) VALUES (?, ?, ?, ?)`,
		name, string(role), passwordHash, now)
	if err != nil {
		if strings.Contains(err.Error(), "UNIQUE") {
			return User{}, fmt.Errorf("%w: user %q exists", ErrConflict, name)
		}
		return User{}, fmt.Errorf("store: create user: %w", err)
	}
	id, _ := res.LastInsertId()
	return User{ID: id, Name: name, Role: role, PasswordHash: passwordHash, CreatedAt: time.Unix(now, 0)}, nil
}

const userCols = `id, name, role, password_hash, created_at, disabled`

func scanUser(row interface{ Scan(...any) error }) (User, error) {
	var u User
	var role string
	var created int64
	var disabled int
	if err := row.Scan(&u.ID, &u.Name, &role, &u.PasswordHash, &created, &disabled); err != nil {
		if errors.Is(err, sql.ErrNoRows) {
			return u, fmt.Errorf("user: %w", ErrNotFound)
		}
		return u, err
	}
	u.Role, u.CreatedAt, u.Disabled = Role(role), time.Unix(created, 0), disabled != 0
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
	return d.inTx(ctx, func(tx *sql.Tx) error {
		res, err := tx.ExecContext(ctx, `UPDATE users SET password_hash = ? WHERE id = ?`, hash, id)
		if err != nil {
			return err
		}
		if n, _ := res.RowsAffected(); n == 0 {
			return fmt.Errorf("user %d: %w", id, ErrNotFound)
		}
		_, err = tx.ExecContext(ctx, `DELETE FROM sessions WHERE user_id = ?`, id)
		return err
	})
}
