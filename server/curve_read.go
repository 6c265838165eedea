package server

import (
	"fmt"
	"strings"

	"glowlog/diag/specfile"
	"glowlog/diag/spectrum"
)

// CurveOptions say how ReadCurve reads a file: Format "auto" (or "" or
// "measurement": detected), "text" or "jcamp"; XUnit the axis unit when
// the file does not say it ("" : the reader's default; nm, angstrom, um
// or cm-1); Vacuum marks the wavelengths as vacuum ones; MinPoints the
// fewest points accepted (0: the reader's default; a response curve may
// have only a few).
type CurveOptions struct {
	Format    string
	XUnit     string
	Vacuum    bool
	MinPoints int
}

// ReadCurve parses a spectrum or a tabulated curve from a file's bytes
// into wavelengths (nm) and values, reading the points into pts's arrays
// (see specfile.ReadBytes; nil: new arrays). Every error names the file
// (and line). The web's uploads and `glowlog analyze` both read through
// it.
func ReadCurve(src string, data []byte, o CurveOptions, pts *specfile.Buffers) (*spectrum.Spectrum, error) {
	opt := specfile.Options{Limits: specfile.Limits{MinPoints: o.MinPoints}}
	switch o.Format {
	case "text":
		opt.Format = specfile.FormatText
	case "jcamp":
		opt.Format = specfile.FormatJCAMP
	case "", "auto", "measurement":
	default:
		return nil, fmt.Errorf("unknown --format %q (want auto, measurement, text or jcamp)", o.Format)
	}
	if o.XUnit != "" {
		u, err := ParseAxisUnit(o.XUnit)
		if err != nil {
			return nil, err
		}
		opt.Text.XUnit = u
	}
	s, err := specfile.ReadBytes(src, data, opt, pts)
	if err != nil {
		return nil, err
	}
	vacuum := o.Vacuum || s.XUnit == specfile.WavenumberPerCM
	if err := s.ToWavelengthNM(); err != nil { // in place: the file's axis is not needed
		return nil, fmt.Errorf("%s: %v (give --x-unit nm, angstrom, um or cm-1)", src, strings.TrimPrefix(err.Error(), "specfile: "))
	}
	return &spectrum.Spectrum{Name: src, WavelengthNM: s.X, Counts: s.Y, Vacuum: vacuum}, nil
}

// ParseAxisUnit reads an axis unit's name (nm, angstrom, um, cm-1 and
// their usual spellings).
func ParseAxisUnit(s string) (specfile.AxisUnit, error) {
	switch strings.ToLower(s) {
	case "nm":
		return specfile.NM, nil
	case "angstrom", "a", "å":
		return specfile.Angstrom, nil
	case "um", "µm", "micrometer":
		return specfile.Micrometer, nil
	case "cm-1", "1/cm", "cm^-1":
		return specfile.WavenumberPerCM, nil
	}
	return 0, fmt.Errorf("unknown --x-unit %q (want nm, angstrom, um or cm-1)", s)
}
