package server

import (
	"bytes"
	"database/sql"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"mime"
	"net/http"
	"strconv"
	"strings"
	"sync"
	"time"

	"github.com/labstack/echo/v4"

	"glowlog/diag"
	"glowlog/diag/mset"
	"glowlog/diag/spectrum"
	"glowlog/store"
)

// The JSON API (/api/v1): bearer-token authentication (loadUser), JSON in
// and out, errors as {"error": "…"} through handleError. README.md
// section "JSON API" documents it.

// apiRunBody is the JSON body of POST /api/v1/runs.
type apiRunBody struct {
	Title            string   `json:"title"`
	StartedAt        string   `json:"started_at"`
	SourceType       string   `json:"source_type"`
	Chamber          string   `json:"chamber"`
	Recipe           string   `json:"recipe"`
	GasMixture       string   `json:"gas_mixture"`
	PressurePa       *float64 `json:"pressure_Pa"`
	PowerW           *float64 `json:"power_W"`
	Flows            string   `json:"flows"`
	GapMM            *float64 `json:"electrode_gap_mm"`
	GratingLMM       *float64 `json:"grating_l_mm"`
	SlitUM           *float64 `json:"slit_um"`
	IntegrationMS    *float64 `json:"integration_ms"`
	InstrumentFWHMNM *float64 `json:"instrument_fwhm_nm"`
	GasTemperatureK  *float64 `json:"gas_temperature_K"`
	Perturber        string   `json:"perturber"`
	Notes            string   `json:"notes"`
	Tags             []string `json:"tags"`
}

// maxRunBody bounds the JSON body of a new run.
const maxRunBody = 64 << 10

// decodeStrict decodes one JSON object from r into v, rejecting unknown
// fields and trailing data, with a message naming the field at fault.
func decodeStrict(r io.Reader, limit int64, v any) error {
	data, err := io.ReadAll(io.LimitReader(r, limit+1))
	if err != nil {
		return err
	}
	if int64(len(data)) > limit {
		return badRequest("request body is larger than %d bytes", limit)
	}
	if len(bytes.TrimSpace(data)) == 0 {
		return badRequest("empty request body: expected a JSON object")
	}
	// Nesting and repeated keys are refused before decoding (mset.CheckJSON).
	if err := mset.CheckJSON("request body", data, mset.MaxDepth); err != nil {
		return badRequest("%v", err)
	}
	dec := json.NewDecoder(bytes.NewReader(data))
	dec.DisallowUnknownFields()
	if err := dec.Decode(v); err != nil {
		var se *json.SyntaxError
		var te *json.UnmarshalTypeError
		switch {
		case errors.As(err, &se):
			return badRequest("malformed JSON at byte %d: %s", se.Offset, se.Error())
		case errors.As(err, &te):
			return badRequest("field %q: expected %s, got a JSON %s", te.Field, te.Type.String(), te.Value)
		case strings.HasPrefix(err.Error(), "json: unknown field "):
			return badRequest("unknown field %s", strings.TrimPrefix(err.Error(), "json: unknown field "))
		case errors.Is(err, io.ErrUnexpectedEOF):
			return badRequest("malformed JSON: the body ends early")
		}
		return badRequest("malformed JSON: %s", strings.TrimPrefix(err.Error(), "json: "))
	}
	if dec.More() {
		return badRequest("malformed JSON: extra data after the object")
	}
	return nil
}

func (s *Server) apiCreateRun(c echo.Context) error {
	var b apiRunBody
	if err := decodeStrict(c.Request().Body, maxRunBody, &b); err != nil {
		return err
	}
	if b.StartedAt == "" {
		return badRequest("started_at is required (RFC 3339, e.g. 2026-03-04T09:30:00Z)")
	}
	started, err := time.Parse(time.RFC3339, b.StartedAt)
	if err != nil {
		return badRequest("started_at: %q is not an RFC 3339 time (e.g. 2026-03-04T09:30:00Z)", b.StartedAt)
	}
	in := store.RunInput{Title: b.Title, StartedAt: started, SourceType: b.SourceType, GasMixture: b.GasMixture,
		PressurePa: b.PressurePa, PowerW: b.PowerW, Flows: b.Flows, GapMM: b.GapMM, GratingLMM: b.GratingLMM,
		SlitUM: b.SlitUM, IntegrationMS: b.IntegrationMS, InstrumentFWHMNM: b.InstrumentFWHMNM,
		GasTemperatureK: b.GasTemperatureK, Perturber: b.Perturber, Notes: b.Notes, Tags: b.Tags}
	if in.SourceType == "" {
		return badRequest("source_type is required (%s)", sourceKeys())
	}
	if err := in.Validate(); err != nil {
		return err
	}
	if _, err := diag.LookupPerturber(in.Perturber); err != nil {
		return badRequest("perturber: %s", strings.TrimPrefix(err.Error(), "diag: "))
	}
	// One transaction: a new chamber or recipe is stored with the run or
	// not at all.
	ctx := c.Request().Context()
	tx, err := s.DB.Begin(ctx)
	if err != nil {
		return err
	}
	defer tx.Rollback()
	if name := strings.TrimSpace(b.Chamber); name != "" {
		id, err := s.DB.EnsureChamberTx(ctx, tx, name)
		if err != nil {
			return err
		}
		in.ChamberID = &id
	}
	if name := strings.TrimSpace(b.Recipe); name != "" {
		id, err := s.DB.EnsureRecipeTx(ctx, tx, name)
		if err != nil {
			return err
		}
		in.RecipeID = &id
	}
	id, err := s.DB.CreateRunTx(ctx, tx, currentUser(c).ID, in)
	if err != nil {
		return err
	}
	if err := tx.Commit(); err != nil {
		return err
	}
	return c.JSON(http.StatusCreated, map[string]int64{"id": id})
}

