package store

import (
	"context"
	"database/sql"
	"errors"
	"fmt"
	"math"
	"time"

	"glowlog/diag/spectrum"
)

// Analysis is one analysis version of a run.
type Analysis struct {
	ID            int64
	RunID         int64
	Version       int
	Settings      string // JSON
	EngineVersion string
	CreatedBy     *int64
	CreatedByName string
	CreatedAt     time.Time
	Reason        string
	Results       []AnalysisResult
}

// AnalysisResult is the analysis of one attachment in a version.
type AnalysisResult struct {
	ID             int64
	AttachmentID   int64
	AttachmentName string
	AttachmentSeq  int
	// Result is the result JSON ("" when Error is set). Read through
	// AnalysisVersion it is whole; written (and read through
	// AnalysisVersionCompact) a spectrum result's plot series may be
	// held apart in Series.
	Result string
	// Series is the compact form of the plot series taken out of Result
	// (spectrum.AppendJSONSplit; nil when Result is whole):
	// spectrum.ExpandSeries(nil, Result, Series) is the whole JSON.
	Series                                []byte
	Error                                 string
	TexcK, TexcUncK, NeM3, NeUncM3, TgasK *float64
	// NWarnings counts the distinct problem and caution flag codes;
	// WarnWorst is the worst of their severities ("problem", "caution",
	// or "" when there is none).
	NWarnings int
	WarnWorst string
	// SameAs is the id of the result row whose JSON this result shares
	// (a result kept unchanged from an earlier version); 0 when it holds
	// its own.
	SameAs int64
}

// NewAnalysis is what AddAnalysis stores.
type NewAnalysis struct {
	Settings      string
	EngineVersion string
	CreatedBy     *int64
	Reason        string
	Results       []AnalysisResult
}

// AddAnalysis stores a new analysis version of a run (never replacing an
// earlier one) and updates the run's summary, in one transaction. The
// summary of a signed-off run is left alone: it stays that of the version
// its reviewer approved (see AddAnalysisTx).
func (d *DB) AddAnalysis(ctx context.Context, runID int64, a NewAnalysis) (int, error) {
	var version int
	err := d.inTx(ctx, func(tx *sql.Tx) error {
		var err error
		version, err = d.AddAnalysisTx(ctx, tx, runID, a)
		return err
	})
	return version, err
}

// AddAnalysisTx is AddAnalysis inside the caller's transaction. On a
// signed-off run the new version is kept in the history, but the run's
// summary columns and analysis_version (what lists, trends, exports, the
// API and the run page show) stay those of the approved version until a
// reviewer reopens the run.
func (d *DB) AddAnalysisTx(ctx context.Context, tx *sql.Tx, runID int64, a NewAnalysis) (int, error) {
	var status string
	if err := d.txQueryRow(ctx, tx, qRunStatus, []any{runID}, &status); err != nil {
		return 0, errNoRows(err, fmt.Sprintf("run %d", runID))
	}
	var version int
	if err := d.txQueryRow(ctx, tx, qNextVersion, []any{runID}, &version); err != nil {
		return 0, err
	}
	res, err := d.txExec(ctx, tx, qAddAnalysis, runID, version, a.Settings, a.EngineVersion, a.CreatedBy, d.now(), a.Reason)
	if err != nil {
		return 0, fmt.Errorf("store: add analysis: %w", err)
	}
	aid, _ := res.LastInsertId()
	// The rows go in by addResultsRows (one statement each), the rest one
	// by one, in the order of a.Results.
	rs := a.Results
	if len(rs) >= addResultsRows {
		many := d.txStmt(ctx, tx, qAddResults)
		defer many.Close()
		args := make([]any, 0, 13*addResultsRows)
		for len(rs) >= addResultsRows {
			args = args[:0]
			for _, r := range rs[:addResultsRows] {
				args = appendResultArgs(args, aid, r)
			}
			if _, err := many.ExecContext(ctx, args...); err != nil {
				return 0, fmt.Errorf("store: add analysis results: %w", err)
			}
			rs = rs[addResultsRows:]
		}
	}
	if len(rs) > 0 {
		ins := d.txStmt(ctx, tx, qAddResult)
		defer ins.Close()
		args := make([]any, 0, 13)
		for _, r := range rs {
			if _, err := ins.ExecContext(ctx, appendResultArgs(args[:0], aid, r)...); err != nil {
				return 0, fmt.Errorf("store: add analysis result: %w", err)
			}
		}
	}
	if status == StatusSignedOff {
		return version, nil
	}
	if err := d.pruneRunChangesTx(ctx, tx); err != nil {
		return 0, err
	}
	if err := d.setSummaryTx(ctx, tx, runID, version, a.Results); err != nil {
		return 0, err
	}
	return version, nil
}

