package store

import (
	"context"
	"path/filepath"
	"testing"
	"time"
)

// BenchmarkRunWrite measures one audited write transaction: a run
// created and then changed (two audit entries plus the actor bookkeeping).
//
//	go test ./store/ -run '^$' -bench RunWrite -benchtime 2000x
func BenchmarkRunWrite(b *testing.B) {
	ctx := context.Background()
	d, err := Open(ctx, filepath.Join(b.TempDir(), "w.db"))
	if err != nil {
		b.Fatal(err)
	}
	defer d.Close()
	u, err := d.CreateUser(ctx, "bench", RoleOperator, "x")
	if err != nil {
		b.Fatal(err)
	}
	ctx = WithActor(ctx, Actor{UserID: u.ID, Name: u.Name, Via: ViaAPI})
	in := RunInput{Title: "bench", StartedAt: time.Date(2026, 3, 1, 0, 0, 0, 0, time.UTC), SourceType: "dc_glow", Tags: []string{"a"}}
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		id, err := d.CreateRun(ctx, u.ID, in)
		if err != nil {
			b.Fatal(err)
		}
		in2 := in
		in2.Title = "bench changed"
		if err := d.UpdateRun(ctx, id, in2); err != nil {
			b.Fatal(err)
		}
	}
}