func sourceKeys() string {
	var k []string
	for _, s := range store.SourceTypes {
		k = append(k, s.Key)
	}
	return strings.Join(k, ", ")
}

// pathID parses a positive integer path parameter.
func pathID(c echo.Context, name string) (int64, error) {
	id, err := strconv.ParseInt(c.Param(name), 10, 64)
	if err != nil || id <= 0 {
		return 0, echo.NewHTTPError(http.StatusNotFound, "not found")
	}
	return id, nil
}

// runFromPath loads the run named by the :id path parameter.
func (s *Server) runFromPath(c echo.Context) (store.Run, error) {
	id, err := pathID(c, "id")
	if err != nil {
		return store.Run{}, err
	}
	return s.DB.GetRun(c.Request().Context(), id)
}

// latestSettings returns the settings of a run's newest analysis version,
// or the run's defaults when it has none.
func (s *Server) latestSettings(c echo.Context, r store.Run) (AnalysisSettings, error) {
	sj, err := s.DB.LatestSettings(c.Request().Context(), r.ID)
	return decodeSettings(r, sj, err)
}

// applySettingFields overrides analysis settings with the form fields of
// a multipart upload that are present.
func applySettingFields(c echo.Context, st *AnalysisSettings) error {
	floats := []struct {
		name string
		p    *float64
	}{{"instrument_fwhm_nm", &st.InstrumentFWHMNM}, {"instrument_lorentz_fwhm_nm", &st.InstrumentLorentzFWHMNM},
		{"gas_temperature_K", &st.GasTemperatureK}, {"gas_temperature_unc_K", &st.GasTemperatureUncK},
		{"pressure_Pa", &st.PressurePa}, {"saturation_counts", &st.SaturationCounts},
		{"gain_e_per_count", &st.GainElectronsPerCount}, {"read_noise_e", &st.ReadNoiseElectrons}, {"min_snr", &st.MinSNR},
		{"instrument_fwhm_unc_nm", &st.InstrumentFWHMUncNM}, {"electron_temperature_K", &st.ElectronTemperatureK},
		{"response_unc_rel", &st.ResponseUncRel}}
	for _, f := range floats {
		v := strings.TrimSpace(c.FormValue(f.name))
		if v == "" {
			continue
		}
		x, err := strconv.ParseFloat(v, 64)
		if err != nil {
			return badRequest("%s: %q is not a number", f.name, v)
		}
		*f.p = x
	}
	if v := strings.TrimSpace(c.FormValue("line_shape")); v != "" {
		st.LineShape = v
	}
	// The route and the whole-fit options: given ones replace the run's;
	// whole-fit options carried over are dropped when the route is lines
	// (route.go).
	if v := strings.TrimSpace(c.FormValue("model")); v != "" {
		st.Model = v
	}
	givenWhole := false
	if v := strings.TrimSpace(c.FormValue("whole_areas")); v != "" {
		st.WholeAreas, givenWhole = v, true
	}
	bools := []struct {
		name  string
		p     *bool
		whole bool
	}{{"solve_gas_temperature", &st.SolveGasTemperature, false}, {"correct_offset", &st.CorrectOffset, false},
		{"whole_free_gas_temperature", &st.WholeFreeGasTemperature, true}, {"whole_free_instrument", &st.WholeFreeInstrument, true}}
	for _, f := range bools {
		v := strings.TrimSpace(c.FormValue(f.name))
		if v == "" {
			continue
		}
		x, err := strconv.ParseBool(v)
		if err != nil {
			return badRequest("%s: %q is not true or false", f.name, v)
		}
		*f.p = x
		givenWhole = givenWhole || (f.whole && x)
	}
	st.dropWholeOptions(givenWhole)
	if v := strings.TrimSpace(c.FormValue("max_upper")); v != "" {
		n, err := strconv.Atoi(v)
		if err != nil {
			return badRequest("max_upper: %q is not an integer", v)
		}
		st.MaxUpper = n
	}
	for _, f := range []struct {
		name string
		p    *string
	}{{"perturber", &st.Perturber}, {"isotope", &st.Isotope}, {"response_unit", &st.ResponseUnit},
		{"response_corrected_unit", &st.ResponseCorrectedUnit}} {
		if v := strings.TrimSpace(c.FormValue(f.name)); v != "" {
			*f.p = v
		}
	}
	return nil
}

