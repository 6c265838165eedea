package specfile

import "strconv"

// Default hard limits. Uploaded files come from untrusted clients, so every
// reader enforces these unless [Limits] overrides them.
const (
	// DefaultMaxBytes is the largest input accepted, 32 MiB. A 1 000 000
	// point two-column file of %g numbers is about 20 MB.
	DefaultMaxBytes = 32 << 20
	// DefaultMaxPoints is the largest number of (x, y) points accepted.
	DefaultMaxPoints = 1_000_000
	// DefaultMaxLineLen is the longest line accepted in bytes, excluding
	// the line terminator. JCAMP-DX lines are at most 80 characters by the
	// standard; text exports rarely exceed a few hundred.
	DefaultMaxLineLen = 64 << 10
	// DefaultMinPoints is the fewest points a spectrum may have; fewer
	// cannot hold a resolved line profile plus background.
	DefaultMinPoints = 8
)

// Limits bounds what a reader accepts. A zero or negative field means the
// corresponding Default constant.
type Limits struct {
	// MaxBytes is the largest input size in bytes.
	MaxBytes int64
	// MaxPoints is the largest number of points.
	MaxPoints int
	// MaxLineLen is the longest line in bytes, excluding "\n" or "\r\n".
	MaxLineLen int
	// MinPoints is the fewest points a spectrum may have.
	MinPoints int
}

// withDefaults returns l with zero or negative fields replaced by defaults.
func (l Limits) withDefaults() Limits {
	if l.MaxBytes <= 0 {
		l.MaxBytes = DefaultMaxBytes
	}
	if l.MaxPoints <= 0 {
		l.MaxPoints = DefaultMaxPoints
	}
	if l.MaxLineLen <= 0 {
		l.MaxLineLen = DefaultMaxLineLen
	}
	if l.MinPoints <= 0 {
		l.MinPoints = DefaultMinPoints
	}
	return l
}

// Format identifies a file format.
type Format int

const (
	// FormatAuto, the zero value, asks [Read] to call [Detect].
	FormatAuto Format = iota
	// FormatText is delimited text (CSV, semicolon, tab or whitespace).
	FormatText
	// FormatJCAMP is IUPAC JCAMP-DX.
	FormatJCAMP
)

// String returns "auto", "text" or "jcamp-dx".
func (f Format) String() string {
	switch f {
	case FormatText:
		return "text"
	case FormatJCAMP:
		return "jcamp-dx"
	case FormatAuto:
		return "auto"
	}
	return "Format(" + strconv.Itoa(int(f)) + ")"
}

// TextOptions controls [ReadText]. The zero value auto-detects everything.
type TextOptions struct {
	// Delimiter separates columns: ',', ';', '\t' or ' ' (any run of
	// spaces and tabs). Zero means detect from the first data line: tab,
	// then ';', then ',' (unless a comma field contains inner whitespace,
	// which marks a whitespace-delimited file with decimal commas), else
	// whitespace.
	Delimiter rune
	// Decimal is the decimal separator, '.' or ','. Zero means detect: '.'
	// when the delimiter is ','; otherwise ',' if the data contain commas
	// but no dots, and '.' otherwise. Data with both are rejected as
	// ambiguous (thousands separators are not supported).
	Decimal rune
	// XColumn and YColumn are 1-based column numbers. Zero means the first
	// and second columns that hold numbers on the first data line.
	XColumn, YColumn int
	// XUnit is the unit of the X column. UnknownUnit means take it from
	// the header row, if any. If both are known and differ, ReadText
	// returns ErrUnitConflict unless ForceXUnit is set.
	XUnit AxisUnit
	// ForceXUnit makes a known XUnit win over a conflicting header unit,
	// for files whose header is known to be wrong.
	ForceXUnit bool
}

// Options controls [Read].
type Options struct {
	// Format forces a format; FormatAuto detects it with [Detect].
	Format Format
	// Text applies when the input is read as delimited text.
	Text TextOptions
	// Limits overrides the default hard limits for either format.
	Limits Limits
}
