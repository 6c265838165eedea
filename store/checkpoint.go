package store

import (
	"context"
	"sync"
)

// Checkpoints off the write path. SQLite copies the WAL back into the
// database file at a checkpoint, which it runs by default inside the
// commit that takes the WAL past 1000 pages: under the write lock, with
// an fsync of the WAL and one of the database file. With files of tens of
// kilobytes per upload that was every few commits, and the write lock was
// held mostly for that (BenchmarkBulkReanalysis: 1.9 ms of write lock per
// spectrum with, 0.6 ms without). Now the group committer wakes a
// checkpointer goroutine after each commit, which copies the WAL back
// (PRAGMA wal_checkpoint(PASSIVE), on the read pool: it takes no write
// lock, so writers go on beside it) while the next group is stored.
//
// The writer connection still checkpoints by itself at walWriterPages:
// SQLite starts the WAL file over only when a write transaction begins
// with every frame copied back, which a checkpointer running beside a busy
// writer rarely sees; the writer's own checkpoint then has little left to
// copy. Durability does not depend on checkpoints (a commit is in the WAL,
// synced at commit with SyncFull).

// walWriterPages is the writer connection's wal_autocheckpoint.
const walWriterPages = 4000

// checkpointer is the background checkpoint goroutine's state.
type checkpointer struct {
	wake chan struct{}
	quit chan struct{}
	wg   sync.WaitGroup
}

// startCheckpointer starts the checkpoint goroutine (file databases).
func (d *DB) startCheckpointer() {
	c := &d.ckpt
	c.wake, c.quit = make(chan struct{}, 1), make(chan struct{})
	c.wg.Add(1)
	go func() {
		defer c.wg.Done()
		for {
			select {
			case <-c.quit:
				return
			case <-c.wake:
			}
			// A failure (SQLITE_BUSY beside another checkpoint, a closed
			// database) leaves the work to the next one.
			_, _ = d.db.ExecContext(context.Background(), `PRAGMA wal_checkpoint(PASSIVE)`)
		}
	}()
}

// wakeCheckpointer asks for a checkpoint (wake-ups while one runs make
// one more).
func (d *DB) wakeCheckpointer() {
	if d.ckpt.wake == nil {
		return
	}
	select {
	case d.ckpt.wake <- struct{}{}:
	default:
	}
}

// stopCheckpointer stops the goroutine (Close).
func (d *DB) stopCheckpointer() {
	if d.ckpt.quit == nil {
		return
	}
	close(d.ckpt.quit)
	d.ckpt.wg.Wait()
	d.ckpt.quit = nil
}
