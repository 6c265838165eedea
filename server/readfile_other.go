//go:build !linux

package server

func readLimitedInto(buf []byte, name string, limit int64) ([]byte, error) {
	return readLimitedFile(buf, name, limit)
}
