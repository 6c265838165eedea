package server

import (
	"io/fs"
	"net/http"
	"path"
	"strings"
)

// staticHandler serves embedded assets; their names carry a version, so
// they may be cached for good. Directories are not listed: they, and
// anything that is not a regular file, are 404.
func staticHandler(fsys fs.FS) http.Handler {
	fileServer := http.FileServerFS(fsys)
	return http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		name := strings.TrimPrefix(path.Clean("/"+r.URL.Path), "/")
		if fi, err := fs.Stat(fsys, name); name == "" || strings.HasSuffix(r.URL.Path, "/") || err != nil || !fi.Mode().IsRegular() {
			http.NotFound(w, r)
			return
		}
		w.Header().Set("Cache-Control", "public, max-age=31536000, immutable")
		fileServer.ServeHTTP(w, r)
	})
}
