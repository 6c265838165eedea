package server

import (
	"os"
	"os/exec"
	"regexp"
	"strconv"
	"testing"
)

// TestPackageInitCheap: initialising this package allocates little. Every
// command pays it before doing anything (glowlog analyze over a few files,
// glowlog version); a password hash computed at start-up cost 20 MB and
// about 60 ms. The test runs its own binary with no tests and reads the
// runtime's init trace.
func TestPackageInitCheap(t *testing.T) {
	if os.Getenv("GLOWLOG_INIT_CHILD") != "" {
		return
	}
	cmd := exec.Command(os.Args[0], "-test.run=^$")
	cmd.Env = append(os.Environ(), "GODEBUG=inittrace=1", "GLOWLOG_INIT_CHILD=1")
	out, err := cmd.CombinedOutput()
	if err != nil {
		t.Fatalf("%v\n%s", err, out)
	}
	m := regexp.MustCompile(`(?m)^init glowlog/server @\S+ ms, \S+ ms clock, (\d+) bytes`).FindSubmatch(out)
	if m == nil {
		t.Fatalf("no init trace for glowlog/server in\n%s", out)
	}
	bytes, _ := strconv.Atoi(string(m[1]))
	if bytes > 2<<20 {
		t.Errorf("initialising glowlog/server allocates %d bytes, want ≤ 2 MiB", bytes)
	}
}
