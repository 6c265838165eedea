package mset

import (
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"strconv"
	"strings"
)

// MaxDepth is the deepest nesting of objects and arrays a measurement set
// may have. The format needs 3 (the top-level object, the lines array, a
// line object); the margin keeps the message about nesting rather than
// about an unknown field. Deeper input is rejected by a byte scan before
// any decoding, so its cost does not grow with the depth.
const MaxDepth = 8

// msetDepthHint ends the nesting message for measurement sets.
const msetDepthHint = " (a measurement set needs 3): the input is not a measurement set"

// MaxEntries bounds the members of any one object or array in a
// measurement set: at most one line per Balmer member 3…diag.MaxLevel
// (38), and far fewer fields per object.
const MaxEntries = 64

// positions maps a JSON path such as "lines[1].intensity" to the byte
// offset where its value starts. It is built by walking the token stream,
// so that semantic errors found after decoding can still name a line.
type positions map[string]int64

// shapeError is a structural problem found before decoding: too deep,
// too many entries, or a duplicate key. off is the byte offset at fault.
type shapeError struct {
	off   int64
	field string
	msg   string
}

func (e *shapeError) Error() string { return e.msg }

// MaxValues bounds the number of JSON values in a measurement set (a full
// set of 38 lines with every field has about 500). The byte scan counts
// them, so that a wide input is rejected before the token walk, whose cost
// is per value.
const MaxValues = 4096

// checkShape scans data once, without allocating, and returns a
// *shapeError at the first '{' or '[' that opens level maxDepth+1, or at
// the value that makes more than maxValues (0: no bound; values are
// counted as separators plus containers). Strings are skipped, escapes
// respected; malformed JSON is left to the decoder. hint ends the depth
// message.
func checkShape(data []byte, maxDepth, maxValues int, hint string) error {
	depth, values := 0, 1
	inStr, esc := false, false
	for i, c := range data {
		if inStr {
			switch {
			case esc:
				esc = false
			case c == '\\':
				esc = true
			case c == '"':
				inStr = false
			}
			continue
		}
		switch c {
		case '"':
			inStr = true
		case '{', '[':
			depth++
			if depth > maxDepth {
				return &shapeError{off: int64(i), msg: fmt.Sprintf(
					"objects and arrays are nested more than %d deep%s", maxDepth, hint)}
			}
			values++
		case '}', ']':
			depth--
		case ',':
			values++
		}
		if maxValues > 0 && values > maxValues {
			return &shapeError{off: int64(i), msg: fmt.Sprintf(
				"more than %d values (a measurement set with every line and field has about 500): the input is not a measurement set", maxValues)}
		}
	}
	return nil
}

// indexPositions walks the token stream of data, recording where each
// value starts, and rejects a key repeated within one object (encoding/json
// would silently keep the last one; keys are compared without regard to
// case, as encoding/json matches them to fields) and objects or arrays
// with more than maxEntries members (0: no bound). Call checkShape first:
// the walk recurses once per level.
func indexPositions(data []byte, maxEntries int) (positions, error) {
	dec := json.NewDecoder(bytes.NewReader(data))
	dec.UseNumber()
	pos := positions{}
	tooMany := func(path string, off int64) error {
		what := path
		if what == "" {
			what = "the top-level value"
		}
		return &shapeError{off: off, field: path, msg: fmt.Sprintf(
			"%s has more than %d entries (a measurement set has at most one line per Balmer member): the input is not a measurement set", what, maxEntries)}
	}
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
			var seen map[string]string // folded key → key as written
			for i := 0; dec.More(); i++ {
				koff := skipSpace(data, dec.InputOffset())
				if maxEntries > 0 && i >= maxEntries {
					return tooMany(path, koff)
				}
				k, err := dec.Token()
				if err != nil {
					return err
				}
				key, _ := k.(string)
				p := key
				if path != "" {
					p = path + "." + key
				}
				folded := strings.ToLower(key)
				if first, dup := seen[folded]; dup {
					at := path
					if at == "" {
						at = "the top-level object"
					}
					msg := fmt.Sprintf("duplicate key %q in %s (first given at line %d): each key may appear only once", key, at, lineOf(data, pos[pathJoin(path, first)]))
					if first != key {
						msg = fmt.Sprintf("key %q repeats %q in %s (line %d; keys are matched to fields without regard to case): each key may appear only once", key, first, at, lineOf(data, pos[pathJoin(path, first)]))
					}
					return &shapeError{off: koff, field: p, msg: msg}
				}
				if seen == nil {
					seen = map[string]string{}
				}
				seen[folded] = key
				if err := walk(p); err != nil {
					return err
				}
			}
			_, err = dec.Token()
			return err
		case json.Delim('['):
			for i := 0; dec.More(); i++ {
				if maxEntries > 0 && i >= maxEntries {
					return tooMany(path, skipSpace(data, dec.InputOffset()))
				}
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

func pathJoin(path, key string) string {
	if path == "" {
		return key
	}
	return path + "." + key
}

var errTrailing = errors.New("unexpected data after the top-level JSON value")

// CheckJSON checks the shape of a JSON document before it is decoded:
// objects and arrays nested deeper than maxDepth, and a key repeated within
// one object (compared without regard to case, as encoding/json matches
// keys to struct fields), are errors. The depth is checked by a byte scan
// that does not allocate, so a deeply nested input costs no more than its
// length. Malformed JSON is left to the decoder (nil is returned). The
// error is an *Error naming source and line. Other packages use it for
// their own JSON bodies.
func CheckJSON(source string, data []byte, maxDepth int) error {
	if err := checkShape(data, maxDepth, 0, ""); err != nil {
		return shapeToError(source, data, err)
	}
	if _, err := indexPositions(data, 0); err != nil {
		var se *shapeError
		if errors.As(err, &se) {
			return shapeToError(source, data, err)
		}
	}
	return nil
}

func shapeToError(source string, data []byte, err error) error {
	se := err.(*shapeError)
	return &Error{Source: source, Line: lineOf(data, se.off), Field: se.field, Msg: se.msg}
}

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

// LineOf returns the 1-based line of the value at path (e.g.
// "lines[1].intensity_unc") in a measurement set that Decode accepted, or
// 0 when the path is not in it. It lets callers place errors found later,
// by the analysis, in the file.
func LineOf(data []byte, path string) int {
	if checkShape(data, MaxDepth, MaxValues, msetDepthHint) != nil {
		return 0
	}
	pos, err := indexPositions(data, MaxEntries)
	if err != nil {
		return 0
	}
	if off, ok := pos[path]; ok {
		return lineOf(data, off)
	}
	return 0
}
