package specfile

import (
	"bytes"
	"io"
	"path"
	"strings"
)

// Detect guesses the format of a file from its first bytes (512 are plenty)
// and, only if those are blank, its name. Content starting with a
// "##TITLE=" or "##JCAMP-DX=" label, after optional blank lines and "$$"
// comment lines, is FormatJCAMP; other content is FormatText, so a CSV
// whose comments start with "##" stays text. Blank content is FormatJCAMP
// if name ends in .jdx, .dx or .jcamp, else FormatText. Detect never
// returns FormatAuto.
func Detect(name string, head []byte) Format {
	head = bytes.TrimPrefix(head, utf8BOM)
	for len(head) > 0 {
		line := head
		if i := bytes.IndexByte(head, '\n'); i >= 0 {
			line, head = head[:i], head[i+1:]
		} else {
			head = nil
		}
		t := strings.TrimSpace(string(line))
		if t == "" || strings.HasPrefix(t, "$$") {
			continue
		}
		if strings.HasPrefix(t, "##") {
			if eq := strings.IndexByte(t, '='); eq > 0 {
				switch normLabel(t[2:eq]) {
				case "TITLE", "JCAMPDX":
					return FormatJCAMP
				}
			}
		}
		return FormatText
	}
	switch strings.ToLower(path.Ext(name)) {
	case ".jdx", ".dx", ".jcamp":
		return FormatJCAMP
	}
	return FormatText
}

// Read reads a spectrum in the format opt.Format, or the one [Detect]
// finds in the content if that is FormatAuto, enforcing opt.Limits. It is
// the entry point for uploads; [ReadText] and [ReadJCAMP] are Read with a
// fixed format and default limits. Errors are *ParseError values.
//
// Read panics if opt.Text is invalid (see [ReadText]) or opt.Format is
// not one of the Format constants.
func Read(name string, r io.Reader, opt Options) (*Spectrum, error) {
	lim := opt.Limits.withDefaults()
	f := opt.Format
	switch f {
	case FormatAuto, FormatText, FormatJCAMP:
	default:
		panic("specfile: Read: invalid Options.Format " + f.String())
	}
	if f == FormatText {
		checkTextOptions(opt.Text)
	}
	data, err := readAll(name, r, lim)
	if err != nil {
		return nil, err
	}
	return parse(name, data, f, opt.Text, lim, nil)
}

func parse(name string, data []byte, f Format, topt TextOptions, lim Limits, buf *Buffers) (*Spectrum, error) {
	if f == FormatAuto {
		f = Detect(name, data[:min(len(data), 4096)])
	}
	if f == FormatJCAMP {
		return parseJCAMP(name, data, lim)
	}
	return parseText(name, data, topt, lim, buf)
}

// Buffers lends [ReadBytes] the point arrays of a spectrum read before,
// so that a program reading file after file does not allocate them anew.
type Buffers struct {
	X, Y []float64
}

// ReadBytes is [Read] of a file already in memory, without copying it:
// the same spectrum, limits and errors (a file longer than
// opt.Limits.MaxBytes is refused as Read refuses it). data must not change
// while ReadBytes runs; the spectrum and the error refer to none of its
// memory afterwards (their strings are copies).
//
// With buf non-nil, a text file's X and Y are read into buf's arrays when
// they are large enough (and buf then holds the arrays the spectrum uses,
// grown or not, for the next call): the spectrum's X and Y are valid
// until buf is passed to ReadBytes again. JCAMP-DX files do not use buf.
func ReadBytes(name string, data []byte, opt Options, buf *Buffers) (*Spectrum, error) {
	lim := opt.Limits.withDefaults()
	f := opt.Format
	switch f {
	case FormatAuto, FormatText, FormatJCAMP:
	default:
		panic("specfile: ReadBytes: invalid Options.Format " + f.String())
	}
	if f == FormatText {
		checkTextOptions(opt.Text)
	}
	if int64(len(data)) > lim.MaxBytes {
		line := 1 + bytes.Count(data[:lim.MaxBytes], []byte{'\n'})
		return nil, errf(name, line, ErrFileTooLarge, "file exceeds %d bytes", lim.MaxBytes)
	}
	sp, err := parse(name, data, f, opt.Text, lim, buf)
	if err != nil {
		if pe, ok := err.(*ParseError); ok {
			pe.Msg = strings.Clone(pe.Msg)
		}
		return nil, err
	}
	// Off data's memory: the scanner's strings are substrings of it.
	sp.YUnit, sp.Title = strings.Clone(sp.YUnit), strings.Clone(sp.Title)
	if len(sp.Meta) > 0 {
		m := make(map[string]string, len(sp.Meta))
		for k, v := range sp.Meta {
			m[strings.Clone(k)] = strings.Clone(v)
		}
		sp.Meta = m
	}
	if buf != nil && sp.Format == FormatText {
		buf.X, buf.Y = sp.X, sp.Y
	}
	return sp, nil
}
