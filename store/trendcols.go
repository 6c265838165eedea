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
	"sync/atomic"
)

// The trend column store: the plotted quantities and the filtered
// attributes of every run, held in memory as columns (one slice per
// attribute, runs in id order), so that a trend of a million runs is one
// pass over a few slices instead of a million rows read through SQL
// (≈ 1–2 µs a row: 0.9–3 s for the first view of a filter).
//
// It is kept current from the run_changes log (migration 0004): triggers
// on runs and run_tags log every insert, update and delete, whatever code
// path made it (analysis service, uploads, sign-off and reopen, edits,
// deletes, direct SQL). Before answering, TrendSeries reads the log's
// end; when it is ahead of the columns, the runs changed since are read
// again in one read transaction (the same snapshot as the log's end), so
// a trend never shows a number older than the last committed change.
//
// Every plotted quantity and every filtered attribute is loaded with the
// store (in the background at start), so that no trend waits for a column
// of a million runs to be read. Memory per run: 8 (id) + 8 (start) + 3×2
// (chamber, recipe, operator) + 2 (status, source) + 2 (gas mixture, a
// code) bytes; each value column 1, 2 or 8 bytes (valCol: a dictionary of
// its values while they are few, as run conditions are); the searched
// text (title and notes, textCol) its length + 6; and each x quantity's
// order 4 (at most maxOrders). For the generated million runs (random
// pressures and powers, short titles) that is ≈ 108 MB.

// colsValues are the value columns of the store: every column a trend
// plots, with the uncertainties.
var colsValues = func() []string {
	var out []string
	for _, f := range TrendFields {
		for _, col := range []string{f.col, f.uncCol} {
			if col != "" && !f.Time {
				out = append(out, colName(col))
			}
		}
	}
	return out
}()

// colsReloadFraction: when more runs changed than this fraction of the
// held runs (or the log no longer reaches back to the columns' position),
// the store is read afresh instead of run by run.
const colsReloadFraction = 4

// trendCols is the column store: its data (colsData) are guarded by mu.
type trendCols struct {
	// loadMu serialises loads and catch-ups (others wait on it).
	loadMu sync.Mutex
	mu     sync.RWMutex
	// ordersMu guards colsData.orders, which readers fill in.
	ordersMu sync.Mutex
	// kept is the columns' log position, readable without mu: the log is
	// not pruned past it (pruneRunChangesTx), so that the columns can
	// catch up run by run. 0: no constraint.
	kept atomic.Int64
	colsData
}

type colsData struct {
	// state: colsEmpty until loaded; colsReady; colsOff when the data do
	// not fit the columns (an id beyond int32 where int32 is used, more
	// than 255 statuses or source types): SQL answers then.
	state int
	// seq is the run_changes position the columns are current at.
	seq int64

	id      []int64  // ascending
	started []int64  // Unix seconds
	chamber []uint16 // 0: none
	recipe  []uint16 // 0: none
	oper    []uint16
	status  []uint8 // code in statusDict; 0: deleted run (a hole)
	source  []uint8 // code in sourceDict
	// vals holds the value columns by runs column name; NaN is NULL
	// (SQLite stores no NaN: it reads back as NULL).
	vals map[string]*valCol
	// gas is the gas mixture as a code in gasDict.
	gas     []uint16
	gasDict []string
	gasCode map[string]uint16
	// text is the title and notes of every run (text search); nil when a
	// run's text cannot be held (a zero byte in it): searches then read
	// through SQL.
	text *textCol

	statusDict, sourceDict []string           // code 0 is ""
	tags                   map[string][]int64 // sorted run ids per tag
	// orders holds, per x field key, the positions of the held runs
	// (holes excluded) sorted by (x, id), built when first needed and
	// kept current.
	orders map[string][]int32
	holes  int
}

const (
	colsEmpty = iota
	colsReady
	colsOff
)