// incoming is an upload to be stored: kind, name and bytes; settingFields
// says that settings came with it (multipart form fields).
type incoming struct {
	kind, name    string
	data          []byte
	settingFields bool
}

// maxBatchFiles bounds the files of one POST /runs/:id/measurements.
const maxBatchFiles = 1000

// readMeasurement reads the attachments of POST /runs/:id/measurements: a
// measurement set (JSON body) or files (multipart, one or more fields
// "file": a batch, stored in one transaction with one analysis version).
func readMeasurement(c echo.Context, st *AnalysisSettings) ([]incoming, error) {
	ct, _, _ := mime.ParseMediaType(c.Request().Header.Get(echo.HeaderContentType))
	switch ct {
	case echo.MIMEApplicationJSON:
		data, err := io.ReadAll(io.LimitReader(c.Request().Body, mset.MaxBytes+1))
		if err != nil {
			return nil, err
		}
		if len(data) > mset.MaxBytes {
			return nil, badRequest("measurement set is larger than %d bytes", mset.MaxBytes)
		}
		name := strings.TrimSpace(c.QueryParam("name"))
		if name == "" {
			name = "measurement-set.json"
		}
		return []incoming{{store.KindLineTable, name, data, false}}, nil
	case echo.MIMEMultipartForm:
		form, err := c.MultipartForm()
		if err != nil {
			return nil, badRequest("multipart body: %v", err)
		}
		files := form.File["file"]
		if len(files) == 0 {
			return nil, badRequest("multipart field \"file\" is missing")
		}
		if len(files) > maxBatchFiles {
			return nil, badRequest("%d files in one request, above the limit of %d", len(files), maxBatchFiles)
		}
		kind := strings.TrimSpace(c.FormValue("kind"))
		switch kind {
		case "":
			kind = store.KindSpectrum
		case store.KindSpectrum, store.KindDark, store.KindResponse:
		default:
			return nil, badRequest("kind: %q is not spectrum, dark or response", kind)
		}
		if err := applySettingFields(c, st); err != nil {
			return nil, err
		}
		out := make([]incoming, 0, len(files))
		for _, fh := range files {
			if fh.Size > store.MaxAttachmentBytes {
				return nil, badRequest("file %s is %d bytes, above the %d-byte limit", fh.Filename, fh.Size, store.MaxAttachmentBytes)
			}
			f, err := fh.Open()
			if err != nil {
				return nil, err
			}
			// The part's size is known: one buffer of that size (io.ReadAll
			// would grow one from 512 bytes, copying it each time).
			data := make([]byte, fh.Size)
			_, err = io.ReadFull(f, data)
			f.Close()
			if err != nil {
				return nil, err
			}
			name := strings.TrimSpace(fh.Filename)
			if name == "" {
				name = kind + ".csv"
			}
			if len(name) > 200 {
				name = name[:200]
			}
			out = append(out, incoming{kind, name, data, true})
		}
		return out, nil
	}
	return nil, &userError{http.StatusUnsupportedMediaType,
		"Content-Type must be application/json (a measurement set) or multipart/form-data (field \"file\")"}
}

