package main

import (
	"bytes"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"glowlog/server"
)

func TestServeStorageFlags(t *testing.T) {
	dir := t.TempDir()
	for _, c := range []struct {
		args []string
		want string
	}{
		{[]string{"--sync", "fast"}, "use full or normal"},
		{[]string{"--backup-dir", dir, "--backup-every", "10s"}, "at least 1m0s"},
		{[]string{"--backup-dir", dir, "--backup-keep", "0"}, "keep at least 1"},
	} {
		var out, errb bytes.Buffer
		if code := ServeCommand(append(c.args, "--db", filepath.Join(dir, "x.db")), &out, &errb); code != ExitInput || !strings.Contains(errb.String(), c.want) {
			t.Errorf("%v: exit %d %q", c.args, code, errb.String())
		}
	}
	if _, err := os.Stat(filepath.Join(dir, "x.db")); err == nil {
		t.Error("bad flags created the database")
	}
}

// Item 7: the serve flag and its environment variable are checked before
// anything starts.
func TestServeTrustedProxyFlag(t *testing.T) {
	var out, errb strings.Builder
	if code := ServeCommand([]string{"--trusted-proxy", "proxy.example", "--db", t.TempDir() + "/x.db"}, &out, &errb); code != ExitInput || !strings.Contains(errb.String(), `"proxy.example"`) {
		t.Errorf("bad flag: exit %d, %q", code, errb.String())
	}
	t.Setenv("GLOWLOG_TRUSTED_PROXY", "10.0.0.0/8, 300.1.1.1")
	errb.Reset()
	if code := ServeCommand([]string{"--db", t.TempDir() + "/x.db"}, &out, &errb); code != ExitInput || !strings.Contains(errb.String(), `"300.1.1.1"`) {
		t.Errorf("bad env: exit %d, %q", code, errb.String())
	}
	nets, err := server.ParseTrustedProxies([]string{"10.0.0.0/8, 192.168.7.7", "fd00::/8", "::1"})
	if err != nil || len(nets) != 4 || nets[1].String() != "192.168.7.7/32" || nets[3].String() != "::1/128" {
		t.Errorf("parse: %v %v", nets, err)
	}
}
