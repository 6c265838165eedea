package store

import (
	"context"
	"database/sql"
	"fmt"
	"slices"
	"time"
)

// BoardBaseline chooses a chamber's baseline runs for the board, as the
// trends page's control mode does: the first N runs with a value, or the
// runs started in [From, To) when From is set.
type BoardBaseline struct {
	N        int
	From, To time.Time
}

// BoardSeries is one quantity of one chamber on the board, each list in
// start-time order (then run id), only runs with a value.
type BoardSeries struct {
	// Recent are the latest runs (at most the requested number).
	Recent []TrendPoint
	// Baseline are the baseline runs.
	Baseline []TrendPoint
}

// BoardChamber is what the chamber board shows of one chamber.
type BoardChamber struct {
	Named
	// LastRunID and LastRunAt are the chamber's latest run (0 and zero
	// time when it has none), whether or not it has results.
	LastRunID int64
	LastRunAt time.Time
	// Awaiting counts runs submitted for review, up to
	// MaxAwaitingCount+1 (more than MaxAwaitingCount).
	Awaiting int
	// Series holds the quantities asked for, by TrendFields key.
	Series map[string]BoardSeries
}

// MaxAwaitingCount is the most runs awaiting review the board counts
// exactly per chamber.
const MaxAwaitingCount = 999

// Board returns every chamber with its latest run, the number of runs
// awaiting review, and for each field key (texc_k, ne_m3, …) its recent
// and baseline runs. Each chamber costs a few index range reads on
// runs(chamber_id, started_at) bounded by recent and the baseline, so the
// board stays fast however many runs a chamber has. Unknown keys are
// ErrInvalid.
func (d *DB) Board(ctx context.Context, keys []string, recent int, base BoardBaseline) ([]BoardChamber, error) {
	fields := make([]TrendField, len(keys))
	for i, k := range keys {
		f, ok := LookupTrendField(k)
		if !ok || f.Time {
			return nil, fmt.Errorf("%w: unknown board quantity %q", ErrInvalid, k)
		}
		fields[i] = f
	}
	chambers, err := d.Chambers(ctx)
	if err != nil {
		return nil, err
	}
	out := make([]BoardChamber, 0, len(chambers))
	for _, ch := range chambers {
		bc := BoardChamber{Named: ch, Series: map[string]BoardSeries{}}
		// Counted up to MaxAwaitingCount from the (status, chamber_id)
		// index: a long backlog costs no more than a short one.
		if err := d.db.QueryRowContext(ctx, `SELECT count(*) FROM (SELECT 1 FROM runs WHERE status = 'submitted' AND chamber_id = ? LIMIT ?)`,
			ch.ID, MaxAwaitingCount+1).Scan(&bc.Awaiting); err != nil {
			return nil, fmt.Errorf("store: board: %w", err)
		}
		var at int64
		err := d.db.QueryRowContext(ctx, `SELECT id, started_at FROM runs WHERE chamber_id = ? ORDER BY started_at DESC, id DESC LIMIT 1`, ch.ID).
			Scan(&bc.LastRunID, &at)
		switch {
		case err == sql.ErrNoRows:
		case err != nil:
			return nil, fmt.Errorf("store: board: %w", err)
		default:
			bc.LastRunAt = time.Unix(at, 0).UTC()
		}
		if bc.LastRunID != 0 {
			for _, f := range fields {
				var s BoardSeries
				if s.Recent, err = d.boardPoints(ctx, ch.ID, f, " ORDER BY r.started_at DESC, r.id DESC LIMIT ?", recent); err != nil {
					return nil, err
				}
				slices.Reverse(s.Recent)
				if base.From.IsZero() {
					s.Baseline, err = d.boardPoints(ctx, ch.ID, f, " ORDER BY r.started_at, r.id LIMIT ?", base.N)
				} else {
					s.Baseline, err = d.boardPoints(ctx, ch.ID, f, " AND r.started_at >= ? AND r.started_at < ? ORDER BY r.started_at, r.id",
						base.From.Unix(), base.To.Unix())
				}
				if err != nil {
					return nil, err
				}
				bc.Series[f.Key] = s
			}
		}
		out = append(out, bc)
	}
	return out, nil
}

func (d *DB) boardPoints(ctx context.Context, chamberID int64, f TrendField, tail string, args ...any) ([]TrendPoint, error) {
	unc := "NULL"
	if f.uncCol != "" {
		unc = f.uncCol
	}
	rows, err := d.db.QueryContext(ctx, `SELECT r.id, r.started_at, `+f.col+`, `+unc+` FROM runs r WHERE r.chamber_id = ? AND `+f.col+` IS NOT NULL`+tail,
		append([]any{chamberID}, args...)...)
	if err != nil {
		return nil, fmt.Errorf("store: board series: %w", err)
	}
	defer rows.Close()
	var out []TrendPoint
	for rows.Next() {
		var p TrendPoint
		var at int64
		var u sql.NullFloat64
		if err := rows.Scan(&p.RunID, &at, &p.Y, &u); err != nil {
			return nil, err
		}
		p.Started = at
		p.X = float64(at)
		if u.Valid && u.Float64 > 0 {
			p.YUnc = u.Float64
		}
		out = append(out, p)
	}
	return out, rows.Err()
}
