// Package passwords holds the list of common passwords that glowlog
// refuses (common.txt, with its provenance in its header).
package passwords

import (
	_ "embed"
	"strings"
)

//go:embed common.txt
var commonTxt string

var common = func() map[string]bool {
	m := map[string]bool{}
	for _, l := range strings.Split(commonTxt, "\n") {
		l = strings.TrimSpace(l)
		if l != "" && !strings.HasPrefix(l, "#") {
			m[strings.ToLower(l)] = true
		}
	}
	return m
}()

// IsCommon reports whether lower-case s is on the list.
func IsCommon(s string) bool { return common[s] }

// Len is the number of listed passwords.
func Len() int { return len(common) }
