package store

import (
	"context"
	"database/sql"
	"encoding/json"
	"errors"
	"fmt"
	"sort"
	"strings"
	"time"
)

// SourceTypes are the discharge source types, with display names.
var SourceTypes = []struct{ Key, Label string }{
	{"dc_glow", "DC glow"},
	{"rf_capacitive", "RF capacitive"},
	{"rf_inductive", "RF inductive"},
	{"microwave", "Microwave"},
	{"dielectric_barrier", "Dielectric barrier"},
	{"plasma_jet", "Plasma jet"},
}

// SourceLabel returns the display name of a source type key.
func SourceLabel(key string) string { return label(SourceTypes, key) }

// label looks a key up in a key/label list (the key itself if absent).
func label(list []struct{ Key, Label string }, key string) string {
	for _, s := range list {
		if s.Key == key {
			return s.Label
		}
	}
	return key
}

// Statuses are the review states of a run. Each state has one name: the
// key, stored in the database and written as it is by the CSV exports and
// the API ("signed_off"); pages show the same name as words ("Signed
// off", StatusLabel). Every page, file and answer takes the names from
// here, so no state gets a second name.
var Statuses = []struct{ Key, Label string }{
	{StatusDraft, "Draft"},
	{StatusSubmitted, "Submitted"},
	{StatusReturned, "Returned"},
	{StatusSignedOff, "Signed off"},
}

// StatusLabel returns the display name of a status key (the key itself
// when it is not a status).
func StatusLabel(key string) string { return label(Statuses, key) }

// ValidStatus reports whether key names a review state.
func ValidStatus(key string) bool {
	for _, s := range Statuses {
		if s.Key == key {
			return true
		}
	}
	return false
}

// StatusKeys lists the state names as the API and CSV write them, for
// messages ("draft, submitted, returned or signed_off").
func StatusKeys() string {
	var b strings.Builder
	for i, s := range Statuses {
		switch {
		case i == len(Statuses)-1 && i > 0:
			b.WriteString(" or ")
		case i > 0:
			b.WriteString(", ")
		}
		b.WriteString(s.Key)
	}
	return b.String()
}

// Run is a discharge run with its conditions and current summary.
type Run struct {
	ID               int64
	Title            string
	StartedAt        time.Time
	OperatorID       int64
	OperatorName     string
	ChamberID        *int64
	ChamberName      string
	RecipeID         *int64
	RecipeName       string
	SourceType       string
	GasMixture       string
	PressurePa       *float64
	PressureUnit     string // as entered: Pa, mbar or Torr
	PowerW           *float64
	Flows            string
	GapMM            *float64
	GratingLMM       *float64
	SlitUM           *float64
	IntegrationMS    *float64
	InstrumentFWHMNM *float64
	InstrumentID     *int64
	GasTemperatureK  *float64
	Perturber        string
	Notes            string
	Status           string
	SignedOffBy      *int64
	SignedOffAt      *time.Time
	CreatedAt        time.Time
	UpdatedAt        time.Time
	Tags             []string

	// Summary of the current analysis: while the run is signed off, that
	// of the approved version.
	TexcK, TexcUncK, NeM3, NeUncM3, TgasK *float64
	// NWarnings counts distinct problem and caution flag codes;
	// WarnWorst is the worst of them ("problem", "caution" or "").
	NWarnings       int
	WarnWorst       string
	AnalysisVersion int
	// ApprovedVersion is the analysis version its sign-off approved (nil
	// unless the run is signed off; 0 when it was signed off without an
	// analysis).
	ApprovedVersion *int
}

// RunInput is what a user may set on a run (no ids of others, no status,
// no summary).
type RunInput struct {
	Title      string
	StartedAt  time.Time
	ChamberID  *int64
	RecipeID   *int64
	SourceType string
	GasMixture string
	PressurePa *float64
	// PressureUnit is the unit the pressure was entered in (a key of
	// PressureUnits; "" is Pa). PressurePa is always in Pa.
	PressureUnit     string
	PowerW           *float64
	Flows            string
	GapMM            *float64
	GratingLMM       *float64
	SlitUM           *float64
	IntegrationMS    *float64
	InstrumentFWHMNM *float64
	InstrumentID     *int64
	GasTemperatureK  *float64
	Perturber        string
	Notes            string
	Tags             []string
}