// apiAddMeasurement stores one file (or a batch: several "file" parts)
// and a new analysis version holding it and every other file of the run.
// New spectra are analysed before the write transaction, beside other
// requests; inside it (which holds the write lock) the run's settings and
// files are read again, and those results are used only if the settings
// — calibration files included — are still those they were computed
// with. Otherwise the new files are analysed again inside.
func (s *Server) apiAddMeasurement(c echo.Context) error {
	id, err := pathID(c, "id")
	if err != nil {
		return err
	}
	ctx := c.Request().Context()
	run, err := s.DB.GetRunUntagged(ctx, id) // its fields, not its tags
	if err != nil {
		return err
	}
	u := currentUser(c)
	if run.OperatorID != u.ID && !u.Role.Can(store.RoleAdmin) {
		return echo.NewHTTPError(http.StatusForbidden, "only the run's operator or an admin may add measurements")
	}
	if run.Status == store.StatusSignedOff {
		return signedOffError(run.ID, run.ApprovedVersion)
	}
	plots, err := answerPlots(c)
	if err != nil {
		return err
	}
	st, err := s.latestSettings(c, run)
	if err != nil {
		return err
	}
	ins, err := readMeasurement(c, &st)
	if err != nil {
		return err
	}
	if err := st.Validate(); err != nil {
		return err
	}
	added := make([]store.Attachment, len(ins))
	for i, in := range ins {
		added[i] = store.Attachment{RunID: id, Kind: in.kind, Name: in.name, Content: in.data, Size: len(in.data)}
	}
	pre, err := s.analyzeBefore(ctx, id, added, st, plots)
	if err != nil {
		return err
	}
	if pre != nil {
		for i, ra := range pre.results {
			if ra.Err != nil {
				return &userError{http.StatusUnprocessableEntity, batchPrefix(ins, i) + strings.TrimPrefix(ra.Err.Error(), "diag: ")}
			}
		}
	}
	// Everything from here is one write, which holds the write lock: the
	// settings and the run's file list are read inside it, so the new
	// version includes every file committed before it (concurrent uploads
	// included) and keeps any settings a concurrent reanalysis stored. The
	// store refuses the file if the run was signed off meanwhile. Uploads
	// arriving together share one transaction (group commit), each in a
	// savepoint of its own; the answer goes out after the commit.
	uid := u.ID
	reason := "added " + ins[0].name + " through the API"
	if len(ins) > 1 {
		reason = fmt.Sprintf("added %d files (%s … %s) through the API", len(ins), ins[0].name, ins[len(ins)-1].name)
	}
	var version int
	var mine []*RunAnalysis
	err = s.DB.InGroupTx(ctx, func(tx *sql.Tx) error {
		st, err := s.latestSettingsTx(ctx, tx, run)
		if err != nil {
			return err
		}
		if ins[0].settingFields {
			if err := applySettingFields(c, &st); err != nil {
				return err
			}
		}
		if err := st.Validate(); err != nil {
			return err
		}
		for i, in := range ins {
			if added[i].ID, err = s.DB.AddAttachmentTx(ctx, tx, id, in.kind, in.name, in.data); err != nil {
				return err
			}
		}
		var results []RunAnalysis
		version, results, err = s.reanalyzeRunTxPre(ctx, tx, id, added, pre, st, &uid, reason)
		if err != nil {
			var ue *userError
			if errors.As(err, &ue) {
				return &userError{http.StatusUnprocessableEntity, ue.msg}
			}
			return err
		}
		mine = make([]*RunAnalysis, len(added))
		for i := range results {
			for k := range added {
				if results[i].Attachment.ID == added[k].ID {
					mine[k] = &results[i]
				}
			}
		}
		for k, m := range mine {
			if m != nil && m.Err != nil {
				return &userError{http.StatusUnprocessableEntity, batchPrefix(ins, k) + strings.TrimPrefix(m.Err.Error(), "diag: ")}
			}
		}
		return nil
	})
	if err != nil {
		return err
	}
	size := 64
	for _, m := range mine {
		size += 160
		switch {
		case m != nil && m.answer != nil:
			size += len(m.answer)
		case m != nil && m.stored != nil && !plots:
			size += len(m.stored.Result)
		case m != nil && m.stored != nil:
			size += len(m.stored.Result) + 3*len(m.stored.Series)
		}
	}
	// A batch's answer is about 110 kB per spectrum: grown once, in a
	// pooled buffer (c.Blob has written it when it returns).
	bp := answerBufPool.Get().(*[]byte)
	buf := bytes.NewBuffer((*bp)[:0])
	defer func() {
		if b := buf.Bytes(); cap(b) <= maxPooledAnswer {
			*bp = b[:0]
			answerBufPool.Put(bp)
		}
	}()
	buf.Grow(size)
	if len(ins) > 1 {
		fmt.Fprintf(buf, `{"run_id":%d,"analysis_version":%d,"measurements":[`, id, version)
	}
	for k, m := range mine {
		if k > 0 {
			buf.WriteByte(',')
		}
		ids := apiMeasurementIDs{RunID: id, AttachmentID: added[k].ID, AnalysisVersion: version, Kind: added[k].Kind}
		if err := writeMeasurementJSON(buf, ids, m, plots); err != nil {
			return err
		}
	}
	if len(ins) > 1 {
		buf.WriteString("]}")
	}
	buf.WriteByte('\n')
	// With its length known the answer goes out as it is, not in chunks
	// (net/http frames an answer of unknown length larger than its 2 kB
	// buffer chunk by chunk).
	c.Response().Header().Set(echo.HeaderContentLength, strconv.Itoa(buf.Len()))
	return c.Blob(http.StatusCreated, echo.MIMEApplicationJSONCharsetUTF8, buf.Bytes())
}

