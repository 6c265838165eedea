package store

import (
	"context"
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
// when a write begins with every frame copied, so under sustained writes
// the WAL would grow without end; when a background checkpoint finds more
// than walRestartFrames frames in the WAL, the group committer
// checkpoints on the write connection between groups (restartWAL) until
// one copies every frame: by then nearly every frame is copied, so it is
// short, and the next write starts the WAL over. Under sustained writes
// the WAL therefore peaks at ~20–30 MB instead of the ~5–9 MB of the
// automatic checkpoint (TestCheckpointsBoundWAL). Writes that do not go
// through InGroupTx or inTx (Begin … Commit) are caught by a checkpoint
// at least every checkpointIdle.
const (
	// checkpointGap is the pause after each background checkpoint: at
	// most ~40 per second, each copying what the commits before it wrote.
	checkpointGap = 25 * time.Millisecond
	// checkpointIdle is the longest time between background checkpoints.
	checkpointIdle = 2 * time.Second
	// walRestartFrames is the WAL size (pages) above which the writer
	// checkpoints itself, so that the WAL starts over (8 MiB with 4 KiB
	// pages; SQLite's automatic threshold is 1000).
	walRestartFrames = 2048
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
	runs    atomic.Int64 // background checkpoints run
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
// running (Begin calls it: its caller commits).
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
		c.runs.Add(1)
		if err == nil {
			c.restart.Store(log > walRestartFrames)
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
// asked for it (see checkpointer); called by the group committer between
// groups, holding the write connection. It is skipped while a background
// checkpoint runs (which copies the frames meanwhile; the request stays
// for the next group). The request ends when this checkpoint copied every
// frame: the next write then starts the WAL over, unless a reader still
// reads an older part of it, in which case the next background
// checkpoint asks again.
func (d *DB) restartWAL() {
	c := &d.ckpt
	if !c.restart.Load() || !c.run.TryLock() {
		return
	}
	defer c.run.Unlock()
	var busy, log, done int64
	err := d.wdb.QueryRowContext(context.Background(), `PRAGMA wal_checkpoint(PASSIVE)`).Scan(&busy, &log, &done)
	if err == nil && done == log {
		c.restart.Store(false)
	}
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

// CheckpointStats returns how many background checkpoints ran (for the
// benchmarks and tests).
func (d *DB) CheckpointStats() int64 { return d.ckpt.runs.Load() }
