//go:build !linux

package main

func readLimitedInto(buf []byte, name string, limit int64) ([]byte, error) {
	return readLimitedFile(buf, name, limit)
}