// answerBufPool holds the buffers apiAddMeasurement writes its answers
// in; one larger than maxPooledAnswer (a batch of about 40 whole-route
// spectra) is left to the garbage collector.
var answerBufPool = sync.Pool{New: func() any { b := []byte(nil); return &b }}

const maxPooledAnswer = 4 << 20

// batchPrefix names the file of an error in a batch.
func batchPrefix(ins []incoming, i int) string {
	if len(ins) < 2 {
		return ""
	}
	return ins[i].name + ": "
}

// answerPlots reads the query parameter plots of a measurement upload:
// "all" (the default) answers with each result's plot series, "none"
// without them (the numbers only: a quarter to a third of the bytes of a
// whole-spectrum result, and no series text to write).
func answerPlots(c echo.Context) (bool, error) {
	switch v := c.QueryParam("plots"); v {
	case "", "all":
		return true, nil
	case "none":
		return false, nil
	default:
		return false, badRequest("plots: %q is not all or none", v)
	}
}

// writeMeasurementJSON writes the answer for one stored file: its ids, then
// the fields of its analysis result (the stored JSON when encoded ahead,
// not encoded a second time); with plots false, without its plot series.
func writeMeasurementJSON(buf *bytes.Buffer, ids apiMeasurementIDs, m *RunAnalysis, plots bool) error {
	head, err := json.Marshal(ids)
	if err != nil {
		return err
	}
	var body []byte
	switch {
	case plots && m != nil && m.answer != nil:
		body = bytes.TrimSpace(m.answer)
		defer func() {
			// written: its buffer goes back to the pool
			if b := m.answer; cap(b) <= 1<<20 {
				b = b[:0]
				resultBufPool.Put(&b)
			}
			m.answer = nil
		}()
	case m != nil && m.stored != nil && m.stored.Result != "":
		// the stored JSON with its plot series put back, or without
		// them (their placeholders and keys left out)
		bp := resultBufPool.Get().(*[]byte)
		defer func() {
			if cap(body) <= 1<<20 {
				*bp = body[:0]
				resultBufPool.Put(bp)
			}
		}()
		if plots {
			body, err = spectrum.ExpandSeries((*bp)[:0], m.stored.Result, m.stored.Series)
		} else {
			body = spectrum.DropSeries((*bp)[:0], m.stored.Result)
		}
		if err != nil {
			return err
		}
		body = bytes.TrimSpace(body)
	case m != nil && m.Spectrum != nil:
		body, err = json.Marshal(m.Spectrum)
	case m != nil && m.Lines != nil:
		body, err = json.Marshal(m.Lines)
	}
	if err != nil {
		return err
	}
	if len(body) < 2 || body[0] != '{' || string(body) == "{}" {
		buf.Write(head)
		return nil
	}
	buf.Write(head[:len(head)-1])
	buf.WriteByte(',')
	buf.Write(body[1:])
	return nil
}

// apiMeasurementIDs identify what POST /api/v1/runs/:id/measurements
// stored; the analysis JSON of the new file follows them inline.
type apiMeasurementIDs struct {
	RunID           int64  `json:"run_id"`
	AttachmentID    int64  `json:"attachment_id"`
	AnalysisVersion int    `json:"analysis_version"`
	Kind            string `json:"kind"`
}

// apiSummary is a run's current analysis summary. The *_unc_* values are
// the total 1σ (statistical ⊕ systematic); the *_unc_total_* fields repeat
// them under a name that says so, and UncertaintyKind states it for
// clients (the split is in each result, ?full=1).
type apiSummary struct {
	ExcitationTemperatureK         *float64 `json:"excitation_temperature_K"`
	ExcitationTemperatureUncK      *float64 `json:"excitation_temperature_unc_K"`
	ExcitationTemperatureUncTotalK *float64 `json:"excitation_temperature_unc_total_K"`
	ElectronDensityM3              *float64 `json:"electron_density_m3"`
	ElectronDensityUncM3           *float64 `json:"electron_density_unc_m3"`
	ElectronDensityUncTotalM3      *float64 `json:"electron_density_unc_total_m3"`
	UncertaintyKind                string   `json:"uncertainty_kind"`
	GasTemperatureK                *float64 `json:"gas_temperature_K"`
	NWarnings                      int      `json:"n_warnings"`
	WarningsWorst                  string   `json:"warnings_worst"`
	AnalysisVersion                int      `json:"analysis_version"`
}

