package store

import (
	"cmp"
	"context"
	"slices"
	"sort"
	"strings"
)

// The run list from the trend column store. A text search (RunFilter.Query)
// or a gas filter has no index in SQL: each is a LIKE checked run by run,
// so a word that matches almost nothing reads all the runs (≈ 1.5 s for a
// million) to fill a page and its count. The column store holds every
// run's filtered attributes and sort keys, and titles and notes
// (textCol), so for such filters it finds the matching runs in one pass
// over memory, counts them exactly and picks the page:
//
//   - a few matching runs (at most listSortMax): they are sorted;
//   - many: the sort key's order of all runs (as trends keep for their x
//     axis; titles' built the first time it is needed, ≈ 1 s for a million
//     runs, and kept current like the others) is walked until the page is
//     full; by status, one pass per status.
//
// Only the page's ids come from memory; the rows are read from SQL as for
// every list. The store is used only once it is loaded (serve loads it
// in the background at start); before that the list reads through SQL.

// listSortMax is the most matching runs sorted for a page; beyond it the
// sort key's order is walked.
var listSortMax = 20000

// listSQLRows is the most rows the SQL path is expected to read for a
// bounded count and its page for the list to leave a search to it.
var listSQLRows = 20000.0

// colsList is the run list's answer from the columns.
type colsList struct {
	ok    bool  // false: read through SQL
	ids   []any // the page
	total int
	more  bool
}

// listColsUsable reports whether f is a filter the list answers from the
// columns: one with a text search or a gas filter.
func listColsUsable(f RunFilter) bool {
	return (strings.TrimSpace(f.Query) != "" || strings.TrimSpace(f.Gas) != "") && searchable(f.Query)
}

// listFromCols is ListRunsCapped's count and page from the column store,
// made current with the last commit first.
func (d *DB) listFromCols(ctx context.Context, f RunFilter, limit, offset, countCap int) (colsList, error) {
	if !listColsUsable(f) {
		return colsList{}, nil
	}
	c := &d.cols
	c.mu.RLock()
	state := c.state
	c.mu.RUnlock()
	if state != colsReady {
		return colsList{}, nil // not loaded (yet): SQL
	}
	if ok, err := d.colsSync(ctx); err != nil || !ok {
		return colsList{}, err
	}
	c.mu.RLock()
	defer c.mu.RUnlock()
	key, desc := listSortKey(f.Sort)
	if c.state != colsReady || (c.text == nil && (strings.TrimSpace(f.Query) != "" || key == "title")) {
		return colsList{}, nil
	}
	out := colsList{ok: true}
	m, ok := c.matcher(f)
	if !ok {
		return out, nil
	}
	if countCap > 0 && key != "status" {
		// Matches are common: SQL fills the page and the bounded count
		// from the sort column's index after a few rows per match, sooner
		// than a pass over every run's text (estimated on a sample).
		hits, seen := 0, 0
		for i := 0; i < len(c.id); i += sampleStep(len(c.id)) {
			seen++
			if m.one(c, i) {
				hits++
			}
		}
		if hits > 0 && float64(offset+limit+countCap)*float64(seen)/float64(hits) < listSQLRows {
			return colsList{}, nil
		}
	}
	mask := m.mask(c)
	if mask == nil {
		return colsList{}, nil // not reached: the filter has a condition
	}
	n := 0
	for i, in := range mask {
		if in && c.status[i] != 0 {
			n++
		} else {
			mask[i] = false
		}
	}
	out.total = n
	if countCap > 0 {
		if bound := offset + limit + countCap; n > bound {
			out.total, out.more = bound, true
		}
	}
	if offset >= n {
		return out, nil
	}
	want := min(offset+limit, n)
	var page []int32
	switch {
	case n <= listSortMax:
		sel := make([]int32, 0, n)
		for i, in := range mask {
			if in {
				sel = append(sel, int32(i))
			}
		}
		slices.SortFunc(sel, c.listCmp(key, desc))
		page = sel[offset:want]
	case key == "status":
		page = c.walkStatus(mask, desc, want)[offset:]
	default:
		page = c.walkOrder(key, mask, desc, want)[offset:]
	}
	out.ids = make([]any, len(page))
	for k, i := range page {
		out.ids[k] = c.id[i]
	}
	return out, nil
}