// PressureUnits are the units a pressure may be entered in, with their
// size in Pa: 1 mbar = 100 Pa (1 bar = 10⁵ Pa by definition, SI
// brochure, 9th ed., table 8); 1 Torr = 101325/760 Pa (1/760 of the
// standard atmosphere, 101 325 Pa by definition).
var PressureUnits = []struct {
	Key string
	Pa  float64
}{{"Pa", 1}, {"mbar", 100}, {"Torr", 101325.0 / 760}}

// PressureUnitPa returns the size of a pressure unit in Pa (false for an
// unknown unit; "" is Pa).
func PressureUnitPa(unit string) (float64, bool) {
	if unit == "" {
		return 1, true
	}
	for _, u := range PressureUnits {
		if u.Key == unit {
			return u.Pa, true
		}
	}
	return 0, false
}

// Validate checks a run input and returns a user-facing error.
func (in *RunInput) Validate() error {
	in.Title = strings.TrimSpace(in.Title)
	if in.Title == "" || len(in.Title) > 200 {
		return fmt.Errorf("%w: a title of 1–200 characters is required", ErrInvalid)
	}
	if in.StartedAt.IsZero() {
		return fmt.Errorf("%w: the run's start time is required", ErrInvalid)
	}
	ok := false
	for _, s := range SourceTypes {
		ok = ok || s.Key == in.SourceType
	}
	if !ok {
		return fmt.Errorf("%w: unknown source type %q", ErrInvalid, in.SourceType)
	}
	for _, f := range []struct {
		name string
		v    *float64
		max  float64
	}{{"pressure (Pa)", in.PressurePa, 1e8}, {"power (W)", in.PowerW, 1e7}, {"electrode gap (mm)", in.GapMM, 1e4},
		{"grating (lines/mm)", in.GratingLMM, 1e5}, {"slit (µm)", in.SlitUM, 1e5}, {"integration time (ms)", in.IntegrationMS, 1e8},
		{"instrument FWHM (nm)", in.InstrumentFWHMNM, 50}, {"gas temperature (K)", in.GasTemperatureK, 1e6}} {
		if f.v != nil && !(*f.v >= 0 && *f.v <= f.max) {
			return fmt.Errorf("%w: %s must be between 0 and %g, got %g", ErrInvalid, f.name, f.max, *f.v)
		}
	}
	if in.Perturber == "" {
		in.Perturber = "none"
	}
	if in.PressureUnit == "" {
		in.PressureUnit = "Pa"
	}
	if _, ok := PressureUnitPa(in.PressureUnit); !ok {
		return fmt.Errorf("%w: pressure unit %q is not Pa, mbar or Torr", ErrInvalid, in.PressureUnit)
	}
	seen := map[string]bool{}
	var tags []string
	for _, t := range in.Tags {
		t = strings.ToLower(strings.TrimSpace(t))
		if t == "" || seen[t] {
			continue
		}
		if len(t) > 40 {
			return fmt.Errorf("%w: tag %q is longer than 40 characters", ErrInvalid, t)
		}
		seen[t] = true
		tags = append(tags, t)
	}
	sort.Strings(tags)
	in.Tags = tags
	return nil
}

// CreateRun adds a run owned by operatorID.
func (d *DB) CreateRun(ctx context.Context, operatorID int64, in RunInput) (int64, error) {
	if err := in.Validate(); err != nil {
		return 0, err
	}
	var id int64
	err := d.inTx(ctx, func(tx *sql.Tx) error {
		var err error
		id, err = createRunTx(ctx, tx, operatorID, in, d.now())
		return err
	})
	return id, err
}