// appendResultArgs appends the 13 arguments of qAddResult for r, a result
// of analysis aid.
func appendResultArgs(args []any, aid int64, r AnalysisResult) []any {
	var result, series, sameAs any
	if r.SameAs != 0 {
		sameAs = r.SameAs
	} else if r.Result != "" {
		result = r.Result
		if len(r.Series) > 0 {
			series = r.Series
		}
	}
	var errMsg any
	if r.Error != "" {
		errMsg = r.Error
	}
	return append(args, aid, r.AttachmentID, result, series, errMsg, nullF(r.TexcK), nullF(r.TexcUncK), nullF(r.NeM3), nullF(r.NeUncM3),
		nullF(r.TgasK), r.NWarnings, r.WarnWorst, sameAs)
}

// setSummaryTx makes version (with results rs) the run's current analysis:
// its summary columns and analysis_version.
func (d *DB) setSummaryTx(ctx context.Context, tx *sql.Tx, runID int64, version int, rs []AnalysisResult) error {
	s := summarize(rs)
	_, err := d.txExec(ctx, tx, qSetSummary,
		nullF(s.TexcK), nullF(s.TexcUncK), nullF(s.NeM3), nullF(s.NeUncM3), nullF(s.TgasK), s.NWarnings, s.WarnWorst, version, d.now(), runID)
	return err
}

// refreshSummaryTx makes the run's newest analysis version its current one
// (after a reopen); a run without analyses gets an empty summary.
func (d *DB) refreshSummaryTx(ctx context.Context, tx *sql.Tx, runID int64) error {
	var version int
	if err := tx.QueryRowContext(ctx, `SELECT coalesce(max(version), 0) FROM analyses WHERE run_id = ?`, runID).Scan(&version); err != nil {
		return err
	}
	var rs []AnalysisResult
	if version > 0 {
		var err error
		if _, _, rs, err = d.LatestResultsTx(ctx, tx, runID); err != nil {
			return err
		}
	}
	return d.setSummaryTx(ctx, tx, runID, version, rs)
}

// summarize combines the results of a run's attachments (a time series):
// inverse-variance weighted means where every value has a σ, plain means
// (with the standard error of the mean as σ) otherwise.
func summarize(rs []AnalysisResult) AnalysisResult {
	var out AnalysisResult
	mean := func(get func(AnalysisResult) (*float64, *float64)) (*float64, *float64) {
		var vals, uncs []float64
		allUnc := true
		for _, r := range rs {
			v, u := get(r)
			if v == nil {
				continue
			}
			vals = append(vals, *v)
			if u == nil || *u <= 0 {
				allUnc = false
				uncs = append(uncs, 0)
			} else {
				uncs = append(uncs, *u)
			}
		}
		if len(vals) == 0 {
			return nil, nil
		}
		if allUnc {
			var sw, swx float64
			for i, v := range vals {
				w := 1 / (uncs[i] * uncs[i])
				sw += w
				swx += w * v
			}
			m, s := swx/sw, 1/math.Sqrt(sw)
			return &m, &s
		}
		var sum float64
		for _, v := range vals {
			sum += v
		}
		m := sum / float64(len(vals))
		if len(vals) < 2 {
			return &m, nil
		}
		var ss float64
		for _, v := range vals {
			ss += (v - m) * (v - m)
		}
		se := math.Sqrt(ss / float64(len(vals)-1) / float64(len(vals)))
		return &m, &se
	}
	out.TexcK, out.TexcUncK = mean(func(r AnalysisResult) (*float64, *float64) { return r.TexcK, r.TexcUncK })
	out.NeM3, out.NeUncM3 = mean(func(r AnalysisResult) (*float64, *float64) { return r.NeM3, r.NeUncM3 })
	out.TgasK, _ = mean(func(r AnalysisResult) (*float64, *float64) { return r.TgasK, nil })
	// The run's warning count is that of its most-warned spectrum, its
	// worst severity the worst of any spectrum.
	for _, r := range rs {
		out.NWarnings = max(out.NWarnings, r.NWarnings)
		if r.WarnWorst == "problem" || r.WarnWorst != "" && out.WarnWorst == "" {
			out.WarnWorst = r.WarnWorst
		}
	}
	return out
}

