package specfile

import (
	"bytes"
	"io"
	"math"
	"slices"
	"strings"
	"unsafe"
)

// utf8BOM is the UTF-8 encoding of U+FEFF, which some editors prepend.
var utf8BOM = []byte{0xEF, 0xBB, 0xBF}

// readAll reads r up to lim.MaxBytes. It reads at most one byte more than
// the limit, so an oversized upload costs no more than the limit.
//
// A reader that knows its length (bytes.Reader, strings.Reader,
// bytes.Buffer) is read into one buffer of the right size; others into a
// buffer that grows as io.ReadAll's does.
func readAll(name string, r io.Reader, lim Limits) ([]byte, error) {
	size := int64(512)
	if l, ok := r.(interface{ Len() int }); ok {
		size = int64(l.Len()) + 1 // + 1: room to see EOF without growing
	}
	data := make([]byte, 0, min(size, lim.MaxBytes+1))
	lr := io.LimitReader(r, lim.MaxBytes+1)
	var err error
	for {
		if len(data) == cap(data) {
			data = append(data, 0)[:len(data)]
		}
		var n int
		n, err = lr.Read(data[len(data):cap(data)])
		data = data[:len(data)+n]
		if err != nil {
			if err == io.EOF {
				err = nil
			}
			break
		}
	}
	if err != nil {
		return nil, &ParseError{File: name, Line: 1 + bytes.Count(data, []byte{'\n'}),
			Msg: "read failed: " + err.Error(), Err: ErrRead}
	}
	if int64(len(data)) > lim.MaxBytes {
		line := 1 + bytes.Count(data[:lim.MaxBytes], []byte{'\n'})
		return nil, errf(name, line, ErrFileTooLarge, "file exceeds %d bytes", lim.MaxBytes)
	}
	return data, nil
}

// lineScanner splits an in-memory file into lines. Lines end in "\n" or
// "\r\n"; the terminator is dropped, as is a leading UTF-8 BOM. Lines are
// substrings of one string, so scanning allocates nothing per line.
type lineScanner struct {
	name   string
	data   string
	pos    int
	start  int // offset in data of the line last returned
	num    int // number of the line last returned, 1-based
	maxLen int
}

// The scanner's text shares memory with data, which must not change
// afterwards: every caller passes the buffer readAll made for it alone.
func newLineScanner(name string, data []byte, lim Limits) *lineScanner {
	data = bytes.TrimPrefix(data, utf8BOM)
	return &lineScanner{name: name, data: unsafe.String(unsafe.SliceData(data), len(data)), maxLen: lim.MaxLineLen}
}

// next returns the next line. ok is false at end of input.
func (s *lineScanner) next() (line string, ok bool, err error) {
	if s.pos >= len(s.data) {
		return "", false, nil
	}
	s.num++
	s.start = s.pos
	rest := s.data[s.pos:]
	i := strings.IndexByte(rest, '\n')
	if i < 0 {
		line = rest
		s.pos = len(s.data)
	} else {
		line = rest[:i]
		s.pos += i + 1
	}
	line = strings.TrimSuffix(line, "\r")
	if len(line) > s.maxLen {
		return "", false, errf(s.name, s.num, ErrLineTooLong, "line exceeds %d bytes", s.maxLen)
	}
	return line, true, nil
}

// lineCountHint is an upper bound of the number of lines left, for
// sizing slices.
func (s *lineScanner) lineCountHint() int {
	return strings.Count(s.data[s.pos:], "\n") + 1
}

// lastLine is the number of the last line of the input (at least 1), used
// for errors found at end of input.
func (s *lineScanner) lastLine() int { return max(s.num, 1) }

// pointSink collects points, enforcing finiteness, the point limit and
// strict monotonicity as they arrive so errors name the offending line.
type pointSink struct {
	name     string
	lim      Limits
	x, y     []float64
	dir      int // +1 ascending, -1 descending, 0 not yet known
	lastLine int
}

// add appends (x, y) read on line. what names the X quantity in messages.
func (p *pointSink) add(x, y float64, line int) error {
	if math.IsNaN(x) || math.IsInf(x, 0) {
		return errf(p.name, line, ErrNotFinite, "x value is not finite (%g)", x)
	}
	if math.IsNaN(y) || math.IsInf(y, 0) {
		return errf(p.name, line, ErrNotFinite, "intensity is not finite (%g)", y)
	}
	if len(p.x) >= p.lim.MaxPoints {
		return errf(p.name, line, ErrTooManyPoints, "more than %d points", p.lim.MaxPoints)
	}
	if n := len(p.x); n > 0 {
		prev := p.x[n-1]
		switch {
		case x == prev:
			return errf(p.name, line, ErrNotMonotonic, "duplicate x value %g (previous point on line %d)", x, p.lastLine)
		case p.dir == 0 && x > prev:
			p.dir = 1
		case p.dir == 0:
			p.dir = -1
		case (p.dir > 0) != (x > prev):
			order := "ascending"
			if p.dir < 0 {
				order = "descending"
			}
			return errf(p.name, line, ErrNotMonotonic, "x value %g after %g (line %d) breaks the %s order", x, prev, p.lastLine, order)
		}
	}
	p.x = append(p.x, x)
	p.y = append(p.y, y)
	p.lastLine = line
	return nil
}

// finish checks the point count and puts descending data in ascending
// order. line is reported if there are too few points.
func (p *pointSink) finish(line int) error {
	if len(p.x) < p.lim.MinPoints {
		return errf(p.name, line, ErrTooFewPoints, "only %d data points, need at least %d", len(p.x), p.lim.MinPoints)
	}
	if p.dir < 0 {
		slices.Reverse(p.x)
		slices.Reverse(p.y)
	}
	return nil
}
