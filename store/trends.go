package store

import (
	"cmp"
	"context"
	"database/sql"
	"fmt"
	"math"
	"slices"
	"strings"
	"sync"
	"time"
)

// TrendField is a quantity that a trend can plot on x or y: a result of
// the current analysis or a run condition, read from the runs table.
type TrendField struct {
	// Key is the field name used in URLs, forms and the JSON API.
	Key string
	// Label and Unit are for axis titles ("" unit: dimensionless).
	Label, Unit string
	// Result is true for analysis results, false for run conditions.
	Result bool
	// Time is true for the start time (x values in Unix seconds).
	Time bool
	// HasUnc is true when the runs carry a 1σ uncertainty of the value.
	HasUnc      bool
	col, uncCol string
}

// TrendFields lists the fields of TrendSeries. The keys are:
//
//	started_at         run start time (Unix seconds; x only in practice)
//	texc_k             excitation temperature (K), with 1σ
//	ne_m3              electron density (m⁻³), with 1σ
//	tgas_k             gas temperature from the analysis (K; two-line solution)
//	n_warnings         number of problem and caution warnings of the analysis
//	pressure_pa        pressure (Pa), condition
//	power_w            power (W), condition
//	electrode_gap_mm   electrode gap (mm), condition
//	gas_temperature_k  gas temperature given with the run (K), condition
//	instrument_fwhm_nm instrument FWHM (nm), condition
var TrendFields = []TrendField{
	{Key: "started_at", Label: "Start time", Unit: "UTC", Time: true, col: "r.started_at"},
	{Key: "texc_k", Label: "Excitation temperature", Unit: "K", Result: true, HasUnc: true, col: "r.texc_k", uncCol: "r.texc_unc_k"},
	{Key: "ne_m3", Label: "Electron density", Unit: "m⁻³", Result: true, HasUnc: true, col: "r.ne_m3", uncCol: "r.ne_unc_m3"},
	{Key: "tgas_k", Label: "Gas temperature (analysis)", Unit: "K", Result: true, col: "r.tgas_k"},
	{Key: "n_warnings", Label: "Warnings (problems and cautions)", Unit: "", Result: true, col: "r.n_warnings"},
	{Key: "pressure_pa", Label: "Pressure", Unit: "Pa", col: "r.pressure_pa"},
	{Key: "power_w", Label: "Power", Unit: "W", col: "r.power_w"},
	{Key: "electrode_gap_mm", Label: "Electrode gap", Unit: "mm", col: "r.electrode_gap_mm"},
	{Key: "gas_temperature_k", Label: "Gas temperature (given)", Unit: "K", col: "r.gas_temperature_k"},
	{Key: "instrument_fwhm_nm", Label: "Instrument FWHM", Unit: "nm", col: "r.instrument_fwhm_nm"},
}

// LookupTrendField returns the field with key.
func LookupTrendField(key string) (TrendField, bool) {
	for _, f := range TrendFields {
		if f.Key == key {
			return f, true
		}
	}
	return TrendField{}, false
}

// AxisLabel is "Label (unit)" or just the label.
func (f TrendField) AxisLabel() string {
	if f.Unit == "" {
		return f.Label
	}
	return f.Label + " (" + f.Unit + ")"
}

// TrendPoint is one run in a trend series.
type TrendPoint struct {
	RunID int64
	// Started is the run's start time in Unix seconds (StartedAt gives
	// it as a time): a point holds no pointer, so a cached series of a
	// million runs is 56 MB that the garbage collector need not scan.
	Started int64
	X, Y    float64
	// YUnc is the 1σ uncertainty of Y, 0 when unknown.
	YUnc float64
	// ChamberID and RecipeID are the run's chamber and recipe (0: none),
	// for colouring series.
	ChamberID, RecipeID int64
}

// StartedAt is the run's start time (UTC).
func (p TrendPoint) StartedAt() time.Time { return time.Unix(p.Started, 0).UTC() }

// TrendSeries is the series of one trend: the runs matching a filter that
// have both values, ordered by X (then run id).
type TrendSeries struct {
	X, Y   TrendField
	Points []TrendPoint
	// Missing counts matching runs without an X or Y value.
	Missing int
}

// Where returns the SQL WHERE clause (with a leading space, or "") and
// its arguments for the runs table aliased r; for queries elsewhere in
// the application that select runs like the run list does.
func (f RunFilter) Where() (string, []any) { return f.where() }