func createRunTx(ctx context.Context, tx *sql.Tx, operatorID int64, in RunInput, now int64) (int64, error) {
	res, err := tx.ExecContext(ctx, `INSERT INTO runs (title, started_at, operator_id, chamber_id, recipe_id, source_type,
		gas_mixture, pressure_pa, power_w, flows, electrode_gap_mm, grating_l_mm, slit_um, integration_ms,
		instrument_fwhm_nm, instrument_id, gas_temperature_k, perturber, notes, created_at, updated_at, pressure_unit)
		VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?)`,
		in.Title, in.StartedAt.Unix(), operatorID, in.ChamberID, in.RecipeID, in.SourceType, in.GasMixture,
		nullF(in.PressurePa), nullF(in.PowerW), in.Flows, nullF(in.GapMM), nullF(in.GratingLMM), nullF(in.SlitUM),
		nullF(in.IntegrationMS), nullF(in.InstrumentFWHMNM), in.InstrumentID, nullF(in.GasTemperatureK), in.Perturber,
		in.Notes, now, now, in.PressureUnit)
	if err != nil {
		return 0, fmt.Errorf("store: create run: %w", err)
	}
	id, _ := res.LastInsertId()
	if err := setTagsTx(ctx, tx, id, in.Tags); err != nil {
		return 0, err
	}
	return id, nil
}

// CreateRunTx is CreateRun inside a caller's transaction (for requests
// that create a run and its attachments atomically).
func (d *DB) CreateRunTx(ctx context.Context, tx *sql.Tx, operatorID int64, in RunInput) (int64, error) {
	if err := in.Validate(); err != nil {
		return 0, err
	}
	return createRunTx(ctx, tx, operatorID, in, d.now())
}

// UpdateRun replaces a run's editable fields.
func (d *DB) UpdateRun(ctx context.Context, id int64, in RunInput) error {
	if err := in.Validate(); err != nil {
		return err
	}
	return d.inTx(ctx, func(tx *sql.Tx) error {
		res, err := tx.ExecContext(ctx, `UPDATE runs SET title = ?, started_at = ?, chamber_id = ?, recipe_id = ?, source_type = ?,
			gas_mixture = ?, pressure_pa = ?, power_w = ?, flows = ?, electrode_gap_mm = ?, grating_l_mm = ?, slit_um = ?,
			integration_ms = ?, instrument_fwhm_nm = ?, instrument_id = ?, gas_temperature_k = ?, perturber = ?, notes = ?,
			updated_at = ?, pressure_unit = ? WHERE id = ?`,
			in.Title, in.StartedAt.Unix(), in.ChamberID, in.RecipeID, in.SourceType, in.GasMixture, nullF(in.PressurePa),
			nullF(in.PowerW), in.Flows, nullF(in.GapMM), nullF(in.GratingLMM), nullF(in.SlitUM), nullF(in.IntegrationMS),
			nullF(in.InstrumentFWHMNM), in.InstrumentID, nullF(in.GasTemperatureK), in.Perturber, in.Notes, d.now(),
			in.PressureUnit, id)
		if err != nil {
			return fmt.Errorf("store: update run: %w", err)
		}
		if n, _ := res.RowsAffected(); n == 0 {
			return fmt.Errorf("run %d: %w", id, ErrNotFound)
		}
		return setTagsTx(ctx, tx, id, in.Tags)
	})
}

func setTagsTx(ctx context.Context, tx *sql.Tx, runID int64, tags []string) error {
	if _, err := tx.ExecContext(ctx, `DELETE FROM run_tags WHERE run_id = ?`, runID); err != nil {
		return err
	}
	for _, t := range tags {
		if _, err := tx.ExecContext(ctx, `INSERT INTO run_tags (run_id, tag) VALUES (?, ?)`, runID, t); err != nil {
			return err
		}
	}
	return nil
}

const runCols = `r.id, r.title, r.started_at, r.operator_id, u.name, r.chamber_id, coalesce(c.name, ''), r.recipe_id,
	coalesce(p.name, ''), r.source_type, r.gas_mixture, r.pressure_pa, r.power_w, r.flows, r.electrode_gap_mm,
	r.grating_l_mm, r.slit_um, r.integration_ms, r.instrument_fwhm_nm, r.instrument_id, r.gas_temperature_k,
	r.perturber, r.notes, r.status, r.signed_off_by, r.signed_off_at, r.created_at, r.updated_at,
	r.texc_k, r.texc_unc_k, r.ne_m3, r.ne_unc_m3, r.tgas_k, r.n_warnings, r.warn_worst, r.analysis_version, r.approved_version,
	r.pressure_unit`

