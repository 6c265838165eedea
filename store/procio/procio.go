// Package procio reads the process's own I/O counters, for the store's
// and the server's write benchmarks (bytes and calls per spectrum do not
// depend on the machine's load as times do).
package procio

import (
	"os"
	"strconv"
	"strings"
)

// Writes returns the bytes this process has passed to write system calls
// (files and sockets alike) and the number of those calls so far, from
// /proc/self/io (Linux; zeros where there is none).
func Writes() (bytes, calls int64) {
	data, err := os.ReadFile("/proc/self/io")
	if err != nil {
		return 0, 0
	}
	for _, line := range strings.Split(string(data), "\n") {
		k, v, _ := strings.Cut(line, ": ")
		switch k {
		case "wchar":
			bytes, _ = strconv.ParseInt(v, 10, 64)
		case "syscw":
			calls, _ = strconv.ParseInt(v, 10, 64)
		}
	}
	return bytes, calls
}
