package store

import (
	"context"
	"database/sql"
	"errors"
	"fmt"
	"slices"
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

// Latency-tolerant writes (BulkGroupTx: bulk reanalysis's versions) wait
// for one another: the committer stores them once bulkGroup of them are
// queued, or once the oldest has waited bulkWait, instead of as soon as
// the writer is free. A job whose runs take longer to analyse than to
// store would otherwise commit nearly every run alone, and each commit
// writes the pages the runs share (the tables' and indexes' last leaves,
// the audit log's tail) and its WAL frames again. Interactive writes
// (InGroupTx, GroupTx) never wait for them: one queued while bulk writes
// wait is committed at once, in a group of its own, and one queued while a
// bulk group is being stored ends that group after the write being run
// (the rest wait for the next group), so it waits for at most one bulk
// write and its commit, as it would behind any group. A bulk group that
// is due goes before queued interactive writes, so that a steady stream of
// them cannot hold bulk writes back without end.
const (
	bulkGroup = 4
	bulkWait  = 200 * time.Millisecond
)

// groupWrite is one queued write.
type groupWrite struct {
	ctx  context.Context
	fn   func(tx *sql.Tx) error
	done chan error
	bulk bool      // latency-tolerant (BulkGroupTx)
	at   time.Time // when the committer took a bulk write
}

// groupCommitter is the committer goroutine's state.
type groupCommitter struct {
	once  sync.Once
	queue chan *groupWrite
	quit  chan struct{}
	wg    sync.WaitGroup
	mu    sync.RWMutex // held for reading while queueing; Close takes it to stop
	shut  bool
	// bulkGroup and bulkWait are the constants of the same names unless
	// a test set them before the first write.
	bulkGroup int
	bulkWait  time.Duration
	// commits counts the group transactions committed, writes the
	// writes they stored and busy the nanoseconds the committer spent
	// storing (GroupStats); bulkCommits and bulkWrites count the
	// commits of bulk groups and the writes they stored, cut the bulk
	// groups ended early for an interactive write.
	commits, writes, busy        atomic.Int64
	bulkCommits, bulkWrites, cut atomic.Int64
}

// GroupStats returns how many writes InGroupTx, GroupTx and BulkGroupTx
// have stored, in how many commits, and how long the committer held the
// write lock for them (for benchmarks: writes per commit, and the time
// per write that no second core can share).
func (d *DB) GroupStats() (writes, commits int64, busy time.Duration) {
	return d.group.writes.Load(), d.group.commits.Load(), time.Duration(d.group.busy.Load())
}

// BulkGroupStats returns how many writes BulkGroupTx has stored and in
// how many commits.
func (d *DB) BulkGroupStats() (writes, commits int64) {
	return d.group.bulkWrites.Load(), d.group.bulkCommits.Load()
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
// receives InGroupTx's result.
func (d *DB) GroupTx(ctx context.Context, fn func(tx *sql.Tx) error) <-chan error {
	return d.queueGroup(ctx, fn, false)
}

// BulkGroupTx is GroupTx for a write that may wait for others (see
// bulkGroup): background work that prepares many writes (bulk
// reanalysis) keeps preparing while its earlier writes wait for their
// commit, and its writes are committed several at a time. The answer is
// the same as InGroupTx's; it comes at most bulkWait after the write is
// queued plus the time to store the writes before it.
func (d *DB) BulkGroupTx(ctx context.Context, fn func(tx *sql.Tx) error) <-chan error {
	return d.queueGroup(ctx, fn, true)
}

func (d *DB) queueGroup(ctx context.Context, fn func(tx *sql.Tx) error, bulk bool) <-chan error {
	g := &d.group
	w := &groupWrite{ctx: ctx, fn: fn, done: make(chan error, 1), bulk: bulk}
	g.mu.RLock()
	defer g.mu.RUnlock()
	if g.shut {
		w.done <- ErrClosed
		return w.done
	}
	g.once.Do(func() {
		g.queue = make(chan *groupWrite, maxGroup)
		g.quit = make(chan struct{})
		if g.bulkGroup <= 0 {
			g.bulkGroup = bulkGroup
		}
		if g.bulkWait <= 0 {
			g.bulkWait = bulkWait
		}
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

// commitGroups is the committer goroutine. It takes every queued write:
// interactive ones are committed at once, together (up to maxGroup);
// bulk ones wait, in order, until bulkGroup of them are there or the
// oldest has waited bulkWait, and are then committed together (up to
// bulkGroup).
func (d *DB) commitGroups() {
	g := &d.group
	defer g.wg.Done()
	var inter, bulk []*groupWrite // taken from the queue, not yet stored
	lastBulk := false             // the last group was a bulk one
	take := func(w *groupWrite) {
		if !w.bulk {
			inter = append(inter, w)
			return
		}
		w.at = time.Now()
		bulk = append(bulk, w)
	}
	// drain takes what is queued without waiting.
	drain := func() {
		for {
			select {
			case w := <-g.queue:
				take(w)
			default:
				return
			}
		}
	}
	bulkReady := func() bool {
		return len(bulk) >= g.bulkGroup || len(bulk) > 0 && time.Since(bulk[0].at) >= g.bulkWait
	}
	timer := time.NewTimer(time.Hour)
	timer.Stop()
	for {
		if len(inter) == 0 && !bulkReady() {
			var wake <-chan time.Time
			if len(bulk) > 0 {
				timer.Reset(g.bulkWait - time.Since(bulk[0].at))
				wake = timer.C
			}
			select {
			case w := <-g.queue:
				take(w)
			case <-wake:
			case <-g.quit:
				timer.Stop()
				// Close: the bulk writes taken are stored (like a group
				// being stored); those still queued hear ErrClosed.
				for len(bulk) > 0 {
					n := d.storeGroup(bulk[:min(len(bulk), g.bulkGroup)], nil)
					bulk = slices.Delete(bulk, 0, n)
				}
				for {
					select {
					case w := <-g.queue:
						w.done <- ErrClosed
					default:
						return
					}
				}
			}
			if !timer.Stop() {
				select { // a timer that fired but was not read
				case <-timer.C:
				default:
				}
			}
		}
		drain()
		switch {
		case bulkReady() && (len(inter) == 0 || !lastBulk):
			// Ended after the write being run once an interactive write
			// is queued: that one goes next.
			stop := func() bool {
				drain()
				return len(inter) > 0
			}
			k := min(len(bulk), g.bulkGroup)
			n := d.storeGroup(bulk[:k], stop) // stop may append to bulk
			if n < k {
				g.cut.Add(1)
				for _, w := range bulk[n:k] {
					w.at = time.Time{} // the rest of the group is due
				}
			}
			// (Delete clears the stored writes' places: they hold results.)
			bulk, lastBulk = slices.Delete(bulk, 0, n), true
		case len(inter) > 0:
			n := d.storeGroup(inter[:min(len(inter), maxGroup)], nil)
			inter, lastBulk = slices.Delete(inter, 0, n), false
		}
	}
}

// storeGroup commits batch (commitGroup), counts the time and checkpoints
// the WAL if it asked for it, and returns how many of batch's writes it
// ran (the rest were left for a later group by stop).
func (d *DB) storeGroup(batch []*groupWrite, stop func() bool) int {
	start := time.Now()
	n := d.commitGroup(batch, stop)
	d.group.busy.Add(int64(time.Since(start)))
	d.restartWAL()
	return n
}

// commitGroup stores one group: each write in its savepoint, then
// COMMIT. When stop, asked after each write, says so, the writes not yet
// run are left out of the group (neither run nor answered); it returns
// how many writes it took.
func (d *DB) commitGroup(batch []*groupWrite, stop func() bool) int {
	errs := make([]error, len(batch))
	n := len(batch) // the writes of the group
	fail := func(err error) {
		for i, w := range batch[:n] {
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
		return n
	}
	ok := 0
	for i, w := range batch {
		if i > 0 && stop != nil && stop() {
			n = i
			break
		}
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
			for k := range errs[:n] {
				if k != i {
					errs[k] = fmt.Errorf("store: write not stored: another write of its group failed and could not be undone: %w", broken)
				}
			}
			fail(nil)
			return n
		}
		if errs[i] == nil {
			ok++
		}
	}
	if ok == 0 {
		tx.Rollback()
		fail(nil)
		return n
	}
	if err := tx.Commit(); err != nil {
		tx.Rollback()
		for i := range errs[:n] {
			if errs[i] == nil {
				errs[i] = fmt.Errorf("store: commit: %w", err)
			}
		}
	} else {
		d.group.commits.Add(1)
		d.group.writes.Add(int64(ok))
		if batch[0].bulk {
			d.group.bulkCommits.Add(1)
			d.group.bulkWrites.Add(int64(ok))
		}
		d.afterCommit()
	}
	fail(nil)
	return n
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