// colsQuerier is what the store is read through: a read transaction.
type colsQuerier interface {
	QueryContext(ctx context.Context, query string, args ...any) (*sql.Rows, error)
	QueryRowContext(ctx context.Context, query string, args ...any) *sql.Row
}

// trendColumnsUsable reports whether f can be answered from the columns
// (when they hold the runs' text, for a text search).
func trendColumnsUsable(f RunFilter) bool { return searchable(f.Query) }

// colsSync makes the column store current with the last committed change.
// It loads the store on first use. It returns false when the store cannot
// serve (the caller reads through SQL).
//
// The database work is not cancelled with ctx (a visitor leaving the page
// would otherwise throw away a load others wait for); on an error the
// store is dropped and read afresh next time, never left half updated.
func (d *DB) colsSync(ctx context.Context) (bool, error) {
	ctx = context.WithoutCancel(ctx)
	c := &d.cols
	c.mu.RLock()
	state, seq := c.state, c.seq
	c.mu.RUnlock()
	switch state {
	case colsOff:
		return false, nil
	case colsReady:
		var cur int64
		if err := d.db.QueryRowContext(ctx, `SELECT coalesce(max(seq), 0) FROM run_changes`).Scan(&cur); err != nil {
			return false, err
		}
		if cur == seq {
			return true, nil
		}
	}
	c.loadMu.Lock() // one loader; the others wait for it here
	defer c.loadMu.Unlock()
	c.mu.Lock()
	defer c.mu.Unlock()
	if err := d.colsSyncLocked(ctx); err != nil {
		c.colsData = colsData{}
		c.kept.Store(0)
		return false, err
	}
	return c.state == colsReady, nil
}

// colsSyncLocked is colsSync's work under mu, in one read transaction: one
// snapshot for the log's end and the runs changed since.
func (d *DB) colsSyncLocked(ctx context.Context) error {
	c := &d.cols
	if c.state == colsOff {
		return nil
	}
	tx, err := d.db.BeginTx(ctx, &sql.TxOptions{ReadOnly: true}) // a deferred read
	if err != nil {
		return err
	}
	defer tx.Rollback()
	if c.state == colsEmpty {
		if err := d.colsReadLocked(ctx, tx); err != nil {
			return err
		}
		return tx.Commit()
	}
	// Two subqueries: SQLite answers a lone max() or min() of the primary
	// key from the b-tree's end, but scans the table for both at once.
	var cur, oldest int64
	if err := tx.QueryRowContext(ctx, `SELECT coalesce((SELECT max(seq) FROM run_changes), 0), coalesce((SELECT min(seq) FROM run_changes), 0)`).Scan(&cur, &oldest); err != nil {
		return err
	}
	if cur != c.seq && oldest > c.seq+1 {
		// The log no longer reaches back to the columns: read afresh.
		if err := d.colsReadLocked(ctx, tx); err != nil {
			return err
		}
		return tx.Commit()
	}
	if cur != c.seq {
		if err := d.colsCatchUpLocked(ctx, tx, cur); err != nil {
			return err
		}
	}
	if c.state == colsReady {
		c.seq = cur
		c.kept.Store(cur)
	}
	return tx.Commit()
}