// Analyses lists a run's analysis versions, newest first, without results.
func (d *DB) Analyses(ctx context.Context, runID int64) ([]Analysis, error) {
	rows, err := d.db.QueryContext(ctx, `SELECT a.id, a.run_id, a.version, a.settings, a.engine_version, a.created_by,
		coalesce(u.name, ''), a.created_at, a.reason FROM analyses a LEFT JOIN users u ON u.id = a.created_by
		WHERE a.run_id = ? ORDER BY a.version DESC`, runID)
	if err != nil {
		return nil, err
	}
	defer rows.Close()
	var out []Analysis
	for rows.Next() {
		var a Analysis
		var by sql.NullInt64
		var created int64
		if err := rows.Scan(&a.ID, &a.RunID, &a.Version, &a.Settings, &a.EngineVersion, &by, &a.CreatedByName, &created, &a.Reason); err != nil {
			return nil, err
		}
		if by.Valid {
			v := by.Int64
			a.CreatedBy = &v
		}
		a.CreatedAt = time.Unix(created, 0).UTC()
		out = append(out, a)
	}
	return out, rows.Err()
}

// AnalysisVersion returns one version with its results. Version 0 is the
// run's current version (runs.analysis_version): the approved one while the
// run is signed off, the newest otherwise. Every result's JSON is whole:
// plot series stored apart are put back (spectrum.ExpandSeries), giving
// the bytes the analysis wrote.
func (d *DB) AnalysisVersion(ctx context.Context, runID int64, version int) (Analysis, error) {
	return d.analysisVersion(ctx, runID, version, true)
}

// AnalysisVersionCompact is AnalysisVersion without putting the plot
// series back: a spectrum result's JSON may hold the placeholder [null]
// for each series (valid JSON, every other field as stored), with the
// series in AnalysisResult.Series. For readers that need no series.
func (d *DB) AnalysisVersionCompact(ctx context.Context, runID int64, version int) (Analysis, error) {
	return d.analysisVersion(ctx, runID, version, false)
}

