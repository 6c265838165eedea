package store

import (
	"context"
	"errors"
	"path/filepath"
	"reflect"
	"testing"
	"time"
)

func openRunsDB(t *testing.T) (*DB, int64) {
	t.Helper()
	ctx := context.Background()
	d, err := Open(ctx, filepath.Join(t.TempDir(), "runs.db"))
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { d.Close() })
	u, err := d.CreateUser(ctx, "opal", RoleOperator, "x")
	if err != nil {
		t.Fatal(err)
	}
	return d, u.ID
}

func TestListRunsFilterSortPage(t *testing.T) {
	d, op := openRunsDB(t)
	ctx := context.Background()
	t0 := time.Date(2026, 3, 1, 0, 0, 0, 0, time.UTC)
	var ids []int64
	for i, r := range []RunInput{
		{Title: "100% H2 glow", GasMixture: "H2", Tags: []string{"Baseline", " baseline "}},
		{Title: "argon mix", GasMixture: "H2/Ar", Notes: "under_score"},
		{Title: "helium mix", GasMixture: "H2/He"},
	} {
		r.StartedAt, r.SourceType = t0.Add(time.Duration(i)*time.Hour), "dc_glow"
		id, err := d.CreateRun(ctx, op, r)
		if err != nil {
			t.Fatal(err)
		}
		ids = append(ids, id)
	}
	if _, err := d.SQL().Exec(`UPDATE runs SET texc_k = 4000 WHERE id = ?`, ids[1]); err != nil {
		t.Fatal(err)
	}
	got := func(f RunFilter) []int64 {
		t.Helper()
		rs, _, err := d.ListRuns(ctx, f)
		if err != nil {
			t.Fatal(err)
		}
		var out []int64
		for _, r := range rs {
			out = append(out, r.ID)
		}
		return out
	}
	eq := func(name string, a, b []int64) {
		t.Helper()
		if len(a) != len(b) {
			t.Errorf("%s: %v, want %v", name, a, b)
			return
		}
		for i := range a {
			if a[i] != b[i] {
				t.Errorf("%s: %v, want %v", name, a, b)
				return
			}
		}
	}
	eq("LIKE wildcards are literal (%)", got(RunFilter{Query: "100%"}), []int64{ids[0]})
	eq("LIKE wildcards are literal (_)", got(RunFilter{Query: "under_score"}), []int64{ids[1]})
	eq("tag, case-folded and deduplicated", got(RunFilter{Tag: "BASELINE"}), []int64{ids[0]})
	eq("date range [from, to)", got(RunFilter{From: t0.Add(time.Hour), To: t0.Add(2 * time.Hour), Sort: "started"}), []int64{ids[1]})
	eq("values first, missing last (asc)", got(RunFilter{Sort: "texc"}), []int64{ids[1], ids[0], ids[2]})
	eq("values first, missing last (desc)", got(RunFilter{Sort: "-texc"}), []int64{ids[1], ids[2], ids[0]})
	rs, total, err := d.ListRuns(ctx, RunFilter{Sort: "started", Limit: 2, Offset: 2})
	if err != nil || total != 3 || len(rs) != 1 || rs[0].ID != ids[2] {
		t.Errorf("page 2 of 2: %d runs of %d (%v)", len(rs), total, err)
	}
	tags, err := d.RunTags(ctx)
	if err != nil || len(tags) != 1 || len(tags[ids[0]]) != 1 || tags[ids[0]][0] != "baseline" {
		t.Errorf("RunTags %v (%v)", tags, err)
	}
}

func TestEnsureChamberTx(t *testing.T) {
	d, _ := openRunsDB(t)
	ctx := context.Background()
	tx, err := d.Begin(ctx)
	if err != nil {
		t.Fatal(err)
	}
	a, err := d.EnsureChamberTx(ctx, tx, " Bell jar ")
	if err != nil {
		t.Fatal(err)
	}
	b, err := d.EnsureChamberTx(ctx, tx, "Bell jar")
	if err != nil || a != b {
		t.Errorf("same name: ids %d and %d (%v)", a, b, err)
	}
	if _, err := d.EnsureRecipeTx(ctx, tx, "  "); err == nil {
		t.Error("empty recipe name accepted")
	}
	tx.Rollback()
	if list, _ := d.Chambers(ctx); len(list) != 0 {
		t.Errorf("rolled-back chamber stored: %v", list)
	}
}

// TestGetRunUntagged: the run GetRun returns, without its tags; an
// unknown run is ErrNotFound like GetRun's.
func TestGetRunUntagged(t *testing.T) {
	d, op := openRunsDB(t)
	ctx := context.Background()
	fwhm := 0.05
	id, err := d.CreateRun(ctx, op, RunInput{Title: "tagged glow", GasMixture: "H2", Tags: []string{"baseline", "slit"},
		StartedAt: time.Date(2026, 3, 1, 9, 0, 0, 0, time.UTC), SourceType: "dc_glow", InstrumentFWHMNM: &fwhm})
	if err != nil {
		t.Fatal(err)
	}
	full, err := d.GetRun(ctx, id)
	if err != nil || len(full.Tags) != 2 {
		t.Fatalf("GetRun: %+v %v", full, err)
	}
	bare, err := d.GetRunUntagged(ctx, id)
	if err != nil {
		t.Fatal(err)
	}
	if bare.Tags != nil {
		t.Errorf("GetRunUntagged read the tags %v", bare.Tags)
	}
	full.Tags = nil
	if !reflect.DeepEqual(bare, full) {
		t.Errorf("GetRunUntagged %+v, want GetRun's %+v", bare, full)
	}
	if _, err := d.GetRunUntagged(ctx, id+100); !errors.Is(err, ErrNotFound) {
		t.Errorf("unknown run: %v, want ErrNotFound", err)
	}
}