// colsReadLocked reads every column of every run, and the tags, in the
// snapshot of tx.
func (d *DB) colsReadLocked(ctx context.Context, tx colsQuerier) error {
	c := &d.cols
	c.colsData = colsData{} // the old columns go before the new are read
	var seq, n int64
	if err := tx.QueryRowContext(ctx, `SELECT coalesce(max(seq), 0) FROM run_changes`).Scan(&seq); err != nil {
		return err
	}
	if err := tx.QueryRowContext(ctx, `SELECT count(*) FROM runs`).Scan(&n); err != nil {
		return err
	}
	c.colsData = colsData{state: colsReady, seq: seq, vals: map[string]*valCol{}, tags: map[string][]int64{},
		orders: map[string][]int32{}, statusDict: []string{""}, sourceDict: []string{""}, gasCode: map[string]uint16{},
		text: newTextCol(int(n))}
	c.id = make([]int64, 0, n)
	c.started = make([]int64, 0, n)
	c.chamber = make([]uint16, 0, n)
	c.recipe = make([]uint16, 0, n)
	c.oper = make([]uint16, 0, n)
	c.status = make([]uint8, 0, n)
	c.source = make([]uint8, 0, n)
	for _, col := range colsValues {
		c.vals[col] = newValCol(int(n))
	}
	c.gas = make([]uint16, 0, n)
	c.gasCodeOf(nil) // code 0: ""
	rows, err := tx.QueryContext(ctx, `SELECT `+colsSelect+` FROM runs r ORDER BY r.id`)
	if err != nil {
		return err
	}
	defer rows.Close()
	sc := newColsScanner()
	for rows.Next() {
		if err := rows.Scan(sc.dest...); err != nil {
			return err
		}
		if !c.appendRow(sc) {
			return nil // state is colsOff
		}
	}
	if err := rows.Err(); err != nil {
		return err
	}
	rows.Close()
	if c.text != nil {
		c.text.finish()
	}
	if err := c.readTags(ctx, tx, nil); err != nil {
		return err
	}
	c.kept.Store(seq)
	return nil
}

// colsSelect is the column list of a runs row in the store (id first,
// then colsValues in order).
var colsSelect = func() string {
	var b strings.Builder
	b.WriteString(`r.id, r.started_at, coalesce(r.chamber_id, 0), coalesce(r.recipe_id, 0), r.operator_id, r.status, r.source_type`)
	for _, col := range colsValues {
		b.WriteString(", r.")
		b.WriteString(col)
	}
	b.WriteString(", r.gas_mixture, r.title, r.notes")
	return b.String()
}()

// colsScanner holds the scan destinations of one row.
type colsScanner struct {
	id, started, chamber, recipe, oper int64
	status, source, gas, title, notes  sql.RawBytes
	vals                               []sql.NullFloat64
	dest                               []any
}

func newColsScanner() *colsScanner {
	s := &colsScanner{vals: make([]sql.NullFloat64, len(colsValues))}
	s.dest = []any{&s.id, &s.started, &s.chamber, &s.recipe, &s.oper, &s.status, &s.source}
	for i := range s.vals {
		s.dest = append(s.dest, &s.vals[i])
	}
	s.dest = append(s.dest, &s.gas, &s.title, &s.notes)
	return s
}

func (s *colsScanner) val(k int) float64 {
	if s.vals[k].Valid {
		return s.vals[k].Float64
	}
	return math.NaN()
}

// fitsUint16: chamber, recipe and operator ids are held in two bytes (a
// log with more than 65 535 chambers, recipes or accounts, or gas
// mixtures, turns the store off: trends then read through SQL).
func fitsUint16(v int64) bool { return v >= 0 && v <= math.MaxUint16 }

// code returns the code of v in a dictionary, adding it (false when a
// byte-sized dictionary is full).
func code(dict *[]string, v []byte) (uint8, bool) {
	for i, s := range *dict {
		if i > 0 && s == string(v) {
			return uint8(i), true
		}
	}
	if len(*dict) > math.MaxUint8 {
		return 0, false
	}
	*dict = append(*dict, string(v))
	return uint8(len(*dict) - 1), true
}

// gasCodeOf returns the code of a gas mixture, adding it (false: the
// dictionary is full).
func (c *trendCols) gasCodeOf(v []byte) (uint16, bool) {
	if k, ok := c.gasCode[string(v)]; ok {
		return k, true
	}
	if len(c.gasDict) > math.MaxUint16 {
		return 0, false
	}
	c.gasDict = append(c.gasDict, string(v))
	k := uint16(len(c.gasDict) - 1)
	c.gasCode[string(v)] = k
	return k, true
}

