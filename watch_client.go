package main

import (
	"bytes"
	"context"
	"encoding/json"
	"fmt"
	"io"
	"mime/multipart"
	"net/http"
	"net/url"
	"sort"
	"strconv"
	"strings"
	"time"
)

// httpError is an answer of the server other than success.
type httpError struct {
	Status int
	Msg    string
}

func (e *httpError) Error() string {
	return fmt.Sprintf("server answered %d: %s", e.Status, e.Msg)
}

// retryable: the server is down or overloaded, not refusing the file.
func (e *httpError) retryable() bool {
	return e.Status >= 500 || e.Status == http.StatusRequestTimeout || e.Status == http.StatusTooManyRequests
}

// fatal: no file can succeed until the configuration is fixed (the token,
// the run, the fields of new runs), so the watcher stops rather than
// marking every file failed.
func (e *httpError) fatal(newRunPerFile bool, status string) bool {
	switch {
	case e.Status == http.StatusUnauthorized || e.Status == http.StatusForbidden:
		return true
	case status == statusCreatingRun:
		return true // POST /runs refused: the run fields are wrong
	case !newRunPerFile && (e.Status == http.StatusNotFound || e.Status == http.StatusConflict):
		return true // the run is missing or signed off
	}
	return false
}

// measurementAnswer is the part of the 201 answer of POST
// /api/v1/runs/:id/measurements the watcher keeps.
type measurementAnswer struct {
	RunID           int64    `json:"run_id"`
	AttachmentID    int64    `json:"attachment_id"`
	AnalysisVersion int      `json:"analysis_version"`
	TexcK           *float64 `json:"excitation_temperature_K"`
	TexcUncK        *float64 `json:"excitation_temperature_unc_K"`
	NeM3            *float64 `json:"electron_density_m3"`
	NeUncM3         *float64 `json:"electron_density_unc_m3"`
}

// do sends one request and decodes a 2xx JSON answer into out.
func (w *watcher) do(ctx context.Context, method, path, contentType string, body []byte, out any) error {
	var rd io.Reader
	if body != nil {
		rd = bytes.NewReader(body)
	}
	req, err := http.NewRequestWithContext(ctx, method, w.cfg.server+path, rd)
	if err != nil {
		return err
	}
	req.Header.Set("Authorization", "Bearer "+w.cfg.token)
	req.Header.Set("Accept", "application/json")
	if contentType != "" {
		req.Header.Set("Content-Type", contentType)
	}
	resp, err := w.client.Do(req)
	if err != nil {
		return err
	}
	defer resp.Body.Close()
	b, err := io.ReadAll(io.LimitReader(resp.Body, 64<<20))
	if err != nil {
		return err
	}
	if resp.StatusCode < 200 || resp.StatusCode > 299 {
		var e struct {
			Error string `json:"error"`
		}
		msg := strings.TrimSpace(string(b))
		if json.Unmarshal(b, &e) == nil && e.Error != "" {
			msg = e.Error
		}
		if len(msg) > 300 {
			msg = msg[:300] + "…"
		}
		return &httpError{resp.StatusCode, msg}
	}
	if out != nil {
		if err := json.Unmarshal(b, out); err != nil {
			return fmt.Errorf("the server's answer is not the expected JSON: %v", err)
		}
	}
	return nil
}

// upload sends one file to a run: a measurement set (JSON) as JSON, any
// other file as a spectrum with the --set fields. The answer leaves out
// the plot series (plots=none): the watcher keeps only the numbers.
func (w *watcher) upload(ctx context.Context, runID int64, name string, data []byte) (measurementAnswer, error) {
	var ans measurementAnswer
	path := "/api/v1/runs/" + strconv.FormatInt(runID, 10) + "/measurements?plots=none"
	if t := bytes.TrimLeft(data, " \t\r\n\ufeff"); len(t) > 0 && t[0] == '{' {
		err := w.do(ctx, http.MethodPost, path+"&name="+url.QueryEscape(name), "application/json", data, &ans)
		return ans, err
	}
	var buf bytes.Buffer
	mw := multipart.NewWriter(&buf)
	keys := make([]string, 0, len(w.cfg.fields))
	for k := range w.cfg.fields {
		keys = append(keys, k)
	}
	sort.Strings(keys)
	mw.WriteField("kind", "spectrum")
	for _, k := range keys {
		mw.WriteField(k, w.cfg.fields[k])
	}
	fw, err := mw.CreateFormFile("file", name)
	if err != nil {
		return ans, err
	}
	fw.Write(data)
	if err := mw.Close(); err != nil {
		return ans, err
	}
	err = w.do(ctx, http.MethodPost, path, mw.FormDataContentType(), buf.Bytes(), &ans)
	return ans, err
}

