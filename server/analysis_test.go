package server

import (
	"context"
	"os"
	"testing"
	"time"

	"glowlog/store"
)

// TestAppendReusesResults: adding a spectrum to a run with unchanged
// settings keeps the stored result of the earlier spectrum (byte for
// byte) and analyses only the new one; adding a response file makes the
// next version analyse everything again.
func TestAppendReusesResults(t *testing.T) {
	ctx := context.Background()
	db := testDB(t)
	s := New(db, Options{})
	u, err := db.CreateUser(ctx, "ines", store.RoleOperator, "x")
	if err != nil {
		t.Fatal(err)
	}
	spec, err := os.ReadFile("../testdata/spectra/scipy_hbeta_window_snr100.csv")
	if err != nil {
		t.Fatal(err)
	}
	fw, tg := 0.05, 1200.0
	runID, err := db.CreateRun(ctx, u.ID, store.RunInput{Title: "append", StartedAt: time.Now(), SourceType: "plasma_jet",
		InstrumentFWHMNM: &fw, GasTemperatureK: &tg})
	if err != nil {
		t.Fatal(err)
	}
	run, _ := db.GetRun(ctx, runID)
	st := DefaultSettings(run)
	var atts []store.Attachment
	add := func(kind, name string, content []byte) []RunAnalysis {
		t.Helper()
		tx, err := db.Begin(ctx)
		if err != nil {
			t.Fatal(err)
		}
		defer tx.Rollback()
		id, err := db.AddAttachmentTx(ctx, tx, runID, kind, name, content)
		if err != nil {
			t.Fatal(err)
		}
		atts = append(atts, store.Attachment{ID: id, RunID: runID, Kind: kind, Name: name, Content: content})
		_, res, err := s.ReanalyzeRunTx(ctx, tx, runID, atts, st, &u.ID, "add "+name)
		if err != nil {
			t.Fatal(err)
		}
		if err := tx.Commit(); err != nil {
			t.Fatal(err)
		}
		return res
	}
	if res := add(store.KindSpectrum, "a.csv", spec); len(res) != 1 {
		t.Fatalf("first version analysed %d files", len(res))
	}
	v1, _ := db.AnalysisVersion(ctx, runID, 1)
	if res := add(store.KindSpectrum, "b.csv", spec); len(res) != 1 || res[0].Attachment.Name != "b.csv" {
		t.Fatalf("second version analysed %d files, want only b.csv", len(res))
	}
	v2, _ := db.AnalysisVersion(ctx, runID, 2)
	if len(v2.Results) != 2 || v2.Results[0].Result != v1.Results[0].Result || v1.Results[0].Result == "" {
		t.Fatalf("version 2 has %d results; first kept byte for byte: %v", len(v2.Results), len(v2.Results) > 0 && v2.Results[0].Result == v1.Results[0].Result)
	}
	resp := []byte("wavelength_nm,response\n400,1\n600,1\n")
	if res := add(store.KindResponse, "flat.csv", resp); len(res) != 2 {
		t.Fatalf("after a new response file %d files were analysed, want 2", len(res))
	}
}