// TrendSeries returns the trend of yField against xField (keys of
// TrendFields) over the runs matching f; f's Sort, Limit and Offset are
// ignored. Unknown field keys are ErrInvalid.
//
// The series comes from the trend column store (trendcols.go): every
// run's plotted quantities, filtered attributes and searched text in
// memory, made current from the run_changes log (migration 0004) before
// each answer, so a series of a million runs is built in tens of
// milliseconds and never lags a committed change. When the store cannot
// answer (a text search with a zero byte or invalid UTF-8, a run text the
// store cannot hold, ids beyond its limits), only the needed columns of
// runs are read through SQL.
//
// Results are cached per filter and fields with the log position they
// are current at (column-store series up to colsCacheMaxPoints points).
// A cached SQL series is brought up to date by re-reading only the runs
// changed since; a column-store series is built again.
// Callers must not modify the returned series.
func (d *DB) TrendSeries(ctx context.Context, f RunFilter, xField, yField string) (TrendSeries, error) {
	xf, ok := LookupTrendField(xField)
	if !ok {
		return TrendSeries{}, fmt.Errorf("%w: unknown x field %q (known: %s)", ErrInvalid, xField, trendKeys())
	}
	yf, ok := LookupTrendField(yField)
	if !ok {
		return TrendSeries{}, fmt.Errorf("%w: unknown y field %q (known: %s)", ErrInvalid, yField, trendKeys())
	}
	key := fmt.Sprintf("%#v|%s|%s", f, xField, yField)
	// From the column store (trendcols.go), made current first; a few
	// tries, as trends of other quantities may drop a column this one
	// needs between the sync and the build.
	for try := 0; try < 3 && trendColumnsUsable(f); try++ {
		ok, err := d.colsSync(ctx)
		if err != nil {
			return TrendSeries{}, err
		}
		if !ok {
			break
		}
		d.cols.mu.RLock()
		seq := d.cols.seq
		d.cols.mu.RUnlock()
		ckey := "cols|" + key
		if e, hit := d.trends.get(ckey); hit && e.seq == seq {
			return e.ts, nil
		}
		if ts, seq, ok := d.colsSeries(f, xf, yf); ok {
			if len(ts.Points) <= colsCacheMaxPoints {
				d.trends.put(trendEntry{ckey, seq, ts, nil})
			}
			return ts, nil
		}
	}
	// Two queries: SQLite answers a lone max() or min() of the primary key
	// from the b-tree's end, but scans the table for both at once.
	var cur, oldest int64
	if err := d.db.QueryRowContext(ctx, `SELECT coalesce(max(seq), 0) FROM run_changes`).Scan(&cur); err != nil {
		return TrendSeries{}, err
	}
	if err := d.db.QueryRowContext(ctx, `SELECT coalesce(min(seq), 0) FROM run_changes`).Scan(&oldest); err != nil {
		return TrendSeries{}, err
	}
	e, ok := d.trends.get(key)
	switch {
	case ok && e.seq == cur:
		return e.ts, nil
	case ok && e.seq >= oldest-1 && cur-e.seq <= maxIncremental:
		ts, missing, err := d.trendUpdate(ctx, f, xField, yField, e)
		if err != nil {
			return TrendSeries{}, err
		}
		d.trends.put(trendEntry{key, cur, ts, missing})
		return ts, nil
	}
	ts, missing, err := d.trendRead(ctx, f, xField, yField, "", nil)
	if err != nil {
		return ts, err
	}
	sortTrend(ts.Points)
	d.trends.put(trendEntry{key, cur, ts, missing})
	return ts, nil
}

// maxIncremental is the most logged changes a cached series is updated
// over; beyond it the series is read afresh.
const maxIncremental = 20000