func (d *DB) analysisVersion(ctx context.Context, runID int64, version int, expand bool) (Analysis, error) {
	all, err := d.Analyses(ctx, runID)
	if err != nil {
		return Analysis{}, err
	}
	if version == 0 && len(all) > 0 {
		var cur int
		if err := d.db.QueryRowContext(ctx, `SELECT analysis_version FROM runs WHERE id = ?`, runID).Scan(&cur); err != nil {
			return Analysis{}, errNoRows(err, fmt.Sprintf("run %d", runID))
		}
		version = cur
	}
	var a *Analysis
	for i := range all {
		if version == 0 || all[i].Version == version {
			a = &all[i]
			break
		}
	}
	if a == nil {
		return Analysis{}, fmt.Errorf("run %d analysis version %d: %w", runID, version, ErrNotFound)
	}
	rows, err := d.db.QueryContext(ctx, `SELECT r.id, r.attachment_id, t.name, t.seq, coalesce(r.result, o.result, ''),
		CASE WHEN r.result IS NULL THEN o.series ELSE r.series END, coalesce(r.error, ''),
		r.texc_k, r.texc_unc_k, r.ne_m3, r.ne_unc_m3, r.tgas_k, r.n_warnings, r.warn_worst
		FROM analysis_results r JOIN attachments t ON t.id = r.attachment_id
		LEFT JOIN analysis_results o ON o.id = r.same_as
		WHERE r.analysis_id = ? ORDER BY t.kind, t.seq`, a.ID)
	if err != nil {
		return *a, err
	}
	defer rows.Close()
	var buf []byte
	for rows.Next() {
		var r AnalysisResult
		var texc, texcU, ne, neU, tg sql.NullFloat64
		if err := rows.Scan(&r.ID, &r.AttachmentID, &r.AttachmentName, &r.AttachmentSeq, &r.Result, &r.Series, &r.Error,
			&texc, &texcU, &ne, &neU, &tg, &r.NWarnings, &r.WarnWorst); err != nil {
			return *a, err
		}
		r.TexcK, r.TexcUncK, r.NeM3, r.NeUncM3, r.TgasK = scanF(texc), scanF(texcU), scanF(ne), scanF(neU), scanF(tg)
		if expand && len(r.Series) > 0 {
			if buf, err = spectrum.ExpandSeries(buf[:0], r.Result, r.Series); err != nil {
				return *a, fmt.Errorf("store: run %d version %d result %d: %w", runID, a.Version, r.ID, err)
			}
			r.Result, r.Series = string(buf), nil
		}
		a.Results = append(a.Results, r)
	}
	if err := rows.Err(); err != nil {
		return *a, err
	}
	return *a, nil
}

// errNoRows reports sql.ErrNoRows as ErrNotFound.
func errNoRows(err error, what string) error {
	if errors.Is(err, sql.ErrNoRows) {
		return fmt.Errorf("%s: %w", what, ErrNotFound)
	}
	return err
}

// LatestSettingsTx returns, inside the caller's transaction, the settings
// JSON of a run's newest analysis version (ErrNotFound when it has none).
func (d *DB) LatestSettingsTx(ctx context.Context, tx *sql.Tx, runID int64) (string, error) {
	var settings string
	err := d.txQueryRow(ctx, tx, qLatestSettings, []any{runID}, &settings)
	if err != nil {
		return "", errNoRows(err, fmt.Sprintf("run %d analysis", runID))
	}
	return settings, nil
}

// LatestSettings returns the settings of a run's newest analysis version
// (ErrNotFound when it has none).
func (d *DB) LatestSettings(ctx context.Context, runID int64) (string, error) {
	var settings string
	err := d.readStmt(qLatestSettings).QueryRowContext(ctx, runID).Scan(&settings)
	if err != nil {
		return "", errNoRows(err, fmt.Sprintf("run %d analysis", runID))
	}
	return settings, nil
}

// LatestResultsTx returns, inside the caller's transaction, the settings,
// engine version and per-attachment results of a run's newest analysis
// version (ErrNotFound when it has none). The results carry no JSON: each
// has SameAs set to the row that holds it, ready to be kept by a new
// version.
func (d *DB) LatestResultsTx(ctx context.Context, tx *sql.Tx, runID int64) (settings, engine string, results []AnalysisResult, err error) {
	var aid int64
	err = d.txQueryRow(ctx, tx, qLatestAnalysis, []any{runID}, &aid, &settings, &engine)
	if err != nil {
		return "", "", nil, errNoRows(err, fmt.Sprintf("run %d analysis", runID))
	}
	lr := d.txStmt(ctx, tx, qLatestResults)
	defer lr.Close()
	rows, err := lr.QueryContext(ctx, aid)
	if err != nil {
		return "", "", nil, err
	}
	defer rows.Close()
	for rows.Next() {
		var r AnalysisResult
		var texc, texcU, ne, neU, tg sql.NullFloat64
		if err := rows.Scan(&r.AttachmentID, &r.SameAs, &r.Error, &texc, &texcU, &ne, &neU, &tg, &r.NWarnings, &r.WarnWorst); err != nil {
			return "", "", nil, err
		}
		r.TexcK, r.TexcUncK, r.NeM3, r.NeUncM3, r.TgasK = scanF(texc), scanF(texcU), scanF(ne), scanF(neU), scanF(tg)
		results = append(results, r)
	}
	return settings, engine, results, rows.Err()
}
