package store

import (
	"context"
	"database/sql"
	"errors"
	"path/filepath"
	"testing"
)

// TestOpenSyncMode: Options.Sync reaches every pooled connection as
// PRAGMA synchronous (1 NORMAL, 2 FULL); a wrong name is refused.
func TestOpenSyncMode(t *testing.T) {
	ctx := context.Background()
	for _, c := range []struct {
		opts []Options
		want int
	}{{nil, 1}, {[]Options{{Sync: "normal"}}, 1}, {[]Options{{Sync: "full"}}, 2}, {[]Options{{Sync: "FULL"}}, 2}} {
		d, err := Open(ctx, filepath.Join(t.TempDir(), "s.db"), c.opts...)
		if err != nil {
			t.Fatal(err)
		}
		d.SQL().SetMaxIdleConns(4)
		conns := make([]int, 0, 3)
		var held []*sql.Conn
		for range 3 { // several connections of the pool at once
			conn, err := d.SQL().Conn(ctx)
			if err != nil {
				t.Fatal(err)
			}
			var v int
			if err := conn.QueryRowContext(ctx, `PRAGMA synchronous`).Scan(&v); err != nil {
				t.Fatal(err)
			}
			conns = append(conns, v)
			held = append(held, conn)
		}
		for _, conn := range held {
			conn.Close()
		}
		for _, v := range conns {
			if v != c.want {
				t.Errorf("%v: synchronous %v, want %d", c.opts, conns, c.want)
				break
			}
		}
		d.Close()
	}
	if _, err := Open(ctx, filepath.Join(t.TempDir(), "s.db"), Options{Sync: "off"}); !errors.Is(err, ErrInvalid) {
		t.Fatalf("sync off: %v", err)
	}
}