// appendRow adds a scanned run at the end (ids arrive ascending); false
// turns the store off (a value that does not fit).
func (c *trendCols) appendRow(s *colsScanner) bool {
	st, ok1 := code(&c.statusDict, s.status)
	so, ok2 := code(&c.sourceDict, s.source)
	gas, ok3 := c.gasCodeOf(s.gas)
	if !fitsUint16(s.chamber) || !fitsUint16(s.recipe) || !fitsUint16(s.oper) || !ok1 || !ok2 || !ok3 {
		c.off()
		return false
	}
	c.id = append(c.id, s.id)
	c.started = append(c.started, s.started)
	c.chamber = append(c.chamber, uint16(s.chamber))
	c.recipe = append(c.recipe, uint16(s.recipe))
	c.oper = append(c.oper, uint16(s.oper))
	c.status = append(c.status, st)
	c.source = append(c.source, so)
	for k, col := range colsValues {
		c.vals[col].append(s.val(k))
	}
	c.gas = append(c.gas, gas)
	if c.text != nil && !c.text.appendRun(s.title, s.notes) {
		c.text = nil // searched through SQL
	}
	return true
}

// setRow overwrites the run at position i with a scanned row.
func (c *trendCols) setRow(i int, s *colsScanner) bool {
	st, ok1 := code(&c.statusDict, s.status)
	so, ok2 := code(&c.sourceDict, s.source)
	gas, ok3 := c.gasCodeOf(s.gas)
	if !fitsUint16(s.chamber) || !fitsUint16(s.recipe) || !fitsUint16(s.oper) || !ok1 || !ok2 || !ok3 {
		c.off()
		return false
	}
	if c.status[i] == 0 {
		c.holes--
	}
	c.started[i], c.chamber[i], c.recipe[i], c.oper[i], c.status[i], c.source[i] =
		s.started, uint16(s.chamber), uint16(s.recipe), uint16(s.oper), st, so
	for k, col := range colsValues {
		c.vals[col].set(i, s.val(k))
	}
	c.gas[i] = gas
	if c.text != nil && !c.text.set(int32(i), s.title, s.notes) {
		c.text = nil
	}
	return true
}

// off drops the columns: trends are read through SQL from now on.
func (c *trendCols) off() {
	c.colsData = colsData{state: colsOff}
	c.kept.Store(0)
}

// readTags reads the tags of the runs ids (all runs when ids is nil) into
// c.tags; the caller has removed those runs' old tags.
func (c *trendCols) readTags(ctx context.Context, tx colsQuerier, ids []int64) error {
	add := func(rows *sql.Rows) error {
		defer rows.Close()
		for rows.Next() {
			var id int64
			var tag string
			if err := rows.Scan(&id, &tag); err != nil {
				return err
			}
			l := c.tags[tag]
			k, found := slices.BinarySearch(l, id)
			if !found {
				c.tags[tag] = slices.Insert(l, k, id)
			}
		}
		return rows.Err()
	}
	if ids == nil {
		rows, err := tx.QueryContext(ctx, `SELECT run_id, tag FROM run_tags ORDER BY tag, run_id`)
		if err != nil {
			return fmt.Errorf("tags: %w", err)
		}
		return add(rows)
	}
	for start := 0; start < len(ids); start += 500 {
		chunk := ids[start:min(start+500, len(ids))]
		rows, err := tx.QueryContext(ctx, `SELECT run_id, tag FROM run_tags WHERE run_id IN (`+placeholders(len(chunk))+`)`, int64Args(chunk)...)
		if err != nil {
			return fmt.Errorf("tags: %w", err)
		}
		if err := add(rows); err != nil {
			return err
		}
	}
	return nil
}

func placeholders(n int) string { return "?" + strings.Repeat(",?", n-1) }

func int64Args(ids []int64) []any {
	out := make([]any, len(ids))
	for i, id := range ids {
		out[i] = id
	}
	return out
}

