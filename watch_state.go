package main

import (
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"time"

	"glowlog/store"
)

// defaultStateName is the state file in the followed folder (a dotfile,
// so the watcher never sends it).
const defaultStateName = ".glowlog-watch.json"

// maxUploadBytes is the server's limit on one file.
const maxUploadBytes = store.MaxAttachmentBytes

// States of a file in the state file. A file is recorded before any
// request about it is made; "creating-run" and "sending" are the states
// in which a request may have reached the server without its answer
// reaching us, and are reconciled with the server before a retry.
const (
	statusCreatingRun = "creating-run" // new run per file: POST /runs not yet confirmed
	statusSending     = "sending"      // POST /runs/:id/measurements not yet confirmed
	statusSent        = "sent"         // stored on the server: never sent again
	statusFailed      = "failed"       // refused by the server (4xx): not retried
)

// fileState is what the watcher knows of one file, by name.
type fileState struct {
	Size    int64     `json:"size"`
	ModTime time.Time `json:"mtime"`
	SHA256  string    `json:"sha256"`
	// Key identifies the file's upload on the server: new runs carry the
	// tag "watch-KEY", so a run created by an attempt whose answer was
	// lost is found again instead of created twice.
	Key      string `json:"key"`
	Status   string `json:"status"`
	Attempts int    `json:"attempts,omitempty"` // requests of the current state that may have reached the server

	// The server's answer.
	RunID        int64    `json:"run_id,omitempty"`
	AttachmentID int64    `json:"attachment_id,omitempty"`
	Version      int      `json:"analysis_version,omitempty"`
	TexcK        *float64 `json:"excitation_temperature_K,omitempty"`
	TexcUncK     *float64 `json:"excitation_temperature_unc_K,omitempty"`
	NeM3         *float64 `json:"electron_density_m3,omitempty"`
	NeUncM3      *float64 `json:"electron_density_unc_m3,omitempty"`
	Error        string   `json:"error,omitempty"`
	Note         string   `json:"note,omitempty"`

	UpdatedAt time.Time `json:"updated_at"`
}

func (fs *fileState) done() bool { return fs.Status == statusSent || fs.Status == statusFailed }

func newFileState(name string, data []byte, mtime, now time.Time) *fileState {
	sum := sha256Hex(data)
	k := sha256.Sum256([]byte(name + "\x00" + sum))
	return &fileState{Size: int64(len(data)), ModTime: mtime.UTC(), SHA256: sum, Key: hex.EncodeToString(k[:8]), UpdatedAt: now.UTC()}
}

func sha256Hex(b []byte) string {
	s := sha256.Sum256(b)
	return hex.EncodeToString(s[:])
}

// apply copies the server's answer into the state.
func (fs *fileState) apply(a measurementAnswer) {
	fs.RunID, fs.AttachmentID, fs.Version = a.RunID, a.AttachmentID, a.AnalysisVersion
	fs.TexcK, fs.TexcUncK, fs.NeM3, fs.NeUncM3 = a.TexcK, a.TexcUncK, a.NeM3, a.NeUncM3
	fs.Error = ""
}

// watchState is the state file: every file the watcher has taken up.
type watchState struct {
	Format int                   `json:"format"`
	Files  map[string]*fileState `json:"files"`
}

// loadState reads the state file (none yet: an empty state).
func loadState(path string) (*watchState, error) {
	b, err := os.ReadFile(path)
	if errors.Is(err, os.ErrNotExist) {
		return &watchState{Format: 1, Files: map[string]*fileState{}}, nil
	}
	if err != nil {
		return nil, err
	}
	var st watchState
	if err := json.Unmarshal(b, &st); err != nil {
		return nil, fmt.Errorf("state file %s is not valid (%v): move it away to start afresh (every file in the folder is then sent again)", path, err)
	}
	if st.Format != 1 {
		return nil, fmt.Errorf("state file %s has format %d, this glowlog reads format 1", path, st.Format)
	}
	if st.Files == nil {
		st.Files = map[string]*fileState{}
	}
	return &st, nil
}

// save replaces the state file atomically: a temporary file in the same
// folder, written and synced, renamed over the old one, and the folder
// synced, so that a crash leaves either the old or the new state whole.
func (st *watchState) save(path string) error {
	b, err := json.MarshalIndent(st, "", " ")
	if err != nil {
		return err
	}
	dir := filepath.Dir(path)
	f, err := os.CreateTemp(dir, "."+filepath.Base(path)+".*.tmp")
	if err != nil {
		return err
	}
	tmp := f.Name()
	_, err = f.Write(append(b, '\n'))
	if err == nil {
		err = f.Sync()
	}
	if cerr := f.Close(); err == nil {
		err = cerr
	}
	if err == nil {
		err = os.Rename(tmp, path)
	}
	if err != nil {
		os.Remove(tmp)
		return err
	}
	if d, err := os.Open(dir); err == nil {
		d.Sync()
		d.Close()
	}
	return nil
}
