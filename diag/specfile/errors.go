package specfile

import (
	"errors"
	"fmt"
)

// Sentinel errors classify a [ParseError]. Test for them with [errors.Is];
// the ParseError itself carries the file name, line and a readable message.
var (
	// ErrFileTooLarge reports an input longer than Limits.MaxBytes.
	ErrFileTooLarge = errors.New("specfile: file too large")
	// ErrLineTooLong reports a line longer than Limits.MaxLineLen bytes.
	ErrLineTooLong = errors.New("specfile: line too long")
	// ErrTooManyPoints reports more data points than Limits.MaxPoints.
	ErrTooManyPoints = errors.New("specfile: too many points")
	// ErrTooFewPoints reports fewer data points than Limits.MinPoints.
	ErrTooFewPoints = errors.New("specfile: too few points")
	// ErrSyntax reports malformed content: a bad number, token, label or
	// column layout.
	ErrSyntax = errors.New("specfile: syntax error")
	// ErrNotFinite reports a NaN or infinite value, or one that overflows
	// float64 once a scale factor is applied.
	ErrNotFinite = errors.New("specfile: value not finite")
	// ErrNotMonotonic reports a repeated X value or one that breaks the
	// ascending or descending order of the axis.
	ErrNotMonotonic = errors.New("specfile: x not strictly monotonic")
	// ErrInconsistent reports data that contradicts the file's own header:
	// a JCAMP-DX point count, first/last abscissa, DELTAX, FIRSTY or an
	// ASDF Y-value check that does not match.
	ErrInconsistent = errors.New("specfile: inconsistent with header")
	// ErrUnitConflict reports an X unit in a text header that differs from
	// the one given in TextOptions.XUnit (see TextOptions.ForceXUnit).
	ErrUnitConflict = errors.New("specfile: x unit conflict")
	// ErrUnsupported reports valid-looking content this package does not
	// read: JCAMP-DX NTUPLES, unknown variable lists, missing values ("?").
	ErrUnsupported = errors.New("specfile: unsupported content")
	// ErrRead reports a failure of the underlying io.Reader.
	ErrRead = errors.New("specfile: read error")
)

// ParseError is the error returned by every reader in this package. Like
// strconv.NumError it records where the problem is and wraps a sentinel
// (ErrSyntax, ErrFileTooLarge, ...) that classifies it.
type ParseError struct {
	// File is the name passed to the reader, typically the upload's file
	// name. It is only used in messages.
	File string
	// Line is the 1-based line number the problem was found on.
	Line int
	// Msg says what is wrong, in lower case, without file or line.
	Msg string
	// Err is the sentinel that classifies the error; never nil for errors
	// returned by this package.
	Err error
}

// Error formats the error as "file:line: message", the form compilers use,
// e.g. `spectrum.csv:17: non-numeric intensity "12,3,4"`.
func (e *ParseError) Error() string {
	name := e.File
	if name == "" {
		name = "<input>"
	}
	return fmt.Sprintf("%s:%d: %s", name, e.Line, e.Msg)
}

// Unwrap returns the classifying sentinel, so errors.Is(err, ErrSyntax)
// and similar work.
func (e *ParseError) Unwrap() error { return e.Err }

// errf builds a *ParseError.
func errf(name string, line int, kind error, format string, args ...any) *ParseError {
	if line < 1 {
		line = 1
	}
	return &ParseError{File: name, Line: line, Msg: fmt.Sprintf(format, args...), Err: kind}
}