// apiRun is a run as the API shows it.
type apiRun struct {
	ID               int64      `json:"id"`
	Title            string     `json:"title"`
	StartedAt        time.Time  `json:"started_at"`
	Operator         string     `json:"operator"`
	Chamber          string     `json:"chamber,omitempty"`
	Recipe           string     `json:"recipe,omitempty"`
	SourceType       string     `json:"source_type"`
	GasMixture       string     `json:"gas_mixture,omitempty"`
	PressurePa       *float64   `json:"pressure_Pa,omitempty"`
	PowerW           *float64   `json:"power_W,omitempty"`
	Flows            string     `json:"flows,omitempty"`
	GapMM            *float64   `json:"electrode_gap_mm,omitempty"`
	GratingLMM       *float64   `json:"grating_l_mm,omitempty"`
	SlitUM           *float64   `json:"slit_um,omitempty"`
	IntegrationMS    *float64   `json:"integration_ms,omitempty"`
	InstrumentFWHMNM *float64   `json:"instrument_fwhm_nm,omitempty"`
	GasTemperatureK  *float64   `json:"gas_temperature_K,omitempty"`
	Perturber        string     `json:"perturber"`
	Notes            string     `json:"notes,omitempty"`
	Status           string     `json:"status"`
	SignedOffAt      *time.Time `json:"signed_off_at,omitempty"`
	// ApprovedVersion is the analysis version the sign-off approved; the
	// summary and "analysis" are that version while the run is signed off.
	ApprovedVersion *int       `json:"approved_analysis_version,omitempty"`
	Tags            []string   `json:"tags,omitempty"`
	CreatedAt       time.Time  `json:"created_at"`
	UpdatedAt       time.Time  `json:"updated_at"`
	Summary         apiSummary `json:"summary"`

	Attachments []apiAttachment `json:"attachments,omitempty"`
	Analysis    *apiAnalysis    `json:"analysis,omitempty"`
}

type apiAttachment struct {
	ID        int64     `json:"id"`
	Kind      string    `json:"kind"`
	Name      string    `json:"name"`
	Seq       int       `json:"seq"`
	Bytes     int       `json:"bytes"`
	CreatedAt time.Time `json:"created_at"`
}

type apiAnalysis struct {
	Version       int              `json:"version"`
	EngineVersion string           `json:"engine_version"`
	CreatedAt     time.Time        `json:"created_at"`
	CreatedBy     string           `json:"created_by,omitempty"`
	Reason        string           `json:"reason,omitempty"`
	Settings      json.RawMessage  `json:"settings"`
	Results       []apiResultEntry `json:"results"`
}

type apiResultEntry struct {
	AttachmentID int64  `json:"attachment_id"`
	Attachment   string `json:"attachment"`
	Error        string `json:"error,omitempty"`
	// Model is the route that produced the numbers: "whole" or "lines"
	// (line tables and results from before the route existed: "lines").
	Model                     string   `json:"model,omitempty"`
	ExcitationTemperatureK    *float64 `json:"excitation_temperature_K"`
	ExcitationTemperatureUncK *float64 `json:"excitation_temperature_unc_K"`
	ElectronDensityM3         *float64 `json:"electron_density_m3"`
	ElectronDensityUncM3      *float64 `json:"electron_density_unc_m3"`
	// The split of the total σ above, read from the result.
	ExcitationTemperatureUncStatK *float64        `json:"excitation_temperature_unc_stat_K"`
	ExcitationTemperatureUncSysK  *float64        `json:"excitation_temperature_unc_sys_K"`
	ElectronDensityUncStatM3      *float64        `json:"electron_density_unc_stat_m3"`
	ElectronDensityUncSysM3       *float64        `json:"electron_density_unc_sys_m3"`
	ElectronDensityUncSysParts    []diag.UncPart  `json:"electron_density_unc_sys_parts,omitempty"`
	NWarnings                     int             `json:"n_warnings"`
	WarningsWorst                 string          `json:"warnings_worst"`
	Result                        json.RawMessage `json:"result,omitempty"`
}

// apiUncertaintyKind says what the summary's σ are.
const apiUncertaintyKind = "total 1σ = statistical ⊕ systematic; the split (electron_density_unc_stat_m3, _sys_m3, _sys_parts; excitation_temperature_unc_stat_K, _sys_K) is in each analysis result (?full=1)"

func toAPIRun(r store.Run) apiRun {
	return apiRun{ID: r.ID, Title: r.Title, StartedAt: r.StartedAt, Operator: r.OperatorName, Chamber: r.ChamberName,
		Recipe: r.RecipeName, SourceType: r.SourceType, GasMixture: r.GasMixture, PressurePa: r.PressurePa, PowerW: r.PowerW,
		Flows: r.Flows, GapMM: r.GapMM, GratingLMM: r.GratingLMM, SlitUM: r.SlitUM, IntegrationMS: r.IntegrationMS,
		InstrumentFWHMNM: r.InstrumentFWHMNM, GasTemperatureK: r.GasTemperatureK, Perturber: r.Perturber, Notes: r.Notes,
		Status: r.Status, SignedOffAt: r.SignedOffAt, ApprovedVersion: r.ApprovedVersion, Tags: r.Tags, CreatedAt: r.CreatedAt, UpdatedAt: r.UpdatedAt,
		Summary: apiSummary{ExcitationTemperatureK: r.TexcK, ExcitationTemperatureUncK: r.TexcUncK, ElectronDensityM3: r.NeM3,
			ElectronDensityUncM3: r.NeUncM3, ExcitationTemperatureUncTotalK: r.TexcUncK, ElectronDensityUncTotalM3: r.NeUncM3,
			UncertaintyKind: apiUncertaintyKind, GasTemperatureK: r.TgasK, NWarnings: r.NWarnings, WarningsWorst: r.WarnWorst, AnalysisVersion: r.AnalysisVersion}}
}

