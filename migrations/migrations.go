// Package migrations embeds glowlog's numbered SQL schema migrations.
// Files are applied in lexical order, each in its own transaction, and
// recorded by name; an applied migration is never edited — add a new file.
package migrations

import "embed"

// FS holds the NNNN_name.sql files.
//
//go:embed *.sql
var FS embed.FS
