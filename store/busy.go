package store

import (
	"errors"

	"modernc.org/sqlite"
)

// sqliteBusy and sqliteLocked are SQLite's primary result codes
// SQLITE_BUSY and SQLITE_LOCKED (extended codes keep them in the low
// byte).
const (
	sqliteBusy   = 5
	sqliteLocked = 6
)

// IsBusy reports whether err is SQLite's "database is locked": another
// connection, here or in another process, held the write lock for longer
// than the busy timeout (5 s). Nothing of the failed write was stored;
// the same write can be tried again.
func IsBusy(err error) bool {
	var se *sqlite.Error
	if !errors.As(err, &se) {
		return false
	}
	c := se.Code() & 0xff
	return c == sqliteBusy || c == sqliteLocked
}
