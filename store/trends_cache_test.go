package store

import (
	"context"
	"path/filepath"
	"reflect"
	"testing"
	"time"
)

// TestTrendSeriesIncremental: a cached series brought up to date after
// changes (new analysis, new run, a run leaving the filter through its
// tags, a run losing its value) equals a series read afresh.
func TestTrendSeriesIncremental(t *testing.T) {
	ctx := context.Background()
	d, err := Open(ctx, filepath.Join(t.TempDir(), "t.db"))
	if err != nil {
		t.Fatal(err)
	}
	defer d.Close()
	u, err := d.CreateUser(ctx, "ivo", RoleOperator, "x")
	if err != nil {
		t.Fatal(err)
	}
	t0 := time.Date(2026, 5, 1, 8, 0, 0, 0, time.UTC)
	var ids []int64
	for i := range 6 {
		id, err := d.CreateRun(ctx, u.ID, RunInput{Title: "r", StartedAt: t0.Add(time.Duration(i) * time.Hour), SourceType: "dc_glow", Tags: []string{"scan"}})
		if err != nil {
			t.Fatal(err)
		}
		ids = append(ids, id)
		te, tu := 4000+100*float64(i), 50.0
		if _, err := d.AddAnalysis(ctx, id, NewAnalysis{Settings: "{}", EngineVersion: "t", Results: []AnalysisResult{{AttachmentID: mustAttach(t, d, id), TexcK: &te, TexcUncK: &tu}}}); err != nil {
			t.Fatal(err)
		}
	}
	f := RunFilter{Tag: "scan"}
	first, err := d.TrendSeries(ctx, f, "started_at", "texc_k")
	if err != nil || len(first.Points) != 6 {
		t.Fatalf("first read: %d points, %v", len(first.Points), err)
	}
	// Changes: a new value for run 2, a new run, run 3 leaves the tag,
	// run 4 loses its value.
	te := 9999.0
	if _, err := d.AddAnalysis(ctx, ids[1], NewAnalysis{Settings: "{}", EngineVersion: "t", Results: []AnalysisResult{{AttachmentID: mustAttach(t, d, ids[1]), TexcK: &te}}}); err != nil {
		t.Fatal(err)
	}
	if _, err := d.CreateRun(ctx, u.ID, RunInput{Title: "new", StartedAt: t0.Add(-time.Hour), SourceType: "dc_glow", Tags: []string{"scan"}}); err != nil {
		t.Fatal(err)
	}
	r3, _ := d.GetRun(ctx, ids[2])
	in := RunInput{Title: r3.Title, StartedAt: r3.StartedAt, SourceType: r3.SourceType, Tags: []string{"other"}}
	if err := d.UpdateRun(ctx, ids[2], in); err != nil {
		t.Fatal(err)
	}
	if _, err := d.AddAnalysis(ctx, ids[3], NewAnalysis{Settings: "{}", EngineVersion: "t", Results: []AnalysisResult{{AttachmentID: mustAttach(t, d, ids[3]), Error: "failed"}}}); err != nil {
		t.Fatal(err)
	}
	updated, err := d.TrendSeries(ctx, f, "started_at", "texc_k")
	if err != nil {
		t.Fatal(err)
	}
	d.trends = trendCache{} // a fresh read for comparison
	fresh, err := d.TrendSeries(ctx, f, "started_at", "texc_k")
	if err != nil {
		t.Fatal(err)
	}
	if !reflect.DeepEqual(updated, fresh) {
		t.Fatalf("incremental series differs from a fresh read:\n%+v\n%+v", updated, fresh)
	}
	if len(fresh.Points) != 4 || fresh.Missing != 2 {
		t.Errorf("fresh series: %d points, %d missing; want 4 and 2", len(fresh.Points), fresh.Missing)
	}
}

func mustAttach(t *testing.T, d *DB, runID int64) int64 {
	t.Helper()
	tx, err := d.Begin(context.Background())
	if err != nil {
		t.Fatal(err)
	}
	defer tx.Rollback()
	id, err := d.AddAttachmentTx(context.Background(), tx, runID, KindSpectrum, "s.csv", []byte("1,2\n"))
	if err != nil {
		t.Fatal(err)
	}
	if err := tx.Commit(); err != nil {
		t.Fatal(err)
	}
	return id
}

// TestTrendCacheBoundedByPoints: the cache drops older series once the
// points it holds pass its bound, always keeping the newest.
func TestTrendCacheBoundedByPoints(t *testing.T) {
	var c trendCache
	entry := func(key string, n int) trendEntry {
		return trendEntry{key: key, ts: TrendSeries{Points: make([]TrendPoint, n)}}
	}
	third := trendCacheMaxPoints / 3
	c.put(entry("a", third))
	c.put(entry("b", third))
	c.put(entry("c", third))
	if len(c.entries) != 3 {
		t.Fatalf("three thirds of the bound: %d entries kept, want 3", len(c.entries))
	}
	c.put(entry("d", third))
	if _, ok := c.get("a"); ok || len(c.entries) != 3 {
		t.Fatalf("over the bound: oldest should go, %d entries", len(c.entries))
	}
	c.put(entry("huge", trendCacheMaxPoints+1))
	if len(c.entries) != 1 || c.entries[0].key != "huge" {
		t.Fatalf("one series over the bound is kept alone: %d entries", len(c.entries))
	}
	c.put(entry("small", 10))
	if len(c.entries) != 1 || c.entries[0].key != "small" {
		t.Fatalf("after a huge series, a new one replaces it: %d entries", len(c.entries))
	}
}

// TestTrendPointCompact: a trend point is 56 bytes without pointers, so
// that the cache's bound in points is a bound in memory and cached
// series of a million runs are not scanned by the garbage collector.
func TestTrendPointCompact(t *testing.T) {
	typ := reflect.TypeOf(TrendPoint{})
	if typ.Size() != 56 {
		t.Fatalf("TrendPoint is %d bytes, want 56", typ.Size())
	}
	for i := range typ.NumField() {
		switch typ.Field(i).Type.Kind() {
		case reflect.Int64, reflect.Float64:
		default:
			t.Fatalf("field %s is a %s: only numbers keep a point pointer-free", typ.Field(i).Name, typ.Field(i).Type)
		}
	}
	p := TrendPoint{Started: 1_780_000_000}
	if got := p.StartedAt(); !got.Equal(time.Unix(1_780_000_000, 0)) || got.Location() != time.UTC {
		t.Fatalf("StartedAt %v", got)
	}
}
