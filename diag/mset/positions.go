package mset

import (
	"bytes"
	"encoding/json"
	"errors"
	"io"
	"strconv"
)

// positions maps a JSON path such as "lines[1].intensity" to the byte
// offset where its value starts. It is built by walking the token stream,
// so that semantic errors found after decoding can still name a line.
type positions map[string]int64

func indexPositions(data []byte) (positions, error) {
	dec := json.NewDecoder(bytes.NewReader(data))
	dec.UseNumber()
	pos := positions{}
	var walk func(path string) error
	walk = func(path string) error {
		// InputOffset is the end of the previous token; skip the separator
		// and white space to find where this value starts.
		start := skipSpace(data, dec.InputOffset())
		pos[path] = start
		tok, err := dec.Token()
		if err != nil {
			return err
		}
		switch tok {
		case json.Delim('{'):
			for dec.More() {
				k, err := dec.Token()
				if err != nil {
					return err
				}
				key, _ := k.(string)
				p := key
				if path != "" {
					p = path + "." + key
				}
				if err := walk(p); err != nil {
					return err
				}
			}
			_, err = dec.Token()
			return err
		case json.Delim('['):
			for i := 0; dec.More(); i++ {
				if err := walk(path + "[" + strconv.Itoa(i) + "]"); err != nil {
					return err
				}
			}
			_, err = dec.Token()
			return err
		}
		return nil
	}
	if err := walk(""); err != nil {
		return pos, err
	}
	if _, err := dec.Token(); !errors.Is(err, io.EOF) {
		return pos, errTrailing
	}
	return pos, nil
}

var errTrailing = errors.New("unexpected data after the top-level JSON value")

func skipSpace(data []byte, off int64) int64 {
	for off < int64(len(data)) {
		switch data[off] {
		case ' ', '\t', '\n', '\r', ',', ':':
			off++
		default:
			return off
		}
	}
	return off
}

// lineOf returns the 1-based line number of a byte offset.
func lineOf(data []byte, off int64) int {
	if off > int64(len(data)) {
		off = int64(len(data))
	}
	return bytes.Count(data[:off], []byte{'\n'}) + 1
}