// apiGetRun returns a run with its attachments and latest analysis; the
// full result JSON of every attachment comes with ?full=1.
func (s *Server) apiGetRun(c echo.Context) error {
	id, err := pathID(c, "id")
	if err != nil {
		return err
	}
	ctx := c.Request().Context()
	r, err := s.DB.GetRun(ctx, id)
	if err != nil {
		return err
	}
	out := toAPIRun(r)
	atts, err := s.DB.Attachments(ctx, id)
	if err != nil {
		return err
	}
	for _, a := range atts {
		out.Attachments = append(out.Attachments, apiAttachment{a.ID, a.Kind, a.Name, a.Seq, a.Size, a.CreatedAt})
	}
	full := c.QueryParam("full") == "1" || c.QueryParam("full") == "true"
	if r.AnalysisVersion > 0 {
		// The run's current version: the approved one while it is signed off.
		// Without full the results' plot series are not needed (nor put
		// back into their JSON).
		get := s.DB.AnalysisVersionCompact
		if full {
			get = s.DB.AnalysisVersion
		}
		a, err := get(ctx, id, r.AnalysisVersion)
		if err != nil {
			return err
		}
		aa := &apiAnalysis{Version: a.Version, EngineVersion: a.EngineVersion, CreatedAt: a.CreatedAt, CreatedBy: a.CreatedByName,
			Reason: a.Reason, Settings: json.RawMessage(a.Settings), Results: []apiResultEntry{}}
		for _, res := range a.Results {
			e := apiResultEntry{AttachmentID: res.AttachmentID, Attachment: res.AttachmentName, Error: res.Error,
				ExcitationTemperatureK: res.TexcK, ExcitationTemperatureUncK: res.TexcUncK, ElectronDensityM3: res.NeM3,
				ElectronDensityUncM3: res.NeUncM3, NWarnings: res.NWarnings, WarningsWorst: res.WarnWorst}
			if res.Result != "" {
				var split struct {
					TS *float64       `json:"excitation_temperature_unc_stat_K"`
					TY *float64       `json:"excitation_temperature_unc_sys_K"`
					NS *float64       `json:"electron_density_unc_stat_m3"`
					NY *float64       `json:"electron_density_unc_sys_m3"`
					NP []diag.UncPart `json:"electron_density_unc_sys_parts"`
					M  string         `json:"model"`
				}
				if json.Unmarshal([]byte(res.Result), &split) == nil {
					e.Model = split.M
					if e.Model == "" {
						e.Model = spectrum.ModelLines
					}
					e.ExcitationTemperatureUncStatK, e.ExcitationTemperatureUncSysK = split.TS, split.TY
					e.ElectronDensityUncStatM3, e.ElectronDensityUncSysM3, e.ElectronDensityUncSysParts = split.NS, split.NY, split.NP
				}
			}
			if full && res.Result != "" {
				e.Result = json.RawMessage(res.Result)
			}
			aa.Results = append(aa.Results, e)
		}
		out.Analysis = aa
	}
	return c.JSON(http.StatusOK, out)
}

