package store

import (
	"cmp"
	"context"
	"database/sql"
	"fmt"
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
//	n_warnings         number of validity warnings of the analysis
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
	{Key: "n_warnings", Label: "Validity warnings", Unit: "", Result: true, col: "r.n_warnings"},
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
	RunID     int64
	StartedAt time.Time
	X, Y      float64
	// YUnc is the 1σ uncertainty of Y, 0 when unknown.
	YUnc float64
}

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
// ignored. Only the needed columns of runs are read, so that a series of
// 100 000 runs takes a few tens of milliseconds. Unknown field keys are
// ErrInvalid.
//
// Results are cached per filter and fields, and reused while the data
// generation (Generation) is unchanged; callers must not modify them.
func (d *DB) TrendSeries(ctx context.Context, f RunFilter, xField, yField string) (TrendSeries, error) {
	gen, err := d.Generation(ctx)
	if err != nil {
		return TrendSeries{}, err
	}
	key := fmt.Sprintf("%#v|%s|%s", f, xField, yField)
	if ts, ok := d.trends.get(key, gen); ok {
		return ts, nil
	}
	ts, err := d.trendSeries(ctx, f, xField, yField)
	if err == nil {
		d.trends.put(key, gen, ts)
	}
	return ts, err
}

func (d *DB) trendSeries(ctx context.Context, f RunFilter, xField, yField string) (TrendSeries, error) {
	xf, ok := LookupTrendField(xField)
	if !ok {
		return TrendSeries{}, fmt.Errorf("%w: unknown x field %q (known: %s)", ErrInvalid, xField, trendKeys())
	}
	yf, ok := LookupTrendField(yField)
	if !ok {
		return TrendSeries{}, fmt.Errorf("%w: unknown y field %q (known: %s)", ErrInvalid, yField, trendKeys())
	}
	ts := TrendSeries{X: xf, Y: yf}
	unc := "NULL"
	if yf.uncCol != "" {
		unc = yf.uncCol
	}
	where, args := f.where()
	rows, err := d.db.QueryContext(ctx, `SELECT r.id, r.started_at, `+xf.col+`, `+yf.col+`, `+unc+
		` FROM runs r`+where, args...)
	if err != nil {
		return ts, fmt.Errorf("store: trend series: %w", err)
	}
	defer rows.Close()
	for rows.Next() {
		var p TrendPoint
		var started int64
		var x, y, u sql.NullFloat64
		if err := rows.Scan(&p.RunID, &started, &x, &y, &u); err != nil {
			return ts, err
		}
		if !x.Valid || !y.Valid {
			ts.Missing++
			continue
		}
		p.StartedAt, p.X, p.Y = time.Unix(started, 0).UTC(), x.Float64, y.Float64
		if u.Valid && u.Float64 > 0 {
			p.YUnc = u.Float64
		}
		ts.Points = append(ts.Points, p)
	}
	if err := rows.Err(); err != nil {
		return ts, err
	}
	// Sorted here rather than by SQL: a sequential scan of the table and
	// a sort in memory beat an index walk with one table lookup per row.
	slices.SortFunc(ts.Points, func(a, b TrendPoint) int {
		if c := cmp.Compare(a.X, b.X); c != 0 {
			return c
		}
		return cmp.Compare(a.RunID, b.RunID)
	})
	return ts, nil
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
// 100 000 runs) with the data generation they were read at.
type trendCache struct {
	mu      sync.Mutex
	entries []trendEntry // most recent last
}

type trendEntry struct {
	key string
	gen int64
	ts  TrendSeries
}

const trendCacheSize = 8

func (c *trendCache) get(key string, gen int64) (TrendSeries, bool) {
	c.mu.Lock()
	defer c.mu.Unlock()
	for i, e := range c.entries {
		if e.key == key && e.gen == gen {
			c.entries = append(append(c.entries[:i:i], c.entries[i+1:]...), e)
			return e.ts, true
		}
	}
	return TrendSeries{}, false
}

func (c *trendCache) put(key string, gen int64, ts TrendSeries) {
	c.mu.Lock()
	defer c.mu.Unlock()
	kept := c.entries[:0]
	for _, e := range c.entries {
		if e.key != key && e.gen == gen {
			kept = append(kept, e)
		}
	}
	c.entries = append(kept, trendEntry{key, gen, ts})
	if len(c.entries) > trendCacheSize {
		c.entries = c.entries[len(c.entries)-trendCacheSize:]
	}
}
