package passwords

import (
	"strings"
	"testing"
)

func TestList(t *testing.T) {
	if n := Len(); n < 250 {
		t.Errorf("%d passwords listed, want a few hundred", n)
	}
	seen := map[string]bool{}
	for _, l := range strings.Split(commonTxt, "\n") {
		if l == "" || strings.HasPrefix(l, "#") {
			continue
		}
		if l != strings.ToLower(strings.TrimSpace(l)) {
			t.Errorf("entry %q is not trimmed lower case", l)
		}
		if seen[l] {
			t.Errorf("entry %q twice", l)
		}
		seen[l] = true
	}
	for _, p := range []string{"password", "qwertyuiop", "1234567890", "iloveyou"} {
		if !IsCommon(p) {
			t.Errorf("%q not listed", p)
		}
	}
	if IsCommon("tidal-anvil-73") {
		t.Error("an invented password is listed")
	}
}