// colsCatchUpLocked reads again the runs changed after c.seq up to cur.
func (d *DB) colsCatchUpLocked(ctx context.Context, tx colsQuerier, cur int64) error {
	c := &d.cols
	rows, err := tx.QueryContext(ctx, `SELECT DISTINCT run_id FROM run_changes WHERE seq > ? AND seq <= ? ORDER BY run_id`, c.seq, cur)
	if err != nil {
		return fmt.Errorf("changes: %w", err)
	}
	var ids []int64
	for rows.Next() {
		var id int64
		if err := rows.Scan(&id); err != nil {
			rows.Close()
			return err
		}
		ids = append(ids, id)
	}
	rows.Close()
	if err := rows.Err(); err != nil {
		return err
	}
	if len(ids) > len(c.id)/colsReloadFraction+1000 {
		return d.colsReadLocked(ctx, tx)
	}
	// Old tags of the changed runs go; their current ones are read below.
	for tag, l := range c.tags {
		kept := l[:0]
		for _, id := range l {
			if _, found := slices.BinarySearch(ids, id); !found {
				kept = append(kept, id)
			}
		}
		if len(kept) == 0 {
			delete(c.tags, tag)
		} else {
			c.tags[tag] = kept
		}
	}
	seen := make(map[int64]bool, len(ids))
	changedPos := map[int32]bool{}
	shifted := false
	sc := newColsScanner()
	for start := 0; start < len(ids); start += 500 {
		chunk := ids[start:min(start+500, len(ids))]
		rows, err := tx.QueryContext(ctx, `SELECT `+colsSelect+` FROM runs r WHERE r.id IN (`+placeholders(len(chunk))+`) ORDER BY r.id`, int64Args(chunk)...)
		if err != nil {
			return fmt.Errorf("changed runs: %w", err)
		}
		for rows.Next() {
			if err := rows.Scan(sc.dest...); err != nil {
				rows.Close()
				return err
			}
			seen[sc.id] = true
			i, found := slices.BinarySearch(c.id, sc.id)
			if !found {
				if i < len(c.id) {
					shifted = true // a run id below the highest held: positions move
				}
				c.insertAt(i)
				c.id[i] = sc.id
				c.status[i] = 0
				c.holes++
			}
			if !c.setRow(i, sc) {
				rows.Close()
				return nil
			}
			changedPos[int32(i)] = true
		}
		rows.Close()
		if err := rows.Err(); err != nil {
			return err
		}
	}
	for _, id := range ids {
		if seen[id] {
			continue
		}
		if i, found := slices.BinarySearch(c.id, id); found && c.status[i] != 0 {
			c.status[i] = 0 // deleted: a hole
			c.holes++
			changedPos[int32(i)] = true
		}
	}
	if err := c.readTags(ctx, tx, ids); err != nil {
		return err
	}
	if c.text == nil {
		delete(c.orders, titleOrder) // the titles are no longer held
	}
	if shifted {
		clear(c.orders) // rebuilt when next needed
	} else {
		for key, ord := range c.orders {
			c.orders[key] = c.mergeOrder(key, ord, changedPos)
		}
	}
	if c.holes > len(c.id)/colsReloadFraction {
		return d.colsReadLocked(ctx, tx)
	}
	return nil
}

// insertAt opens an empty slot at position i in every column.
func (c *trendCols) insertAt(i int) {
	c.id = insertAt(c.id, i, 0)
	c.started = insertAt(c.started, i, 0)
	c.chamber = insertAt(c.chamber, i, 0)
	c.recipe = insertAt(c.recipe, i, 0)
	c.oper = insertAt(c.oper, i, 0)
	c.status = insertAt(c.status, i, 0)
	c.source = insertAt(c.source, i, 0)
	for _, col := range colsValues {
		c.vals[col].insert(i, math.NaN())
	}
	c.gas = insertAt(c.gas, i, 0)
	if c.text != nil {
		c.text.insert(int32(i))
	}
}

// xs returns the value of field f at a position.
func (c *trendCols) xs(f TrendField) func(i int32) float64 {
	if f.Time {
		st := c.started
		return func(i int32) float64 { return float64(st[i]) }
	}
	return c.vals[colName(f.col)].at
}

func colName(col string) string { return strings.TrimPrefix(col, "r.") }