// listSortKey is RunFilter.order's column key and direction.
func listSortKey(s string) (string, bool) {
	desc := strings.HasPrefix(s, "-")
	s = strings.TrimPrefix(s, "-")
	if _, ok := sortCols[s]; !ok {
		return "started", true
	}
	return s, desc
}

// listCmp orders positions as RunFilter.order does: the key (NULL last
// in either direction), then the run id, both in the direction asked.
func (c *trendCols) listCmp(key string, desc bool) func(a, b int32) int {
	var keyCmp func(a, b int32) int
	switch key {
	case "started":
		keyCmp = func(a, b int32) int { return cmp.Compare(c.started[a], c.started[b]) }
	case "texc", "ne":
		v := c.vals[listValueCol[key]]
		return func(a, b int32) int {
			x, y := v.at(a), v.at(b)
			if nx, ny := x != x, y != y; nx != ny {
				if nx {
					return 1 // NULLS LAST
				}
				return -1
			}
			r := cmp.Compare(x, y) // 0 for two NULLs
			if r == 0 {
				r = cmp.Compare(c.id[a], c.id[b])
			}
			if desc {
				return -r
			}
			return r
		}
	case "title":
		keyCmp = c.text.titleCmp
	case "status":
		keyCmp = func(a, b int32) int { return strings.Compare(c.statusDict[c.status[a]], c.statusDict[c.status[b]]) }
	default: // id
		keyCmp = func(a, b int32) int { return 0 }
	}
	return func(a, b int32) int {
		r := keyCmp(a, b)
		if r == 0 {
			r = cmp.Compare(c.id[a], c.id[b])
		}
		if desc {
			return -r
		}
		return r
	}
}

// listValueCol names the value column of a sort key.
var listValueCol = map[string]string{"texc": "texc_k", "ne": "ne_m3"}

// walkOrder returns the first want matching positions in the list order
// of key (started, texc, ne, id) by walking the key's order of all runs.
func (c *trendCols) walkOrder(key string, mask []bool, desc bool, want int) []int32 {
	out := make([]int32, 0, want)
	take := func(i int32) bool {
		if mask[i] {
			out = append(out, i)
		}
		return len(out) < want
	}
	if key == "id" { // positions are in id order
		if desc {
			for i := len(mask) - 1; i >= 0 && take(int32(i)); i-- {
			}
		} else {
			for i := 0; i < len(mask) && take(int32(i)); i++ {
			}
		}
		return out
	}
	if key == "title" {
		ord := c.orderOf(titleOrder) // titles are never NULL
		if desc {
			for j := len(ord) - 1; j >= 0 && take(ord[j]); j-- {
			}
		} else {
			for j := 0; j < len(ord) && take(ord[j]); j++ {
			}
		}
		return out
	}
	field := map[string]string{"started": "started_at", "texc": "texc_k", "ne": "ne_m3"}[key]
	f, _ := LookupTrendField(field)
	ord := c.order(f) // (x, id) ascending, NULL (NaN) first
	x := c.xs(f)
	nulls := sort.Search(len(ord), func(j int) bool { v := x(ord[j]); return v == v })
	vals, nullPart := ord[nulls:], ord[:nulls]
	for _, part := range [][]int32{vals, nullPart} { // NULLS LAST either way
		if desc {
			for j := len(part) - 1; j >= 0; j-- {
				if !take(part[j]) {
					return out
				}
			}
		} else {
			for _, i := range part {
				if !take(i) {
					return out
				}
			}
		}
	}
	return out
}

// walkStatus returns the first want matching positions by status (then
// id): one pass over the runs per status, in the statuses' text order.
func (c *trendCols) walkStatus(mask []bool, desc bool, want int) []int32 {
	codes := make([]uint8, 0, len(c.statusDict))
	for k := 1; k < len(c.statusDict); k++ {
		codes = append(codes, uint8(k))
	}
	slices.SortFunc(codes, func(a, b uint8) int { return strings.Compare(c.statusDict[a], c.statusDict[b]) })
	if desc {
		slices.Reverse(codes)
	}
	out := make([]int32, 0, want)
	for _, code := range codes {
		if desc {
			for i := len(mask) - 1; i >= 0; i-- {
				if mask[i] && c.status[i] == code {
					if out = append(out, int32(i)); len(out) == want {
						return out
					}
				}
			}
		} else {
			for i := range mask {
				if mask[i] && c.status[i] == code {
					if out = append(out, int32(i)); len(out) == want {
						return out
					}
				}
			}
		}
	}
	return out
}