// findOrCreateRun gives the run of a file in --new-run-per-file mode: the
// one an earlier attempt created (found by the file's tag), or a new one
// when canCreate. found says the run existed.
func (w *watcher) findOrCreateRun(ctx context.Context, name string, fs *fileState, canCreate bool) (int64, bool, error) {
	tag := "watch-" + fs.Key
	if fs.Attempts > 0 {
		var list struct {
			Items []struct {
				ID int64 `json:"id"`
			} `json:"items"`
		}
		if err := w.do(ctx, http.MethodGet, "/api/v1/runs?limit=1&sort=id&tag="+url.QueryEscape(tag), "", nil, &list); err != nil {
			return 0, false, err
		}
		if len(list.Items) > 0 {
			return list.Items[0].ID, true, nil
		}
	}
	if !canCreate {
		return 0, false, nil
	}
	body := map[string]any{}
	for k, v := range w.cfg.runFields {
		body[k] = v
	}
	prefix, _ := body["title"].(string)
	if prefix == "" {
		prefix, _ = body["chamber"].(string)
	}
	body["title"] = strings.TrimSpace(prefix + " " + name)
	body["started_at"] = fs.ModTime.UTC().Format(time.RFC3339)
	body["tags"] = []string{tag}
	b, err := json.Marshal(body)
	if err != nil {
		return 0, false, err
	}
	fs.Attempts++
	if err := w.state.save(w.cfg.statePath); err != nil {
		return 0, false, &fatalError{msg: "writing the state file: " + err.Error()}
	}
	var ans struct {
		ID int64 `json:"id"`
	}
	if err := w.do(ctx, http.MethodPost, "/api/v1/runs", "application/json", b, &ans); err != nil {
		return 0, false, err
	}
	return ans.ID, false, nil
}

// reconcile looks for the file among the run's attachments (same name,
// same size) after an attempt whose answer never came; found, it records
// the file as sent with the run's current analysis of it.
func (w *watcher) reconcile(ctx context.Context, name string, fs *fileState) (bool, error) {
	var run struct {
		Attachments []struct {
			ID    int64  `json:"id"`
			Name  string `json:"name"`
			Bytes int64  `json:"bytes"`
		} `json:"attachments"`
		Analysis *struct {
			Version int `json:"version"`
			Results []struct {
				AttachmentID int64    `json:"attachment_id"`
				TexcK        *float64 `json:"excitation_temperature_K"`
				TexcUncK     *float64 `json:"excitation_temperature_unc_K"`
				NeM3         *float64 `json:"electron_density_m3"`
				NeUncM3      *float64 `json:"electron_density_unc_m3"`
			} `json:"results"`
		} `json:"analysis"`
	}
	if err := w.do(ctx, http.MethodGet, "/api/v1/runs/"+strconv.FormatInt(fs.RunID, 10), "", nil, &run); err != nil {
		return false, err
	}
	stored := strings.TrimSpace(name)
	if len(stored) > 200 {
		stored = stored[:200]
	}
	var aid int64
	for _, a := range run.Attachments {
		if a.Name == stored && a.Bytes == fs.Size {
			aid = a.ID
		}
	}
	if aid == 0 {
		return false, nil
	}
	a := measurementAnswer{RunID: fs.RunID, AttachmentID: aid}
	if run.Analysis != nil {
		a.AnalysisVersion = run.Analysis.Version
		for _, r := range run.Analysis.Results {
			if r.AttachmentID == aid {
				a.TexcK, a.TexcUncK, a.NeM3, a.NeUncM3 = r.TexcK, r.TexcUncK, r.NeM3, r.NeUncM3
			}
		}
	}
	fs.apply(a)
	fs.Status, fs.Note = statusSent, "found on the server after an attempt whose answer was lost"
	return true, nil
}
