package store

import (
	"context"
	"database/sql"
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"sync"
	"testing"
	"time"
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

// openBulk opens a database whose bulk writes wait for group of them
// (and never for time: a test's bulk write waits for the others it
// queues, however slow the machine).
func openBulk(t *testing.T, path string, group int) *DB {
	t.Helper()
	d, err := Open(context.Background(), path)
	if err != nil {
		t.Fatal(err)
	}
	d.group.bulkGroup, d.group.bulkWait = group, 24*time.Hour
	return d
}

// chamberNames lists the chambers stored, by name.
func chamberNames(t *testing.T, d *DB) []string {
	t.Helper()
	rows, err := d.SQL().QueryContext(context.Background(), `SELECT name FROM chambers ORDER BY name`)
	if err != nil {
		t.Fatal(err)
	}
	defer rows.Close()
	var names []string
	for rows.Next() {
		var s string
		if err := rows.Scan(&s); err != nil {
			t.Fatal(err)
		}
		names = append(names, s)
	}
	return names
}

func insertChamber(ctx context.Context, name string) func(tx *sql.Tx) error {
	return func(tx *sql.Tx) error {
		_, err := tx.ExecContext(ctx, `INSERT INTO chambers (name) VALUES (?)`, name)
		return err
	}
}

// TestBulkGroupTx: bulk writes queued one after another by one goroutine
// (as the job runner queues its versions) are committed bulkGroup at a
// time; a failing one is undone alone and the others of its group are
// stored; Close stores the bulk writes still waiting.
func TestBulkGroupTx(t *testing.T) {
	ctx := context.Background()
	path := filepath.Join(t.TempDir(), "g.db")
	d := openBulk(t, path, 4)
	defer d.Close()
	const n = 12
	var answers []<-chan error
	var want []string
	for i := range n {
		name := fmt.Sprintf("b%02d", i)
		fn := insertChamber(ctx, name)
		if i == 5 {
			fn = func(tx *sql.Tx) error {
				if err := insertChamber(ctx, name)(tx); err != nil {
					return err
				}
				return errors.New("refused")
			}
		} else {
			want = append(want, name)
		}
		answers = append(answers, d.BulkGroupTx(ctx, fn))
	}
	for i, ch := range answers {
		if err := <-ch; (err != nil) != (i == 5) {
			t.Errorf("bulk write %d: %v", i, err)
		}
	}
	if got := chamberNames(t, d); fmt.Sprint(got) != fmt.Sprint(want) {
		t.Errorf("stored %v, want %v", got, want)
	}
	writes, commits := d.BulkGroupStats()
	if commits != n/4 || writes != n-1 {
		t.Errorf("%d bulk writes stored in %d commits, want %d in %d", writes, commits, n-1, n/4)
	}
	// one more waits for three others; Close stores it
	late := d.BulkGroupTx(ctx, insertChamber(ctx, "late"))
	d.Close()
	if err := <-late; err != nil {
		t.Fatalf("bulk write waiting at Close: %v", err)
	}
	d2, err := Open(ctx, path)
	if err != nil {
		t.Fatal(err)
	}
	defer d2.Close()
	if got := chamberNames(t, d2); len(got) != n || got[n-1] != "late" {
		t.Errorf("after Close and Open: %v, want the %d of before and late", got, n-1)
	}
}

// TestBulkGroupTxInteractive: interactive writes do not wait for bulk
// ones. One queued while a bulk write waits for its group is committed
// alone at once; one queued while a bulk group is being stored ends that
// group after the write being run; and a full bulk group queued behind an
// interactive write goes before the interactive writes queued meanwhile,
// ended after its first write.
func TestBulkGroupTxInteractive(t *testing.T) {
	ctx := context.Background()
	d := openBulk(t, filepath.Join(t.TempDir(), "g.db"), 3)
	defer d.Close()
	var order []string // the writes in the order the committer ran them
	write := func(name string) func(tx *sql.Tx) error {
		return func(tx *sql.Tx) error {
			order = append(order, name)
			return insertChamber(ctx, name)(tx)
		}
	}
	held := func(name string, started, hold chan struct{}) func(tx *sql.Tx) error {
		return func(tx *sql.Tx) error {
			close(started)
			<-hold
			return write(name)(tx)
		}
	}

	// 1. A bulk write waits for two more; an interactive write does not.
	started, hold := make(chan struct{}), make(chan struct{})
	b1 := d.BulkGroupTx(ctx, held("b1", started, hold))
	if err := d.InGroupTx(ctx, write("i1")); err != nil {
		t.Fatal(err)
	}
	select {
	case err := <-b1:
		t.Fatalf("bulk write answered (%v) before its group was full", err)
	default:
	}
	if got := chamberNames(t, d); fmt.Sprint(got) != "[i1]" {
		t.Errorf("after the interactive write: stored %v, want [i1]", got)
	}

	// 2. The group fills and b1 runs; an interactive write queued
	// meanwhile ends the group after b1, and the rest follow it.
	b2 := d.BulkGroupTx(ctx, write("b2"))
	b3 := d.BulkGroupTx(ctx, write("b3"))
	<-started
	i2 := d.GroupTx(ctx, write("i2"))
	close(hold)
	for i, ch := range []<-chan error{b1, b2, b3, i2} {
		if err := <-ch; err != nil {
			t.Errorf("step 2, write %d: %v", i, err)
		}
	}

	// 3. While an interactive write runs, a full bulk group and another
	// interactive write are queued: the bulk group goes first (it is
	// due) but ends after its first write.
	started, hold = make(chan struct{}), make(chan struct{})
	i3 := d.GroupTx(ctx, held("i3", started, hold))
	<-started
	b4 := d.BulkGroupTx(ctx, write("b4"))
	b5 := d.BulkGroupTx(ctx, write("b5"))
	b6 := d.BulkGroupTx(ctx, write("b6"))
	i4 := d.GroupTx(ctx, write("i4"))
	close(hold)

	for i, ch := range []<-chan error{i3, b4, b5, b6, i4} {
		if err := <-ch; err != nil {
			t.Errorf("step 3, write %d: %v", i, err)
		}
	}
	if got, want := fmt.Sprint(order), "[i1 b1 i2 b2 b3 i3 b4 i4 b5 b6]"; got != want {
		t.Errorf("writes ran in the order %s, want %s", got, want)
	}
	if got := len(chamberNames(t, d)); got != 10 {
		t.Errorf("%d writes stored, want 10", got)
	}
	bw, bc := d.BulkGroupStats()
	if _, c, _ := d.GroupStats(); bw != 6 || bc != 4 || c != 8 || d.group.cut.Load() != 2 {
		t.Errorf("%d bulk writes in %d bulk commits (%d groups cut short), %d commits in all; want 6 in 4 (2 cut), 8", bw, bc, d.group.cut.Load(), c)
	}
}

// TestWriteKeepsPagesUntilCommit: a group's transaction writes ~6 MB
// (more than SQLite's 2 MB page cache) without writing any of it to the
// WAL before its COMMIT (writeSpillBytes): SQLite would otherwise spill
// changed pages to the WAL, copying each to the savepoint's journal
// first.
func TestWriteKeepsPagesUntilCommit(t *testing.T) {
	ctx := context.Background()
	path := filepath.Join(t.TempDir(), "g.db")
	d, err := Open(ctx, path)
	if err != nil {
		t.Fatal(err)
	}
	defer d.Close()
	u, err := d.CreateUser(ctx, "ada.quill", RoleOperator, "x")
	if err != nil {
		t.Fatal(err)
	}
	run, err := d.CreateRun(ctx, u.ID, RunInput{Title: "big", StartedAt: time.Date(2026, 4, 2, 10, 0, 0, 0, time.UTC), SourceType: "dc_glow"})
	if err != nil {
		t.Fatal(err)
	}
	walSize := func() int64 {
		fi, err := os.Stat(path + "-wal")
		if err != nil {
			t.Fatal(err)
		}
		return fi.Size()
	}
	content := make([]byte, 1<<20)
	for i := range content {
		content[i] = byte(i * 13)
	}
	var before, during int64
	write := func(tx *sql.Tx) error {
		before = walSize()
		for k := range 6 {
			if _, err := d.AddAttachmentTx(ctx, tx, run, KindSpectrum, fmt.Sprintf("s%d.csv", k), content); err != nil {
				return err
			}
		}
		during = walSize()
		return nil
	}
	if err := d.InGroupTx(ctx, write); err != nil {
		t.Fatal(err)
	}
	if during != before {
		t.Errorf("the WAL grew from %d to %d bytes before the commit: pages were spilled", before, during)
	}
	if after := walSize(); after < 6<<20 {
		t.Errorf("WAL %d bytes after the commit, want the 6 MB written", after)
	}
}
