package store

import (
	"context"
	"database/sql"
	"errors"
	"fmt"
	"path/filepath"
	"sync"
	"testing"
)

// TestGroupTx: writes queued together are stored together, each with its
// own actor in the audit trail; a failing write (error or panic) is
// undone alone and its error returned; a write whose context is gone is
// not run; after Close writes fail with ErrClosed.
func TestGroupTx(t *testing.T) {
	for _, mode := range []string{SyncNormal, SyncFull} {
		t.Run(mode, func(t *testing.T) {
			ctx := context.Background()
			d, err := Open(ctx, filepath.Join(t.TempDir(), "g.db"), Options{Sync: mode})
			if err != nil {
				t.Fatal(err)
			}
			defer d.Close()
			const n = 200
			var wg sync.WaitGroup
			errs := make([]error, n)
			for i := range n {
				wg.Add(1)
				go func() {
					defer wg.Done()
					actx := WithActor(ctx, Actor{UserID: 0, Name: fmt.Sprintf("writer %d", i), Via: ViaCLI})
					errs[i] = d.InGroupTx(actx, func(tx *sql.Tx) error {
						if _, err := tx.ExecContext(actx, `INSERT INTO chambers (name) VALUES (?)`, fmt.Sprintf("c%03d", i)); err != nil {
							return err
						}
						switch i % 10 {
						case 3:
							return fmt.Errorf("refused %d", i) // after a write: must be undone
						case 7:
							panic("boom")
						}
						return nil
					})
				}()
			}
			wg.Wait()
			if c := d.group.commits.Load(); c >= n*8/10 {
				t.Errorf("%d commits for %d successful writes queued together: nothing was grouped", c, n*8/10)
			} else {
				t.Logf("%d writes (%d successful) in %d commits", n, n*8/10, c)
			}
			for i, err := range errs {
				switch i % 10 {
				case 3:
					if err == nil || err.Error() != fmt.Sprintf("refused %d", i) {
						t.Errorf("write %d: %v, want its own error", i, err)
					}
				case 7:
					if err == nil {
						t.Errorf("write %d panicked but returned nil", i)
					}
				default:
					if err != nil {
						t.Errorf("write %d: %v", i, err)
					}
				}
			}
			rows, err := d.SQL().QueryContext(ctx, `SELECT name FROM chambers ORDER BY name`)
			if err != nil {
				t.Fatal(err)
			}
			stored := map[string]bool{}
			for rows.Next() {
				var s string
				rows.Scan(&s)
				stored[s] = true
			}
			rows.Close()
			for i := range n {
				want := i%10 != 3 && i%10 != 7
				if stored[fmt.Sprintf("c%03d", i)] != want {
					t.Errorf("chamber c%03d stored %v, want %v", i, !want, want)
				}
			}
			// every stored insert is audited with its own writer as actor
			es, err := d.AuditLog(ctx, AuditFilter{Kind: AuditChamber, Action: "insert"})
			if err != nil {
				t.Fatal(err)
			}
			if len(es) != len(stored) {
				t.Errorf("%d audit entries for %d stored chambers", len(es), len(stored))
			}
			for _, e := range es {
				var i int
				var name string
				if err := d.SQL().QueryRowContext(ctx, `SELECT name FROM chambers WHERE id = ?`, *e.RowID).Scan(&name); err != nil {
					t.Fatal(err)
				}
				fmt.Sscanf(name, "c%d", &i)
				if e.ActorName != fmt.Sprintf("writer %d", i) || e.Via != ViaCLI {
					t.Errorf("chamber %s recorded by %q via %q", name, e.ActorName, e.Via)
				}
			}
			// a cancelled caller's write is not run
			cctx, cancel := context.WithCancel(ctx)
			cancel()
			ran := false
			if err := d.InGroupTx(cctx, func(tx *sql.Tx) error { ran = true; return nil }); !errors.Is(err, context.Canceled) || ran {
				t.Errorf("cancelled write: ran %v, err %v", ran, err)
			}
			d.Close()
			if err := d.InGroupTx(ctx, func(tx *sql.Tx) error { return nil }); !errors.Is(err, ErrClosed) {
				t.Errorf("after Close: %v, want ErrClosed", err)
			}
		})
	}
}

// TestGroupTxUndoFails: a write that breaks its savepoint (here it
// releases it itself, so that it cannot be rolled back to) takes its whole
// group down: none of the group's writes is stored, and each hears so;
// writes of earlier groups stay.
func TestGroupTxUndoFails(t *testing.T) {
	ctx := context.Background()
	d, err := Open(ctx, filepath.Join(t.TempDir(), "g.db"))
	if err != nil {
		t.Fatal(err)
	}
	defer d.Close()
	insert := func(name string) func(tx *sql.Tx) error {
		return func(tx *sql.Tx) error {
			_, err := tx.ExecContext(ctx, `INSERT INTO chambers (name) VALUES (?)`, name)
			return err
		}
	}
	started, hold := make(chan struct{}), make(chan struct{})
	first := d.GroupTx(ctx, func(tx *sql.Tx) error { close(started); <-hold; return insert("first")(tx) })
	<-started
	// queued while the committer is busy with the first: one group
	second := d.GroupTx(ctx, insert("second"))
	bad := d.GroupTx(ctx, func(tx *sql.Tx) error {
		if err := insert("bad")(tx); err != nil {
			return err
		}
		if _, err := tx.ExecContext(ctx, `RELEASE group_write`); err != nil {
			return err
		}
		return errors.New("bad write")
	})
	third := d.GroupTx(ctx, insert("third"))
	close(hold)
	if err := <-first; err != nil {
		t.Fatalf("first: %v", err)
	}
	for name, ch := range map[string]<-chan error{"second": second, "bad": bad, "third": third} {
		if err := <-ch; err == nil {
			t.Errorf("%s: nil error, but its group could not be committed", name)
		}
	}
	var names []string
	rows, err := d.SQL().QueryContext(ctx, `SELECT name FROM chambers ORDER BY name`)
	if err != nil {
		t.Fatal(err)
	}
	for rows.Next() {
		var s string
		rows.Scan(&s)
		names = append(names, s)
	}
	rows.Close()
	if fmt.Sprint(names) != "[first]" {
		t.Errorf("stored %v, want [first]", names)
	}
}
