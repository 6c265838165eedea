package store

import (
	"context"
	"fmt"
	"testing"
)

// TestRunListColsMatchSQL: with the column store loaded, the run list's
// text searches and gas filters (counted and paged in memory) give the
// same runs in the same order, the same count and the same "more" as the
// SQL path, for every sort, shallow and deep pages, with the matching
// runs sorted (few) or found by walking the sort key's order (many),
// before and after changes of text, values and statuses.
func TestRunListColsMatchSQL(t *testing.T) {
	ctx := context.Background()
	d, _ := openTrendDB(t)
	chambers, _, _ := genTrendDB(t, d, 1500)
	if _, err := d.TrendSeries(ctx, RunFilter{}, "started_at", "texc_k"); err != nil {
		t.Fatal(err)
	}
	filters := []RunFilter{{Query: "gen"}, {Query: "GEN 1"}, {Query: "window"}, {Query: "électrode"}, {Query: "h2"},
		{Query: "%"}, {Query: "_off"}, {Query: "zzz"}, {Query: "1", Status: StatusDraft}, {Query: "e", Gas: "h2"},
		{Gas: "ar"}, {Gas: "He/H2_"}, {Query: "cleaned", ChamberID: chambers[1]}, {Query: "gen", Tag: "baseline"}}
	sorts := []string{"", "started", "-started", "texc", "-texc", "ne", "-ne", "title", "-title", "status", "-status", "id", "-id", "bogus"}
	listSQLRows = 0 // every search from the columns (here even common words)
	t.Cleanup(func() { listSQLRows = 20000 })
	compare := func(stage string) {
		t.Helper()
		n := 0
		for _, sortMax := range []int{20000, 10} { // sorted, walked
			listSortMax = sortMax
			for _, f := range filters {
				for _, s := range sorts {
					for _, page := range [][2]int{{20, 13}, {50, 400}, {7, 1490}} {
						for _, countCap := range []int{page[1] % 2 * 30} { // capped on odd offsets
							f.Sort = s
							cl, err := d.listFromCols(ctx, f, page[0], page[1], countCap)
							if err != nil {
								t.Fatal(err)
							}
							if !cl.ok {
								t.Fatalf("%s: %+v not answered from the columns", stage, f)
							}
							ids, total, more, err := d.pageSQL(ctx, f, page[0], page[1], countCap)
							if err != nil {
								t.Fatal(err)
							}
							if fmt.Sprint(cl.ids) != fmt.Sprint(ids) || cl.total != total || cl.more != more {
								t.Fatalf("%s: %+v limit %d offset %d cap %d (sorted up to %d): columns %v total %d more %v; SQL %v total %d more %v",
									stage, f, page[0], page[1], countCap, sortMax, cl.ids, cl.total, cl.more, ids, total, more)
							}
							n += len(ids)
						}
					}
				}
			}
		}
		listSortMax = 20000
		if n < 10000 {
			t.Fatalf("%s: only %d ids compared", stage, n)
		}
	}
	compare("loaded")
	exec := func(q string, args ...any) {
		t.Helper()
		if _, err := d.db.Exec(q, args...); err != nil {
			t.Fatal(err)
		}
	}
	exec(`UPDATE runs SET notes = 'now WINDOW cleaned', texc_k = NULL WHERE id % 13 = 0`)
	exec(`UPDATE runs SET title = 'renamed ' || id, status = 'submitted' WHERE id % 29 = 0`)
	exec(`DELETE FROM runs WHERE id IN (30, 31)`)
	exec(`INSERT INTO runs (id, title, started_at, operator_id, source_type, status, created_at, updated_at, texc_k, gas_mixture, notes)
		VALUES (31, 'back gen', 1767225600, (SELECT min(id) FROM users), 'dc_glow', 'draft', 0, 0, 4321, 'H2', 'window')`)
	exec(`INSERT INTO runs (title, started_at, operator_id, source_type, status, created_at, updated_at, ne_m3, gas_mixture)
		VALUES ('GEN appended', 1767225600, (SELECT min(id) FROM users), 'dc_glow', 'returned', 0, 0, 1e21, 'ar')`)
	filters = append(filters, RunFilter{Query: "renamed"}, RunFilter{Query: "now"}, RunFilter{Query: "back"}, RunFilter{Query: "appended"})
	compare("after changes")
}
