package store

import (
	"context"
	"database/sql/driver"
	"sync"
	"sync/atomic"
	"time"
)

// WAL checkpoints outside the write lock.
//
// SQLite's automatic checkpoint (every 1000 WAL pages) runs inside the
// COMMIT that crosses the threshold, on the writing connection: while it
// copies the WAL's pages into the database file (and, with
// synchronous=NORMAL, syncs both files) no other write can start. With
// results of ~50–110 kB per spectrum that was about a third of the time
// ingest and bulk reanalysis held the write lock.
//
// The write connection (wdb) therefore runs with wal_autocheckpoint(0),
// and a background goroutine checkpoints (PASSIVE, which never blocks
// writers or readers) from the read pool shortly after commits: the copy
// runs beside the next writes. A passive checkpoint racing the writer
// leaves the newest frames behind, and SQLite starts the WAL over only
// when a write begins with every frame copied and no reader in the WAL,
// so under sustained writes the WAL would grow without end; when a
// background checkpoint finds more than walRestartBytes in the
// WAL, the writer runs one RESTART checkpoint between writes
// (restartWAL; skipped while a background checkpoint runs, tried again
// after the next write): by then nearly every frame is copied, and the
// next write starts the WAL over. Such a checkpoint still syncs and
// waits for readers (~0.3 ms per spectrum in the benchmarks, against the
// automatic checkpoint's copy of every page under the lock). Under
// sustained writes the WAL peaks at ~20–50 MB (TestCheckpointsBoundWAL,
// the benchmarks) instead of the ~5–9 MB of the automatic checkpoint,
// which in turn never starts the WAL over against readers that never
// pause (its WAL holds everything written).
// Writes that do not go through InGroupTx or inTx (Begin … Commit) start
// the checkpoints of the transaction before them when they begin, and a
// background checkpoint runs at least every checkpointIdle.
const (
	// checkpointGap is the pause after each background checkpoint: at
	// most ~40 per second, each copying what the commits before it wrote.
	checkpointGap = 25 * time.Millisecond
	// checkpointIdle is the longest time between background checkpoints.
	checkpointIdle = 2 * time.Second
	// walRestartBytes is the WAL size (its frames' pages) above which
	// the writer checkpoints itself, so that the WAL starts over (4096
	// frames of 4 KiB pages, 1024 of 16 KiB; SQLite's automatic threshold
	// is 1000 frames, whatever their size).
	walRestartBytes = 16 << 20
	// restartWait bounds the writer's wait for readers in restartWAL, and
	// restartBackoff is the pause before trying again after it ran out.
	restartWait    = 200 * time.Millisecond
	restartStep    = time.Millisecond
	restartBackoff = 500 * time.Millisecond
)

// checkpointer is the background checkpoint goroutine of a DB.
type checkpointer struct {
	once    sync.Once
	kick    chan struct{}
	quit    chan struct{}
	wg      sync.WaitGroup
	mu      sync.Mutex // guards shut against start
	shut    bool
	run     sync.Mutex   // one checkpoint at a time (a second would be refused busy)
	restart atomic.Bool  // the writer should checkpoint once (WAL large)
	retryAt atomic.Int64 // not before (unix ns): the last restart could not finish
	runs    atomic.Int64 // background checkpoints run
	// restarts and restartFails count the writer's RESTART checkpoints
	// that finished and that ran out of time; restartNs is the time the
	// writer spent in them.
	restarts, restartFails, restartNs atomic.Int64
}

// afterCommit is called after every commit on the write connection: it
// wakes the background checkpointer.
func (d *DB) afterCommit() {
	if d.path == ":memory:" {
		return
	}
	d.startCheckpoints()
	select {
	case d.ckpt.kick <- struct{}{}:
	default:
	}
}

// startCheckpoints starts the background checkpointer if it is not
// running.
func (d *DB) startCheckpoints() {
	if d.path == ":memory:" {
		return
	}
	c := &d.ckpt
	c.once.Do(func() {
		c.mu.Lock()
		defer c.mu.Unlock()
		if c.shut {
			return
		}
		c.kick = make(chan struct{}, 1)
		c.quit = make(chan struct{})
		c.wg.Add(1)
		go d.checkpoints()
	})
}

