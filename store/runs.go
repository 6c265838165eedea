package store

import (
	"context"
	"database/sql"
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

// Statuses are the review states of a run, with display names of our own.
var Statuses = []struct{ Key, Label string }{
	{"draft", "Draft"},
	{"submitted", "Awaiting review"},
	{"returned", "Returned for rework"},
	{"signed_off", "Signed off"},
}

// StatusLabel returns the display name of a status key.
func StatusLabel(key string) string { return label(Statuses, key) }

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
	NWarnings                             int
	AnalysisVersion                       int
	// ApprovedVersion is the analysis version its sign-off approved (nil
	// unless the run is signed off; 0 when it was signed off without an
	// analysis).
	ApprovedVersion *int
}

// RunInput is what a user may set on a run (no ids of others, no status,
// no summary).
type RunInput struct {
	Title            string
	StartedAt        time.Time
	ChamberID        *int64
	RecipeID         *int64
	SourceType       string
	GasMixture       string
	PressurePa       *float64
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
		instrument_fwhm_nm, instrument_id, gas_temperature_k, perturber, notes, created_at, updated_at)
		VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?)`,
		in.Title, in.StartedAt.Unix(), operatorID, in.ChamberID, in.RecipeID, in.SourceType, in.GasMixture,
		nullF(in.PressurePa), nullF(in.PowerW), in.Flows, nullF(in.GapMM), nullF(in.GratingLMM), nullF(in.SlitUM),
		nullF(in.IntegrationMS), nullF(in.InstrumentFWHMNM), in.InstrumentID, nullF(in.GasTemperatureK), in.Perturber,
		in.Notes, now, now)
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
			updated_at = ? WHERE id = ?`,
			in.Title, in.StartedAt.Unix(), in.ChamberID, in.RecipeID, in.SourceType, in.GasMixture, nullF(in.PressurePa),
			nullF(in.PowerW), in.Flows, nullF(in.GapMM), nullF(in.GratingLMM), nullF(in.SlitUM), nullF(in.IntegrationMS),
			nullF(in.InstrumentFWHMNM), in.InstrumentID, nullF(in.GasTemperatureK), in.Perturber, in.Notes, d.now(), id)
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
	r.texc_k, r.texc_unc_k, r.ne_m3, r.ne_unc_m3, r.tgas_k, r.n_warnings, r.analysis_version, r.approved_version`

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
		&texc, &texcU, &ne, &neU, &tgas, &r.NWarnings, &r.AnalysisVersion, &approved)
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
	if err := tx.QueryRowContext(ctx, `SELECT status, approved_version FROM runs WHERE id = ?`, runID).Scan(&status, &approved); err != nil {
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
	r, err := scanRun(d.db.QueryRowContext(ctx, `SELECT `+runCols+runFrom+` WHERE r.id = ?`, id))
	if err != nil {
		return r, fmt.Errorf("run %d: %w", id, err)
	}
	rows, err := d.db.QueryContext(ctx, `SELECT tag FROM run_tags WHERE run_id = ? ORDER BY tag`, id)
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

var sortCols = map[string]string{"started": "r.started_at", "texc": "r.texc_k", "ne": "r.ne_m3", "title": "r.title", "status": "r.status", "id": "r.id"}

// where builds the WHERE clause and arguments of a filter.
func (f RunFilter) where() (string, []any) {
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
		conds, args = append(conds, "r.chamber_id = ?"), append(args, f.ChamberID)
	}
	if f.RecipeID != 0 {
		conds, args = append(conds, "r.recipe_id = ?"), append(args, f.RecipeID)
	}
	if f.SourceType != "" {
		conds, args = append(conds, "r.source_type = ?"), append(args, f.SourceType)
	}
	if g := strings.TrimSpace(f.Gas); g != "" {
		conds, args = append(conds, `r.gas_mixture LIKE ? ESCAPE '\'`), append(args, "%"+likeEscape(g)+"%")
	}
	if !f.From.IsZero() {
		conds, args = append(conds, "r.started_at >= ?"), append(args, f.From.Unix())
	}
	if !f.To.IsZero() {
		conds, args = append(conds, "r.started_at < ?"), append(args, f.To.Unix())
	}
	if f.Status != "" {
		conds, args = append(conds, "r.status = ?"), append(args, f.Status)
	}
	if f.Tag != "" {
		conds, args = append(conds, "EXISTS (SELECT 1 FROM run_tags t WHERE t.run_id = r.id AND t.tag = ?)"), append(args, strings.ToLower(f.Tag))
	}
	if f.OperatorID != 0 {
		conds, args = append(conds, "r.operator_id = ?"), append(args, f.OperatorID)
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
	where, args := f.where()
	var total int
	if err := d.db.QueryRowContext(ctx, `SELECT count(*) FROM runs r`+where, args...).Scan(&total); err != nil {
		return nil, 0, fmt.Errorf("store: count runs: %w", err)
	}
	limit := f.Limit
	if limit <= 0 {
		limit = 50
	}
	limit = min(limit, 1000)
	rows, err := d.db.QueryContext(ctx, `SELECT `+runCols+runFrom+where+f.order()+` LIMIT ? OFFSET ?`,
		append(args, limit, max(f.Offset, 0))...)
	if err != nil {
		return nil, 0, fmt.Errorf("store: list runs: %w", err)
	}
	defer rows.Close()
	var out []Run
	for rows.Next() {
		r, err := scanRun(rows)
		if err != nil {
			return nil, 0, err
		}
		out = append(out, r)
	}
	return out, total, rows.Err()
}

// EachRun calls fn for every run matching f (all pages, in f's order), for
// exports. fn must not use the store.
func (d *DB) EachRun(ctx context.Context, f RunFilter, fn func(Run) error) error {
	where, args := f.where()
	rows, err := d.db.QueryContext(ctx, `SELECT `+runCols+runFrom+where+f.order(), args...)
	if err != nil {
		return fmt.Errorf("store: export runs: %w", err)
	}
	defer rows.Close()
	for rows.Next() {
		r, err := scanRun(rows)
		if err != nil {
			return err
		}
		if err := fn(r); err != nil {
			return err
		}
	}
	return rows.Err()
}

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