// trendUpdate brings a cached series up to date: the points and missing
// runs of every run changed since e.seq are dropped, and those runs are
// read again under the filter.
func (d *DB) trendUpdate(ctx context.Context, f RunFilter, xField, yField string, e trendEntry) (TrendSeries, map[int64]bool, error) {
	rows, err := d.db.QueryContext(ctx, `SELECT DISTINCT run_id FROM run_changes WHERE seq > ?`, e.seq)
	if err != nil {
		return TrendSeries{}, nil, err
	}
	changed := map[int64]bool{}
	for rows.Next() {
		var id int64
		if err := rows.Scan(&id); err != nil {
			rows.Close()
			return TrendSeries{}, nil, err
		}
		changed[id] = true
	}
	rows.Close()
	if err := rows.Err(); err != nil {
		return TrendSeries{}, nil, err
	}
	fresh, freshMissing, err := d.trendRead(ctx, f, xField, yField,
		"r.id IN (SELECT run_id FROM run_changes WHERE seq > ?)", []any{e.seq})
	if err != nil {
		return TrendSeries{}, nil, err
	}
	ts := TrendSeries{X: e.ts.X, Y: e.ts.Y}
	ts.Points = make([]TrendPoint, 0, len(e.ts.Points)+len(fresh.Points))
	for _, p := range e.ts.Points {
		if !changed[p.RunID] {
			ts.Points = append(ts.Points, p)
		}
	}
	ts.Points = append(ts.Points, fresh.Points...)
	sortTrend(ts.Points)
	missing := make(map[int64]bool, len(e.missing)+len(freshMissing))
	for id := range e.missing {
		if !changed[id] {
			missing[id] = true
		}
	}
	for id := range freshMissing {
		missing[id] = true
	}
	ts.Missing = len(missing)
	return ts, missing, nil
}

func sortTrend(pts []TrendPoint) {
	slices.SortFunc(pts, func(a, b TrendPoint) int {
		if c := cmp.Compare(a.X, b.X); c != 0 {
			return c
		}
		return cmp.Compare(a.RunID, b.RunID)
	})
}

// pruneRunChangesTx keeps the change log short: entries older than any
// cached series could still need are dropped (a series older than the log
// is simply read afresh). Entries the trend column store has not read yet
// are kept, up to maxColsLag of them, so that it catches up run by run
// instead of reading a million runs again.
func (d *DB) pruneRunChangesTx(ctx context.Context, tx *sql.Tx) error {
	keep := d.cols.kept.Load() // 0: no column store
	if keep == 0 {
		keep = math.MaxInt64
	}
	_, err := d.txExec(ctx, tx, qPruneChanges, 2*maxIncremental, keep, maxColsLag)
	return err
}

// maxColsLag bounds the log entries kept for the column store.
const maxColsLag = 1_000_000

// trendRead reads the series (unsorted) of the runs matching f and the
// extra condition cond (with its arguments), and the ids of matching runs
// without an x or y value.
func (d *DB) trendRead(ctx context.Context, f RunFilter, xField, yField, cond string, condArgs []any) (TrendSeries, map[int64]bool, error) {
	xf, ok := LookupTrendField(xField)
	if !ok {
		return TrendSeries{}, nil, fmt.Errorf("%w: unknown x field %q (known: %s)", ErrInvalid, xField, trendKeys())
	}
	yf, ok := LookupTrendField(yField)
	if !ok {
		return TrendSeries{}, nil, fmt.Errorf("%w: unknown y field %q (known: %s)", ErrInvalid, yField, trendKeys())
	}
	ts := TrendSeries{X: xf, Y: yf}
	unc := "NULL"
	if yf.uncCol != "" {
		unc = yf.uncCol
	}
	where, args := f.where()
	if cond != "" {
		if where == "" {
			where = " WHERE " + cond
		} else {
			where += " AND " + cond
		}
		args = append(args, condArgs...)
	}
	rows, err := d.db.QueryContext(ctx, `SELECT r.id, r.started_at, `+xf.col+`, `+yf.col+`, `+unc+
		`, coalesce(r.chamber_id, 0), coalesce(r.recipe_id, 0) FROM runs r`+where, args...)
	if err != nil {
		return ts, nil, fmt.Errorf("store: trend series: %w", err)
	}
	defer rows.Close()
	missing := map[int64]bool{}
	for rows.Next() {
		var p TrendPoint
		var started int64
		var x, y, u sql.NullFloat64
		if err := rows.Scan(&p.RunID, &started, &x, &y, &u, &p.ChamberID, &p.RecipeID); err != nil {
			return ts, nil, err
		}
		if !x.Valid || !y.Valid {
			missing[p.RunID] = true
			continue
		}
		p.Started, p.X, p.Y = started, x.Float64, y.Float64
		if u.Valid && u.Float64 > 0 {
			p.YUnc = u.Float64
		}
		ts.Points = append(ts.Points, p)
	}
	if err := rows.Err(); err != nil {
		return ts, nil, err
	}
	ts.Missing = len(missing)
	return ts, missing, nil
}