// orderCmp orders positions by (x, id) as sortTrend orders points
// (cmp.Compare: NaN first).
func (c *trendCols) orderCmp(x func(int32) float64) func(a, b int32) int {
	return func(a, b int32) int {
		if r := cmp.Compare(x(a), x(b)); r != 0 {
			return r
		}
		return cmp.Compare(c.id[a], c.id[b])
	}
}

// titleOrder is the orders key of the title order (the run list's sort
// by title; the other keys are trend fields').
const titleOrder = "title"

// keyCmp is the comparison of an order: (x, id) for a trend field's key,
// (title, id) for titleOrder (c.text must be held).
func (c *trendCols) keyCmp(key string) func(a, b int32) int {
	if key == titleOrder {
		return func(a, b int32) int {
			if r := c.text.titleCmp(a, b); r != 0 {
				return r
			}
			return cmp.Compare(c.id[a], c.id[b])
		}
	}
	f, _ := LookupTrendField(key)
	return c.orderCmp(c.xs(f))
}

// order returns the positions of the held runs sorted by (x, id); the
// caller holds mu (a read lock suffices: a missing order is built under
// ordersMu).
func (c *trendCols) order(f TrendField) []int32 { return c.orderOf(f.Key) }

// orderOf is order by a keyCmp key.
func (c *trendCols) orderOf(key string) []int32 {
	c.ordersMu.Lock()
	defer c.ordersMu.Unlock()
	if o, ok := c.orders[key]; ok {
		return o
	}
	o := make([]int32, 0, len(c.id)-c.holes)
	for i := range c.id {
		if c.status[i] != 0 {
			o = append(o, int32(i))
		}
	}
	if key == titleOrder {
		if less := c.keyCmp(key); !slices.IsSortedFunc(o, less) {
			slices.SortFunc(o, less)
		}
	} else {
		f, _ := LookupTrendField(key)
		o = radixOrder(o, c.xs(f))
	}
	if len(c.orders) >= maxOrders {
		for k := range c.orders {
			if k != "started_at" {
				delete(c.orders, k) // 4 MB a million runs: a few are kept
				break
			}
		}
	}
	c.orders[key] = o
	return o
}

// maxOrders is the most orders kept (the start time's and two others:
// trends' x quantities, the run list's sort keys; 4 MB each a million
// runs, built again in tens of milliseconds).
const maxOrders = 3

// mergeOrder brings an order up to date after the runs at positions
// changed were read again: they leave it and come back at their new place.
// One pass over the order (a map lookup per entry would cost more than
// the rest of a catch-up).
func (c *trendCols) mergeOrder(key string, ord []int32, changed map[int32]bool) []int32 {
	less := c.keyCmp(key)
	isChanged := make([]bool, len(c.id))
	var fresh []int32
	for i := range changed {
		isChanged[i] = true
		if c.status[i] != 0 {
			fresh = append(fresh, i)
		}
	}
	slices.SortFunc(fresh, less)
	kept := make([]int32, 0, len(ord))
	for _, i := range ord {
		if int(i) >= len(isChanged) || !isChanged[i] {
			kept = append(kept, i)
		}
	}
	// Each changed run goes where a binary search of the rest puts it
	// (ids are unique, so no two positions compare equal).
	out := make([]int32, 0, len(kept)+len(fresh))
	prev := 0
	for _, i := range fresh {
		at, _ := slices.BinarySearchFunc(kept, i, less)
		out = append(append(out, kept[prev:at]...), i)
		prev = at
	}
	return append(out, kept[prev:]...)
}

