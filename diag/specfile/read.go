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
	if f == FormatAuto {
		f = Detect(name, data[:min(len(data), 4096)])
	}
	if f == FormatJCAMP {
		return parseJCAMP(name, data, lim)
	}
	return parseText(name, data, opt.Text, lim)
}