const runFrom = ` FROM runs r JOIN users u ON u.id = r.operator_id
	LEFT JOIN chambers c ON c.id = r.chamber_id LEFT JOIN recipes p ON p.id = r.recipe_id`

func scanRun(row interface{ Scan(...any) error }) (Run, error) {
	var r Run
	var started, created, updated int64
	var chamber, recipe, instr, signedBy, signedAt, approved sql.NullInt64
	var pressure, power, gap, grating, slit, integ, instFWHM, gasT, texc, texcU, ne, neU, tgas sql.NullFloat64
	err := row.Scan(&r.ID, &r.Title, &started, &r.OperatorID, &r.OperatorName, &chamber, &r.ChamberName, &recipe,
		&r.RecipeName, &r.SourceType, &r.GasMixture, &pressure, &power, &r.Flows, &gap, &grating, &slit, &integ,
		&instFWHM, &instr, &gasT, &r.Perturber, &r.Notes, &r.Status, &signedBy, &signedAt, &created, &updated,
		&texc, &texcU, &ne, &neU, &tgas, &r.NWarnings, &r.WarnWorst, &r.AnalysisVersion, &approved, &r.PressureUnit)
	if err != nil {
		if errors.Is(err, sql.ErrNoRows) {
			return r, fmt.Errorf("run: %w", ErrNotFound)
		}
		return r, err
	}
	r.StartedAt, r.CreatedAt, r.UpdatedAt = time.Unix(started, 0).UTC(), time.Unix(created, 0).UTC(), time.Unix(updated, 0).UTC()
	ptrI := func(n sql.NullInt64) *int64 {
		if !n.Valid {
			return nil
		}
		v := n.Int64
		return &v
	}
	r.ChamberID, r.RecipeID, r.InstrumentID, r.SignedOffBy = ptrI(chamber), ptrI(recipe), ptrI(instr), ptrI(signedBy)
	if approved.Valid {
		v := int(approved.Int64)
		r.ApprovedVersion = &v
	}
	if signedAt.Valid {
		t := time.Unix(signedAt.Int64, 0).UTC()
		r.SignedOffAt = &t
	}
	r.PressurePa, r.PowerW, r.GapMM, r.GratingLMM, r.SlitUM = scanF(pressure), scanF(power), scanF(gap), scanF(grating), scanF(slit)
	r.IntegrationMS, r.InstrumentFWHMNM, r.GasTemperatureK = scanF(integ), scanF(instFWHM), scanF(gasT)
	r.TexcK, r.TexcUncK, r.NeM3, r.NeUncM3, r.TgasK = scanF(texc), scanF(texcU), scanF(ne), scanF(neU), scanF(tgas)
	return r, nil
}

// RunStatusTx returns, inside the caller's transaction, a run's review
// status and the analysis version its sign-off approved (nil unless signed
// off). Write transactions hold the write lock from BEGIN, so no sign-off
// or reopen can happen between this read and the transaction's commit.
func (d *DB) RunStatusTx(ctx context.Context, tx *sql.Tx, runID int64) (string, *int, error) {
	var status string
	var approved sql.NullInt64
	if err := d.txQueryRow(ctx, tx, qRunStatusApproved, []any{runID}, &status, &approved); err != nil {
		return "", nil, errNoRows(err, fmt.Sprintf("run %d", runID))
	}
	if !approved.Valid {
		return status, nil, nil
	}
	v := int(approved.Int64)
	return status, &v, nil
}

// GetRun returns one run with its tags.
func (d *DB) GetRun(ctx context.Context, id int64) (Run, error) {
	r, err := d.GetRunUntagged(ctx, id)
	if err != nil {
		return r, err
	}
	rows, err := d.readStmt(qRunTags).QueryContext(ctx, id)
	if err != nil {
		return r, err
	}
	defer rows.Close()
	for rows.Next() {
		var t string
		if err := rows.Scan(&t); err != nil {
			return r, err
		}
		r.Tags = append(r.Tags, t)
	}
	return r, rows.Err()
}

// GetRunUntagged returns one run like GetRun but without its tags (Tags
// is nil), in one query instead of two: for the ingest and bulk
// reanalysis paths, which need the run's fields only.
func (d *DB) GetRunUntagged(ctx context.Context, id int64) (Run, error) {
	r, err := scanRun(d.readStmt(qGetRun).QueryRowContext(ctx, id))
	if err != nil {
		return r, fmt.Errorf("run %d: %w", id, err)
	}
	return r, nil
}