// colsSeries builds the trend of yf against xf over the runs matching f
// from the columns, with the log position it is current at; false when
// the store is not ready or cannot search f's text (the caller syncs
// again, then reads through SQL).
func (d *DB) colsSeries(f RunFilter, xf, yf TrendField) (TrendSeries, int64, bool) {
	c := &d.cols
	c.mu.RLock()
	defer c.mu.RUnlock()
	if c.state != colsReady || (strings.TrimSpace(f.Query) != "" && c.text == nil) {
		return TrendSeries{}, 0, false
	}
	ts := TrendSeries{X: xf, Y: yf}
	m, ok := c.matcher(f)
	if !ok {
		return ts, c.seq, true // the filter names a status, source or tag no run has
	}
	// The matching runs with both values, in x order (a plain loop: this
	// is the whole cost of a first view).
	ord := c.order(xf)
	var xv, yv, us *valCol
	if !xf.Time {
		xv = c.vals[colName(xf.col)]
	}
	if !yf.Time {
		yv = c.vals[colName(yf.col)]
	}
	if yf.uncCol != "" {
		us = c.vals[colName(yf.uncCol)]
	}
	mask := m.mask(c)
	sel := ord
	if mask != nil || xv != nil || yv != nil {
		sel = make([]int32, 0, len(ord))
		for _, i := range ord {
			if mask != nil && !mask[i] {
				continue
			}
			if xv != nil {
				if x := xv.at(i); x != x { // NaN: NULL
					ts.Missing++
					continue
				}
			}
			if yv != nil {
				if y := yv.at(i); y != y {
					ts.Missing++
					continue
				}
			}
			sel = append(sel, i)
		}
	}
	if len(sel) == 0 {
		return ts, c.seq, true
	}
	ts.Points = make([]TrendPoint, len(sel))
	for k, i := range sel {
		p := &ts.Points[k]
		p.RunID, p.Started = c.id[i], c.started[i]
		p.ChamberID, p.RecipeID = int64(c.chamber[i]), int64(c.recipe[i])
		if xv != nil {
			p.X = xv.at(i)
		} else {
			p.X = float64(c.started[i])
		}
		if yv != nil {
			p.Y = yv.at(i)
		} else {
			p.Y = float64(c.started[i])
		}
		if us != nil {
			if u := us.at(i); u > 0 { // NaN > 0 is false
				p.YUnc = u
			}
		}
	}
	return ts, c.seq, true
}

// colsMatch is a RunFilter on the columns: every condition is the one
// RunFilter.where writes in SQL.
type colsMatch struct {
	chamber, recipe, oper uint16 // 0: any
	source, status        uint8  // 0: any
	from, to              int64
	hasFrom, hasTo        bool
	gasIn                 []bool // by gas code; nil: any
	tagIn                 []bool // by position; nil: any
	words                 []textWord
}

// one reports whether run i matches (for estimates on a sample).
func (m *colsMatch) one(c *trendCols, i int) bool {
	switch {
	case c.status[i] == 0,
		m.chamber != 0 && c.chamber[i] != m.chamber,
		m.recipe != 0 && c.recipe[i] != m.recipe,
		m.oper != 0 && c.oper[i] != m.oper,
		m.source != 0 && c.source[i] != m.source,
		m.status != 0 && c.status[i] != m.status,
		m.hasFrom && c.started[i] < m.from,
		m.hasTo && c.started[i] >= m.to,
		m.gasIn != nil && !m.gasIn[c.gas[i]],
		m.tagIn != nil && !m.tagIn[i]:
		return false
	}
	for k := range m.words {
		if !c.matches(&m.words[k], i) {
			return false
		}
	}
	return true
}

