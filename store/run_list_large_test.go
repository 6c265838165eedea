package store

import (
	"context"
	"fmt"
	"slices"
	"testing"
	"time"
)

// bulkRuns inserts n runs with varied conditions, missing summaries on
// every fifth run, repeated titles and values (ties) and tags, by direct
// SQL.
func bulkRuns(t *testing.T, d *DB, op int64, n int) {
	t.Helper()
	ctx := context.Background()
	c1, _ := d.EnsureChamber(ctx, "Chamber A", "")
	c2, _ := d.EnsureChamber(ctx, "Chamber B", "")
	t0 := time.Date(2026, 1, 1, 0, 0, 0, 0, time.UTC).Unix()
	if _, err := d.SQL().Exec(`WITH RECURSIVE c(i) AS (SELECT 0 UNION ALL SELECT i + 1 FROM c WHERE i < ? - 1)
		INSERT INTO runs (title, started_at, operator_id, chamber_id, source_type, notes, status, created_at, updated_at, texc_k, ne_m3)
		SELECT 'Run ' || (i % 17), ? + (i % 50) * 3600, ?, CASE i % 3 WHEN 0 THEN ? ELSE ? END, 'dc_glow',
			CASE WHEN i % 7 = 0 THEN 'window cleaned' ELSE '' END,
			CASE i % 4 WHEN 0 THEN 'draft' WHEN 1 THEN 'submitted' WHEN 2 THEN 'returned' ELSE 'signed_off' END, ?, ?,
			CASE WHEN i % 5 = 0 THEN NULL ELSE 4000 + (i * 37) % 11 * 100 END,
			CASE WHEN i % 5 = 1 THEN NULL ELSE 1e21 * (1 + (i * 13) % 9) END
		FROM c`, n, t0, op, c1, c2, t0, t0); err != nil {
		t.Fatal(err)
	}
	if _, err := d.SQL().Exec(`INSERT INTO run_tags (run_id, tag) SELECT id, CASE WHEN id % 2 = 0 THEN 'even' ELSE 'odd' END FROM runs WHERE id % 3 = 0`); err != nil {
		t.Fatal(err)
	}
}

// TestListRunsCappedCount: the run list's count stops at the page's end
// plus the cap and says so; below it the count is exact.
func TestListRunsCappedCount(t *testing.T) {
	d, op := openRunsDB(t)
	ctx := context.Background()
	bulkRuns(t, d, op, 60)
	rs, total, more, err := d.ListRunsCapped(ctx, RunFilter{Limit: 5}, 10)
	if err != nil || len(rs) != 5 || total != 15 || !more {
		t.Fatalf("first page, cap 10: %d runs, total %d, more %v (%v); want 5, 15, true", len(rs), total, more, err)
	}
	rs, total, more, err = d.ListRunsCapped(ctx, RunFilter{Limit: 5, Offset: 50}, 10)
	if err != nil || len(rs) != 5 || total != 60 || more {
		t.Fatalf("near the end, cap 10: %d runs, total %d, more %v (%v); want 5, 60, false", len(rs), total, more, err)
	}
	_, total, more, err = d.ListRunsCapped(ctx, RunFilter{Status: "draft", Limit: 5}, 100)
	if err != nil || total != 15 || more {
		t.Fatalf("filtered below the cap: total %d, more %v (%v); want 15, false", total, more, err)
	}
	if _, total, _ := d.ListRuns(ctx, RunFilter{Limit: 5}); total != 60 {
		t.Fatalf("ListRuns counts exactly: %d, want 60", total)
	}
}

// TestListRunsScanSameAsSearch: reading a page in the sort index's order
// (filters written so that their indexes are not used) gives the same
// runs in the same order as reading the filter's index and sorting, for
// every sort and a range of filters and pages (missing values and ties
// included); and the full rows come back in the page's order.
func TestListRunsScanSameAsSearch(t *testing.T) {
	d, op := openRunsDB(t)
	ctx := context.Background()
	bulkRuns(t, d, op, 300)
	chambers, _ := d.Chambers(ctx)
	from := time.Date(2026, 1, 1, 10, 0, 0, 0, time.UTC)
	filters := []RunFilter{{}, {ChamberID: chambers[0].ID}, {Status: "returned"}, {Tag: "EVEN"},
		{ChamberID: chambers[1].ID, Status: "draft"}, {From: from, To: from.Add(20 * time.Hour)}, {Query: "cleaned"},
		{OperatorID: op, SourceType: "dc_glow", Tag: "odd"}}
	n := 0
	for _, f := range filters {
		for _, sort := range []string{"", "started", "texc", "-texc", "ne", "-ne", "title", "-title", "status", "-status"} {
			for _, off := range []int{0, 7, 40} {
				f.Sort = sort
				a, err := d.pageIDs(ctx, f, false, 20, off)
				if err != nil {
					t.Fatal(err)
				}
				b, err := d.pageIDs(ctx, f, true, 20, off)
				if err != nil {
					t.Fatal(err)
				}
				if fmt.Sprint(a) != fmt.Sprint(b) {
					t.Fatalf("%+v offset %d: search %v, scan %v", f, off, a, b)
				}
				n += len(a)
				f.Limit, f.Offset = 20, off
				rs, _, _, err := d.ListRunsCapped(ctx, f, 5)
				if err != nil {
					t.Fatal(err)
				}
				var got []any
				for _, r := range rs {
					got = append(got, r.ID)
				}
				if fmt.Sprint(got) != fmt.Sprint(a) {
					t.Fatalf("%+v: rows %v, page ids %v", f, got, a)
				}
			}
		}
	}
	if n < 1000 {
		t.Fatalf("only %d ids compared: the filters match too little", n)
	}
}

// TestTagsDistinctSorted: the tag list read by jumping through the index
// equals the distinct tags in order.
func TestTagsDistinctSorted(t *testing.T) {
	d, op := openRunsDB(t)
	ctx := context.Background()
	if tags, err := d.Tags(ctx); err != nil || len(tags) != 0 {
		t.Fatalf("no runs: %v (%v)", tags, err)
	}
	bulkRuns(t, d, op, 30)
	if _, err := d.SQL().Exec(`INSERT INTO run_tags (run_id, tag) VALUES (1, 'aa'), (2, 'zz'), (4, 'aa')`); err != nil {
		t.Fatal(err)
	}
	tags, err := d.Tags(ctx)
	if err != nil || !slices.Equal(tags, []string{"aa", "even", "odd", "zz"}) {
		t.Fatalf("tags %v (%v)", tags, err)
	}
}

// TestEachRunTags: the export's rows carry their tags, sorted, read with
// each run (no map of every run's tags).
func TestEachRunTags(t *testing.T) {
	d, op := openRunsDB(t)
	ctx := context.Background()
	a, err := d.CreateRun(ctx, op, RunInput{Title: "a", StartedAt: time.Now(), SourceType: "dc_glow", Tags: []string{"zeta", "alpha;beta", `q"uote`}})
	if err != nil {
		t.Fatal(err)
	}
	b, err := d.CreateRun(ctx, op, RunInput{Title: "b", StartedAt: time.Now(), SourceType: "dc_glow"})
	if err != nil {
		t.Fatal(err)
	}
	got := map[int64][]string{}
	if err := d.EachRun(ctx, RunFilter{}, func(r Run) error { got[r.ID] = r.Tags; return nil }); err != nil {
		t.Fatal(err)
	}
	if !slices.Equal(got[a], []string{"alpha;beta", `q"uote`, "zeta"}) || len(got[b]) != 0 || len(got) != 2 {
		t.Fatalf("tags %v", got)
	}
}
