package store

import (
	"context"
	"database/sql"
	"fmt"
	"time"
)

// Job states.
const (
	JobQueued  = "queued"
	JobRunning = "running"
	JobDone    = "done"
	JobFailed  = "failed"
)

// Job is a background job (bulk reanalysis) and its progress.
type Job struct {
	ID            int64
	Kind          string
	State         string
	Params        string // JSON, owned by the job's kind
	Total         int
	Done          int
	Failed        int
	Message       string
	CreatedBy     *int64
	CreatedByName string
	CreatedAt     time.Time
	FinishedAt    *time.Time
	// Spectra counts the spectra analysed so far, in Elapsed (the time
	// the job has been working): its rate.
	Spectra int
	Elapsed time.Duration
}

// Finished reports whether the job has stopped (done or failed).
func (j Job) Finished() bool { return j.State == JobDone || j.State == JobFailed }

// CreateJob queues a job of kind with params (JSON) over total items.
func (d *DB) CreateJob(ctx context.Context, kind, params string, total int, createdBy int64) (int64, error) {
	res, err := d.exec(ctx, `INSERT INTO jobs (kind, state, params, total, created_by, created_at) VALUES (?, 'queued', ?, ?, ?, ?)`,
		kind, params, total, createdBy, d.now())
	if err != nil {
		return 0, fmt.Errorf("store: create job: %w", err)
	}
	return res.LastInsertId()
}

const jobCols = `j.id, j.kind, j.state, j.params, j.total, j.done, j.failed, j.message, j.created_by, coalesce(u.name, ''), j.created_at, j.finished_at, j.spectra, j.elapsed_us`

func scanJob(row interface{ Scan(...any) error }) (Job, error) {
	var j Job
	var by, fin sql.NullInt64
	var created, elapsedUS int64
	if err := row.Scan(&j.ID, &j.Kind, &j.State, &j.Params, &j.Total, &j.Done, &j.Failed, &j.Message, &by, &j.CreatedByName, &created, &fin,
		&j.Spectra, &elapsedUS); err != nil {
		return j, err
	}
	j.Elapsed = time.Duration(elapsedUS) * time.Microsecond
	if by.Valid {
		v := by.Int64
		j.CreatedBy = &v
	}
	j.CreatedAt = time.Unix(created, 0).UTC()
	if fin.Valid {
		t := time.Unix(fin.Int64, 0).UTC()
		j.FinishedAt = &t
	}
	return j, nil
}

// Job returns one job.
func (d *DB) Job(ctx context.Context, id int64) (Job, error) {
	j, err := scanJob(d.db.QueryRowContext(ctx, `SELECT `+jobCols+` FROM jobs j LEFT JOIN users u ON u.id = j.created_by WHERE j.id = ?`, id))
	if err != nil {
		return j, errNoRows(err, fmt.Sprintf("job %d", id))
	}
	return j, nil
}

// ClaimNextJob marks the oldest queued job running and returns it;
// ErrNotFound when none is queued.
func (d *DB) ClaimNextJob(ctx context.Context) (Job, error) {
	var j Job
	err := d.inTx(ctx, func(tx *sql.Tx) error {
		var err error
		j, err = scanJob(tx.QueryRowContext(ctx, `SELECT `+jobCols+` FROM jobs j LEFT JOIN users u ON u.id = j.created_by
			WHERE j.state = 'queued' ORDER BY j.id LIMIT 1`))
		if err != nil {
			return errNoRows(err, "queued job")
		}
		j.State = JobRunning
		_, err = tx.ExecContext(ctx, `UPDATE jobs SET state = 'running' WHERE id = ?`, j.ID)
		return err
	})
	return j, err
}

// JobProgress records a running job's counts and message.
func (d *DB) JobProgress(ctx context.Context, id int64, done, failed int, message string) error {
	// Through the writer pool: queued behind the job's own transactions
	// instead of polling SQLite's busy handler.
	_, err := d.wdb.ExecContext(ctx, `UPDATE jobs SET done = ?, failed = ?, message = ? WHERE id = ?`, done, failed, message, id)
	if err != nil {
		return fmt.Errorf("store: job progress: %w", err)
	}
	return nil
}

// JobRate records how many spectra a job has analysed in how much time.
func (d *DB) JobRate(ctx context.Context, id int64, spectra int, elapsed time.Duration) error {
	_, err := d.wdb.ExecContext(ctx, `UPDATE jobs SET spectra = ?, elapsed_us = ? WHERE id = ?`, spectra, elapsed.Microseconds(), id)
	if err != nil {
		return fmt.Errorf("store: job rate: %w", err)
	}
	return nil
}

// SpectraPerSecond is the job's rate (0 before it has one).
func (j Job) SpectraPerSecond() float64 {
	if j.Elapsed <= 0 {
		return 0
	}
	return float64(j.Spectra) / j.Elapsed.Seconds()
}

// FinishJob ends a job as done or failed with its final counts and message.
func (d *DB) FinishJob(ctx context.Context, id int64, state string, done, failed int, message string) error {
	if state != JobDone && state != JobFailed {
		return fmt.Errorf("%w: a job finishes as done or failed, not %q", ErrInvalid, state)
	}
	_, err := d.db.ExecContext(ctx, `UPDATE jobs SET state = ?, done = ?, failed = ?, message = ?, finished_at = ? WHERE id = ?`,
		state, done, failed, message, d.now(), id)
	if err != nil {
		return fmt.Errorf("store: finish job: %w", err)
	}
	return nil
}

// FailStaleJobs marks jobs left running (by a process that stopped) as
// failed with message, and returns how many there were.
func (d *DB) FailStaleJobs(ctx context.Context, message string) (int, error) {
	res, err := d.db.ExecContext(ctx, `UPDATE jobs SET state = 'failed', message = ?, finished_at = ? WHERE state = 'running'`, message, d.now())
	if err != nil {
		return 0, fmt.Errorf("store: fail stale jobs: %w", err)
	}
	n, _ := res.RowsAffected()
	return int(n), nil
}