// mask evaluates m on every position, one condition at a time (a tight
// loop over one column each); nil when m has no condition.
func (m *colsMatch) mask(c *trendCols) []bool {
	var mask []bool
	cond := func(test func(i int) bool) {
		if mask == nil {
			mask = make([]bool, len(c.id))
			for i := range mask {
				mask[i] = test(i)
			}
			return
		}
		for i, ok := range mask {
			if ok && !test(i) {
				mask[i] = false
			}
		}
	}
	if v := m.chamber; v != 0 {
		cond(func(i int) bool { return c.chamber[i] == v })
	}
	if v := m.recipe; v != 0 {
		cond(func(i int) bool { return c.recipe[i] == v })
	}
	if v := m.oper; v != 0 {
		cond(func(i int) bool { return c.oper[i] == v })
	}
	if v := m.source; v != 0 {
		cond(func(i int) bool { return c.source[i] == v })
	}
	if v := m.status; v != 0 {
		cond(func(i int) bool { return c.status[i] == v })
	}
	if m.hasFrom {
		v := m.from
		cond(func(i int) bool { return c.started[i] >= v })
	}
	if m.hasTo {
		v := m.to
		cond(func(i int) bool { return c.started[i] < v })
	}
	if in := m.gasIn; in != nil {
		cond(func(i int) bool { return in[c.gas[i]] })
	}
	if in := m.tagIn; in != nil {
		cond(func(i int) bool { return in[i] })
	}
	if len(m.words) > 0 {
		mask = c.textMatch(m.words, mask, len(c.id))
	}
	return mask
}

// matcher compiles f; false when f matches no run at all.
func (c *trendCols) matcher(f RunFilter) (*colsMatch, bool) {
	m := &colsMatch{}
	for _, v := range []struct {
		id  int64
		dst *uint16
	}{{f.ChamberID, &m.chamber}, {f.RecipeID, &m.recipe}, {f.OperatorID, &m.oper}} {
		if v.id != 0 {
			if !fitsUint16(v.id) || v.id == 0 {
				return nil, false
			}
			*v.dst = uint16(v.id)
		}
	}
	for _, v := range []struct {
		key  string
		dict []string
		dst  *uint8
	}{{f.SourceType, c.sourceDict, &m.source}, {f.Status, c.statusDict, &m.status}} {
		if v.key != "" {
			k := slices.Index(v.dict[1:], v.key)
			if k < 0 {
				return nil, false
			}
			*v.dst = uint8(k + 1)
		}
	}
	if !f.From.IsZero() {
		m.from, m.hasFrom = f.From.Unix(), true
	}
	if !f.To.IsZero() {
		m.to, m.hasTo = f.To.Unix(), true
	}
	if g := strings.TrimSpace(f.Gas); g != "" {
		// LIKE '%g%' (escaped): a substring, ASCII letters in either case.
		m.gasIn = make([]bool, len(c.gasDict))
		for k, s := range c.gasDict {
			m.gasIn[k] = containsFoldASCII(s, g)
		}
	}
	if words := queryWords(f.Query); len(words) > 0 {
		m.words = c.compileWords(words) // the callers checked that c.text is held
	}
	if f.Tag != "" {
		ids := c.tags[strings.ToLower(f.Tag)]
		if len(ids) == 0 {
			return nil, false
		}
		m.tagIn = make([]bool, len(c.id))
		for _, id := range ids {
			if k, found := slices.BinarySearch(c.id, id); found {
				m.tagIn[k] = true
			}
		}
	}
	return m, true
}

// containsFoldASCII reports whether sub occurs in s with ASCII letters
// compared without case, as SQLite's LIKE does by default.
func containsFoldASCII(s, sub string) bool {
	lower := func(b byte) byte {
		if 'A' <= b && b <= 'Z' {
			return b + 'a' - 'A'
		}
		return b
	}
	n := len(sub)
	for i := 0; i+n <= len(s); i++ {
		j := 0
		for j < n && lower(s[i+j]) == lower(sub[j]) {
			j++
		}
		if j == n {
			return true
		}
	}
	return false
}

// TrendColumnRuns is the number of runs the trend column store holds (0
// before it is loaded or when it is not in use).
func (d *DB) TrendColumnRuns() int {
	d.cols.mu.RLock()
	defer d.cols.mu.RUnlock()
	return len(d.cols.id) - d.cols.holes
}

// DropTrendColumns forgets the trend column store; the next trend loads
// it again (for benchmarks of the load).
func (d *DB) DropTrendColumns() {
	d.cols.mu.Lock()
	d.cols.colsData = colsData{}
	d.cols.kept.Store(0)
	d.cols.mu.Unlock()
}