// RunFilter selects runs for the run list, the trends and the API. Zero
// fields do not filter.
type RunFilter struct {
	Query      string // words in title, notes or gas mixture
	ChamberID  int64
	RecipeID   int64
	SourceType string
	Gas        string // substring of the gas mixture
	From, To   time.Time
	Status     string
	Tag        string
	OperatorID int64
	// Sort is one of "started", "texc", "ne", "title", "status" with an
	// optional "-" prefix for descending; "" means "-started".
	Sort   string
	Limit  int // 0 means 50; at most 1000
	Offset int
}

// sortIndexed are the sort keys with an index of their own besides
// started (runs_texc, runs_ne, runs_title).
var sortIndexed = map[string]bool{"texc": true, "ne": true, "title": true}

// sortScanMin is the match count above which a page sorted by an indexed
// column is read in that index's order.
const sortScanMin = 10000

var sortCols = map[string]string{"started": "r.started_at", "texc": "r.texc_k", "ne": "r.ne_m3", "title": "r.title", "status": "r.status", "id": "r.id"}

// where builds the WHERE clause and arguments of a filter.
func (f RunFilter) where() (string, []any) { return f.whereFor(false) }

// whereFor is where; with scanSort, the conditions on indexed columns are
// written so that SQLite cannot search those indexes (a unary + on the
// column, EXISTS for the tag), leaving it to read the runs in the order
// of the sort column's own index and stop at the page. ListRunsCapped
// does so when the filter is known to match many runs.
func (f RunFilter) whereFor(scanSort bool) (string, []any) {
	col := func(c string) string {
		if scanSort {
			return "+" + c
		}
		return c
	}
	var conds []string
	var args []any
	if q := strings.TrimSpace(f.Query); q != "" {
		for _, w := range strings.Fields(q) {
			conds = append(conds, `(r.title LIKE ? ESCAPE '\' OR r.notes LIKE ? ESCAPE '\' OR r.gas_mixture LIKE ? ESCAPE '\')`)
			p := "%" + likeEscape(w) + "%"
			args = append(args, p, p, p)
		}
	}
	if f.ChamberID != 0 {
		conds, args = append(conds, col("r.chamber_id")+" = ?"), append(args, f.ChamberID)
	}
	if f.RecipeID != 0 {
		conds, args = append(conds, col("r.recipe_id")+" = ?"), append(args, f.RecipeID)
	}
	if f.SourceType != "" {
		conds, args = append(conds, col("r.source_type")+" = ?"), append(args, f.SourceType)
	}
	if g := strings.TrimSpace(f.Gas); g != "" {
		conds, args = append(conds, `r.gas_mixture LIKE ? ESCAPE '\'`), append(args, "%"+likeEscape(g)+"%")
	}
	if !f.From.IsZero() {
		conds, args = append(conds, col("r.started_at")+" >= ?"), append(args, f.From.Unix())
	}
	if !f.To.IsZero() {
		conds, args = append(conds, col("r.started_at")+" < ?"), append(args, f.To.Unix())
	}
	if f.Status != "" {
		conds, args = append(conds, col("r.status")+" = ?"), append(args, f.Status)
	}
	if f.Tag != "" {
		c := "r.id IN (SELECT t.run_id FROM run_tags t WHERE t.tag = ?)" // read from the tag's index
		if scanSort {
			c = "EXISTS (SELECT 1 FROM run_tags t WHERE t.run_id = r.id AND t.tag = ?)" // checked per run
		}
		conds, args = append(conds, c), append(args, strings.ToLower(f.Tag))
	}
	if f.OperatorID != 0 {
		conds, args = append(conds, col("r.operator_id")+" = ?"), append(args, f.OperatorID)
	}
	if len(conds) == 0 {
		return "", nil
	}
	return " WHERE " + strings.Join(conds, " AND "), args
}