// apiFilter reads the run-list filters from the query string. Chamber,
// recipe and operator are names (or numeric ids); from and to are dates
// (YYYY-MM-DD) or RFC 3339 times.
func (s *Server) apiFilter(c echo.Context) (store.RunFilter, error) {
	ctx := c.Request().Context()
	q := c.QueryParams()
	f := store.RunFilter{Query: q.Get("q"), SourceType: q.Get("source"), Gas: q.Get("gas"), Status: q.Get("status"),
		Tag: q.Get("tag"), Sort: q.Get("sort")}
	named := func(field, v string, list func() ([]store.Named, error)) (int64, error) {
		if v = strings.TrimSpace(v); v == "" {
			return 0, nil
		}
		if n, err := strconv.ParseInt(v, 10, 64); err == nil && n > 0 {
			return n, nil
		}
		all, err := list()
		if err != nil {
			return 0, err
		}
		for _, n := range all {
			if strings.EqualFold(n.Name, v) {
				return n.ID, nil
			}
		}
		return 0, badRequest("%s: no %s named %q", field, field, v)
	}
	var err error
	if f.ChamberID, err = named("chamber", q.Get("chamber"), func() ([]store.Named, error) { return s.DB.Chambers(ctx) }); err != nil {
		return f, err
	}
	if f.RecipeID, err = named("recipe", q.Get("recipe"), func() ([]store.Named, error) { return s.DB.Recipes(ctx) }); err != nil {
		return f, err
	}
	if v := strings.TrimSpace(q.Get("operator")); v != "" {
		u, err := s.DB.UserByName(ctx, v)
		if errors.Is(err, store.ErrNotFound) {
			return f, badRequest("operator: no user named %q", v)
		} else if err != nil {
			return f, err
		}
		f.OperatorID = u.ID
	}
	if f.SourceType != "" && store.SourceLabel(f.SourceType) == f.SourceType {
		return f, badRequest("source: %q is not one of %s", f.SourceType, sourceKeys())
	}
	if f.Status != "" && !store.ValidStatus(f.Status) {
		return f, badRequest("status: %q is not %s", f.Status, store.StatusKeys())
	}
	for _, d := range []struct {
		name string
		p    *time.Time
		end  bool
	}{{"from", &f.From, false}, {"to", &f.To, true}} {
		v := strings.TrimSpace(q.Get(d.name))
		if v == "" {
			continue
		}
		if t, err := time.Parse(time.RFC3339, v); err == nil {
			*d.p = t
		} else if t, err := time.Parse("2006-01-02", v); err == nil {
			if d.end {
				t = t.AddDate(0, 0, 1) // "to" a date includes that day
			}
			*d.p = t
		} else {
			return f, badRequest("%s: %q is not a date (YYYY-MM-DD) or an RFC 3339 time", d.name, v)
		}
	}
	if f.Sort != "" {
		k := strings.TrimPrefix(f.Sort, "-")
		switch k {
		case "started", "texc", "ne", "title", "status", "id":
		default:
			return f, badRequest("sort: %q is not started, texc, ne, title, status or id (prefix - for descending)", f.Sort)
		}
	}
	for _, p := range []struct {
		name string
		dst  *int
		max  int
	}{{"limit", &f.Limit, 1000}, {"offset", &f.Offset, 1 << 30}} {
		v := strings.TrimSpace(q.Get(p.name))
		if v == "" {
			continue
		}
		n, err := strconv.Atoi(v)
		if err != nil || n < 0 || n > p.max {
			return f, badRequest("%s: %q must be an integer from 0 to %d", p.name, v, p.max)
		}
		*p.dst = n
	}
	return f, nil
}

func (s *Server) apiListRuns(c echo.Context) error {
	f, err := s.apiFilter(c)
	if err != nil {
		return err
	}
	runs, total, err := s.DB.ListRuns(c.Request().Context(), f)
	if err != nil {
		return err
	}
	items := make([]apiRun, 0, len(runs))
	for _, r := range runs {
		items = append(items, toAPIRun(r))
	}
	limit := f.Limit
	if limit == 0 {
		limit = 50
	}
	return c.JSON(http.StatusOK, map[string]any{"total": total, "limit": limit, "offset": f.Offset, "items": items})
}

// apiTrendPoint is one run of a trend series.
type apiTrendPoint struct {
	RunID     int64     `json:"run_id"`
	StartedAt time.Time `json:"started_at"`
	X         float64   `json:"x"`
	Y         float64   `json:"y"`
	YUnc      *float64  `json:"y_unc"`
}

// apiTrends returns the series of y against x (keys of store.TrendFields;
// defaults started_at and ne_m3) over the runs matching the run-list
// filters; sort, limit and offset do not apply.
func (s *Server) apiTrends(c echo.Context) error {
	f, err := s.apiFilter(c)
	if err != nil {
		return err
	}
	x, y := c.QueryParam("x"), c.QueryParam("y")
	if x == "" {
		x = "started_at"
	}
	if y == "" {
		y = "ne_m3"
	}
	ts, err := s.DB.TrendSeries(c.Request().Context(), f, x, y)
	if err != nil {
		return err
	}
	pts := make([]apiTrendPoint, 0, len(ts.Points))
	for _, p := range ts.Points {
		q := apiTrendPoint{RunID: p.RunID, StartedAt: p.StartedAt(), X: p.X, Y: p.Y}
		if p.YUnc > 0 {
			u := p.YUnc
			q.YUnc = &u
		}
		pts = append(pts, q)
	}
	axis := func(tf store.TrendField) map[string]string {
		return map[string]string{"field": tf.Key, "label": tf.Label, "unit": tf.Unit}
	}
	return c.JSON(http.StatusOK, map[string]any{"x": axis(ts.X), "y": axis(ts.Y), "missing": ts.Missing, "points": pts})
}
