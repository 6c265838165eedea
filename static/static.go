// Package static embeds glowlog's stylesheet, scripts and vendored
// front-end assets (with their checksums in SHA256SUMS).
package static

import "embed"

// FS holds the assets served under /static/.
//
//go:embed *.css *.js *.svg
var FS embed.FS