func likeEscape(s string) string {
	return strings.NewReplacer(`\`, `\\`, `%`, `\%`, `_`, `\_`).Replace(s)
}

func (f RunFilter) order() string {
	s := f.Sort
	desc := strings.HasPrefix(s, "-")
	s = strings.TrimPrefix(s, "-")
	col, ok := sortCols[s]
	if !ok {
		col, desc = "r.started_at", true
	}
	dir := " ASC"
	if desc {
		dir = " DESC"
	}
	// Runs without a value (not analysed yet) sort last either way.
	return " ORDER BY " + col + dir + " NULLS LAST, r.id" + dir
}

// ListRuns returns one page of runs matching f and the total count.
func (d *DB) ListRuns(ctx context.Context, f RunFilter) ([]Run, int, error) {
	runs, total, _, err := d.ListRunsCapped(ctx, f, 0)
	return runs, total, err
}

// ListRunsCapped is ListRuns with a bounded count: matching runs are
// counted only up to the end of the requested page plus countCap more
// (countCap 0: no bound). more is true when the count stopped at that
// bound, and total is then a lower bound ("more than total"). On a large
// log an exact count of a broad filter reads every matching row, while
// the page itself needs only the rows up to it.
//
// The page is read in two steps: the ids of the page's runs from the runs
// table alone (so that the sort and the skipped rows of a deep page cost
// no joins), then those runs with their operator, chamber and recipe
// names.
func (d *DB) ListRunsCapped(ctx context.Context, f RunFilter, countCap int) (runs []Run, total int, more bool, err error) {
	limit := f.Limit
	if limit <= 0 {
		limit = 50
	}
	limit = min(limit, 1000)
	offset := max(f.Offset, 0)
	// A text search or gas filter: counted and paged from the trend column
	// store when it is loaded (run_list_cols.go).
	cl, err := d.listFromCols(ctx, f, limit, offset, countCap)
	if err != nil {
		return nil, 0, false, err
	}
	var ids []any
	switch {
	case cl.ok:
		total, more, ids = cl.total, cl.more, cl.ids
	default:
		if ids, total, more, err = d.pageSQL(ctx, f, limit, offset, countCap); err != nil {
			return nil, 0, false, err
		}
	}
	if len(ids) == 0 {
		return nil, total, more, nil
	}
	rows, err := d.db.QueryContext(ctx, `SELECT `+runCols+runFrom+` WHERE r.id IN (?`+strings.Repeat(",?", len(ids)-1)+`)`, ids...)
	if err != nil {
		return nil, 0, false, fmt.Errorf("store: list runs: %w", err)
	}
	defer rows.Close()
	byID := make(map[int64]Run, len(ids))
	for rows.Next() {
		r, err := scanRun(rows)
		if err != nil {
			return nil, 0, false, err
		}
		byID[r.ID] = r
	}
	if err := rows.Err(); err != nil {
		return nil, 0, false, err
	}
	runs = make([]Run, 0, len(ids))
	for _, id := range ids {
		if r, ok := byID[id.(int64)]; ok { // a run deleted between the two reads is left out
			runs = append(runs, r)
		}
	}
	return runs, total, more, nil
}

// pageSQL is ListRunsCapped's count and page through SQL.
func (d *DB) pageSQL(ctx context.Context, f RunFilter, limit, offset, countCap int) (ids []any, total int, more bool, err error) {
	where, args := f.where()
	if countCap > 0 {
		bound := offset + limit + countCap
		err = d.db.QueryRowContext(ctx, `SELECT count(*) FROM (SELECT 1 FROM runs r`+where+` LIMIT ?)`,
			append(append([]any(nil), args...), bound+1)...).Scan(&total)
		if total > bound {
			total, more = bound, true
		}
	} else {
		err = d.db.QueryRowContext(ctx, `SELECT count(*) FROM runs r`+where, args...).Scan(&total)
	}
	if err != nil {
		return nil, 0, false, fmt.Errorf("store: count runs: %w", err)
	}
	scan := (more || total > sortScanMin) && sortIndexed[strings.TrimPrefix(f.Sort, "-")]
	ids, err = d.pageIDs(ctx, f, scan, limit, offset)
	return ids, total, more, err
}

// pageIDs returns the ids of one page of runs matching f in f's order.
// With scan, a sort column with its own index (migration 0015) is read in
// index order (for a filter that matches many runs: the page is found
// after a few rows per page row); without, a filter is read from its own
// index and its runs sorted (best when it matches few).
func (d *DB) pageIDs(ctx context.Context, f RunFilter, scan bool, limit, offset int) ([]any, error) {
	where, args := f.whereFor(scan)
	rows, err := d.db.QueryContext(ctx, `SELECT r.id FROM runs r`+where+f.order()+` LIMIT ? OFFSET ?`,
		append(args, limit, offset)...)
	if err != nil {
		return nil, fmt.Errorf("store: list runs: %w", err)
	}
	defer rows.Close()
	var ids []any
	for rows.Next() {
		var id int64
		if err := rows.Scan(&id); err != nil {
			return nil, err
		}
		ids = append(ids, id)
	}
	return ids, rows.Err()
}

// EachRun calls fn for every run matching f (all pages, in f's order),
// with its tags, for exports. fn must not use the store. Rows are read
// and handed over one at a time (the tags with their run), so an export
// of a million runs holds one run in memory, not the log.
func (d *DB) EachRun(ctx context.Context, f RunFilter, fn func(Run) error) error {
	where, args := f.where()
	rows, err := d.db.QueryContext(ctx, `SELECT `+runCols+`,
		(SELECT json_group_array(tag) FROM (SELECT t.tag FROM run_tags t WHERE t.run_id = r.id ORDER BY t.tag))`+
		runFrom+where+f.order(), args...)
	if err != nil {
		return fmt.Errorf("store: export runs: %w", err)
	}
	defer rows.Close()
	for rows.Next() {
		var tags string
		r, err := scanRun(scanWith{rows, &tags})
		if err != nil {
			return err
		}
		if tags != "[]" {
			if err := json.Unmarshal([]byte(tags), &r.Tags); err != nil {
				return fmt.Errorf("store: export runs: tags of run %d: %w", r.ID, err)
			}
		}
		if err := fn(r); err != nil {
			return err
		}
	}
	return rows.Err()
}

// scanWith scans a row with one more column after the run's.
type scanWith struct {
	rows  *sql.Rows
	extra any
}

func (s scanWith) Scan(dest ...any) error { return s.rows.Scan(append(dest, s.extra)...) }

// Named is a chamber or recipe.
type Named struct {
	ID          int64
	Name        string
	Description string
}

// Chambers lists the chambers by name.
func (d *DB) Chambers(ctx context.Context) ([]Named, error) { return d.named(ctx, "chambers") }

// Recipes lists the recipes by name.
func (d *DB) Recipes(ctx context.Context) ([]Named, error) { return d.named(ctx, "recipes") }

func (d *DB) named(ctx context.Context, table string) ([]Named, error) {
	rows, err := d.db.QueryContext(ctx, `SELECT id, name, description FROM `+table+` ORDER BY name`)
	if err != nil {
		return nil, err
	}
	defer rows.Close()
	var out []Named
	for rows.Next() {
		var n Named
		if err := rows.Scan(&n.ID, &n.Name, &n.Description); err != nil {
			return nil, err
		}
		out = append(out, n)
	}
	return out, rows.Err()
}

// EnsureChamber returns the id of the chamber with this name, creating it.
func (d *DB) EnsureChamber(ctx context.Context, name, description string) (int64, error) {
	return d.ensureNamed(ctx, "chambers", name, description)
}

// EnsureRecipe returns the id of the recipe with this name, creating it.
func (d *DB) EnsureRecipe(ctx context.Context, name, description string) (int64, error) {
	return d.ensureNamed(ctx, "recipes", name, description)
}

func (d *DB) ensureNamed(ctx context.Context, table, name, description string) (int64, error) {
	name = strings.TrimSpace(name)
	if name == "" {
		return 0, fmt.Errorf("%w: empty name", ErrInvalid)
	}
	if _, err := d.exec(ctx, `INSERT INTO `+table+` (name, description) VALUES (?, ?) ON CONFLICT(name) DO NOTHING`, name, description); err != nil {
		return 0, err
	}
	var id int64
	err := d.db.QueryRowContext(ctx, `SELECT id FROM `+table+` WHERE name = ?`, name).Scan(&id)
	return id, err
}
