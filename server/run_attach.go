package server

import (
	"context"
	"database/sql"
	"fmt"
	"io"
	"mime/multipart"
	"net/http"
	"strings"

	"github.com/labstack/echo/v4"

	"glowlog/store"
)

// upload is one file (or the typed line table) of a form, read and size
// checked but not stored.
type upload struct {
	kind, name string
	data       []byte
}

// uploadFields are the file inputs of the run forms and their kinds.
var uploadFields = []struct {
	field, kind, label string
	multiple           bool
}{{"spectra", store.KindSpectrum, "spectrum", true}, {"dark", store.KindDark, "dark", false},
	{"response", store.KindResponse, "response", false}}

// readUploads reads the files of a multipart form and the typed line
// table; every file is checked against store.MaxAttachmentBytes.
func readUploads(c echo.Context) ([]upload, error) {
	var ups []upload
	if strings.HasPrefix(c.Request().Header.Get(echo.HeaderContentType), echo.MIMEMultipartForm) {
		form, err := c.MultipartForm()
		if err != nil {
			return nil, formUserError("the uploaded files could not be read (the whole request may be at most %s)", bodyLimit)
		}
		for _, f := range uploadFields {
			var chosen []*multipart.FileHeader
			for _, fh := range form.File[f.field] {
				if fh.Filename == "" && fh.Size == 0 {
					continue // an empty file input
				}
				chosen = append(chosen, fh)
			}
			if !f.multiple && len(chosen) > 1 {
				return nil, formUserError("choose one %s file, not %d", f.label, len(chosen))
			}
			for _, fh := range chosen {
				up, err := readUpload(f.kind, f.label, fh)
				if err != nil {
					return nil, err
				}
				ups = append(ups, up)
			}
		}
	}
	typed, err := lineTableJSON(strings.TrimSpace(c.FormValue("lt_unit")), bindLineRows(c))
	if err != nil {
		return nil, err
	}
	lt := strings.TrimSpace(c.FormValue("line_table"))
	if lt != "" && typed != nil {
		return nil, formUserError("line table: fill in the rows or paste JSON, not both")
	}
	if typed != nil {
		lt = string(typed)
	}
	if lt != "" {
		if len(lt) > store.MaxAttachmentBytes {
			return nil, formUserError("the typed line table is larger than %d MB", store.MaxAttachmentBytes>>20)
		}
		ups = append(ups, upload{kind: store.KindLineTable, name: "typed-line-table.json", data: []byte(lt)})
	}
	return ups, nil
}

func readUpload(kind, label string, fh *multipart.FileHeader) (upload, error) {
	name := uploadName(fh.Filename, label)
	limit := int64(store.MaxAttachmentBytes)
	if fh.Size > limit {
		return upload{}, formUserError("%s file %s is %.1f MB; the limit is %d MB per file", label, name, float64(fh.Size)/(1<<20), limit>>20)
	}
	if fh.Size == 0 {
		return upload{}, formUserError("%s file %s is empty", label, name)
	}
	rd, err := fh.Open()
	if err != nil {
		return upload{}, err
	}
	defer rd.Close()
	data, err := io.ReadAll(io.LimitReader(rd, limit+1))
	if err != nil {
		return upload{}, err
	}
	if int64(len(data)) > limit {
		return upload{}, formUserError("%s file %s is larger than %d MB", label, name, limit>>20)
	}
	return upload{kind: kind, name: name, data: data}, nil
}