// checkpoints is the background checkpoint loop.
func (d *DB) checkpoints() {
	c := &d.ckpt
	defer c.wg.Done()
	idle := time.NewTimer(checkpointIdle)
	defer idle.Stop()
	for {
		select {
		case <-c.quit:
			return
		case <-c.kick:
		case <-idle.C:
		}
		c.run.Lock()
		var busy, log, done int64
		err := d.db.QueryRowContext(context.Background(), `PRAGMA wal_checkpoint(PASSIVE)`).Scan(&busy, &log, &done)
		c.run.Unlock()
		if err == nil {
			d.dropCache()
		}
		c.runs.Add(1)
		if err == nil {
			c.restart.Store(log*d.pageSize > walRestartBytes)
		}
		idle.Reset(checkpointIdle)
		select {
		case <-c.quit:
			return
		case <-time.After(checkpointGap):
		}
	}
}

// restartWAL runs the writer's own checkpoint when the background one
// asked for it (see checkpointer). It is a RESTART checkpoint: it
// copies the frames the background ones left (few) and waits until no
// reader still reads an older part of the WAL, so that the next write
// starts the WAL over. (A passive one would leave the restart to chance:
// the next group's write begins at once, while readers that began before
// the checkpoint still hold their place in the WAL.) The wait is bounded
// by restartWait instead of the connection's busy timeout (5 s), and
// after a checkpoint that could not finish the next try waits
// restartBackoff: readers that never let go (TestCheckpointsBoundWAL's
// tight loop can) cost the writer at most restartWait per restartBackoff,
// and the WAL then grows as it would with SQLite's automatic checkpoint.
// The group committer calls it between groups, inTx after its commit,
// and Begin before its transaction (its caller commits).
func (d *DB) restartWAL() {
	c := &d.ckpt
	if !c.restart.Load() || time.Now().UnixNano() < c.retryAt.Load() {
		return
	}
	if !c.run.TryLock() {
		return // a background checkpoint is copying: after the next write
	}
	defer c.run.Unlock()
	ctx := context.Background()
	conn, err := d.wdb.Conn(ctx) // the three statements on one connection
	if err != nil {
		return
	}
	defer conn.Close()
	// SQLite's busy handler here sleeps in steps of a second: the
	// checkpoint is tried without it, every restartStep.
	if _, err := conn.ExecContext(ctx, `PRAGMA busy_timeout = 0`); err != nil {
		return
	}
	var busy, log, done int64
	start := time.Now()
	defer func() { c.restartNs.Add(int64(time.Since(start))) }()
	for end := start.Add(restartWait); ; time.Sleep(restartStep) {
		err = conn.QueryRowContext(ctx, `PRAGMA wal_checkpoint(RESTART)`).Scan(&busy, &log, &done)
		if err != nil || busy == 0 || time.Now().After(end) {
			break
		}
	}
	if _, rerr := conn.ExecContext(ctx, `PRAGMA busy_timeout = 5000`); rerr != nil {
		conn.Raw(func(any) error { return driver.ErrBadConn }) // not back to the pool with the short timeout
	}
	if err == nil && busy == 0 {
		c.restart.Store(false)
		c.restarts.Add(1)
		return
	}
	c.restartFails.Add(1)
	c.retryAt.Store(time.Now().Add(restartBackoff).UnixNano())
}

// stopCheckpoints ends the background checkpointer (Close).
func (d *DB) stopCheckpoints() {
	c := &d.ckpt
	c.mu.Lock()
	already, quit := c.shut, c.quit
	c.shut = true
	c.mu.Unlock()
	if already || quit == nil {
		return
	}
	close(quit)
	c.wg.Wait()
}

// CheckpointStats are the checkpoint counters of a DB (for the
// benchmarks and tests).
type CheckpointStats struct {
	// Background is the number of background checkpoints run.
	Background int64
	// Restarts and RestartFails count the writer's RESTART checkpoints
	// that finished and that ran out of time; RestartTime is the time the
	// writer spent in them.
	Restarts, RestartFails int64
	RestartTime            time.Duration
}

// CheckpointStats returns the checkpoint counters so far.
func (d *DB) CheckpointStats() CheckpointStats {
	c := &d.ckpt
	return CheckpointStats{Background: c.runs.Load(), Restarts: c.restarts.Load(), RestartFails: c.restartFails.Load(),
		RestartTime: time.Duration(c.restartNs.Load())}
}