func trendKeys() string {
	keys := make([]string, len(TrendFields))
	for i, f := range TrendFields {
		keys[i] = f.Key
	}
	return strings.Join(keys, ", ")
}

// RunTitles returns the titles of the given runs (missing ids are left
// out), for tables that name a few runs of a long series.
func (d *DB) RunTitles(ctx context.Context, ids []int64) (map[int64]string, error) {
	out := make(map[int64]string, len(ids))
	for start := 0; start < len(ids); start += 500 {
		chunk := ids[start:min(start+500, len(ids))]
		args := make([]any, len(chunk))
		for i, id := range chunk {
			args[i] = id
		}
		rows, err := d.db.QueryContext(ctx, `SELECT id, title FROM runs WHERE id IN (?`+strings.Repeat(",?", len(chunk)-1)+`)`, args...)
		if err != nil {
			return nil, fmt.Errorf("store: run titles: %w", err)
		}
		for rows.Next() {
			var id int64
			var t string
			if err := rows.Scan(&id, &t); err != nil {
				rows.Close()
				return nil, err
			}
			out[id] = t
		}
		rows.Close()
		if err := rows.Err(); err != nil {
			return nil, err
		}
	}
	return out, nil
}

// RunIDs returns the ids of the runs matching f in start-time order (f's
// Sort, Limit and Offset are ignored), for bulk work.
func (d *DB) RunIDs(ctx context.Context, f RunFilter) ([]int64, error) {
	where, args := f.where()
	rows, err := d.db.QueryContext(ctx, `SELECT r.id FROM runs r`+where+` ORDER BY r.started_at, r.id`, args...)
	if err != nil {
		return nil, fmt.Errorf("store: run ids: %w", err)
	}
	defer rows.Close()
	var out []int64
	for rows.Next() {
		var id int64
		if err := rows.Scan(&id); err != nil {
			return nil, err
		}
		out = append(out, id)
	}
	return out, rows.Err()
}

// trendCache keeps the last few trend series (each at most a few MB for
// 100 000 runs) with the change-log position they are current at.
type trendCache struct {
	mu      sync.Mutex
	entries []trendEntry // most recent last
}

type trendEntry struct {
	key     string
	seq     int64
	ts      TrendSeries
	missing map[int64]bool
}

const trendCacheSize = 8

// trendCacheMaxPoints bounds the points held by the cache (a point is 56
// bytes, so about 17 MB): on a log of a million runs the series of all
// runs alone is a million points, and the trend column store beside it
// holds about 100 MB; series of the store are rebuilt from it in tens of
// milliseconds, so the cache need not hold many. The newest series is
// always kept.
const trendCacheMaxPoints = 300_000

// colsCacheMaxPoints: a series of the column store with more points is
// not cached (a series of a million runs is 56 MB, and building it again
// from the columns takes 10–20 ms): the columns, which hold every
// plotted quantity, leave the cache little room under serve's soft heap
// limit.
const colsCacheMaxPoints = 250_000

func (c *trendCache) get(key string) (trendEntry, bool) {
	c.mu.Lock()
	defer c.mu.Unlock()
	for i, e := range c.entries {
		if e.key == key {
			c.entries = append(append(c.entries[:i:i], c.entries[i+1:]...), e)
			return e, true
		}
	}
	return trendEntry{}, false
}

func (c *trendCache) put(e trendEntry) {
	c.mu.Lock()
	defer c.mu.Unlock()
	kept := c.entries[:0]
	for _, o := range c.entries {
		if o.key != e.key {
			kept = append(kept, o)
		}
	}
	c.entries = append(kept, e)
	if len(c.entries) > trendCacheSize {
		c.entries = c.entries[len(c.entries)-trendCacheSize:]
	}
	n := 0
	for i := len(c.entries) - 1; i >= 0; i-- {
		n += len(c.entries[i].ts.Points) + len(c.entries[i].missing)
		if n > trendCacheMaxPoints && i < len(c.entries)-1 {
			c.entries = slices.Clone(c.entries[i+1:]) // drop the older ones (and their memory)
			break
		}
	}
}

// DropTrendCache forgets every cached trend series (for benchmarks of the
// first view).
func (d *DB) DropTrendCache() {
	d.trends.mu.Lock()
	d.trends.entries = nil
	d.trends.mu.Unlock()
}