// uploadName keeps the base name of a browser-sent file name.
func uploadName(fn, label string) string {
	if i := strings.LastIndexAny(fn, `/\`); i >= 0 {
		fn = fn[i+1:]
	}
	fn = strings.Map(func(r rune) rune {
		if r < 0x20 || r == 0x7f {
			return -1
		}
		return r
	}, strings.TrimSpace(fn))
	if fn == "" {
		return label + ".txt"
	}
	if r := []rune(fn); len(r) > 120 {
		fn = string(r[:120])
	}
	return fn
}

// hasFiles reports whether a form carried files (which a browser will not
// refill after an error).
func hasFiles(ups []upload) bool {
	for _, u := range ups {
		if u.kind != store.KindLineTable {
			return true
		}
	}
	return false
}

// addUploadsTx stores uploads in tx and returns them as attachments with
// their content (for ReanalyzeRunTx).
func (s *Server) addUploadsTx(ctx context.Context, tx *sql.Tx, runID int64, ups []upload) ([]store.Attachment, error) {
	out := make([]store.Attachment, 0, len(ups))
	for _, u := range ups {
		id, err := s.DB.AddAttachmentTx(ctx, tx, runID, u.kind, u.name, u.data)
		if err != nil {
			return nil, err
		}
		out = append(out, store.Attachment{ID: id, RunID: runID, Kind: u.kind, Name: u.name, Content: u.data, Size: len(u.data)})
	}
	return out, nil
}

// analysable reports whether attachments include something to analyse.
func analysable(atts []store.Attachment) bool {
	for _, a := range atts {
		if a.Kind == store.KindSpectrum || a.Kind == store.KindLineTable {
			return true
		}
	}
	return false
}

// uploadResultError turns the first failed analysis of a new file (all
// files when only is nil) into a user error naming the file: a file that
// cannot be read or analysed rejects the whole request.
func uploadResultError(results []RunAnalysis, only map[int64]bool) error {
	for _, ra := range results {
		if ra.Err == nil || (only != nil && !only[ra.Attachment.ID]) {
			continue
		}
		what := "spectrum"
		if ra.Attachment.Kind == store.KindLineTable {
			what = "line table"
		}
		msg := strings.TrimPrefix(ra.Err.Error(), "diag: ")
		if !strings.Contains(msg, ra.Attachment.Name) {
			msg = ra.Attachment.Name + ": " + msg
		}
		return formUserError("%s could not be used, nothing was stored: %s", what, msg)
	}
	return nil
}

// uploadAttachment is POST /runs/:id/attachments: new files, then a new
// analysis version of all the run's files with the latest settings, in
// one transaction.
func (s *Server) uploadAttachment(c echo.Context) error {
	ctx := c.Request().Context()
	r, err := s.runFromPath(c)
	if err != nil {
		return err
	}
	id := r.ID
	u := currentUser(c)
	if err := canChangeRun(u, r); err != nil {
		return err
	}
	ups, err := readUploads(c)
	if err != nil {
		return err
	}
	if len(ups) == 0 {
		return formUserError("choose at least one file, or type a line table")
	}
	responseUnit := func(st *AnalysisSettings) {
		if ru := strings.TrimSpace(c.FormValue("response_unit")); ru != "" {
			for _, up := range ups {
				if up.kind == store.KindResponse {
					st.ResponseUnit = ru
				}
			}
		}
	}
	st, err := s.latestSettings(c, r)
	if err != nil {
		return err
	}
	responseUnit(&st)
	if err := st.Validate(); err != nil {
		return err
	}
	// One write transaction, holding the write lock from BEGIN: the
	// settings and the run's file list are read inside it (see
	// ReanalyzeRunTx), so concurrent uploads never drop each other's files
	// from the new version. The store refuses the files if the run was
	// signed off meanwhile.
	tx, err := s.DB.Begin(ctx)
	if err != nil {
		return err
	}
	defer tx.Rollback()
	if st, err = s.latestSettingsTx(ctx, tx, r); err != nil {
		return err
	}
	responseUnit(&st)
	if err := st.Validate(); err != nil {
		return err
	}
	added, err := s.addUploadsTx(ctx, tx, id, ups)
	if err != nil {
		return err
	}
	all, err := s.DB.AttachmentsTx(ctx, tx, id)
	if err != nil {
		return err
	}
	fresh := map[int64]bool{}
	names := make([]string, 0, len(added))
	for _, a := range added {
		fresh[a.ID] = true
		names = append(names, a.Name)
	}
	version := 0
	if analysable(all) {
		var results []RunAnalysis
		version, results, err = s.ReanalyzeRunTx(ctx, tx, id, added, st, &u.ID, "added "+strings.Join(names, ", "))
		if err != nil {
			return err
		}
		if err := uploadResultError(results, fresh); err != nil {
			return err
		}
	}
	if err := tx.Commit(); err != nil {
		return err
	}
	if version == 0 {
		flash(c, fmt.Sprintf("Added %d file(s). Nothing to analyse yet: add a spectrum or a line table.", len(names)))
		return c.Redirect(http.StatusSeeOther, fmt.Sprintf("/runs/%d", id))
	}
	flash(c, fmt.Sprintf("Added %d file(s). Analysis version %d stored, earlier versions are kept.", len(names), version))
	return c.Redirect(http.StatusSeeOther, fmt.Sprintf("/runs/%d?v=%d", id, version))
}
