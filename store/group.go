package store

import (
	"context"
	"database/sql"
	"errors"
	"fmt"
	"sync"
	"sync/atomic"
	"time"
)

// Group commit: writes that arrive while another is being stored share
// its transaction. Each caller's function runs in a savepoint of its own
// (with its own actor recorded for the audit trail), so a failing one is
// undone alone; one COMMIT then makes them all durable, and only then
// does any caller hear back. A group's transaction writes the pages the
// writes share (indexes, the runs table, the audit log's tail) and syncs
// (synchronous=FULL) once instead of once per caller.
//
// The functions run one after another on the committer goroutine, with
// the writer connection, like any other write transaction: they must not
// start a write transaction themselves (they get the tx).

// maxGroup bounds the writes committed together.
const maxGroup = 64

// groupWrite is one queued write.
type groupWrite struct {
	ctx  context.Context
	fn   func(tx *sql.Tx) error
	done chan error
}

// groupCommitter is the committer goroutine's state.
type groupCommitter struct {
	once  sync.Once
	queue chan *groupWrite
	quit  chan struct{}
	wg    sync.WaitGroup
	mu    sync.RWMutex // held for reading while queueing; Close takes it to stop
	shut  bool
	// commits counts the group transactions committed, writes the
	// writes they stored and busy the nanoseconds the committer spent
	// storing (GroupStats).
	commits, writes, busy atomic.Int64
}

// GroupStats returns how many writes InGroupTx and GroupTx have stored, in
// how many commits, and how long the committer held the write lock for
// them (for benchmarks: writes per commit, and the time per write that
// no second core can share).
func (d *DB) GroupStats() (writes, commits int64, busy time.Duration) {
	return d.group.writes.Load(), d.group.commits.Load(), time.Duration(d.group.busy.Load())
}

// ErrClosed is the answer to a write queued after Close.
var ErrClosed = errors.New("store: database closed")

// InGroupTx runs fn in a write transaction shared with the writes queued
// beside it (group commit) and returns once that transaction has
// committed: nil means fn's writes are stored (and, with SyncFull,
// synced). An error from fn undoes fn's writes only (its savepoint) and
// is returned as is; a failed commit fails every write of the group.
func (d *DB) InGroupTx(ctx context.Context, fn func(tx *sql.Tx) error) error {
	return <-d.GroupTx(ctx, fn)
}

// GroupTx queues fn like InGroupTx and returns at once; the channel
// receives InGroupTx's result. Background work that prepares writes
// faster than they commit (bulk reanalysis) keeps preparing while its
// earlier writes wait for their commit.
func (d *DB) GroupTx(ctx context.Context, fn func(tx *sql.Tx) error) <-chan error {
	g := &d.group
	w := &groupWrite{ctx: ctx, fn: fn, done: make(chan error, 1)}
	g.mu.RLock()
	defer g.mu.RUnlock()
	if g.shut {
		w.done <- ErrClosed
		return w.done
	}
	g.once.Do(func() {
		g.queue = make(chan *groupWrite, maxGroup)
		g.quit = make(chan struct{})
		g.wg.Add(1)
		go d.commitGroups()
	})
	select {
	case g.queue <- w:
	case <-ctx.Done():
		w.done <- ctx.Err()
	}
	return w.done
}

// commitGroups is the committer goroutine: it takes the first queued
// write, every write queued behind it (up to maxGroup), and commits them
// in one transaction.
func (d *DB) commitGroups() {
	g := &d.group
	defer g.wg.Done()
	batch := make([]*groupWrite, 0, maxGroup)
	for {
		batch = batch[:0]
		select {
		case w := <-g.queue:
			batch = append(batch, w)
		case <-g.quit:
			for {
				select {
				case w := <-g.queue:
					w.done <- ErrClosed
				default:
					return
				}
			}
		}
	more:
		for len(batch) < maxGroup {
			select {
			case w := <-g.queue:
				batch = append(batch, w)
			default:
				break more
			}
		}
		start := time.Now()
		d.commitGroup(batch)
		g.busy.Add(int64(time.Since(start)))
		d.restartWAL()
	}
}

// commitGroup stores one group: each write in its savepoint, then COMMIT.
func (d *DB) commitGroup(batch []*groupWrite) {
	errs := make([]error, len(batch))
	fail := func(err error) {
		for i, w := range batch {
			if errs[i] == nil {
				errs[i] = err
			}
			w.done <- errs[i]
		}
	}
	// The transaction outlives any one caller's context: each caller's
	// context governs its own statements.
	ctx := context.Background()
	tx, err := d.wdb.BeginTx(ctx, nil)
	if err != nil {
		fail(err)
		return
	}
	ok := 0
	for i, w := range batch {
		if err := w.ctx.Err(); err != nil {
			errs[i] = err
			continue
		}
		// A write alone needs no savepoint: if it fails, the whole
		// transaction is rolled back.
		var broken error
		if errs[i], broken = d.runSavepoint(w.ctx, tx, w.fn, len(batch) > 1); broken != nil {
			// A failed write could not be undone alone: nothing of the
			// group is committed, and every write hears so.
			tx.Rollback()
			for k := range errs {
				if k != i {
					errs[k] = fmt.Errorf("store: write not stored: another write of its group failed and could not be undone: %w", broken)
				}
			}
			fail(nil)
			return
		}
		if errs[i] == nil {
			ok++
		}
	}
	if ok == 0 {
		tx.Rollback()
		fail(nil)
		return
	}
	if err := tx.Commit(); err != nil {
		tx.Rollback()
		for i := range errs {
			if errs[i] == nil {
				errs[i] = fmt.Errorf("store: commit: %w", err)
			}
		}
	} else {
		d.group.commits.Add(1)
		d.group.writes.Add(int64(ok))
		d.afterCommit()
	}
	fail(nil)
}

// runSavepoint runs fn (in a savepoint of tx when savepoint is set) with
// ctx's actor recorded, undoing fn's writes when it fails. broken is set
// when the savepoint could not be undone or released: tx then holds
// writes of fn that must not be committed.
func (d *DB) runSavepoint(ctx context.Context, tx *sql.Tx, fn func(tx *sql.Tx) error, savepoint bool) (err, broken error) {
	if savepoint {
		if _, err := d.txExec(ctx, tx, qSavepoint); err != nil {
			return err, nil // nothing written yet
		}
	}
	defer func() {
		if p := recover(); p != nil {
			err = fmt.Errorf("store: group write panicked: %v", p)
		}
		if !savepoint {
			return
		}
		// Undo this write only; the statements run without the caller's
		// context, which may be what failed.
		bg := context.Background()
		if err != nil {
			if _, rerr := d.txExec(bg, tx, qRollbackTo); rerr != nil {
				err, broken = errors.Join(err, rerr), rerr
			}
		}
		if _, rerr := d.txExec(bg, tx, qRelease); rerr != nil {
			err, broken = errors.Join(err, rerr), rerr
		}
	}()
	if err := d.setActor(ctx, tx); err != nil {
		return err, nil
	}
	if err := fn(tx); err != nil {
		return err, nil
	}
	return d.clearActor(ctx, tx), nil
}

// closeGroup stops the committer (Close): writes queued after this fail
// with ErrClosed; the group being stored finishes first.
func (d *DB) closeGroup() {
	g := &d.group
	g.mu.Lock()
	already, quit := g.shut, g.quit
	g.shut = true
	g.mu.Unlock()
	if already || quit == nil {
		return
	}
	close(quit)
	g.wg.Wait()
}
